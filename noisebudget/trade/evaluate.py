"""The one narrow function that evaluates variants: a batch of parameter rows in, a table
of metrics (and the spectra behind them) out.

:func:`evaluate` is the seam between the trade study and the physics. It works in two
steps:

1. :func:`transmit`: the transmission of every distinct stack of the batch, exactly as
   the budget asks for it (band TL and the narrowband transmission at the tones). Stacks
   a variant does not change are the package's own objects and are never recomputed;
   equal stacks (a grid over two zones repeats each zone's stacks) are computed once.
2. The budget of each variant (:func:`~noisebudget.budget.compute_budget` on the varied
   package alone), which finds every transmission already known.

A batched kernel replaces the loop inside :func:`transmit`; nothing else changes. Each
variant's result must not depend on the other variants of its batch, so that any
chunking (one process, local processes, Dask) gives the same numbers bit for bit.
"""

from __future__ import annotations

import threading
from collections import OrderedDict
from dataclasses import dataclass, fields, replace

import numpy as np

from ..stack import Stack
from .variants import apply_variant

__all__ = ["Evaluated", "KnownStack", "TradeModel", "build_model", "evaluate", "transmit"]

_CACHE_SIZE = 4096
_cache: OrderedDict = OrderedDict()  # (stack, method, args) -> result; per process
_lock = threading.Lock()  # a Dask worker may run several threads in one process


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
        call = (method, _args_key(args, kwargs))
        key = (self, *call)
        with _lock:
            _requests.setdefault(call, (args, kwargs))
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


_requests: dict = {}  # every distinct transmission call the budget made in this process


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
    requests : tuple
        The transmission calls ``(method, args, kwargs)`` the budget makes for a stack.
    names : tuple of str
        Metric names, the columns of :attr:`Evaluated.metrics`.
    band_hz : ndarray
        Nominal band centres of the spectra.
    conditions, zones : tuple of str
    """

    inputs: object
    package: object
    parameters: tuple
    requests: tuple
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
        Band TL of each zone's stack.
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


def _metric_names(inp, package) -> tuple:
    zones = [z.name for z in inp.zones]
    names = ["mass_kg", "treatment_mass_kg", *(f"areal_mass_kg_m2[{z}]" for z in zones)]
    per_condition = ["interior_dba", "sil4_db"]
    per_condition += [m for k, m in (("dba", "margin_dba"), ("sil4", "margin_sil4_db"),
                                     ("limit", "margin_limit_db")) if k in inp.targets]
    for c in inp.conditions:
        names += [f"{m}[{c.name}]" for m in per_condition]
    names += ["max_interior_dba", "max_sil4_db"]
    names += [f"min_{m}" for m in per_condition if m.startswith("margin")]
    names += ["meets_targets"]
    names += [f"{r}[{z}]" for z in zones for r in ("stc", "rw", "c", "ctr", "oitc")]
    return tuple(names)


def build_model(loaded) -> TradeModel:
    """The trade model of a loaded study (``load_study``) with ``[[vary]]`` entries.

    Runs the budget of the package as written once: that computes (and remembers) the
    transmission of its stacks, and records which transmission calls the budget makes.
    """
    from ..bands import third_octave_bands
    from ..budget import compute_budget

    spec = loaded.trade
    inp = loaded.inputs
    base = next(p for p in inp.packages if p.name == spec.package)
    package = replace(base, stacks={z: known(s) for z, s in base.stacks.items()})
    inputs = replace(inp, packages=(package,), baseline=package.name)
    _requests.clear()
    compute_budget(inputs)
    requests = tuple((m, a, k) for (m, _), (a, k) in _requests.items())
    lo = min(c.bands.centre[0] for c in inp.conditions)
    hi = max(c.bands.centre[-1] for c in inp.conditions)
    return TradeModel(inputs, package, spec.parameters, requests,
                      _metric_names(inputs, package), third_octave_bands(lo, hi).nominal,
                      tuple(c.name for c in inp.conditions), tuple(z.name for z in inp.zones))


def transmit(model: TradeModel, stacks) -> None:
    """Compute (and remember) the transmission the budget needs for each stack.

    Parameters
    ----------
    model : TradeModel
    stacks : iterable of KnownStack
        Distinct stacks of a batch; stacks already known are skipped.

    The loop over stacks is the place for a kernel batched along a leading variants axis.
    """
    for s in stacks:
        for method, args, kwargs in model.requests:
            getattr(s, method)(*args, **kwargs)


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
    x = np.atleast_2d(np.asarray(x, dtype=float))
    variants = [apply_variant(model.package, model.parameters, row) for row in x]
    zones = model.zones
    distinct = {v.stacks[z]: None for v in variants for z in zones}
    transmit(model, distinct)
    out = [_one(model, v) for v in variants]
    if not out:
        nb, nc, nz = len(model.band_hz), len(model.conditions), len(zones)
        return Evaluated(np.empty((0, len(model.names))), np.empty((0, nc, nb)),
                         np.empty((0, nz, nb)))
    return Evaluated(*(np.stack(a) for a in zip(*out, strict=True)))


def _one(model: TradeModel, variant):
    """Metrics, interior spectra and TL of one variant from its budget tables."""
    from ..budget import compute_budget

    r = compute_budget(replace(model.inputs, packages=(variant,)))
    s, mass, rat = r.summary, r.mass, r.ratings
    values = {"mass_kg": float(mass["mass_kg"].sum())}
    # the whole package counts as treatment until the budget separates structure layers
    col = "treatment_mass_kg" if "treatment_mass_kg" in mass else "mass_kg"
    values["treatment_mass_kg"] = float(mass[col].sum())
    for z, m in zip(mass["zone"], mass["areal_mass_kg_m2"], strict=True):
        values[f"areal_mass_kg_m2[{z}]"] = float(m)
    margins = [m for m in ("margin_dba", "margin_sil4_db", "margin_limit_db") if m in s]
    for _, row in s.iterrows():
        for m in ("interior_dba", "sil4_db", *margins):
            values[f"{m}[{row['condition']}]"] = float(row[m])
    values["max_interior_dba"] = float(s["interior_dba"].max())
    values["max_sil4_db"] = float(s["sil4_db"].max(skipna=False))
    for m in margins:
        values[f"min_{m}"] = float(s[m].min(skipna=False))
    met = np.array([s[m].to_numpy(dtype=float) for m in margins])
    with np.errstate(invalid="ignore"):
        values["meets_targets"] = float(np.all(met >= 0)) if margins else np.nan
    for _, row in rat.iterrows():
        for k in ("stc", "rw", "c", "ctr", "oitc"):
            v = row.get(k)
            values[f"{k}[{row['zone']}]"] = np.nan if v is None else float(v)
    metrics = np.array([values.get(n, np.nan) for n in model.names])
    band = {b: i for i, b in enumerate(model.band_hz)}
    cond = {c: i for i, c in enumerate(model.conditions)}
    zone = {z: i for i, z in enumerate(model.zones)}
    interior = np.full((len(cond), len(band)), np.nan)
    bands = r.bands
    interior[[cond[c] for c in bands["condition"]], [band[b] for b in bands["band_hz"]]] = (
        bands["interior_db"].to_numpy())
    tl = np.full((len(zone), len(band)), np.nan)
    tl[[zone[z] for z in r.tl["zone"]], [band[b] for b in r.tl["band_hz"]]] = (
        r.tl["tl_db"].to_numpy())
    return metrics, interior, tl
