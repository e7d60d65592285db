"""Single-number ratings: STC, Rw with C and Ctr, OITC, and speech interference levels.

Inputs are one-third-octave (or octave) band values keyed by ISO 266 nominal frequency.
A single rating refuses to run (``RatingError``) when any band it needs is missing;
:func:`ratings` returns those the bands allow and says why the others are unavailable.
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from .bands import a_weighting, third_octave_bands

__all__ = ["RatingError", "Ratings", "oitc", "psil", "rating_table", "ratings", "rw", "sil3",
           "sil4", "stc"]

# ASTM E413: contour relative to its 500 Hz value, 125 .. 4000 Hz (16 bands)
STC_BANDS = (125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500,
             3150, 4000)
STC_CONTOUR = (-16, -13, -10, -7, -4, -1, 0, 1, 2, 3, 4, 4, 4, 4, 4, 4)
# ISO 717-1:2013: reference curve (absolute, 500 Hz = 52) and spectra No. 1 and No. 2
RW_BANDS = (100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500,
            3150)
RW_REFERENCE = (33, 36, 39, 42, 45, 48, 51, 52, 53, 54, 55, 56, 56, 56, 56, 56)
RW_SPECTRUM_1 = (-29, -26, -23, -21, -19, -17, -15, -13, -12, -11, -10, -9, -9, -9, -9, -9)
RW_SPECTRUM_2 = (-20, -20, -18, -16, -15, -14, -13, -12, -11, -9, -8, -9, -10, -11, -13, -15)
# ASTM E1332 reference source spectrum, 80 .. 4000 Hz (values from memory; their
# A-weighted sum is 100.12 dB, consistent with the 100.13 constant of the rating)
OITC_BANDS = (80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000,
              2500, 3150, 4000)
OITC_SPECTRUM = (105, 102, 100, 98, 97, 95, 94, 93, 93, 91, 90, 89, 89, 88, 88, 87, 85, 84)


class RatingError(ValueError):
    """The band values do not cover what a rating needs."""


@lru_cache(maxsize=256)
def _positions(nominal: tuple, needed: tuple):
    """Index of each needed band in ``nominal`` (the last where one repeats), or the
    missing bands; remembered per band list (a trade study rates thousands of curves on
    the same bands)."""
    lookup = {round(f, 2): i for i, f in enumerate(nominal)}
    missing = tuple(f for f in needed if round(float(f), 2) not in lookup)
    if missing:
        return None, missing
    return np.array([lookup[round(float(f), 2)] for f in needed]), ()


def _pick(nominal_hz, values, needed, name) -> np.ndarray:
    values = np.asarray(values, dtype=float).reshape(-1)
    nominal = tuple(np.asarray(nominal_hz, dtype=float).reshape(-1).tolist())
    if len(nominal) != values.size:
        raise ValueError(f"{name}: {len(nominal)} bands and {values.size} values")
    idx, missing = _positions(nominal, tuple(needed))
    if missing:
        raise RatingError(f"{name} needs one-third-octave bands {needed[0]}-{needed[-1]} Hz; "
                          f"missing {', '.join(f'{m:g}' for m in missing)} Hz")
    out = values[idx]
    if not np.all(np.isfinite(out)):
        raise RatingError(f"{name}: band values must be finite numbers")
    return out


def stc(nominal_hz, tl_db) -> int:
    """Sound transmission class, ASTM E413.

    TL is rounded to whole dB; the contour is raised in 1 dB steps to the highest
    position where the sum of deficiencies is at most 32 dB and no single deficiency
    exceeds 8 dB. STC is the contour's value at 500 Hz.
    """
    tl = np.floor(_pick(nominal_hz, tl_db, STC_BANDS, "STC") + 0.5)
    # every contour position 0 .. 150 at once; deficiencies grow with the position, so the
    # rating is the last position before the first that fails
    deficiency = np.maximum(np.arange(151)[:, None] + np.array(STC_CONTOUR) - tl, 0)
    ok = (deficiency.sum(axis=1) <= 32) & (deficiency.max(axis=1) <= 8)
    if not ok[0]:
        raise RatingError("STC: TL too low for any contour position >= 0")
    return int(150 if ok.all() else np.argmin(ok) - 1)


def _rw_shift(r, reference) -> int:
    """Largest shift with unfavourable deviations summing to <= 32.0 dB (in tenths)."""
    r10 = np.round(r * 10).astype(int)
    ref10 = np.asarray(reference) * 10
    # shifts of 1 dB from below every band upwards, all at once: the sum grows with the
    # shift and exceeds 32 dB before the curve clears the largest R by 33 dB
    first = int(np.floor(np.min(r) - np.max(reference)))
    count = int(np.ceil(np.max(r) - np.min(r))) + int(np.ptp(reference)) + 40
    shifts = first + np.arange(count)
    dev = np.maximum(ref10 + 10 * shifts[:, None] - r10, 0).sum(axis=1)
    return int(shifts[np.argmax(dev > 320)] - 1)


def rw(nominal_hz, r_db) -> tuple[int, int, int]:
    """Weighted sound reduction index with spectrum adaptation terms, ISO 717-1:2013.

    R to 0.1 dB at 100-3150 Hz; the reference curve is shifted in 1 dB steps until the
    sum of unfavourable deviations is as large as possible but <= 32.0 dB; Rw is the
    shifted curve at 500 Hz. ``C_j = X_Aj - Rw``, ``X_Aj = -10 lg sum 10^((L_ij - R_i)/10)``
    with spectrum No. 1 (C) and No. 2 (Ctr), rounded to whole dB.

    Returns
    -------
    (rw, c, ctr) : tuple of int
    """
    r = np.round(_pick(nominal_hz, r_db, RW_BANDS, "Rw"), 1)
    value = 52 + _rw_shift(r, RW_REFERENCE)
    xa1 = -10 * np.log10(np.sum(10 ** ((np.array(RW_SPECTRUM_1) - r) / 10)))
    xa2 = -10 * np.log10(np.sum(10 ** ((np.array(RW_SPECTRUM_2) - r) / 10)))
    return value, int(np.floor(xa1 - value + 0.5)), int(np.floor(xa2 - value + 0.5))


def oitc(nominal_hz, tl_db) -> int:
    """Outdoor-indoor transmission class, ASTM E1332.

    ``OITC = 100.13 - 10 lg sum 10^((L_f - TL_f + A_f) / 10)`` over 80-4000 Hz with the
    reference source spectrum L_f and A-weighting A_f; rounded to whole dB.
    """
    tl = _pick(nominal_hz, tl_db, OITC_BANDS, "OITC")
    a = np.round(a_weighting(third_octave_bands(80, 4000).centre), 1)
    level = 10 * np.log10(np.sum(10 ** ((np.array(OITC_SPECTRUM) - tl + a) / 10)))
    return int(np.floor(100.13 - level + 0.5))


def _octave_mean(nominal_hz, levels_db, bands, name) -> float:
    return float(np.mean(_pick(nominal_hz, levels_db, bands, name)))


def sil4(octave_nominal_hz, levels_db) -> float:
    """Speech interference level: arithmetic mean of the 500, 1000, 2000, 4000 Hz octave
    levels (ANSI S3.14-1977)."""
    return _octave_mean(octave_nominal_hz, levels_db, (500, 1000, 2000, 4000), "SIL4")


def psil(octave_nominal_hz, levels_db) -> float:
    """Preferred speech interference level: mean of the 500, 1000, 2000 Hz octaves."""
    return _octave_mean(octave_nominal_hz, levels_db, (500, 1000, 2000), "PSIL")


def sil3(octave_nominal_hz, levels_db) -> float:
    """SIL of the 1000, 2000, 4000 Hz octaves, common in aircraft interior work."""
    return _octave_mean(octave_nominal_hz, levels_db, (1000, 2000, 4000), "SIL3")


class Ratings(dict):
    """STC, Rw, C, Ctr and OITC by name; ``None`` where the bands do not allow one.

    ``unavailable`` maps each missing rating to the reason, e.g.
    ``{"oitc": "OITC needs one-third-octave bands 80-4000 Hz; missing 80 Hz"}``.
    """

    def __init__(self, values: dict, unavailable: dict):
        super().__init__(values)
        self.unavailable = dict(unavailable)


def ratings(nominal_hz, tl_db) -> Ratings:
    """STC (ASTM E413), Rw with C and Ctr (ISO 717-1) and OITC (ASTM E1332) from
    one-third-octave TL, each one the bands allow.

    Every key ``stc, rw, c, ctr, oitc`` is present; a rating whose bands are missing (STC
    needs 125-4000 Hz, Rw 100-3150 Hz, OITC 80-4000 Hz) or not finite is ``None``, and
    ``result.unavailable`` says why.
    """
    from .checks import ArgumentError

    if np.size(nominal_hz) != np.size(tl_db):
        raise ArgumentError(f"nominal_hz has {np.size(nominal_hz)} bands and tl_db "
                            f"{np.size(tl_db)} values: give one TL per band")
    values, why = {}, {}
    for keys, fn in ((("stc",), stc), (("rw", "c", "ctr"), rw), (("oitc",), oitc)):
        try:
            got = fn(nominal_hz, tl_db)
        except RatingError as exc:
            for k in keys:
                values[k] = None
                why[k] = str(exc)
            continue
        values.update(zip(keys, got if isinstance(got, tuple) else (got,), strict=True))
    order = ("stc", "rw", "c", "ctr", "oitc")
    return Ratings({k: values[k] for k in order}, {k: why[k] for k in order if k in why})


def _columns(nominal_hz, curves, needed):
    """The curves' values at the needed bands (n, k) and which curves have them all
    finite, or None when a band is missing."""
    nominal = tuple(np.asarray(nominal_hz, dtype=float).reshape(-1).tolist())
    idx, missing = _positions(nominal, tuple(needed))
    if missing:
        return None, None
    out = curves[:, idx]
    return out, np.all(np.isfinite(out), axis=1)


def rating_table(nominal_hz, tl_db) -> dict:
    """:func:`ratings` of many curves at once: ``tl_db`` (n, bands) on ``nominal_hz``.

    Returns ``{"stc", "rw", "c", "ctr", "oitc"}`` each an object array (n,) of ints, or
    None where :func:`ratings` gives None (bands missing, values not finite, TL too low
    for any STC contour); equal to :func:`ratings` curve by curve (the same searches,
    every curve at once).
    """
    curves = np.atleast_2d(np.asarray(tl_db, dtype=float))
    n = curves.shape[0]
    out = {k: np.full(n, None, dtype=object) for k in ("stc", "rw", "c", "ctr", "oitc")}
    if np.size(nominal_hz) != curves.shape[1]:
        raise ValueError(f"{np.size(nominal_hz)} bands and {curves.shape[1]} values per curve")
    with np.errstate(invalid="ignore", over="ignore"):
        tl, ok = _columns(nominal_hz, curves, STC_BANDS)
        if tl is not None and ok.any():
            t = np.floor(tl[ok] + 0.5)
            deficiency = np.maximum(np.arange(151)[None, :, None] + np.array(STC_CONTOUR)
                                    - t[:, None, :], 0)
            fits = (deficiency.sum(axis=2) <= 32) & (deficiency.max(axis=2) <= 8)
            value = np.where(fits.all(axis=1), 150, np.argmin(fits, axis=1) - 1)
            out["stc"][np.flatnonzero(ok)[fits[:, 0]]] = value[fits[:, 0]].tolist()
        r, ok = _columns(nominal_hz, curves, RW_BANDS)
        if r is not None and ok.any():
            r = np.round(r[ok], 1)
            r10 = np.round(r * 10).astype(int)
            ref = np.asarray(RW_REFERENCE)
            first = np.floor(r.min(axis=1) - ref.max()).astype(int)
            count = (np.ceil(r.max(axis=1) - r.min(axis=1)).astype(int) + int(np.ptp(ref))
                     + 40)
            shifts = first[:, None] + np.arange(count.max())
            dev = np.maximum(ref * 10 + 10 * shifts[:, :, None] - r10[:, None, :], 0).sum(
                axis=2)
            value = 52 + shifts[np.arange(r.shape[0]), np.argmax(dev > 320, axis=1)] - 1
            xa1 = -10 * np.log10(np.sum(10 ** ((np.array(RW_SPECTRUM_1) - r) / 10), axis=1))
            xa2 = -10 * np.log10(np.sum(10 ** ((np.array(RW_SPECTRUM_2) - r) / 10), axis=1))
            at = np.flatnonzero(ok)
            out["rw"][at] = value.tolist()
            out["c"][at] = np.floor(xa1 - value + 0.5).astype(int).tolist()
            out["ctr"][at] = np.floor(xa2 - value + 0.5).astype(int).tolist()
        tl, ok = _columns(nominal_hz, curves, OITC_BANDS)
        if tl is not None and ok.any():
            a = np.round(a_weighting(third_octave_bands(80, 4000).centre), 1)
            level = 10 * np.log10(np.sum(10 ** ((np.array(OITC_SPECTRUM) - tl[ok] + a) / 10),
                                         axis=1))
            out["oitc"][np.flatnonzero(ok)] = np.floor(100.13 - level + 0.5).astype(int
                                                                                  ).tolist()
    return out
