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

__all__ = ["INCIDENCE", "GK15", "adaptive_gauss_kronrod", "adaptive_panels", "azimuth_average",
           "azimuth_mean_inverse", "azimuth_mean_inverse_square", "azimuth_mean_ratio_square",
           "default_theta_max_deg", "graded_panels", "paris_average", "paris_average_critical",
           "row_tolerance", "CriticalMap"]

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
_FRACTIONS = np.concatenate([[0.0], _GRADING ** np.arange(_LEVELS, 0, -1), [1.0]])


def default_theta_max_deg(incidence: str) -> float:
    """78 deg for field incidence (common practice), 90 for diffuse, 0 for normal."""
    return {"normal": 0.0, "field": 78.0, "diffuse": 90.0}[incidence]


def _weighted_sum(q, w):
    """``sum_i q[..., i] w[i]`` in a fixed order (node by node), so that each row's value
    does not depend on how many rows are summed with it (a BLAS product may block rows
    differently by count)."""
    out = None
    for i in np.flatnonzero(w):  # loop over the 15 quadrature nodes
        term = q[..., i] * w[i]
        out = term if out is None else out + term
    return out


def _gk(fn, rows, lo, hi):
    """Kronrod integral and error estimate of each panel (rows of frequencies)."""
    x, wk, wg = GK15
    c, h = (lo + hi) / 2, (hi - lo) / 2
    nodes = c[..., None] + h[..., None] * x
    q = fn(rows, nodes.reshape(len(rows), -1)).reshape(nodes.shape)
    # QUADPACK's error scaling (Piessens et al. 1983, qk15): the raw |K - G| is far too
    # pessimistic where the integrand is smooth
    from .kernels import gk15_sums

    shape = h.shape
    q2 = np.ascontiguousarray(q.reshape(-1, x.size), dtype=float)
    ik, err = np.empty(q2.shape[0]), np.empty(q2.shape[0])
    gk15_sums(q2, np.ascontiguousarray(h, dtype=float).reshape(-1), wk, wg, ik, err)
    return ik.reshape(shape), err.reshape(shape)


def _row_sums(row, values, n):
    """Per-row sums of flat panel values, added in the panels' order (``bincount`` adds
    sequentially), so a row's sum depends on its own panels only."""
    return np.bincount(row, values, n)


def row_tolerance(size, rtol, atol=None, rtol_max=None):
    """Each row's allowed error from the size of its integral ``|I|``: ``rtol |I|``, or
    with an absolute tolerance ``max(rtol |I|, min(atol, rtol_max |I|))`` (no cap without
    ``rtol_max``)."""
    tol = rtol * size
    if atol is not None:
        cap = np.inf if rtol_max is None else rtol_max
        tol = np.maximum(tol, np.minimum(atol, cap * size))
    return tol


def adaptive_panels(gk, row, lo, hi, nrows: int, rtol: float = 3e-3, max_passes: int = 60,
                    per_pass: int = 8, aux=None, start=None, atol=None,
                    rtol_max: float | None = None) -> np.ndarray:
    """Integrals per row over its own list of panels, refined per row.

    Parameters
    ----------
    gk : callable
        ``gk(row, lo, hi)`` returns the integral and error estimate of each panel
        ``lo .. hi`` of row ``row`` (flat arrays).
    row, lo, hi : ndarray (p,)
        The initial panels, flat: panel ``i`` belongs to row ``row[i]``.
    nrows : int
        Number of rows.
    rtol : float
        Estimated relative accuracy at every row.
    max_passes, per_pass : int
        Refinement passes at most, panels bisected per row and pass.
    aux : ndarray (p, k), optional
        Data that stays with each panel and its halves (e.g. the panel's change of
        variable); then ``gk(row, lo, hi, aux)``.
    start : (ndarray, ndarray), optional
        The initial panels' integrals and error estimates, computed already (by another
        rule): only the panels bisected from them are evaluated by ``gk``.
    atol : ndarray (nrows,), optional
        An absolute tolerance per row (in the integral's units) that may stand in for
        ``rtol``, up to ``rtol_max`` of the row's integral: a row has converged where its
        summed error is at most ``max(rtol |I|, min(atol, rtol_max |I|))`` (no cap without
        ``rtol_max``), e.g. a minor part of a sum held to a share of the sum, but to
        ``rtol_max`` of itself at worst.

    Returns
    -------
    ndarray (nrows,)

    Notes
    -----
    Each pass bisects, in every row whose summed error exceeds ``rtol`` of its integral,
    the panels with the largest error, as many as it takes for their errors to cover
    that excess and at most ``per_pass`` (ties broken by the panels' order; panels
    without error are never bisected): a row's panels of small error are left alone
    while a few large ones carry the excess, and the passes go on until every row meets
    its tolerance. Only those panels are evaluated: a row's
    result depends on its own integrand alone, bit for bit, whatever rows share the
    call (the left half replaces its panel, the right half is appended, and sums run in
    the panels' order).
    """
    row = np.asarray(row, dtype=np.intp)
    lo, hi = np.array(lo, dtype=float), np.array(hi, dtype=float)
    evaluate = gk
    if aux is not None:
        aux = np.asarray(aux)

        def evaluate(r, a, b, which):
            return gk(r, a, b, aux[which])
    if start is not None:
        val, err = (np.array(a, dtype=float) for a in start)
    else:
        val, err = (gk(row, lo, hi) if aux is None else gk(row, lo, hi, aux))
    for _ in range(max_passes):  # refinement passes, each vectorised over rows
        tol = row_tolerance(np.abs(_row_sums(row, val, nrows)), rtol, atol, rtol_max)
        excess = _row_sums(row, err, nrows) - tol
        bad = excess > 0
        idx = np.flatnonzero(bad[row] & (err > 0))
        if idx.size == 0:
            break
        order = idx[np.lexsort((-err[idx], row[idx]))]  # by row, largest error first
        r = row[order]
        first = np.flatnonzero(np.r_[True, r[1:] != r[:-1]])
        rank = np.arange(r.size) - np.repeat(first, np.diff(np.r_[first, r.size]))
        top = rank < per_pass
        # of a row's largest errors, only as many as cover its excess over the tolerance
        # (each row's running sum in its own order: independent of the other rows)
        at = np.repeat(np.arange(first.size), np.diff(np.r_[first, r.size]))[top]
        slot = np.zeros((first.size, per_pass))
        slot[at, rank[top]] = err[order[top]]
        before = np.zeros(slot.shape)
        np.cumsum(slot[:, :-1], axis=1, out=before[:, 1:])
        sel = top.copy()
        sel[top] = before[at, rank[top]] < excess[r[first]][at]
        pick = np.sort(order[sel])
        a, b = lo[pick], hi[pick]
        m = (a + b) / 2
        n = pick.size
        args = (np.concatenate([row[pick], row[pick]]), np.concatenate([a, m]),
                np.concatenate([m, b]))
        v, e = (evaluate(*args) if aux is None
                else evaluate(*args, np.concatenate([pick, pick])))
        hi[pick], val[pick], err[pick] = m, v[:n], e[:n]
        if aux is not None:
            aux = np.concatenate([aux, aux[pick]])
        row = np.concatenate([row, row[pick]])
        lo, hi = np.concatenate([lo, m]), np.concatenate([hi, b])
        val, err = np.concatenate([val, v[n:]]), np.concatenate([err, e[n:]])
    return _row_sums(row, val, nrows)


def _flat_gk(fn, node_map=None):
    """``gk(row, lo, hi[, aux])`` of :func:`adaptive_panels` for an integrand ``fn(rows, x)``.

    The panels of one row go side by side into one row of ``x`` (one call per distinct
    number of panels per row: a loop over a few counts), so ``fn`` sees each row once.
    With ``node_map(aux, nodes) -> (x, dx/dnode)`` each panel has its own change of
    variable, given by its ``aux`` data.
    """
    def gk(row, lo, hi, aux=None):
        order = np.argsort(row, kind="stable")
        r = row[order]
        starts = np.flatnonzero(np.r_[True, r[1:] != r[:-1]])
        counts = np.diff(np.r_[starts, r.size])
        val, err = np.empty(row.size), np.empty(row.size)
        for c in np.unique(counts):  # loop over panel counts, not rows
            first = starts[counts == c]
            panels = order[first[:, None] + np.arange(c)]
            f = fn
            if node_map is not None:
                def f(rows, nodes, a=aux[panels]):
                    x, dx = node_map(a[:, :, None], nodes.reshape(a.shape[0], a.shape[1], -1))
                    return fn(rows, x.reshape(len(rows), -1)) * dx.reshape(len(rows), -1)
            val[panels], err[panels] = _gk(f, r[first], lo[panels], hi[panels])
        return val, err
    return gk


def graded_panels(edges, graded):
    """Initial panels between break points, graded towards the marked ones.

    Parameters
    ----------
    edges : ndarray (n, p)
        Break points of each row, ascending (the row's range is ``edges[:, 0] ..
        edges[:, -1]``); repeated points make empty intervals, which are dropped.
    graded : ndarray of bool (n, p)
        Points to grade towards: each interval ending there is halved and its half
        next to the point split geometrically (ratio 1/8, two levels: the panel at the
        point is 1/64 of the half).

    Returns
    -------
    row, lo, hi : ndarray (m,)
        Flat panels, each row's in ascending order (an interval with no graded end is
        one panel).
    """
    n, p = edges.shape
    a, b = edges[:, :-1], edges[:, 1:]
    ga, gb = graded[:, :-1], graded[:, 1:]
    mid = (a + b) / 2
    split = ga | gb
    parts = []  # (lo, hi, keep) of each panel slot, in ascending order within an interval
    f = _FRACTIONS
    for j in range(len(f) - 1):  # graded slots from the left end towards the middle
        lo, hi = a + (mid - a) * f[j], a + (mid - a) * f[j + 1]
        parts.append((lo, hi, ga))
    parts.append((a, mid, split & ~ga))                   # plain left half
    parts.append((a, b, ~split))                          # whole interval
    parts.append((mid, b, split & ~gb))                   # plain right half
    for j in range(len(f) - 1, 0, -1):  # graded slots from the middle towards the right end
        lo, hi = b + (mid - b) * f[j], b + (mid - b) * f[j - 1]
        parts.append((lo, hi, gb))
    lo = np.stack([q[0] for q in parts], axis=2)          # (n, p - 1, slots)
    hi = np.stack([q[1] for q in parts], axis=2)
    keep = np.stack([q[2] for q in parts], axis=2) & (hi > lo)
    row = np.broadcast_to(np.arange(n)[:, None, None], lo.shape)
    return row[keep], lo[keep], hi[keep]


def _initial_panels(k0, sharp_kt, umax):
    """Flat panels on ``0 .. umax`` split at the sharp points inside the range, graded
    towards them and towards grazing (sharp points given as NaN are absent)."""
    nf = k0.shape[0]
    if sharp_kt is None or sharp_kt.shape[1] == 0:
        splits = np.empty((nf, 0))
    else:
        u = (sharp_kt / k0[:, None]) ** 2
        splits = np.sort(np.where((u > 0) & (u < umax), u, umax), axis=1)
    edges = np.concatenate([np.zeros((nf, 1)), splits, np.full((nf, 1), umax)], axis=1)
    graded = np.ones(edges.shape, dtype=bool)
    graded[:, 0] = False
    return graded_panels(edges, graded)


def adaptive_gauss_kronrod(fn, lo, hi, rtol: float = 3e-3, max_passes: int = 60,
                           per_pass: int = 8) -> np.ndarray:
    """Integrals over the union of panels ``lo .. hi`` per row, adaptive per row.

    Parameters
    ----------
    fn : callable
        ``fn(rows, x)`` returns the integrand at the rows ``rows`` (index array, rows may
        repeat) and abscissae ``x`` (len(rows), m).
    lo, hi : ndarray (n, p)
        Initial panels of each row (zero-width panels are dropped).
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
    error scaling (Piessens et al. 1983), refined by :func:`adaptive_panels`.
    """
    lo, hi = np.asarray(lo, dtype=float), np.asarray(hi, dtype=float)
    n = lo.shape[0]
    keep = hi > lo
    row = np.broadcast_to(np.arange(n)[:, None], lo.shape)[keep]
    return adaptive_panels(_flat_gk(fn), row, lo[keep], hi[keep], n, rtol, max_passes,
                           per_pass)


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
        Trace wavenumbers of known sharp features (plate coincidence); NaN where absent;
        only those inside the range split it.
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

    Notes
    -----
    The range of ``u = sin^2 theta`` is split at each frequency's own features inside
    it and graded towards them and towards grazing (:func:`graded_panels`); a feature
    outside the range costs nothing. :func:`paris_average_critical` is the faster form
    for transmission coefficients, whose receiving side's critical angle it knows.
    """
    k0 = np.asarray(k0, dtype=float)
    umax = np.sin(theta_max) ** 2
    row, lo, hi = _initial_panels(k0, sharp_kt, umax)

    def integrand(rows, u):
        return tau_fn(rows, np.arcsin(np.sqrt(np.clip(u, 0.0, 1.0))))

    return adaptive_panels(_flat_gk(integrand), row, lo, hi, k0.shape[0], rtol, max_passes,
                           per_pass) / umax


class CriticalMap:
    """The variable of :func:`paris_average_critical` for a receiving side that turns
    evanescent at ``u = u_critical`` (``u = sin^2 theta``).

    Near ``u_e = min(u_critical, 1)`` a transmission coefficient has a square-root edge
    (the receiving air's normal wavenumber ``k1 sqrt(u_critical - u)``, or the source's
    ``cos theta = sqrt(1 - u)``), which GK panels resolve only by grading. With
    ``u = u_e (1 - t^2)``, ``du = 2 u_e t dt`` on ``t_min .. 1`` the integrand is an
    analytic function of ``t`` there (every transfer-matrix entry depends on ``u``, the
    receiving admittance on ``t``), so one panel usually reaches the tolerance wherever
    no layer has a sharp feature inside the range (removing an endpoint singularity by a
    change of variable: Davis & Rabinowitz, Methods of Numerical Integration, 1984,
    sec. 2.9). Past the critical angle (only a finite bay radiates there) ``u = u_critical
    + t^2`` on ``-sqrt(u_max - u_critical) .. 0``, again analytic in ``t``.

    Parameters
    ----------
    u_critical : float
        ``(c1 / c2)^2`` of the source and receiving airs (1 for equal airs; above 1 when
        the receiving air is the slower one: no critical angle).
    umax : float
        ``sin^2 theta_max``.
    beyond : bool
        Whether the range continues past the critical angle.
    """

    def __init__(self, u_critical: float, umax: float, beyond: bool = False):
        self.u_critical, self.umax = float(u_critical), float(umax)
        self.u_e = min(self.u_critical, 1.0)
        u_a = min(self.umax, self.u_critical)
        self.segments = [(float(np.sqrt(max(0.0, 1.0 - u_a / self.u_e))), 1.0)]
        if beyond and self.u_critical < self.umax:
            self.segments.append((-float(np.sqrt(self.umax - self.u_critical)), 0.0))

    def to_t(self, u):
        """``t`` of the points ``u`` inside the range (NaN elsewhere and at its ends)."""
        u = np.asarray(u, dtype=float)
        lo, hi = self.segments[0]
        with np.errstate(invalid="ignore"):
            t = np.sqrt(1.0 - u / self.u_e)
            t = np.where((t > lo) & (t < hi), t, np.nan)
            if len(self.segments) > 1:
                w = -np.sqrt(u - self.u_critical)
                t = np.where((u > self.u_critical) & (u < self.umax), w, t)
        return t

    def __call__(self, t):
        """``(u, q, du/dt)`` at ``t``, with ``q = u_critical - u`` free of cancellation."""
        t = np.asarray(t, dtype=float)
        tt = t * t
        inside = t >= 0
        u = np.where(inside, self.u_e * (1.0 - tt), self.u_critical + tt)
        q = np.where(inside, (self.u_critical - self.u_e) + self.u_e * tt, -tt)
        return u, q, np.where(inside, 2.0 * self.u_e * t, -2.0 * t)


_NEAR = 0.25    # poles narrower than this share of their segment shape the panels


def paris_average_critical(fn, nrows: int, cmap: CriticalMap, poles=None, splits=None,
                           rtol: float = 3e-3, max_passes: int = 60,
                           per_pass: int = 8, atol=None,
                           rtol_max: float | None = None) -> np.ndarray:
    """Paris average ``(1 / u_max) int_0^u_max g(u) du`` in the variable of a
    :class:`CriticalMap`, with panels shaped by the integrand's near-real poles.

    Parameters
    ----------
    fn : callable
        ``fn(rows, u, q)`` returns ``g`` at the rows ``rows`` (index array, may repeat) and
        ``u = sin^2 theta`` (len(rows), m), with ``q = u_critical - u`` computed without
        cancellation (the receiving air's normal wavenumber is ``k1 sqrt(q)``, and
        ``-j k1 sqrt(-q)`` where ``q < 0``).
    nrows : int
        Number of rows (e.g. pairs of variant and frequency).
    cmap : CriticalMap
    poles : complex ndarray (nrows, p), optional
        Poles of the integrand near the range, in ``t`` (NaN where absent): each
        narrower than a quarter of its segment splits the range at its real part, and
        the panels next to it take the variable ``tau`` of ``t = x + y sinh(tau)``
        (``x + j y`` the pole), which turns the Lorentzian ``1 / ((t - x)^2 + y^2)`` into
        the smooth ``1 / (y cosh tau)`` (the sinh transformation of Johnston & Elliott,
        Int. J. Numer. Meth. Eng. 62 (2005) 564, for nearly singular integrands).
    splits : ndarray (nrows, p), optional
        Further break points in ``t`` (NaN where absent), e.g. sharp features whose pole
        is not known.
    rtol, max_passes, per_pass
        As :func:`adaptive_panels`.
    atol : ndarray (nrows,), optional
        With ``rtol_max``: an absolute tolerance per row on the average, as
        :func:`adaptive_panels` takes it.

    Returns
    -------
    ndarray (nrows,)
    """
    n = nrows
    if poles is None:
        poles = np.empty((n, 0), complex)
    if splits is None:
        splits = np.empty((n, 0))
    px, py = poles.real, np.abs(poles.imag)
    if poles.shape[1] > 1:  # the same pole found twice (within a tenth of its width): once
        order = np.argsort(px, axis=1)
        px, py = np.take_along_axis(px, order, 1), np.take_along_axis(py, order, 1)
        twice = np.zeros(px.shape, bool)
        twice[:, 1:] = np.abs(np.diff(px, axis=1)) < 0.1 * np.minimum(py[:, 1:], py[:, :-1])
        px = np.where(twice, np.nan, px)
    rows, los, his, maps = [], [], [], []
    for a, b in cmap.segments:  # one or two segments
        # a pole on the axis itself is a zero of the numerator too (the half-spaces'
        # admittances at grazing): not a peak
        near = np.isfinite(px) & (py > 1e-9 * (b - a)) & (py < _NEAR * (b - a))
        centre = near & (px > a) & (px < b)
        sp = np.where((splits > a) & (splits < b), splits, b)
        edges = np.concatenate([np.full((n, 1), a), np.where(centre, px, b), sp,
                                np.full((n, 1), b)], axis=1)
        is_pole = np.concatenate([np.zeros((n, 1), bool), centre,
                                  np.zeros(sp.shape, bool), np.zeros((n, 1), bool)], axis=1)
        order = np.argsort(edges, axis=1, kind="stable")
        edges = np.take_along_axis(edges, order, 1)
        is_pole = np.take_along_axis(is_pole, order, 1)
        # between two pole centres: split in the middle, one pole for each half
        both = is_pole[:, :-1] & is_pole[:, 1:]
        mids = np.where(both, (edges[:, :-1] + edges[:, 1:]) / 2, b)
        edges = np.sort(np.concatenate([edges, mids], axis=1), axis=1)
        lo, hi = edges[:, :-1], edges[:, 1:]
        # each interval's nearest pole (distance in widths), if near enough
        x, y = px[:, None, :], np.where(near, py, np.inf)[:, None, :]
        gap = np.maximum(np.maximum(lo[..., None] - x, x - hi[..., None]), 0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            score = (gap + y) / (hi - lo)[..., None]
        score = np.where(np.isfinite(score), score, np.inf)
        best = np.argmin(score, axis=2) if poles.shape[1] else np.zeros(lo.shape, int)
        use = (np.take_along_axis(score, best[..., None], 2)[..., 0] < 1.0
               if poles.shape[1] else np.zeros(lo.shape, bool))
        bx = np.where(use, np.take_along_axis(np.broadcast_to(px[:, None, :], score.shape),
                                              best[..., None], 2)[..., 0]
                      if poles.shape[1] else 0.0, 0.0)
        by = np.where(use, np.take_along_axis(np.broadcast_to(py[:, None, :], score.shape),
                                              best[..., None], 2)[..., 0]
                      if poles.shape[1] else 0.0, 0.0)
        keep = hi > lo
        with np.errstate(invalid="ignore", divide="ignore"):
            tlo = np.where(use, np.arcsinh((lo - bx) / np.where(use, by, 1.0)), lo)
            thi = np.where(use, np.arcsinh((hi - bx) / np.where(use, by, 1.0)), hi)
        rows.append(np.broadcast_to(np.arange(n)[:, None], lo.shape)[keep])
        los.append(tlo[keep])
        his.append(thi[keep])
        maps.append(np.stack([bx[keep], by[keep]], axis=1))
    row, lo, hi = np.concatenate(rows), np.concatenate(los), np.concatenate(his)
    aux = np.concatenate(maps)
    order = np.argsort(row, kind="stable")  # each row's panels in ascending order

    def node_map(a, tau):
        x, y = a[..., 0], a[..., 1]
        mapped = y > 0
        t = np.where(mapped, x + y * np.sinh(tau), tau)
        return t, np.where(mapped, y * np.cosh(tau), 1.0)

    def integrand(rows, t):
        u, q, dudt = cmap(t)
        return fn(rows, u, q) * dudt

    gk = _flat_gk(integrand, node_map)
    if atol is not None:
        atol = np.asarray(atol, dtype=float) * cmap.umax
    return adaptive_panels(gk, row[order], lo[order], hi[order], n, rtol, max_passes,
                           per_pass, aux=aux[order], atol=atol,
                           rtol_max=rtol_max) / cmap.umax


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


def _abs2(z):
    return z.real * z.real + z.imag * z.imag


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
    return _pointwise("mean_inverse_square", float, p0, p1, p2)


def _pointwise(name, dtype, p0, p1, p2):
    """The compiled azimuth mean ``name`` of :mod:`noisebudget.kernels` at every point
    of the broadcast coefficients."""
    from . import kernels

    p0, p1, p2 = np.broadcast_arrays(np.asarray(p0, complex), np.asarray(p1, complex),
                                     np.asarray(p2, complex))
    out = np.empty(p0.size, dtype)
    getattr(kernels, name)(*(np.ascontiguousarray(p).reshape(-1) for p in (p0, p1, p2)),
                           out)
    return out.reshape(p0.shape)


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
    return _pointwise("mean_inverse", complex, p0, p1, p2)


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
