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
_ROWS: OrderedDict = OrderedDict()  # (width, height, k, kt_max) -> (pieces, coefficients)
_ROWS_SIZE = 8192                   # remembered table rows, at most ...
_ROWS_FLOATS = 2**23                # ... and numbers in them (64 MB)
_ROWS_KEPT = [0]                    # numbers in the remembered rows
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
        """Piecewise Chebyshev tables of ``sigma(k, kt)`` on ``0 <= kt <= kt_max`` per frequency.

        Parameters
        ----------
        k, kt_max : array_like (nf,)
            Wavenumber of the radiated-into air and the largest trace wavenumber needed.
        """
        return RadiationTable(self, np.asarray(k, float), np.asarray(kt_max, float))


class RadiationTable:
    """``sigma(k, kt)`` of a :class:`Panel` per frequency, as short Chebyshev series on
    equal pieces of ``0 <= kt <= kt_max``.

    ``sigma`` is an even entire function of kt of exponential type D (a finite integral of
    ``J0(kt r)``, r <= D): it varies on a scale ``1/D`` in kt, alike over the whole range,
    and its steep rise at ``kt ~ k`` (the trace wave's coincidence with the radiated
    air's wavenumber) is no steeper than that. So equal pieces in kt suit it everywhere.
    A row is built in two steps:

    1. a Chebyshev series in ``y = 2 (kt/kt_max)^2 - 1`` (even in kt) of degree
       ``0.5 kt_max D + 12``, from sigma at as many Chebyshev points (discrete cosine
       transform): within about 1e-13 of the row's largest sigma against the same radial
       quadrature;
    2. its values at the 13 Chebyshev points of each of ``P = ceil((2 degree - 24) / 7)``
       equal pieces of ``[0, kt_max]`` (``kt D <= 7`` across a piece), turned into a
       series of degree 12 in the piece's own variable.

    The table is within about 1e-10 of the row's largest sigma of the direct radial
    integral on the same nodes (found by trial on bays of 0.3 m x 0.5 m to 10 m x 10 m,
    50 Hz to 20 kHz; the radial quadrature itself is good to about 1e-6, far below the
    angle integration's tolerance). A row keeps ``13 P`` numbers, about ``1.9 kt_max D``
    (650 for the 1.0 m x 1.4 m bay at 10 kHz), for the same samples of the radial
    integrand as one series of the full degree. A point costs the look-up of its piece
    and a Clenshaw sum of 13 terms whatever the frequency
    (:func:`noisebudget.chebyshev_kernels.piecewise_chebyshev_sums`, compiled).

    A row's numbers depend on its own ``(k, kt_max)`` only (its own radial nodes, sums in
    a fixed order), so they are computed once per distinct pair and bay and remembered
    (:func:`_table_rows`): the variants of a trade study share their frequencies, and a
    row does not depend, bit for bit, on the rows built with it. A point's value does not
    depend on the other points of the call.
    """

    def __init__(self, panel: Panel, k, kt_max):
        from .chebyshev_kernels import PIECE_TERMS

        k = np.asarray(k, dtype=float)
        kt_max = np.maximum(np.asarray(kt_max, dtype=float), 1e-12)
        self.kt_max = kt_max.reshape(-1)
        # each (k, kt_max) as one complex number: a 1-D unique, far faster than one by
        # rows, in the same lexicographic order
        pair = np.empty(self.kt_max.size, complex)
        pair.real = np.broadcast_to(k, kt_max.shape).reshape(-1)
        pair.imag = self.kt_max
        uniq, back = np.unique(pair, return_inverse=True)
        pieces, coef = _table_rows(panel, uniq.real.copy(), uniq.imag.copy())
        start = np.concatenate([[0], np.cumsum(pieces[:-1] * PIECE_TERMS)])
        back = back.reshape(-1)
        self.pieces = pieces[back]                  # pieces per row
        self.scale = self.pieces / self.kt_max      # pieces per unit kt
        self.start = start[back]                    # first coefficient of each row
        self.coef = coef                            # every distinct row's pieces, flat

    def __call__(self, rows, kt) -> np.ndarray:
        """``sigma`` at the frequencies ``rows`` (index array) and trace wavenumbers
        ``kt`` (len(rows), ...): ``|kt|`` beyond ``kt_max`` takes the value at
        ``kt_max``."""
        from .chebyshev_kernels import piecewise_chebyshev_sums

        kt = np.require(kt, float, ["C", "W"])   # one compiled signature: writeable, C
        rows = np.asarray(rows)
        lead = np.broadcast_to(rows, kt.shape[:rows.ndim]).reshape(-1)
        lead = np.arange(self.pieces.size, dtype=np.int64)[lead]  # numpy's index rules
        out = np.empty(kt.shape)
        if out.size == 0:
            return out
        piecewise_chebyshev_sums(lead, kt.reshape(lead.size, -1), self.kt_max, self.scale,
                                 self.pieces, self.start, self.coef,
                                 out.reshape(lead.size, -1))
        return out


_PIECE_SPAN = 7.0                   # kt D across one piece (at most)


def _piece_count(degree):
    """Pieces of a row whose global series has ``degree`` terms: ``kt_max D / P <=
    _PIECE_SPAN`` (the degree is at least ``0.5 kt_max D + 12``)."""
    return np.maximum(1, np.ceil((2.0 * degree - 24) / _PIECE_SPAN)).astype(int)


def _global_values(panel, k, kt_max, m, counts):
    """``sigma`` at the m Chebyshev points in ``y`` of rows ``(k, kt_max)`` (arrays), on
    the radial nodes of ``counts``: (rows, m), in blocks of at most ``_CHUNK_POINTS``
    (row, point, node) values (within a row, too, for the largest bays)."""
    from scipy import special

    r, w = panel._radial_nodes(0.0, counts)
    j = np.arange(m)
    y = np.cos(np.pi * (j + 0.5) / m)
    kt = kt_max[:, None] * np.sqrt((y + 1) / 2)          # (rows, m)
    vals = np.empty((k.size, m))
    weight = np.sin(k[:, None] * r) * w                  # (rows, nodes)
    rows_step = max(1, _CHUNK_POINTS // (m * r.size))
    pts_step = m if m * r.size <= _CHUNK_POINTS else max(1, _CHUNK_POINTS // r.size)
    for i in range(0, k.size, rows_step):  # memory-sized blocks of rows ...
        rs = slice(i, i + rows_step)
        for p in range(0, m, pts_step):    # ... and of points (one block but for big bays)
            ps = slice(p, p + pts_step)
            vals[rs, ps] = np.einsum("ijk,ik->ij", special.j0(kt[rs, ps, None] * r),
                                     weight[rs])
    vals *= k[:, None] / (2 * np.pi * panel.area)
    return vals


def _chebyshev_coefficients(vals):
    """Chebyshev coefficients (rows, m) from values (rows, m) at the m Chebyshev points
    ``cos(pi (j + 1/2) / m)`` (discrete cosine transform, ``np.einsum``: a fixed order per
    row), in blocks of columns of at most ``_CHUNK_POINTS`` basis values."""
    m = vals.shape[1]
    j = np.arange(m)
    coef = np.empty_like(vals)
    step = max(1, _CHUNK_POINTS // m)
    for c in range(0, m, step):  # memory-sized blocks of coefficients
        basis = np.cos(np.pi * np.outer(j + 0.5, j[c:c + step]) / m) * (2.0 / m)
        coef[:, c:c + step] = np.einsum("ij,jk->ik", vals, basis)
    coef[:, 0] /= 2
    return coef


def _local_series(coef, kt_pieces):
    """Re-expand global series ``coef`` (rows, degree) in ``y = 2 u^2 - 1`` on
    ``kt_pieces`` equal pieces of ``u = kt/kt_max`` in [0, 1]: (rows, pieces *
    PIECE_TERMS) coefficients of each piece's series in its own variable, from the
    global series' values (Clenshaw) at the piece's Chebyshev points (a discrete cosine
    transform in a fixed order of terms)."""
    from .chebyshev_kernels import PIECE_TERMS, chebyshev_sums

    j = np.arange(PIECE_TERMS)
    x = np.cos(np.pi * (j + 0.5) / PIECE_TERMS)
    u = (np.arange(kt_pieces)[:, None] + (x + 1) / 2) / kt_pieces   # (pieces, terms)
    y = (2 * u * u - 1).reshape(-1)
    vals = np.empty((coef.shape[0], y.size))
    chebyshev_sums(coef, y, vals)
    vals = vals.reshape(coef.shape[0], kt_pieces, PIECE_TERMS)
    basis = np.cos(np.pi * np.outer(j + 0.5, j) / PIECE_TERMS) * (2.0 / PIECE_TERMS)
    local = vals[..., 0, None] * basis[0]
    for i in range(1, PIECE_TERMS):  # the piece's DCT, term by term in a fixed order
        local += vals[..., i, None] * basis[i]
    local[..., 0] /= 2
    return local.reshape(coef.shape[0], -1)


def _table_rows(panel: Panel, k, kt_max):
    """Pieces (n,) and piecewise coefficients (flat: row after row, piece after piece,
    ``PIECE_TERMS`` each) of ``sigma(k, kt)`` on ``0 <= kt <= kt_max`` for distinct pairs
    ``(k[i], kt_max[i])``, remembered per bay.

    Each row uses its own radial nodes (:meth:`Panel._node_counts` of ``k + kt_max``) and
    sums in a fixed order (``np.einsum`` and elementwise passes, no BLAS blocking), so its
    numbers do not depend on the other rows; rows are grouped by global degree and node
    counts (a loop over a few groups).
    """
    from .chebyshev_kernels import PIECE_TERMS

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
            rows = todo[np.flatnonzero(which == g)]
            m = int(kind[0])
            vals = _global_values(panel, k[rows], kt_max[rows], m, kind[1:])
            coef = _chebyshev_coefficients(vals)
            p = int(_piece_count(m))
            step = max(1, _CHUNK_POINTS // (p * PIECE_TERMS))
            for i in range(0, rows.size, step):  # memory-sized blocks of rows
                local = _local_series(coef[i:i + step], p)
                for row, series in zip(rows[i:i + step], local, strict=True):
                    found[row] = (p, series.copy())  # its own copy: evicting it frees it
        with _ROWS_LOCK:
            if not _ROWS:
                _ROWS_KEPT[0] = 0   # emptied (by a test) or never filled
            for i in todo:  # remember the new rows
                old = _ROWS.get(keys[i])   # another thread's copy of the same row
                _ROWS_KEPT[0] += found[i][1].size - (0 if old is None else old[1].size)
                _ROWS[keys[i]] = found[i]
            while len(_ROWS) > 1 and (len(_ROWS) > _ROWS_SIZE
                                      or _ROWS_KEPT[0] > _ROWS_FLOATS):
                _ROWS_KEPT[0] -= _ROWS.popitem(last=False)[1][1].size
    pieces = np.array([f[0] for f in found], dtype=np.int64)
    coef = np.concatenate([f[1] for f in found]) if n else np.zeros(0)
    return pieces, coef
