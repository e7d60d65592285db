"""Units at the file boundary: every dimensional value in a file is a string with a unit.

One lazily created pint registry serves the whole package; the library itself works
in SI floats only.
"""

from __future__ import annotations

import functools
import math

from .errors import InputError

__all__ = ["QUANTITIES", "registry", "parse_quantity", "parse_dimensionless"]

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


@functools.cache
def registry():
    """The package's single pint registry (created on first use, about 0.3 s)."""
    import pint

    ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return ureg


def parse_quantity(value, kind: str, file: str = "", key: str = "") -> float:
    """Parse ``"25 mm"``-style text into an SI float of the given kind.

    Parameters
    ----------
    value : str
        Number and unit, e.g. ``"0.6 lb/ft^3"``.
    kind : str
        One of :data:`QUANTITIES`.
    file, key : str
        Where the value came from, for the error message.

    Raises
    ------
    InputError
        For a bare number, text pint cannot read, or a unit of the wrong dimension.
    """
    si, example = QUANTITIES[kind]
    label = kind.replace("_", " ")
    article = "an" if label[0] in "aeiou" else "a"
    if isinstance(value, bool) or not isinstance(value, (str, int, float)):
        raise InputError(file, key, f"expected {article} {label} with its unit such as {example}, "
                                    f"got {type(value).__name__} {value!r}")
    if isinstance(value, (int, float)):
        raise InputError(file, key, f"bare number {value!r}: {article} {label} needs a unit, "
                                    f"e.g. {example}")
    import pint

    ureg = registry()
    try:
        q = ureg.Quantity(value.strip())
    except Exception as exc:  # pint raises several types for unreadable text
        raise InputError(file, key, f"cannot read {value!r} as a quantity ({exc})") from None
    if not isinstance(q, ureg.Quantity) or q.dimensionless and si != "":
        raise InputError(file, key, f"{value!r} has no unit: {article} {label} needs one, "
                                    f"e.g. {example}")
    try:
        out = float(q.to(si).magnitude)
    except pint.DimensionalityError:
        raise InputError(file, key, f"{value!r} is not {article} {label} (expected units of {si}, "
                                    f"e.g. {example})") from None
    if not math.isfinite(out):
        raise InputError(file, key, f"{value!r} is not a finite number")
    return out


def parse_dimensionless(value, file: str = "", key: str = "") -> float:
    """Read a plain number (loss factor, porosity, tortuosity, share)."""
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise InputError(file, key, f"expected a plain number, got {value!r}")
    out = float(value)
    if not math.isfinite(out):
        raise InputError(file, key, f"{value!r} is not a finite number")
    return out
