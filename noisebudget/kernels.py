"""Compiled per-point kernels of the angle integrands (numba, CPU only).

The batched transmission (:mod:`noisebudget.batch`) evaluates, per (variant, frequency)
row, tens to hundreds of angle points, and each point runs the same short chain of
complex arithmetic: a fluid layer's scaled matrix entries applied to the carried state,
and the closed-form azimuth mean. As numpy expressions each link of the chain is a pass
over all points (20 to 50 passes per layer); here each chain is one loop over the points
with the intermediates in registers. The formulas are those of the numpy forms they
replace, documented where they are used (the module docstring of
:mod:`noisebudget.batch`, :func:`noisebudget.incidence.azimuth_mean_inverse_square`);
``tests/test_kernels.py`` checks them against independent references.

Each point's value depends on its own inputs only, computed in a fixed order, so a row's
numbers do not depend on the rows evaluated with it, bit for bit. Compiled by
:func:`noisebudget.compiled.compiled` (IEEE arithmetic, the GIL released, the machine code
cached on disk: the first call in a fresh installation compiles, a few seconds in all;
later processes load it).
"""

from __future__ import annotations

import numpy as np

from .compiled import compiled

__all__ = ["AZIMUTH", "FLUID", "SERIES", "SHEET", "SKIP", "fluid_back", "mean_inverse",
           "mean_inverse_square", "transmission"]


@compiled
def _entries(q_re, q_im, real, d, kt2):
    """Scaled entries ``(cs, sinc, ksn, y)`` of a fluid layer at one point: ``cos(x) e^-y``,
    ``sinc(x) e^-y``, ``kz sin(x) e^-y`` with ``x = kz d`` (Im x >= 0), ``y = |Im x|``.

    ``cos`` and ``sin`` of a complex x from the real ``cos``, ``sin`` of ``Re x`` and
    ``1 - exp(-2 y)`` (``expm1``: no cancellation where ``y`` is small); the root of
    ``kz^2`` by the half-angle formulas."""
    if real:  # lossless: kz real (propagating) or imaginary (evanescent)
        a = q_re - kt2
        k = np.sqrt(abs(a))
        r = k * d
        if a >= 0.0:
            s = np.sin(r)
            sinc = 1.0 if r < 1e-6 else s / r
            return complex(np.cos(r), 0.0), complex(sinc, 0.0), complex(k * s, 0.0), 0.0
        em = -np.expm1(-2.0 * r)  # 1 - exp(-2 r), without cancellation
        sinc = 1.0 if r == 0.0 else em / (2.0 * r)
        return (complex(1.0 - em / 2.0, 0.0), complex(sinc, 0.0),
                complex(-k * em / 2.0, 0.0), r)
    a = q_re - kt2
    b = q_im
    m = np.sqrt(0.5 * (np.sqrt(a * a + b * b) + abs(a)))
    t = abs(b) / (2.0 * m) if m > 0.0 else 0.0
    if a >= 0.0:
        kr, ky = np.copysign(m, b), t
    else:
        kr, ky = np.copysign(t, b), m
    xr, y = kr * d, ky * d
    em = -np.expm1(-2.0 * y)
    gp, gm = 1.0 - 0.5 * em, 0.5 * em
    cr, sr = np.cos(xr), np.sin(xr)
    sn_r, sn_i = gp * sr, gm * cr
    cs = complex(gp * cr, -gm * sr)
    den = xr * xr + y * y
    if den < 1e-12:
        sinc = complex(1.0 - (xr * xr - y * y) / 6.0, -xr * y / 3.0) * np.exp(-y)
    else:
        sinc = complex((sn_r * xr + sn_i * y) / den, (sn_i * xr - sn_r * y) / den)
    ksn = complex(kr * sn_r - ky * sn_i, kr * sn_i + ky * sn_r)
    return cs, sinc, ksn, y


@compiled
def fluid_back(q_re, q_im, real, c12, c21, d, rows, kt2, p, v, scale):
    """``(P, V) <- M (P, V)`` through a fluid layer at every point, in place, and its
    scale's log added to ``scale``.

    ``q = omega^2 rho / K``, the prefactors ``c12 = j omega rho d``, ``c21 = j / (omega
    rho)`` and the thickness ``d`` are per row of the layer (indexed by ``rows``); ``kt2``,
    ``p``, ``v`` and ``scale`` are (len(rows), m). ``M = [[cs, c12 sinc], [c21 ksn, cs]]``
    scaled by ``exp(-|Im kz d|)``.
    """
    n, m = kt2.shape
    for i in range(n):
        r = rows[i]
        for j in range(m):
            cs, sinc, ksn, y = _entries(q_re[r], q_im[r], real, d[r], kt2[i, j])
            m12, m21 = c12[r] * sinc, c21[r] * ksn
            pp, vv = p[i, j], v[i, j]
            p[i, j] = cs * pp + m12 * vv
            v[i, j] = m21 * pp + cs * vv
            scale[i, j] += y


@compiled
def _csqrt(z):
    """Principal square root of a complex number by the half-angle formulas (real square
    roots, about three times faster than the general complex one), which it falls back on
    where ``|z|^2`` could overflow or underflow. Signed zeros follow the principal branch
    (``sqrt(-1 - 0j) = -j``)."""
    x, y = z.real, z.imag
    ax, ay = abs(x), abs(y)
    if not 1e-150 < ax + ay < 1e150:
        return np.sqrt(z)
    m = np.sqrt(0.5 * (np.sqrt(x * x + y * y) + ax))
    if x >= 0.0:
        return complex(m, y / (2.0 * m))
    return complex(ay / (2.0 * m), np.copysign(m, y))


@compiled
def _abs2(z):
    return z.real * z.real + z.imag * z.imag


@compiled
def _pole_root(r):
    """``w = +-sqrt(r (r - 1))`` with ``Re(w conj(r - 1/2)) >= 0``: the pole mean is
    ``J(r) = -1 / w``."""
    w = _csqrt(r * (r - 1.0))
    mid = r - 0.5
    if w.real * mid.real + w.imag * mid.imag < 0.0:
        w = -w
    return w


@compiled
def _pole_term(r, c):
    """``Im(J(r) / c) / Im r`` with ``J(r) = -1 / w``: ``Im(-1 / z) = Im z / |z|^2`` for
    ``z = w c`` (no complex division)."""
    z = _pole_root(r) * c
    return z.imag / (z.real * z.real + z.imag * z.imag) / r.imag


@compiled
def _off_axis(r):
    """A root on the real axis moved off it by a relative 1e-12."""
    tiny = 1e-12 * (1.0 + abs(r))
    if abs(r.imag) < tiny:
        return complex(r.real, tiny)
    return r


@compiled
def _roots(p0, p1, p2):
    """The roots ``r1, r2`` of ``p0 + p1 x + p2 x^2`` (``p2 != 0``; the root of larger
    size from the stable form ``q = -(p1 + sign sqrt(p1^2 - 4 p0 p2)) / 2``), nearly
    coincident ones moved apart to 1e-6 of their distance to [0, 1] and real ones moved off
    the axis by a relative 1e-12 (see
    :func:`noisebudget.incidence.azimuth_mean_inverse_square`)."""
    sq = _csqrt(p1 * p1 - 4.0 * p0 * p2)
    if p1.real * sq.real + p1.imag * sq.imag < 0.0:
        sq = -sq
    q = -0.5 * (p1 + sq)
    if q == 0:
        q = complex(1e-300, 0.0)
    r1, r2 = q / p2, p0 / q
    e = r1 - r2
    rough = 1e-12 * (1.0 + _abs2(r1) + _abs2(r2))
    if (_abs2(e) < rough or r1.imag ** 2 < 1e-24 * rough
            or r2.imag ** 2 < 1e-24 * rough):  # (nearly) double roots, or real ones
        mid, gap = (r1 + r2) / 2.0, (r1 - r2) / 2.0
        least = max(1e-6 * abs(mid - min(max(mid.real, 0.0), 1.0)),
                    1e-14 * (1.0 + abs(mid)))
        size = abs(gap)
        if size < least:
            gap = (gap / size if size > 0 else complex(1.0, 0.0)) * least
        r1, r2 = _off_axis(mid + gap), _off_axis(mid - gap)
    return r1, r2


@compiled
def _degree(p0, p1, p2):
    """2, 1 or 0: the degree kept where ``|p2|`` (then ``|p1|``) is below 1e-13 of the
    other coefficients."""
    if _abs2(p2) > 1e-26 * max(_abs2(p0), _abs2(p1)):
        return 2
    return 1 if _abs2(p1) > 1e-26 * _abs2(p0) else 0


@compiled
def _mean_one(p0, p1, p2):
    """The mean of ``|p(x)|^-2`` at one point (see
    :func:`noisebudget.incidence.azimuth_mean_inverse_square`)."""
    deg = _degree(p0, p1, p2)
    if deg == 1:
        r = _off_axis(-p0 / p1)
        return _pole_term(r, complex(1.0, 0.0)) / _abs2(p1)
    if deg == 0:
        return 1.0 / _abs2(p0)
    r1, r2 = _roots(p0, p1, p2)
    e = r1 - r2
    f = r1 - r2.conjugate()
    return (_pole_term(r1, e * f) + _pole_term(r2, e * f.conjugate())) / _abs2(p2)


@compiled
def mean_inverse(p0, p1, p2, out):
    """``out[i]`` = the azimuth mean of ``1 / (p0 + p1 x + p2 x^2)`` (1-D arrays; see
    :func:`noisebudget.incidence.azimuth_mean_inverse`): ``(J(r1) - J(r2)) / (p2 (r1 -
    r2))``, ``J(r) / p1`` for a line, ``1 / p0`` for a constant, ``J(r) = -1 / w``."""
    for i in range(p0.size):
        a0, a1, a2 = p0[i], p1[i], p2[i]
        deg = _degree(a0, a1, a2)
        if deg == 0:
            out[i] = 1.0 / a0
        elif deg == 1:
            out[i] = -1.0 / _pole_root(_off_axis(-a0 / a1)) / a1
        else:
            r1, r2 = _roots(a0, a1, a2)
            out[i] = (1.0 / _pole_root(r2) - 1.0 / _pole_root(r1)) / (a2 * (r1 - r2))


@compiled
def mean_inverse_square(p0, p1, p2, out):
    """``out[i]`` = the azimuth mean of ``|p0 + p1 x + p2 x^2|^-2`` (1-D arrays)."""
    for i in range(p0.size):
        out[i] = _mean_one(p0[i], p1[i], p2[i])


# ---- the whole integrand of a batch ---------------------------------------------------

#: Step kinds of :func:`transmission`'s program, one per mounted layer.
SKIP, FLUID, SHEET, SERIES, AZIMUTH = 0, 1, 2, 3, 4


@compiled
def _series(c, f, s):
    """``A + B s + C s^2 + E s^2 / (1 + F s)`` (a sheet's impedance in ``s = kt^2``)."""
    return c[0] + s * (c[1] + s * c[2]) + c[3] * (s * s) / (1.0 + f * s)


@compiled
def transmission(kind, real, rpar, cpar, az, sheet, k1, omega, z1, rho2, z2, rows, u, q,
                 sigma, out):
    """tau at every point of a batch's rows, in one pass (the arithmetic of
    :meth:`noisebudget.batch._Rows.tau`).

    The program has one step per mounted layer, front to back: ``kind[i]`` (``SKIP``,
    ``FLUID``, ``SHEET``: an impedance per row in ``cpar[i, r, 0]``, ``SERIES``: an
    impedance ``A + B s + C s^2 + E s^2 / (1 + F s)`` in ``s = kt^2`` with ``(A, B, C, E)
    = cpar[i, r]`` and ``F = rpar[i, r, 0]``, ``AZIMUTH``: the direction-dependent sheet
    at index ``sheet``), fluid layers' ``(q_re, q_im, d) = rpar[i, r]``, ``(c12, c21) =
    cpar[i, r, :2]`` and ``real[i]``. The sheet's ``Z = z0 + z1 x + z2 x^2`` (``x =
    cos^2 phi``) has ``z0 = a00 + a01 s + a02 s^2``, ``z1 = a11 s + a12 s^2``, ``z2 = a22
    s^2 + a20`` (``s > 0``), and at normal incidence ``z0 + b`` with ``az[r] = (a00, a01,
    a02, a11, a12, a20, a22, b)``. ``k1``, ``omega`` are per row; ``z1``, ``rho2``,
    ``z2`` the source impedance, the receiving air's density and impedance; ``sigma``
    the bay's radiation efficiency per point, or an empty (0, 0) array for the infinite
    stack. ``u = sin^2 theta`` and ``q = u_critical - u`` are (len(rows), m).

    The receiving state ``(P, V) = (1, Y2)`` is carried back to the front (or to the
    sheet, with the row vector ``(Y1, 1)`` carried forward to it); ``tau = 4 Y1 Re(Y2)
    |Y1 P + V|^-2`` scaled by the fluid layers' ``exp(-2 |Im kz d|)``, or with the sheet
    its azimuth mean (:func:`mean_inverse_square`), and for a bay ``rho2 c2 |Y2|^2
    sigma`` in place of ``Re Y2``; with a sheet held at 1 at most.
    """
    n, m = u.shape
    nst = kind.size
    stop = sheet if sheet >= 0 else -1
    bay = sigma.shape[0] > 0
    for i in range(n):
        r = rows[i]
        kk, om = k1[r], omega[r]
        for j in range(m):
            uu, qq = u[i, j], q[i, j]
            kt2 = kk * kk * uu
            y1 = np.sqrt(1.0 - uu) / z1
            y2abs = kk * np.sqrt(abs(qq)) / (om * rho2)
            p = complex(1.0, 0.0)
            v = complex(y2abs, 0.0) if qq >= 0.0 else complex(0.0, -y2abs)
            scale = 0.0
            # the backward and forward products are written out: one general 2 x 2 step
            # for every layer kind measured 30 % slower per point (sheets need no matrix)
            for s in range(nst - 1, stop, -1):  # back to the front (or the sheet)
                k = kind[s]
                if k == FLUID:
                    cs, sinc, ksn, y = _entries(rpar[s, r, 0], rpar[s, r, 1], real[s],
                                                rpar[s, r, 2], kt2)
                    m12, m21 = cpar[s, r, 0] * sinc, cpar[s, r, 1] * ksn
                    p, v = cs * p + m12 * v, m21 * p + cs * v
                    scale += y
                elif k == SHEET:
                    p += cpar[s, r, 0] * v
                elif k == SERIES:
                    p += _series(cpar[s, r], rpar[s, r, 0], kt2) * v
            if sheet < 0:
                den = y1 * p + v
                mean = 1.0 / _abs2(den)
            else:
                g1, g2 = complex(y1, 0.0), complex(1.0, 0.0)
                for s in range(sheet):  # the row vector forward to the sheet
                    k = kind[s]
                    if k == FLUID:
                        cs, sinc, ksn, y = _entries(rpar[s, r, 0], rpar[s, r, 1], real[s],
                                                    rpar[s, r, 2], kt2)
                        m12, m21 = cpar[s, r, 0] * sinc, cpar[s, r, 1] * ksn
                        g1, g2 = g1 * cs + g2 * m21, g1 * m12 + g2 * cs
                        scale += y
                    elif k == SHEET:
                        g2 += g1 * cpar[s, r, 0]
                    elif k == SERIES:
                        g2 += g1 * _series(cpar[s, r], rpar[s, r, 0], kt2)
                a = az[r]
                z0 = a[0] + kt2 * (a[1] + kt2 * a[2])
                zz1 = kt2 * (a[3] + kt2 * a[4])
                zz2 = a[6] * (kt2 * kt2)
                if kt2 == 0.0:
                    z0 += a[7]
                else:
                    zz2 += a[5]
                alpha, beta = g1 * p + g2 * v, g1 * v
                mean = _mean_one(alpha + beta * z0, beta * zz1, beta * zz2)
            if bay:
                radiated = z2 * y2abs * y2abs * sigma[i, j]
            else:
                radiated = y2abs if qq >= 0.0 else 0.0
            tau = 4.0 * y1 * radiated * mean * np.exp(-2.0 * scale)
            if sheet >= 0 and tau > 1.0:
                tau = 1.0
            out[i, j] = tau


# ---- a 15-point panel's sums ------------------------------------------------------------

@compiled
def gk15_sums(q, h, wk, wg, ik, err):
    """Per panel ``i``: the Kronrod integral ``ik = h sum_j wk_j q_ij`` and QUADPACK's
    scaled error estimate (Piessens et al. 1983, qk15) of ``|ik - ig|`` with ``ig = h sum_j
    wg_j q_ij``: ``resasc min(1, (200 |ik - ig| / resasc)^1.5)``, ``resasc = h sum_j wk_j
    |q_ij - ik / (2 h)|`` (the raw difference where ``resasc`` is 0). Sums run node by node
    in a fixed order (:func:`noisebudget.incidence._weighted_sum`'s), panel by panel."""
    n, m = q.shape
    for i in range(n):
        sk, sg = 0.0, 0.0
        first_k, first_g = True, True
        for j in range(m):
            if wk[j] != 0.0:
                sk = q[i, j] * wk[j] if first_k else sk + q[i, j] * wk[j]
                first_k = False
            if wg[j] != 0.0:
                sg = q[i, j] * wg[j] if first_g else sg + q[i, j] * wg[j]
                first_g = False
        hi = h[i]
        k = hi * sk
        g = hi * sg
        mean = k / (2.0 * (hi if hi > 0.0 else 1.0))
        sa = 0.0
        first_a = True
        for j in range(m):
            if wk[j] != 0.0:
                t = abs(q[i, j] - mean) * wk[j]
                sa = t if first_a else sa + t
                first_a = False
        resasc = hi * sa
        raw = abs(k - g)
        if resasc > 0.0:
            err[i] = resasc * min(1.0, (200.0 * raw / resasc) ** 1.5)
        else:
            err[i] = raw
        ik[i] = k
