"""Physical invariants on random stacks of every layer type (hypothesis).

* Passivity: a stack of passive layers never transmits more power than it receives,
  0 <= tau <= 1 (energy conservation; Allard & Atalla 2009, ch. 11).
* Reciprocity: the same stack seen from the other side, with the two airs swapped,
  transmits the same power at the same trace wavenumber, sin(theta2) / c2 =
  sin(theta1) / c1 (Rayleigh's reciprocity theorem for a reciprocal two-port: every
  layer matrix has determinant 1 and equal diagonal entries).

Frequencies up to 20 kHz, any angle, airs from cruise to ground conditions, every model:
plates, septa, screens, air gaps, the four equivalent fluids (inside and far outside
the empirical models' fitted range), Biot layers, elastic solids and tile arrays with one
or two cell kinds.
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import noisebudget as nb
from noisebudget.layers import LAYER_TYPES, Cell, Tile
from noisebudget.media import Air

pytestmark = pytest.mark.filterwarnings("ignore::noisebudget.errors.ModelRangeWarning")


def logf(lo, hi):
    return st.floats(np.log(lo), np.log(hi)).map(np.exp)


_air = st.builds(Air, st.floats(215.0, 320.0), logf(2e4, 1.1e5))

_cell = st.builds(
    lambda a, h, rho, t, mass, frac, eta, bare: Cell(
        a, h, rho, t, 0.0 if bare else mass, 0.0 if bare else frac * a, eta),
    logf(2e-3, 30e-3), logf(1e-5, 1e-3), st.floats(800.0, 8000.0), logf(0.5, 5000.0),
    logf(1e-6, 5e-3), st.floats(0.05, 0.8), st.one_of(st.just(0.0), logf(1e-3, 2.0)),
    st.booleans())


@st.composite
def _tile(draw):
    cells = draw(st.lists(_cell, min_size=1, max_size=2))
    cells = [Cell(c.radius, c.membrane_thickness, c.membrane_density, c.tension, c.mass,
                  c.mass_radius, c.loss_factor, 1.0 / len(cells)) for c in cells]
    pitch = 2 * max(c.radius for c in cells) * draw(st.floats(1.0, 1.5))
    frame = draw(st.sampled_from(["clamped", "floating"]))
    return Tile(tuple(cells), pitch, frame,
                draw(logf(0.05, 3.0)) if frame == "floating" else 0.0)


_porous = st.one_of(
    st.builds(lambda m, d, s: nb.Porous(m, d, s), st.sampled_from(["delany-bazley", "miki"]),
              logf(1e-3, 0.3), logf(1e3, 1e6)),
    st.builds(lambda d, s: nb.Porous("jca", d, s, 0.97, 1.1, 60e-6, 150e-6),
              logf(1e-3, 0.3), logf(2e3, 2e5)),
    st.builds(lambda d, s, rho: nb.Porous("jca-limp", d, s, 0.98, 1.05, 80e-6, 160e-6, rho),
              logf(1e-3, 0.3), logf(2e3, 2e5), st.floats(5.0, 60.0)),
    st.builds(lambda d, s, rho, e, nu, eta: nb.Porous("biot", d, s, 0.97, 1.1, 60e-6, 150e-6,
                                                      rho, e, nu, eta),
              logf(1e-3, 0.15), logf(2e3, 2e5), st.floats(5.0, 60.0), logf(1e4, 1e7),
              st.floats(0.0, 0.45), logf(1e-3, 0.3)))
BUILDERS = {  # one strategy per stack-file layer type
    "septum": st.builds(nb.Septum, logf(0.01, 20.0)),
    "plate": st.builds(lambda h, rho, e, nu, eta: nb.Plate.from_material(h, rho, e, nu, eta),
                       logf(0.3e-3, 10e-3), st.floats(1000.0, 8000.0), logf(2e9, 210e9),
                       st.floats(0.2, 0.45), logf(1e-3, 0.3)),
    "air": st.builds(nb.AirGap, st.floats(0.0, 0.3)),
    "porous": _porous,
    "screen": st.builds(nb.Screen, logf(10.0, 5e3), st.floats(0.0, 0.5)),
    "tile": _tile(),
    "solid": st.builds(lambda h, rho, e, nu, eta: nb.Solid(h, rho, e, nu, eta),
                       logf(1e-4, 0.02), st.floats(800.0, 8000.0), logf(1e6, 210e9),
                       st.floats(0.0, 0.49), logf(1e-3, 0.5)),
}
_layer = st.one_of(*BUILDERS.values())
_stack = st.builds(lambda layers, a1, a2, cav: nb.Stack(layers, a1, a2, cav),
                   st.lists(_layer, min_size=1, max_size=5), _air, _air, _air)
_f = st.lists(logf(1.0, 20000.0), min_size=1, max_size=6).map(np.array)
_theta = st.lists(st.floats(0.0, np.pi / 2), min_size=1, max_size=4).map(np.array)
# off grazing on both sides: at grazing tau has a square-root edge in cos(theta), so
# rounding of cos(theta) near 0 is amplified without bound
_oblique = st.lists(st.floats(0.0, np.radians(89.0)), min_size=1, max_size=4).map(np.array)


def test_every_layer_type_has_a_generator():
    assert set(BUILDERS) == set(LAYER_TYPES)


@settings(max_examples=150, deadline=None)
@given(_stack, _f, _theta)
def test_random_stacks_are_passive(stack, f, theta):
    tau = stack.transmission_coefficient(f, theta)
    assert np.all(np.isfinite(tau))
    assert np.all(tau >= 0) and np.all(tau <= 1 + 1e-9), tau.max()


@settings(max_examples=150, deadline=None)
@given(_stack, _f, _oblique)
def test_random_stacks_are_reciprocal_with_airs_swapped(stack, f, theta):
    c1, c2 = stack.source_air.sound_speed, stack.receiver_air.sound_speed
    s2 = c2 / c1 * np.sin(theta)
    tau = stack.transmission_coefficient(f, theta)
    # beyond the critical angle the transmitted wave is evanescent: nothing is transmitted
    assert np.all(tau[:, s2 > 1] == 0)
    ok = s2 <= 0.99
    if not ok.any():
        return
    back = stack.reversed().transmission_coefficient(f, np.arcsin(s2[ok]))
    # the general solve of elastic layers (8x8 interface systems) carries more rounding
    # than the 2x2 cascade: a stiff solid at 1 Hz reaches about 1e-6
    rtol = 1e-5 if any(getattr(layer, "elastic", False) for layer in stack.layers) else 1e-6
    np.testing.assert_allclose(back, tau[:, ok], rtol=rtol, atol=1e-12 * tau.max() + 1e-300)


@settings(max_examples=25, deadline=None)
@given(_stack, st.sampled_from(["field", "diffuse"]))
def test_random_stacks_average_to_a_finite_non_negative_tl(stack, incidence):
    tl = stack.transmission_loss(np.array([31.5, 400.0, 5000.0, 20000.0]), incidence)
    assert np.all(np.isfinite(tl)) and np.all(tl >= -1e-6)
