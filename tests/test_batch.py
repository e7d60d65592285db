"""Variants along a leading axis (noisebudget.batch): layers with per-row parameters, a
variant's numbers independent of its batch, and the quadrature against independent
references (scipy.integrate) and the stack's own nested route."""

import warnings
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_properties import BUILDERS

import noisebudget as nb
from noisebudget import batch
from noisebudget.bands import third_octave_bands
from noisebudget.errors import ModelRangeWarning
from noisebudget.incidence import CriticalMap, paris_average_critical
from noisebudget.layers.base import FluidElement, SheetElement
from noisebudget.media import Air

# the layer types the cascade takes (elastic layers go through the general solve, one
# stack at a time)
CASCADE = sorted(t for t in BUILDERS if t != "solid")


def _element_values(el, shape):
    if isinstance(el, FluidElement):
        return [np.broadcast_to(x, shape) for x in (el.density, el.bulk_modulus,
                                                    el.thickness)]
    assert isinstance(el, SheetElement)
    return [np.broadcast_to(el.impedance, shape)]


@pytest.mark.parametrize("kind", CASCADE)
@settings(max_examples=25, deadline=None)
@given(data=st.data())
def test_layers_with_per_row_parameters_equal_each_variant(kind, data):
    # a layer whose numbers are (n, 1) arrays, one row per (variant, frequency), must give
    # each row the element of that row's own variant (the models compute with arrays as
    # with numbers); variants of another structure (a zero or infinite value where the
    # first has none) form another batch
    layers = data.draw(st.lists(BUILDERS[kind], min_size=1, max_size=4))
    layers = [x for x in layers if not getattr(x, "elastic", False)]  # Biot: general solve
    if not layers:
        return
    key = (batch._signature(layers[0]), layers[0].isotropic)
    layers = [x for x in layers if (batch._signature(x), x.isotropic) == key]
    var = np.repeat(np.arange(len(layers)), 3)
    f = np.tile([40.0, 900.0, 15000.0], len(layers))
    omega = 2 * np.pi * f[:, None]
    kt = omega / 343.0 * np.array([[0.0, 0.4, 0.97]])
    air = Air()
    stacked = batch._build(batch._gather(layers), var, layers[0])
    direction = not layers[0].isotropic
    phi = np.array([[0.3]])
    got = (stacked.element(omega, kt, air, phi) if direction
           else stacked.element(omega, kt, air))
    for i, layer in enumerate(layers):
        rows = var == i
        own = (layer.element(omega[rows], kt[rows], air, phi) if direction
               else layer.element(omega[rows], kt[rows], air))
        for a, b in zip(_element_values(got, kt.shape),
                        _element_values(own, kt[rows].shape), strict=True):
            np.testing.assert_allclose(a[rows], b, rtol=1e-12, atol=0)
        sharp = stacked.trace_resonances(omega, None) if direction else \
            stacked.trace_resonances(omega)
        ref = layer.trace_resonances(omega[rows], None) if direction else \
            layer.trace_resonances(omega[rows])
        if ref is not None:
            np.testing.assert_allclose(np.broadcast_to(sharp, (len(var), ref.shape[1]))[rows],
                                       ref, rtol=1e-9)


def _sidewall():
    """The demo study's sidewall with tiles (six layers), as the trade studies vary it."""
    from noisebudget.resources import data_path
    from noisebudget.study import load_study

    loaded = load_study(data_path("examples", "demo-study.toml"))
    return next(p for p in loaded.inputs.packages if p.name == "BPF tiles").stacks["sidewall"]


def _variants(stack, n, seed=1):
    rng = np.random.default_rng(seed)
    layers = stack.layers
    out = []
    for _ in range(n):
        blanket = replace(layers[1], layer_thickness=0.075 + 0.003 * rng.normal())
        gap = replace(layers[3], gap=rng.uniform(0.010, 0.018))
        tile = layers[4].with_cell(0, tension=27.24 + 1.5 * rng.normal())
        out.append(replace(stack, layers=(layers[0], blanket, layers[2], gap, tile,
                                          layers[5])))
    return out


def test_a_tile_computes_row_by_row():
    # what the batch's memo and its independence of the batch rest on: a tile's
    # impedance at a frequency is the same, bit for bit, computed alone or with any
    # others (the power series below |ka| = 2 and the Hankel functions above)
    tile = _sidewall().layers[4]
    omega = 2 * np.pi * np.geomspace(20, 20000, 601)
    together = tile.impedance(omega)
    alone = np.array([tile.impedance(omega[i:i + 1])[0] for i in range(omega.size)])
    np.testing.assert_array_equal(together, alone)
    np.testing.assert_array_equal(together[::-3], tile.impedance(omega[::-3]))


def test_a_remembered_tile_row_equals_its_own_computation():
    # the walls and the leak fronts of a budget evaluate each variant's tile at the same
    # band nodes, and a batch remembers a tile's impedance per frequency: a wall computed
    # after its front (the first five layers, the tile last) gives the numbers it gives
    # with nothing remembered, bit for bit, and its tile rows came from the memo
    bands = third_octave_bands(100, 1000)
    stacks = _variants(_sidewall(), 3)
    fronts = [replace(s, layers=s.layers[:5], labels=s.labels[:5]) for s in stacks]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        batch._ROW_MEMO.clear()
        alone = batch.band_transmissions(stacks, bands, rtol=2e-2)
        batch._ROW_MEMO.clear()
        batch.band_transmissions(fronts, bands, rtol=2e-2)
        known = {id(k): len(v) for k, v in batch._ROW_MEMO.items()}
        after = batch.band_transmissions(stacks, bands, rtol=2e-2)
    tiles = [s.mounted_layers[4] for s in stacks]
    assert all(known.get(id(t), 0) >= 9 * len(bands) for t in tiles)
    np.testing.assert_array_equal(after, alone)
    # bounded: a long narrowband sweep remembers at most _MEMO_ROWS frequencies a layer,
    # and its values are those computed without the memo
    f = np.geomspace(20, 20000, batch._MEMO_ROWS + 500)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        batch._ROW_MEMO.clear()
        first = stacks[0].average_transmission(f, rtol=2e-2)
        again = stacks[0].average_transmission(f, rtol=2e-2)
    assert max(len(v) for v in batch._ROW_MEMO.values()) <= batch._MEMO_ROWS
    np.testing.assert_array_equal(first, again)


@pytest.mark.parametrize("curved", [False, True], ids=["flat", "curved-in-bay"])
def test_a_variant_does_not_depend_on_its_batch(curved):
    # the contract of a trade study's chunks: a variant's band TL is the same, bit for
    # bit, alone, in any batch, and by the stack's own method (also for a curved skin,
    # whose azimuth mean is in closed form, in a finite bay)
    bands = third_octave_bands(80, 5000 if not curved else 2500)
    base = _sidewall()
    if curved:
        skin = replace(base.layers[0], curvature_radius=1.35)
        base = replace(base, layers=(skin, *base.layers[1:]), panel=nb.Panel(0.5, 0.2))
    stacks = _variants(base, 5)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        together = batch.band_transmissions(stacks, bands)
        reordered = batch.band_transmissions(stacks[::-1][:3], bands)
        alone = batch.band_transmissions(stacks[2:3], bands)
        single = stacks[4].band_transmission_loss(bands)
    np.testing.assert_array_equal(together[2], alone[0])
    np.testing.assert_array_equal(together[4:1:-1], reordered)
    np.testing.assert_array_equal(-10 * np.log10(together[4]), single)


def test_batches_group_by_structure():
    # stacks of different structure (another layer class, a lossless against a lossy
    # gap) are computed in their own batches; each equals its own stack's average
    base = _sidewall()
    assert base.layers[3].loss_factor > 0
    lossless = replace(base, layers=base.layers[:3] + (nb.AirGap(0.014),)
                       + base.layers[4:])
    other = nb.Stack([nb.Septum(4.0), nb.AirGap(0.05), nb.Septum(2.0)])
    stacks = [base, other, lossless, base]
    assert len(batch._groups(stacks)[0]) == 3
    f = np.array([125.0, 2000.0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        tau = batch.average_transmissions(stacks, f)
        for s, t in zip(stacks, tau, strict=True):
            np.testing.assert_array_equal(s.average_transmission(f), t)


def _double_wall(panel=None):
    return nb.Stack([nb.Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01),
                     nb.Porous("jca-limp", 0.075, 4e4, 0.996, 1.0, 100e-6, 200e-6, 9.6),
                     nb.AirGap(0.02), nb.Plate(1.73, 268.0, 0.02, 0.0105)],
                    nb.standard_atmosphere(7620.0), Air(295.15, 75262.0), panel=panel)


@pytest.mark.parametrize("panel", [None, nb.Panel(0.5, 0.3)], ids=["infinite", "bay"])
def test_field_average_against_scipy_quad(panel):
    # independent reference: scipy.integrate.quad (QUADPACK qags) of Paris' integral
    # int tau(theta) sin(2 theta) dtheta / sin^2(theta_max) with the same tau(theta), split
    # at the critical angle of the warmer cabin air (the transmitted wave turns
    # evanescent; a bay radiates past it)
    from scipy import integrate

    s = _double_wall(panel)
    lim = np.radians(78.0)
    crit = np.arcsin(s.source_air.sound_speed / s.receiver_air.sound_speed)
    for fr in (160.0, 1250.0, 6300.0):
        if panel is None:
            def g(th, f=fr):
                return s.transmission_coefficient([f], [th])[0, 0] * np.sin(2 * th)
        else:
            omega = 2 * np.pi * np.array([[fr]])
            table = s._radiation(omega, lim)

            def g(th, om=omega, table=table):
                return s._tau(om, np.array([[th]]), radiation=lambda kt: table(
                    np.array([0]), kt))[0, 0] * np.sin(2 * th)
        # the bay's radiation table is good to about 1e-7 (noisebudget.finite_size)
        tol = 1e-10 if panel is None else 1e-6
        ref = sum(integrate.quad(g, a, b, limit=2000, epsabs=0, epsrel=tol)[0]
                  for a, b in ((0, crit), (crit, lim)))
        ref = ref / np.sin(lim) ** 2
        if panel is not None:
            ref = min(ref, 1.0)
        got = s.average_transmission([fr], "field")[0]
        assert 10 * np.log10(got / ref) == pytest.approx(0.0, abs=0.01)


def test_critical_map_removes_the_square_root_edge():
    # closed form: int_0^uc sqrt(uc - u) du = (2/3) uc^1.5; with a Lorentzian peak the
    # reference is scipy.integrate.quad; one panel in t is exact for the first, and the
    # pole's sinh map resolves the second to the tolerance
    from scipy import integrate

    uc, umax = 0.8, 0.95
    cmap = CriticalMap(uc, umax)

    def edge(rows, u, q):
        return np.sqrt(np.maximum(q, 0.0))

    got = paris_average_critical(edge, 1, cmap, rtol=1e-10) * umax
    assert got[0] == pytest.approx(2 / 3 * uc**1.5, rel=1e-12)
    u0, w = 0.5, 1e-4

    def peak(rows, u, q):
        return np.sqrt(np.maximum(q, 0.0)) * w / ((u - u0) ** 2 + w**2)

    ref = integrate.quad(lambda u: peak(0, u, uc - u), 0, uc, points=[u0], limit=500,
                         epsabs=0, epsrel=1e-12)[0]
    t0 = np.sqrt(1 - u0 / uc)
    dt = w / (2 * uc * t0)                    # the peak's half width in t
    pole = np.array([[t0 + 1j * dt]])
    got = paris_average_critical(peak, 1, cmap, poles=pole, rtol=1e-8) * umax
    assert got[0] == pytest.approx(ref, rel=1e-7)


def test_demo_stacks_agree_with_the_nested_route():
    # the stack's own route (graded panels in u, no change of variable) at a tolerance a
    # thousand times tighter is the reference: every demo package's stacks within 0.01 dB
    from noisebudget.resources import data_path
    from noisebudget.study import load_study

    loaded = load_study(data_path("examples", "demo-study.toml"))
    f = np.geomspace(50, 5600, 25)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        seen = set()
        for p in loaded.inputs.packages:
            for s in p.stacks.values():
                if id(s) in seen:
                    continue
                seen.add(id(s))
                got = s.transmission_loss(f, "field")
                ref = -10 * np.log10(s._average_nested(f, "field", None, 3e-6))
                np.testing.assert_allclose(got, ref, atol=0.01)


def test_stacks_the_batch_cannot_take_keep_their_own_route():
    # a mix of the demo's sidewalls in the zone's bay: the Biot foam package (the general
    # solve, its closed-form azimuth mean from two solves) is not batched and gets, bit
    # for bit, the band averages of its own nested route; the curved-skin variants are
    # batched and each equals its own stack; the nested route (graded panels in u, no
    # batch) agrees with the batch to 0.01 dB
    from noisebudget.bands import band_average
    from noisebudget.resources import data_path
    from noisebudget.study import load_study

    loaded = load_study(data_path("examples", "demo-study.toml"))
    bay = next(z for z in loaded.inputs.zones if z.name == "sidewall").panel
    walls = {p.name: p.stacks["sidewall"].with_panel(*bay) for p in loaded.inputs.packages}
    foam = walls["foam barrier"]
    assert foam._general and not batch.batchable(foam) and foam._azimuth_sheet() == 0
    tiles = _variants(walls["BPF tiles"], 2)
    stacks = [tiles[0], foam, walls["baseline"], tiles[1]]
    assert all(batch.batchable(s) for s in stacks if s is not foam)
    bands = third_octave_bands(200, 800)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        tau = batch.band_transmissions(stacks, bands)
        own = band_average(lambda f: foam._average_nested(f, "field", None, 9e-3), bands,
                           3e-3)
        np.testing.assert_array_equal(tau[1], own)
        for s, t in zip(stacks, tau, strict=True):
            np.testing.assert_array_equal(-10 * np.log10(t), s.band_transmission_loss(bands))
        nested = band_average(lambda f: tiles[1]._average_nested(f, "field", None, 9e-3),
                              bands, 3e-3)
    np.testing.assert_allclose(10 * np.log10(tau[3] / nested), 0.0, atol=0.01)
