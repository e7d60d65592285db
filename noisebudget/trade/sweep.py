"""Sweeps: every variant of a grid or Monte Carlo design, and their statistics."""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..checks import ArgumentError
from ..errors import InputError
from .evaluate import Evaluated, TradeModel, build_model
from .variants import TradeSpec, design

__all__ = ["SweepResult", "run_sweep", "sweep_study", "variants_table"]

CHECKPOINT_SECONDS = 5.0  # a checkpoint is rewritten at most this often


@dataclass
class SweepResult:
    """A finished sweep.

    Attributes
    ----------
    variants : DataFrame
        One row per variant: ``variant`` (1-based), the varied values in SI (units in the
        column names), masses, dBA, SIL4, margins per condition, ratings per zone.
    statistics : DataFrame
        Per metric: P5/P50/P95, mean, std (Monte Carlo) or min/max (grid).
    probabilities : DataFrame or None
        Monte Carlo: probability of meeting each target with its Wilson interval.
    front : DataFrame
        The non-dominated variants (treatment mass against the loudest condition's dBA).
    sensitivities : DataFrame
        Spearman rank correlation of each parameter with each key metric.
    spectra : Evaluated
        Interior band levels and zone TL of every variant (``band_hz`` gives the bands).
    reference : DataFrame
        One row like :attr:`variants`: the package as its file gives it.
    reference_spectra : Evaluated
        Its interior band levels and zone TL.
    """

    spec: TradeSpec
    model: TradeModel
    files: dict
    variants: pd.DataFrame
    statistics: pd.DataFrame
    probabilities: pd.DataFrame | None
    front: pd.DataFrame
    sensitivities: pd.DataFrame
    spectra: Evaluated
    reference: pd.DataFrame
    reference_spectra: Evaluated
    seconds: float = 0.0
    info: dict = field(default_factory=dict)

    @property
    def band_hz(self) -> np.ndarray:
        """Nominal band centres of the spectra."""
        return self.model.band_hz

    def tables(self) -> dict:
        """The result tables by name (for CSV files and workbook sheets)."""
        out = {"variants": self.variants, "statistics": self.statistics,
               "front": self.front, "sensitivities": self.sensitivities}
        if self.probabilities is not None:
            out["probabilities"] = self.probabilities
        return out


def variants_table(spec: TradeSpec, model: TradeModel, x: np.ndarray,
                   metrics: np.ndarray) -> pd.DataFrame:
    """The one-row-per-variant table: parameter values (SI) then metrics."""
    cols = {"variant": np.arange(1, len(x) + 1)}
    for j, p in enumerate(spec.parameters):
        cols[p.column] = x[:, j]
    for j, name in enumerate(model.names):
        cols[name] = metrics[:, j]
    df = pd.DataFrame(cols)
    if "meets_targets" in df:
        df["meets_targets"] = df["meets_targets"] == 1
    return df


def _counter(what: str):
    """The default progress display: variants done, on a terminal."""
    from ..progress import counter

    return lambda total, initial: counter(total, initial, what, "variant")


def _no_parameters(path):
    return InputError(str(path), "vary", "no [[vary]] entries: nothing to vary (add "
                                         "[[vary]] tables, see the study-file keys)")


def sweep_study(path, *, workers: int | None = 1, cluster: str | None = None,
                checkpoint=None, resume: bool = False, progress=None,
                cluster_options: dict | None = None) -> SweepResult:
    """Evaluate every variant of a study's ``[[vary]]`` entries.

    Parameters
    ----------
    path : str or Path
        The study file.
    workers : int or None
        Local processes (None: one per core; 1: this process).
    cluster : str or None
        ``"tcp://HOST:PORT"`` or ``"local"``: evaluate on Dask instead.
    checkpoint : path or None
        Where to keep the finished variants while the sweep runs (written atomically at
        most every 5 s and on an interrupt); ``resume=True`` continues from it.
    progress : callable or None
        ``progress(total, initial)`` returns an object that receives ``update(n)`` per
        finished chunk and ``close()``; default :class:`noisebudget.progress.counter`
        (shown on a terminal, see :func:`noisebudget.progress.configure`).

    Returns
    -------
    SweepResult
        Identical, bit for bit, whatever the workers or cluster.
    """
    from ..study import load_study
    from .checkpoint import load_checkpoint, save_checkpoint, study_digest
    from .execute import Engine, chunk_size, chunks

    t0 = time.perf_counter()
    loaded = load_study(path)
    spec = loaded.trade
    if not spec.parameters:
        raise _no_parameters(path)
    x = design(spec)
    n = len(x)
    digest = study_digest(loaded.files, x)
    if resume:
        if checkpoint is None:
            raise ArgumentError("resume=True needs checkpoint= (the file to resume from)")
        done, results = load_checkpoint(checkpoint, digest)
    else:
        done = np.zeros(n, bool)
        results = None
    model = build_model(loaded)
    if results is None:
        nb, nc, nz = len(model.band_hz), len(model.conditions), len(model.zones)
        results = Evaluated(np.full((n, len(model.names)), np.nan), np.full((n, nc, nb), np.nan),
                            np.full((n, nz, nb), np.nan))
    size = chunk_size(n)
    spans = chunks(n, size, done)
    stops = dict(spans)
    last = time.monotonic()
    progress = (progress or _counter("sweep"))(n, int(done.sum()))
    try:
        with Engine(model, workers, cluster, cluster_options) as engine:
            for start, ev in engine.map(x, spans):
                stop = stops[start]
                results.metrics[start:stop] = ev.metrics
                results.interior_db[start:stop] = ev.interior_db
                results.tl_db[start:stop] = ev.tl_db
                done[start:stop] = True
                progress.update(stop - start)
                if checkpoint is not None and time.monotonic() - last > CHECKPOINT_SECONDS:
                    save_checkpoint(checkpoint, digest, done, results)
                    last = time.monotonic()
    except BaseException:
        if checkpoint is not None and done.any():
            save_checkpoint(checkpoint, digest, done, results)
        raise
    finally:
        progress.close()
    return _result(spec, model, loaded.files, x, results, time.perf_counter() - t0,
                   {"workers": workers, "cluster": cluster, "variants": n,
                    "chunk_size": size})


def reference(spec, model) -> tuple:
    """The package as written, evaluated like a variant: ``(row, Evaluated)``."""
    from .evaluate import evaluate
    from .variants import as_written

    x0 = as_written(spec.parameters, model.package)[None, :]
    ev = evaluate(model, x0)
    return variants_table(spec, model, x0, ev.metrics).drop(columns="variant"), ev


def _result(spec, model, files, x, results, seconds, info) -> SweepResult:
    from .stats import non_dominated, percentiles, probabilities, sensitivities

    variants = variants_table(spec, model, x, results.metrics)
    names = [m for m in model.names if m != "meets_targets"]
    metrics = variants[names]
    mc = spec.mode == "monte-carlo"
    front_idx = non_dominated(variants["treatment_mass_kg"], variants["max_interior_dba"])
    front = variants.iloc[front_idx].reset_index(drop=True)
    params = variants[[p.column for p in spec.parameters]]
    ref, ref_spectra = reference(spec, model)
    return SweepResult(spec, model, files, variants, percentiles(metrics, mc),
                       probabilities(variants, model.conditions) if mc else None, front,
                       sensitivities(params, variants), results, ref, ref_spectra, seconds,
                       info)


def run_sweep(path, **options) -> pd.DataFrame:
    """One row per variant of the study's ``[[vary]]`` entries (see :func:`sweep_study`
    for the options and the full result)."""
    return sweep_study(path, **options).variants
