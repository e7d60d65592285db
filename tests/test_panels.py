"""Septum and plate against the mass law, its closed-form incidence integrals, and
published coincidence behaviour."""

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.media import Air

RHO_C = Air().impedance


def _a(m, f):
    return 2 * np.pi * f * m / (2 * RHO_C)


@pytest.mark.parametrize("m,f", [(4.448, 500.0), (4.448, 2000.0), (10.0, 1000.0), (0.6, 63.0)])
def test_limp_septum_closed_forms(m, f):
    # Vigran, Building Acoustics (2008) eq. 6.109: tau = |1 + j omega m cos/(2 rho c)|^-2;
    # normal TL0 = 10 lg(1 + a^2); diffuse tau = ln(1 + a^2)/a^2; field to thetaL:
    # ln[(1 + a^2)/(1 + a^2 cos^2 thetaL)] / (a^2 sin^2 thetaL) (integrals derived)
    s = nb.Stack([nb.Septum(m)])
    a = _a(m, f)
    assert s.transmission_loss([f], "normal")[0] == pytest.approx(10 * np.log10(1 + a**2),
                                                                   abs=1e-9)
    assert s.transmission_loss([f], "diffuse")[0] == pytest.approx(
        -10 * np.log10(np.log(1 + a**2) / a**2), abs=0.005)
    tl_ = np.radians(78.0)
    tau_f = np.log((1 + a**2) / (1 + a**2 * np.cos(tl_) ** 2)) / (a**2 * np.sin(tl_) ** 2)
    assert s.transmission_loss([f], "field")[0] == pytest.approx(-10 * np.log10(tau_f),
                                                                  abs=0.005)


def test_mass_law_check_values():
    # REFERENCES "Mass law" check values [C, rho c = 413.21]: 4.448 kg/m^2 at 500 Hz
    # TL0 24.577, diffuse 17.035, field(78) 19.503; at 2000 Hz 36.604, 27.346, 31.447
    s = nb.Stack([nb.Septum(4.448)])
    f = np.array([500.0, 2000.0])
    np.testing.assert_allclose(s.transmission_loss(f, "normal"), [24.577, 36.604], atol=0.01)
    np.testing.assert_allclose(s.transmission_loss(f, "diffuse"), [17.035, 27.346], atol=0.01)
    np.testing.assert_allclose(s.transmission_loss(f, "field"), [19.503, 31.447], atol=0.01)


def test_limp_sheet_between_two_air_states():
    # Normal incidence through a mass sheet between two fluids (Kinsler et al.,
    # Fundamentals of Acoustics, transmission through a thin partition):
    # tau = 4 Z1 Z2 / ((Z1 + Z2)^2 + (omega m)^2)
    outside, cabin = nb.standard_atmosphere(10668.0), Air(295.15, 75262.0)
    m, f = 3.0, np.array([50.0, 200.0, 1000.0])
    s = nb.Stack([nb.Septum(m)], outside, cabin)
    z1, z2, w = outside.impedance, cabin.impedance, 2 * np.pi * f
    expected = 4 * z1 * z2 / ((z1 + z2) ** 2 + (w * m) ** 2)
    np.testing.assert_allclose(s.transmission_coefficient(f, [0.0])[:, 0], expected,
                               rtol=1e-12)
    # no layer at all: the plane-interface intensity transmission 4 Z1 Z2 / (Z1 + Z2)^2
    bare = nb.Stack([nb.AirGap(0.0)], outside, cabin)
    assert bare.transmission_coefficient([100.0], [0.0])[0, 0] == pytest.approx(
        4 * z1 * z2 / (z1 + z2) ** 2)


def test_plate_coincidence_frequency():
    # fc = (c^2 / 2 pi) sqrt(m / D): 1.6 mm 2024-T3 gives 7472 Hz; the rule of thumb
    # fc h ~ 12 m Hz for aluminium (REFERENCES "Plates, coincidence")
    p = nb.Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01)
    fc = p.coincidence_frequency(343.23)
    assert fc == pytest.approx(7472, abs=2)
    assert fc * 1.6e-3 == pytest.approx(11.955, abs=0.01)


def test_plate_single_angle_dip_at_coincidence():
    # Single-angle TL has its minimum where (f/fc)^2 sin^4 theta = 1 (Cremer; Vigran
    # eq. 6.108), i.e. at f = fc / sin^2 theta
    p = nb.Plate.from_material(2e-3, 2700, 70e9, 0.33, 0.01)
    s = nb.Stack([p])
    fc = p.coincidence_frequency(Air().sound_speed)
    f = np.geomspace(fc, 4 * fc, 4001)
    for deg in (45.0, 60.0):
        tl = -10 * np.log10(s.transmission_coefficient(f, [np.radians(deg)])[:, 0])
        assert f[np.argmin(tl)] == pytest.approx(fc / np.sin(np.radians(deg)) ** 2, rel=2e-3)


def test_plate_check_values():
    # REFERENCES table: 1.6 mm 2024-T3, eta 0.01, converged quadrature [C]
    p = nb.Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01)
    s = nb.Stack([p])
    fc = p.coincidence_frequency(Air().sound_speed)
    f = np.array([125, 500, 1000, 4000, fc, 2 * fc, 4 * fc])
    np.testing.assert_allclose(s.transmission_loss(f, "diffuse"),
                               [7.84, 17.01, 22.00, 30.53, 18.24, 33.14, 43.37], atol=0.03)
    np.testing.assert_allclose(s.transmission_loss(f, "field"),
                               [8.59, 19.48, 25.36, 35.85, 29.41, 32.99, 43.18], atol=0.03)
    one = -10 * np.log10(s.transmission_coefficient([1000.0], np.radians([0, 30, 45, 60])))
    np.testing.assert_allclose(one[0], [30.59, 29.33, 27.54, 24.49], atol=0.01)


def test_plate_above_coincidence_asymptote():
    # Diffuse-field TL well above fc ~ TL0 + 10 lg(2 eta f / (pi fc)) (Cremer) [M]
    p = nb.Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01)
    fc = p.coincidence_frequency(Air().sound_speed)
    f = 4 * fc
    tl0 = 10 * np.log10(1 + _a(p.areal_mass, f) ** 2)
    expected = tl0 + 10 * np.log10(2 * 0.01 * f / (np.pi * fc))
    assert nb.Stack([p]).transmission_loss([f], "diffuse")[0] == pytest.approx(expected, abs=1.5)


def test_double_wall_mass_air_mass():
    # Two 4.448 kg/m^2 leaves, 100 mm air gap, normal incidence (REFERENCES [C]): minimum
    # at 125.96 Hz (lumped f0 = (1/2pi) sqrt(rho c^2 (m1+m2)/(d m1 m2)) = 127.09 Hz);
    # TL 33.63 dB at 250 Hz, 52.72 at 500, 66.96 at 1000
    m, d = 4.448, 0.1
    s = nb.Stack([nb.Septum(m), nb.AirGap(d), nb.Septum(m)])
    f = np.linspace(100, 150, 5001)
    f_min = f[np.argmin(s.transmission_loss(f, "normal"))]
    assert f_min == pytest.approx(125.96, abs=0.05)
    air = Air()
    f0 = np.sqrt(air.density * air.sound_speed**2 * 2 * m / (d * m * m)) / (2 * np.pi)
    assert f0 == pytest.approx(127.09, abs=0.05)
    np.testing.assert_allclose(s.transmission_loss([250.0, 500.0, 1000.0], "normal"),
                               [33.63, 52.72, 66.96], atol=0.02)
