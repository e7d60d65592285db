"""Varied parameters of a trade study, their designs (grid, Monte Carlo) and variants.

A :class:`Parameter` addresses one value of one package: a layer key of one zone's stack
(with the stack file's key name), a tile cell's key, or the package's installation mass.
A variant is built from the package as written by new immutable layer, stack and package
objects (the layer class's ``from_values`` on the values its file gave, one changed;
``dataclasses.replace``); nothing is mutated, so the stacks a variant does not change
stay the very same objects.

A parameter's physical range is the one its key declares in the layer schema
(:class:`~noisebudget.layers.base.Field`: sign, ``gt``, ``ge``, ``lt``, ``le``) within the
magnitudes the models handle (:data:`noisebudget.units.LIMITS`): the file boundary refuses
any value outside it, and Monte Carlo draws and the optimiser stay inside it.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, replace

import numpy as np

from ..checks import MAX_VARIANTS

__all__ = ["DISTRIBUTIONS", "MAX_VARIANTS", "NORMAL_CLEARANCE", "TRADE_MODES", "Distribution",
           "LayerTarget", "Parameter", "TradeSpec", "apply_variant", "as_written", "design",
           "physical_bounds"]

TRADE_MODES = ("grid", "monte-carlo")
NORMAL_CLEARANCE = 4.0     # a normal with no low/high must clear its physical bounds by 4 std
# distribution -> the keys it needs (a normal may add low and high to truncate it)
DISTRIBUTIONS = {"normal": ("mean", "std"), "uniform": ("low", "high"),
                 "triangular": ("low", "mode", "high")}

# quantity kind -> (column suffix, SI unit for display)
UNITS = {"length": ("m", "m"), "density": ("kg_m3", "kg/m^3"),
         "surface_density": ("kg_m2", "kg/m^2"), "mass": ("kg", "kg"),
         "modulus": ("pa", "Pa"), "pressure": ("pa", "Pa"),
         "flow_resistivity": ("pa_s_m2", "Pa s/m^2"), "flow_resistance": ("pa_s_m", "Pa s/m"),
         "tension": ("n_per_m", "N/m"), "bending_stiffness": ("n_m", "N m"),
         "frequency": ("hz", "Hz"), "number": ("", ""), "db": ("db", "dB"),
         "deg": ("deg", "deg")}


def physical_bounds(spec) -> tuple[float, bool, float, bool]:
    """``(low, low_inclusive, high, high_inclusive)`` that a key's values must obey.

    ``spec`` is the key's schema :class:`~noisebudget.layers.base.Field`: ``positive``
    (``allow_zero``) and ``gt``/``ge``/``lt``/``le`` as declared, within the sizes of
    :data:`noisebudget.units.LIMITS` for a quantity (a key that must be > 0 is then at
    least the smallest size handled; one that may be 0 starts at 0).
    """
    from ..units import LIMITS

    lo, lo_in, hi, hi_in = -math.inf, False, math.inf, False
    if spec.positive:
        lo, lo_in = 0.0, bool(spec.allow_zero)
    for v, inclusive in ((spec.gt, False), (spec.ge, True)):
        if v is not None and (v > lo or (v == lo and not inclusive)):
            lo, lo_in = float(v), inclusive
    for v, inclusive in ((spec.lt, False), (spec.le, True)):
        if v is not None and (v < hi or (v == hi and not inclusive)):
            hi, hi_in = float(v), inclusive
    if spec.kind in LIMITS:
        small, big = LIMITS[spec.kind]
        if big < hi:
            hi, hi_in = big, True
        if -big > lo:
            lo, lo_in = -big, True
        if lo == 0.0 and not lo_in:
            lo, lo_in = small, True
    return lo, lo_in, hi, hi_in


def within(value: float, b) -> bool:
    """Whether ``value`` obeys the bound tuple ``b`` of :func:`physical_bounds`."""
    lo, lo_in, hi, hi_in = b
    return ((value >= lo if lo_in else value > lo) and (value <= hi if hi_in else value < hi)
            and math.isfinite(value))


@dataclass(frozen=True)
class Distribution:
    """A parameter's scatter: ``normal`` (mean, std, truncated to [low, high]),
    ``uniform`` (low, high) or ``triangular`` (low, mode, high); SI values.

    ``low`` and ``high`` are always finite and within the parameter's physical bounds:
    a normal without them is truncated at its physical bounds (or 8 standard deviations
    from its mean, whichever is nearer), which the file boundary accepts only when they
    lie at least :data:`NORMAL_CLEARANCE` standard deviations from the mean.
    """

    kind: str
    low: float
    high: float
    mean: float | None = None
    std: float | None = None
    mode: float | None = None

    def ppf(self, u) -> np.ndarray:
        """Inverse cumulative distribution at probabilities ``u`` in [0, 1)."""
        u = np.asarray(u, dtype=float)
        if self.kind == "uniform":
            return self.low + u * (self.high - self.low)
        from scipy import stats

        if self.kind == "triangular":
            width = self.high - self.low
            return stats.triang.ppf(u, (self.mode - self.low) / width, self.low, width)
        a, b = (self.low - self.mean) / self.std, (self.high - self.mean) / self.std
        return stats.truncnorm.ppf(u, a, b, loc=self.mean, scale=self.std)


@dataclass(frozen=True, eq=False)
class LayerTarget:
    """How to rebuild the addressed layer: its class and the SI values of its keys as
    its file gave them (:attr:`noisebudget.layerfile.LayerEntry.values`)."""

    cls: type
    values: dict


@dataclass(frozen=True)
class Parameter:
    """One ``[[vary]]`` entry, validated, in SI.

    Attributes
    ----------
    label : str
        The entry's ``name`` or its address, e.g. ``sidewall.layer2.thickness``.
    where : str
        Key path of the entry in the study file, e.g. ``vary[1]``.
    package, zone : str
        What it addresses (``zone`` is None for ``installation_mass``).
    layer, cell : int or None
        1-based layer index in the zone's stack and tile cell index.
    key : str
        Stack-file key name (or ``installation_mass``).
    kind : str
        Quantity kind of :mod:`noisebudget.units` (``"number"`` when dimensionless).
    values : tuple of float or None
        Grid values (``values``, or ``range`` with ``steps``).
    distribution : Distribution or None
        Monte Carlo scatter.
    bounds : (float, float)
        The continuous range the optimiser searches.
    target : LayerTarget or None
        How to rebuild the layer.
    zones : tuple of str
        For ``installation_mass``: the zones the package gives itself, whose
        installation mass it sets (zones taken over with ``based_on`` keep theirs).
    group : tuple of str
        The other keys of the key's schema group (``prestress`` for a cell's tension):
        the varied key replaces them.
    """

    label: str
    where: str
    package: str
    zone: str | None
    layer: int | None
    cell: int | None
    key: str
    kind: str
    values: tuple | None
    distribution: Distribution | None
    bounds: tuple
    target: LayerTarget | None = None
    zones: tuple = ()
    group: tuple = ()

    @property
    def column(self) -> str:
        """Column name: the label with the SI unit as suffix, e.g. ``..._m``."""
        suffix = UNITS.get(self.kind, ("", ""))[0]
        return f"{self.label}_{suffix}" if suffix else self.label

    @property
    def unit(self) -> str:
        """SI unit for display."""
        return UNITS.get(self.kind, ("", ""))[1]


@dataclass(frozen=True)
class TradeSpec:
    """The study's ``[[vary]]`` entries and ``[trade]`` settings."""

    parameters: tuple = ()
    mode: str = "grid"
    samples: int = 1000
    seed: int = 0

    @property
    def package(self) -> str | None:
        """The varied package's name (every entry addresses the same one)."""
        return self.parameters[0].package if self.parameters else None

    @property
    def count(self) -> int:
        """Number of variants."""
        if not self.parameters:
            return 0
        if self.mode == "monte-carlo":
            return self.samples
        return math.prod(len(p.values) for p in self.parameters)


def design(spec: TradeSpec) -> np.ndarray:
    """The variants' parameter values in SI, shape (n, p), one row per variant.

    Grid: the full factorial of every entry's values, the last entry varying fastest.
    Monte Carlo: ``samples`` independent draws, each parameter by inverse transform of
    uniform numbers from ``numpy.random.default_rng(seed)`` (reproducible; the same seed
    gives the same variants on any number of workers).
    """
    params = spec.parameters
    if spec.mode == "grid":
        rows = list(itertools.product(*(p.values for p in params)))
        return np.array(rows, dtype=float).reshape(len(rows), len(params))
    u = np.random.default_rng(spec.seed).random((spec.samples, len(params)))
    return np.column_stack([p.distribution.ppf(u[:, j]) for j, p in enumerate(params)])


def apply_variant(package, parameters, x):
    """The package with the parameter values ``x`` (SI, one per parameter).

    Returns a new :class:`~noisebudget.budget.Package`; zones no parameter touches keep
    their stack objects. A varied key replaces the keys of its schema group (a cell's
    prestress replaces the tension its file gave, and the other way round). Raises
    ``LayerValueError`` when the values make a layer invalid.
    """
    stacks = dict(package.stacks)
    installation = dict(package.installation)
    installation_mass = package.installation_mass
    by_layer: dict = {}
    for p, v in zip(parameters, x, strict=True):
        if p.target is None:
            installation_mass = float(v)
            installation.update(dict.fromkeys(p.zones, float(v)))
        else:
            by_layer.setdefault((p.zone, p.layer), []).append((p, float(v)))
    for (zone, index), items in by_layer.items():
        target = items[0][0].target
        values = dict(target.values)
        if any(p.cell is not None for p, _ in items):
            values["cell"] = [dict(c) for c in values["cell"]]
        for p, v in items:
            table = values if p.cell is None else values["cell"][p.cell - 1]
            for other in p.group:
                table.pop(other, None)
            table[p.key] = v
        stack = stacks[zone]
        layers = list(stack.layers)
        layers[index - 1] = target.cls.from_values(values)
        stacks[zone] = replace(stack, layers=tuple(layers))
    return replace(package, stacks=stacks, installation_mass=installation_mass,
                   installation=installation)


def as_written(parameters, package) -> np.ndarray:
    """Each parameter's value in the package as its file gives it (SI), the reference
    the variants are compared with."""
    out = []
    for p in parameters:
        if p.target is None:
            out.append(package.installation_mass)
            continue
        values = p.target.values if p.cell is None else p.target.values["cell"][p.cell - 1]
        v = values.get(p.key)
        if v is None:  # given by another key of its group (a tension by its prestress)
            layer = package.stacks[p.zone].layers[p.layer - 1]
            v = getattr(layer.cells[p.cell - 1] if p.cell is not None else layer, p.key)
        out.append(float(v))
    return np.array(out, dtype=float)
