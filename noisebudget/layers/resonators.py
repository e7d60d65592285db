"""Membrane-mass resonator cells and tile arrays as locally reacting impedance sheets.

Time convention ``exp(+j omega t)``; the membrane's loss enters as a complex tension
``T (1 + j eta)``, so ``k = omega sqrt(rho_s / (T (1 + j eta)))`` lies in the fourth
quadrant (``Im k <= 0``).

Cell (exact axisymmetric solution). A circular membrane of radius ``a``, surface density
``rho_s`` and tension ``T`` is clamped at ``r = a`` to the grid; a rigid disk of radius
``r0`` and mass ``M`` is bonded at its centre. Under a uniform pressure ``p`` on the
membrane and a force ``F_d`` on the disk the membrane obeys
``T (w'' + w'/r) + omega^2 rho_s w = -p`` on ``r0 < r < a``, and the disk, moving as
``W = w(r0)``, obeys ``-omega^2 M_d W = F_d + 2 pi r0 T w'(r0)`` (``M_d`` = disk plus the
membrane under it). With ``w(a) = 0`` the annulus solution splits as::

    w(r) = W phi(r) + (p / T) u(r)

``phi``: homogeneous (``phi'' + phi'/r + k^2 phi = 0``), ``phi(r0) = 1``, ``phi(a) = 0``;
``u``: ``u'' + u'/r + k^2 u = -1``, ``u(r0) = u(a) = 0``. Four numbers per frequency
carry the whole cell: ``phi'(r0)``, ``I_phi = int r phi dr``, ``u'(r0)``,
``I_u = int r u dr`` (over ``r0 .. a``); then::

    W   = -[F_d + 2 pi r0 p u'(r0)] / [omega^2 M_d + 2 pi r0 T phi'(r0)]
    vol = 2 pi [W I_phi + (p / T) I_u]            (annulus volume displacement)

The bare membrane (``r0 = 0``, ``M = 0``) has ``u = (J0(kr) / J0(ka) - 1) / k^2``, so with
``J0(z) + J2(z) = 2 J1(z) / z`` (Abramowitz & Stegun 9.1.27)::

    <w> = p / (k^2 T) J2(ka) / J0(ka),   m_eff = rho_s J0(ka) / (-J2(ka))

zero at ``J0(ka) = 0`` (the first TL dip, f01 = 2.4048 / (2 pi a) sqrt(T / rho_s);
Rayleigh, Theory of Sound) and infinite at ``J2(ka) = 0`` where the area-averaged
displacement vanishes (total reflection; Yang et al., Phys. Rev. Lett. 101, 204301,
2008; Chen et al., JASA 136 (2014) 969). ``J2 / J0`` is formed from the exponentially
scaled ``jve`` (the scale ``exp|Im ka|`` cancels), so it neither overflows nor cancels;
at low frequency ``J2(ka) ~ (ka)^2 / 8`` gives the static ``<w> = p a^2 / (8 T)``.

Numerical stability. The textbook form ``A J0(kr) + B Y0(kr) - p / (k^2 T)`` fails twice:
(i) with loss, ``J`` and ``Y`` grow like ``exp(|Im k| r)``, the determinant
``J0(ka) Y0(kr0) - Y0(ka) J0(kr0)`` is a difference of two terms of size
``exp(|Im k| (a + r0))`` whose value is ``exp(|Im k| (a - r0))``, so all digits cancel
(and ``jv`` overflows) for slack or very lossy membranes at high frequency; (ii) at low
frequency the particular solution ``p / (k^2 T)`` cancels against the homogeneous part,
losing ``(ka)^-2``. Here:

* ``|ka| > 2``: cross products ``C_mn(x, y) = J_m(x) Y_n(y) - Y_m(x) J_n(y)`` of
  ``x = k r0``, ``y = k a`` are written with Hankel functions,
  ``C_mn = [H2_m(x) H1_n(y) - H1_m(x) H2_n(y)] / 2j``. For ``Im k <= 0``, ``H2(kr) ~
  exp(-jkr)`` decays outwards and ``H1`` grows, so with ``d = y - x`` and the scaled
  ``hankel1e``/``hankel2e`` (``H1 e^{-jz}``, ``H2 e^{jz}``)::

      C_mn e^{Im d} = e^{j Re d} / 2j [h2e_m(x) h1e_n(y) - h1e_m(x) h2e_n(y) e^{-2jd}]

  where ``|e^{-2jd}| = e^{2 Im d} <= 1``: the large part is factored out exactly and the
  small one underflows harmlessly. With ``phi = C00(kr, y) / C00(x, y)``,
  ``chi = C00(x, kr) / C00(x, y)`` (``chi(r0) = 0``, ``chi(a) = 1``),
  ``u = (phi + chi - 1) / k^2``, ``int r Z0(kr) dr = r Z1(kr) / k`` and the Wronskian
  ``J1 Y0 - J0 Y1 = 2 / (pi z)`` (A&S 9.1.16)::

      phi'(r0) = -k C10 / C00             I_phi = [2 / (pi k^2) - (r0 / k) C10] / C00
      chi'(r0) = 2 / (pi r0 C00)          I_chi = [2 / (pi k^2) + (a / k) C01] / C00

  each a ratio in which the scale ``e^{Im d}`` cancels, or carries ``e^{Im d} <= 1``.
* ``|ka| <= 2``: power series (A&S 9.1.10, 9.1.13) in ``s = (kr / 2)^2`` of the basis
  ``J0(kr)``, ``ln(r / a) J0(kr) + sum (-1)^(n+1) H_n s^n / (n!)^2`` (a Bessel function of
  the second kind less a multiple of ``J0``) and ``(1 - J0(kr)) / k^2``, integrated term by
  term: every term is bounded, none divides by ``k^2``. 18 terms give full precision.

The Hankel form is exact algebra, so where the textbook form is accurate both agree (a
test checks both against an mpmath evaluation of the textbook form at 40 digits).

Tile. Cells sit on a square grid of pitch ``P``; each unit of area ``P^2`` holds one cell
(kinds mixed by ``share``). With a *clamped* grid the tile's mean displacement is the sum
of the cells' volume displacements per ``P^2`` (admittances add in proportion to area).
With a *floating* grid of mass ``m_f`` per tile area, the grid moves by ``U``; in its frame
each cell sees the extra inertial loads ``omega^2 rho_s U`` (membrane) and
``omega^2 M_d U`` (disk), and the unit's momentum balance
``-omega^2 [m_f P^2 U + sum_k s_k (rho_s V_k + M_d W_k + (rho_s pi (a^2 - r0^2) + M_d) U)]
= p P^2`` fixes ``U``. At low frequency the whole tile then moves as one mass.
Cells are small against the wavelength, so the tile is a locally reacting sheet whose
impedance does not depend on the angle of incidence.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from math import factorial

import numpy as np

from .base import Field, Layer, LayerValueError, LayerValueErrors, SheetElement

__all__ = ["Cell", "Tile"]

SERIES_LIMIT = 2.0   # |k a| at or below which the power series are used
_N = 18              # series terms: (|ka| / 2)^(2n) / (n!)^2 < 1e-30 at n = 18
_n = np.arange(_N, dtype=float)
_T = (-1.0) ** _n / np.array([float(factorial(i)) ** 2 for i in range(_N)])  # (-1)^n/(n!)^2
_HARM = np.concatenate([[0.0], np.cumsum(1.0 / np.arange(1, _N))])         # H_n
_W = 2 * _n + 2
# columns: J0, H-sum, (1-J0)/k^2 / (r^2/4), and their r-derivatives and integrals (see
# _series); one matrix product evaluates all nine sums
_COEF = np.stack([_T, -_T * _HARM, _T / (_n + 1) ** 2,
                  _T * _n, _T * _n * _HARM, _T / (_n + 1),
                  _T / _W, -_T / _W * (1 / _W + _HARM), _T / (_n + 1) ** 2 / (_W + 2)], axis=1)


def _series(k, r, a):
    """Values, r-derivatives and integrals ``int_0^r r' f dr'`` of the series basis.

    Returns three tuples ``(u1, u2, up)`` (values), derivatives and integrals, with
    ``u1 = J0(kr)``, ``u2 = ln(r/a) J0(kr) + sum_{n>=1} (-1)^(n+1) H_n s^n / (n!)^2`` and
    ``up = (1 - J0(kr)) / k^2``, ``s = (kr/2)^2``. Integrals of ``u2`` are taken from 0
    (the log term is integrable). ``r`` > 0 broadcasts against ``k``.
    """
    k, r = np.broadcast_arrays(np.asarray(k, complex), np.asarray(r, float))
    s = (k * r / 2) ** 2
    p = np.empty(s.shape + (_N,), complex)
    p[..., 0] = 1.0
    p[..., 1] = s
    for i in range(2, _N):  # powers s^n: a loop over series terms, not frequencies
        p[..., i] = p[..., i - 1] * s
    # the nine sums by np.einsum, which adds the terms of each row in a fixed order (a
    # BLAS product's blocking and kernels depend on the number of rows): each row's
    # value is its own, bit for bit
    sums = (np.einsum("...j,jk->...k", p.real, _COEF)
            + 1j * np.einsum("...j,jk->...k", p.imag, _COEF))
    j0, h, upn, dj, dh, dpn, ij, ihn, ipn = np.moveaxis(sums, -1, 0)
    ln = np.log(r / a)
    u1, u2, up = j0, ln * j0 + h, r**2 / 4 * upn
    d1 = 2 / r * dj
    d2 = j0 / r + ln * d1 - 2 / r * dh
    dp = r / 2 * dpn
    i1 = r**2 * ij
    i2 = r**2 * (ln * ij + ihn)
    ip = r**4 / 4 * ipn
    return (u1, u2, up), (d1, d2, dp), (i1, i2, ip)


def _hankels(z):
    """Scaled Hankel functions of orders 0 and 1: ``(h1e0, h1e1, h2e0, h2e1)`` at z,
    using ``H2_v(z) = conj(H1_v(conj z))`` (real order): one call per order.

    ``H1_v(w) = (2 / (pi j)) e^{-j v pi / 2} K_v(-j w)`` for ``-pi/2 < arg w <= pi``
    (Abramowitz & Stegun 9.6.4), and the scalings agree (``hankel1e(w) = H1(w) e^{-jw}``,
    ``kve(zeta) = K(zeta) e^{zeta}`` with ``zeta = -j w``): the modified Bessel function is
    several times faster to evaluate than the Hankel function (both by Amos's
    algorithms). ``z`` lies in the fourth quadrant (``Im k <= 0``), ``conj z`` in the first.
    """
    from scipy import special

    both = -1j * np.concatenate([z, np.conj(z)])
    h0 = special.kve(0, both) * (-2j / np.pi)
    h1 = special.kve(1, both) * (-2 / np.pi)
    n = z.size
    return h0[:n], h1[:n], np.conj(h0[n:]), np.conj(h1[n:])


def _cross(m, n, x, y):
    """``C_mn(x, y) e^{Im(y - x)}`` for ``Im x, Im y <= 0``, ``|x| <= |y|`` (see module)."""
    from scipy import special

    d = y - x
    big = special.hankel2e(m, x) * special.hankel1e(n, y)
    small = special.hankel1e(m, x) * special.hankel2e(n, y) * np.exp(-2j * d)
    return np.exp(1j * d.real) / 2j * (big - small)


@dataclass(frozen=True)
class _Annulus:
    """Per-frequency constants of a cell (see the module notes)."""

    omega: np.ndarray
    tension: complex
    k: np.ndarray
    dphi: np.ndarray | None      # phi'(r0)
    iphi: np.ndarray | None      # int r phi dr
    du: np.ndarray | None        # u'(r0)
    iu: np.ndarray               # int r u dr (bare membrane: over 0 .. a)


@dataclass(frozen=True)
class Cell:
    """One kind of membrane-mass cell.

    Parameters
    ----------
    radius : float
        Membrane radius a in m.
    membrane_thickness, membrane_density : float
        m and kg/m^3; rho_s is their product.
    tension : float
        In-plane tension per unit length T in N/m.
    mass, mass_radius : float
        Central disk mass M in kg and radius r0 in m (both 0 for a bare membrane).
    loss_factor : float
        eta >= 0 of the complex tension T (1 + j eta).
    share : float
        Fraction of the tile's cells that are of this kind.
    """

    radius: float
    membrane_thickness: float
    membrane_density: float
    tension: float
    mass: float = 0.0
    mass_radius: float = 0.0
    loss_factor: float = 0.05
    share: float = 1.0

    def __post_init__(self):
        for key in ("radius", "membrane_thickness", "membrane_density", "tension", "share"):
            v = getattr(self, key)
            if not (np.isfinite(v) and v > 0):
                raise LayerValueError(key, f"must be a finite number > 0, got {v!r}")
        for key in ("mass", "mass_radius", "loss_factor"):
            v = getattr(self, key)
            if not (np.isfinite(v) and v >= 0):
                raise LayerValueError(key, f"must be a finite number >= 0, got {v!r}")
        if self.mass_radius >= self.radius:
            raise LayerValueError("mass_radius", "must be smaller than radius")
        if self.mass > 0 and self.mass_radius == 0:
            raise LayerValueError("mass_radius", "a central mass needs a radius > 0")

    @property
    def surface_density(self) -> float:
        """rho_s = membrane density x thickness, kg/m^2."""
        return self.membrane_density * self.membrane_thickness

    @property
    def prestress(self) -> float:
        """Membrane stress sigma = T / h, Pa (the file's alternative to the tension)."""
        return self.tension / self.membrane_thickness

    @property
    def disk_mass(self) -> float:
        """Mass moving with the disk: M plus the membrane under it."""
        return self.mass + self.surface_density * np.pi * self.mass_radius**2

    @property
    def total_mass(self) -> float:
        """Membrane plus central mass, kg."""
        return self.surface_density * np.pi * self.radius**2 + self.mass

    def first_membrane_frequency(self) -> float:
        """f01 = j01 / (2 pi a) sqrt(T / rho_s) of the bare clamped membrane, Hz."""
        return 2.404825557695773 / (2 * np.pi * self.radius) * np.sqrt(
            self.tension / self.surface_density)

    def _wavenumber(self, omega):
        t = self.tension * (1 + 1j * self.loss_factor)
        return t, omega * np.sqrt(self.surface_density / t)

    def _annulus(self, omega) -> _Annulus:
        """``phi'(r0)``, ``I_phi``, ``u'(r0)``, ``I_u`` at each omega, computed once."""
        from scipy import special  # imported on first use: keeps the package import fast

        omega = np.asarray(omega, dtype=float)
        t, k = self._wavenumber(omega)
        k = np.asarray(k + 0j)
        a, r0 = self.radius, self.mass_radius
        y = k * a
        if np.all(r0 == 0.0):  # bare membrane: I_u = a^2 J2(ka) / (2 k^2 J0(ka)), any ka
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = special.jve(2, y) / special.jve(0, y)
                iu = np.where(np.abs(y) > 1e-3, a**2 / 2 * ratio / k**2,
                              a**4 / 16 * (1 + y**2 / 6))  # J2/J0 = (ka)^2 (1 + (ka)^2 / 6) / 8
            return _Annulus(omega, t, k, None, None, None, iu)
        dphi, iphi, du, iu = (np.empty(k.shape, complex) for _ in range(4))
        # radii as numbers, or per-row arrays of a batch of variants (noisebudget.batch)
        a_k, r0_k = np.broadcast_to(a, k.shape), np.broadcast_to(r0, k.shape)
        low = np.abs(y) <= SERIES_LIMIT
        if low.any():
            kl, al = k[low], a_k[low]
            (v1a, v2a, vpa), _, (i1a, i2a, ipa) = _series(kl, al, al)
            (v1r, v2r, vpr), (d1r, d2r, dpr), (i1r, i2r, ipr) = _series(kl, r0_k[low], al)
            det = v1r * v2a - v2r * v1a
            # phi = alpha u1 + beta u2 with phi(r0) = 1, phi(a) = 0
            alpha, beta = v2a / det, -v1a / det
            # u = -up + A u1 + B u2 with u(r0) = u(a) = 0
            aa = (vpr * v2a - v2r * vpa) / det
            bb = (v1r * vpa - vpr * v1a) / det
            di1, di2, dip = i1a - i1r, i2a - i2r, ipa - ipr
            dphi[low] = alpha * d1r + beta * d2r
            iphi[low] = alpha * di1 + beta * di2
            du[low] = -dpr + aa * d1r + bb * d2r
            iu[low] = -dip + aa * di1 + bb * di2
        high = ~low
        if high.any():
            kh, ah, r0h = k[high], a_k[high], r0_k[high]
            x, yh = kh * r0h, kh * ah
            d = yh - x
            e = np.exp(d.imag)  # e^{Im d} <= 1
            # C_mn(x, y) e^{Im d}, as in _cross, from eight scaled Hankel values
            a0x, a1x, b0x, b1x = _hankels(x)
            a0y, a1y, b0y, b1y = _hankels(yh)
            small = np.exp(-2j * d)
            pre2j = np.exp(1j * d.real) / 2j
            c00 = pre2j * (b0x * a0y - a0x * b0y * small)
            c10 = pre2j * (b1x * a0y - a1x * b0y * small)
            c01 = pre2j * (b0x * a1y - a0x * b1y * small)
            w = 2 * e / (np.pi * kh**2)
            dph = -kh * c10 / c00
            iph = (w - r0h / kh * c10) / c00
            dchi = 2 * e / (np.pi * r0h * c00)
            ichi = (w + ah / kh * c01) / c00
            dphi[high], iphi[high] = dph, iph
            du[high] = (dph + dchi) / kh**2
            iu[high] = (iph + ichi - (ah**2 - r0h**2) / 2) / kh**2
        return _Annulus(omega, t, k, dphi, iphi, du, iu)

    def response(self, omega, p_m, f_d, pre: _Annulus | None = None):
        """Annulus volume displacement and disk displacement for the loads.

        Returns ``(vol_annulus, disk)``: ``int w dA`` over ``r0 < r < a`` (m^3) and ``W``,
        for a pressure ``p_m`` on the membrane and a force ``f_d`` on the disk. ``pre``
        reuses the constants of :meth:`_annulus` for several load cases.
        """
        pre = pre or self._annulus(omega)
        if np.all(self.mass_radius == 0.0):
            vol = 2 * np.pi * p_m / pre.tension * pre.iu
            return vol, np.zeros_like(vol)
        r0, t = self.mass_radius, pre.tension
        disk = -(f_d + 2 * np.pi * r0 * p_m * pre.du) / (
            pre.omega**2 * self.disk_mass + 2 * np.pi * r0 * t * pre.dphi)
        vol = 2 * np.pi * (disk * pre.iphi + p_m / t * pre.iu)
        return vol, disk

    def displacement_profile(self, omega: float, r, pressure: float = 1.0):
        """Radial displacement w(r) in m at one frequency under a uniform pressure on the
        membrane and the disk (clamped rim)."""
        from scipy import special

        r = np.asarray(r, dtype=float)
        omega = float(omega)
        pre = self._annulus(np.array([omega]))
        a, r0 = self.radius, self.mass_radius
        _, disk = self.response(np.array([omega]), pressure, pressure * np.pi * r0**2, pre)
        t, k = pre.tension, complex(pre.k[0])
        rr = np.clip(r, max(r0, 1e-12 * a), a)
        if abs(k * a) <= SERIES_LIMIT:
            kk = np.full(rr.shape, k)
            (v1, v2, vp), _, _ = _series(kk, rr, a)
            (v1a, v2a, vpa), _, _ = _series(np.array([k]), a, a)
            if r0 == 0.0:
                u = -vp + vpa * v1 / v1a
                phi = np.zeros_like(u)
            else:
                (v1r, v2r, vpr), _, _ = _series(np.array([k]), r0, a)
                det = v1r * v2a - v2r * v1a
                phi = (v2a * v1 - v1a * v2) / det
                u = -vp + ((vpr * v2a - v2r * vpa) * v1 + (v1r * vpa - vpr * v1a) * v2) / det
        elif r0 == 0.0:
            scale = np.exp(k.imag * (a - rr))  # J0(kr) / J0(ka) with jve
            u = (special.jve(0, k * rr) / special.jve(0, k * a) * scale - 1) / k**2
            phi = np.zeros_like(u)
        else:
            x, y = k * r0, k * a
            c0 = _cross(0, 0, x, y)
            phi = _cross(0, 0, k * rr, y) / c0 * np.exp(k.imag * (rr - r0))
            chi = _cross(0, 0, x, k * rr) / c0 * np.exp(k.imag * (a - rr))
            u = (phi + chi - 1) / k**2
        w = disk[0] * phi + pressure / t * u
        return np.where(r < r0, disk[0], w)

    def effective_mass(self, omega):
        """m_eff = p / (-omega^2 <w>) of the clamped cell, <w> over the area pi a^2."""
        omega = np.asarray(omega, dtype=float)
        vol, disk = self.response(omega, 1.0, np.pi * self.mass_radius**2)
        mean = (vol + disk * np.pi * self.mass_radius**2) / (np.pi * self.radius**2)
        return 1.0 / (-(omega**2) * mean)


@dataclass(frozen=True)
class Tile(Layer):
    """Array of membrane-mass cells on a square grid, as an impedance sheet.

    Parameters
    ----------
    cells : tuple of Cell
        Cell kinds; their ``share`` values sum to 1.
    pitch : float
        Grid pitch P in m (cell centre spacing), >= every cell's diameter.
    frame : str
        ``"clamped"`` (the grid does not move) or ``"floating"`` (a limp grid mass).
    frame_areal_mass : float
        Grid mass per tile area, kg/m^2.
    tile_thickness : float
        m, for drawings and totals.
    """

    cells: tuple = ()
    pitch: float = 0.0
    frame: str = "floating"
    frame_areal_mass: float = 0.0
    tile_thickness: float = 0.0
    type_name = "tile"
    #: its element depends on the frequency only, and costs Bessel functions: a batch
    #: remembers it per frequency (:mod:`noisebudget.batch`)
    remember_rows = True

    def __post_init__(self):
        if not self.cells:
            raise LayerValueError("cell", "a tile needs at least one [[layer.cell]]")
        if self.frame not in ("clamped", "floating"):
            raise LayerValueError("frame", f"must be 'clamped' or 'floating', got "
                                           f"{self.frame!r}")
        total = sum(c.share for c in self.cells)
        if abs(total - 1.0) > 1e-6:
            raise LayerValueError("cell", f"shares must sum to 1, got {total:g}")
        for i, c in enumerate(self.cells):
            if 2 * c.radius > self.pitch * (1 + 1e-9):
                raise LayerValueError(f"cell[{i + 1}].radius",
                                      f"cell diameter {2e3 * c.radius:g} mm exceeds the "
                                      f"pitch {1e3 * self.pitch:g} mm")
        if self.frame == "floating" and self.frame_areal_mass <= 0:
            raise LayerValueError("frame_areal_mass", "a floating grid needs its mass > 0")

    @property
    def thickness(self):
        return self.tile_thickness

    @property
    def areal_mass(self):
        cells = sum(c.share * c.total_mass for c in self.cells)
        return self.frame_areal_mass + cells / self.pitch**2

    def mean_displacement(self, omega, pressure=1.0):
        """Tile-averaged displacement per unit pressure, shape of omega (complex)."""
        omega = np.asarray(omega, dtype=float)
        area = self.pitch**2
        rel = 0.0
        inertia_u = self.frame_areal_mass * area
        coupling = 0.0
        unit = []
        shared = {}  # kinds that differ only in mass share their Bessel values
        for c in self.cells:  # loop over cell kinds, not frequencies
            r0a = np.pi * c.mass_radius**2
            key = (c.surface_density, c.tension, c.loss_factor, c.radius, c.mass_radius)
            if any(np.ndim(v) for v in key):  # a batch's per-row arrays: each cell alone
                key = id(c)
            pre = shared.get(key) or shared.setdefault(key, c._annulus(omega))
            vp, wp = c.response(omega, pressure, pressure * r0a, pre)  # pressure load
            vu, wu = c.response(omega, omega**2 * c.surface_density, omega**2 * c.disk_mass,
                                pre)  # inertial load of a unit grid displacement
            unit.append((c, vp, wp, vu, wu, r0a))
            rel = rel + c.share * (vp + wp * r0a)
            inertia_u = inertia_u + c.share * (c.surface_density * np.pi
                                               * (c.radius**2 - c.mass_radius**2) + c.disk_mass)
            coupling = coupling + c.share * (c.surface_density * vp + c.disk_mass * wp)
        if self.frame == "clamped":
            return rel / area
        # momentum balance of a unit: -w^2 [I U + sum s (rho_s V + M_d W)] = p P^2,
        # where V = vp + U vu and W = wp + U wu
        extra = sum(c.share * (c.surface_density * vu + c.disk_mass * wu)
                    for c, vp, wp, vu, wu, r0a in unit)
        u = -(pressure * area / omega**2 + coupling) / (inertia_u + extra)
        rel_u = sum(c.share * (vu + wu * r0a) for c, vp, wp, vu, wu, r0a in unit)
        return (u * area + rel + u * rel_u) / area

    def effective_mass(self, omega):
        """m_eff = p / (-omega^2 <w>) of the tile, kg/m^2 (negative: stiffness-like)."""
        omega = np.asarray(omega, dtype=float)
        return 1.0 / (-(omega**2) * self.mean_displacement(omega))

    def impedance(self, omega):
        """Sheet impedance ``Z = p / (j omega <w>)``."""
        omega = np.asarray(omega, dtype=float)
        return 1.0 / (1j * omega * self.mean_displacement(omega))

    def element(self, omega, kt, air):
        return SheetElement(self.impedance(omega))

    def with_cell(self, index: int = 0, **changes) -> Tile:
        """A copy with cell ``index`` changed (e.g. ``tension=...``)."""
        cells = list(self.cells)
        cells[index] = replace(cells[index], **changes)
        return replace(self, cells=tuple(cells))

    @classmethod
    def from_values(cls, values):
        """Build from the file schema's SI values; ``values["cell"]`` is a list of dicts
        keyed as :data:`CELL_SCHEMA` (a cell's ``prestress`` sigma gives T = sigma h)."""
        cells, errors = [], []
        for i, v in enumerate(values["cell"], start=1):
            tension = v["tension"] if "tension" in v else v["prestress"] * v["membrane_thickness"]
            try:
                cells.append(Cell(v["radius"], v["membrane_thickness"], v["membrane_density"],
                                  tension, v["mass"], v["mass_radius"], v["loss_factor"],
                                  v["share"]))
            except LayerValueError as exc:
                errors.append(LayerValueError(f"cell[{i}].{exc.key}", exc.reason))
        if errors:
            raise LayerValueErrors(errors)
        return cls(cells=tuple(cells), pitch=values["pitch"], frame=values["frame"],
                   frame_areal_mass=values["frame_areal_mass"],
                   tile_thickness=values.get("thickness", 0.0))


CELL_SCHEMA = {
    "share": Field("number", le=1.0, default=1.0, doc="fraction of the cells of this kind "
                                                      "(the shares sum to 1)"),
    "radius": Field("length", required=True, doc="membrane radius a"),
    "membrane_thickness": Field("length", required=True, doc="membrane thickness h"),
    "membrane_density": Field("density", required=True, doc="membrane material density"),
    "tension": Field("tension", group="tension", required=True,
                     doc="membrane tension per unit length T"),
    "prestress": Field("pressure", group="tension", required=True,
                       doc="membrane stress sigma (T = sigma h)"),
    "mass": Field("mass", allow_zero=True, default=0.0, doc="central disk mass M"),
    "mass_radius": Field("length", allow_zero=True, default=0.0,
                         doc="central disk radius r0 (< radius; > 0 with a mass)"),
    "loss_factor": Field("number", allow_zero=True, le=2.0, default=0.05,
                         doc="loss factor eta of the complex tension T (1 + j eta)"),
    "name": Field("name", doc="label of the cell kind"),
}

Tile.schema = {
    "frame": Field("choice", choices=("clamped", "floating"), default="floating",
                   doc="the grid: clamped (does not move) or floating (a limp mass)"),
    "pitch": Field("length", required=True, doc="grid pitch (cell centre spacing)"),
    "frame_areal_mass": Field("surface_density", allow_zero=True, default=0.0,
                              doc="grid mass per tile area (> 0 for a floating grid)"),
    "thickness": Field("length", doc="tile thickness, for drawings and totals"),
    "cell": Field("tables", required=True, schema=CELL_SCHEMA,
                  doc="the cell kinds, one [[layer.cell]] table each"),
}
