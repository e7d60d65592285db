"""Tensioned, curved and stiffened skins, azimuth integration, finite bays, sandwich
panels and lossy gaps against closed forms and published values."""

import warnings

import numpy as np
import pytest
from scipy import integrate

import noisebudget as nb
from noisebudget.errors import ModelRangeWarning
from noisebudget.finite_size import Panel, window_angular_integral
from noisebudget.incidence import (
    azimuth_mean_inverse,
    azimuth_mean_inverse_square,
    azimuth_mean_ratio_square,
)
from noisebudget.layers import Plate, Sandwich
from noisebudget.media import Air

AIR = Air()
RHO_C = AIR.impedance
C0 = AIR.sound_speed
CRUISE = nb.standard_atmosphere(7620.0)   # 25,000 ft
CABIN = Air(295.15, 75262.0)              # 8,000 ft pressure altitude, 22 degC


def _skin(**options):
    return Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01, **options)


def _single_leaf_tau(z, theta):
    # Vigran, Building Acoustics (2008) eq. 6.109: tau = |1 + Z cos(theta) / (2 rho c)|^-2
    return 1 / np.abs(1 + z * np.cos(theta) / (2 * RHO_C)) ** 2


# ---- in-plane tension ----

@pytest.mark.parametrize("tension", [500.0, 2e4, 6e4])
def test_tensioned_plate_against_closed_form(tension):
    # Z = j omega m + (D (1 + j eta) kt^4 + N kt^2) / (j omega): the bending wave equation
    # with the membrane term (Graff, Wave Motion in Elastic Solids, 1975, ch. 4;
    # Vigran 2008 eq. 6.108), tau by Vigran eq. 6.109
    p = _skin(in_plane_tension=tension)
    f = np.array([80.0, 400.0, 2000.0, 9000.0])
    th = np.radians([0.0, 20.0, 45.0, 70.0, 85.0])
    w = 2 * np.pi * f[:, None]
    kt = w / C0 * np.sin(th)
    z = 1j * w * p.areal_mass + (p.bending_stiffness * (1 + 0.01j) * kt**4
                                 + tension * kt**2) / (1j * w)
    np.testing.assert_allclose(nb.Stack([p]).transmission_coefficient(f, th),
                               _single_leaf_tau(z, th), rtol=1e-10)


def test_axial_and_hoop_tension_at_an_azimuth():
    # N(phi) = N_a cos^2 phi + N_h sin^2 phi for a trace wave at phi from the axis
    na, nh = 2e4, 5e4
    p = _skin(in_plane_tension=[na, nh])
    assert not p.isotropic
    f, th = np.array([300.0, 3000.0]), np.radians([30.0, 60.0])
    phi = np.radians([0.0, 30.0, 90.0])
    got = nb.Stack([p]).transmission_coefficient(f, th, azimuth_rad=phi)
    for k, ph in enumerate(phi):
        n = na * np.cos(ph) ** 2 + nh * np.sin(ph) ** 2
        ref = nb.Stack([_skin(in_plane_tension=n)]).transmission_coefficient(f, th)
        np.testing.assert_allclose(got[:, :, k], ref, rtol=1e-10)


def test_zero_tension_and_infinite_radius_reproduce_the_plate_exactly():
    plain = nb.Stack([_skin()])
    same = nb.Stack([_skin(in_plane_tension=0.0, curvature_radius=np.inf)])
    assert same.isotropic
    f, th = np.geomspace(50, 20000, 40), np.radians(np.linspace(0, 89, 17))
    np.testing.assert_array_equal(plain.transmission_coefficient(f, th),
                                  same.transmission_coefficient(f, th))
    np.testing.assert_array_equal(plain.transmission_loss(f, "field"),
                                  same.transmission_loss(f, "field"))


# ---- curvature and pressurisation ----

def test_ring_frequency_of_a_2_m_aluminium_skin():
    # f_r = c_L / (2 pi R), c_L = sqrt(E / (rho (1 - nu^2))); computed from that formula:
    # about 432 Hz for R = 2 m (a ring frequency "near 430 Hz" for a 2 m radius)
    p = _skin(curvature_radius=2.0, in_plane_tension=0.0)
    c_l = np.sqrt(73.1e9 / (2780 * (1 - 0.33**2)))
    assert p.ring_frequency() == pytest.approx(c_l / (2 * np.pi * 2.0), rel=1e-12)
    assert p.ring_frequency() == pytest.approx(432.3, abs=0.1)


def test_curved_skin_normal_incidence_breathing_mode():
    # At normal incidence the curved skin is the cylinder's breathing mode,
    # Z = j omega m (1 - (f_r/f)^2) (spring-mass; Koval, JASA 59 (1976) 1379): TL minimum
    # at the ring frequency (within 3 %), and the spring-mass closed form below it
    p = _skin(curvature_radius=1.6, in_plane_tension=0.0)
    fr = p.ring_frequency()
    s = nb.Stack([p])
    f = np.linspace(0.5 * fr, 1.5 * fr, 20001)
    tl = s.transmission_loss(f, "normal")
    assert f[np.argmin(tl)] == pytest.approx(fr, rel=0.03)
    lossless = nb.Stack([Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.0,
                                             curvature_radius=1.6, in_plane_tension=0.0)])
    f = np.array([50.0, 100.0, 200.0, 0.9 * fr])
    z = 1j * 2 * np.pi * f * p.areal_mass * (1 - (fr / f) ** 2)
    np.testing.assert_allclose(lossless.transmission_coefficient(f, [0.0])[:, 0],
                               _single_leaf_tau(z, 0.0), rtol=1e-10)


def test_curvature_below_and_above_the_ring_frequency():
    # From the impedance: well below f_r the hoop stiffness (E h / R^2) cos^4(phi)
    # exceeds m omega^2 for most azimuths, so the skin is stiffer than its mass and the
    # field-incidence TL rises above the flat plate's; approaching f_r, the azimuths where
    # (E h / R^2) cos^4(phi) = m omega^2 resonate and the TL falls below it (the dip below
    # the ring frequency of curved panels); far above f_r the curved skin is the flat
    # plate again
    flat = nb.Stack([_skin()], CRUISE, CABIN)
    curved = nb.Stack([_skin(curvature_radius=1.4, in_plane_tension=0.0)], CRUISE, CABIN)
    fr = curved.layers[0].ring_frequency()
    assert np.all(curved.transmission_loss([0.08 * fr, 0.1 * fr])
                  > flat.transmission_loss([0.08 * fr, 0.1 * fr]) + 2)
    assert curved.transmission_loss([0.8 * fr])[0] < flat.transmission_loss([0.8 * fr])[0] - 6
    far = np.array([8 * fr, 12 * fr])
    np.testing.assert_allclose(curved.transmission_loss(far), flat.transmission_loss(far),
                               atol=0.5)


def test_pressurisation_sets_the_membrane_tension():
    # Thin-walled cylinder under internal overpressure Delta p (Roark's Formulas for
    # Stress and Strain, thin-walled pressure vessels): hoop N = Delta p R, axial
    # N = Delta p R / 2
    r = 1.4
    s = nb.Stack([_skin(curvature_radius=r)], CRUISE, CABIN)
    dp = CABIN.pressure - CRUISE.pressure
    assert s.mounted_layers[0].in_plane_tension == pytest.approx((dp * r / 2, dp * r))
    assert s.layers[0].in_plane_tension is None          # the layer itself is unchanged
    # no tension when the receiving side is not above the source side
    calm = nb.Stack([_skin(curvature_radius=r)], CABIN, CABIN)
    assert calm.mounted_layers[0].in_plane_tension == (0.0, 0.0)
    # a given tension wins; a flat plate takes none
    assert nb.Stack([_skin(curvature_radius=r, in_plane_tension=1e3)], CRUISE,
                    CABIN).mounted_layers[0].in_plane_tension == (1e3, 1e3)
    assert nb.Stack([_skin()], CRUISE, CABIN).mounted_layers[0].in_plane_tension is None
    # the reversed stack is the same wall: its skin keeps the mounted tension, and it
    # transmits the same (reciprocity; airs of one temperature, so the angles match)
    s = nb.Stack([_skin(curvature_radius=r)], CABIN, Air(295.15, 101325.0))
    back = s.reversed()
    assert back.mounted_layers[0].in_plane_tension == s.mounted_layers[0].in_plane_tension
    f, th, phi = np.array([100.0, 1000.0]), np.radians([10.0, 50.0]), np.radians([0, 45, 90])
    np.testing.assert_allclose(back.transmission_coefficient(f, th, phi),
                               s.transmission_coefficient(f, th, phi), rtol=1e-9)


# ---- stiffened (orthotropic) skin ----

def test_stiffened_skin_along_its_axes():
    # Huber's orthotropic plate, D(phi) = (sqrt(D_a) cos^2 phi + sqrt(D_h) sin^2 phi)^2
    # (Huber 1923; Heckl, Acustica 10 (1960)): along each axis it is the isotropic
    # plate of that axis' stiffness, and coincidence follows fc = c^2/(2 pi) sqrt(m/D)
    da, dh = 400.0, 90.0
    p = Plate(5.2, (da, dh), 0.01, 1.6e-3)
    f, th = np.geomspace(100, 8000, 9), np.radians([20.0, 55.0])
    got = nb.Stack([p]).transmission_coefficient(f, th, azimuth_rad=[0.0, np.pi / 2])
    for k, d in enumerate((da, dh)):
        ref = nb.Stack([Plate(5.2, d, 0.01, 1.6e-3)]).transmission_coefficient(f, th)
        np.testing.assert_allclose(got[:, :, k], ref, rtol=1e-10)
        azimuth = (0.0, np.pi / 2)[k]
        assert p.coincidence_frequency(C0, azimuth) == pytest.approx(
            C0**2 / (2 * np.pi) * np.sqrt(5.2 / d))
    # the diagonal: D(45 deg) = ((sqrt(D_a) + sqrt(D_h)) / 2)^2
    mid = nb.Stack([Plate(5.2, ((np.sqrt(da) + np.sqrt(dh)) / 2) ** 2, 0.01, 1.6e-3)])
    np.testing.assert_allclose(nb.Stack([p]).transmission_coefficient(f, th, np.pi / 4),
                               mid.transmission_coefficient(f, th), rtol=1e-10)


# ---- azimuth ----

def _directional_stack():
    skin = Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01, curvature_radius=1.4,
                               bending_stiffness=(350.0, 60.0))
    return nb.Stack([skin, nb.Porous("jca-limp", 0.075, 2e4, 0.99, 1.0, 100e-6, 200e-6, 9.6),
                     nb.AirGap(0.02), Sandwich(0.25e-3, 1900, 20e9, 0.15, 10e-3, 48, 30e6, 0.02,
                                               0.3)], CRUISE, CABIN)


def test_azimuth_argument_shapes():
    s = _directional_stack()
    assert not s.isotropic
    f, th, phi = np.array([100.0, 900.0, 4000.0]), np.radians([0, 30, 60, 80]), np.radians(
        [0.0, 25.0, 70.0, 90.0, 135.0])
    tau = s.transmission_coefficient(f, th, azimuth_rad=phi)
    assert tau.shape == (3, 4, 5)
    for k, ph in enumerate(phi):
        np.testing.assert_allclose(tau[:, :, k], s.transmission_coefficient(f, th, ph),
                                   rtol=1e-12)
    # even in phi and in pi - phi (principal axes along axial and hoop directions)
    np.testing.assert_allclose(tau[:, :, 4], s.transmission_coefficient(f, th, np.pi / 4),
                               rtol=1e-10)
    # normal incidence does not depend on the azimuth (the breathing mode)
    np.testing.assert_allclose(tau[:, 0, :], tau[:, :1, 0].repeat(5, 1), rtol=1e-12)
    iso = nb.Stack([_skin()])
    assert iso.isotropic
    t = iso.transmission_coefficient(f, th, azimuth_rad=phi)
    assert t.shape == (3, 4, 5)
    np.testing.assert_array_equal(t[:, :, 2], iso.transmission_coefficient(f, th))


def test_azimuth_argument_checks():
    # library checks name the argument and the value (noisebudget.checks)
    from noisebudget.checks import ArgumentError

    s = _directional_stack()
    with pytest.raises(ArgumentError, match=r"azimuth_rad\[1\] = nan rad: must be a finite"):
        s.transmission_coefficient([100.0], [0.1], [0.0, np.nan])
    with pytest.raises(ArgumentError, match="azimuth_rad must be 1-D"):
        s.transmission_coefficient([100.0], [0.1], [[0.0, 1.0]])
    with pytest.raises(ArgumentError, match="azimuth_rad must be one number here"):
        s.surface_impedance([100.0], [0.1], azimuth_rad=[0.0, 1.0])
    with pytest.raises(ArgumentError, match=r"azimuth_rad = inf rad"):
        s.absorption_coefficient([100.0], [0.1], azimuth_rad=np.inf)


def test_closed_form_azimuth_mean_against_quadrature():
    # (2/pi) int_0^(pi/2) |p0 + p1 cos^2 + p2 cos^4|^-2 dphi by scipy.integrate.quad
    # (QUADPACK), with the sharp points given; includes sharp, degenerate and double roots
    rng = np.random.default_rng(7)
    cases = [rng.normal(size=3) + 1j * rng.normal(size=3) for _ in range(30)]
    cases += [np.array([1 + 1j, 2 - 1j, 0]), np.array([0.5 + 0.1j, 0, 0]),
              np.array([-0.3 + 1e-4j, 1.0, 0.2 + 1e-5j]),
              (1 + 0.5j) * np.array([(0.3 + 0.01j) ** 2, -2 * (0.3 + 0.01j), 1.0])]
    for p in cases:
        def g(t, p=p):  # x = sin^2 t: dx / sqrt(x (1 - x)) = 2 dt, uniform in t
            x = np.sin(t) ** 2
            return 1 / abs(p[0] + p[1] * x + p[2] * x * x) ** 2
        roots = np.roots(p[::-1]) if p[2] != 0 else (np.roots(p[1::-1]) if p[1] else [])
        pts = [np.arcsin(np.sqrt(r.real)) for r in roots if 0 < r.real < 1]
        ref = integrate.quad(g, 0, np.pi / 2, points=pts or None, limit=2000, epsabs=0,
                             epsrel=1e-11)[0] * 2 / np.pi
        assert azimuth_mean_inverse_square(*p) == pytest.approx(ref, rel=1e-7)


def test_closed_form_azimuth_means_of_a_pole_and_a_ratio():
    # (2/pi) int 1/p dphi and (2/pi) int |n/d|^2 dphi with n = P + Q Z, d = S + T Z,
    # Z = z0 + z1 c^2 + z2 c^4, against scipy.integrate.quad
    rng = np.random.default_rng(11)

    def mean(g):
        re = integrate.quad(lambda t: g(t).real, 0, np.pi / 2, limit=2000, epsabs=0,
                            epsrel=1e-11)[0]
        im = integrate.quad(lambda t: np.imag(g(t)), 0, np.pi / 2, limit=2000, epsabs=0,
                            epsrel=1e-11)[0]
        return (re + 1j * im) * 2 / np.pi

    for _ in range(15):
        p = rng.normal(size=3) + 1j * rng.normal(size=3)
        ref = mean(lambda t, p=p: 1 / (p[0] + p[1] * np.cos(t) ** 2 + p[2] * np.cos(t) ** 4))
        assert azimuth_mean_inverse(*p) == pytest.approx(ref, rel=1e-8)
        z = rng.normal(size=3) + 1j * rng.normal(size=3)
        pq = rng.normal(size=2) + 1j * rng.normal(size=2)
        st = rng.normal(size=2) + 1j * rng.normal(size=2)

        def zx(t, z=z):
            return z[0] + z[1] * np.cos(t) ** 2 + z[2] * np.cos(t) ** 4

        ref = mean(lambda t, zx=zx, pq=pq, st=st: abs((pq[0] + pq[1] * zx(t))
                                                       / (st[0] + st[1] * zx(t))) ** 2).real
        got = azimuth_mean_ratio_square((pq[0] + pq[1] * z[0], pq[1] * z[1], pq[1] * z[2]),
                                        (st[0] + st[1] * z[0], st[1] * z[1], st[1] * z[2]))
        assert got == pytest.approx(ref, rel=1e-8)
    # a denominator that does not depend on the azimuth: arcsine moments
    n = (1 + 2j, -0.5j, 0.3)
    ref = mean(lambda t: abs(n[0] + n[1] * np.cos(t) ** 2 + n[2] * np.cos(t) ** 4) ** 2 / 4).real
    assert azimuth_mean_ratio_square(n, (2.0, 0, 0)) == pytest.approx(ref, rel=1e-10)


@pytest.mark.parametrize("backing", ["receiver", "rigid"])
def test_closed_form_and_nested_absorption_agree(backing):
    # random-incidence absorption of a direction-dependent stack (cabin side first):
    # closed-form azimuth mean against the nested adaptive average
    s = _directional_stack().reversed()
    f = np.geomspace(63, 5000, 7)
    omega = 2 * np.pi * f[:, None]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        closed = s.random_incidence_absorption(f, backing)
        nested = s._azimuth_paris(lambda rows, om, th, az: s._alpha(om, th, backing, az),
                                  omega, np.pi / 2, 3e-5)
    np.testing.assert_allclose(closed, nested, rtol=1e-3)


@pytest.mark.parametrize("incidence", ["field", "diffuse"])
@pytest.mark.parametrize("reverse", [False, True], ids=["skin first", "skin last"])
def test_closed_form_and_nested_azimuth_averages_agree(incidence, reverse):
    # the closed-form azimuth mean (one direction-dependent sheet) against the general
    # nested adaptive average (azimuth, then angle split at each azimuth's coincidence)
    s = _directional_stack()
    if reverse:
        s = s.reversed()
    f = np.geomspace(63, 6300, 9)
    omega = 2 * np.pi * f[:, None]
    theta_max = np.radians(78.0 if incidence == "field" else 90.0)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        closed = s.transmission_loss(f, incidence)
        nested = s._azimuth_paris(lambda rows, om, th, az: s._tau(om, th, az), omega,
                                  theta_max, 3e-5)
    np.testing.assert_allclose(closed, -10 * np.log10(nested), atol=0.02)


def test_azimuth_average_against_scipy_double_integral():
    # independent reference: scipy.integrate.dblquad of (2/pi) int int tau sin(2 theta)
    # dtheta dphi / sin^2(theta_max), a curved stiffened tensioned skin alone
    skin = Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.02, curvature_radius=1.4,
                               bending_stiffness=(350.0, 60.0), in_plane_tension=(2e4, 4e4))
    s = nb.Stack([skin])
    lim = np.radians(78.0)
    for fr in (150.0, 1200.0):
        def g(th, ph, f=fr):
            return s.transmission_coefficient([f], [th], ph)[0, 0] * np.sin(2 * th)
        ref = integrate.dblquad(g, 0, np.pi / 2, 0, lim, epsabs=0, epsrel=1e-7)[0]
        ref *= 2 / np.pi / np.sin(lim) ** 2
        assert s.transmission_loss([fr], "field")[0] == pytest.approx(-10 * np.log10(ref),
                                                                      abs=0.02)


# ---- finite bays ----

def test_window_angular_integral_against_direct_sum():
    # P(r) = int_0^2pi (a - r|cos|)+ (b - r|sin|)+ dpsi by the trapezoidal rule
    a, b = 0.5, 0.2
    psi = np.linspace(0, 2 * np.pi, 400001)
    for r in (0.0, 0.1, 0.3, 0.45, 0.53):
        direct = np.trapezoid(np.clip(a - r * np.abs(np.cos(psi)), 0, None)
                              * np.clip(b - r * np.abs(np.sin(psi)), 0, None), psi)
        assert window_angular_integral(r, a, b) == pytest.approx(direct, rel=1e-7, abs=1e-12)


def test_radiation_efficiency_limits_and_wavenumber_form():
    bay = Panel(0.5, 0.2)
    # small bay: the baffled piston, sigma = k^2 S / (2 pi) (Kinsler et al., Fundamentals
    # of Acoustics, the piston's low-frequency radiation resistance)
    k = 0.2
    assert bay.radiation_efficiency(k, 0.0) == pytest.approx(k * k * bay.area / (2 * np.pi),
                                                             rel=1e-3)
    # large bay: the infinite plate, sigma = 1 / cos(theta)
    big = Panel(10.0, 10.0)  # the largest bay (MAX_BAY_SIDE_M)
    for deg in (0.0, 30.0, 60.0):
        assert big.radiation_efficiency(50.0, 50.0 * np.sin(np.radians(deg))) == pytest.approx(
            1 / np.cos(np.radians(deg)), rel=1e-3)
    # the wavenumber-domain form k/(4 pi^2 S) int |W(kappa - kt)|^2 / kz d^2kappa
    # (Villot et al. 2001), averaged over the wave's azimuth, by scipy.integrate.dblquad
    k, kt = 12.0, 8.0

    def w2(q, side):
        return (2 * np.sin(q * side / 2) / q) ** 2 if abs(q) > 1e-12 else side**2

    def sigma(phi):
        def g(s_, t):  # kappa = k sin(s) (cos t, sin t): d^2 kappa / kz = k sin s ds dt
            kx, ky = k * np.sin(s_) * np.cos(t), k * np.sin(s_) * np.sin(t)
            return (w2(kx - kt * np.cos(phi), bay.width) * w2(ky - kt * np.sin(phi), bay.height)
                    * k * np.sin(s_))
        return k / (4 * np.pi**2 * bay.area) * integrate.dblquad(
            g, 0, 2 * np.pi, 0, np.pi / 2, epsabs=0, epsrel=1e-8)[0]

    phis = np.linspace(0, np.pi / 2, 7)
    mean = integrate.simpson([sigma(p) for p in phis], x=phis) / (np.pi / 2)
    assert bay.radiation_efficiency(k, kt) == pytest.approx(mean, rel=2e-3)


def test_radiation_table_matches_direct_evaluation():
    bay = Panel(0.5, 0.2)
    k = np.array([0.3, 12.0, 91.0, 300.0])
    kt_max = k * np.array([1.0, 1.1, 1.2, 0.98])
    table = bay.radiation_table(k, kt_max)
    kt = np.random.default_rng(3).uniform(0, 1, (4, 40)) * kt_max[:, None]
    np.testing.assert_allclose(table(np.arange(4), kt), bay.radiation_efficiency(k[:, None], kt),
                               rtol=2e-5)


def test_radiation_table_rows_do_not_depend_on_each_other():
    # a row's coefficients come from its own (k, kt_max) only: built among other
    # frequencies, alone, or remembered, the same numbers bit for bit (the contract that
    # lets trade-study variants share the table)
    from noisebudget import finite_size

    bay = Panel(1.0, 1.4)
    k = np.geomspace(0.5, 200.0, 40)
    kt_max = 1.3 * k
    kt = np.linspace(0, 1, 9)[None, :] * kt_max[:, None]
    finite_size._ROWS.clear()
    together = bay.radiation_table(k, kt_max)(np.arange(k.size), kt)
    again = bay.radiation_table(k[::-1], kt_max[::-1])(np.arange(k.size), kt[::-1])
    for i in (0, 17, 39):
        finite_size._ROWS.clear()
        alone = bay.radiation_table(k[i:i + 1], kt_max[i:i + 1])(np.array([0]), kt[i:i + 1])
        np.testing.assert_array_equal(alone[0], together[i])
    np.testing.assert_array_equal(again[::-1], together)
    np.testing.assert_allclose(together, bay.radiation_efficiency(k[:, None], kt), rtol=2e-5,
                               atol=1e-12)


def _sewell_tl(f, m, side):
    # Sewell, J. Sound Vib. 12 (1970) 21-32, limp panel of area S in a rigid baffle,
    # diffuse incidence, fluid loading neglected, square panel (U(1) = 0, from memory):
    # TL = 20 lg(omega m / 2 rho c) - 10 lg[ln(k sqrt S) + 0.160 + 1/(4 k^2 S)]
    k = 2 * np.pi * f / C0
    s = side * side
    return (20 * np.log10(2 * np.pi * f * m / (2 * RHO_C))
            - 10 * np.log10(np.log(k * side) + 0.160 + 1 / (4 * k * k * s)))


def test_finite_limp_panel_against_sewell():
    # within 1 dB where k sqrt(S) > 2 and fluid loading is small (omega m >> rho c)
    m, side = 40.0, 1.0
    s = nb.Stack([nb.Septum(m)], panel=Panel(side, side))
    ks = np.array([2.2, 3.0, 5.0, 10.0, 30.0, 100.0])
    f = ks * C0 / (2 * np.pi * side)
    tl = s.transmission_loss(f, "diffuse")
    np.testing.assert_allclose(tl, _sewell_tl(f, m, side), atol=1.0)
    # large panels approach Sewell's large-panel form slowly, not the infinite diffuse
    # field (ln(1 + a^2)/a^2, Vigran 2008): at k sqrt(S) = 300 within 0.1 dB of Sewell and
    # more than 3 dB above the infinite panel
    f = np.array([300.0 * C0 / (2 * np.pi * side)])
    big = s.transmission_loss(f, "diffuse")[0]
    assert big == pytest.approx(_sewell_tl(f, m, side)[0], abs=0.1)
    assert big > nb.Stack([nb.Septum(m)]).transmission_loss(f, "diffuse")[0] + 3.0


def test_finite_panel_radiation_integral_without_fluid_loading():
    # For omega m >> rho c, tau_d = (2 rho c / omega m)^2 Q with
    # Q = (4 / (pi S)) int_0^a int_0^b (a - x)(b - y) sin^2(k r) / r^2 dx dy (the
    # spatial form of the diffuse-field radiation of the windowed wave; computed by
    # scipy.integrate.dblquad)
    m, a, b = 3000.0, 1.0, 0.6
    s = nb.Stack([nb.Septum(m)], panel=Panel(a, b))
    for k in (1.5, 4.0):
        q = 4 / (np.pi * a * b) * integrate.dblquad(
            lambda y, x, k=k: (a - x) * (b - y) * np.sin(k * np.hypot(x, y)) ** 2
            / max(x * x + y * y, 1e-300), 0, a, 0, b, epsrel=1e-10)[0]
        f = k * C0 / (2 * np.pi)
        tl0 = 20 * np.log10(2 * np.pi * f * m / (2 * RHO_C))
        assert s.transmission_loss([f], "diffuse")[0] == pytest.approx(tl0 - 10 * np.log10(q),
                                                                      abs=0.01)


def test_no_panel_no_change_and_panel_api():
    s = _directional_stack()
    assert s.panel is None
    bay = s.with_panel(0.5, 0.2)
    assert bay.panel == Panel(0.5, 0.2) and bay.layers == s.layers
    f = np.array([125.0, 500.0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        # a small bay radiates less than the infinite skin at low frequency
        assert np.all(bay.transmission_loss(f) > s.transmission_loss(f))
        assert bay.transmission_loss(f, "normal")[0] > s.transmission_loss(f, "normal")[0]
    with pytest.raises(ValueError):
        Panel(0.0, 1.0)


# ---- sandwich ----

def _trim(core_shear_modulus=30e6):
    return Sandwich(0.25e-3, 1900, 20e9, 0.15, 10e-3, 48, core_shear_modulus, 0.02, 0.3)


def test_sandwich_limits():
    # very stiff core: the plate with the sandwich's full bending stiffness
    # D0 + 2 D1 = E ((h + 2t)^3 - h^3) / (12 (1 - nu^2)) (faces about the mid-plane;
    # Zenkert 1995); very soft core: the two faces bending apart, 2 D1
    f, th = np.geomspace(50, 20000, 25), np.radians([0, 30, 60, 85])
    stiff = _trim(1e20)
    e, t, h, nu = 20e9, 0.25e-3, 10e-3, 0.15
    full = e * ((h + 2 * t) ** 3 - h**3) / (12 * (1 - nu**2))
    assert stiff.sandwich_stiffness + 2 * stiff.face_stiffness == pytest.approx(full)
    ref = nb.Stack([Plate(stiff.areal_mass, full, 0.02)])
    np.testing.assert_allclose(nb.Stack([stiff]).transmission_coefficient(f, th),
                               ref.transmission_coefficient(f, th), rtol=1e-6)
    soft = _trim(1e-3)
    faces = nb.Stack([Plate(soft.areal_mass, 2 * e * t**3 / (12 * (1 - nu**2)), 0.02)])
    np.testing.assert_allclose(nb.Stack([soft]).transmission_coefficient(f, th),
                               faces.transmission_coefficient(f, th), rtol=1e-6)


def test_sandwich_coincidence():
    # the free wave runs at the speed of sound at the coincidence frequency
    # (computed from D(kt) kt^4 = m omega^2 at kt = omega / c); core shear moves it from
    # the equivalent plate's fc = (c^2 / 2 pi) sqrt(m / (D0 + 2 D1)) upwards
    s = _trim()
    fc = s.coincidence_frequency(C0)
    kb = s.trace_resonances(np.array([[2 * np.pi * fc]]))[0, 0]
    assert kb == pytest.approx(2 * np.pi * fc / C0, rel=1e-9)
    plate_fc = C0**2 / (2 * np.pi) * np.sqrt(s.areal_mass / (s.sandwich_stiffness
                                                             + 2 * s.face_stiffness))
    assert plate_fc == pytest.approx(1504, abs=2)     # the trim as an equivalent plate
    assert fc > 1.5 * plate_fc
    # at a fixed frequency, single-angle transmission peaks where the trace wave meets
    # the free wave, omega / c sin(theta) = kB (Cremer; Vigran 2008 eq. 6.108)
    th = np.radians(np.linspace(20, 80, 60001))
    for f in (1.5 * fc, 2 * fc, 4 * fc):
        tau = nb.Stack([s]).transmission_coefficient([f], th)[0]
        kb = s.trace_resonances(np.array([[2 * np.pi * f]]))[0, 0]
        assert th[np.argmax(tau)] == pytest.approx(np.arcsin(kb * C0 / (2 * np.pi * f)),
                                                   rel=2e-3)


def test_sandwich_kurtze_watters_regimes():
    # Kurtze & Watters, JASA 31 (1959) 739: between the whole-panel and the faces-apart
    # regimes the core's shear sets the wave speed sqrt(S / m); with sqrt(S / m) below
    # the speed of sound there is no coincidence until the faces' own,
    # fc = (c^2 / 2 pi) sqrt(m / (2 D1))
    s = _trim(30e6)
    w = 2 * np.pi * 3000.0
    kb = s.trace_resonances(np.array([[w]]))[0, 0]
    assert w / kb == pytest.approx(np.sqrt(s.shear_stiffness / s.areal_mass), rel=0.25)
    slow = _trim(2e6)
    assert np.sqrt(slow.shear_stiffness / slow.areal_mass) < C0
    faces_fc = C0**2 / (2 * np.pi) * np.sqrt(slow.areal_mass / (2 * slow.face_stiffness))
    assert slow.coincidence_frequency(C0) == pytest.approx(faces_fc, rel=0.1)
    assert slow.coincidence_frequency(C0) > 50 * s.coincidence_frequency(C0) / 2.5


# ---- cavity loss ----

def test_lossy_gap_against_layer_closed_form():
    # A fluid layer between equal media at normal incidence (Kinsler et al.,
    # Fundamentals of Acoustics, transmission through a layer):
    # tau = |2 / (2 cos(kd) + j (z + 1/z) sin(kd))|^2, z = Z_layer / Z0, continued to a
    # complex bulk modulus K (1 + j eta): k = k0 (1 + j eta)^-1/2, z = (1 + j eta)^1/2
    eta, d = 0.05, 0.3
    f = np.array([100.0, 700.0, 3000.0])
    k = 2 * np.pi * f / C0 / np.sqrt(1 + 1j * eta)
    z = np.sqrt(1 + 1j * eta)
    ref = np.abs(2 / (2 * np.cos(k * d) + 1j * (z + 1 / z) * np.sin(k * d))) ** 2
    got = nb.Stack([nb.AirGap(d, eta)]).transmission_coefficient(f, [0.0])[:, 0]
    np.testing.assert_allclose(got, ref, rtol=1e-9)
    np.testing.assert_array_equal(
        nb.Stack([nb.AirGap(d, 0.0)]).transmission_coefficient(f, [0.3]),
        nb.Stack([nb.AirGap(d)]).transmission_coefficient(f, [0.3]))


def test_lossless_gap_transmits_everything_at_its_oblique_resonance():
    # two limp leaves with an unbounded lossless gap: above the mass-air-mass resonance
    # every frequency has an angle where the leaves and the air spring resonate with
    # only radiation damping, and tau reaches 1; a gap loss factor limits that peak
    th = np.radians(np.linspace(0, 89.9, 40001))
    peaks = []
    for eta in (0.0, 0.05):
        s = nb.Stack([nb.Septum(5.0), nb.AirGap(0.1, eta), nb.Septum(5.0)])
        peaks.append(s.transmission_coefficient([500.0], th).max())
    assert peaks[0] > 0.999 and peaks[1] < 0.2


# ---- stability ----

def test_new_layers_stay_finite_to_20_kHz():
    s = _directional_stack().with_panel(0.5, 0.2)
    f = np.geomspace(20, 20000, 60)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        warnings.simplefilter("error", RuntimeWarning)
        tau = s.transmission_coefficient(f, np.radians(np.linspace(0, 90, 13)),
                                         np.radians([0, 30, 60, 90]))
        tl = s.transmission_loss(f, "diffuse")
    assert np.all(np.isfinite(tau)) and np.all((tau >= 0) & (tau <= 1 + 1e-12))
    assert np.all(np.isfinite(tl)) and np.all(tl > 0)


# ---- with elastic layers (the general solve) ----

_FOAM = dict(flow_resistivity=2e4, porosity=0.97, tortuosity=1.3, viscous_length=60e-6,
             thermal_length=150e-6, bulk_density=30.0, youngs_modulus=2e5, poisson_ratio=0.3,
             loss_factor=0.1)


@pytest.mark.parametrize("frame", ["biot", "solid"])
def test_stiffened_skin_bonded_to_a_frame_along_its_axes(frame):
    # Huber's orthotropic plate along each axis is the isotropic plate of that axis'
    # stiffness (Huber 1923; Heckl, Acustica 10 (1960)), bonded to a frame as well: the
    # general solve passes the impedance at the azimuth through the plate-to-frame
    # relation, with the homogeneous plate's membrane stiffness 12 D / h^2 along the wave
    da, dh = 400.0, 90.0
    lining = (nb.Porous("biot", 0.03, **_FOAM) if frame == "biot"
              else nb.Solid(3e-3, 1200.0, 5e6, 0.45, 0.3))
    skin = Plate(5.2, (da, dh), 0.01, 1.6e-3)
    s = nb.Stack([skin, lining, nb.AirGap(0.05)], CRUISE, CABIN)
    assert s._general and not s.isotropic and s._azimuth_sheet() is None
    f, th = np.geomspace(50, 8000, 7), np.radians([0.0, 25.0, 55.0])
    got = s.transmission_coefficient(f, th, azimuth_rad=[0.0, np.pi / 2])
    for k, d in enumerate((da, dh)):
        ref = nb.Stack([Plate(5.2, d, 0.01, 1.6e-3), lining, nb.AirGap(0.05)], CRUISE, CABIN)
        np.testing.assert_allclose(got[:, :, k], ref.transmission_coefficient(f, th),
                                   rtol=1e-9)


def test_nested_average_through_the_general_solve_against_scipy_double_integral():
    # a curved, stiffened, tensioned skin bonded to a Biot foam: the nested azimuth and
    # angle average against scipy.integrate.dblquad of (2/pi) int int tau sin(2 theta)
    # dtheta dphi / sin^2(theta_max)
    skin = Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.02, curvature_radius=1.4,
                               bending_stiffness=(350.0, 60.0), in_plane_tension=(2e4, 4e4))
    s = nb.Stack([skin, nb.Porous("biot", 0.02, **_FOAM), nb.AirGap(0.05)])
    lim = np.radians(78.0)
    for fr in (150.0, 1200.0):
        def g(th, ph, f=fr):
            return s.transmission_coefficient([f], [th], ph)[0, 0] * np.sin(2 * th)
        ref = integrate.dblquad(g, 0, np.pi / 2, 0, lim, epsabs=0, epsrel=1e-5)[0]
        ref *= 2 / np.pi / np.sin(lim) ** 2
        assert s.transmission_loss([fr], "field")[0] == pytest.approx(-10 * np.log10(ref),
                                                                      abs=0.02)


@pytest.mark.parametrize("incidence", ["normal", "diffuse"])
def test_bay_weight_through_the_general_solve(incidence):
    # tau = |t|^2 rho2 c2 |Y2|^2 sigma / Y1 from the general solve's transmitted pressure
    # equals the cascade's 4 Y1 rho2 c2 |Y2|^2 sigma / |den|^2: a limp panel in a bay with
    # a vanishing solid behind it (1 um, 10 kg/m^3) transmits as the panel alone, whose
    # bay TL follows Sewell (1970) (test_finite_limp_panel_against_sewell)
    m, bay = 40.0, Panel(1.0, 1.0)
    f = np.array([2.2, 5.0, 30.0]) * C0 / (2 * np.pi)
    alone = nb.Stack([nb.Septum(m)], panel=bay)
    lined = nb.Stack([nb.Septum(m), nb.Solid(1e-6, 10.0, 1e5, 0.3, 0.01)], panel=bay)
    assert lined._general
    np.testing.assert_allclose(lined.transmission_loss(f, incidence),
                               alone.transmission_loss(f, incidence), atol=1e-3)
