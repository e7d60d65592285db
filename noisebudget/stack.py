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
``tau = |2 / (T11 + T12 cos(theta)/Z0 + T21 Z0/cos(theta) + T22)|^2``.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from . import checks, multilayer
from .bands import Bands, band_average
from .errors import ModelRangeWarning
from .incidence import INCIDENCE, default_theta_max_deg, paris_average
from .layers.base import FluidElement, Layer, SheetElement
from .media import Air

__all__ = ["Stack", "cascade", "TL_CAP_DB"]

TL_CAP_DB = 300.0  # transmission losses are capped here (tau floor 1e-30)
_CHUNK = 2048      # frequencies per angle-quadrature call: bounds the working memory


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
    """

    layers: tuple = ()
    source_air: Air = field(default_factory=Air)
    receiver_air: Air | None = None
    cavity_air: Air | None = None
    labels: tuple = ()
    bonding: tuple = ()

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
        # elastic layers (solid, Biot) need the general solve; the rest the 2x2 cascade
        object.__setattr__(self, "_general", multilayer.needs_general_solve(self.layers))

    @property
    def areal_mass(self) -> float:
        """Total mass per unit area in kg/m^2."""
        return float(sum(layer.areal_mass for layer in self.layers))

    @property
    def thickness(self) -> float:
        """Total thickness in m."""
        return float(sum(layer.thickness for layer in self.layers))

    def reversed(self) -> Stack:
        """The same layers seen from the other side, the two airs swapped."""
        bonding = self.bonding[:1] + self.bonding[1:][::-1]  # each contact keeps its kind
        return replace(self, layers=self.layers[::-1], labels=self.labels[::-1],
                       source_air=self.receiver_air, receiver_air=self.source_air,
                       bonding=bonding)

    def _matrices(self, omega, theta):
        """The cascade ``(a, b, c, d, log_scale)`` and the receiving air's normal
        wavenumber for omega (nf, 1) and source-side angles theta (nf or 1, nth).

        ``kz2 = sqrt(k2^2 - k1^2 sin^2 theta)`` is formed as ``k2^2 - k1^2 + (k1 cos)^2``,
        exact at grazing in equal air, and taken as ``-j |.|`` where evanescent.
        """
        k1 = omega / self.source_air.sound_speed
        kt = k1 * np.sin(theta)
        elements = [layer.element(omega, kt, self.cavity_air) for layer in self.layers]
        arg2 = ((omega / self.receiver_air.sound_speed) ** 2 - k1**2
                + (k1 * np.cos(theta)) ** 2)
        kz2 = np.where(arg2 >= 0, np.sqrt(np.abs(arg2)) + 0j, -1j * np.sqrt(np.abs(arg2)))
        return cascade(elements, omega, kt), kz2

    def _tau(self, omega, theta):
        """tau for omega (nf, 1) and source-side angles theta (nf, nth) or (1, nth)."""
        if self._general:
            return multilayer.solve_angles(self, omega, theta).tau
        (a, b, c, d, log_scale), kz2 = self._matrices(omega, theta)
        y1 = np.cos(theta) / self.source_air.impedance
        y2 = kz2 / (omega * self.receiver_air.density)
        den = a * y1 + b * y1 * y2 + c + d * y2
        with np.errstate(under="ignore"):
            return 4 * y1 * y2.real / np.abs(den) ** 2 * np.exp(-2 * log_scale)

    def _warn_ranges(self, f):
        """One ``ModelRangeWarning`` per layer used outside its model's range at ``f``."""
        for i, (layer, label) in enumerate(zip(self.layers, self.labels, strict=True)):
            note = getattr(layer, "range_note", None)
            text = note(f, self.cavity_air) if note else None
            if text:
                warnings.warn(f"layer[{i + 1}] ({label}): {text}", ModelRangeWarning,
                              stacklevel=3)

    def transmission_coefficient(self, f_hz, theta_rad) -> np.ndarray:
        """Power transmission coefficient tau(f, theta), shape (nf, nth).

        Parameters
        ----------
        f_hz : array_like (nf,)
            Frequencies in Hz, 1 mHz .. 100 kHz (:mod:`noisebudget.checks`).
        theta_rad : array_like (nth,)
            Angles of incidence from the normal on the source side, 0 .. pi/2.
        """
        f = checks.frequencies(f_hz)
        th = checks.angles(theta_rad, nf=f.size)
        self._warn_ranges(f)
        rows = max(1, 2_000_000 // th.size)  # bounded temporaries; loop over blocks only
        return np.concatenate([self._tau(2 * np.pi * f[i:i + rows, None], th[None, :])
                               for i in range(0, f.size, rows)])

    def sharp_trace_wavenumbers(self, omega) -> np.ndarray | None:
        """Split points for the angle quadrature, (nf, p): every layer's sharp trace
        wavenumbers, and the receiving air's wavenumber when it is below the source's
        (beyond that critical angle the transmitted wave is evanescent: tau has a
        square-root edge there and is zero past it)."""
        parts = [r for layer in self.layers
                 if (r := layer.trace_resonances(omega)) is not None]
        if self.receiver_air.sound_speed > self.source_air.sound_speed:
            parts.append(omega / self.receiver_air.sound_speed)
        if not parts:
            return None
        return np.concatenate([np.broadcast_to(r, (omega.shape[0], r.shape[-1]))
                               for r in parts], axis=1)

    def average_transmission(self, f_hz, incidence: str = "field",
                             theta_max_deg: float | None = None, rtol: float = 3e-3):
        """Incidence-averaged transmission coefficient, shape (nf,).

        ``normal`` evaluates theta = 0; ``field`` (default limit 78 deg) and ``diffuse``
        (90 deg) apply Paris' formula with the adaptive quadrature of
        :func:`noisebudget.incidence.paris_average` to relative accuracy ``rtol``.
        """
        f = checks.frequencies(f_hz)
        self._warn_ranges(f)
        return self._average(f, incidence, theta_max_deg, rtol)

    def _average(self, f, incidence, theta_max_deg, rtol):
        """:meth:`average_transmission` for checked frequencies, without warnings."""
        if incidence not in INCIDENCE:
            raise ValueError(f"incidence must be one of {INCIDENCE}, got {incidence!r}")
        if incidence == "normal":
            return self._tau(2 * np.pi * f[:, None], np.zeros((1, 1)))[:, 0]
        if theta_max_deg is None:
            theta_max_deg = default_theta_max_deg(incidence)
        if not 0.0 < theta_max_deg <= 90.0:
            raise checks.ArgumentError(f"theta_max_deg = {theta_max_deg}: must lie in "
                                       f"(0, 90]")
        out = []
        for i in range(0, f.size, _CHUNK):  # blocks of frequencies bound the memory
            omega = 2 * np.pi * f[i:i + _CHUNK, None]
            k0 = omega[:, 0] / self.source_air.sound_speed
            out.append(paris_average(lambda rows, theta, w=omega: self._tau(w[rows], theta),
                                     k0, self.sharp_trace_wavenumbers(omega),
                                     np.radians(theta_max_deg), rtol))
        return np.concatenate(out)

    def transmission_loss(self, f_hz, incidence: str = "field",
                          theta_max_deg: float | None = None, rtol: float = 3e-3):
        """Transmission loss ``TL = -10 lg tau`` in dB, shape (nf,), capped at 300 dB."""
        tau = self.average_transmission(f_hz, incidence, theta_max_deg, rtol)
        return -10 * np.log10(np.maximum(tau, 10 ** (-TL_CAP_DB / 10)))

    def band_transmission_loss(self, bands: Bands, incidence: str = "field",
                               theta_max_deg: float | None = None,
                               rtol: float = 3e-3) -> np.ndarray:
        """Band TL: the incidence-averaged tau averaged as energy over each band.

        Uses :func:`noisebudget.bands.band_average` (one 15-point panel per one-third
        octave to start, refined where the band holds a resonance or coincidence); never
        an average of dB. The
        angle integral inside runs at ``3 rtol``: the frequency integral averages its
        (conservatively estimated) error further.
        """
        edges = checks.frequencies(np.concatenate([bands.lower, bands.upper]), "band edges")
        self._warn_ranges(edges)
        tau = band_average(lambda f: self._average(f, incidence, theta_max_deg, 3 * rtol),
                           bands, rtol)
        return -10 * np.log10(np.maximum(tau, 10 ** (-TL_CAP_DB / 10)))

    def _surface(self, omega, theta, backing):
        """Normal surface impedance for omega (nf, 1) and angles theta (nf or 1, nth)."""
        if backing not in ("rigid", "receiver"):
            raise ValueError("backing must be 'rigid' or 'receiver'")
        if self._general:
            r = multilayer.solve_angles(self, omega, theta, backing).reflection
            with np.errstate(divide="ignore", invalid="ignore"):
                return (1 + r) / (1 - r) * self.source_air.impedance / np.cos(theta)
        (a, b, c, d, _), kz2 = self._matrices(omega, theta)
        if backing == "rigid":
            return a / c
        with np.errstate(divide="ignore", invalid="ignore"):
            z2 = omega * self.receiver_air.density / kz2
            return (a * z2 + b) / (c * z2 + d)

    def _alpha(self, omega, theta, backing):
        zs = self._surface(omega, theta, backing) * np.cos(theta)
        z0 = self.source_air.impedance
        return 1 - np.abs((zs - z0) / (zs + z0)) ** 2

    def surface_impedance(self, f_hz, theta_rad=0.0, backing: str = "rigid") -> np.ndarray:
        """Normal surface impedance ``Zs = p1 / v1`` seen from the source side, (nf, nth).

        ``backing="rigid"`` closes the last layer with a rigid wall (``v2 = 0``, so
        ``Zs = T11 / T21``); ``"receiver"`` with the receiving half-space (``p2 = Z2 v2``,
        ``Zs = (T11 Z2 + T12) / (T21 Z2 + T22)``).
        """
        f = checks.frequencies(f_hz)
        th = checks.angles(theta_rad, nf=f.size)[None, :]
        self._warn_ranges(f)
        return self._surface(2 * np.pi * f[:, None], th, backing)

    def absorption_coefficient(self, f_hz, theta_rad=0.0, backing: str = "rigid"):
        """Absorption ``1 - |(Zs cos(theta) - Z0) / (Zs cos(theta) + Z0)|^2``, (nf, nth).

        With ``backing="receiver"`` the energy transmitted through counts as absorbed, as
        it does for the room on the source side.
        """
        f = checks.frequencies(f_hz)
        th = checks.angles(theta_rad, nf=f.size)[None, :]
        self._warn_ranges(f)
        return self._alpha(2 * np.pi * f[:, None], th, backing)

    def random_incidence_absorption(self, f_hz, backing: str = "receiver",
                                    rtol: float = 3e-3) -> np.ndarray:
        """Paris-averaged absorption over 0-90 deg, shape (nf,).

        ``alpha_rand = 2 int alpha(theta) sin(theta) cos(theta) dtheta`` (Kuttruff, Room
        Acoustics), with the adaptive quadrature of the transmission loss.
        """
        f = checks.frequencies(f_hz)
        self._warn_ranges(f)
        omega = 2 * np.pi * f[:, None]
        k0 = omega[:, 0] / self.source_air.sound_speed
        out = paris_average(lambda rows, theta: self._alpha(omega[rows], theta, backing), k0,
                            self.sharp_trace_wavenumbers(omega), np.pi / 2, rtol)
        return np.clip(out, 0.0, 1.0)
