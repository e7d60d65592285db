"""Frequency bands, band averaging, frequency weightings and level arithmetic.

Bands follow IEC 61260-1:2014 (base 10): ``G = 10^(3/10)``; for odd ``b`` the exact
mid-band frequencies are ``fm = 1000 G^(x/b)``, for even ``b`` ``1000 G^((2x+1)/(2b))``;
the edges are ``fm G^(-+1/(2b))``. Nominal labels follow ISO 266 (the R10 preferred
numbers 1, 1.25, 1.6, 2, 2.5, 3.15, 4, 5, 6.3, 8 per decade). Weightings A and C follow
the closed forms of IEC 61672-1:2013 (Annex E), normalised exactly at 1 kHz.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["Bands", "G", "OCTAVE_SPLIT_DB", "a_weighting", "band_average", "bands_between",
           "c_weighting", "energy_mean", "energy_sum", "log_grid", "log_interp",
           "nominal_label", "octave_bands", "octave_to_thirds", "third_octave_bands",
           "third_to_octave", "weighting", "z_weighting"]

G = 10 ** 0.3
#: level of each one-third octave of an octave split with equal energy: -10 lg 3
OCTAVE_SPLIT_DB = -10 * np.log10(3.0)
_R10 = (1.0, 1.25, 1.6, 2.0, 2.5, 3.15, 4.0, 5.0, 6.3, 8.0)
_F1, _F2, _F3, _F4 = 20.598997, 107.65265, 737.86223, 12194.217  # IEC 61672-1 Annex E


def log_grid(fmin: float, fmax: float, per_octave: int) -> np.ndarray:
    """Frequencies ``fmin * 2^(k / per_octave)`` below ``fmax``, then ``fmax`` itself."""
    if not (0 < fmin < fmax) or per_octave < 1:
        raise ValueError("need 0 < fmin < fmax and per_octave >= 1")
    n = int(np.floor(per_octave * np.log2(fmax / fmin) + 1e-3))
    f = fmin * 2.0 ** (np.arange(n + 1) / per_octave)
    return f if f[-1] >= fmax * 0.999 else np.append(f, fmax)


def nominal_label(fm: float, b: int = 3) -> float:
    """ISO 266 nominal frequency of the band with exact mid-band frequency ``fm``.

    For octave and one-third-octave bands the label is the R10 preferred number of the
    band index; for other fractions the mid-band frequency rounded to 3 figures.
    """
    if b in (1, 3):
        x = int(round(10 * np.log10(fm / 1000.0)))
        return float(_R10[x % 10] * 10.0 ** (3 + x // 10))
    return float(f"{fm:.3g}")


@dataclass(frozen=True)
class Bands:
    """A set of contiguous fractional-octave bands.

    Attributes
    ----------
    b : int
        Bandwidth designator (1 octave, 3 one-third octave).
    centre, lower, upper : ndarray
        Exact mid-band and edge frequencies in Hz.
    nominal : ndarray
        ISO 266 labels in Hz.
    """

    b: int
    centre: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    nominal: np.ndarray

    def __len__(self):
        return len(self.centre)

    def index(self, nominal_hz) -> np.ndarray:
        """Positions of the given nominal frequencies; KeyError if one is missing."""
        lookup = {float(v): i for i, v in enumerate(self.nominal)}
        try:
            return np.array([lookup[float(v)] for v in np.atleast_1d(nominal_hz)])
        except KeyError as exc:
            raise KeyError(f"band {exc.args[0]} Hz is not in this set") from None

    def containing(self, f_hz) -> np.ndarray:
        """Index of the band containing each frequency, -1 outside all bands."""
        f = np.atleast_1d(np.asarray(f_hz, dtype=float))
        i = np.searchsorted(self.upper, f, side="left")
        inside = (i < len(self)) & (f >= self.lower[np.minimum(i, len(self) - 1)])
        return np.where(inside, i, -1)


def bands_between(fmin: float, fmax: float, b: int = 3) -> Bands:
    """All 1/b-octave bands whose exact mid-band frequency lies in [fmin, fmax].

    ``fmin`` and ``fmax`` may be nominal labels (25, 31.5, ...): a 2 % tolerance applies.
    """
    lo, hi = fmin / 1.02, fmax * 1.02
    if b % 2:
        x = np.arange(np.ceil(b * np.log(lo / 1000) / np.log(G)),
                      np.floor(b * np.log(hi / 1000) / np.log(G)) + 1)
        fm = 1000.0 * G ** (x / b)
    else:
        x = np.arange(np.ceil((2 * b * np.log(lo / 1000) / np.log(G) - 1) / 2),
                      np.floor((2 * b * np.log(hi / 1000) / np.log(G) - 1) / 2) + 1)
        fm = 1000.0 * G ** ((2 * x + 1) / (2 * b))
    half = G ** (1 / (2 * b))
    nominal = np.array([nominal_label(f, b) for f in fm])
    return Bands(b, fm, fm / half, fm * half, nominal)


def third_octave_bands(fmin: float = 25.0, fmax: float = 10000.0) -> Bands:
    """One-third-octave bands between two nominal frequencies (IEC 61260-1, ISO 266)."""
    return bands_between(fmin, fmax, 3)


def octave_bands(fmin: float = 31.5, fmax: float = 8000.0) -> Bands:
    """Octave bands between two nominal frequencies."""
    return bands_between(fmin, fmax, 1)


# Nested rules on [-1, 1], by the non-negative half of their symmetric nodes: the 19-point
# rule of Patterson (Math. Comp. 22 (1968) 847-856), which holds the 9-point Kronrod
# extension of the 4-point Gauss rule and adds 10 nodes (exact to degree 29; the 9-point
# rule to 13, the 4-point one to 7); nodes and weights to 20 digits from the defining
# orthogonality conditions (tests/test_bands.py checks the degrees)
_P19_HALF = np.array([0.0, 0.17239110194761708419, 0.3399810435848562648,
                      0.49769353776163459836, 0.6402862174963099824, 0.7628055005750890492,
                      0.86113631159405257522, 0.93255859254079555751,
                      0.97656025073757311153, 0.99634525995846133169])
_P19_W_HALF = np.array([0.17317826409068164515, 0.17080948918625406787,
                        0.16352228159564932938, 0.1510206249799015245,
                        0.13332971847796348901, 0.11101429016864055596,
                        0.085181971033446352657, 0.057551573903254285293,
                        0.030951648991194363374, 0.010029269618355209388])
_K9_W_HALF = np.array([0.34644298189013636168, 0.0, 0.32694918960145162956, 0.0,
                       0.26679834045228444803, 0.0, 0.1700536053357227268, 0.0,
                       0.062977373665473014765, 0.0])
_G4_W_HALF = np.array([0.0, 0.0, 0.65214515486254614263, 0.0, 0.0, 0.0,
                       0.34785484513745385737, 0.0, 0.0, 0.0])


def _full(half):
    """A symmetric rule's 19 values in ascending node order from its non-negative half."""
    return np.concatenate([half[:0:-1], half])


#: the 19 nodes, the 19-point weights, and which nodes the 9-point rule uses
P19 = (np.concatenate([-_P19_HALF[:0:-1], _P19_HALF]), _full(_P19_W_HALF))
_IN_K9 = _full(_K9_W_HALF) > 0
#: the 9-point Kronrod rule's nodes, weights and its embedded 4-point Gauss weights
K9 = (P19[0][_IN_K9], _full(_K9_W_HALF)[_IN_K9], _full(_G4_W_HALF)[_IN_K9])


def band_average(func, bands: Bands, rtol: float = 3e-3, max_passes: int = 12,
                 groups: int | None = None, atol=None,
                 rtol_max: float | None = None) -> np.ndarray:
    """Band averages of a narrowband power quantity (e.g. tau), as energy.

    ``<q> = (1 / (f_u - f_l)) int q(f) df`` over each band (never an average of dB), by
    nested then adaptive quadrature, one panel per one-third octave of the band (three in
    an octave band) to start:

    1. the 9-point Kronrod rule (Kronrod 1965), its error estimate ``|K9 - G4|`` with the
       embedded 4-point Gauss rule;
    2. where a band's estimate is above ``rtol`` of its value: the 19-point Patterson
       extension of that rule (Patterson 1968; the 9 values kept, 10 added), its estimate
       ``|P19 - K9|``;
    3. then, pass after pass, the panel with the largest estimate in every unconverged
       band is bisected, its halves taken by the 15-point Gauss-Kronrod rule with the
       estimate ``|K15 - G7|`` (QUADPACK, Piessens et al. 1983), until the estimate is
       below ``rtol`` of the band value, so a resonance, a mass-air-mass dip or
       coincidence inside a band is resolved.

    A band where the quantity is smooth (a mass law, a slow roll-off) stops at 9
    frequencies; one with a resonance usually at 19. Each estimate is the error of the
    lower rule, taken for the higher one: conservative wherever the panel resolves the
    integrand. QUADPACK's rescaling of it (qk15: ``resasc min(1, (200 |K - G| /
    resasc)^1.5)``, kept for the angle integrals inside, where narrow peaks of a bay's
    radiation can escape both rules) is far more pessimistic at a band average's
    tolerance. ``func`` maps a 1-D frequency array to values of the same shape.

    With ``groups`` (an int), the average is taken for that many independent quantities
    at once (e.g. variants of a stack): ``func(group, f)`` receives the group index of
    each frequency, each (group, band) is refined on its own, and the result is shaped
    (groups, nb); a group's values do not depend on the other groups, bit for bit.

    With ``atol`` (shaped like the result, in its units) and ``rtol_max``, a band has
    converged where its estimated error is at most ``max(rtol <q>, min(atol, rtol_max
    <q>))`` (:func:`noisebudget.incidence.adaptive_panels`): a minor part of a sum held
    to a share of the sum, but to ``rtol_max`` of itself at worst.
    """
    from .incidence import GK15, _weighted_sum, adaptive_panels, row_tolerance

    nb = len(bands)
    ng = 1 if groups is None else int(groups)
    if atol is not None:  # per row of the integral, in its units
        atol = (np.broadcast_to(atol, (ng, nb)) * (bands.upper - bands.lower)).ravel()

    def values(row, lo, hi, x):
        c, h = (lo + hi) / 2, (hi - lo) / 2
        f = c[:, None] + h[:, None] * x
        if groups is None:
            q = func(f.ravel())
        else:
            q = func(np.repeat(row // nb, x.size), f.ravel())
        return np.asarray(q, dtype=float).reshape(f.shape), h

    def panels(row, lo, hi):
        x, wk, wg = GK15
        q, h = values(row, lo, hi, x)
        ik, ig = h * _weighted_sum(q, wk), h * _weighted_sum(q, wg)
        return ik, np.abs(ik - ig)

    def unconverged(row, val, err):
        n = ng * nb
        tol = row_tolerance(np.abs(np.bincount(row, val, n)), rtol, atol, rtol_max)
        return (np.bincount(row, err, n) > tol)[row]

    # at least one panel per one-third octave (three per octave band)
    per = max(1, int(np.ceil(3 / bands.b)))
    cuts = bands.lower[:, None] * (bands.upper / bands.lower)[:, None] ** (
        np.arange(per + 1)[None, :] / per)
    row = np.repeat(np.arange(ng * nb), per)
    lo = np.tile(cuts[:, :-1].ravel(), ng)
    hi = np.tile(cuts[:, 1:].ravel(), ng)
    x9, w9, w4 = K9
    q9, h = values(row, lo, hi, x9)
    val = h * _weighted_sum(q9, w9)
    err = np.abs(val - h * _weighted_sum(q9, w4))
    more = np.flatnonzero(unconverged(row, val, err))
    if more.size:
        x19, w19 = P19
        q19 = np.empty((more.size, x19.size))
        q19[:, _IN_K9] = q9[more]
        q19[:, ~_IN_K9] = values(row[more], lo[more], hi[more], x19[~_IN_K9])[0]
        v19 = h[more] * _weighted_sum(q19, w19)
        val[more], err[more] = v19, np.abs(v19 - val[more])
    total = adaptive_panels(panels, row, lo, hi, ng * nb, rtol, max_passes, per_pass=1,
                            start=(val, err), atol=atol, rtol_max=rtol_max)
    out = total.reshape(ng, nb) / (bands.upper - bands.lower)
    return out[0] if groups is None else out


def a_weighting(f_hz) -> np.ndarray:
    """A-weighting in dB, IEC 61672-1:2013 eq. E.6, normalised to 0 dB at 1 kHz.

    ``A(f) = 20 lg[f4^2 f^4 / ((f^2 + f1^2) sqrt(f^2 + f2^2) sqrt(f^2 + f3^2)
    (f^2 + f4^2))] - A1000`` with f1..f4 = 20.598997, 107.65265, 737.86223, 12194.217 Hz.
    """
    def raw(f):
        f2 = f * f
        return 20 * np.log10(_F4**2 * f2**2 / ((f2 + _F1**2) * np.sqrt(f2 + _F2**2)
                                                * np.sqrt(f2 + _F3**2) * (f2 + _F4**2)))
    return raw(np.asarray(f_hz, dtype=float)) - raw(1000.0)


def c_weighting(f_hz) -> np.ndarray:
    """C-weighting in dB, IEC 61672-1:2013 eq. E.1, normalised to 0 dB at 1 kHz.

    ``C(f) = 20 lg[f4^2 f^2 / ((f^2 + f1^2)(f^2 + f4^2))] - C1000``.
    """
    def raw(f):
        f2 = f * f
        return 20 * np.log10(_F4**2 * f2 / ((f2 + _F1**2) * (f2 + _F4**2)))
    return raw(np.asarray(f_hz, dtype=float)) - raw(1000.0)


def z_weighting(f_hz) -> np.ndarray:
    """Z (zero) weighting: 0 dB at every frequency."""
    return np.zeros_like(np.asarray(f_hz, dtype=float))


def weighting(name: str, f_hz) -> np.ndarray:
    """Weighting ``"A"``, ``"C"`` or ``"Z"`` at ``f_hz`` (exact mid-band frequencies)."""
    table = {"A": a_weighting, "C": c_weighting, "Z": z_weighting}
    try:
        return table[name.upper()](f_hz)
    except KeyError:
        raise ValueError(f"unknown weighting {name!r}; one of A, C, Z") from None


def energy_sum(levels_db, axis=-1) -> np.ndarray:
    """``10 lg sum 10^(L/10)``: levels of incoherent contributions added."""
    lv = np.asarray(levels_db, dtype=float)
    top = np.max(lv, axis=axis, keepdims=True)
    top = np.where(np.isfinite(top), top, 0.0)
    s = np.sum(10 ** ((lv - top) / 10), axis=axis, keepdims=True)
    with np.errstate(divide="ignore"):
        return np.squeeze(top + 10 * np.log10(s), axis=axis)


def energy_mean(levels_db, axis=-1) -> np.ndarray:
    """``10 lg mean 10^(L/10)``."""
    lv = np.asarray(levels_db, dtype=float)
    return energy_sum(lv, axis) - 10 * np.log10(lv.shape[axis])


def third_to_octave(thirds: Bands, levels_db) -> tuple[Bands, np.ndarray]:
    """Roll one-third-octave levels up to the octaves whose three thirds are all present.

    Levels are energy sums of the three thirds (last axis of ``levels_db``).
    """
    lv = np.asarray(levels_db, dtype=float)
    octs = bands_between(thirds.centre[0], thirds.centre[-1], 1)
    keep, out = [], []
    for j, fm in enumerate(octs.centre):  # loop over octave bands (a handful)
        idx = np.flatnonzero(np.abs(np.log10(thirds.centre / fm)) < 0.11)
        if idx.size == 3:
            keep.append(j)
            out.append(energy_sum(lv[..., idx], axis=-1))
    k = np.array(keep, dtype=int)
    sub = Bands(1, octs.centre[k], octs.lower[k], octs.upper[k], octs.nominal[k])
    return sub, np.stack(out, axis=-1) if out else np.empty(lv.shape[:-1] + (0,))


def octave_to_thirds(octaves: Bands, values, kind: str = "level") -> tuple[Bands, np.ndarray]:
    """The three one-third-octave bands of each octave, with values carried over.

    ``kind="level"`` splits each octave level into three thirds of equal energy,
    ``L - 10 lg 3`` (-4.77 dB each, common practice); ``kind="copy"`` copies an
    intensive quantity (a reverberation time, an absorption area) to each third. The
    last axis of ``values`` runs over the octaves.
    """
    if kind not in ("level", "copy"):
        raise ValueError("kind must be 'level' or 'copy'")
    thirds = bands_between(octaves.lower[0] * 1.05, octaves.upper[-1] / 1.05, 3)
    v = np.repeat(np.asarray(values, dtype=float), 3, axis=-1)
    return thirds, v + OCTAVE_SPLIT_DB if kind == "level" else v


def log_interp(f_hz, points_hz, values) -> np.ndarray:
    """Values at ``f_hz`` from values given at ``points_hz``: linear in lg f between the
    points, held constant outside them (one value: constant everywhere).

    ``points_hz`` must be increasing; ``values`` has one entry per point (its last
    axis).
    """
    f = np.log10(np.asarray(f_hz, dtype=float))
    vals = np.asarray(values, dtype=float)
    pts = np.atleast_1d(np.asarray(points_hz, dtype=float))
    if vals.shape[-1] == 1:
        return np.broadcast_to(vals, vals.shape[:-1] + f.shape).astype(float)
    x = np.log10(pts)
    i = np.clip(np.searchsorted(x, f), 1, x.size - 1)
    w = np.clip((f - x[i - 1]) / (x[i] - x[i - 1]), 0.0, 1.0)
    return vals[..., i - 1] * (1 - w) + vals[..., i] * w
