"""Air states against the ideal-gas relations and the ICAO standard atmosphere."""

import pytest

from noisebudget.media import Air, standard_atmosphere


def test_air_at_20_degC():
    # ideal gas with R = 287.05 J/(kg K): 1.2041 kg/m^3, 343.23 m/s (computed from formula)
    a = Air(293.15, 101325.0)
    assert a.density == pytest.approx(1.2041, abs=1e-4)
    assert a.sound_speed == pytest.approx(343.23, abs=0.01)
    assert a.density * a.sound_speed**2 == pytest.approx(1.4 * 101325.0)  # rho c^2 = gamma P0


def test_sutherland_viscosity():
    # White, Viscous Fluid Flow, Table 1-2: air 1.716e-5 Pa s at 0 degC; about 1.81e-5 at
    # 20 degC (handbook tables of air properties; value from memory)
    assert Air(273.15, 101325).viscosity == pytest.approx(1.716e-5, rel=1e-9)
    assert Air(293.15, 101325).viscosity == pytest.approx(1.81e-5, rel=0.005)


def test_standard_atmosphere_35000_ft():
    # ICAO Doc 7488: 35,000 ft -> 218.81 K, 23,842 Pa; rho 0.3796, c 296.5 (REFERENCES [C])
    a = standard_atmosphere(35000 * 0.3048)
    assert a.temperature == pytest.approx(218.81, abs=0.01)
    assert a.pressure == pytest.approx(23842, rel=2e-4)
    assert a.density == pytest.approx(0.3796, abs=2e-4)
    assert a.sound_speed == pytest.approx(296.5, abs=0.1)


def test_cabin_pressure_8000_ft():
    # 8,000 ft pressure altitude: 75,262 Pa (ICAO Doc 7488; 14 CFR 25.841 cabin limit)
    assert standard_atmosphere(8000 * 0.3048).pressure == pytest.approx(75262, rel=2e-4)


def test_tropopause_continuity():
    below, above = standard_atmosphere(10999.9), standard_atmosphere(11000.1)
    assert above.pressure == pytest.approx(below.pressure, rel=1e-4)
