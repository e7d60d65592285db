"""Cascade, quadrature convergence, numerical stability and physical invariants."""

import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import noisebudget as nb
from noisebudget.errors import ModelRangeWarning
from noisebudget.layers.base import SheetElement
from noisebudget.media import Air
from noisebudget.stack import cascade


def _al_plate(h=2e-3):
    return nb.Plate.from_material(h, 2700, 70e9, 0.33, 0.01)


def test_field_incidence_converged_for_plate():
    # Issue requirement: doubling the angle count changes the field-incidence TL of a
    # 2 mm aluminium plate by < 0.1 dB at every frequency 100 Hz - 16 kHz
    s = nb.Stack([_al_plate()])
    f = np.geomspace(100, 16000, 600)
    for n in (20, 40):
        diff = s.transmission_loss(f, "field", n_angles=n) - s.transmission_loss(
            f, "field", n_angles=2 * n)
        assert np.max(np.abs(diff)) < 0.1


def test_diffuse_incidence_converged_for_double_wall():
    s = nb.Stack([_al_plate(1.6e-3), nb.Porous("delany-bazley", 0.08, 2e4), nb.AirGap(0.02),
                  nb.Plate(1.73, 268.0, 0.02, 0.0105)])
    f = np.geomspace(100, 10000, 200)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        diff = s.transmission_loss(f, "diffuse") - s.transmission_loss(f, "diffuse",
                                                                       n_angles=40)
    assert np.max(np.abs(diff)) < 0.1


def _thick_stacks():
    return [
        nb.Stack([nb.Porous("delany-bazley", 0.3, 5e4)]),
        nb.Stack([nb.Porous("jca", 0.3, 1e5, 0.95, 1.3, 30e-6, 60e-6)]),
        nb.Stack([nb.Porous("jca-limp", 0.3, 4e4, 0.99, 1.0, 100e-6, 200e-6, 24.0),
                  nb.AirGap(0.3), _al_plate(), nb.Septum(5.0), nb.Porous("miki", 0.3, 6e4)]),
    ]


@pytest.mark.parametrize("stack", _thick_stacks())
def test_thick_lossy_stacks_stay_finite_to_20_kHz(stack):
    # Stability requirement: no overflow, NaN or tau > 1 up to 20 kHz, 300 mm blanket
    f = np.geomspace(20, 20000, 300)
    th = np.radians(np.linspace(0, 90, 31))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        warnings.simplefilter("error", RuntimeWarning)
        tau = stack.transmission_coefficient(f, th)
        tl = stack.transmission_loss(f, "diffuse")
    assert np.all(np.isfinite(tau)) and np.all(tau >= 0) and np.all(tau <= 1 + 1e-12)
    assert np.all(np.isfinite(tl))


def test_cruise_air_outside_cabin_air_inside_is_finite():
    # grazing waves from slow cruise air are evanescent in the cabin air: tau = 0 there
    s = nb.Stack([_al_plate()], nb.standard_atmosphere(10668.0), Air(295.15, 75262.0))
    tau = s.transmission_coefficient([1000.0], np.radians([0.0, 70.0, 89.0]))
    assert np.all(np.isfinite(tau)) and tau[0, 2] == 0.0 and tau[0, 0] > 0


def _element_matrix(el, omega, kt):
    a, b, c, d, log = cascade([el], omega, kt)
    scale = np.exp(log)
    return np.stack([np.stack([a, b], -1), np.stack([c, d], -1)], -2) * scale[..., None, None]


def test_cascade_equals_matrix_product_in_any_grouping():
    # Cascading is associative (matrix product): (M1 M2) M3 = M1 (M2 M3)
    omega = 2 * np.pi * np.array([[100.0], [1000.0], [5000.0]])
    kt = omega / 343.0 * np.sin(np.radians([[0.0, 30.0, 60.0]]))
    air = Air()
    layers = [_al_plate(), nb.Porous("miki", 0.05, 1e4), nb.Septum(1.5)]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        els = [layer.element(omega, kt, air) for layer in layers]
    m1, m2, m3 = (_element_matrix(e, omega, kt) for e in els)
    a, b, c, d, log = cascade(els, omega, kt)
    whole = np.stack([np.stack([a, b], -1), np.stack([c, d], -1)], -2) * np.exp(log)[..., None,
                                                                                       None]
    np.testing.assert_allclose((m1 @ m2) @ m3, whole, rtol=1e-10)
    np.testing.assert_allclose(m1 @ (m2 @ m3), whole, rtol=1e-10)


def test_sheet_element_is_unit_upper_triangular():
    omega, kt = np.array([[10.0]]), np.array([[0.0]])
    m = _element_matrix(SheetElement(np.array([[5.0 + 2j]])), omega, kt)
    np.testing.assert_allclose(m[0, 0], [[1, 5 + 2j], [0, 1]])


def test_transmission_loss_of_nothing_is_zero():
    # air matched to air transmits everything
    s = nb.Stack([nb.AirGap(0.1)])
    np.testing.assert_allclose(s.transmission_coefficient([50.0, 5e3], np.radians([0, 45, 80])),
                               1.0, rtol=1e-12)


# ---- properties (hypothesis) ----

_layer = st.one_of(
    st.builds(nb.Septum, st.floats(0.01, 20.0)),
    st.builds(lambda h, eta: nb.Plate.from_material(h, 2700, 70e9, 0.33, eta),
              st.floats(0.3e-3, 6e-3), st.floats(0.001, 0.2)),
    st.builds(nb.AirGap, st.floats(0.0, 0.3)),
    st.builds(lambda d, s: nb.Porous("jca", d, s, 0.97, 1.1, 60e-6, 150e-6),
              st.floats(1e-3, 0.3), st.floats(2e3, 2e5)),
    st.builds(lambda d, s, rho: nb.Porous("jca-limp", d, s, 0.98, 1.05, 80e-6, 160e-6, rho),
              st.floats(1e-3, 0.3), st.floats(2e3, 2e5), st.floats(5.0, 60.0)),
    st.builds(lambda r, m: nb.Screen(r, m), st.floats(10.0, 5e3), st.floats(0.0, 0.5)),
)
_stacks = st.lists(_layer, min_size=1, max_size=5)
_f = np.array([40.0, 250.0, 1600.0, 9000.0, 20000.0])
_th = np.radians([0.0, 35.0, 70.0, 89.0])


@settings(max_examples=60, deadline=None)
@given(_stacks)
def test_passive_stacks_never_gain_power(layers):
    tau = nb.Stack(layers).transmission_coefficient(_f, _th)
    assert np.all(np.isfinite(tau)) and np.all(tau >= 0) and np.all(tau <= 1 + 1e-9)


@settings(max_examples=60, deadline=None)
@given(_stacks)
def test_reciprocity_reversed_stack_transmits_the_same(layers):
    s = nb.Stack(layers)
    t1 = s.transmission_coefficient(_f, _th)
    t2 = s.reversed().transmission_coefficient(_f, _th)
    np.testing.assert_allclose(t1, t2, rtol=1e-6, atol=1e-300)


@settings(max_examples=40, deadline=None)
@given(_stacks, st.integers(0, 5))
def test_zero_thickness_air_gap_changes_nothing(layers, where):
    where = min(where, len(layers))
    with_gap = [*layers[:where], nb.AirGap(0.0), *layers[where:]]
    np.testing.assert_array_equal(nb.Stack(layers).transmission_coefficient(_f, _th),
                                  nb.Stack(with_gap).transmission_coefficient(_f, _th))


@settings(max_examples=40, deadline=None)
@given(st.floats(0.01, 20.0), st.floats(0.01, 20.0))
def test_two_septa_in_contact_are_one(m1, m2):
    a = nb.Stack([nb.Septum(m1), nb.Septum(m2)]).transmission_coefficient(_f, _th)
    b = nb.Stack([nb.Septum(m1 + m2)]).transmission_coefficient(_f, _th)
    np.testing.assert_allclose(a, b, rtol=1e-9)


def test_areal_mass_and_thickness_add_up():
    s = nb.Stack([_al_plate(), nb.Porous("delany-bazley", 0.05, 2e4, bulk_density=9.6),
                  nb.AirGap(0.02), nb.Septum(1.5, 1e-3)])
    assert s.areal_mass == pytest.approx(5.4 + 0.48 + 1.5)
    assert s.thickness == pytest.approx(0.002 + 0.05 + 0.02 + 0.001)
