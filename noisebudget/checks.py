"""Checks of the arrays and numbers that callers pass to the library.

A failed check raises :class:`ArgumentError` (a ``ValueError``) whose message names the
argument and the offending value, e.g. ``f_hz[3] = -10 Hz: must be > 0``. The limits keep
a request within what the models mean and what the machine can hold: frequencies from
1 mHz to 100 kHz (five times the audio range, for scale models), at most
:data:`MAX_FREQUENCIES` per call.
"""

from __future__ import annotations

import numpy as np

__all__ = ["ArgumentError", "MAX_ANGLE_POINTS", "MAX_FREQUENCIES", "MAX_FREQUENCY_HZ",
           "MAX_PER_OCTAVE", "MAX_VARIANTS", "MIN_FREQUENCY_HZ", "angles", "azimuths",
           "frequencies",
           "frequency"]

MIN_FREQUENCY_HZ = 1e-3
MAX_FREQUENCY_HZ = 1e5
MAX_FREQUENCIES = 1_000_000    # about 8 min of field-incidence TL for a five-layer stack
MAX_PER_OCTAVE = 1000
MAX_ANGLE_POINTS = 20_000_000  # frequencies x angles of one tau array (320 MB)
MAX_VARIANTS = 100_000         # variants of one trade study (grid product or samples)


class ArgumentError(ValueError):
    """An argument of a library call is out of range; the message names it."""


def _array(values, name: str) -> np.ndarray:
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise ArgumentError(f"{name}: not an array of numbers") from None
    arr = np.atleast_1d(arr)
    if arr.ndim != 1:
        raise ArgumentError(f"{name} must be 1-D, got shape {arr.shape}")
    if arr.size == 0:
        raise ArgumentError(f"{name} is empty")
    return arr


def frequency(value, name: str = "frequency") -> float:
    """One frequency in Hz, finite and within the library's range."""
    return float(frequencies([value], name, single=True)[0])


def frequencies(f_hz, name: str = "f_hz", single: bool = False) -> np.ndarray:
    """Frequencies in Hz as a 1-D float array; each finite, > 0, 1 mHz .. 100 kHz."""
    f = _array(f_hz, name)
    if f.size > MAX_FREQUENCIES:
        raise ArgumentError(f"{name} has {f.size} values: at most {MAX_FREQUENCIES} per call")
    bad = ~np.isfinite(f) | (f < MIN_FREQUENCY_HZ) | (f > MAX_FREQUENCY_HZ)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        v = f[i]
        where = name if single else f"{name}[{i}]"
        if not np.isfinite(v):
            reason = "must be a finite number"
        elif v <= 0:
            reason = "must be > 0"
        elif v < MIN_FREQUENCY_HZ:
            reason = f"must be >= {MIN_FREQUENCY_HZ:g} Hz"
        else:
            reason = f"must be <= {MAX_FREQUENCY_HZ:g} Hz"
        raise ArgumentError(f"{where} = {v:g} Hz: {reason}")
    return f


def angles(theta_rad, name: str = "theta_rad", nf: int = 1) -> np.ndarray:
    """Angles of incidence in rad as a 1-D array, each in 0 .. pi/2; with ``nf``
    frequencies the tau array stays below :data:`MAX_ANGLE_POINTS` values."""
    th = _array(theta_rad, name)
    bad = ~np.isfinite(th) | (th < 0) | (th > np.pi / 2)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ArgumentError(f"{name}[{i}] = {th[i]:g} rad: must lie in 0 .. pi/2")
    if th.size * nf > MAX_ANGLE_POINTS:
        raise ArgumentError(f"{name}: {nf} frequencies x {th.size} angles is more than "
                            f"{MAX_ANGLE_POINTS} values")
    return th


def azimuths(azimuth_rad, name: str = "azimuth_rad", points: int = 1, scalar: bool = False):
    """Azimuths of the trace wave in rad (any finite angle): a scalar gives a float, a
    1-D array an array (refused where ``scalar``); with ``points`` frequencies x angles
    the tau array stays below :data:`MAX_ANGLE_POINTS` values."""
    try:
        phi = np.asarray(azimuth_rad, dtype=float)
    except (TypeError, ValueError):
        raise ArgumentError(f"{name}: not a number or an array of numbers") from None
    if phi.ndim == 0:
        if not np.isfinite(phi):
            raise ArgumentError(f"{name} = {float(phi):g} rad: must be a finite number")
        return float(phi)
    if scalar:
        raise ArgumentError(f"{name} must be one number here, got shape {phi.shape}")
    phi = _array(phi, name)
    bad = ~np.isfinite(phi)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ArgumentError(f"{name}[{i}] = {phi[i]:g} rad: must be a finite number")
    if phi.size * points > MAX_ANGLE_POINTS:
        raise ArgumentError(f"{name}: {points} frequencies x angles x {phi.size} azimuths is "
                            f"more than {MAX_ANGLE_POINTS} values")
    return phi
