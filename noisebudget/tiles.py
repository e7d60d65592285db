"""Tile analysis: TL dips and peaks, tuning a peak to a tone, calibrating to a tube test.

All at normal incidence, the condition of an impedance-tube measurement (ASTM E2611).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .layers.resonators import Tile
from .media import Air
from .stack import Stack

__all__ = ["Extrema", "FitResult", "TUNING_BOUNDS", "TuningError", "fit_tile", "mass_law_tl",
           "normal_tl", "tile_extrema", "tune_peak"]

# physical bounds of the tuned parameter (SI): a few mg to 100 g, 0.5 to 5000 N/m
TUNING_BOUNDS = {"mass": (1e-6, 0.1), "tension": (0.5, 5000.0), "radius": (1e-3, None)}


class TuningError(ValueError):
    """The target cannot be reached within the parameter's physical bounds."""


def normal_tl(tile: Tile, f_hz, air: Air | None = None) -> np.ndarray:
    """Normal-incidence TL of the tile alone between two half-spaces of ``air``."""
    return Stack((tile,), air or Air()).transmission_loss(f_hz, "normal")


def mass_law_tl(areal_mass: float, f_hz, air: Air | None = None) -> np.ndarray:
    """Normal-incidence mass law ``10 lg[1 + (omega m / 2 rho c)^2]`` (Vigran 2008)."""
    air = air or Air()
    x = 2 * np.pi * np.asarray(f_hz, dtype=float) * areal_mass / (2 * air.impedance)
    return 10 * np.log10(1 + x**2)


@dataclass(frozen=True)
class Extrema:
    """Interior TL dips and peaks (Hz, dB), lowest frequency first."""

    dip_hz: np.ndarray
    dip_db: np.ndarray
    peak_hz: np.ndarray
    peak_db: np.ndarray


def tile_extrema(tile: Tile, fmin: float = 10.0, fmax: float = 10000.0,
                 air: Air | None = None, points: int = 3000) -> Extrema:
    """Local minima and maxima of the normal-incidence TL, refined by bounded search.

    A log grid locates each extremum; ``scipy.optimize.minimize_scalar`` (bounded, in
    log f) refines it between the neighbouring grid points.
    """
    from scipy import optimize

    f = np.geomspace(fmin, fmax, points)
    tl = normal_tl(tile, f, air)
    inner = np.arange(1, points - 1)
    mins = inner[(tl[inner] < tl[inner - 1]) & (tl[inner] <= tl[inner + 1])]
    maxs = inner[(tl[inner] > tl[inner - 1]) & (tl[inner] >= tl[inner + 1])]

    def refine(idx, sign):
        out_f, out_v = [], []
        for i in idx:  # one bounded search per extremum
            res = optimize.minimize_scalar(
                lambda x: sign * normal_tl(tile, [np.exp(x)], air)[0],
                bounds=(np.log(f[i - 1]), np.log(f[i + 1])), method="bounded",
                options={"xatol": 1e-7})
            out_f.append(np.exp(res.x))
            out_v.append(sign * res.fun)
        return np.array(out_f), np.array(out_v)

    dip_f, dip_v = refine(mins, 1.0)
    peak_f, peak_v = refine(maxs, -1.0)
    return Extrema(dip_f, dip_v, peak_f, peak_v)


def tune_peak(tile: Tile, target_hz: float, vary: str = "mass", cell: int = 0,
              air: Air | None = None) -> tuple[Tile, float]:
    """Solve for the cell parameter that puts the first TL peak at ``target_hz``.

    Brent's method (``scipy.optimize.brentq``) on ``ln(f_peak / f_target)`` over the log of
    the parameter, bracketed by :data:`TUNING_BOUNDS`. Returns the tuned tile and the
    parameter value (SI). Raises TuningError when the bounds do not bracket the target.
    """
    from scipy import optimize

    if vary not in TUNING_BOUNDS:
        raise TuningError(f"--vary must be one of {', '.join(TUNING_BOUNDS)}, got {vary!r}")
    c = tile.cells[cell]
    lo, hi = TUNING_BOUNDS[vary]
    if vary == "radius":
        lo = max(lo, 1.2 * c.mass_radius)
        hi = tile.pitch / 2
    if vary == "mass" and c.mass_radius == 0:
        raise TuningError("tuning the mass needs a central mass radius > 0")
    fmin, fmax = target_hz / 20, min(target_hz * 20, 5e4)  # a search grid within 1e5 Hz

    def first_peak(x):
        ext = tile_extrema(tile.with_cell(cell, **{vary: float(np.exp(x))}), fmin, fmax,
                           air, 1200)
        if ext.peak_hz.size == 0:
            # no peak in range: it lies below fmin or above fmax
            return np.nan
        return np.log(ext.peak_hz[0] / target_hz)

    xs = np.linspace(np.log(lo), np.log(hi), 13)
    gs = np.array([first_peak(x) for x in xs])  # a coarse scan for a sign change
    ok = np.flatnonzero(np.isfinite(gs[:-1]) & np.isfinite(gs[1:])
                        & (np.sign(gs[:-1]) != np.sign(gs[1:])))
    if ok.size == 0:
        raise TuningError(f"no {vary} within {lo:g} .. {hi:g} (SI) puts the first TL peak at "
                          f"{target_hz:g} Hz")
    i = ok[0]
    x = optimize.brentq(first_peak, xs[i], xs[i + 1], xtol=1e-10, rtol=1e-10)
    value = float(np.exp(x))
    return tile.with_cell(cell, **{vary: value}), value


@dataclass(frozen=True)
class FitResult:
    """Calibration result: fitted tile, values with 95 % intervals, residuals, errors."""

    tile: Tile
    names: tuple
    values: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    rms_db: float
    dip_error_pct: float
    peak_error_pct: float


def _measured_extremum(f, tl, sign, near):
    """Frequency of the measured extremum within a factor 1.25 of ``near`` (Hz), by a
    parabola through three points in log f."""
    window = np.flatnonzero((f > near / 1.25) & (f < near * 1.25))
    if window.size == 0:
        return float("nan")
    i = int(window[np.argmin(sign * tl[window])])
    if 0 < i < len(f) - 1:
        x = np.log(f[i - 1:i + 2])
        y = tl[i - 1:i + 2]
        den = (x[0] - x[1]) * (x[0] - x[2]) * (x[1] - x[2])
        a = (x[2] * (y[1] - y[0]) + x[1] * (y[0] - y[2]) + x[0] * (y[2] - y[1])) / den
        b = (x[2] ** 2 * (y[0] - y[1]) + x[1] ** 2 * (y[2] - y[0])
             + x[0] ** 2 * (y[1] - y[2])) / den
        if a != 0:
            return float(np.exp(-b / (2 * a)))
    return float(f[i])


def fit_tile(tile: Tile, f_hz, tl_db, fit_mass: bool = False, cell: int = 0,
             air: Air | None = None) -> FitResult:
    """Least-squares fit of tension and loss factor (optionally mass) to a measured TL.

    Parameters are fitted as logarithms with ``scipy.optimize.least_squares``; the 95 %
    intervals come from the Jacobian, ``cov = s^2 (J^T J)^-1`` with ``s^2 = RSS / (n - p)``
    and Student's t. Also returns the RMS residual and the errors of the fitted model's
    first dip and peak frequencies against the measurement's, in percent.
    """
    from scipy import optimize, stats

    f = np.asarray(f_hz, dtype=float)
    y = np.asarray(tl_db, dtype=float)
    names = ("tension", "loss_factor") + (("mass",) if fit_mass else ())
    c = tile.cells[cell]
    x0 = np.log([getattr(c, n) for n in names])
    bounds = (np.log([0.01, 1e-4] + ([1e-7] if fit_mass else [])),
              np.log([1e5, 2.0] + ([1.0] if fit_mass else [])))
    x0 = np.clip(x0, bounds[0] + 1e-9, bounds[1] - 1e-9)

    def build(x):
        return tile.with_cell(cell, **{n: float(np.exp(v)) for n, v in zip(names, x,
                                                                            strict=True)})

    def residual(x):
        return normal_tl(build(x), f, air) - y

    res = optimize.least_squares(residual, x0, bounds=bounds, x_scale=1.0, method="trf")
    dof = max(len(f) - len(names), 1)
    s2 = float(np.sum(res.fun**2)) / dof
    cov = np.linalg.pinv(res.jac.T @ res.jac) * s2
    half = stats.t.ppf(0.975, dof) * np.sqrt(np.diag(cov))
    with np.errstate(over="ignore"):  # an undetermined parameter's interval: 0 .. inf
        lower, upper = np.exp(res.x - half), np.exp(res.x + half)
    fitted = build(res.x)
    ext = tile_extrema(fitted, f.min(), f.max(), air)
    dip_err = peak_err = float("nan")
    if ext.dip_hz.size:
        dip_err = 100 * (ext.dip_hz[0] / _measured_extremum(f, y, 1.0, ext.dip_hz[0]) - 1)
    if ext.peak_hz.size:
        peak_err = 100 * (ext.peak_hz[0] / _measured_extremum(f, y, -1.0, ext.peak_hz[0]) - 1)
    return FitResult(fitted, names, np.exp(res.x), lower, upper,
                     float(np.sqrt(np.mean(res.fun**2))), dip_err, peak_err)

