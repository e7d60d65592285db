"""Closed-form azimuth mean through the general solve: a direction-dependent skin between
fluid media in a stack with elastic (Biot, solid) layers.

The skin enters the solve as a series impedance ``p_above - p_below = Z v``, so the
transmitted amplitude is ``t0 / (1 + kappa Z)`` (two-port algebra: the velocity through
a series impedance between two linear two-ports is ``2 Y1 p_i / (alpha + beta Z)``;
Allard & Atalla, Propagation of Sound in Porous Media, 2nd ed. 2009, ch. 11 for the
transfer-matrix form). The references are the general solve at each azimuth, the nested
adaptive average and ``scipy.integrate.dblquad``.
"""

import warnings

import numpy as np
import pytest
from scipy import integrate

import noisebudget as nb
from noisebudget import multilayer
from noisebudget.errors import ModelRangeWarning
from noisebudget.finite_size import Panel
from noisebudget.layers import Plate, Sandwich
from noisebudget.media import Air

CRUISE = nb.standard_atmosphere(7620.0)   # 25,000 ft
CABIN = Air(295.15, 75262.0)              # 8,000 ft pressure altitude, 22 degC
FOAM = dict(flow_resistivity=1.5e4, porosity=0.98, tortuosity=1.2, viscous_length=80e-6,
            thermal_length=200e-6, bulk_density=24.0, youngs_modulus=2.5e5,
            poisson_ratio=0.3, loss_factor=0.1)


def _skin():
    # curved (R = 1.4 m), stiffened and pressurised (tension from the two airs)
    return Plate(4.45, (1200.0, 300.0), 0.01, 1.6e-3, curvature_radius=1.4,
                 youngs_modulus=73.1e9, poisson_ratio=0.33)


def _stack(panel=None, foam_bonding="bonded"):
    """skin | limp blanket | Biot foam | septum bonded to the foam | gap | sandwich trim"""
    layers = [_skin(), nb.Porous("jca-limp", 0.05, 4e4, 0.996, 1.0, 100e-6, 200e-6, 9.6),
              nb.Porous("biot", 0.025, **FOAM), nb.Septum(1.5, 1e-3), nb.AirGap(0.02),
              Sandwich(0.25e-3, 1900, 20e9, 0.15, 10e-3, 48, 30e6, 0.02, 0.3)]
    return nb.Stack(layers, CRUISE, CABIN, bonding=("bonded", "bonded", foam_bonding),
                    panel=panel)


def _quiet():
    warnings.simplefilter("ignore", ModelRangeWarning)


@pytest.mark.parametrize("reverse", [False, True], ids=["skin first (one solve)",
                                                     "skin last (two solves)"])
def test_transmitted_amplitude_is_a_moebius_function_of_the_skin_impedance(reverse):
    # tau from t0 / (1 + kappa Z(phi)) against the general solve at each azimuth (the
    # direct evaluation), to rounding
    s = _stack().reversed() if reverse else _stack()
    sheet = len(s.layers) - 1 if reverse else 0
    assert s._general and not s.isotropic and s._azimuth_sheet() == sheet
    f = np.array([63.0, 105.0, 500.0, 2000.0, 6300.0])
    th = np.radians([0.0, 20.0, 50.0, 70.0])
    phi = np.linspace(0.0, np.pi / 2, 7)
    with warnings.catch_warnings():
        _quiet()
        direct = s.transmission_coefficient(f, th, phi)
    omega = 2 * np.pi * f[:, None]
    t0, kappa, _, _ = s._sheet_moebius(omega, th[None, :], sheet)
    kt = omega / s.source_air.sound_speed * np.sin(th)
    z0, z1, z2 = s.mounted_layers[sheet].azimuth_polynomial(omega, kt, s.cavity_air)
    x = np.cos(phi) ** 2
    z = z0[..., None] + x * (z1[..., None] + x * z2[..., None])
    y1 = np.cos(th)[None, :, None] / s.source_air.impedance
    y2 = s._receiver_kz(omega, th[None, :])[..., None] / (
        omega[..., None] * s.receiver_air.density)
    tau = np.abs(t0[..., None] / (1 + kappa[..., None] * z)) ** 2 * y2.real / y1
    np.testing.assert_allclose(tau, direct, rtol=1e-8, atol=1e-300)


@pytest.mark.parametrize("incidence, panel", [("field", None), ("diffuse", Panel(1.0, 1.4))],
                         ids=["field", "diffuse in a bay"])
def test_closed_form_and_nested_averages_agree_through_the_general_solve(incidence, panel):
    # the closed form against the nested adaptive average (azimuth, then angle split at
    # each azimuth's coincidence), pressurised curved skin, cruise and cabin air
    s = _stack(panel)
    f = np.array([80.0, 800.0, 4000.0])
    omega = 2 * np.pi * f[:, None]
    theta_max = np.radians(78.0 if incidence == "field" else 90.0)
    table = s._radiation(omega, theta_max)
    with warnings.catch_warnings():
        _quiet()
        closed = s.transmission_loss(f, incidence)
        nested = s._azimuth_paris(lambda rows, om, th, az: s._tau(
            om, th, az, None if table is None else (lambda kt: table(rows, kt))),
            omega, theta_max, 3e-4)
    if panel is not None:
        nested = np.minimum(nested, 1.0)
    np.testing.assert_allclose(closed, -10 * np.log10(nested), atol=0.02)


def test_closed_form_through_the_general_solve_against_scipy_double_integral():
    # independent reference: scipy.integrate.dblquad of (2/pi) int int tau sin(2 theta)
    # dtheta dphi / sin^2(theta_max) over the general solve at each (theta, phi); a curved,
    # stiffened, tensioned skin | limp blanket | Biot foam | septum bonded to the foam | gap
    skin = Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.02, curvature_radius=1.4,
                               bending_stiffness=(350.0, 60.0), in_plane_tension=(2e4, 4e4))
    s = nb.Stack([skin, nb.Porous("jca-limp", 0.03, 4e4, 0.996, 1.0, 100e-6, 200e-6, 9.6),
                  nb.Porous("biot", 0.02, **FOAM), nb.Septum(1.5, 1e-3), nb.AirGap(0.05)])
    assert s._general and s._azimuth_sheet() == 0
    lim = np.radians(78.0)
    for fr in (150.0, 1200.0):
        def g(th, ph, f=fr):
            return s.transmission_coefficient([f], [th], ph)[0, 0] * np.sin(2 * th)
        ref = integrate.dblquad(g, 0, np.pi / 2, 0, lim, epsabs=0, epsrel=1e-5)[0]
        ref *= 2 / np.pi / np.sin(lim) ** 2
        assert s.transmission_loss([fr], "field")[0] == pytest.approx(-10 * np.log10(ref),
                                                                      abs=0.01)


def test_absorption_closed_form_through_the_general_solve():
    # random-incidence absorption seen from the cabin (skin last, into the exterior air):
    # the reflection factor (r0 + b Z) / (1 + kappa Z) in closed form against the nested
    # adaptive average
    s = _stack().reversed()
    assert s._azimuth_sheet("receiver") == len(s.layers) - 1
    assert s._azimuth_sheet("rigid") is None      # rigid backing: nested
    f = np.array([100.0, 1000.0, 4000.0])
    omega = 2 * np.pi * f[:, None]
    with warnings.catch_warnings():
        _quiet()
        closed = s.random_incidence_absorption(f, "receiver")
        nested = s._azimuth_paris(lambda rows, om, th, az: s._alpha(om, th, "receiver", az),
                                  omega, np.pi / 2, 3e-4)
    np.testing.assert_allclose(closed, nested, rtol=1e-3, atol=1e-5)


def test_which_sheets_take_the_closed_form():
    foam = nb.Porous("biot", 0.025, **FOAM)
    skin = _skin()
    # a foam bonded to the skin couples to its in-plane motion: the nested route
    bonded = nb.Stack([skin, foam, nb.AirGap(0.02)], CRUISE, CABIN)
    assert bonded._azimuth_sheet() is None
    assert not multilayer.sheet_between_fluids(bonded.mounted_layers, bonded.bonding, 0)
    # unbonded (an air film), or with a limp blanket in between: the closed form
    loose = nb.Stack([skin, foam, nb.AirGap(0.02)], CRUISE, CABIN,
                     bonding=("bonded", "unbonded"))
    assert loose._azimuth_sheet() == 0
    # a solid bonded to the skin from the cabin side, too
    behind = nb.Stack([foam, skin], CRUISE, CABIN)
    assert behind._azimuth_sheet() is None
    f = np.array([500.0])
    omega = 2 * np.pi * f[:, None]
    with warnings.catch_warnings():
        _quiet()
        closed = loose.transmission_loss(f, "field")
        nested = loose._azimuth_paris(lambda rows, om, th, az: loose._tau(om, th, az),
                                      omega, np.radians(78.0), 3e-4)
    np.testing.assert_allclose(closed, -10 * np.log10(nested), atol=0.02)
