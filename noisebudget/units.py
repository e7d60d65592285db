"""Units at the file boundary: every dimensional value in a file is a string with a unit.

One lazily created pint registry serves the whole package; the library itself works
in SI floats only.
"""

from __future__ import annotations

import functools
import math
import re

from .errors import InputError

__all__ = ["LIMITS", "QUANTITIES", "registry", "parse_quantity", "parse_dimensionless"]

# kind -> (SI unit pint understands, an example for messages)
QUANTITIES: dict[str, tuple[str, str]] = {
    "length": ("m", '"25 mm"'),
    "density": ("kg/m^3", '"9.6 kg/m^3"'),
    "surface_density": ("kg/m^2", '"1.5 kg/m^2"'),
    "mass": ("kg", '"0.4 g"'),
    "modulus": ("Pa", '"73 GPa"'),
    "pressure": ("Pa", '"101.325 kPa"'),
    "temperature": ("K", '"20 degC"'),
    "flow_resistivity": ("Pa*s/m^2", '"20000 Pa*s/m^2"'),
    "flow_resistance": ("Pa*s/m", '"400 Pa*s/m"'),
    "tension": ("N/m", '"80 N/m"'),
    "bending_stiffness": ("N*m", '"250 N*m"'),
    "frequency": ("Hz", '"180 Hz"'),
    "area": ("m^2", '"12.5 m^2"'),
    "volume": ("m^3", '"40 m^3"'),
    "time": ("s", '"0.6 s"'),
}


# magnitudes (SI) that the models and the arithmetic after them are meant for: a value
# outside is a slip of unit or of exponent, never a real sidewall (zero stays allowed
# where a key allows it)
LIMITS: dict[str, tuple[float, float]] = {
    "length": (1e-7, 1e5),
    "density": (1e-2, 1e5),
    "surface_density": (1e-5, 1e4),
    "mass": (1e-9, 1e3),
    "modulus": (1e2, 1e13),
    "pressure": (1e-2, 1e10),
    "temperature": (1.0, 1e4),
    "flow_resistivity": (1.0, 1e9),
    "flow_resistance": (1e-3, 1e8),
    "tension": (1e-6, 1e9),
    "bending_stiffness": (1e-12, 1e10),
    "frequency": (1.0, 1e5),
    "area": (1e-6, 1e6),
    "volume": (1e-3, 1e6),
    "time": (1e-3, 1e3),
}


@functools.cache
def registry():
    """The package's single pint registry (created on first use, about 0.3 s)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return ureg


# a quantity is a plain decimal number and a unit made of words with small integer powers:
# no arithmetic, so that no text can make the unit parser compute for ever
_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_WORD = r"(?:[^\W\d]|°)(?:\w|°)*(?:\s*(?:\^|\*\*)\s*[+-]?\d{1,2})?"
_QUANTITY = re.compile(rf"\s*({_NUMBER})\s*((?:{_WORD})(?:\s*[*/]?\s*{_WORD})*)?\s*")


def _article(label: str) -> str:
    return "an" if label[0] in "aeiou" else "a"


@functools.lru_cache(maxsize=4096)
def _to_si(text: str, kind: str) -> float | str:
    """SI value of quantity text, or the reason it cannot be read (cached: files repeat
    the same values)."""
    si, example = QUANTITIES[kind]
    label = kind.replace("_", " ")
    a = _article(label)
    m = _QUANTITY.fullmatch(text)
    if m is None:
        return (f"cannot read {text!r} as a quantity: expected a number and its unit, "
                f"e.g. {example}")
    number, unit = m.groups()
    if not unit:
        return f"{text!r} has no unit: {a} {label} needs one, e.g. {example}"
    import pint

    ureg = registry()
    try:
        q = ureg.Quantity(float(number), ureg.parse_units(unit))
    except Exception as exc:  # pint raises several types for unknown or odd units
        return f"cannot read {text!r} as a quantity ({str(exc).strip()})"
    try:
        out = float(q.to(si).magnitude)
    except pint.DimensionalityError:
        return f"{text!r} is not {a} {label} (expected units of {si}, e.g. {example})"
    if not math.isfinite(out):
        return f"{text!r} is not a finite number"
    lo, hi = LIMITS[kind]
    if out != 0 and not lo <= abs(out) <= hi:
        return (f"{text!r} is outside the range of {a} {label} that noisebudget handles "
                f"({lo:g} to {hi:g} {si} in size)")
    return out


def parse_quantity(value, kind: str, file: str = "", key: str = "") -> float:
    """Parse ``"25 mm"``-style text into an SI float of the given kind.

    Parameters
    ----------
    value : str
        A plain decimal number and its unit, e.g. ``"0.6 lb/ft^3"`` (no arithmetic).
    kind : str
        One of :data:`QUANTITIES`.
    file, key : str
        Where the value came from, for the error message.

    Raises
    ------
    InputError
        For a bare number, text that is not a number and a unit, an unknown unit, a unit
        of the wrong dimension or a value that is not finite.
    """
    from .errors import show

    si, example = QUANTITIES[kind]
    label = kind.replace("_", " ")
    a = _article(label)
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        raise InputError(file, key, f"bare number {show(value)}: {a} {label} needs a unit, "
                                    f"e.g. {example}")
    if not isinstance(value, str):
        raise InputError(file, key, f"expected {a} {label} with its unit such as {example}, "
                                    f"got {show(value, typed=True)}")
    out = _to_si(value, kind)
    if isinstance(out, str):
        raise InputError(file, key, out)
    return out


def parse_dimensionless(value, file: str = "", key: str = "") -> float:
    """Read a plain finite number (loss factor, porosity, tortuosity, share)."""
    from .errors import show

    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(file, key, f"expected a plain number, got {show(value, typed=True)}")
    out = float(value)
    if not math.isfinite(out):
        raise InputError(file, key, f"{show(value)} is not a finite number")
    return out
