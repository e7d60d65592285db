"""Sound transmission through leaks: long slits and circular holes in a rigid wall.

Time convention ``exp(+j omega t)``.

The model is that of Gomperts (1964) and Gomperts & Kihlman (1967) for slits and of
Wilson & Soroka (1965) for circular holes: plane waves travel through the aperture
(depth ``d``); each mouth is loaded by the radiation impedance of a rigid piston of the
aperture's shape in an infinite baffle; the sound outside drives the entrance with its
blocked pressure ``2 p_i``. With the aperture's transfer matrix ``T`` (the air channel,
:func:`noisebudget.stack.cascade`) and the mouth impedances ``Z1`` (source side) and
``Z2`` (receiving side), the mouth velocity is ``u2 = 2 p_i / D`` with
``D = T11 Z2 + T12 + Z1 (T21 Z2 + T22)``; the transmitted power per open area,
relative to the intensity of the incident wave, is::

    g = 4 rho1 c1 Re(Z2) s^2 / |D|^2,        tau(theta) = g / cos(theta)

where ``s`` is the mean of the incident wave's phase over the mouth (1 at normal
incidence). For equal air on both sides and no depth, ``g = Re(z) / |z|^2`` with ``z``
the normalised mouth impedance: a small aperture passes more than the sound falling on
it, and resonances of the channel raise ``g`` far above 1 (Gomperts 1964).

Mouth impedances, per unit area and relative to ``rho c``:

* slit of width ``w`` (two-dimensional strip, Morse & Ingard, Theoretical Acoustics,
  1968, sec. 7.4): ``z = int_0^K (1 - t/K) H0^(2)(t) dt`` with ``K = k w``, in closed
  form ``int_0^K J0 - J1(K) - j [int_0^K Y0 - Y1(K) - 2 / (pi K)]``; at small ``K``,
  ``z = K/2 + j (K/pi) (3/2 - gamma_E - ln(K/2))``;
* circular hole of radius ``a`` (Rayleigh's piston; Kinsler et al., Fundamentals of
  Acoustics, 4th ed. 2000, sec. 7.5): ``z = 1 - J1(2ka)/(ka) + j H1(2ka)/(ka)``, ``H1``
  the Struve function; at small ``ka``, ``z = (ka)^2/2 + j 8 ka / (3 pi)``.

The air in the aperture carries the visco-thermal losses of a narrow channel (the
low-reduced-frequency solution: Zwikker & Kosten, Sound Absorbing Materials, 1949;
Stinson, JASA 89 (1991) 550; Allard & Atalla 2009, ch. 4): with
``s_v = h sqrt(j omega rho / mu)``, ``s_t = sqrt(Pr) s_v`` and ``h`` the half-width of a
slit or the radius of a hole, ``rho_e = rho / (1 - F(s_v))`` and
``K_e = gamma P0 / (1 + (gamma - 1) F(s_t))``, with ``F(s) = tanh(s)/s`` (slit) or
``2 I1(s) / (s I0(s))`` (hole). Without losses (``losses=False``) the channel is plain
air, as in the original papers.

Field and diffuse incidence use Paris' formula, as for the walls
(:mod:`noisebudget.incidence`): ``<tau> = int g sin(theta) dtheta dphi / (pi
sin^2(theta_max))`` over the directions up to ``theta_max``. For a hole, ``s`` is
``2 J1(x)/x`` with ``x = k a sin(theta)``, so in the diffuse field ``<tau> = 4 g0
Re(z(ka)) / (ka)^2`` (reciprocity with the piston's radiated power). For a slit the
incident wave's trace along the slit, ``kL = k sin(theta) cos(phi)``, is kept in the
channel and in the mouth impedances (a two-dimensional problem with the wavenumber
``sqrt(k^2 - kL^2)``, and ``Z = (omega rho / k') z(k' w)``), while across the width
``s = sin(X)/X`` with ``X = k w sin(theta) sin(phi) / 2`` (this oblique-incidence form is
derived here from the same assumptions). Where the receiving air cannot carry the trace
(``kL`` above its wavenumber) nothing is transmitted.

Validity: plane waves in the aperture, i.e. ``k w < pi`` for a slit and ``k a < 1.84``
for a hole (first cross mode); a slit at least 10 times longer than wide; apertures far
apart from one another (no interaction); mouths flush with a rigid wall. Outside that
range a :class:`~noisebudget.errors.ModelRangeWarning` is issued. The sources' own
closed forms differ from this one only by the approximations they make to the mouth
impedances.

References: E. Gomperts, Acustica 14 (1964) 1-16; M. C. Gomperts, T. Kihlman, Acustica
18 (1967) 144-150; G. P. Wilson, W. W. Soroka, J. Acoust. Soc. Am. 37 (1965) 286-297.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass

import numpy as np

from .errors import ModelRangeWarning
from .layers.base import FluidElement
from .media import Air
from .stack import cascade

__all__ = ["Hole", "Slit", "channel_fluid", "piston_impedance", "strip_impedance"]

_NODES = 32  # Gauss-Legendre nodes of each angle integral
_HOLE_CUTOFF = 1.8412  # k a of the first cross mode of a circular duct
_SLIT_CUTOFF = np.pi   # k w of the first cross mode of a slit


def strip_impedance(kw) -> np.ndarray:
    """Normalised radiation impedance of a baffled strip of width ``w`` (per unit area).

    ``z(K) = int_0^K (1 - t/K) H0^(2)(t) dt``, ``K = k w``: the rigid strip's mean surface
    pressure over its velocity, divided by ``rho c`` (two-dimensional Rayleigh integral;
    Morse & Ingard, Theoretical Acoustics, 1968, sec. 7.4). Real ``K > 0``.
    """
    from scipy.special import itj0y0, j1, y1

    k = np.asarray(kw, dtype=float)
    ij0, iy0 = itj0y0(k)
    return (ij0 - j1(k)) + 1j * (-iy0 + y1(k) + 2 / (np.pi * k))


def piston_impedance(ka) -> np.ndarray:
    """Normalised radiation impedance of a baffled circular piston of radius ``a``.

    ``z = 1 - J1(2ka)/(ka) + j H1(2ka)/(ka)`` with ``H1`` the Struve function (Rayleigh;
    Kinsler et al., Fundamentals of Acoustics, 4th ed. 2000, eq. 7.5.11).
    """
    from scipy.special import j1, struve

    x = np.asarray(ka, dtype=float)
    return (1 - j1(2 * x) / x) + 1j * struve(1, 2 * x) / x


def _f_and_complement(shape: str, s):
    """``F(s)`` and ``1 - F(s)`` of a slit (``tanh(s)/s``) or a hole (``2 I1/(s I0)``),
    with series where ``|s|`` is small (``1 - F`` would cancel)."""
    from scipy.special import ive

    s = np.asarray(s, dtype=complex)
    small = np.abs(s) < 0.1
    safe = np.where(small, 1.0, s)
    if shape == "slit":
        e = np.exp(-2 * safe)               # Re(s) > 0: tanh without overflow
        f = (1 - e) / (1 + e) / safe
        one_minus = s**2 / 3 - 2 * s**4 / 15
    else:
        f = 2 * ive(1, safe) / (safe * ive(0, safe))
        one_minus = s**2 / 8 - s**4 / 48
    f = np.where(small, 1 - one_minus, f)
    return f, np.where(small, one_minus, 1 - f)


def channel_fluid(shape: str, half_width: float, omega, air: Air):
    """Effective density and bulk modulus of the air in a narrow slit or tube.

    Parameters
    ----------
    shape : "slit" or "hole"
    half_width : float
        Half the width of a slit, or the radius of a hole, in m.
    omega : array_like
        Angular frequencies.
    air : Air

    Returns
    -------
    rho_e, k_e : complex ndarrays shaped like ``omega``

    Notes
    -----
    ``rho_e = rho / (1 - F(s_v))``, ``K_e = gamma P0 / (1 + (gamma - 1) F(s_t))`` with
    ``s_v = h sqrt(j omega rho / mu)``, ``s_t = sqrt(Pr) s_v`` (Zwikker & Kosten 1949;
    Stinson, JASA 89 (1991); Allard & Atalla 2009, ch. 4). At low frequency
    ``j omega rho_e`` tends to the Poiseuille resistance ``3 mu / h^2`` (slit) or
    ``8 mu / a^2`` (hole).
    """
    omega = np.asarray(omega, dtype=float)
    sv = half_width * np.sqrt(1j * omega * air.density / air.viscosity)
    _, one_minus_v = _f_and_complement(shape, sv)
    f_t, _ = _f_and_complement(shape, np.sqrt(air.prandtl) * sv)
    rho = air.density / one_minus_v
    bulk = air.gamma * air.pressure / (1 + (air.gamma - 1) * f_t)
    return rho, bulk


def _mouth_power(z1, z2, omega, trace, depth, fluid, rho_c1):
    """``4 rho1 c1 Re(Z2) / |D|^2`` for the channel of ``depth`` between impedances
    ``z1``, ``z2`` (Pa s/m), at trace wavenumbers ``trace`` along the channel's mouth."""
    a, b, c, d, log_scale = cascade([FluidElement(*fluid, depth)], omega, trace)
    den = a * z2 + b + z1 * (c * z2 + d)
    with np.errstate(under="ignore"):
        return 4 * rho_c1 * z2.real / np.abs(den) ** 2 * np.exp(-2 * log_scale)


def _gauss(lo: float, hi: float, n: int = _NODES):
    x, w = np.polynomial.legendre.leggauss(n)
    return lo + (hi - lo) * (x + 1) / 2, w * (hi - lo) / 2


def _theta_max(incidence: str, theta_max_deg: float | None) -> float:
    from .incidence import INCIDENCE, default_theta_max_deg

    if incidence not in INCIDENCE:
        raise ValueError(f"incidence must be one of {INCIDENCE}, got {incidence!r}")
    if incidence == "normal":
        return 0.0
    deg = default_theta_max_deg(incidence) if theta_max_deg is None else theta_max_deg
    if not 0.0 < deg <= 90.0:
        raise ValueError(f"theta_max_deg must lie in (0, 90], got {deg}")
    return np.radians(deg)


def _airs(source_air, receiver_air, channel_air):
    source_air = source_air or Air()
    receiver_air = receiver_air or source_air
    return source_air, receiver_air, channel_air or receiver_air


def _warn_range(what: str, size: float, limit: float, f_hz, air: Air):
    f_max = limit * air.sound_speed / (2 * np.pi * size)
    if np.max(f_hz) > f_max:
        warnings.warn(f"{what}: plane waves in the aperture are assumed up to {f_max:.0f} Hz "
                      "(first cross mode); the leak model is used above that",
                      ModelRangeWarning, stacklevel=3)


@dataclass(frozen=True)
class Slit:
    """A long slit through a rigid wall (a gap at a panel joint or a seal).

    Parameters
    ----------
    width, length, depth : float
        In m; ``width`` is the narrow dimension, ``depth`` the wall thickness the slit
        runs through.
    losses : bool
        Visco-thermal losses of the air in the slit (default True).

    Notes
    -----
    Transmission after Gomperts & Kihlman (1967); see the module docstring for the
    equations, the oblique-incidence form and the validity range (``k w < pi``,
    ``length >= 10 width``).
    """

    width: float
    length: float
    depth: float
    losses: bool = True

    @property
    def area(self) -> float:
        """Open area in m^2."""
        return self.width * self.length

    def _g(self, f_hz, trace_ratio, air1, air2, air3):
        """g for frequencies (nf, 1) and trace ratios ``kL / k1`` (nf or 1, m)."""
        omega = 2 * np.pi * np.asarray(f_hz, dtype=float)[:, None]
        k1, k2 = omega / air1.sound_speed, omega / air2.sound_speed
        kl = k1 * trace_ratio
        kp1 = np.sqrt(np.maximum(k1**2 - kl**2, 0.0))
        kp2sq = k2**2 - kl**2
        carries = kp2sq > 0
        kp2 = np.sqrt(np.where(carries, kp2sq, 1.0))
        z1 = omega * air1.density / kp1 * strip_impedance(kp1 * self.width)
        z2 = omega * air2.density / kp2 * strip_impedance(kp2 * self.width)
        if self.losses:
            fluid = channel_fluid("slit", self.width / 2, omega, air3)
        else:
            fluid = (air3.density + 0j * omega, air3.bulk_modulus + 0j * omega)
        g = _mouth_power(z1, np.where(carries, z2, 0j), omega, kl, self.depth, fluid,
                         air1.impedance)
        return np.where(carries, g, 0.0)

    def average_transmission(self, f_hz, incidence: str = "field",
                             theta_max_deg: float | None = None, source_air=None,
                             receiver_air=None, channel_air=None) -> np.ndarray:
        """Incidence-averaged transmission coefficient per open area, shape (nf,).

        Parameters
        ----------
        f_hz : array_like (nf,)
        incidence : "normal", "field" (default limit 78 deg) or "diffuse"
        theta_max_deg : float, optional
        source_air, receiver_air, channel_air : Air, optional
            The air on each side and in the slit (defaults: standard air, the source
            air, the receiving air).

        Notes
        -----
        With ``u = sin(theta) cos(phi)`` (trace along the slit, ``u = sin(theta_m)
        sin(beta)``) and ``v`` across it, Paris' average is
        ``<tau> = (2 / (pi sin^2 theta_m)) int G(u) I(u) du`` with
        ``I(u) = int s^2(v) dv / sqrt(1 - u^2 - v^2)`` over ``u^2 + v^2 <= sin^2
        theta_m``; both by Gauss-Legendre (32 nodes each).
        """
        f = np.atleast_1d(np.asarray(f_hz, dtype=float))
        air1, air2, air3 = _airs(source_air, receiver_air, channel_air)
        _warn_range("slit", self.width, _SLIT_CUTOFF, f, air3)
        if self.length < 10 * self.width:
            warnings.warn(f"slit {self.width * 1e3:g} mm x {self.length * 1e3:g} mm: the "
                          "model needs a slit at least 10 times longer than wide",
                          ModelRangeWarning, stacklevel=2)
        tmax = _theta_max(incidence, theta_max_deg)
        if tmax == 0.0:
            return self._g(f, np.zeros((1, 1)), air1, air2, air3)[:, 0]
        sm = np.sin(tmax)
        beta, wb = _gauss(0.0, np.pi / 2)
        u = sm * np.sin(beta)                      # (nu,)
        du = sm * np.cos(beta) * wb
        big_v = np.sqrt(np.maximum(sm**2 - u**2, 0.0))
        psi, wp = _gauss(-np.pi / 2, np.pi / 2)
        v = big_v[:, None] * np.sin(psi)           # (nu, npsi)
        jac = big_v[:, None] * np.cos(psi) / np.sqrt(1 - u[:, None] ** 2 - v**2)
        k1 = 2 * np.pi * f / air1.sound_speed
        x = k1[:, None, None] * self.width * v[None] / 2
        s2 = np.sinc(x / np.pi) ** 2               # np.sinc(t) = sin(pi t)/(pi t)
        inner = np.sum(s2 * jac[None] * wp, axis=-1)   # (nf, nu)
        g = self._g(f, u[None, :], air1, air2, air3)
        return 2 / (np.pi * sm**2) * np.sum(g * inner * du, axis=-1)


@dataclass(frozen=True)
class Hole:
    """``count`` circular holes of one size through a rigid wall.

    Parameters
    ----------
    diameter, depth : float
        In m.
    count : int
        Number of holes (far enough apart not to interact).
    losses : bool
        Visco-thermal losses of the air in the hole (default True).

    Notes
    -----
    Transmission after Wilson & Soroka (1965); see the module docstring for the
    equations and the validity range (``k a < 1.84``).
    """

    diameter: float
    depth: float
    count: int = 1
    losses: bool = True

    @property
    def area(self) -> float:
        """Open area of all the holes in m^2."""
        return self.count * np.pi * self.diameter**2 / 4

    def average_transmission(self, f_hz, incidence: str = "field",
                             theta_max_deg: float | None = None, source_air=None,
                             receiver_air=None, channel_air=None) -> np.ndarray:
        """Incidence-averaged transmission coefficient per open area, shape (nf,).

        Parameters are those of :meth:`Slit.average_transmission`. The angle integral
        ``(2 / sin^2 theta_m) int (2 J1(x)/x)^2 sin(theta) dtheta``, ``x = k a
        sin(theta)``, is evaluated by Gauss-Legendre (32 nodes).
        """
        from scipy.special import j1

        f = np.atleast_1d(np.asarray(f_hz, dtype=float))
        air1, air2, air3 = _airs(source_air, receiver_air, channel_air)
        a = self.diameter / 2
        _warn_range("hole", a, _HOLE_CUTOFF, f, air3)
        omega = 2 * np.pi * f[:, None]
        k1, k2 = omega / air1.sound_speed, omega / air2.sound_speed
        z1 = air1.impedance * piston_impedance(k1 * a)
        z2 = air2.impedance * piston_impedance(k2 * a)
        if self.losses:
            fluid = channel_fluid("hole", a, omega, air3)
        else:
            fluid = (air3.density + 0j * omega, air3.bulk_modulus + 0j * omega)
        g0 = _mouth_power(z1, z2, omega, np.zeros((1, 1)), self.depth, fluid,
                          air1.impedance)[:, 0]
        tmax = _theta_max(incidence, theta_max_deg)
        if tmax == 0.0:
            return g0
        th, w = _gauss(0.0, tmax)
        x = k1 * a * np.sin(th)[None, :]
        s = 2 * j1(x) / x
        return g0 * 2 / np.sin(tmax) ** 2 * np.sum(s**2 * np.sin(th) * w, axis=-1)
