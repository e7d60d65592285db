"""Varied parameters of a trade study, their designs (grid, Monte Carlo) and variants.

A :class:`Parameter` addresses one value of one package: a layer key of one zone's stack
(with the stack file's key name), a tile cell's key, or the package's installation mass.
A variant is built from the package as written by new immutable layer, stack and package
objects (``from_values``, ``Tile.with_cell``, ``dataclasses.replace``); nothing is
mutated, so the stacks a variant does not change stay the very same objects.

Physical bounds come from the layer's schema (``Field.positive``, ``allow_zero``) plus
the few upper bounds the layers enforce (porosity, Poisson's ratio, cell share).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass, field, replace

import numpy as np

__all__ = ["MAX_VARIANTS", "TRADE_MODES", "Distribution", "LayerTarget", "Parameter",
           "TradeSpec", "apply_variant", "design", "physical_bounds"]

MAX_VARIANTS = 100_000     # grid product and Monte Carlo samples (a sane maximum)
TRADE_MODES = ("grid", "monte-carlo")
NORMAL_CLEARANCE = 4.0     # a normal with no low/high must clear its physical bounds by 4 std

# quantity kind -> (column suffix, unit for display)
UNITS = {"length": ("m", "m"), "density": ("kg_m3", "kg/m^3"),
         "surface_density": ("kg_m2", "kg/m^2"), "mass": ("kg", "kg"),
         "modulus": ("pa", "Pa"), "pressure": ("pa", "Pa"),
         "flow_resistivity": ("pa_s_m2", "Pa s/m^2"), "flow_resistance": ("pa_s_m", "Pa s/m"),
         "tension": ("n_per_m", "N/m"), "bending_stiffness": ("n_m", "N m"),
         "frequency": ("hz", "Hz"), "number": ("", "")}

# upper and lower bounds the layer classes enforce beyond the schema's sign
# (value, inclusive); the schema's declared ranges replace this table when they exist
_UPPER = {"porosity": (1.0, True), "poisson_ratio": (0.5, False), "share": (1.0, True)}
_LOWER = {"tortuosity": (1.0, True)}


def physical_bounds(key: str, spec) -> tuple[float, bool, float, bool]:
    """``(low, low_inclusive, high, high_inclusive)`` that a layer key's value must obey.

    ``spec`` is the key's schema ``Field``: ``positive`` without ``allow_zero`` means
    ``> 0``, with it ``>= 0``; a few keys carry the bounds their layer checks
    (porosity in (0, 1], Poisson's ratio in [0, 0.5), tortuosity >= 1, share in (0, 1]).
    """
    lo, lo_in, hi, hi_in = -math.inf, False, math.inf, False
    if spec.positive:
        lo, lo_in = 0.0, bool(spec.allow_zero)
    if key in _LOWER:
        lo, lo_in = _LOWER[key]
    if key in _UPPER:
        hi, hi_in = _UPPER[key]
    return lo, lo_in, hi, hi_in


def bounds_text(b) -> str:
    """``"> 0"``, ``"in (0, 1]"``: a bound tuple of :func:`physical_bounds` in words."""
    lo, lo_in, hi, hi_in = b
    if math.isinf(hi):
        return f"{'>=' if lo_in else '>'} {lo:g}" if not math.isinf(lo) else "finite"
    return f"in {'[' if lo_in else '('}{lo:g}, {hi:g}{']' if hi_in else ')'}"


def within(value: float, b) -> bool:
    """Whether ``value`` obeys the bound tuple ``b``."""
    lo, lo_in, hi, hi_in = b
    return ((value >= lo if lo_in else value > lo) and (value <= hi if hi_in else value < hi)
            and math.isfinite(value))


@dataclass(frozen=True)
class Distribution:
    """A parameter's scatter: ``normal`` (mean, std, truncated to [low, high]),
    ``uniform`` (low, high) or ``triangular`` (low, mode, high); SI values.

    ``low`` and ``high`` are always finite and within the parameter's physical bounds:
    a normal without them is truncated at its physical bounds, which the parser only
    accepts when they lie at least 4 standard deviations from the mean.
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


@dataclass(frozen=True)
class LayerTarget:
    """How to rebuild the addressed layer: its class and its keys' SI values as parsed.

    ``prestress`` maps a tile cell index (1-based) to the prestress its file gave, so a
    varied membrane thickness keeps the cell's prestress (tension = prestress x thickness).
    """

    cls: type
    values: dict
    prestress: dict = field(default_factory=dict)

    def __hash__(self):  # values hold tuples and floats; identity is enough here
        return id(self)


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

    parameters: tuple
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
    their stack objects. Raises ``LayerValueError`` when the values make a layer invalid.
    """
    stacks = dict(package.stacks)
    installation = package.installation_mass
    by_layer: dict = {}
    for p, v in zip(parameters, x, strict=True):
        if p.target is None:
            installation = float(v)
        else:
            by_layer.setdefault((p.zone, p.layer), []).append((p, float(v)))
    for (zone, index), items in by_layer.items():
        target = items[0][0].target
        values = dict(target.values)
        cells: dict = {}
        for p, v in items:
            if p.cell is None:
                values[p.key] = v
            else:
                cells.setdefault(p.cell, {})[p.key] = v
        layer = target.cls.from_values(values)
        for ci, changes in cells.items():
            layer = layer.with_cell(ci - 1, **_cell_changes(layer.cells[ci - 1], changes,
                                                            target.prestress.get(ci)))
        stack = stacks[zone]
        layers = list(stack.layers)
        layers[index - 1] = layer
        stacks[zone] = replace(stack, layers=tuple(layers))
    return replace(package, stacks=stacks, installation_mass=installation)


def _cell_changes(cell, changes: dict, prestress: float | None) -> dict:
    """Cell field changes for file keys; a cell given by prestress keeps it."""
    out = {k: v for k, v in changes.items() if k != "prestress"}
    if "tension" in changes or not ({"prestress", "membrane_thickness"} & set(changes)):
        return out
    prestress = changes.get("prestress", prestress)
    if prestress is not None:
        out["tension"] = prestress * out.get("membrane_thickness", cell.membrane_thickness)
    return out
