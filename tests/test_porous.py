"""Equivalent-fluid models against their published coefficients and worked values."""

import warnings

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.errors import ModelRangeWarning
from noisebudget.layers.porous import (
    delany_bazley,
    jca_bulk_modulus,
    jca_density,
    limp_density,
    miki,
)
from noisebudget.media import Air


def test_delany_bazley_coefficients():
    # Delany & Bazley (1970), Allard-Champoux form, X = rho0 f / sigma:
    # Zc = rho0 c0 [1 + 0.0571 X^-0.754 - j 0.0870 X^-0.732],
    # kc = (omega/c0)[1 + 0.0978 X^-0.700 - j 0.1890 X^-0.595]
    rho0, c0, sigma, f = 1.2, 343.0, 20000.0, 1000.0
    x = rho0 * f / sigma
    zc, kc = delany_bazley(f, sigma, rho0, c0)
    assert zc == pytest.approx(rho0 * c0 * complex(1 + 0.0571 * x**-0.754, -0.0870 * x**-0.732))
    assert kc == pytest.approx(2 * np.pi * f / c0 * complex(1 + 0.0978 * x**-0.700,
                                                            -0.1890 * x**-0.595))


def test_miki_coefficients():
    # Miki (1990), X = f / sigma: Zc: 1 + 0.0699 X^-0.632 - j 0.1071 X^-0.632;
    # k: 1 + 0.1093 X^-0.618 - j 0.1597 X^-0.618
    rho0, c0, sigma, f = 1.2, 343.0, 20000.0, 1000.0
    x = f / sigma
    zc, kc = miki(f, sigma, rho0, c0)
    assert zc == pytest.approx(rho0 * c0 * complex(1 + 0.0699 * x**-0.632, -0.1071 * x**-0.632))
    assert kc == pytest.approx(2 * np.pi * f / c0 * complex(1 + 0.1093 * x**-0.618,
                                                            -0.1597 * x**-0.618))


def test_empirical_models_on_rigid_backing(air_1213):
    # REFERENCES check values [C]: sigma 10,000, 50 mm on rigid backing, normal incidence,
    # rho0 1.213, c0 342.2: DB Zc/Z0 at 500 Hz 1.4725 - 0.6768j, alpha 0.4974; 1000 Hz
    # 1.2802 - 0.4075j, alpha 0.8859; Miki alpha 0.4858 (500), 0.8842 (1000)
    zc, _ = delany_bazley(np.array([500.0, 1000.0]), 1e4, 1.213, 342.2)
    np.testing.assert_allclose(zc / (1.213 * 342.2), [1.4725 - 0.6768j, 1.2802 - 0.4075j],
                               atol=1e-4)
    db = nb.Stack([nb.Porous("delany-bazley", 0.05, 1e4)], air_1213)
    mk = nb.Stack([nb.Porous("miki", 0.05, 1e4)], air_1213)
    f = [500.0, 1000.0]
    np.testing.assert_allclose(db.absorption_coefficient(f)[:, 0], [0.4974, 0.8859], atol=1e-4)
    np.testing.assert_allclose(mk.absorption_coefficient(f)[:, 0], [0.4858, 0.8842], atol=1e-4)


def test_jca_rigid_backing(air_1213):
    # REFERENCES JCA example [C] (Johnson et al. 1987; Champoux & Allard 1991): sigma 10,000,
    # phi 0.98, alpha 1.05, Lambda 100 um, Lambda' 200 um, 50 mm, rigid backing:
    # alpha 0.2169 (250 Hz), 0.5122 (500), 0.8603 (1000), 0.9686 (2000)
    s = nb.Stack([nb.Porous("jca", 0.05, 1e4, 0.98, 1.05, 100e-6, 200e-6)], air_1213)
    np.testing.assert_allclose(s.absorption_coefficient([250.0, 500, 1000, 2000])[:, 0],
                               [0.2169, 0.5122, 0.8603, 0.9686], atol=2e-4)


def test_jca_limits(air_1213):
    # Allard & Atalla (2009) ch. 5: j omega rho -> sigma at low frequency; rho ->
    # alpha_inf rho0 / phi at high frequency; K from P0/phi (isothermal) to gamma P0/phi
    sigma, phi, alpha = 2e4, 0.97, 1.2
    w_lo, w_hi = np.array([2 * np.pi * 0.01]), np.array([2 * np.pi * 1e8])
    rho_lo = jca_density(w_lo, sigma, phi, alpha, 80e-6, air_1213)
    assert (1j * w_lo * rho_lo).real == pytest.approx(sigma, rel=1e-3)
    rho_hi = jca_density(w_hi, sigma, phi, alpha, 80e-6, air_1213)
    assert rho_hi.real == pytest.approx(alpha * 1.213 / phi, rel=1e-2)
    p0 = air_1213.pressure
    assert abs(jca_bulk_modulus(w_lo, phi, 160e-6, air_1213)) == pytest.approx(p0 / phi, rel=1e-3)
    assert abs(jca_bulk_modulus(w_hi, phi, 160e-6, air_1213)) == pytest.approx(1.4 * p0 / phi,
                                                                              rel=1e-2)


def test_limp_density_limits():
    # Panneton (2007): a heavy frame behaves as rigid; at low frequency (viscous locking)
    # the limp layer moves as one mass of density rho_t = rho_1 + phi rho0
    rho = np.array([3.0 - 5.0j])
    assert limp_density(rho, 1e9, 0.98, 1.2)[0] == pytest.approx(rho[0], rel=1e-6)
    big = np.array([1e9 - 1e12j])
    assert limp_density(big, 9.6, 0.99, 1.2)[0] == pytest.approx(9.6 + 0.99 * 1.2, rel=1e-6)


def test_thin_limp_blanket_is_a_limp_resistive_screen_at_low_frequency():
    # A thin limp layer at low frequency acts as a limp screen of flow resistance
    # R = sigma d and mass m = rho_1 d: Z = R j omega m / (R + j omega m) (Allard & Atalla
    # 2009, ch. 11; Ingard 1994). A rigid frame is held still, so it blocks more.
    d, sigma, rho1 = 0.01, 4e4, 9.6
    limp = nb.Porous("jca-limp", d, sigma, 0.996, 1.0, 100e-6, 200e-6, bulk_density=rho1)
    rigid = nb.Porous("jca", d, sigma, 0.996, 1.0, 100e-6, 200e-6)
    screen = nb.Screen(sigma * d, rho1 * d)
    f = [10.0, 20.0, 50.0]
    np.testing.assert_allclose(nb.Stack([limp]).transmission_loss(f, "normal"),
                               nb.Stack([screen]).transmission_loss(f, "normal"), rtol=0.03)
    assert np.all(nb.Stack([rigid]).transmission_loss(f, "normal")
                  > nb.Stack([limp]).transmission_loss(f, "normal"))


def test_empirical_model_warns_outside_range():
    layer = nb.Porous("delany-bazley", 0.05, 1e5)
    with pytest.warns(ModelRangeWarning, match="0.01 < X < 1"):
        nb.Stack([layer]).transmission_loss([100.0], "normal")
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        nb.Stack([nb.Porous("delany-bazley", 0.05, 1e4)]).transmission_loss([1000.0], "normal")


def test_jca_needs_its_parameters():
    with pytest.raises(ValueError, match="porosity"):
        nb.Porous("jca", 0.05, 1e4)


def test_raw_delany_bazley_fit_gains_power_at_low_x():
    # computed from the Delany & Bazley (1970) coefficients: below X of about 0.02,
    # K = Zc omega / kc has Im K < 0 (an active compressibility) although Re Zc > 0 and
    # Im kc < 0; as the spring of a mass-spring-mass wall at its resonance the raw fluid
    # transmits 3.5 times the incident power
    from noisebudget.layers.base import FluidElement, SheetElement
    from noisebudget.stack import cascade
    rho0, c0, sigma, d, m = 1.2, 343.0, 1e4, 0.09, 20.0
    f = 0.00701 * sigma / rho0
    zc, kc = delany_bazley(f, sigma, rho0, c0)
    w = 2 * np.pi * f
    rho, bulk = zc * kc / w, zc * w / kc
    assert zc.real > 0 and kc.imag < 0 and bulk.imag < 0
    sheet = SheetElement(np.array([[1j * w * m]]))
    a, b, c, dd, scale = cascade([sheet, FluidElement(rho, bulk, d), sheet],
                                 np.array([[w]]), np.zeros((1, 1)))
    y = 1 / (rho0 * c0)
    tau = float((4 * y * y / abs(a * y + b * y * y + c + dd * y) ** 2
                 * np.exp(-2 * scale))[0, 0])
    assert tau > 3.0
    # the layer's own fluid is passive (Im rho <= 0, Im K >= 0), and so is the wall
    layer = nb.Porous("delany-bazley", d, sigma)
    r2, k2 = layer.equivalent_fluid(np.array([w]), Air())
    assert r2[0].imag <= 0 and k2[0].imag >= 0
    wall = nb.Stack([nb.Septum(m), layer, nb.Septum(m)])
    with pytest.warns(ModelRangeWarning, match="Darcy continuation"):
        taus = wall.transmission_coefficient(np.geomspace(20, 200, 400), [0.0])
    assert taus.max() <= 1.0


@pytest.mark.parametrize("model", ["delany-bazley", "miki"])
def test_empirical_models_passive_from_1_Hz_to_20_kHz(model):
    # energy balance (module notes): Im rho <= 0 and Im K >= 0 everywhere, hence tau <= 1
    # for every thickness, flow resistivity and angle
    f = np.geomspace(1.0, 20000.0, 120)
    th = np.radians([0.0, 30.0, 60.0, 80.0, 89.9])
    worst = 0.0
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        for sigma in np.geomspace(1e3, 1e6, 13):
            layer = nb.Porous(model, 0.01, sigma)
            rho, bulk = layer.equivalent_fluid(2 * np.pi * f, Air())
            assert np.all(rho.imag <= 0) and np.all(bulk.imag >= 0)
            for d in (1e-3, 5e-3, 0.02, 0.1, 0.3):
                tau = nb.Stack([nb.Porous(model, d, sigma)]).transmission_coefficient(f, th)
                assert np.all(np.isfinite(tau))
                worst = max(worst, float(tau.max()))
    assert worst <= 1.0 + 1e-12


@pytest.mark.parametrize("model, ratio", [("delany-bazley", 1.0722), ("miki", 0.9009)])
def test_darcy_continuation_below_the_fitted_range(model, ratio):
    # below X = 0.01: j omega rho tends to a constant flow resistivity sigma_lo (Darcy),
    # continuous with the fit at the range end; sigma_lo / sigma computed from the fits
    sigma, air = 2e4, Air()
    layer = nb.Porous(model, 0.05, sigma)
    f_lo = layer.fitted_band(air)[0]
    w = 2 * np.pi * np.array([f_lo / 1000, f_lo / 10, f_lo, f_lo * (1 + 1e-9)])
    rho, bulk = layer.equivalent_fluid(w, air)
    resist = (1j * w * rho).real
    np.testing.assert_allclose(resist[:3], resist[2], rtol=1e-12)
    assert resist[0] == pytest.approx(ratio * sigma, rel=0.01)
    np.testing.assert_allclose(rho[3], rho[2], rtol=1e-6)
    np.testing.assert_allclose(bulk[:3], bulk[2], rtol=0)


def test_range_warning_once_per_layer_naming_it():
    s = nb.Stack([nb.Porous("delany-bazley", 0.02, 4e4), nb.AirGap(0.01),
                  nb.Porous("miki", 0.02, 2e3)], labels=("outer blanket", "gap", "inner"))
    with warnings.catch_warnings(record=True) as got:
        warnings.simplefilter("always")
        s.transmission_loss(np.geomspace(20, 20000, 30))
        s.band_transmission_loss(nb.third_octave_bands(25, 10000))
        s.average_transmission([100.0, 150.0])
    texts = {str(w.message) for w in got if issubclass(w.category, ModelRangeWarning)}
    assert len(texts) == 2
    outer = next(t for t in texts if t.startswith("layer[1] (outer blanket): delany-bazley"))
    assert "below 332 Hz" in outer and "332-33220 Hz" in outer
    inner = next(t for t in texts if t.startswith("layer[3] (inner): miki"))
    assert "above 2000 Hz" in inner and "below 20 Hz" not in inner
