"""Compiled Chebyshev sums (numba) for the bay's radiation table
(:class:`noisebudget.finite_size.RadiationTable`).

Each sum is computed on its own, by the same operations whatever else is in the call, so
a value does not depend, bit for bit, on the other rows or points of the call. Compiled
on first use (about 1.3 s for both, measured), then cached on disk next to this module
(or in the user's cache where that is read-only); importing numba and loading the cache
take about 0.7 s once per process. :mod:`noisebudget.finite_size` imports this module
only when it builds or evaluates a table, so that stacks without a bay never load numba.
"""

import numpy as np

from .compiled import compiled

PIECE_TERMS = 13   # terms (degree 12) of the series on each piece of a table row


@compiled
def piecewise_chebyshev_sums(rows, kt, kt_max, scale, pieces, start, coef, out):
    """Piecewise Chebyshev series at points (row, kt), point by point.

    For point (i, l) of row ``r = rows[i]``: ``t = min(|kt[i, l]|, kt_max[r]) scale[r]``
    (scale: pieces per unit kt), piece ``j = min(floor(t), pieces[r] - 1)``, local
    variable ``x = 2 (t - j) - 1`` in [-1, 1], and ``out[i, l] = sum_n c_n T_n(x)`` over
    the piece's :data:`PIECE_TERMS` coefficients ``c = coef[start[r] + j PIECE_TERMS:]``
    by Clenshaw's recurrence ``b_n = c_n + 2 x b_(n+1) - b_(n+2)``, ``out = c_0 + x b_1 -
    b_2``. A NaN kt gives NaN.
    """
    for i in range(kt.shape[0]):
        r = rows[i]
        for m in range(kt.shape[1]):  # each point on its own
            a = abs(kt[i, m])
            if a > kt_max[r]:
                a = kt_max[r]
            t = a * scale[r]
            j = int(t) if t < pieces[r] else pieces[r] - 1  # NaN: the last piece, x NaN
            x = 2.0 * (t - j) - 1.0
            base = start[r] + j * PIECE_TERMS
            b1 = 0.0
            b2 = 0.0
            for n in range(PIECE_TERMS - 1, 0, -1):
                b1, b2 = coef[base + n] + 2.0 * x * b1 - b2, b1
            out[i, m] = coef[base] + x * b1 - b2


@compiled
def chebyshev_sums(coef, y, out):
    """``out[i, j] = sum_n coef[i, n] T_n(y[j])`` for rows of coefficients ``coef`` (m,
    degree) at points ``y`` in [-1, 1], by Clenshaw's recurrence ``b_n = c_n + 2 y
    b_(n+1) - b_(n+2)``, ``out = c_0 + y b_1 - b_2``: the terms of a row in turn, each
    step over all its points (independent sums side by side).
    """
    b1 = np.empty(y.size)
    b2 = np.empty(y.size)
    for i in range(coef.shape[0]):
        b1[:] = 0.0
        b2[:] = 0.0
        for n in range(coef.shape[1] - 1, 0, -1):
            c = coef[i, n]
            for j in range(y.size):
                b = c + 2.0 * y[j] * b1[j] - b2[j]
                b2[j] = b1[j]
                b1[j] = b
        for j in range(y.size):
            out[i, j] = coef[i, 0] + y[j] * b1[j] - b2[j]
