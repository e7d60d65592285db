"""The one narrow function that evaluates variants: a batch of parameter rows in, a table
of metrics (and the spectra behind them) out.

:func:`evaluate` is the seam between the trade study and the physics. A batch of variants
is one budget (:func:`~noisebudget.budget.compute_budget`) whose packages are the
variants: the budget's kernel (:func:`~noisebudget.zone_paths.zone_transmissions`)
computes every distinct stack and leak group of the batch once, and its arrays carry the
variants along the package axis. Stacks a variant does not change are the package's own
objects; stacks equal in value (a grid over two zones repeats each zone's stacks) are
:class:`KnownStack`\\ s that remember their transmission per process, so they are
computed once across batches too.

Each variant's numbers must not depend on the other variants of its batch, so that any
chunking (one process, local processes, Dask) gives the same numbers bit for bit: the
budget treats packages independently, and the metrics of a variant are read from its own
rows of the budget's tables.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass, fields, replace

import numpy as np

from ..stack import Stack
from ..zone_paths import WALL_RTOL
from .variants import apply_variant

__all__ = ["RATINGS", "TRADE_RTOL", "Evaluated", "KnownStack", "TradeModel", "build_model",
           "evaluate"]

RATINGS = ("stc", "rw", "c", "ctr", "oitc")
#: Relative tolerance of a variant's wall transmission: the budget's own (2e-2, 0.086 dB
#: estimated, within the 0.1 dB a variant must hold), so that a sweep's variant equals
#: ``run_study`` of that variant written into the file, bit for bit. Measured on the demo
#: sidewall (curved skin in its bay, tile, to 10 kHz): 24k points and 11 ms of CPU per
#: variant (10,000 variants in 55 s on two quiet cores), with a realised band error of at
#: most 0.026 dB against a run 100 times tighter; every integral stays adaptive.
TRADE_RTOL = WALL_RTOL
_CACHE_SIZE = 4096
_cache: OrderedDict = OrderedDict()  # (stack, method, args) -> result; per process
_lock = threading.Lock()  # the budget's kernel runs stacks on a thread pool


def _args_key(args, kwargs):
    def one(a):
        if isinstance(a, np.ndarray):
            return ("array", a.shape, a.tobytes())
        if hasattr(a, "nominal") and hasattr(a, "b"):  # Bands
            return ("bands", a.b, a.lower.tobytes(), a.upper.tobytes())
        return a
    return tuple(one(a) for a in args), tuple(sorted((k, one(v)) for k, v in kwargs.items()))


@dataclass(frozen=True)
class KnownStack(Stack):
    """A :class:`~noisebudget.stack.Stack` whose transmission results are remembered.

    Band TL and incidence-averaged transmission are kept per process, keyed by the stack's
    value (its layers and airs) and the call's arguments, so an unchanged or repeated stack
    is computed once. ``dataclasses.replace`` on a known stack gives a known stack.
    """

    def _remembered(self, method, args, kwargs):
        key = (self, method, _args_key(args, kwargs))
        with _lock:
            out = _cache.get(key)
            if out is not None:
                _cache.move_to_end(key)
        if out is None:
            out = getattr(super(), method)(*args, **kwargs)
            with _lock:
                _cache[key] = out
                if len(_cache) > _CACHE_SIZE:
                    _cache.popitem(last=False)
        return out.copy()

    def band_transmission_loss(self, *args, **kwargs):
        """As :meth:`Stack.band_transmission_loss`, computed once per distinct stack."""
        return self._remembered("band_transmission_loss", args, kwargs)

    def average_transmission(self, *args, **kwargs):
        """As :meth:`Stack.average_transmission`, computed once per distinct stack."""
        return self._remembered("average_transmission", args, kwargs)

    @classmethod
    def _remembered_many(cls, method, many, stacks, args, kwargs):
        """``method`` of each stack (one row each): remembered rows as they are, the rest
        computed as one batch by the stack's batched form and remembered."""
        key = _args_key(args, kwargs)
        rows, todo = [None] * len(stacks), []
        with _lock:
            for i, s in enumerate(stacks):
                out = _cache.get((s, method, key))
                if out is None:
                    todo.append(i)
                else:
                    _cache.move_to_end((s, method, key))
                    rows[i] = out
        if todo:
            done = getattr(Stack, many)([stacks[i] for i in todo], *args, **kwargs)
            with _lock:
                for i, row in zip(todo, done, strict=True):
                    rows[i] = row
                    _cache[(stacks[i], method, key)] = row.copy()
                while len(_cache) > _CACHE_SIZE:
                    _cache.popitem(last=False)
        return np.array([r.copy() for r in rows]).reshape(len(stacks), -1)

    @classmethod
    def band_transmission_losses(cls, stacks, *args, **kwargs):
        """As :meth:`Stack.band_transmission_losses`, each distinct stack computed once
        (the rows remembered as :meth:`band_transmission_loss` remembers them)."""
        return cls._remembered_many("band_transmission_loss", "band_transmission_losses",
                                    stacks, args, kwargs)

    @classmethod
    def average_transmissions(cls, stacks, *args, **kwargs):
        """As :meth:`Stack.average_transmissions`, each distinct stack computed once."""
        return cls._remembered_many("average_transmission", "average_transmissions", stacks,
                                    args, kwargs)


def known(stack: Stack) -> KnownStack:
    """The same stack as a :class:`KnownStack`."""
    if isinstance(stack, KnownStack):
        return stack
    return KnownStack(**{f.name: getattr(stack, f.name) for f in fields(Stack)})


@dataclass(frozen=True)
class TradeModel:
    """What a worker needs to evaluate variants (picklable, sent once per worker).

    Attributes
    ----------
    inputs : StudyInputs
        The study with the varied package as its only package.
    package : Package
        The varied package as written, its stacks as :class:`KnownStack`.
    parameters : tuple of Parameter
    names : tuple of str
        Metric names, the columns of :attr:`Evaluated.metrics`.
    band_hz : ndarray
        Nominal band centres of the spectra.
    conditions, zones : tuple of str
    """

    inputs: object
    package: object
    parameters: tuple
    names: tuple
    band_hz: np.ndarray
    conditions: tuple
    zones: tuple


@dataclass
class Evaluated:
    """Metrics and spectra of a batch of variants.

    Attributes
    ----------
    metrics : ndarray (nv, nm)
        One row per variant, columns :attr:`TradeModel.names` (NaN where undefined).
    interior_db : ndarray (nv, nc, nb)
        Interior band levels per condition (NaN outside a condition's bands).
    tl_db : ndarray (nv, nz, nb)
        Band TL of each zone's package stack.
    """

    metrics: np.ndarray
    interior_db: np.ndarray
    tl_db: np.ndarray

    @classmethod
    def concat(cls, parts) -> Evaluated:
        """Batches joined along the variants axis."""
        parts = list(parts)
        return cls(*(np.concatenate([getattr(p, k) for p in parts])
                     for k in ("metrics", "interior_db", "tl_db")))


def _margins(targets) -> list:
    return [m for k, m in (("dba", "margin_dba"), ("sil4", "margin_sil4_db"),
                           ("limit", "margin_limit_db")) if k in targets]


def metric_names(inp) -> tuple:
    """The metrics of every variant: masses (total and treatment, per aircraft and per
    zone area), dBA, SIL4 and margins per condition and at the worst condition, whether
    every target is met, and the ratings of each zone and of the composite TL."""
    zones = [z.name for z in inp.zones]
    names = ["mass_kg", "treatment_mass_kg",
             *(f"areal_mass_kg_m2[{z}]" for z in zones),
             *(f"treatment_kg_m2[{z}]" for z in zones)]
    per_condition = ["interior_dba", "sil4_db", *_margins(inp.targets)]
    for c in inp.conditions:
        names += [f"{m}[{c.name}]" for m in per_condition]
    names += ["max_interior_dba", "max_sil4_db"]
    names += [f"min_{m}" for m in _margins(inp.targets)]
    names += ["meets_targets"]
    names += [f"{r}[{z}]" for z in [*zones, "composite"] for r in RATINGS]
    return tuple(names)


def build_model(loaded) -> TradeModel:
    """The trade model of a loaded study (``load_study``) with ``[[vary]]`` entries."""
    from ..bands import third_octave_bands

    spec = loaded.trade
    inp = loaded.inputs
    base = next(p for p in inp.packages if p.name == spec.package)
    package = replace(base, stacks={z: known(s) for z, s in base.stacks.items()})
    inputs = replace(inp, packages=(package,), baseline=package.name)
    lo = min(c.bands.centre[0] for c in inp.conditions)
    hi = max(c.bands.centre[-1] for c in inp.conditions)
    return TradeModel(inputs, package, spec.parameters, metric_names(inputs),
                      third_octave_bands(lo, hi).nominal,
                      tuple(c.name for c in inp.conditions), tuple(z.name for z in inp.zones))


def evaluate(model: TradeModel, x) -> Evaluated:
    """Metrics of a batch of variants.

    Parameters
    ----------
    model : TradeModel
        From :func:`build_model`.
    x : array_like (nv, np)
        One row per variant: the parameters' values in SI, in ``model.parameters`` order.

    Returns
    -------
    Evaluated
        ``metrics`` (nv, nm) with columns ``model.names``, and the spectra.
    """
    from ..budget import compute_budget

    x = np.atleast_2d(np.asarray(x, dtype=float))
    nv = len(x)
    nb, nc, nz = len(model.band_hz), len(model.conditions), len(model.zones)
    if not nv:
        return Evaluated(np.empty((0, len(model.names))), np.empty((0, nc, nb)),
                         np.empty((0, nz, nb)))
    # every variant is a package of one budget; names only need to differ
    variants = tuple(replace(apply_variant(model.package, model.parameters, row),
                             name=f"variant {i + 1}") for i, row in enumerate(x))
    r = compute_budget(replace(model.inputs, packages=variants, baseline=variants[0].name),
                       TRADE_RTOL)
    return _read_tables(model, r, nv)


def _read_tables(model: TradeModel, r, nv: int) -> Evaluated:
    """Each variant's metrics and spectra from its rows of the budget's tables (every
    table lists packages in order, each with the same rows)."""
    nb, nc, nz = len(model.band_hz), len(model.conditions), len(model.zones)
    values: dict[str, np.ndarray] = {}
    mass = r.mass
    values["mass_kg"] = mass["mass_kg"].to_numpy(float).reshape(nv, nz).sum(axis=1)
    values["treatment_mass_kg"] = mass["treatment_mass_kg"].to_numpy(float).reshape(
        nv, nz).sum(axis=1)
    for k, col in (("areal_mass_kg_m2", "areal_mass_kg_m2"),
                   ("treatment_kg_m2", "treatment_kg_m2")):
        per_zone = mass[col].to_numpy(float).reshape(nv, nz)
        for j, z in enumerate(model.zones):
            values[f"{k}[{z}]"] = per_zone[:, j]
    s = r.summary
    margins = [m for m in ("margin_dba", "margin_sil4_db", "margin_limit_db") if m in s]
    per = {m: s[m].to_numpy(float).reshape(nv, nc)
           for m in ("interior_dba", "sil4_db", *margins)}
    for m, a in per.items():
        for j, c in enumerate(model.conditions):
            values[f"{m}[{c}]"] = a[:, j]
    values["max_interior_dba"] = per["interior_dba"].max(axis=1)
    values["max_sil4_db"] = per["sil4_db"].max(axis=1)  # NaN where a condition has none
    for m in margins:
        values[f"min_{m}"] = per[m].min(axis=1)
    if margins:
        with np.errstate(invalid="ignore"):
            met = np.all(np.stack([per[m] >= 0 for m in margins]), axis=(0, 2))
        values["meets_targets"] = met.astype(float)
    labels = [*model.zones, "composite"]
    rat = r.ratings
    for k in RATINGS:
        v = rat[k].to_numpy(dtype=float, na_value=np.nan).reshape(nv, len(labels))
        for j, z in enumerate(labels):
            values[f"{k}[{z}]"] = v[:, j]
    metrics = np.column_stack([values.get(n, np.full(nv, np.nan)) for n in model.names])
    band = {b: i for i, b in enumerate(model.band_hz)}
    cond = {c: i for i, c in enumerate(model.conditions)}
    bands = r.bands  # packages in order, each with the same (condition, band) rows
    per_variant = len(bands) // nv
    ci = np.array([cond[c] for c in bands["condition"][:per_variant]])
    bi = np.array([band[b] for b in bands["band_hz"][:per_variant]])
    interior = np.full((nv, nc, nb), np.nan)
    interior[:, ci, bi] = bands["interior_db"].to_numpy(float).reshape(nv, per_variant)
    tl = np.full((nv, nz, nb), np.nan)
    tl_rows = r.tl["tl_db"].to_numpy(float).reshape(nv, nz, -1)
    tl_bands = np.array([band[b] for b in r.tl["band_hz"][:tl_rows.shape[2]]])
    tl[:, :, tl_bands] = tl_rows
    return Evaluated(metrics, interior, tl)
