"""Angle integration for normal, field and diffuse incidence (Paris' formula).

The diffuse-field transmission coefficient is the power average
``tau_d = int tau(theta) sin(theta) cos(theta) dtheta / int sin(theta) cos(theta) dtheta``
over ``0 .. theta_max`` (Paris 1927; Vigran, Building Acoustics, 2008, sec. 6.4).
Substituting ``u = sin^2(theta)`` makes the weight uniform:
``tau_d = (1 / u_max) int_0^u_max tau(u) du``.

``tau(u)`` has sharp peaks: coincidence of each plate at ``u = (kB / k0)^2`` (width of
the order of the loss factor), the mass-law peak towards grazing (width about
``(2 rho c / omega m)^2``), and the oblique mass-air-mass and cavity resonances of
multi-leaf stacks, whose angles are not known beforehand. The integral is therefore
adaptive, per frequency and vectorised over frequency: the range is first split at the
layers' coincidence points and graded geometrically towards them and towards grazing;
then, pass after pass, the panels with the largest error estimate are bisected until
``sum(error) <= rtol * integral`` at every frequency. Each panel uses the 15-point
Gauss-Kronrod rule with its embedded 7-point Gauss rule for the error estimate
(Kronrod 1965; Piessens et al., QUADPACK, 1983).
"""

from __future__ import annotations

import numpy as np

__all__ = ["INCIDENCE", "GK15", "default_theta_max_deg", "paris_average"]

INCIDENCE = ("normal", "field", "diffuse")

_XK = np.array([0.991455371120812639206854697526329, 0.949107912342758524526189684047851,
                0.864864423359769072789712788640926, 0.741531185599394439863864773280788,
                0.586087235467691130294144845693013, 0.405845151377397166906606412076961,
                0.207784955007898467600689403773245, 0.0])
_WK = np.array([0.022935322010529224963732008058970, 0.063092092629978553290700663189204,
                0.104790010322250183839876322541518, 0.140653259715525918745189590510238,
                0.169004726639267902826583426598550, 0.190350578064785409913256402421014,
                0.204432940075298892414161999234649, 0.209482141084727828012999174891714])
_WG = np.array([0.129484966168869693270611432679082, 0.279705391489276667901467771423780,
                0.381830050505118944950369775488975, 0.417959183673469387755102040816327])
_GAUSS = np.zeros(15)
_GAUSS[1::2] = np.concatenate([_WG[:3], _WG[3:], _WG[:3][::-1]])
#: 15-point Kronrod nodes on [-1, 1], Kronrod weights, embedded Gauss weights (0 elsewhere)
GK15 = (np.concatenate([-_XK[:-1], _XK[::-1]]), np.concatenate([_WK[:-1], _WK[::-1]]),
        _GAUSS)

_GRADING = 1.0 / 8.0   # ratio of successive graded panels
_LEVELS = 2            # graded panels towards a sharp point: down to 8^-3 of the half


def default_theta_max_deg(incidence: str) -> float:
    """78 deg for field incidence (common practice), 90 for diffuse, 0 for normal."""
    return {"normal": 0.0, "field": 78.0, "diffuse": 90.0}[incidence]


def _initial_panels(k0, sharp_kt, umax):
    """Panel edges (nf, m) split at sharp points and graded towards them and grazing."""
    nf = k0.shape[0]
    if sharp_kt is None or sharp_kt.shape[1] == 0:
        splits = np.empty((nf, 0))
    else:
        splits = np.sort(np.clip((sharp_kt / k0[:, None]) ** 2, 0.0, umax), axis=1)
    edges = np.concatenate([np.zeros((nf, 1)), splits, np.full((nf, 1), umax)], axis=1)
    fractions = np.concatenate([[0.0], _GRADING ** np.arange(_LEVELS, 0, -1), [1.0]])
    lo, hi = [], []
    npanel = edges.shape[1] - 1
    for k in range(npanel):  # loop over split points (layers), not frequencies
        a, b = edges[:, k:k + 1], edges[:, k + 1:k + 2]
        mid = (a + b) / 2
        for end, other, graded in ((a, mid, k > 0), (b, mid, True)):
            if graded:
                pts = end + (other - end) * fractions[None, :]
            else:
                pts = end + (other - end) * np.array([[0.0, 0.5, 1.0]])
            lo.append(np.minimum(pts[:, :-1], pts[:, 1:]))
            hi.append(np.maximum(pts[:, :-1], pts[:, 1:]))
    return np.concatenate(lo, axis=1), np.concatenate(hi, axis=1)


def _gk(tau_fn, rows, lo, hi):
    """Kronrod integral and error estimate of each panel (rows of frequencies)."""
    x, wk, wg = GK15
    c, h = (lo + hi) / 2, (hi - lo) / 2
    u = c[..., None] + h[..., None] * x
    theta = np.arcsin(np.sqrt(np.clip(u, 0.0, 1.0)))
    tau = tau_fn(rows, theta.reshape(len(rows), -1)).reshape(u.shape)
    ik = h * (tau @ wk)
    ig = h * (tau @ wg)
    # QUADPACK's error scaling (Piessens et al. 1983, qk15): the raw |K - G| is far too
    # pessimistic where the integrand is smooth
    safe_h = np.where(h > 0, h, 1.0)
    resasc = h * (np.abs(tau - (ik / (2 * safe_h))[..., None]) @ wk)
    raw = np.abs(ik - ig)
    with np.errstate(divide="ignore", invalid="ignore"):
        scaled = np.where(resasc > 0, resasc * np.minimum(1.0, (200 * raw / resasc) ** 1.5),
                          raw)
    return ik, scaled


def paris_average(tau_fn, k0, sharp_kt, theta_max: float, rtol: float = 3e-3,
                  max_passes: int = 60, per_pass: int = 8) -> np.ndarray:
    """Paris average of tau over ``0 .. theta_max``, adaptive per frequency.

    Parameters
    ----------
    tau_fn : callable
        ``tau_fn(rows, theta)`` returns tau at the frequencies ``rows`` (index array) and
        angles ``theta`` (len(rows), m).
    k0 : ndarray (nf,)
        Source-side wavenumbers.
    sharp_kt : ndarray (nf, p) or None
        Trace wavenumbers of known sharp features (plate coincidence).
    theta_max : float
        Limit angle in rad.
    rtol : float
        Estimated relative accuracy at every frequency (3e-3 is 0.013 dB; the estimate
        is conservative, the realised error is usually 10-100 times smaller).
    max_passes, per_pass : int
        Refinement passes at most, panels bisected per frequency and pass.

    Returns
    -------
    ndarray (nf,)
    """
    k0 = np.asarray(k0, dtype=float)
    nf = k0.shape[0]
    umax = np.sin(theta_max) ** 2
    lo, hi = _initial_panels(k0, sharp_kt, umax)
    rows_all = np.arange(nf)
    val, err = _gk(tau_fn, rows_all, lo, hi)
    for _ in range(max_passes):  # refinement passes, each vectorised over frequency
        total = val.sum(axis=1)
        todo = np.flatnonzero(err.sum(axis=1) > rtol * np.abs(total))
        if todo.size == 0:
            break
        k = min(per_pass, lo.shape[1])
        pick = np.argpartition(-err[todo], k - 1, axis=1)[:, :k]
        a = np.take_along_axis(lo[todo], pick, 1)
        b = np.take_along_axis(hi[todo], pick, 1)
        m = (a + b) / 2
        v, e = _gk(tau_fn, todo, np.concatenate([a, m], 1), np.concatenate([m, b], 1))
        # left halves replace the picked panels; right halves are appended (other rows
        # get empty panels so that the arrays stay rectangular)
        lo_t, hi_t, val_t, err_t = lo[todo], hi[todo], val[todo], err[todo]
        np.put_along_axis(hi_t, pick, m, 1)
        np.put_along_axis(val_t, pick, v[:, :k], 1)
        np.put_along_axis(err_t, pick, e[:, :k], 1)
        lo[todo], hi[todo], val[todo], err[todo] = lo_t, hi_t, val_t, err_t
        new_lo = np.zeros((nf, k))
        new_hi = np.zeros((nf, k))
        new_v = np.zeros((nf, k))
        new_e = np.zeros((nf, k))
        new_lo[todo], new_hi[todo], new_v[todo], new_e[todo] = m, b, v[:, k:], e[:, k:]
        lo, hi = np.concatenate([lo, new_lo], 1), np.concatenate([hi, new_hi], 1)
        val, err = np.concatenate([val, new_v], 1), np.concatenate([err, new_e], 1)
    return val.sum(axis=1) / umax
