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

Azimuth. For a stack whose layers depend on the direction of the trace wave (curved,
tensioned or stiffened skins), the average runs over the azimuth ``phi`` as well:
``tau_d = (1 / pi) int_0^2pi int tau sin(theta) cos(theta) dtheta dphi / (sin^2 theta_max
/ 2)``. Direction-dependent layers have their principal axes along the stack's axial and
hoop directions, so tau is even in ``phi`` and in ``pi - phi`` and one quadrant suffices:
``tau_d = (2 / pi) int_0^(pi/2) tau_theta(phi) dphi``. :func:`azimuth_average` integrates
that adaptively like the polar integral; :func:`azimuth_mean_inverse_square` is the
closed form the stack uses when a single sheet carries the direction dependence.
Time convention ``exp(+j omega t)`` where complex values appear.
"""

from __future__ import annotations

import numpy as np

__all__ = ["INCIDENCE", "GK15", "adaptive_gauss_kronrod", "azimuth_average",
           "azimuth_mean_inverse", "azimuth_mean_inverse_square", "azimuth_mean_ratio_square",
           "default_theta_max_deg", "paris_average"]

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
    """Panel edges (nf, m) split at sharp points and graded towards them and grazing.

    Sharp points given as NaN (a feature absent at that frequency) are ignored.
    """
    nf = k0.shape[0]
    if sharp_kt is None or sharp_kt.shape[1] == 0:
        splits = np.empty((nf, 0))
    else:
        u = (sharp_kt / k0[:, None]) ** 2
        splits = np.sort(np.clip(np.where(np.isnan(u), umax, u), 0.0, umax), axis=1)
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


def _gk(fn, rows, lo, hi):
    """Kronrod integral and error estimate of each panel (rows of frequencies)."""
    x, wk, wg = GK15
    c, h = (lo + hi) / 2, (hi - lo) / 2
    nodes = c[..., None] + h[..., None] * x
    q = fn(rows, nodes.reshape(len(rows), -1)).reshape(nodes.shape)
    ik = h * (q @ wk)
    ig = h * (q @ wg)
    # QUADPACK's error scaling (Piessens et al. 1983, qk15): the raw |K - G| is far too
    # pessimistic where the integrand is smooth
    safe_h = np.where(h > 0, h, 1.0)
    resasc = h * (np.abs(q - (ik / (2 * safe_h))[..., None]) @ wk)
    raw = np.abs(ik - ig)
    with np.errstate(divide="ignore", invalid="ignore"):
        scaled = np.where(resasc > 0, resasc * np.minimum(1.0, (200 * raw / resasc) ** 1.5),
                          raw)
    return ik, scaled


def adaptive_gauss_kronrod(fn, lo, hi, rtol: float = 3e-3, max_passes: int = 60,
                           per_pass: int = 8) -> np.ndarray:
    """Integrals over the union of panels ``lo .. hi`` per row, adaptive per row.

    Parameters
    ----------
    fn : callable
        ``fn(rows, x)`` returns the integrand at the rows ``rows`` (index array) and
        abscissae ``x`` (len(rows), m).
    lo, hi : ndarray (n, p)
        Initial panels of each row (zero-width panels are allowed and cost nothing).
    rtol : float
        Estimated relative accuracy at every row.
    max_passes, per_pass : int
        Refinement passes at most, panels bisected per row and pass.

    Returns
    -------
    ndarray (n,)

    Notes
    -----
    15-point Gauss-Kronrod panels with the embedded 7-point Gauss rule and QUADPACK's
    error scaling (Piessens et al. 1983); each pass bisects the ``per_pass`` panels with
    the largest error of every row whose summed error exceeds ``rtol`` of its integral.
    """
    lo, hi = np.array(lo, dtype=float), np.array(hi, dtype=float)
    n = lo.shape[0]
    val, err = _gk(fn, np.arange(n), lo, hi)
    for _ in range(max_passes):  # refinement passes, each vectorised over rows
        total = val.sum(axis=1)
        todo = np.flatnonzero(err.sum(axis=1) > rtol * np.abs(total))
        if todo.size == 0:
            break
        k = min(per_pass, lo.shape[1])
        pick = np.argpartition(-err[todo], k - 1, axis=1)[:, :k]
        a = np.take_along_axis(lo[todo], pick, 1)
        b = np.take_along_axis(hi[todo], pick, 1)
        m = (a + b) / 2
        v, e = _gk(fn, todo, np.concatenate([a, m], 1), np.concatenate([m, b], 1))
        # left halves replace the picked panels; right halves are appended (other rows
        # get empty panels so that the arrays stay rectangular)
        lo_t, hi_t, val_t, err_t = lo[todo], hi[todo], val[todo], err[todo]
        np.put_along_axis(hi_t, pick, m, 1)
        np.put_along_axis(val_t, pick, v[:, :k], 1)
        np.put_along_axis(err_t, pick, e[:, :k], 1)
        lo[todo], hi[todo], val[todo], err[todo] = lo_t, hi_t, val_t, err_t
        new = np.zeros((4, n, k))
        new[0][todo], new[1][todo], new[2][todo], new[3][todo] = m, b, v[:, k:], e[:, k:]
        lo, hi = np.concatenate([lo, new[0]], 1), np.concatenate([hi, new[1]], 1)
        val, err = np.concatenate([val, new[2]], 1), np.concatenate([err, new[3]], 1)
    return val.sum(axis=1)


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
        Trace wavenumbers of known sharp features (plate coincidence); NaN where absent
        (frequencies with the same features present are integrated together).
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
    umax = np.sin(theta_max) ** 2
    if sharp_kt is not None and np.isnan(sharp_kt).any():
        # frequencies lacking some features: integrate each group of frequencies with the
        # same features present on its own (a loop over groups), so that absent features
        # cost no panels
        present = ~np.isnan(sharp_kt)
        groups, which = np.unique(present, axis=0, return_inverse=True)
        out = np.empty(k0.shape[0])
        for g, keep in enumerate(groups):
            rows = np.flatnonzero(which.ravel() == g)
            out[rows] = paris_average(lambda r, th, rows=rows: tau_fn(rows[r], th), k0[rows],
                                      sharp_kt[np.ix_(rows, keep)], theta_max, rtol,
                                      max_passes, per_pass)
        return out
    lo, hi = _initial_panels(k0, sharp_kt, umax)

    def integrand(rows, u):
        return tau_fn(rows, np.arcsin(np.sqrt(np.clip(u, 0.0, 1.0))))

    return adaptive_gauss_kronrod(integrand, lo, hi, rtol, max_passes, per_pass) / umax


def azimuth_average(fn, nf: int, rtol: float = 3e-3, panels: int = 2,
                    max_passes: int = 30) -> np.ndarray:
    """Average over the azimuth quadrant ``(2 / pi) int_0^(pi/2) g(phi) dphi`` per frequency.

    Parameters
    ----------
    fn : callable
        ``fn(rows, phi)`` returns ``g`` at the frequencies ``rows`` (index array) and
        azimuths ``phi`` (len(rows), m) in rad from the axial direction; typically a
        polar Paris average at each azimuth.
    nf : int
        Number of frequencies.
    rtol : float
        Estimated relative accuracy at every frequency.
    panels : int
        Equal initial panels on the quadrant.

    Returns
    -------
    ndarray (nf,)

    Notes
    -----
    Valid for layers whose principal axes are the axial and hoop directions (tau even
    in ``phi`` and in ``pi - phi``). Adaptive Gauss-Kronrod as
    :func:`adaptive_gauss_kronrod`, vectorised over frequency.
    """
    edges = np.linspace(0.0, np.pi / 2, panels + 1)
    lo = np.broadcast_to(edges[:-1], (nf, panels))
    hi = np.broadcast_to(edges[1:], (nf, panels))
    return adaptive_gauss_kronrod(fn, lo, hi, rtol, max_passes) / (np.pi / 2)


def _arcsine_mean_pole(r):
    """``(1 / pi) int_0^1 dx / (sqrt(x (1 - x)) (x - r))`` for complex r off [0, 1].

    Equals ``-1 / w`` with ``w = sqrt(r) sqrt(r - 1)`` (principal roots; the product has
    its branch cut on [0, 1]; Gradshteyn & Ryzhik 3.121 continued analytically). ``w`` is
    formed as ``+-sqrt(r (r - 1))`` with the sign that makes ``w / (r - 1/2)`` (a principal
    root of ``1 - 1 / (4 (r - 1/2)^2)``) have a positive real part: one complex root.
    """
    w = np.sqrt(r * (r - 1.0))
    m = r - 0.5
    np.negative(w, out=w, where=w.real * m.real + w.imag * m.imag < 0)
    return -1.0 / w


def _abs2(z):
    return z.real * z.real + z.imag * z.imag


def _separate(r1, r2):
    """Roots nearer each other than 1e-6 of their distance to [0, 1] moved apart to that
    distance (the pair's sum varies on that scale: the shift's error is ~1e-12 of the
    result, the cancellation left ~1e-10), and roots on the real axis (no loss anywhere)
    moved off it by a relative 1e-12."""
    mid, gap = (r1 + r2) / 2, (r1 - r2) / 2
    least = np.maximum(1e-6 * np.abs(mid - np.clip(mid.real, 0.0, 1.0)),
                       1e-14 * (1.0 + np.abs(mid)))
    size = np.abs(gap)
    unit = np.where(size > 0, gap / np.where(size > 0, size, 1.0), 1.0)
    gap = np.where(size < least, unit * least, gap)
    r1, r2 = mid + gap, mid - gap
    out = []
    for r in (r1, r2):
        tiny = 1e-12 * (1.0 + np.abs(r))
        out.append(np.where(np.abs(r.imag) < tiny, r.real + 1j * tiny, r))
    return out


def _mean_quadratic(p0, p1, p2):
    """The mean for ``p2 != 0`` over the two roots of p (see the caller)."""
    sq = np.sqrt(p1 * p1 - 4.0 * p0 * p2)
    np.negative(sq, out=sq, where=p1.real * sq.real + p1.imag * sq.imag < 0)
    q = -0.5 * (p1 + sq)
    q[q == 0] = 1e-300
    r1, r2 = q / p2, p0 / q
    e = r1 - r2
    rough = 1e-12 * (1.0 + _abs2(r1) + _abs2(r2))
    odd = (_abs2(e) < rough) | (r1.imag**2 < 1e-24 * rough) | (r2.imag**2 < 1e-24 * rough)
    if odd.any():  # rare: (nearly) double roots, or roots on the real axis
        r1[odd], r2[odd] = _separate(r1[odd], r2[odd])
        e = r1 - r2
    f = r1 - r2.conj()
    mean = ((_arcsine_mean_pole(r1) / (e * f)).imag / r1.imag
            + (_arcsine_mean_pole(r2) / (e * f.conj())).imag / r2.imag)
    return mean / _abs2(p2)


def azimuth_mean_inverse_square(p0, p1, p2) -> np.ndarray:
    """Closed-form azimuth mean ``(2 / pi) int_0^(pi/2) |p(cos^2 phi)|^-2 dphi``.

    Parameters
    ----------
    p0, p1, p2 : complex array_like (broadcast together)
        Coefficients of ``p(x) = p0 + p1 x + p2 x^2``, ``x = cos^2 phi``.

    Returns
    -------
    ndarray
        The mean, real and positive.

    Notes
    -----
    With ``x = cos^2 phi`` the mean is ``(1 / pi) int_0^1 dx / (sqrt(x (1 - x)) |p(x)|^2)``.
    ``|p|^2 = |p2|^2 (x - r1)(x - r2)(x - conj r1)(x - conj r2)`` splits into partial
    fractions over its four roots, and each ``1 / (x - r)`` has the arcsine-weighted mean
    ``J(r) = -1 / (sqrt(r) sqrt(r - 1))`` (principal roots; r off [0, 1]). The conjugate
    roots' terms are the conjugates of the others', which leaves
    ``[Im(J(r1) / (e f)) / Im r1 + Im(J(r2) / (e conj f)) / Im r2] / |p2|^2`` with
    ``e = r1 - r2`` and ``f = r1 - conj r2``. Nearly coincident roots are moved apart by
    1e-6 of their distance to [0, 1] (the error is second order in that shift); roots on
    the real axis (no loss anywhere) are moved off it by a relative 1e-12. The degree
    drops where ``|p2|`` (then ``|p1|``) is below 1e-13 of the other coefficients:
    ``Im J(r) / (|p1|^2 Im r)`` for a line, ``1 / |p0|^2`` for a constant.
    """
    p0, p1, p2 = np.broadcast_arrays(np.asarray(p0, complex), np.asarray(p1, complex),
                                     np.asarray(p2, complex))
    shape = p0.shape
    p0, p1, p2 = p0.ravel(), p1.ravel(), p2.ravel()
    scale = np.maximum(_abs2(p0), _abs2(p1))
    quad = _abs2(p2) > 1e-26 * scale
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if quad.all():
            return _mean_quadratic(p0, p1, p2).reshape(shape)
        out = np.empty(p0.shape)
        out[quad] = _mean_quadratic(p0[quad], p1[quad], p2[quad])
        lin = ~quad & (_abs2(p1) > 1e-26 * _abs2(p0))
        const = ~quad & ~lin
        out[const] = 1.0 / _abs2(p0[const])
        if lin.any():
            a1 = p1[lin]
            r = -p0[lin] / a1
            tiny = 1e-12 * (1.0 + np.abs(r))
            r = np.where(np.abs(r.imag) < tiny, r.real + 1j * tiny, r)
            out[lin] = _arcsine_mean_pole(r).imag / (_abs2(a1) * r.imag)
    return out.reshape(shape)


def azimuth_mean_inverse(p0, p1, p2) -> np.ndarray:
    """Closed-form azimuth mean ``(2 / pi) int_0^(pi/2) dphi / p(cos^2 phi)`` (complex).

    Parameters
    ----------
    p0, p1, p2 : complex array_like (broadcast together)
        Coefficients of ``p(x) = p0 + p1 x + p2 x^2``, ``x = cos^2 phi``.

    Returns
    -------
    complex ndarray

    Notes
    -----
    ``1 / p = [1 / (x - r1) - 1 / (x - r2)] / (p2 (r1 - r2))``, so the mean is
    ``(J(r1) - J(r2)) / (p2 (r1 - r2))`` with the arcsine-weighted pole mean ``J`` of
    :func:`azimuth_mean_inverse_square`; ``J(r) / p1`` for a line, ``1 / p0`` for a
    constant. Nearly coincident or real roots are moved as there.
    """
    p0, p1, p2 = np.broadcast_arrays(np.asarray(p0, complex), np.asarray(p1, complex),
                                     np.asarray(p2, complex))
    shape = p0.shape
    p0, p1, p2 = p0.ravel(), p1.ravel(), p2.ravel()
    quad = _abs2(p2) > 1e-26 * np.maximum(_abs2(p0), _abs2(p1))
    lin = ~quad & (_abs2(p1) > 1e-26 * _abs2(p0))
    const = ~quad & ~lin
    out = np.empty(p0.shape, complex)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        out[const] = 1.0 / p0[const]
        if lin.any():
            r = -p0[lin] / p1[lin]
            tiny = 1e-12 * (1.0 + np.abs(r))
            r = np.where(np.abs(r.imag) < tiny, r.real + 1j * tiny, r)
            out[lin] = _arcsine_mean_pole(r) / p1[lin]
        if quad.any():
            a0, a1, a2 = p0[quad], p1[quad], p2[quad]
            sq = np.sqrt(a1 * a1 - 4.0 * a0 * a2)
            np.negative(sq, out=sq, where=a1.real * sq.real + a1.imag * sq.imag < 0)
            q = -0.5 * (a1 + sq)
            q[q == 0] = 1e-300
            r1, r2 = _separate(q / a2, a0 / q)
            out[quad] = (_arcsine_mean_pole(r1) - _arcsine_mean_pole(r2)) / (a2 * (r1 - r2))
    return out.reshape(shape)


# arcsine-weighted moments E[x^k] = binom(2k, k) / 4^k of x = cos^2 phi
_MOMENTS = np.array([1.0, 1 / 2, 3 / 8, 5 / 16, 35 / 128])


def azimuth_mean_ratio_square(num, den) -> np.ndarray:
    """Closed-form azimuth mean of ``|n(x) / d(x)|^2`` for two quadratics in ``cos^2 phi``.

    Parameters
    ----------
    num, den : tuple of three complex arrays
        Coefficients ``(n0, n1, n2)`` and ``(d0, d1, d2)``; ``d`` and ``n`` share the
        same ``x``-dependence up to constants, ``n = P + Q Z(x)``, ``d = S + T Z(x)``
        (a Moebius function of one sheet impedance, e.g. a reflection factor).

    Returns
    -------
    ndarray

    Notes
    -----
    With ``n = (Q / T) d + K``, ``K = P - Q S / T`` a constant,
    ``E|n/d|^2 = |Q/T|^2 + 2 Re(conj(Q/T) K E[1/d]) + |K|^2 E[1/|d|^2]`` (closed forms of
    :func:`azimuth_mean_inverse` and :func:`azimuth_mean_inverse_square`). Where ``d``
    does not depend on ``x`` the mean is ``E|n|^2 / |d0|^2`` from the arcsine moments
    ``E[x^k] = binom(2k, k) / 4^k``.
    """
    n0, n1, n2 = (np.asarray(c, complex) for c in num)
    d0, d1, d2 = (np.asarray(c, complex) for c in den)
    n0, n1, n2, d0, d1, d2 = np.broadcast_arrays(n0, n1, n2, d0, d1, d2)
    varying = (_abs2(d1) + _abs2(d2)) > 1e-26 * _abs2(d0)
    out = np.empty(n0.shape)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # ratio of the x-dependent parts: n1 = (Q/T) d1, n2 = (Q/T) d2
        big = _abs2(d2) >= _abs2(d1)
        ratio = np.where(big, n2 / np.where(big, d2, 1.0), n1 / np.where(big, 1.0, d1))
        k = n0 - ratio * d0
        v = varying
        out[v] = (_abs2(ratio[v]) + 2 * (ratio[v].conj() * k[v]
                                         * azimuth_mean_inverse(d0[v], d1[v], d2[v])).real
                  + _abs2(k[v]) * azimuth_mean_inverse_square(d0[v], d1[v], d2[v]))
        c = ~v
        if c.any():
            m = _MOMENTS
            a0, a1, a2 = n0[c], n1[c], n2[c]
            mean = (_abs2(a0) + 2 * (a0 * a1.conj()).real * m[1]
                    + (_abs2(a1) + 2 * (a0 * a2.conj()).real) * m[2]
                    + 2 * (a1 * a2.conj()).real * m[3] + _abs2(a2) * m[4])
            out[c] = mean / _abs2(d0[c])
    return out
