"""Bands (IEC 61260-1, ISO 266), weightings (IEC 61672-1) and band averaging."""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import noisebudget as nb
from noisebudget.bands import (
    band_average,
    bands_between,
    energy_mean,
    energy_sum,
    log_grid,
    third_to_octave,
)

# IEC 61672-1:2013 Table 3 (design goals), nominal 10 Hz - 20 kHz, A and C in dB
IEC_TABLE = [
    (10, -70.4, -14.3), (12.5, -63.4, -11.2), (16, -56.7, -8.5), (20, -50.5, -6.2),
    (25, -44.7, -4.4), (31.5, -39.4, -3.0), (40, -34.6, -2.0), (50, -30.2, -1.3),
    (63, -26.2, -0.8), (80, -22.5, -0.5), (100, -19.1, -0.3), (125, -16.1, -0.2),
    (160, -13.4, -0.1), (200, -10.9, 0.0), (250, -8.6, 0.0), (315, -6.6, 0.0),
    (400, -4.8, 0.0), (500, -3.2, 0.0), (630, -1.9, 0.0), (800, -0.8, 0.0),
    (1000, 0.0, 0.0), (1250, 0.6, 0.0), (1600, 1.0, -0.1), (2000, 1.2, -0.2),
    (2500, 1.3, -0.3), (3150, 1.2, -0.5), (4000, 1.0, -0.8), (5000, 0.5, -1.3),
    (6300, -0.1, -2.0), (8000, -1.1, -3.0), (10000, -2.5, -4.4), (12500, -4.3, -6.2),
    (16000, -6.6, -8.5), (20000, -9.3, -11.2),
]


def test_weightings_match_iec_61672_table():
    b = bands_between(10, 20000, 3)
    nominal, a_ref, c_ref = (np.array(col) for col in zip(*IEC_TABLE, strict=True))
    np.testing.assert_array_equal(b.nominal, nominal)
    # evaluated at the exact base-10 mid-band frequencies, rounded to 0.1 dB like the table
    np.testing.assert_array_equal(np.round(nb.a_weighting(b.centre), 1) + 0.0, a_ref)
    np.testing.assert_array_equal(np.round(nb.c_weighting(b.centre), 1) + 0.0, c_ref)
    assert nb.a_weighting(1000.0) == 0.0 and nb.c_weighting(1000.0) == 0.0


def test_mid_band_and_edges_iec_61260():
    # IEC 61260-1:2014 base 10: fm = 1000 G^(x/3), edges fm G^(-+1/6), G = 10^0.3
    b = nb.third_octave_bands(100, 3150)
    assert b.lower[0] == pytest.approx(89.1251, abs=1e-4)
    assert b.upper[0] == pytest.approx(112.2018, abs=1e-4)
    i = b.index([3150])[0]
    assert b.centre[i] == pytest.approx(3162.2777, abs=1e-4)
    assert (b.lower[i], b.upper[i]) == pytest.approx((2818.3829, 3548.1339), abs=1e-4)
    np.testing.assert_allclose(b.upper[:-1], b.lower[1:], rtol=1e-12)  # contiguous
    o = nb.octave_bands(31.5, 16000)
    np.testing.assert_array_equal(o.nominal, [31.5, 63, 125, 250, 500, 1000, 2000, 4000, 8000,
                                              16000])
    np.testing.assert_allclose(o.upper / o.lower, 10**0.3, rtol=1e-12)


def test_iso_266_labels():
    # ISO 266 one-third-octave nominal frequencies 25 ... 10000 Hz
    iso = [25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000,
           1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000]
    np.testing.assert_array_equal(nb.third_octave_bands(25, 10000).nominal, iso)


def test_even_fraction_bands():
    # IEC 61260-1: even b, fm = 1000 G^((2x+1)/(2b)); sixth octaves straddle 1 kHz
    b = bands_between(900, 1100, 6)
    np.testing.assert_allclose(b.centre, [1000 * 10 ** (-0.3 / 12), 1000 * 10 ** (0.3 / 12)],
                               rtol=1e-12)


def test_level_arithmetic():
    assert energy_sum([80.0, 80.0]) == pytest.approx(83.0103, abs=1e-4)  # 10 lg 2
    assert energy_sum([-np.inf, 60.0]) == pytest.approx(60.0)
    assert energy_mean([70.0, 80.0]) == pytest.approx(10 * np.log10((1e7 + 1e8) / 2))
    thirds = nb.third_octave_bands(100, 5000)
    octs, lv = third_to_octave(thirds, np.full(len(thirds), 60.0))
    np.testing.assert_array_equal(octs.nominal, [125, 250, 500, 1000, 2000, 4000])
    np.testing.assert_allclose(lv, 60 + 10 * np.log10(3))


def test_log_grid():
    f = log_grid(50, 10000, 12)
    assert f[0] == 50 and f[-1] == 10000 and np.allclose(np.diff(np.log2(f[:-1])), 1 / 12)


@settings(max_examples=30, deadline=None)
@given(st.floats(0.0, 120.0))
def test_band_mean_of_constant_tl_is_that_tl(tl):
    b = nb.third_octave_bands(50, 5000)
    tau = band_average(lambda f: np.full_like(f, 10 ** (-tl / 10)), b)
    np.testing.assert_allclose(-10 * np.log10(tau), tl, atol=1e-9)


@settings(max_examples=30, deadline=None)
@given(st.floats(0.5, 0.99), st.floats(1e-3, 3e-2))
def test_band_with_sharp_dip_is_below_arithmetic_mean_of_db(pos, width):
    # energy averaging: a narrow dip (tau peak) dominates the band value
    b = nb.third_octave_bands(1000, 1000)
    f0 = b.lower[0] + pos * (b.upper[0] - b.lower[0]) * 0.98

    def tau(f):
        return 1e-4 + 0.1 / (1 + ((f - f0) / (width * f0)) ** 2)

    band_db = -10 * np.log10(band_average(tau, b))[0]
    f = np.linspace(b.lower[0], b.upper[0], 20001)
    assert band_db < np.mean(-10 * np.log10(tau(f)))


def test_band_average_resolves_mass_air_mass_dip():
    # refinement: the band holding the 126 Hz double-wall dip agrees with a dense sum
    s = nb.Stack([nb.Septum(4.448), nb.AirGap(0.1), nb.Septum(4.448)])
    b = nb.third_octave_bands(125, 125)
    got = s.band_transmission_loss(b, "normal")[0]
    f = np.linspace(b.lower[0], b.upper[0], 200001)
    tau = s.transmission_coefficient(f, [0.0])[:, 0]
    assert got == pytest.approx(-10 * np.log10(np.mean(tau)), abs=0.02)
    assert got < np.mean(-10 * np.log10(tau)) - 0.5  # energy average: the dip dominates


def test_band_average_samples_at_least_8_points_per_third_octave():
    # issue requirement: >= 8 points per one-third octave inside the band, octaves too
    for b in (nb.third_octave_bands(100, 1000), nb.octave_bands(125, 1000)):
        seen = []

        def record(f, seen=seen):
            seen.append(np.asarray(f).copy())
            return np.ones_like(f)

        band_average(record, b)
        f = np.concatenate(seen)
        for lo, hi in zip(b.lower, b.upper, strict=True):
            thirds = np.geomspace(lo, hi, int(round(3 / b.b)) + 1)
            for a, c in zip(thirds[:-1], thirds[1:], strict=True):
                assert np.count_nonzero((f > a) & (f < c)) >= 8


def test_octave_split_into_thirds_keeps_the_energy():
    # equal-energy split: each third L - 10 lg 3 = L - 4.77 dB (common practice); rolled
    # back up (energy sum of three thirds), the octave level returns exactly
    from noisebudget.bands import octave_bands, octave_to_thirds

    octs = octave_bands(63, 4000)
    levels = np.array([80.0, 75.0, 70.0, 66.0, 61.0, 58.0, 50.0])
    thirds, split = octave_to_thirds(octs, levels)
    np.testing.assert_allclose(thirds.nominal[:3], [50, 63, 80])
    np.testing.assert_allclose(thirds.nominal[-3:], [3150, 4000, 5000])
    np.testing.assert_allclose(split[:3], 80 - 10 * np.log10(3))
    back_bands, back = third_to_octave(thirds, split)
    np.testing.assert_allclose(back_bands.nominal, octs.nominal)
    np.testing.assert_allclose(back, levels, atol=1e-12)
    _, times = octave_to_thirds(octs, np.arange(7.0), "copy")   # times are copied
    np.testing.assert_allclose(times, np.repeat(np.arange(7.0), 3))


def test_log_interp_is_linear_in_log_frequency_and_flat_outside():
    from noisebudget.bands import log_interp

    got = log_interp([50, 100, np.sqrt(100 * 400), 400, 1000], [100, 400], [2.0, 6.0])
    np.testing.assert_allclose(got, [2, 2, 4, 6, 6])    # geometric mean: half way
    np.testing.assert_allclose(log_interp([10, 1e4], [], [3.0]), [3, 3])


def _monomial(k):
    return 2 / (k + 1) if k % 2 == 0 else 0.0


def test_nested_band_rules_have_their_published_degrees():
    # Patterson, Math. Comp. 22 (1968) 847: the 19-point extension of the 9-point Kronrod
    # rule of the 4-point Gauss rule is exact to degree 29 (3 x 9 + 2), the 9-point rule
    # to 13 (3 x 4 + 1), the Gauss rule to 7 (numpy's Gauss-Legendre nodes as reference);
    # the 9 nodes are among the 19 and the weights are positive
    from noisebudget.bands import K9, P19

    x19, w19 = P19
    x9, w9, w4 = K9
    for k in range(30):
        assert np.sum(w19 * x19**k) == pytest.approx(_monomial(k), abs=2e-15)
    assert abs(np.sum(w19 * x19**30) - _monomial(30)) > 1e-12
    for k in range(14):
        assert np.sum(w9 * x9**k) == pytest.approx(_monomial(k), abs=2e-15)
    assert abs(np.sum(w9 * x9**14) - _monomial(14)) > 1e-12
    g, w = np.polynomial.legendre.leggauss(4)
    np.testing.assert_allclose(x9[w4 > 0], g, atol=1e-15)
    np.testing.assert_allclose(w4[w4 > 0], w, atol=1e-15)
    assert set(np.round(x9, 15)) <= set(np.round(x19, 15))
    assert np.all(w19 > 0) and np.all(w9 > 0)


def test_band_average_stops_at_9_frequencies_where_the_band_is_smooth():
    # a mass law (tau ~ f^-2) over a one-third octave: the 9-point rule is within 1e-9
    # of the closed-form mean (int f^-2 df = 1/f_l - 1/f_u), and no further frequency is
    # taken; a narrow resonance in the band asks for more, and its band value meets the
    # closed form of a Lorentzian's integral (arctan)
    b = nb.third_octave_bands(500, 500)
    seen = []

    def mass_law(f):
        seen.append(np.size(f))
        return 1e-3 * (500.0 / f) ** 2

    got = band_average(mass_law, b, rtol=1e-6)[0]
    exact = 1e-3 * 500.0**2 * (1 / b.lower[0] - 1 / b.upper[0]) / (b.upper[0] - b.lower[0])
    assert got == pytest.approx(exact, rel=1e-9)
    assert sum(seen) == 9

    f0, g = 510.0, 2.0
    count = []

    def peak(f):
        count.append(np.size(f))
        return 1.0 / (1 + ((f - f0) / g) ** 2)

    got = band_average(peak, b, rtol=1e-4)[0]
    lo, hi = b.lower[0], b.upper[0]
    exact = g * (np.arctan((hi - f0) / g) - np.arctan((lo - f0) / g)) / (hi - lo)
    assert got == pytest.approx(exact, rel=1e-4)
    assert sum(count) > 19


def test_band_average_with_an_absolute_tolerance_capped_by_a_relative_one():
    # a narrow Lorentzian in a one-third octave (closed form: arctan): with an absolute
    # tolerance far above its value the band stops once its estimate is within rtol_max
    # (5 %) of itself, with fewer frequencies than at rtol alone; with a negligible one it
    # meets rtol; the estimates are conservative, so the errors fall inside both
    b = nb.third_octave_bands(1000, 1000)
    f0, g = 1020.0, 3.0
    lo, hi = b.lower[0], b.upper[0]
    exact = g * (np.arctan((hi - f0) / g) - np.arctan((lo - f0) / g)) / (hi - lo)

    def run(**kw):
        count = []

        def peak(f):
            count.append(np.size(f))
            return 1.0 / (1 + ((f - f0) / g) ** 2)

        return band_average(peak, b, rtol=1e-6, **kw)[0], sum(count)

    tight, n_tight = run()
    capped, n_capped = run(atol=1.0, rtol_max=0.05)
    same, _ = run(atol=1e-30, rtol_max=0.05)
    assert tight == pytest.approx(exact, rel=1e-6)
    assert capped == pytest.approx(exact, rel=0.05)
    assert n_capped < n_tight
    assert same == tight
