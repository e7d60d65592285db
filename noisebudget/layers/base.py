"""What every layer family shares: the two element kinds a stack cascades, and the schema.

Time convention ``exp(+j omega t)``: losses are negative imaginary parts of wavenumbers
and positive real parts of impedances.

A layer supplies the least it can:

* a *sheet* (thin: septum, plate, screen, tile) gives its series impedance
  ``Z = (p_front - p_back) / v``, transfer matrix ``[[1, Z], [0, 1]]``;
* a *fluid* layer (air gap, equivalent-fluid porous layer) gives its effective density
  ``rho`` and bulk modulus ``K``; the stack forms ``kz^2 = omega^2 rho / K - kt^2`` and
  the matrix ``[[cos kz d, j omega rho d sinc], [j kz^2 d sinc / (omega rho), cos kz d]]``
  with ``sinc = sin(kz d) / (kz d)`` (Allard & Atalla, Propagation of Sound in Porous
  Media, 2nd ed. 2009, ch. 11).

Direction. Most layers react the same to a trace wave from any direction: their
``element(omega, kt, air)`` sees only the trace wavenumber. A layer whose response
depends on the wave's azimuth ``phi`` (radians from the stack's axial direction; the
hoop direction is ``phi = pi/2``) sets ``isotropic`` False and takes a fourth argument,
``element(omega, kt, air, azimuth)``, with ``azimuth`` broadcasting against ``kt``; the
stack passes it to such layers only, so isotropic layers neither see nor pay for it.
Its principal axes must be the axial and hoop directions (the response even in ``phi``
and in ``pi - phi``). Its ``trace_resonances(omega, azimuth=None)`` likewise takes an
azimuth (without one it gives the features at the azimuths that bound them).

Mounting. A layer is immutable; what depends on the stack around it is resolved by the
stack through :meth:`Layer.pressurised`, which returns the layer as mounted where the
receiving air's static pressure exceeds the source air's by ``delta_p`` (a curved skin
takes its membrane tension from it).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import KW_ONLY, dataclass, field, fields
from typing import Any, ClassVar

import numpy as np

__all__ = ["Field", "FluidElement", "Layer", "LayerValueError", "LayerValueErrors",
           "SheetElement", "require"]


class LayerValueError(ValueError):
    """A bad layer parameter; ``key`` names it. The file parser adds file and index."""

    def __init__(self, key: str, reason: str):
        self.key = key
        self.reason = reason
        super().__init__(f"{key}: {reason}")

    def __reduce__(self):
        return (type(self), (self.key, self.reason))


def require(key: str, value, low: float = 0.0, *, above: bool = False,
            high: float | None = None, below: bool = False) -> None:
    """Raise :class:`LayerValueError` unless ``value`` is a finite number ``>= low`` (``>``
    with ``above``) and, given ``high``, ``<= high`` (``<`` with ``below``): a layer built
    in a script is checked as a layer read from a file, so NaN never reaches a result."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise LayerValueError(key, f"expected a number, got {value!r}") from None
    ok = math.isfinite(v) and (v > low if above else v >= low)
    if high is not None:
        ok = ok and (v < high if below else v <= high)
        rule = f"must lie in {'(' if above else '['}{low:g}, {high:g}{')' if below else ']'}"
    else:
        rule = f"must be {'>' if above else '>='} {low:g}"
    if not ok:
        raise LayerValueError(key, f"{rule} (a finite number), got {value!r}")


class LayerValueErrors(LayerValueError):
    """Several bad parameters of one layer (e.g. of two tile cells), in order."""

    def __init__(self, errors: list[LayerValueError]):
        self.errors = list(errors)
        super().__init__(self.errors[0].key, self.errors[0].reason)

    def __reduce__(self):
        return (type(self), (self.errors,))


@dataclass(frozen=True)
class Field:
    """One key of a file schema: what the key holds, as data (no parsing here).

    The file boundary (:mod:`noisebudget.schema`) reads a table against a dict of
    fields, converts every value to SI, and reports every problem; the reference of file
    keys (``docs/file-keys.md``) is generated from the same dicts.

    Parameters
    ----------
    kind : str
        A quantity kind of :data:`noisebudget.units.QUANTITIES` (a string with its unit,
        converted to an SI float), or one of ``"number"`` (a plain dimensionless number),
        ``"db"``, ``"deg"`` (plain numbers in dB or degrees), ``"integer"``,
        ``"boolean"``, ``"choice"`` (one of ``choices``), ``"name"`` (a label: no control
        characters), ``"text"``, ``"date"``, ``"path"`` (a file, relative to the file
        that names it), ``"bands"`` (nominal band frequencies in Hz; octave bands where
        the table's ``bandwidth`` key, declared before, says ``"octave"``),
        ``"frequencies"`` (rising frequencies in Hz, plain numbers: where the values of
        another key are given, between which they are interpolated), ``"raw"`` (any
        value, read later against another field), ``"table"`` (keys of ``schema``),
        ``"tables"`` (an array of such tables), ``"named"`` (tables keyed by a name of the
        user's, each with the keys of ``schema``), or a kind read by ``read``.
    required : bool
        The key must be given (for a ``group``: one key of the group must be given).
    positive, allow_zero : bool
        Numbers must be > 0 (>= 0 with ``allow_zero``); set ``positive=False`` for
        signed values.
    choices : tuple of str
        The allowed values of a ``"choice"``.
    gt, ge, lt, le : float, optional
        Further bounds, in SI units (``gt``: greater than, ``ge``: at least, ...).
    shape : str
        ``"one"`` (a single value), ``"list"`` (an array of values) or ``"one_or_list"``.
    length : int or str, optional
        The length of a list, or the key in the same table whose list or bands it
        aligns with (e.g. ``"bands_hz"``).
    group : str
        Keys of one group are alternatives: at most one may be given.
    needs : tuple of str
        Keys of the same table that must be given with this one.
    schema : dict, optional
        The keys of a ``"table"``, ``"tables"`` or ``"named"`` value.
    tag, variants : str, dict
        For ``"tables"`` whose entries differ by one key (e.g. a leak's ``shape``):
        ``variants`` maps each value of the ``tag`` key to the schema of those entries.
    unique : str
        For ``"tables"``: a key whose value must differ between the entries (a name).
    default : object
        The value used when the key is absent (converted, SI); also documented.
    doc : str
        One line for the key reference.
    read : callable, optional
        ``read(value, field, key_path, reader)`` for a kind that a file module reads
        itself (stack layer lists); returns the value or records problems on ``reader``
        and returns :data:`noisebudget.schema.INVALID`.
    """

    kind: str
    required: bool = False
    positive: bool = True
    choices: tuple[str, ...] = ()
    allow_zero: bool = False
    _: KW_ONLY
    gt: float | None = None
    ge: float | None = None
    lt: float | None = None
    le: float | None = None
    shape: str = "one"
    length: int | str | None = None
    group: str = ""
    needs: tuple[str, ...] = ()
    schema: Mapping | None = field(default=None, compare=False, hash=False)
    tag: str = ""
    variants: Mapping | None = field(default=None, compare=False, hash=False)
    unique: str = ""
    default: Any = None
    doc: str = ""
    read: Callable | None = field(default=None, compare=False, hash=False)


@dataclass(frozen=True)
class SheetElement:
    """Series impedance sheet, ``[[1, Z], [0, 1]]``; ``impedance`` broadcasts to (nf, nth)."""

    impedance: np.ndarray


@dataclass(frozen=True)
class FluidElement:
    """Homogeneous (equivalent) fluid layer of ``thickness`` with complex rho and K."""

    density: np.ndarray
    bulk_modulus: np.ndarray
    thickness: float


@dataclass(frozen=True)
class Layer:
    """Base of every layer: a frozen dataclass with SI parameters.

    Subclasses set ``type_name`` and ``schema`` and implement :meth:`element`.
    """

    type_name: ClassVar[str] = ""
    schema: ClassVar[dict] = {}

    @property
    def thickness(self) -> float:
        """Thickness in m (0 for an idealised sheet)."""
        return 0.0

    @property
    def areal_mass(self) -> float:
        """Mass per unit area in kg/m^2."""
        return 0.0

    @property
    def isotropic(self) -> bool:
        """False when the layer's response depends on the trace wave's azimuth."""
        return True

    def element(self, omega: np.ndarray, kt: np.ndarray, air) -> SheetElement | FluidElement:
        """The layer's element at angular frequencies ``omega`` (nf, 1) and trace
        wavenumbers ``kt`` (nf, nth), with ``air`` the air filling the stack.

        Direction-dependent layers (``isotropic`` False) take ``azimuth`` as a fourth
        argument, broadcasting against ``kt``; their element may then carry a trailing
        azimuth axis.
        """
        raise NotImplementedError

    def trace_resonances(self, omega: np.ndarray) -> np.ndarray | None:
        """Trace wavenumbers (nf, k) where the layer's response is sharp (coincidence).

        The angle quadrature places break points there; NaN marks a feature absent at a
        frequency. ``None`` when there are none.
        """
        return None

    def pressurised(self, delta_p: float) -> Layer:
        """The layer mounted where the receiving air is ``delta_p`` (Pa) above the source
        air; most layers do not care and return themselves."""
        return self

    def parameters(self) -> dict:
        """The layer's parameters as a plain dict (SI), for tables and reports."""
        return {f.name: getattr(self, f.name) for f in fields(self) if f.init}

    @classmethod
    def required_by(cls, values: dict) -> tuple[str, ...]:
        """Keys that other values make required (e.g. a porous model's parameters), given
        the table's values as read (only valid values); the parser reports each one
        missing."""
        return ()

    @classmethod
    def from_values(cls, values: dict) -> Layer:
        """Build from a dict of SI values keyed as in the file schema."""
        return cls(**values)
