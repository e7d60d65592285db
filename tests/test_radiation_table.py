"""The bay's piecewise radiation table (``finite_size.RadiationTable``) against the radial
integral it tabulates and against that integral's closed-form limits; its independence
of the other rows and points of a call, its edges and its memory bounds."""

import tracemalloc

import numpy as np
import pytest

from noisebudget import finite_size
from noisebudget.finite_size import Panel

C0 = 343.0


def _direct(bay, k, kt, kt_max):
    """``Panel.radiation_efficiency`` on the radial nodes the table's row uses (those of
    ``k + kt_max``: the call's largest ``k + |kt|``)."""
    return bay.radiation_efficiency(k, np.append(kt, kt_max))[:-1]


@pytest.mark.parametrize("width, height", [(0.3, 0.5), (1.0, 1.4), (3.0, 2.0)])
def test_table_matches_the_radial_integral_over_bays_and_frequencies(width, height):
    # sigma(k, kt) = k / (2 pi S) int_0^D P(r) J0(kt r) sin(k r) dr, the azimuth average
    # of the windowed radiation efficiency of Villot, Guigou & Gagliardini (J. Sound Vib.
    # 245 (2001) 433-455): the table within 1e-8 of the row's largest sigma (about 1e-10
    # found by trial) at random trace wavenumbers, near coincidence kt ~ k (inside the
    # range or at its end), at the pieces' ends and at the range's ends, 50 Hz - 20 kHz
    bay = Panel(width, height)
    d = np.hypot(width, height)
    rng = np.random.default_rng(11)
    f = np.array([50.0, 200.0, 800.0, 3150.0, 10000.0, 20000.0])
    k = np.repeat(2 * np.pi * f / C0, 3)
    kt_max = k * np.tile([np.sin(np.radians(78.0)), 1.0, 1.2], f.size)
    finite_size._ROWS.clear()
    table = bay.radiation_table(k, kt_max)
    for i in range(k.size):
        near = k[i] + rng.uniform(-3 / d, 3 / d, 20)
        ends = np.arange(table.pieces[i] + 1) * kt_max[i] / table.pieces[i]
        near = near[(near >= 0) & (near <= kt_max[i])]
        kt = np.concatenate([rng.uniform(0, kt_max[i], 40), near, ends])
        got = table(np.full(kt.size, i), kt)
        want = _direct(bay, k[i], kt, kt_max[i])
        peak = np.max(np.abs(_direct(bay, k[i], np.linspace(0, kt_max[i], 301), kt_max[i])))
        assert np.all(np.isfinite(got))
        assert np.max(np.abs(got - want)) <= 1e-8 * peak, (f[i // 3], kt_max[i] / k[i])


def test_table_reaches_the_closed_form_limits():
    # small bay: the baffled piston, sigma = k^2 S / (2 pi) (Kinsler et al., Fundamentals
    # of Acoustics, the piston's low-frequency radiation resistance), whatever the trace
    # wavenumber while kt D << 1
    small = Panel(0.3, 0.5)
    k = 0.2
    kt = np.array([[0.0, 0.05, 0.1, 0.2]])
    np.testing.assert_allclose(small.radiation_table([k], [k])([0], kt),
                               k * k * small.area / (2 * np.pi), rtol=1e-3)
    # large bay: the infinite plate, sigma = 1 / cos(theta) (the plane wave radiated at
    # sin(theta) = kt / k)
    big = Panel(10.0, 10.0)   # the largest bay (MAX_BAY_SIDE_M)
    k = 50.0
    theta = np.radians([0.0, 30.0, 60.0])
    np.testing.assert_allclose(big.radiation_table([k], [k])([0], [k * np.sin(theta)]),
                               [1 / np.cos(theta)], rtol=1e-3)


def test_a_point_does_not_depend_on_the_other_points_of_the_call():
    # each point is summed on its own: the whole call, one row, one point, the rows in
    # another order give the same numbers bit for bit
    bay = Panel(1.0, 1.4)
    k = np.geomspace(0.5, 400.0, 30)
    table = bay.radiation_table(k, 1.1 * k)
    rng = np.random.default_rng(5)
    rows = rng.integers(0, k.size, 64)
    kt = rng.uniform(0, 1, (rows.size, 17)) * 1.1 * k[rows, None]
    together = table(rows, kt)
    order = rng.permutation(rows.size)
    np.testing.assert_array_equal(table(rows[order], kt[order]), together[order])
    for i in (0, 13, 63):
        np.testing.assert_array_equal(table(rows[i:i + 1], kt[i:i + 1]), together[i:i + 1])
        np.testing.assert_array_equal(table(rows[i:i + 1], kt[i:i + 1, 5:6]),
                                      together[i:i + 1, 5:6])


def test_table_edges_and_shapes():
    bay = Panel(1.0, 1.4)
    k = np.array([5.0, 90.0])
    kt_max = np.array([5.5, 88.0])
    table = bay.radiation_table(k, kt_max)
    at_max = table([0, 1], kt_max[:, None])
    # beyond kt_max: the value at kt_max; sigma is even in kt; NaN stays NaN
    np.testing.assert_array_equal(table([0, 1], 2 * kt_max[:, None]), at_max)
    kt = np.array([[0.3, 1.7, 5.0], [3.0, 40.0, 87.0]])
    np.testing.assert_array_equal(table([0, 1], -kt), table([0, 1], kt))
    assert np.isnan(table([1], [[np.nan]]))[0, 0]
    # one kt per row, more axes per row, no points
    np.testing.assert_array_equal(table([0, 1], kt[:, 1]), table([0, 1], kt)[:, 1])
    np.testing.assert_array_equal(table([0, 1], kt.reshape(2, 3, 1))[..., 0],
                                  table([0, 1], kt))
    assert table(np.zeros(0, int), np.zeros((0, 4))).shape == (0, 4)
    # rows index as numpy indexes: from the end, and out of range refused
    np.testing.assert_array_equal(table([-1], kt[1:]), table([1], kt[1:]))
    with pytest.raises(IndexError):
        table([2], kt[1:])


def test_rows_and_the_remembered_rows_stay_bounded(monkeypatch):
    # a row keeps 13 numbers per piece, pieces spanning kt D <= 7: about 1.9 kt_max D
    bay = Panel(3.0, 2.0)
    d = np.hypot(3.0, 2.0)
    k = 2 * np.pi * np.array([100.0, 1000.0, 10000.0]) / C0
    finite_size._ROWS.clear()
    table = bay.radiation_table(k, 1.2 * k)
    assert np.all(table.pieces >= 1.2 * k * d / 7)
    assert np.all(13 * table.pieces <= 13 * (1.2 * k * d + 8) / 7 + 26)
    assert table.coef.size == 13 * table.pieces.sum()
    # the remembered rows hold at most _ROWS_FLOATS numbers: the oldest rows go first
    monkeypatch.setattr(finite_size, "_ROWS_FLOATS", int(13 * table.pieces[1:].sum()))
    again = bay.radiation_table(2 * k, 2.4 * k)
    kept = sum(v[1].size for v in finite_size._ROWS.values())
    assert kept <= finite_size._ROWS_FLOATS or len(finite_size._ROWS) == 1
    assert kept == finite_size._ROWS_KEPT[0]
    assert (3.0, 2.0, float(2 * k[2]), float(2.4 * k[2])) in finite_size._ROWS
    np.testing.assert_array_equal(again([2], [[0.0, k[2]]]),
                                  bay.radiation_table(2 * k, 2.4 * k)([2], [[0.0, k[2]]]))


def test_largest_bay_at_20_khz_builds_in_bounded_memory():
    # 10 m x 10 m at 20 kHz: a row of degree ~2600 on ~4700 radial nodes is built in
    # blocks of at most _CHUNK_POINTS values (a few such arrays at once), finite, and
    # equal to the radial integral
    bay = Panel(10.0, 10.0)
    k = 2 * np.pi * 20000.0 / C0
    bay.radiation_table([1.0], [1.0])   # quadrature tables, compiled sums
    finite_size._ROWS.clear()
    tracemalloc.start()
    try:
        table = bay.radiation_table([k], [k])
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 4 * 8 * finite_size._CHUNK_POINTS
    kt = np.array([0.0, 0.5 * k, k - 0.05, k])
    got = table([0], kt[None, :])[0]
    want = _direct(bay, k, kt, k)
    assert np.all(np.isfinite(got))
    np.testing.assert_allclose(got, want, rtol=0, atol=1e-8 * np.max(want))
