"""Finite bays: the radiation efficiency of a plane trace wave windowed by a baffled
rectangle, for the finite-size correction of transmission (spatial windowing).

Time convention ``exp(+j omega t)``; the quantities here are real.

Spatial windowing (Villot, Guigou & Gagliardini, J. Sound Vib. 245 (2001) 433-455): the
velocity field of the infinite stack under a plane wave of trace wavenumber ``kt`` is
kept only on the bay (width a, height b), set in a rigid baffle, and radiates from
there. Its radiation efficiency, with ``W`` the Fourier transform of the bay and
``R(r) = (a - |x|)(b - |y|)`` its autocorrelation, is::

    sigma(kt, phi) = k / (4 pi^2 S) int_(|kappa| < k) |W(kappa - kt)|^2 / kz d^2 kappa
                   = k / (2 pi S) int R(r) cos(kt . r) sin(k r) / r d^2 r

(the second form from ``int_(|kappa|<k) exp(-j kappa . r) / kz d^2 kappa = 2 pi sin(kr) / r``).
Averaged over the direction of the trace wave relative to the bay's sides,
``cos(kt . r) -> J0(kt r)`` and the integral over the direction of r leaves one radial
integral::

    sigma(k, kt) = k / (2 pi S) int_0^D P(r) J0(kt r) sin(k r) dr,
    P(r) = int_0^2pi R(r, psi) dpsi,   D = sqrt(a^2 + b^2),

with ``P(r) = 2 pi a b - 4 (a + b) r + 2 r^2`` for ``r <= min(a, b)`` and a closed form
beyond. Limits: ``k / kz = 1 / cos(theta)`` for a large bay; ``k^2 S / (2 pi)`` (the
baffled piston) for a small one. Only the radiated (receiving) side is windowed: the
incident power is the plane wave's over the bay, ``I S cos(theta)``, and the velocity is
the infinite stack's. That is the convention that reproduces, for a limp panel,
Sewell's finite-panel mass law (J. Sound Vib. 12 (1970) 21-32); windowing the
excitation side as well (the other published convention) gives several dB more
transmission loss at low frequency.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = ["MAX_BAY_SIDE_M", "Panel", "RadiationTable", "window_angular_integral"]

# The radiation table costs about (k D)^2 per frequency (D the bay's diagonal): a 3 m bay
# takes minutes for third octaves to 20 kHz, a 100 m one never finishes. Bays are panels
# between frames and stringers or test openings; a larger wall is the infinite stack.
MAX_BAY_SIDE_M = 10.0

_GL_CACHE: dict[int, tuple[np.ndarray, np.ndarray]] = {}


def _gauss_legendre(n: int):
    if n not in _GL_CACHE:
        from scipy import special

        _GL_CACHE[n] = special.roots_legendre(n)
    return _GL_CACHE[n]


def window_angular_integral(r, a: float, b: float) -> np.ndarray:
    """``P(r) = int_0^2pi R(r, psi) dpsi`` of the rectangle's autocorrelation.

    ``R = (a - r |cos psi|)(b - r |sin psi|)`` where both factors are positive; by
    symmetry ``P = 4 [F(psi2) - F(psi1)]`` with ``F = a b psi + a r cos psi - b r sin psi
    + r^2 sin^2(psi) / 2``, ``psi1 = arccos(min(1, a/r))``, ``psi2 = arcsin(min(1, b/r))``.
    """
    r = np.asarray(r, dtype=float)
    with np.errstate(divide="ignore"):
        p1 = np.arccos(np.minimum(1.0, a / r))
        p2 = np.arcsin(np.minimum(1.0, b / r))

    def prim(p):
        return a * b * p + a * r * np.cos(p) - b * r * np.sin(p) + r * r * np.sin(p) ** 2 / 2

    return np.where(p2 > p1, 4 * (prim(p2) - prim(p1)), 0.0)


@dataclass(frozen=True)
class Panel:
    """A rectangular bay (between frames and stringers, or a test opening).

    Parameters
    ----------
    width, height : float
        Side lengths in m, each at most :data:`MAX_BAY_SIDE_M`.
    """

    width: float
    height: float

    def __post_init__(self):
        for side in ("width", "height"):
            value = getattr(self, side)
            if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, float,
                                                                               np.number)):
                raise TypeError(f"panel {side} must be a number in m, got {value!r}")
        if not (0 < self.width <= MAX_BAY_SIDE_M and 0 < self.height <= MAX_BAY_SIDE_M):
            raise ValueError(f"panel sides must lie in (0, {MAX_BAY_SIDE_M:g}] m, got "
                             f"{self.width} x {self.height} m (a larger wall: leave the "
                             f"panel out, the infinite stack)")

    @property
    def area(self) -> float:
        """S in m^2."""
        return self.width * self.height

    def _radial_nodes(self, kmax: float):
        """Gauss-Legendre nodes and weights on [0, D], split at the two side lengths (where
        P(r) has kinks), enough for oscillations of wavenumber ``kmax``."""
        a, b = sorted((self.width, self.height))
        edges = [0.0, a, b, np.hypot(a, b)]
        r, w = [], []
        for lo, hi in zip(edges[:-1], edges[1:], strict=True):
            if hi <= lo:
                continue
            n = 4 * int(np.ceil((8 + 0.45 * kmax * (hi - lo)) / 4))  # ~1e-6 relative
            x, wx = _gauss_legendre(n)
            r.append((hi - lo) / 2 * x + (hi + lo) / 2)
            w.append((hi - lo) / 2 * wx)
        r, w = np.concatenate(r), np.concatenate(w)
        return r, w * window_angular_integral(r, self.width, self.height)

    def radiation_efficiency(self, k, kt) -> np.ndarray:
        """Azimuth-averaged radiation efficiency ``sigma(k, kt)`` of the windowed wave.

        Parameters
        ----------
        k : array_like
            Wavenumber of the air radiated into, rad/m.
        kt : array_like
            Trace wavenumber, broadcasting against ``k``.

        Returns
        -------
        ndarray
            ``k / (2 pi S) int_0^D P(r) J0(kt r) sin(k r) dr``, by Gauss-Legendre
            quadrature on the segments between the kinks of ``P``.
        """
        from scipy import special

        k, kt = np.broadcast_arrays(np.asarray(k, float), np.asarray(kt, float))
        r, w = self._radial_nodes(float(np.max(k + np.abs(kt), initial=0.0)))
        flat_k, flat_kt = k.ravel(), kt.ravel()
        val = np.empty(flat_k.size)
        step = max(1, 2**22 // r.size)   # bounded memory for large bays at high frequency
        for i in range(0, flat_k.size, step):  # loop over memory-sized chunks
            sl = slice(i, i + step)
            val[sl] = (special.j0(flat_kt[sl, None] * r) * np.sin(flat_k[sl, None] * r)) @ w
        return k / (2 * np.pi * self.area) * val.reshape(k.shape)

    def radiation_table(self, k, kt_max) -> RadiationTable:
        """Chebyshev tables of ``sigma(k, kt)`` on ``0 <= kt <= kt_max`` per frequency.

        Parameters
        ----------
        k, kt_max : array_like (nf,)
            Wavenumber of the radiated-into air and the largest trace wavenumber needed.
        """
        return RadiationTable(self, np.asarray(k, float), np.asarray(kt_max, float))


class RadiationTable:
    """``sigma(k, kt)`` of a :class:`Panel` as Chebyshev series in ``y = 2 (kt/kt_max)^2 - 1``.

    ``sigma`` is an even entire function of kt of exponential type D (it is a finite
    integral of ``J0(kt r)``, r <= D), so a series in ``kt^2`` of degree
    ``0.5 kt_max D + 12`` reaches about 1e-7 (found by trial against direct evaluation;
    the radial quadrature itself is good to about 1e-6, far below the angle
    integration's tolerance). Frequencies are grouped by
    the degree they need (a loop over a few groups, not over frequencies); coefficients
    from values at Chebyshev points (discrete cosine transform).
    """

    def __init__(self, panel: Panel, k, kt_max):
        self.kt_max = np.maximum(kt_max, 1e-12)
        d = np.hypot(panel.width, panel.height)
        need = 12 + np.ceil(0.5 * self.kt_max * d).astype(int)
        self.degree = 4 * np.ceil(need / 4).astype(int)
        self.coef = np.zeros((k.size, int(self.degree.max(initial=4))))
        for deg in np.unique(self.degree):  # loop over degree groups
            rows = np.flatnonzero(self.degree == deg)
            j = np.arange(deg)
            y = np.cos(np.pi * (j + 0.5) / deg)
            kt = self.kt_max[rows, None] * np.sqrt((y + 1) / 2)
            vals = panel.radiation_efficiency(k[rows, None], kt)
            basis = np.cos(np.pi * np.outer(j + 0.5, j) / deg) * (2.0 / deg)
            coef = vals @ basis
            coef[:, 0] /= 2
            self.coef[rows, :deg] = coef

    def __call__(self, rows, kt) -> np.ndarray:
        """``sigma`` at the frequencies ``rows`` (index array) and trace wavenumbers
        ``kt`` (len(rows), m) by Clenshaw's recurrence."""
        rows = np.asarray(rows)
        kt = np.asarray(kt, dtype=float)
        y = np.clip(2 * (kt / self.kt_max[rows, None]) ** 2 - 1, -1.0, 1.0)
        coef = self.coef[rows]
        out = np.empty(kt.shape)
        for deg in np.unique(self.degree[rows]):  # loop over degree groups
            sel = self.degree[rows] == deg
            yy, cc = y[sel], coef[sel]
            b1 = np.zeros_like(yy)
            b2 = np.zeros_like(yy)
            for n in range(deg - 1, 0, -1):  # Clenshaw over series terms
                b1, b2 = cc[:, n:n + 1] + 2 * yy * b1 - b2, b1
            out[sel] = cc[:, :1] + yy * b1 - b2
        return out
