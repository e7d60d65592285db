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

import threading
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

__all__ = ["MAX_BAY_SIDE_M", "Panel", "RadiationTable", "window_angular_integral"]

# The radiation table costs about (k D)^2 per frequency (D the bay's diagonal): a 3 m bay
# takes minutes for third octaves to 20 kHz, a 100 m one never finishes. Bays are panels
# between frames and stringers or test openings; a larger wall is the infinite stack.
MAX_BAY_SIDE_M = 10.0

_GL_CACHE: dict[int, tuple[np.ndarray, np.ndarray]] = {}
_ROWS: OrderedDict = OrderedDict()  # (width, height, k, kt_max) -> (degree, coefficients)
_ROWS_SIZE = 8192                   # remembered table rows (up to ~200 numbers each)
_ROWS_LOCK = threading.Lock()
_CHUNK_POINTS = 2**22               # (row, Chebyshev point, radial node) values per block


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

    def _node_counts(self, kmax) -> np.ndarray:
        """Gauss-Legendre nodes per segment of [0, D] (split at the two side lengths, where
        P(r) has kinks), enough for oscillations of wavenumber ``kmax`` (array): (..., 3),
        0 for an empty segment."""
        lengths = np.diff(self._edges())
        kmax = np.asarray(kmax, dtype=float)[..., None]
        n = 4 * np.ceil((8 + 0.45 * kmax * lengths) / 4).astype(int)  # ~1e-6 relative
        return np.where(lengths > 0, n, 0)

    def _edges(self):
        a, b = sorted((self.width, self.height))
        return np.array([0.0, a, b, np.hypot(a, b)])

    def _radial_nodes(self, kmax: float, counts=None):
        """Nodes r and weights ``w P(r)`` on [0, D] for wavenumber ``kmax`` (or for the
        node ``counts`` per segment of :meth:`_node_counts`)."""
        edges = self._edges()
        counts = self._node_counts(kmax) if counts is None else counts
        r, w = [], []
        for lo, hi, n in zip(edges[:-1], edges[1:], counts, strict=True):  # 3 segments
            if n == 0:
                continue
            x, wx = _gauss_legendre(int(n))
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

    A row's coefficients depend on its own ``(k, kt_max)`` only (its own radial nodes,
    sums in a fixed order), so they are computed once per distinct pair and bay and
    remembered (:func:`_table_rows`): the variants of a trade study share their
    frequencies, and a row does not depend, bit for bit, on the rows built with it.
    """

    def __init__(self, panel: Panel, k, kt_max):
        k = np.asarray(k, dtype=float)
        self.kt_max = np.maximum(np.asarray(kt_max, dtype=float), 1e-12)
        pairs = np.stack([np.broadcast_to(k, self.kt_max.shape), self.kt_max], axis=-1)
        uniq, back = np.unique(pairs.reshape(-1, 2), axis=0, return_inverse=True)
        degree, coef = _table_rows(panel, uniq[:, 0], uniq[:, 1])
        back = back.reshape(-1)
        self.degree = degree[back]
        self.coef = coef[back]

    def __call__(self, rows, kt) -> np.ndarray:
        """``sigma`` at the frequencies ``rows`` (index array) and trace wavenumbers
        ``kt`` (len(rows), m) by Clenshaw's recurrence."""
        rows = np.asarray(rows)
        kt = np.asarray(kt, dtype=float)
        y = np.clip(2 * (kt / self.kt_max[rows, None]) ** 2 - 1, -1.0, 1.0)
        coef = self.coef[rows]
        out = np.empty(kt.shape)
        # rows in classes of degree up to a power of two, each class's series run to its
        # largest degree: a row's coefficients past its own degree are zero, which keeps
        # its b_n exactly zero until its own degree (the same numbers, bit for bit, as a
        # run to its own degree; a few classes instead of a group per degree)
        degree = self.degree[rows]
        size = 2 ** np.ceil(np.log2(np.maximum(degree, 16))).astype(int)
        for cls in np.unique(size):  # loop over a few degree classes
            sel = size == cls
            deg = int(degree[sel].max())
            yy, cc = y[sel], coef[sel]
            y2 = 2 * yy
            b1 = np.zeros_like(yy)
            b2 = np.zeros_like(yy)
            tmp = np.empty_like(yy)
            for n in range(deg - 1, 0, -1):  # Clenshaw over series terms, in place:
                np.multiply(y2, b1, out=tmp)  # b_n = c_n + 2 y b_(n+1) - b_(n+2)
                np.add(cc[:, n:n + 1], tmp, out=tmp)
                tmp -= b2
                b2, b1, tmp = b1, tmp, b2
            out[sel] = cc[:, :1] + yy * b1 - b2
        return out


def _table_rows(panel: Panel, k, kt_max):
    """Chebyshev degree (n,) and coefficients (n, max degree) of ``sigma(k, kt)`` on
    ``0 <= kt <= kt_max`` for distinct pairs ``(k[i], kt_max[i])``, remembered per bay.

    Each row uses its own radial nodes (:meth:`Panel._node_counts` of ``k + kt_max``) and
    sums in a fixed order (``np.einsum``, no BLAS blocking), so its numbers do not depend
    on the other rows; rows are grouped by degree and node counts (a loop over a few
    groups).
    """
    from scipy import special

    n = k.size
    keys = [(panel.width, panel.height, float(a), float(b)) for a, b in zip(k, kt_max,
                                                                              strict=True)]
    found = [None] * n
    with _ROWS_LOCK:
        for i, key in enumerate(keys):  # dictionary look-ups of the distinct pairs
            hit = _ROWS.get(key)
            if hit is not None:
                _ROWS.move_to_end(key)
                found[i] = hit
    todo = np.array([i for i in range(n) if found[i] is None], dtype=int)
    if todo.size:
        d = np.hypot(panel.width, panel.height)
        deg = 4 * np.ceil((12 + np.ceil(0.5 * kt_max[todo] * d)) / 4).astype(int)
        counts = panel._node_counts(k[todo] + kt_max[todo])
        groups = np.concatenate([deg[:, None], counts], axis=1)
        kinds, which = np.unique(groups, axis=0, return_inverse=True)
        which = which.reshape(-1)
        for g, kind in enumerate(kinds):  # loop over (degree, nodes) groups
            sel = np.flatnonzero(which == g)
            rows = todo[sel]
            m = int(kind[0])
            r, w = panel._radial_nodes(0.0, kind[1:])
            j = np.arange(m)
            y = np.cos(np.pi * (j + 0.5) / m)
            kt = kt_max[rows, None] * np.sqrt((y + 1) / 2)          # (rows, m)
            vals = np.empty((rows.size, m))
            step = max(1, _CHUNK_POINTS // (m * r.size))
            for i in range(0, rows.size, step):  # memory-sized blocks of rows
                sl = slice(i, i + step)
                q = special.j0(kt[sl, :, None] * r) * np.sin(k[rows[sl], None, None] * r)
                vals[sl] = np.einsum("ijk,k->ij", q, w)
            vals *= k[rows, None] / (2 * np.pi * panel.area)
            basis = np.cos(np.pi * np.outer(j + 0.5, j) / m) * (2.0 / m)
            coef = np.einsum("ij,jk->ik", vals, basis)
            coef[:, 0] /= 2
            for i, row in zip(rows, coef, strict=True):  # store each distinct pair's row
                found[i] = (m, row.copy())    # its own copy: evicting it frees it
        with _ROWS_LOCK:
            for i in todo:  # remember the new rows
                _ROWS[keys[i]] = found[i]
            while len(_ROWS) > _ROWS_SIZE:
                _ROWS.popitem(last=False)
    degree = np.array([f[0] for f in found], dtype=int)
    coef = np.zeros((n, int(degree.max(initial=4))))
    for i, (m, row) in enumerate(found):  # assemble the rows
        coef[i, :m] = row
    return degree, coef
