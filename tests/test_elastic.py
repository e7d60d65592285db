"""Elastic solid layers, bonded and unbonded interfaces, and the general solve."""

import warnings

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import noisebudget as nb
from noisebudget import multilayer
from noisebudget.errors import InputErrors, ModelRangeWarning
from noisebudget.layers.elastic import lame_constants
from noisebudget.media import Air

ALU = dict(density=2780.0, youngs_modulus=73.1e9, poisson_ratio=0.33, loss_factor=0.01)
FOAM = dict(flow_resistivity=2e4, porosity=0.97, tortuosity=1.3, viscous_length=60e-6,
            thermal_length=150e-6, bulk_density=30.0, youngs_modulus=2e5, poisson_ratio=0.3,
            loss_factor=0.1)


def tl(stack, f, th):
    return -10 * np.log10(stack.transmission_coefficient(f, th))


def test_solid_at_normal_incidence_is_a_fluid_layer():
    # At normal incidence only the compressional wave is excited: the layer is a fluid
    # layer of impedance Z = sqrt(rho (lambda + 2 mu)) and wavenumber kL, with
    # tau = |2 / (2 cos kL d + j (Z/Z0 + Z0/Z) sin kL d)|^2 (Allard & Atalla 2009, ch. 11,
    # fluid-layer transfer matrix between equal half-spaces)
    d, rho = 0.05, 1200.0
    s = nb.Solid(d, rho, 5e9, 0.35, 0.05)
    lam, mu = lame_constants(5e9, 0.35, 0.05)
    f = np.array([100.0, 1000.0, 5000.0, 12000.0, 20000.0])
    kl = 2 * np.pi * f * np.sqrt(rho / (lam + 2 * mu))
    z, z0 = np.sqrt(rho * (lam + 2 * mu)), nb.Air().impedance
    tau = np.abs(2 / (2 * np.cos(kl * d) + 1j * (z / z0 + z0 / z) * np.sin(kl * d))) ** 2
    np.testing.assert_allclose(nb.Stack([s]).transmission_coefficient(f, [0.0])[:, 0], tau,
                               rtol=1e-9)


def _textbook_tau(solid, air1, air2, f, theta1, dps=60):
    """tau of one solid layer between two airs by the plain transfer matrix
    ``T = Gamma(0) Gamma(d)^-1`` of Allard & Atalla 2009, ch. 11, evaluated with mpmath at
    ``dps`` digits. Written here from the displacement potentials (``u = grad phi +
    curl(psi y)``, Hooke's law), apart from the library's wave bases: in double precision
    this matrix cancels catastrophically for a thin stiff layer, at 60 digits it does
    not."""
    mp = mpmath.mp
    mp.dps = dps
    w = 2 * mp.pi * mp.mpf(f)
    lam, mu = (mpmath.mpc(x) for x in lame_constants(solid.youngs_modulus,
                                                      solid.poisson_ratio,
                                                      solid.loss_factor))
    rho, d = mp.mpf(solid.density), mp.mpf(solid.layer_thickness)
    k1 = w / mp.mpf(air1.sound_speed)
    kt = k1 * mpmath.sin(mp.mpf(theta1))

    def kz(k2):  # Im kz <= 0
        q = mpmath.sqrt(k2 - kt**2)
        return -q if mpmath.im(q) > 0 or (mpmath.im(q) == 0 and mpmath.re(q) < 0) else q

    cols = []
    for k2, shear in ((w**2 * rho / (lam + 2 * mu), False), (w**2 * rho / mu, True)):
        for sign in (1, -1):
            q = sign * kz(k2)
            dx, dz = -1j * kt, -1j * q
            ux, uz = (-dz, dx) if shear else (dx, dz)
            szz = lam * (dx * ux + dz * uz) + 2 * mu * dz * uz
            cols.append((q, [1j * w * ux, 1j * w * uz, szz, mu * (dz * ux + dx * uz)]))

    def gamma(z):
        return mpmath.matrix([[v[i] * mpmath.exp(-1j * q * z) for q, v in cols]
                              for i in range(4)])

    t_mat = gamma(0) * mpmath.inverse(gamma(d))  # state at the top from the bottom's
    kz2 = kz(w**2 / mp.mpf(air2.sound_speed) ** 2)
    y1 = k1 * mpmath.cos(mp.mpf(theta1)) / (w * mp.mpf(air1.density))
    y2 = kz2 / (w * mp.mpf(air2.density))
    # unknowns r, t, v_x(0), v_x(d): S(0) = (v_x0, (1 - r) y1, -(1 + r), 0),
    # S(d) = (v_xd, t y2, -t, 0), S(0) = T S(d)
    a, b = mpmath.matrix(4, 4), mpmath.matrix(4, 1)
    at_r, at_t = [0, -y1, -1, 0], [0, y2, -1, 0]
    for i in range(4):
        a[i, 0], a[i, 2] = at_r[i], 1 if i == 0 else 0
        a[i, 1] = -sum(t_mat[i, j] * at_t[j] for j in range(4))
        a[i, 3] = -t_mat[i, 0]
        b[i] = -[0, y1, -1, 0][i]
    t = mpmath.lu_solve(a, b)[1]
    return float(abs(t) ** 2 * mpmath.re(y2) / mpmath.re(y1))


# Thin, stiff solids whose trace wavenumber far exceeds their own (compressional and shear
# waves evanescent and nearly alike), where reciprocity once failed by up to 1e-3:
# (solid, source air, receiving air, f Hz, theta rad)
_LOW = (Air(215.0, 22000.0), Air(215.0, 20700.0))
STIFF_CASES = [
    (nb.Solid(0.0183, 800.0, 72e9, 0.0, 0.37), *_LOW, 1.0, 1.0),
    (nb.Solid(0.018, 800.0, 26.5e9, 0.0, 0.37), *_LOW, 1.0, 1.0),
    (nb.Solid(4e-3, 2500.0, 70e9, 0.22, 0.002), Air(), Air(), 80.0, np.radians(85.0)),
    (nb.Solid(2e-3, 7850.0, 210e9, 0.3, 0.001), Air(), Air(), 1.0, 1.0),
    (nb.Solid(0.01, 800.0, 210e9, 0.0, 0.01), Air(), Air(), 100.0, 1.0),  # 16 km/s
    (nb.Solid(1e-4, 8000.0, 210e9, 0.3, 0.001), *_LOW, 1.0, 0.5),
    # at normal incidence the waves are apart but the layer is as stiff against the air
    # (glass once 1.7e-11 off, steel 2.5e-11)
    (nb.Solid(4e-3, 2500.0, 70e9, 0.22, 0.002), *_LOW, 1.0, 0.0),
    (nb.Solid(2e-3, 7850.0, 210e9, 0.3, 0.001), *_LOW, 1.0, 0.0),
]


@pytest.mark.parametrize("case", STIFF_CASES, ids=lambda c: f"E{c[0].youngs_modulus:.3g}-"
                         f"d{c[0].layer_thickness:g}-f{c[3]:g}")
def test_thin_stiff_solid_agrees_with_the_textbook_matrix_at_60_digits(case):
    # the plain transfer matrix at 60 digits (mpmath) is the reference, both ways through
    # the layer; the library's double-precision solve agrees to 1e-11 (measured: 1e-12
    # and below), so it is also reciprocal to that
    solid, air1, air2, f, theta = case
    theta2 = float(np.arcsin(air2.sound_speed / air1.sound_speed * np.sin(theta)))
    for a, b, th in ((air1, air2, theta), (air2, air1, theta2)):
        tau = nb.Stack([solid], a, b).transmission_coefficient([f], [th])[0, 0]
        assert tau == pytest.approx(_textbook_tau(solid, a, b, f, th), rel=1e-11)


def _mp_kz(k2, kt):
    """``sqrt(k^2 - kt^2)`` with ``Im kz <= 0`` (``Re kz >= 0`` when real), in mpmath."""
    root = mpmath.sqrt(k2 - kt**2)
    return -root if mpmath.im(root) > 0 or (mpmath.im(root) == 0
                                             and mpmath.re(root) < 0) else root


def _global_matrix_tau(stack, f, theta1, dps=60):
    """tau of solids and bonded plates between two airs by one global system of all the
    waves' amplitudes (Allard & Atalla 2009, ch. 11: each solid's four plain waves from
    the displacement potentials, Hooke's law; air | solid ``v = v_z``, ``sigma_zz = -p``,
    ``sigma_xz = 0``; solid | solid all four continuous; a plate's relations as written
    in :mod:`noisebudget.multilayer`, with its impedances as inputs), in mpmath at
    ``dps`` digits."""
    mp = mpmath.mp
    mp.dps = dps
    a1, a2 = stack.source_air, stack.receiver_air
    w = 2 * mp.pi * mp.mpf(f)
    k1 = w / mp.mpf(a1.sound_speed)
    kt = k1 * mpmath.sin(mp.mpf(theta1))
    y1 = k1 * mpmath.cos(mp.mpf(theta1)) / (w * mp.mpf(a1.density))
    y2 = _mp_kz(w**2 / mp.mpf(a2.sound_speed) ** 2, kt) / (w * mp.mpf(a2.density))
    n = 2  # unknowns: r, t, then each solid's four wave amplitudes, each plate's (u, w)
    items = []
    for layer in stack.mounted_layers:
        if isinstance(layer, nb.Solid):
            lam, mu = (mpmath.mpc(complex(x)) for x in lame_constants(
                layer.youngs_modulus, layer.poisson_ratio, layer.loss_factor))
            rho = mp.mpf(layer.density)
            waves = []
            for k2, shear in ((w**2 * rho / (lam + 2 * mu), False), (w**2 * rho / mu, True)):
                for sign in (1, -1):
                    q = sign * _mp_kz(k2, kt)
                    dx, dz = -1j * kt, -1j * q
                    ux, uz = (-dz, dx) if shear else (dx, dz)
                    waves.append((q, [1j * w * ux, 1j * w * uz,
                                      lam * (dx * ux + dz * uz) + 2 * mu * dz * uz,
                                      mu * (dz * ux + dx * uz)]))
            items.append(("solid", n, waves, mp.mpf(layer.layer_thickness)))
            n += 4
        else:
            omega, ktf = np.array([2 * np.pi * f]), np.array([float(kt)])
            el = layer.element(omega, ktf, stack.cavity_air)
            mech = multilayer._sheet_mechanics(layer, el, omega, ktf)[:3]
            items.append(("plate", n, *(mpmath.mpc(complex(np.ravel(x)[0])) for x in mech)))
            n += 2

    def face(item, bottom):  # (v_x, v_z, sigma_zz, sigma_xz) as {unknown: coefficient}
        if item == "source":
            return None, {0: -y1, "c": y1}, {0: -1, "c": -1}, {}
        if item == "receiver":
            return None, {1: y2}, {1: -1}, {}
        _, first, waves, d = item
        z = d if bottom else 0
        return tuple({first + k: v[i] * mpmath.exp(-1j * q * z)
                      for k, (q, v) in enumerate(waves)} for i in range(4))

    def add(*terms):  # one equation: sum of scale * {unknown: coefficient} = 0
        row = {}
        for scale, expr in terms:
            for key, val in expr.items():
                row[key] = row.get(key, 0) + scale * val
        rows.append(row)

    rows, seq = [], ["source", *items, "receiver"]
    i = 0
    while i < len(seq) - 1:
        above, plate = seq[i], None
        if isinstance(seq[i + 1], tuple) and seq[i + 1][0] == "plate":
            plate, i = seq[i + 1], i + 1
        below = seq[i + 1]
        i += 1
        fa, fb = face(above, True), face(below, False)
        if plate is None:
            for k in range(4) if fa[0] is not None and fb[0] is not None else (1, 2):
                add((1, fa[k]), (-1, fb[k]))
            if fa[0] is None or fb[0] is None:
                add((1, (fb if fa[0] is None else fa)[3]))
            continue
        _, u, zn, zm, jkh = plate
        for fx, sign in ((fa, -1), (fb, 1)):  # faces at -+h/2: v_x = u -+ j kt h/2 w
            add((1, fx[1]), (-1, {u + 1: 1}))
            if fx[0] is not None:
                add((1, fx[0]), (-1, {u: 1, u + 1: sign * jkh}))
        add((1, fb[2]), (-1, fa[2]), (-jkh, fa[3]), (-jkh, fb[3]), (-1, {u + 1: zn}))
        add((1, fb[3]), (-1, fa[3]), (-1, {u: zm}))
    lhs, rhs = mpmath.matrix(n, n), mpmath.matrix(n, 1)
    for k, row in enumerate(rows):
        rhs[k] = -row.pop("c", 0)
        for key, val in row.items():
            lhs[k, key] += val
    t = mpmath.lu_solve(lhs, rhs)[1]
    return float(abs(t) ** 2 * mpmath.re(y2) / mpmath.re(y1))


_CRUISE = (Air(218.0, 22026.5), Air(215.0, 22026.5))
BONDED_CASES = [  # (layers, airs, f Hz, theta rad)
    # a lossy stiff solid (its waves evanescent and within 3 degrees of each other at
    # kt = 1.75 |kT|), a soft solid and a plate, all bonded: once 5e-10 off
    ((nb.Solid(6.74e-3, 6183.0, 5.91e9, 0.25, 0.368), nb.Solid(6.74e-3, 800.0, 8.89e6, 0.0,
                                                                0.368),
      nb.Plate(0.912, 0.280, 0.0, 0.912e-3)), _CRUISE, 1.0, 1.0),
    ((nb.Solid(6.74e-3, 6183.0, 5.91e9, 0.25, 0.368),), _CRUISE, 1.0, 1.0),
    ((nb.Plate.from_material(1.6e-3, 2780.0, 73.1e9, 0.33, 0.01),
      nb.Solid(4e-3, 2500.0, 70e9, 0.22, 0.002)), _CRUISE, 1.0, 0.7),
    ((nb.Plate.from_material(1.6e-3, 2780.0, 73.1e9, 0.33, 0.01),
      nb.Solid(3e-3, 1800.0, 5e6, 0.49, 0.3), nb.Solid(2e-3, 2780.0, 73.1e9, 0.33, 0.01)),
     (Air(), Air()), 200.0, 1.2),
]


@pytest.mark.parametrize("case", BONDED_CASES, ids=["three", "lossy", "glass", "damped"])
def test_bonded_solids_and_plates_agree_with_a_global_matrix_at_60_digits(case):
    # the one global system of all waves at 60 digits is the reference, both ways through
    # the stack (measured: 2e-14 and below)
    layers, (air1, air2), f, theta = case
    stack = nb.Stack(layers, air1, air2, bonding=("bonded",) * len(layers))
    theta2 = float(np.arcsin(air2.sound_speed / air1.sound_speed * np.sin(theta)))
    for s, th in ((stack, theta), (stack.reversed(), theta2)):
        tau = s.transmission_coefficient([f], [th])[0, 0]
        assert tau == pytest.approx(_global_matrix_tau(s, f, th), rel=1e-12)


@pytest.mark.parametrize("case", [STIFF_CASES[i] for i in (2, 3, 4)],
                         ids=["glass", "steel", "16 km/s"])
def test_a_nanoradian_moves_tau_as_the_textbook_matrix_does(case):
    # a 1e-9 rad change of angle once moved tau by 4e-6 (steel, glass) to 1e-3 (16 km/s);
    # it must move it as the 60-digit solution does, to 1e-12 of tau
    solid, air1, air2, f, theta = case
    stack = nb.Stack([solid], air1, air2)
    tau = stack.transmission_coefficient([f], [theta, theta + 1e-9])[0]
    exact = [_textbook_tau(solid, air1, air2, f, th) for th in (theta, theta + 1e-9)]
    assert abs((tau[1] - tau[0]) - (exact[1] - exact[0])) < 1e-12 * exact[0]


def test_thin_solid_tends_to_thin_plate_and_mass_law():
    # REFERENCES mass law [C]: m = 4.448 kg/m^2 (1.6 mm 2024-T3) at 500 Hz, normal
    # incidence, TL0 = 24.577 dB (Vigran 2008 eq. 6.109); at oblique incidence below
    # coincidence the exact elastic layer equals the Kirchhoff plate sheet (Cremer; Vigran
    # eq. 6.108) within 0.01 dB
    solid = nb.Stack([nb.Solid(1.6e-3, **ALU)])
    plate = nb.Stack([nb.Plate.from_material(1.6e-3, **ALU)])
    assert tl(solid, [500.0], [0.0])[0, 0] == pytest.approx(24.577, abs=0.005)
    f = np.array([100.0, 500.0, 1000.0, 2000.0])
    th = np.radians([0.0, 30.0, 60.0, 80.0])
    np.testing.assert_allclose(tl(solid, f, th), tl(plate, f, th), atol=0.01)
    # the field-incidence TL through the coincidence region within 0.5 dB (the solid's
    # shear and rotary inertia lower the coincidence slightly)
    f = np.array([4000.0, 7000.0, 9000.0])
    np.testing.assert_allclose(solid.transmission_loss(f), plate.transmission_loss(f),
                               atol=0.5)


def test_solid_of_no_thickness_vanishes():
    # DESIGN.md invariant: a zero-thickness layer changes nothing
    f = np.array([100.0, 1000.0, 8000.0])
    th = np.radians([0.0, 40.0, 75.0])
    thin = nb.Solid(0.0, 1200.0, 5e9, 0.35, 0.05)
    np.testing.assert_allclose(nb.Stack([thin]).transmission_coefficient(f, th), 1.0,
                               rtol=1e-9)
    plate = nb.Plate.from_material(1.6e-3, **ALU)
    foam = nb.Porous("biot", 0.05, **FOAM)
    np.testing.assert_allclose(nb.Stack([plate, thin, foam]).transmission_coefficient(f, th),
                               nb.Stack([plate, foam]).transmission_coefficient(f, th),
                               rtol=1e-7)


def test_general_solve_reproduces_the_fluid_cascade():
    # Two independent routes for a stack of fluids and sheets: the 2x2 cascade and the
    # general reflection-matrix solve (plates, septum, screen, porous, air, thick lossy
    # layer at high frequency)
    layers = [nb.Plate.from_material(1.6e-3, **ALU), nb.Porous("jca", 0.1, 2e4, 0.97, 1.3,
                                                               60e-6, 150e-6),
              nb.AirGap(0.02), nb.Screen(400.0), nb.Septum(1.5), nb.AirGap(0.01),
              nb.Plate(1.73, 268.0, 0.02, 0.0105)]
    stack = nb.Stack(layers, nb.standard_atmosphere(10000.0), nb.Air(295.0, 75000.0))
    f = np.geomspace(50, 20000, 40)[:, None]
    th = np.radians(np.linspace(0, 89, 9))[None, :]
    omega = 2 * np.pi * f
    general = multilayer.solve_angles(stack, omega, th)
    np.testing.assert_allclose(general.tau, stack.transmission_coefficient(f[:, 0], th[0]),
                               rtol=1e-12, atol=1e-300)
    rigid = multilayer.solve_angles(stack, omega, th, "rigid").reflection
    z = stack.surface_impedance(f[:, 0], th[0]) * np.cos(th) / stack.source_air.impedance
    np.testing.assert_allclose(rigid, (z - 1) / (z + 1), rtol=1e-7, atol=1e-9)


def test_plate_bonded_to_foam_matches_thin_solid_bonded_to_foam():
    # The plate's interface relations (Kirchhoff faces at -+h/2, membrane stiffness
    # 12 D / h^2) against the exact elastic layer of the same aluminium, both bonded to a
    # Biot foam: same result while the plate is thin (kh << 1)
    foam = nb.Porous("biot", 0.05, **FOAM)
    f = np.array([100.0, 500.0, 1000.0, 2000.0])
    th = np.radians([0.0, 30.0, 60.0, 80.0])
    for order in (1, -1):
        a = nb.Stack([nb.Plate.from_material(1.6e-3, **ALU), foam][::order])
        b = nb.Stack([nb.Solid(1.6e-3, **ALU), foam][::order])
        np.testing.assert_allclose(tl(a, f, th), tl(b, f, th), atol=0.01)


def test_unbonded_contact_is_an_air_film():
    # bonding = "unbonded" is a film of air of no thickness (Allard & Atalla 2009,
    # ch. 11); a 1 um air gap gives the same within 0.01 dB, and bonding differs
    plate, foam = nb.Plate.from_material(1.6e-3, **ALU), nb.Porous("biot", 0.05, **FOAM)
    f = np.array([100.0, 500.0, 2000.0, 8000.0])
    th = np.radians([0.0, 45.0, 70.0])
    unbonded = nb.Stack([plate, foam], bonding=("bonded", "unbonded"))
    film = nb.Stack([plate, nb.AirGap(1e-6), foam])
    bonded = nb.Stack([plate, foam])
    np.testing.assert_allclose(tl(unbonded, f, th), tl(film, f, th), atol=0.01)
    assert np.max(np.abs(tl(unbonded, f, th) - tl(bonded, f, th))) > 1.0
    assert unbonded.reversed().bonding == ("bonded", "unbonded")


_LAYERS = {
    "plate": lambda: nb.Plate.from_material(1.2e-3, **ALU),
    "septum": lambda: nb.Septum(1.2),
    "screen": lambda: nb.Screen(300.0, 0.05),
    "air": lambda: nb.AirGap(0.015),
    "jca": lambda: nb.Porous("jca", 0.03, 1.5e4, 0.98, 1.1, 90e-6, 180e-6),
    "biot": lambda: nb.Porous("biot", 0.04, **FOAM),
    "rubber": lambda: nb.Solid(3e-3, 1200.0, 5e6, 0.49, 0.15),
    "glass": lambda: nb.Solid(4e-3, 2500.0, 70e9, 0.22, 0.002),
}


@settings(max_examples=40, deadline=None)
@given(names=st.lists(st.sampled_from(sorted(_LAYERS)), min_size=1, max_size=5),
       bonds=st.lists(st.booleans(), min_size=5, max_size=5), theta=st.floats(0.0, 1.5))
def test_mixed_stacks_are_reciprocal_and_passive(names, bonds, theta):
    # DESIGN.md invariants for any stack of elastic, porous, fluid and sheet layers with
    # any bonding: reversed stack transmits the same; 0 <= tau <= absorption <= 1
    layers = [_LAYERS[n]() for n in names]
    bonding = tuple("bonded" if b else "unbonded" for b in bonds[:len(layers)])
    s = nb.Stack(layers, bonding=bonding)
    f = np.array([80.0, 700.0, 5000.0])
    tau = s.transmission_coefficient(f, [theta])
    np.testing.assert_allclose(tau, s.reversed().transmission_coefficient(f, [theta]),
                               rtol=1e-9, atol=1e-300)
    alpha = s.absorption_coefficient(f, theta, backing="receiver")
    assert np.all(np.isfinite(tau)) and np.all(tau >= 0) and np.all(tau <= 1 + 1e-9)
    assert np.all(alpha >= tau - 1e-9) and np.all(alpha <= 1 + 1e-9)


def test_incidence_averages_and_bands_run_with_elastic_layers():
    # field incidence, band TL and random-incidence absorption use the same Stack methods
    s = nb.Stack([nb.Plate.from_material(1.6e-3, **ALU), nb.Porous("biot", 0.05, **FOAM),
                  nb.AirGap(0.02), nb.Solid(3e-3, 1200.0, 5e6, 0.49, 0.15),
                  nb.Plate(1.73, 268.0, 0.02, 0.0105)])
    f = np.geomspace(100, 10000, 12)
    tl_f = s.transmission_loss(f, "field")
    assert np.all(np.isfinite(tl_f)) and np.all(tl_f > 0)
    bands = nb.third_octave_bands(100, 5000)
    assert np.all(np.isfinite(s.band_transmission_loss(bands)))
    a = nb.Stack([nb.Porous("biot", 0.05, **FOAM)]).random_incidence_absorption(f, "rigid")
    assert np.all((a > 0) & (a <= 1))


def test_stack_file_with_solid_biot_and_bonding(tmp_path):
    text = """
[[layer]]
type = "plate"
thickness = "1.6 mm"
density = "2780 kg/m^3"
youngs_modulus = "73 GPa"
poisson_ratio = 0.33
[[layer]]
type = "porous"
model = "biot"
thickness = "50 mm"
flow_resistivity = "20000 Pa*s/m^2"
porosity = 0.97
tortuosity = 1.3
viscous_length = "60 um"
thermal_length = "150 um"
bulk_density = "30 kg/m^3"
youngs_modulus = "200 kPa"
poisson_ratio = 0.3
loss_factor = 0.1
bonding = "unbonded"
[[layer]]
type = "solid"
thickness = "3 mm"
density = "1200 kg/m^3"
youngs_modulus = "5 MPa"
poisson_ratio = 0.49
loss_factor = 0.15
"""
    path = tmp_path / "s.toml"
    path.write_text(text)
    s = nb.load_stack(path)
    assert s.bonding == ("bonded", "unbonded", "bonded")
    assert isinstance(s.layers[2], nb.Solid)
    assert s.areal_mass == pytest.approx(2780 * 1.6e-3 + 30 * 0.05 + 1200 * 3e-3)
    assert np.all(np.isfinite(s.transmission_loss([500.0, 2000.0])))
    bad = text.replace('bonding = "unbonded"', 'bonding = "glued"').replace(
        'youngs_modulus = "200 kPa"\n', "")
    path.write_text(bad)
    with pytest.raises(InputErrors) as err:
        nb.load_stack(path)
    lines = "\n".join(err.value.lines())
    assert "layer[2].bonding" in lines and "layer[2].youngs_modulus" in lines


def test_shipped_catalog_entries_and_example_compute():
    from noisebudget.catalog import load_catalog
    from noisebudget.resources import data_path

    cat = load_catalog()
    keys = [k for k in cat.keys() if k.split(".")[0] in ("poroelastic", "solid")]
    assert len(keys) >= 6
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", ModelRangeWarning)
        s = nb.load_stack(data_path("examples") / "bonded-foam.toml")
    assert any(getattr(layer, "elastic", False) for layer in s.layers)
    tau = s.transmission_coefficient(np.geomspace(50, 10000, 30), np.radians([0, 45, 80]))
    assert np.all(np.isfinite(tau)) and np.all((tau >= 0) & (tau <= 1))


def test_bonded_halves_make_the_whole_layer():
    # Continuity conditions between two bonded layers of the same material (Biot:
    # Deresiewicz & Skalak 1963 open-pore contact; solid: welded contact) must leave the
    # waves undisturbed: two halves transmit as the whole layer
    f = np.array([100.0, 1000.0, 6000.0])
    th = np.radians([0.0, 35.0, 70.0])
    for make in (lambda d: nb.Porous("biot", d, **FOAM),
                 lambda d: nb.Solid(d, 1200.0, 5e6, 0.49, 0.15)):
        whole = nb.Stack([make(0.04)]).transmission_coefficient(f, th)
        halves = nb.Stack([make(0.015), make(0.025)]).transmission_coefficient(f, th)
        np.testing.assert_allclose(halves, whole, rtol=1e-7)


def test_leading_variant_axis_equals_a_loop_over_stacks():
    # a frame modulus given as an (nv, 1, 1) array yields (nv, nf, nth), equal to
    # evaluating one stack per value
    e = np.array([1e5, 2e5, 4e5])
    kw = {**FOAM, "youngs_modulus": e[:, None, None]}
    plate, rubber = nb.Plate.from_material(1.6e-3, **ALU), nb.Solid(3e-3, 1200.0, 5e6, 0.49)
    f, th = np.array([100.0, 1000.0, 5000.0]), np.radians([0.0, 45.0])
    tau = nb.Stack([plate, nb.Porous("biot", 0.05, **kw), nb.AirGap(0.01), rubber]
                   ).transmission_coefficient(f, th)
    assert tau.shape == (3, 3, 2)
    for i, ei in enumerate(e):
        one = nb.Stack([plate, nb.Porous("biot", 0.05, **{**FOAM, "youngs_modulus": ei}),
                        nb.AirGap(0.01), rubber])
        np.testing.assert_allclose(tau[i], one.transmission_coefficient(f, th), rtol=1e-12)
