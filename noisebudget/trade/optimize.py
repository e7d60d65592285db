"""The lightest treatment that meets the targets (or the quietest within a mass budget).

The ``[[vary]]`` parameters become continuous bounds (a ``range`` or the span of its
``values``, a distribution's truncation interval) searched by differential evolution
(Storn & Price, J. Global Optim. 11 (1997) 341-359; :func:`scipy.optimize.
differential_evolution`), seeded by ``[trade] seed`` so that a run is reproducible. The
targets are nonlinear constraints handled by Lampinen's feasibility rules (a feasible
candidate beats an infeasible one; among infeasible ones the smaller violation wins;
J. Lampinen, CEC 2002), not by a penalty weight. Each generation's population is one
batch for :func:`~noisebudget.trade.evaluate.evaluate`, spread over the workers.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..checks import ArgumentError
from ..errors import InputError
from .evaluate import TradeModel, build_model
from .variants import TradeSpec

__all__ = ["OptimizationResult", "evaluation_limit", "run_optimization"]

_CONSTRAINTS = (("dba", "margin_dba"), ("sil4", "margin_sil4_db"), ("limit", "margin_limit_db"))


@dataclass
class OptimizationResult:
    """The optimum and how it was found.

    Attributes
    ----------
    objective : str
        ``"treatment_mass_kg"`` (lightest meeting the targets) or ``"max_interior_dba"``
        (quietest within ``mass_budget_kg``).
    optimum : DataFrame
        One row: the parameter values (SI) and every metric at the optimum.
    slack : DataFrame
        Each constraint: value, limit and slack (>= 0 where met) in its ``unit``.
    evaluations : DataFrame
        Every distinct variant evaluated, in order, with ``generation``.
    reference : DataFrame
        One row like :attr:`optimum`: the package as its file gives it.
    feasible : bool
        Whether the optimum meets every constraint.
    evaluations_used, generations : int
        Distinct variants evaluated (the budget run for each) and generations run.
    message : str
        The optimiser's own account of why it stopped.
    """

    spec: TradeSpec
    model: TradeModel
    files: dict
    objective: str
    mass_budget_kg: float | None
    optimum: pd.DataFrame
    slack: pd.DataFrame
    evaluations: pd.DataFrame
    reference: pd.DataFrame
    feasible: bool
    evaluations_used: int
    generations: int
    message: str
    seconds: float

    def tables(self) -> dict:
        """The result tables by name."""
        return {"optimum": self.optimum, "slack": self.slack,
                "evaluations": self.evaluations}


def evaluation_limit(spec: TradeSpec, generations: int, population: int) -> int:
    """Most candidates differential evolution can score: (generations + 1) x population
    x parameters (fewer when it converges or candidates repeat)."""
    return (generations + 1) * population * len(spec.parameters)


class _Scorer:
    """Scores candidate batches through the engine, remembering each distinct one."""

    def __init__(self, model, engine, progress):
        from .execute import chunk_size, chunks

        self.model, self.engine, self.progress = model, engine, progress
        self.chunk_size, self.chunks = chunk_size, chunks
        self.seen: dict = {}      # row bytes -> metrics
        self.order: list = []     # (generation, x, metrics) in evaluation order
        self.generation = 0

    def metrics(self, xs: np.ndarray) -> np.ndarray:
        """Metrics (S, nm) of candidates xs (S, N), evaluating only new ones."""
        xs = np.ascontiguousarray(xs, dtype=float)
        new = {}
        for row in xs:
            key = row.tobytes()
            if key not in self.seen and key not in new:
                new[key] = row
        if new:
            rows = np.array(list(new.values()))
            out = np.empty((len(rows), len(self.model.names)))
            size = self.chunk_size(len(rows))
            for start, ev in self.engine.map(rows, self.chunks(len(rows), size)):
                out[start:start + len(ev.metrics)] = ev.metrics
                self.progress.update(len(ev.metrics))
            for key, row, m in zip(new, rows, out, strict=True):
                self.seen[key] = m
                self.order.append((self.generation, row, m))
        return np.array([self.seen[row.tobytes()] for row in xs]).reshape(
            len(xs), len(self.model.names))


def run_optimization(path, *, mass_budget_kg: float | None = None, workers: int | None = 1,
                     cluster: str | None = None, generations: int = 60, population: int = 15,
                     tol: float = 1e-3, progress=None,
                     cluster_options: dict | None = None) -> OptimizationResult:
    """Search the ``[[vary]]`` parameters for the lightest treatment that meets the
    ``[targets]`` (dBA, SIL4, band limit) in every condition, or, with
    ``mass_budget_kg``, the lowest dBA of the loudest condition within that treatment
    mass.

    Parameters
    ----------
    path : str or Path
        The study file.
    mass_budget_kg : float or None
        Treatment mass per aircraft allowed (switches the objective to dBA).
    generations, population, tol : int, int, float
        Differential evolution's ``maxiter``, ``popsize`` (candidates per parameter) and
        relative convergence tolerance.
    workers, cluster, progress, cluster_options
        As for :func:`~noisebudget.trade.sweep.sweep_study` (the progress total is
        :func:`evaluation_limit`).
    """
    from scipy.optimize import NonlinearConstraint, differential_evolution

    from ..study import load_study
    from .execute import Engine
    from .sweep import _counter

    for name, value in (("generations", generations), ("population", population)):
        if isinstance(value, bool) or not isinstance(value, int) or value < 1:
            raise ArgumentError(f"{name} = {value!r}: must be a whole number >= 1")
    t0 = time.perf_counter()
    loaded = load_study(path)
    spec = loaded.trade
    if not spec.parameters:
        raise InputError(str(path), "vary", "no [[vary]] entries: nothing to optimise")
    targets = loaded.inputs.targets
    model = build_model(loaded)
    names = list(model.names)
    if mass_budget_kg is None:
        objective = "treatment_mass_kg"
        margins = [f"{m}[{c}]" for k, m in _CONSTRAINTS if k in targets
                   for c in model.conditions]
        if not margins:
            raise InputError(str(path), "targets", "missing: the lightest package that meets "
                                                   "the targets needs [targets] dba or sil4")
    else:
        if not mass_budget_kg > 0:
            raise ArgumentError(f"mass_budget_kg = {mass_budget_kg:g} kg: must be > 0")
        objective = "max_interior_dba"
        margins = []
    cols = [names.index(m) for m in margins]
    obj = names.index(objective)
    mass_col = names.index("treatment_mass_kg")
    bounds = [p.bounds for p in spec.parameters]
    progress = (progress or _counter("optimum"))(
        evaluation_limit(spec, generations, population), 0)
    try:
        with Engine(model, workers, cluster, cluster_options) as engine:
            scorer = _Scorer(model, engine, progress)

            def constraint(xt):  # (N, S) -> (M, S): margins >= 0 (NaN: not met)
                m = scorer.metrics(np.atleast_2d(xt.T))
                if mass_budget_kg is None:
                    g = m[:, cols]
                else:
                    g = mass_budget_kg - m[:, [mass_col]]
                return np.nan_to_num(g, nan=-1e3).T

            def energy(xt):  # (N, S) -> (S,)
                return scorer.metrics(np.atleast_2d(xt.T))[:, obj]

            def next_generation(intermediate_result):
                scorer.generation += 1

            n_con = len(cols) if mass_budget_kg is None else 1
            res = differential_evolution(
                energy, bounds, maxiter=generations, popsize=population, tol=tol,
                rng=np.random.default_rng(spec.seed), polish=False, vectorized=True,
                updating="deferred", callback=next_generation,
                constraints=NonlinearConstraint(constraint, np.zeros(n_con), np.inf))
            best = scorer.metrics(res.x[None, :])[0]
    finally:
        progress.close()
    return _result(spec, model, loaded.files, objective, mass_budget_kg, res, best, scorer,
                   margins, time.perf_counter() - t0)


def _result(spec, model, files, objective, budget, res, best, scorer, margins, seconds):
    from .sweep import reference, variants_table

    optimum = variants_table(spec, model, res.x[None, :], best[None, :]).drop(
        columns="variant")
    names = list(model.names)
    rows = []
    for m in margins:
        metric, cond = m.split("[", 1)
        value_name = {"margin_dba": "interior_dba", "margin_sil4_db": "sil4_db"}.get(metric)
        value = best[names.index(f"{value_name}[{cond}")] if value_name else np.nan
        slack = best[names.index(m)]
        rows.append({"constraint": metric.replace("margin_", "target_"),
                     "condition": cond[:-1], "value": value,
                     "limit": value + slack if np.isfinite(value) else np.nan,
                     "slack": slack, "unit": "dBA" if metric == "margin_dba" else "dB"})
    if budget is not None:
        mass = best[names.index("treatment_mass_kg")]
        rows.append({"constraint": "mass_budget_kg", "condition": "all", "value": mass,
                     "limit": budget, "slack": budget - mass, "unit": "kg"})
    slack = pd.DataFrame(rows, columns=["constraint", "condition", "value", "limit", "slack",
                                        "unit"])
    feasible = bool(np.all(np.nan_to_num(slack["slack"].to_numpy(float), nan=-1.0) >= 0))
    gens = np.array([g for g, _, _ in scorer.order])
    xs = np.array([x for _, x, _ in scorer.order]).reshape(len(gens), len(spec.parameters))
    ms = np.array([m for _, _, m in scorer.order]).reshape(len(gens), len(names))
    evaluations = variants_table(spec, model, xs, ms)
    evaluations.insert(1, "generation", gens)
    return OptimizationResult(spec, model, files, objective, budget, optimum, slack,
                              evaluations, reference(spec, model)[0], feasible,
                              len(evaluations), int(res.nit), str(res.message), seconds)
