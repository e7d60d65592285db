"""The ordered stack: cascade of transfer matrices, terminations, transmission.

Time convention ``exp(+j omega t)``. State vector ``(p, v_z)``; a layer's matrix maps
the state on its receiving face to its source face, ``[p1, v1] = T [p2, v2]``.
The cascade is kept as four element-wise arrays ``a, b, c, d`` shaped (nf, nth); a sheet
updates two of them. Fluid layers are evaluated with ``exp(-|Im kz d|)`` factored out
and the factor's logarithm accumulated, so a thick lossy layer at high frequency cannot
overflow.

With normal admittances ``Y = kz / (omega rho)`` of the two half-spaces, the
transmission coefficient (ratio of normal intensities) is::

    tau = 4 Y1 Re(Y2) / |a Y1 + b Y1 Y2 + c + d Y2|^2

which for equal air on both sides is Allard & Atalla (2009) eq. 11.9x form
``tau = |2 / (T11 + T12 cos(theta)/Z0 + T21 Z0/cos(theta) + T22)|^2``. A stack holding
an elastic layer (solid, Biot) is solved by :func:`noisebudget.multilayer.solve` instead.

Mounting. The stack mounts its layers once (:attr:`Stack.mounted_layers`,
:meth:`~noisebudget.layers.base.Layer.pressurised`): a curved skin without a given
tension takes it from ``receiver_air.pressure - source_air.pressure``.

Azimuth. Direction-dependent layers (curved, stiffened or unequally tensioned skins)
get the trace wave's azimuth; the arrays then carry a trailing azimuth axis. When a
single sheet carries the direction dependence and the cascade applies, its impedance is
a polynomial in ``x = cos^2 phi``, the cascade's denominator is affine in it
(``den = alpha + beta Z`` with ``beta = (L11 Y1 + L21)(R21 + R22 Y2)`` for the layers L
before and R after the sheet), and the azimuth average of tau has the closed form of
:func:`noisebudget.incidence.azimuth_mean_inverse_square`; otherwise (several such
layers, or the general solve) the average is nested: adaptive in azimuth, and at each
azimuth adaptive in angle.

Finite bay. With a :class:`~noisebudget.finite_size.Panel`, the incidence averages
window the radiated side (Villot, Guigou & Gagliardini 2001): the receiving face's
velocity ``v2 = 2 Y1 Y2 p_i / den`` (``t Y2`` for the general solve's transmitted
pressure ``t``) radiates with the bay's radiation efficiency ``sigma`` instead of the
infinite ``Re(Y2) / (rho2 c2 |Y2|^2)``, so ``tau = 4 Y1 rho2 c2 |Y2|^2 sigma / |den|^2``
(``|t|^2 rho2 c2 |Y2|^2 sigma / Y1``).
"""

from __future__ import annotations

import warnings
from dataclasses import KW_ONLY, dataclass, field, replace

import numpy as np

from . import batch, checks, multilayer
from .bands import Bands
from .errors import ModelRangeWarning
from .finite_size import Panel
from .incidence import (
    INCIDENCE,
    azimuth_average,
    azimuth_mean_inverse_square,
    azimuth_mean_ratio_square,
    default_theta_max_deg,
    paris_average,
)
from .layers.base import FluidElement, Layer, SheetElement
from .media import Air

__all__ = ["Stack", "cascade", "TL_CAP_DB"]

TL_CAP_DB = 300.0  # transmission losses are capped here (tau floor 1e-30)
_CHUNK = 2048      # frequencies per angle-quadrature call: bounds the working memory
_SOLVE_POINTS = 20_000  # points per general-solve call (about 5 kB of temporaries each)


def _fluid_matrix(el: FluidElement, omega, kt):
    """Scaled entries of a fluid layer's matrix and the log of the scale."""
    rho, bulk, dd = el.density, el.bulk_modulus, el.thickness
    kz2 = omega**2 * rho / bulk - kt**2
    x = np.sqrt(kz2 + 0j)
    x *= dd
    # cos and sinc are even in x: take the root with Im x >= 0, so that exp(j x) decays;
    # with y = Im x, e1 = exp(j x - y) and e2 = exp(-j x - y) are bounded by 1
    np.negative(x, out=x, where=x.imag < 0)
    y = x.imag.copy()
    e2 = np.exp(-1j * x.real)           # exp(-j x - y)
    e1 = e2.conj()
    e1 *= np.exp(-2 * y)                # exp(j x - y)
    cs = (e1 + e2) / 2
    small = np.abs(x) < 1e-6
    sinc = (e1 - e2) / 2j               # sin(x) exp(-y)
    np.divide(sinc, x, out=sinc, where=~small)
    if small.any():
        sinc[small] = ((1 - x**2 / 6) * np.exp(-y))[small]
    m12 = 1j * omega * rho * dd * sinc
    m21 = 1j * kz2 * dd * sinc / (omega * rho)
    return cs, m12, m21, y


def cascade(elements, omega, kt):
    """Product of the elements' matrices as scaled arrays ``(a, b, c, d, log_scale)``.

    Parameters
    ----------
    elements : sequence of SheetElement or FluidElement
        Source side first.
    omega : ndarray (nf, 1); kt : ndarray (nf, nth)

    Returns
    -------
    a, b, c, d : complex ndarrays (nf, nth); log_scale : float ndarray (nf, nth)
        The true product is ``exp(log_scale) * [[a, b], [c, d]]``.
    """
    shape = np.broadcast_shapes(np.shape(omega), np.shape(kt))
    a = np.ones(shape, complex)
    b = np.zeros(shape, complex)
    c = np.zeros(shape, complex)
    d = np.ones(shape, complex)
    log_scale = np.zeros(shape)
    for el in elements:  # loop over layers; every operation is over (nf, nth)
        if isinstance(el, SheetElement):
            z = el.impedance
            b = a * z + b
            d = c * z + d
        elif isinstance(el, FluidElement):
            if el.thickness == 0.0:
                continue
            m11, m12, m21, y = _fluid_matrix(el, omega, kt)
            a, b = a * m11 + b * m21, a * m12 + b * m11
            c, d = c * m11 + d * m21, c * m12 + d * m11
            log_scale = log_scale + y
        else:
            raise TypeError(f"unknown element {type(el).__name__}")
    return a, b, c, d, log_scale


@dataclass(frozen=True)
class Stack:
    """Layers from the source (exterior) side to the receiving (cabin) side.

    Parameters
    ----------
    layers : tuple of Layer
    source_air, receiver_air : Air
        The semi-infinite air on each side.
    cavity_air : Air or None
        Air filling gaps and pores; defaults to ``receiver_air`` (a sidewall cavity is
        vented to the cabin).
    labels : tuple of str
        A display name per layer.
    bonding : tuple of str
        Per layer, ``"bonded"`` (default) or ``"unbonded"`` to the previous layer; it
        matters where elastic layers (solid, Biot) meet, see :mod:`noisebudget.multilayer`.
    panel : Panel or None, keyword only
        The bay the stack fills; with it, incidence averages include the finite-size
        radiation correction. ``None``: an infinite stack.

    Notes
    -----
    The stack mounts its layers once (:attr:`mounted_layers`): a curved skin without a
    given tension takes it from ``receiver_air.pressure - source_air.pressure``. The
    layers themselves stay as given.
    """

    layers: tuple = ()
    source_air: Air = field(default_factory=Air)
    receiver_air: Air | None = None
    cavity_air: Air | None = None
    labels: tuple = ()
    bonding: tuple = ()
    _: KW_ONLY
    panel: Panel | None = None

    def __post_init__(self):
        object.__setattr__(self, "layers", tuple(self.layers))
        if self.receiver_air is None:
            object.__setattr__(self, "receiver_air", self.source_air)
        if self.cavity_air is None:
            object.__setattr__(self, "cavity_air", self.receiver_air)
        if len(self.labels) != len(self.layers):
            object.__setattr__(self, "labels", tuple(
                getattr(layer, "type_name", "layer") for layer in self.layers))
        for layer in self.layers:
            if not isinstance(layer, Layer):
                raise TypeError(f"not a layer: {layer!r}")
        bonding = tuple(self.bonding) + ("bonded",) * (len(self.layers) - len(self.bonding))
        object.__setattr__(self, "bonding", bonding[:len(self.layers)])
        for b in self.bonding:
            if b not in multilayer.BONDING:
                raise ValueError(f"bonding must be one of {multilayer.BONDING}, got {b!r}")
        if self.panel is not None and not isinstance(self.panel, Panel):
            raise TypeError(f"not a Panel: {self.panel!r}")
        dp = self.receiver_air.pressure - self.source_air.pressure
        object.__setattr__(self, "_mounted",
                           tuple(layer.pressurised(dp) for layer in self.layers))
        # elastic layers (solid, Biot) need the general solve; the rest the 2x2 cascade
        object.__setattr__(self, "_general", multilayer.needs_general_solve(self.layers))

    @property
    def mounted_layers(self) -> tuple:
        """The layers as mounted in this stack (pressurisation tension resolved)."""
        return self._mounted

    @property
    def isotropic(self) -> bool:
        """False when a layer's response depends on the trace wave's azimuth."""
        return all(layer.isotropic for layer in self._mounted)

    @property
    def areal_mass(self) -> float:
        """Total mass per unit area in kg/m^2."""
        return float(sum(layer.areal_mass for layer in self.layers))

    @property
    def thickness(self) -> float:
        """Total thickness in m."""
        return float(sum(layer.thickness for layer in self.layers))

    def with_panel(self, width: float, height: float) -> Stack:
        """The same stack filling a bay of ``width`` x ``height`` m."""
        return replace(self, panel=Panel(width, height))

    def reversed(self) -> Stack:
        """The same layers seen from the other side, the two airs swapped; each contact
        keeps its bonding and the layers keep the tension they have mounted here."""
        bonding = self.bonding[:1] + self.bonding[1:][::-1]  # each contact keeps its kind
        return replace(self, layers=self._mounted[::-1], labels=self.labels[::-1],
                       source_air=self.receiver_air, receiver_air=self.source_air,
                       bonding=bonding)

    def _elements(self, layers, omega, kt, azimuth):
        air = self.cavity_air
        return [layer.element(omega, kt, air) if layer.isotropic
                else layer.element(omega, kt, air, azimuth) for layer in layers]

    def _receiver_kz(self, omega, theta):
        """The receiving air's normal wavenumber for source-side angles theta.

        ``kz2 = sqrt(k2^2 - k1^2 sin^2 theta)`` is formed as ``k2^2 - k1^2 + (k1 cos)^2``,
        exact at grazing in equal air, and taken as ``-j |.|`` where evanescent.
        """
        k1 = omega / self.source_air.sound_speed
        arg2 = ((omega / self.receiver_air.sound_speed) ** 2 - k1**2
                + (k1 * np.cos(theta)) ** 2)
        return np.where(arg2 >= 0, np.sqrt(np.abs(arg2)) + 0j, -1j * np.sqrt(np.abs(arg2)))

    def _matrices(self, omega, theta, azimuth=None):
        """The cascade ``(a, b, c, d, log_scale)`` and the receiving air's normal
        wavenumber for omega (nf, 1) and source-side angles theta (nf or 1, nth); with
        ``azimuth`` broadcasting against them, direction-dependent layers get it."""
        kt = omega / self.source_air.sound_speed * np.sin(theta)
        elements = self._elements(self._mounted, omega, kt, azimuth)
        return cascade(elements, omega, kt), self._receiver_kz(omega, theta)

    def _radiated(self, kt, y2, radiation):
        """The receiving side's radiated share: ``Re Y2`` for the infinite stack,
        ``rho2 c2 |Y2|^2 sigma`` for a bay (``radiation(kt)`` gives sigma)."""
        if radiation is None:
            return y2.real
        return (self.receiver_air.impedance * (y2.real**2 + y2.imag**2)) * radiation(kt)

    def _tau(self, omega, theta, azimuth=None, radiation=None):
        """tau for omega (nf, 1) and source-side angles theta (nf, nth) or (1, nth), at
        the azimuth ``azimuth`` (broadcasting) for direction-dependent layers; with
        ``radiation`` (sigma of the trace wavenumber) the radiated side is a bay's."""
        kt = None if radiation is None else omega / self.source_air.sound_speed * np.sin(theta)
        if self._general:
            if radiation is None:
                return self._solve_blocks(lambda w, th, az: multilayer.solve_angles(
                    self, w, th, azimuth=az).tau, omega, theta, azimuth)
            t = self._solve_blocks(lambda w, th, az: multilayer.solve_angles(
                self, w, th, azimuth=az).transmission, omega, theta, azimuth)
            y1 = np.cos(theta) / self.source_air.impedance
            y2 = self._receiver_kz(omega, theta) / (omega * self.receiver_air.density)
            with np.errstate(under="ignore"):
                return (t.real**2 + t.imag**2) * self._radiated(kt, y2, radiation) / y1
        (a, b, c, d, log_scale), kz2 = self._matrices(omega, theta, azimuth)
        y1 = np.cos(theta) / self.source_air.impedance
        y2 = kz2 / (omega * self.receiver_air.density)
        den = a * y1 + b * y1 * y2 + c + d * y2
        with np.errstate(under="ignore"):
            return (4 * y1 * self._radiated(kt, y2, radiation) / np.abs(den) ** 2
                    * np.exp(-2 * log_scale))

    @staticmethod
    def _solve_blocks(fn, omega, theta, azimuth):
        """``fn(omega, theta, azimuth)`` of the general solve over blocks of leading rows
        (frequencies), so that its temporaries (a few 8 x 8 matrices per point) stay
        bounded; each point is solved on its own, so blocks change no value."""
        shapes = [np.shape(x) for x in (omega, theta, azimuth) if x is not None]
        shape = np.broadcast_shapes(*shapes)
        if not shape or np.prod(shape) <= _SOLVE_POINTS:
            return fn(omega, theta, azimuth)
        n = shape[0]
        rows = max(1, _SOLVE_POINTS // int(np.prod(shape[1:])))

        def part(x, i):
            if x is None or np.ndim(x) < len(shape) or np.shape(x)[0] != n:
                return x
            return x[i:i + rows]

        return np.concatenate([np.broadcast_to(fn(part(omega, i), part(theta, i),
                                                  part(azimuth, i)),
                                               (min(rows, n - i), *shape[1:]))
                               for i in range(0, n, rows)])

    def _azimuth_sheet(self, backing: str = "receiver") -> int | None:
        """Index of the single direction-dependent sheet whose impedance is a
        polynomial in cos^2(phi) (closed-form azimuth average), else None (several
        direction-dependent layers, or, in the general solve of elastic layers, a sheet
        bonded to a frame or a rigid backing: the nested average)."""
        which = [i for i, layer in enumerate(self._mounted) if not layer.isotropic]
        if len(which) != 1 or not hasattr(self._mounted[which[0]], "azimuth_polynomial"):
            return None
        if self._general and (backing != "receiver" or not multilayer.sheet_between_fluids(
                self._mounted, self.bonding, which[0])):
            return None
        return which[0]

    def _sheet_moebius(self, omega, theta, sheet: int, reflection: bool = False):
        """``(t0, kappa, r0, b)`` with ``t(Z) = t0 / (1 + kappa Z)`` and ``r(Z) = (r0 + b Z)
        / (1 + kappa Z)`` for the impedance Z of the sheet ``sheet`` (between fluid media,
        :func:`noisebudget.multilayer.sheet_between_fluids`). Arrays (nf, nth).

        Two general solves, Z = 0 and ``Z_ref = j omega m + rho1 c1`` (m the sheet's areal
        mass: the scale of its impedance), give ``kappa = (t0 / t_ref - 1) / Z_ref`` and
        ``b``. A sheet facing the source air needs one: behind it the stack has the input
        impedance ``Zr = (1 + r0) / ((1 - r0) Y1)`` (the Z = 0 solve's surface impedance),
        the sheet's velocity is ``2 Y1 p_i / (1 + Y1 (Zr + Z))``, so
        ``kappa = Y1 / (1 + Y1 Zr) = Y1 (1 - r0) / 2`` with ``Y1 = cos(theta) / (rho1 c1)``
        (``r0``, ``b`` are then None unless ``reflection``).
        """
        nf = omega.shape[0]
        theta = np.broadcast_to(theta, (nf, np.shape(theta)[-1]))
        zref = 1j * omega * self._mounted[sheet].areal_mass + self.source_air.impedance
        one = sheet == 0 and not reflection
        rows = max(1, _SOLVE_POINTS // ((1 if one else 2) * theta.shape[1]))
        t, t_ref, r, r_ref = [], [], [], []
        for i in range(0, nf, rows):  # blocks of frequencies bound the solve's memory
            w, th, zr = omega[i:i + rows], theta[i:i + rows], zref[i:i + rows]
            n = len(w)
            z = np.zeros_like(zr) if one else np.concatenate([np.zeros_like(zr), zr])
            res = multilayer.solve_angles(self, w if one else np.concatenate([w, w]),
                                          th if one else np.concatenate([th, th]),
                                          override={sheet: SheetElement(z)})
            t.append(res.transmission[:n])
            t_ref.append(res.transmission[n:])
            r.append(res.reflection[:n])
            r_ref.append(res.reflection[n:])
        t, t_ref, r, r_ref = (np.concatenate(x) for x in (t, t_ref, r, r_ref))
        if one:
            return t, np.cos(theta) / self.source_air.impedance * (1 - r) / 2, None, None
        with np.errstate(divide="ignore", invalid="ignore", under="ignore"):
            seen = t_ref != 0   # where the transmitted wave underflows, so does t0
            kappa = np.where(seen, (t / np.where(seen, t_ref, 1.0) - 1) / zref, 0.0)
            t0 = np.where(seen, t, 0.0)
            b = (r_ref * (1 + kappa * zref) - r) / zref
        return t0, kappa, r, b

    def _tau_azimuth_mean_general(self, omega, theta, sheet: int, radiation=None):
        """Azimuth-averaged tau of a general-solve stack whose direction-dependent sheet
        meets fluid media on both faces: ``t = t0 / (1 + kappa Z)``
        (:meth:`_sheet_moebius`), so ``E|t|^2 = |t0|^2 E|1 + kappa Z(x)|^-2`` in closed
        form (:func:`noisebudget.incidence.azimuth_mean_inverse_square`)."""
        kt = omega / self.source_air.sound_speed * np.sin(theta)
        t0, kappa, _, _ = self._sheet_moebius(omega, theta, sheet)
        z0, z1, z2 = self._mounted[sheet].azimuth_polynomial(omega, kt, self.cavity_air)
        mean = azimuth_mean_inverse_square(1 + kappa * z0, kappa * z1, kappa * z2)
        y1 = np.cos(theta) / self.source_air.impedance
        y2 = self._receiver_kz(omega, theta) / (omega * self.receiver_air.density)
        with np.errstate(under="ignore", divide="ignore", invalid="ignore"):
            tau = (t0.real**2 + t0.imag**2) * mean * self._radiated(kt, y2, radiation) / y1
        return np.minimum(np.where(y1 > 0, tau, 0.0), 1.0)

    def _tau_azimuth_mean(self, omega, theta, sheet: int, radiation=None):
        """Azimuth-averaged tau, ``(2/pi) int_0^(pi/2) tau dphi``, in closed form.

        ``den = alpha + beta Z(x)`` with ``beta = (L11 Y1 + L21)(R21 + R22 Y2)``, and
        ``Z = z0 + z1 x + z2 x^2`` (``x = cos^2 phi``) the sheet's impedance. A stack of
        the general solve goes to :meth:`_tau_azimuth_mean_general`.
        """
        if self._general:
            return self._tau_azimuth_mean_general(omega, theta, sheet, radiation)
        kt = omega / self.source_air.sound_speed * np.sin(theta)
        layer = self._mounted[sheet]
        y1 = np.cos(theta) / self.source_air.impedance
        y2 = self._receiver_kz(omega, theta) / (omega * self.receiver_air.density)
        ra, rb, rc, rd, sr = cascade(self._elements(self._mounted[sheet + 1:], omega, kt,
                                                    None), omega, kt)
        back = rc + rd * y2
        if sheet == 0:  # the skin faces the source: nothing in front of it
            alpha = (ra + rb * y2) * y1 + back
            beta = y1 * back
            scale = sr
        else:
            la, lb, lc, ld, sl = cascade(self._elements(self._mounted[:sheet], omega, kt,
                                                        None), omega, kt)
            front = ra + rb * y2
            alpha = (la * y1 + lc) * front + (lb * y1 + ld) * back
            beta = (la * y1 + lc) * back
            scale = sl + sr
        z0, z1, z2 = layer.azimuth_polynomial(omega, kt, self.cavity_air)
        mean = azimuth_mean_inverse_square(alpha + beta * z0, beta * z1, beta * z2)
        with np.errstate(under="ignore"):
            tau = (4 * y1 * self._radiated(kt, y2, radiation) * mean
                   * np.exp(-2 * scale))
        return np.minimum(tau, 1.0)

    def _warn_ranges(self, f):
        """One ``ModelRangeWarning`` per layer used outside its model's range at ``f``."""
        for i, (layer, label) in enumerate(zip(self.layers, self.labels, strict=True)):
            note = getattr(layer, "range_note", None)
            text = note(f, self.cavity_air) if note else None
            if text:
                warnings.warn(f"layer[{i + 1}] ({label}): {text}", ModelRangeWarning,
                              stacklevel=3)

    def transmission_coefficient(self, f_hz, theta_rad, azimuth_rad=0.0) -> np.ndarray:
        """Power transmission coefficient of the infinite stack, tau(f, theta[, phi]).

        Parameters
        ----------
        f_hz : array_like (nf,)
            Frequencies in Hz, 1 mHz .. 100 kHz (:mod:`noisebudget.checks`).
        theta_rad : array_like (nth,)
            Angles of incidence from the normal on the source side, 0 .. pi/2.
        azimuth_rad : float or array_like (nphi,)
            Azimuth of the trace wave from the axial direction (the hoop direction is
            pi/2). A scalar gives shape (nf, nth); a 1-D array (nf, nth, nphi). Only
            direction-dependent layers use it (see :attr:`isotropic`).

        Returns
        -------
        ndarray (nf, nth) or (nf, nth, nphi)
        """
        f = checks.frequencies(f_hz)
        th = checks.angles(theta_rad, nf=f.size)
        phi = checks.azimuths(azimuth_rad, points=f.size * th.size)
        self._warn_ranges(f)
        if np.ndim(phi) == 0:
            rows = max(1, 2_000_000 // th.size)  # bounded temporaries; loop over blocks
            return np.concatenate([self._tau(2 * np.pi * f[i:i + rows, None], th[None, :],
                                             phi) for i in range(0, f.size, rows)])
        rows = max(1, 2_000_000 // (th.size * phi.size))
        out = []
        for i in range(0, f.size, rows):  # loop over blocks of frequencies only
            tau = self._tau(2 * np.pi * f[i:i + rows, None, None], th[None, :, None],
                            phi[None, None, :])
            out.append(np.broadcast_to(tau, (min(rows, f.size - i), th.size, phi.size)))
        return np.concatenate(out)

    def sharp_trace_wavenumbers(self, omega, azimuth=None) -> np.ndarray | None:
        """Split points for the angle quadrature, (nf, p): every layer's sharp trace
        wavenumbers (direction-dependent layers at ``azimuth``, or at the azimuths that
        bound their features), and the receiving air's wavenumber when it is below the
        source's (beyond that critical angle the transmitted wave is evanescent: tau has
        a square-root edge there and is zero past it)."""
        parts = []
        for layer in self._mounted:
            r = (layer.trace_resonances(omega) if layer.isotropic
                 else layer.trace_resonances(omega, azimuth))
            if r is not None:
                parts.append(r)
        if self.receiver_air.sound_speed > self.source_air.sound_speed:
            parts.append(omega / self.receiver_air.sound_speed)
        if not parts:
            return None
        return np.concatenate([np.broadcast_to(r, (omega.shape[0], r.shape[-1]))
                               for r in parts], axis=1)

    def _radiation(self, omega, theta_max):
        """The bay's radiation table over the trace wavenumbers up to ``theta_max``."""
        if self.panel is None:
            return None
        k1 = omega[:, 0] / self.source_air.sound_speed
        return self.panel.radiation_table(omega[:, 0] / self.receiver_air.sound_speed,
                                          k1 * np.sin(theta_max))

    def _azimuth_paris(self, value, omega, theta_max, rtol):
        """``(2/pi) int_0^(pi/2)`` of the Paris average of ``value(rows, om, theta,
        azimuth)`` at each azimuth: adaptive in azimuth and, at each azimuth, in angle
        (split at that azimuth's own sharp trace wavenumbers)."""
        k1 = omega[:, 0] / self.source_air.sound_speed

        def at_azimuths(rows, phi):
            n, m = phi.shape
            fi = np.repeat(rows, m)
            az = phi.reshape(-1, 1)
            om = omega[fi]
            sharp = self.sharp_trace_wavenumbers(om, az)
            out = paris_average(lambda r, th: value(fi[r], om[r], th, az[r]), k1[fi], sharp,
                                theta_max, rtol)
            return out.reshape(n, m)

        return azimuth_average(at_azimuths, omega.shape[0], rtol)

    def average_transmission(self, f_hz, incidence: str = "field",
                             theta_max_deg: float | None = None, rtol: float = 3e-3):
        """Incidence-averaged transmission coefficient, shape (nf,).

        ``normal`` evaluates theta = 0; ``field`` (default limit 78 deg) and ``diffuse``
        (90 deg) apply Paris' formula with the adaptive quadrature of
        :func:`noisebudget.incidence.paris_average_critical` (through
        :mod:`noisebudget.batch`, this stack as a batch of one) to relative accuracy
        ``rtol``, over the azimuth too when the stack is not :attr:`isotropic` (in closed
        form for one direction-dependent sheet, else nested). With a :attr:`panel`,
        the radiated side is windowed to the bay (normal incidence too); a bay's
        radiation efficiency can exceed 1 (a baffled piston's peaks near
        ``k sqrt(S) = 4``), so a nearly transparent stack in a bay is held at ``tau = 1``.
        """
        f = checks.frequencies(f_hz)
        self._warn_ranges(f)
        return self._average(f, incidence, theta_max_deg, rtol)

    def _average(self, f, incidence, theta_max_deg, rtol):
        """:meth:`average_transmission` for checked frequencies, without warnings: the
        batched kernel of :mod:`noisebudget.batch` (this stack as a batch of one), or
        :meth:`_average_nested` for stacks it does not take."""
        if batch.batchable(self):
            return batch.average_transmissions([self], f, incidence, theta_max_deg, rtol,
                                               warn=False)[0]
        return self._average_nested(f, incidence, theta_max_deg, rtol)

    def _average_nested(self, f, incidence, theta_max_deg, rtol):
        """Incidence average by the stack's own route, frequency block by block: the
        cascade or the general solve, and the nested azimuth average where a closed form
        is missing."""
        if incidence not in INCIDENCE:
            raise ValueError(f"incidence must be one of {INCIDENCE}, got {incidence!r}")
        if incidence == "normal":
            # at normal incidence no layer depends on the azimuth (kt = 0)
            omega = 2 * np.pi * f[:, None]
            if self.panel is None:
                return self._tau(omega, np.zeros((1, 1)))[:, 0]
            k2 = omega / self.receiver_air.sound_speed
            return np.minimum(self._tau(omega, np.zeros((1, 1)), 0.0, lambda kt: (
                self.panel.radiation_efficiency(k2, kt)))[:, 0], 1.0)
        if theta_max_deg is None:
            theta_max_deg = default_theta_max_deg(incidence)
        if not 0.0 < theta_max_deg <= 90.0:
            raise checks.ArgumentError(f"theta_max_deg = {theta_max_deg}: must lie in "
                                       f"(0, 90]")
        theta_max = np.radians(theta_max_deg)
        sheet = None if self.isotropic else self._azimuth_sheet()
        out = []
        for i in range(0, f.size, _CHUNK):  # blocks of frequencies bound the memory
            omega = 2 * np.pi * f[i:i + _CHUNK, None]
            out.append(self._average_block(omega, theta_max, rtol, sheet))
        return np.concatenate(out)

    def _average_block(self, omega, theta_max, rtol, sheet):
        """Paris average of one block of frequencies omega (nf, 1): over the angle, and
        over the azimuth where a layer depends on it (closed form for one such sheet)."""
        k0 = omega[:, 0] / self.source_air.sound_speed
        table = self._radiation(omega, theta_max)

        def bay(rows):
            return None if table is None else (lambda kt: table(rows, kt))

        if self.isotropic:
            tau = paris_average(lambda rows, theta: self._tau(omega[rows], theta,
                                                              radiation=bay(rows)),
                                k0, self.sharp_trace_wavenumbers(omega), theta_max, rtol)
        elif sheet is not None:
            tau = paris_average(lambda rows, theta: self._tau_azimuth_mean(
                omega[rows], theta, sheet, bay(rows)), k0, self.sharp_trace_wavenumbers(omega),
                theta_max, rtol)
        else:
            tau = self._azimuth_paris(lambda rows, om, th, az: self._tau(om, th, az,
                                                                         bay(rows)),
                                      omega, theta_max, rtol)
        return tau if table is None else np.minimum(tau, 1.0)

    def transmission_loss(self, f_hz, incidence: str = "field",
                          theta_max_deg: float | None = None, rtol: float = 3e-3):
        """Transmission loss ``TL = -10 lg tau`` in dB, shape (nf,), capped at 300 dB."""
        tau = self.average_transmission(f_hz, incidence, theta_max_deg, rtol)
        return -10 * np.log10(np.maximum(tau, 10 ** (-TL_CAP_DB / 10)))

    def band_transmission_loss(self, bands: Bands, incidence: str = "field",
                               theta_max_deg: float | None = None,
                               rtol: float = 3e-3) -> np.ndarray:
        """Band TL: the incidence-averaged tau averaged as energy over each band.

        Uses :func:`noisebudget.bands.band_average` (9 frequencies per one-third octave
        to start, 19 and then bisected panels where the band holds a resonance or
        coincidence); never an average of dB. The
        angle integral inside runs at ``3 rtol``: the frequency integral averages its
        (conservatively estimated) error further.
        """
        edges = checks.frequencies(np.concatenate([bands.lower, bands.upper]), "band edges")
        self._warn_ranges(edges)
        tau = batch.band_transmissions([self], bands, incidence, theta_max_deg, rtol,
                                       warn=False)[0]
        return -10 * np.log10(np.maximum(tau, 10 ** (-TL_CAP_DB / 10)))

    @classmethod
    def band_transmission_losses(cls, stacks, bands: Bands, incidence: str = "field",
                                 theta_max_deg: float | None = None,
                                 rtol: float = 3e-3) -> np.ndarray:
        """Band TL of many stacks at once, shape (nv, nb), each row bit for bit that
        stack's :meth:`band_transmission_loss`: stacks of one structure (variants of a
        trade study) are computed as one batch (:mod:`noisebudget.batch`)."""
        tau = batch.band_transmissions(stacks, bands, incidence, theta_max_deg, rtol)
        return -10 * np.log10(np.maximum(tau, 10 ** (-TL_CAP_DB / 10)))

    @classmethod
    def average_transmissions(cls, stacks, f_hz, incidence: str = "field",
                              theta_max_deg: float | None = None,
                              rtol: float = 3e-3) -> np.ndarray:
        """Incidence-averaged tau of many stacks at once, shape (nv, nf), each row bit for
        bit that stack's :meth:`average_transmission` (batched as
        :meth:`band_transmission_losses`)."""
        return batch.average_transmissions(stacks, f_hz, incidence, theta_max_deg, rtol)

    def _surface(self, omega, theta, backing, azimuth=None):
        """Normal surface impedance for omega (nf, 1) and angles theta (nf or 1, nth)."""
        if backing not in ("rigid", "receiver"):
            raise ValueError("backing must be 'rigid' or 'receiver'")
        if self._general:
            r = self._solve_blocks(lambda w, th, az: multilayer.solve_angles(
                self, w, th, backing, az).reflection, omega, theta, azimuth)
            with np.errstate(divide="ignore", invalid="ignore"):
                return (1 + r) / (1 - r) * self.source_air.impedance / np.cos(theta)
        (a, b, c, d, _), kz2 = self._matrices(omega, theta, azimuth)
        if backing == "rigid":
            return a / c
        with np.errstate(divide="ignore", invalid="ignore"):
            z2 = omega * self.receiver_air.density / kz2
            return (a * z2 + b) / (c * z2 + d)

    def _alpha(self, omega, theta, backing, azimuth=None):
        zs = self._surface(omega, theta, backing, azimuth) * np.cos(theta)
        z0 = self.source_air.impedance
        return 1 - np.abs((zs - z0) / (zs + z0)) ** 2

    def surface_impedance(self, f_hz, theta_rad=0.0, backing: str = "rigid",
                          azimuth_rad: float = 0.0) -> np.ndarray:
        """Normal surface impedance ``Zs = p1 / v1`` seen from the source side, (nf, nth).

        ``backing="rigid"`` closes the last layer with a rigid wall (``v2 = 0``, so
        ``Zs = T11 / T21``); ``"receiver"`` with the receiving half-space (``p2 = Z2 v2``,
        ``Zs = (T11 Z2 + T12) / (T21 Z2 + T22)``). ``azimuth_rad`` (scalar) is the trace
        wave's azimuth for direction-dependent layers.
        """
        f = checks.frequencies(f_hz)
        th = checks.angles(theta_rad, nf=f.size)[None, :]
        phi = checks.azimuths(azimuth_rad, scalar=True)
        self._warn_ranges(f)
        return self._surface(2 * np.pi * f[:, None], th, backing, phi)

    def absorption_coefficient(self, f_hz, theta_rad=0.0, backing: str = "rigid",
                               azimuth_rad: float = 0.0):
        """Absorption ``1 - |(Zs cos(theta) - Z0) / (Zs cos(theta) + Z0)|^2``, (nf, nth).

        With ``backing="receiver"`` the energy transmitted through counts as absorbed, as
        it does for the room on the source side. ``azimuth_rad`` (scalar) as in
        :meth:`surface_impedance`.
        """
        f = checks.frequencies(f_hz)
        th = checks.angles(theta_rad, nf=f.size)[None, :]
        phi = checks.azimuths(azimuth_rad, scalar=True)
        self._warn_ranges(f)
        return self._alpha(2 * np.pi * f[:, None], th, backing, phi)

    def _alpha_azimuth_mean(self, omega, theta, backing, sheet: int):
        """Azimuth-averaged absorption in closed form (one direction-dependent sheet).

        The surface impedance is a Moebius function of the sheet's impedance Z:
        ``Zs = (A + B Z) / (C + E Z)`` with ``A = L11 u + L12 w``, ``B = L11 w``,
        ``C = L21 u + L22 w``, ``E = L21 w`` and ``(u, w)`` the state in front of the
        layers R behind the sheet (``R (1, Y2)`` into the receiving air, ``R (1, 0)``
        against a rigid wall); so is the reflection factor. In the general solve (the sheet
        between fluid media, receiver backing) the reflection factor is
        ``(r0 + b Z) / (1 + kappa Z)`` from :meth:`_sheet_moebius`.
        """
        if backing not in ("rigid", "receiver"):
            raise ValueError("backing must be 'rigid' or 'receiver'")
        kt = omega / self.source_air.sound_speed * np.sin(theta)
        if self._general:  # the sheet between fluids, into the receiver (_azimuth_sheet)
            _, kappa, r0, b = self._sheet_moebius(omega, theta, sheet, reflection=True)
            zz = self._mounted[sheet].azimuth_polynomial(omega, kt, self.cavity_air)
            return 1 - azimuth_mean_ratio_square(
                (r0 + b * zz[0], b * zz[1], b * zz[2]),
                (1 + kappa * zz[0], kappa * zz[1], kappa * zz[2]))
        ra, rb, rc, rd, _ = cascade(self._elements(self._mounted[sheet + 1:], omega, kt,
                                                   None), omega, kt)
        la, lb, lc, ld, _ = cascade(self._elements(self._mounted[:sheet], omega, kt, None),
                                    omega, kt)
        if backing == "receiver":
            y2 = self._receiver_kz(omega, theta) / (omega * self.receiver_air.density)
            u, w = ra + rb * y2, rc + rd * y2
        else:
            u, w = ra, rc
        a, b, c, e = la * u + lb * w, la * w, lc * u + ld * w, lc * w
        cos, z0 = np.cos(theta), self.source_air.impedance
        zz = self._mounted[sheet].azimuth_polynomial(omega, kt, self.cavity_air)
        p, q = cos * a - z0 * c, cos * b - z0 * e
        s, t = cos * a + z0 * c, cos * b + z0 * e
        reflected = azimuth_mean_ratio_square((p + q * zz[0], q * zz[1], q * zz[2]),
                                              (s + t * zz[0], t * zz[1], t * zz[2]))
        return 1 - reflected

    def random_incidence_absorption(self, f_hz, backing: str = "receiver",
                                    rtol: float = 3e-3) -> np.ndarray:
        """Paris-averaged absorption over 0-90 deg, shape (nf,).

        ``alpha_rand = 2 int alpha(theta) sin(theta) cos(theta) dtheta`` (Kuttruff, Room
        Acoustics), with the adaptive quadrature of the transmission loss (and over the
        azimuth when the stack is not :attr:`isotropic`). The bay correction is not
        applied to absorption.
        """
        f = checks.frequencies(f_hz)
        self._warn_ranges(f)
        omega = 2 * np.pi * f[:, None]
        k0 = omega[:, 0] / self.source_air.sound_speed
        if self.isotropic:
            out = paris_average(lambda rows, theta: self._alpha(omega[rows], theta, backing),
                                k0, self.sharp_trace_wavenumbers(omega), np.pi / 2, rtol)
        elif (sheet := self._azimuth_sheet(backing)) is not None:
            out = paris_average(lambda rows, theta: self._alpha_azimuth_mean(
                omega[rows], theta, backing, sheet), k0, self.sharp_trace_wavenumbers(omega),
                np.pi / 2, rtol)
        else:
            out = self._azimuth_paris(lambda rows, om, th, az: self._alpha(om, th, backing, az),
                                      omega, np.pi / 2, rtol)
        return np.clip(out, 0.0, 1.0)
