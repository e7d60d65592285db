"""Numerical stability of the membrane-mass cell to 20 kHz: an independent high-precision
evaluation of the textbook Bessel solution (mpmath), the textbook form in double precision
where it is accurate, and a few thousand random physical tiles that must stay finite,
passive and reciprocal."""

import mpmath as mp
import numpy as np
import pytest
from scipy import special

import noisebudget as nb
from noisebudget.layers import Cell, Tile
from noisebudget.media import Air


def textbook(c, omega, p_m, f_d, lib):
    """The textbook solution w = A J0(kr) + B Y0(kr) - p / (k^2 T) with the clamped rim and
    the disk's equation of motion (Rayleigh's membrane with a rigid centre), in the
    arithmetic of ``lib`` (mpmath or numpy/scipy). Returns (annulus volume, disk W)."""
    if lib is mp:
        j, y, pi, sqrt = mp.besselj, mp.bessely, mp.pi, mp.sqrt
        num = mp.mpf
    else:
        j, y, pi, sqrt = special.jv, special.yv, np.pi, np.sqrt
        num = float
    t = num(c.tension) * (1 + 1j * num(c.loss_factor))
    rs = num(c.membrane_density) * num(c.membrane_thickness)
    om = num(omega) if lib is mp else omega
    k = om * sqrt(rs / t)
    a, r0 = num(c.radius), num(c.mass_radius)
    q = p_m / (k**2 * t)
    if c.mass_radius == 0:
        amp = q / j(0, k * a)
        return 2 * pi * amp * a * j(1, k * a) / k - q * pi * a**2, 0 * q
    md = num(c.mass) + rs * pi * r0**2
    c1 = -(om**2) * md * j(0, k * r0) + 2 * pi * r0 * t * k * j(1, k * r0)
    c2 = -(om**2) * md * y(0, k * r0) + 2 * pi * r0 * t * k * y(1, k * r0)
    rhs = f_d - om**2 * md * q
    det = j(0, k * a) * c2 - y(0, k * a) * c1
    amp_a = (q * c2 - y(0, k * a) * rhs) / det
    amp_b = (j(0, k * a) * rhs - q * c1) / det
    vol = (2 * pi * (amp_a * (a * j(1, k * a) - r0 * j(1, k * r0))
                     + amp_b * (a * y(1, k * a) - r0 * y(1, k * r0))) / k
           - q * pi * (a**2 - r0**2))
    return vol, amp_a * j(0, k * r0) + amp_b * y(0, k * r0) - q


HARD = [  # (cell, frequencies in Hz): slack, very lossy, stiff, bare, heavy disk
    Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05),
    Cell(0.01, 0.05e-3, 1000.0, 2.0, 0.4e-3, 2e-3, 0.5),
    Cell(0.02, 0.1e-3, 1400.0, 20.0, 1e-3, 0.5e-3, 2.0),
    Cell(0.01, 0.25e-3, 1000.0, 80.0, 0.0, 0.0, 0.3),
    Cell(0.015, 0.25e-3, 1000.0, 0.5, 0.0, 0.0, 1.0),
    Cell(0.01, 0.25e-3, 1150.0, 5000.0, 2e-3, 9e-3, 0.0),
]


@pytest.mark.parametrize("cell", HARD)
def test_cell_agrees_with_high_precision_textbook_solution(cell):
    # independent reference: the textbook J0/Y0 solution evaluated by mpmath with enough
    # digits to absorb its cancellation (about exp(2 |Im k| (a + r0)) plus (ka)^-2)
    for f in (0.1, 1.0, 30.0, 300.0, 3000.0, 20000.0):
        w = 2 * np.pi * f
        load = (1.0, 0.7 * np.pi * cell.mass_radius**2)
        vol, disk = cell.response(np.array([w]), *load)
        k = cell._wavenumber(w)[1]
        digits = 40 + int((2 * abs(k.imag) * (cell.radius + cell.mass_radius)
                           + 2 * abs(np.log10(abs(k * cell.radius)))) / np.log(10))
        with mp.workdps(digits):
            ref_vol, ref_disk = (complex(v) for v in textbook(cell, w, *load, lib=mp))
        assert vol[0] == pytest.approx(ref_vol, rel=1e-11, abs=0)
        if cell.mass_radius:
            assert disk[0] == pytest.approx(ref_disk, rel=1e-11, abs=0)


def random_tiles(n, seed):
    """Physical tiles: radius 2-30 mm, film 10 um - 1 mm of 800-8000 kg/m^3, tension
    0.5-5000 N/m, loss factor 0-2, bare or with a 1 mg - 5 g disk, one or two kinds."""
    rng = np.random.default_rng(seed)

    def logu(lo, hi):
        return float(np.exp(rng.uniform(np.log(lo), np.log(hi))))

    tiles = []
    for _ in range(n):
        kinds = 1 + int(rng.random() < 0.3)
        cells, radius = [], logu(2e-3, 30e-3)
        for i in range(kinds):
            a = radius * (1 if i == 0 else rng.uniform(0.5, 1.0))
            bare = rng.random() < 0.25
            eta = 0.0 if rng.random() < 0.1 else logu(1e-3, 2.0)
            cells.append(Cell(a, logu(1e-5, 1e-3), rng.uniform(800, 8000), logu(0.5, 5000),
                              0.0 if bare else logu(1e-6, 5e-3),
                              0.0 if bare else a * rng.uniform(0.05, 0.8), eta,
                              1.0 / kinds))
        frame = "floating" if rng.random() < 0.6 else "clamped"
        tiles.append(Tile(tuple(cells), 2 * radius * rng.uniform(1.0, 1.5), frame,
                          logu(0.05, 3.0) if frame == "floating" else 0.0))
    return tiles


F = np.concatenate([np.geomspace(1.0, 20000.0, 36), [0.01, 19999.0, 20000.0]])


def test_random_tiles_finite_passive_reciprocal():
    air = Air()
    tiles = random_tiles(2500, seed=12)
    w = 2 * np.pi * F
    for t in tiles:
        z = t.impedance(w)
        assert np.all(np.isfinite(z))
        # passive sheet: the real part of the series impedance is >= 0
        assert np.all(z.real >= -1e-9 * np.abs(z)), t
        # tau of the tile between two airs: |1 + Z / 2 rho c|^-2 <= 1
        tau = 1 / np.abs(1 + z / (2 * air.impedance)) ** 2
        assert np.all(tau <= 1 + 1e-12)
        for c in t.cells:
            # Maxwell-Betti reciprocity of the cell: the annulus volume per unit disk force
            # equals the disk displacement per unit pressure on the annulus
            if c.mass_radius:
                v_f, _ = c.response(w, 0.0, 1.0)
                _, w_p = c.response(w, 1.0, 0.0)
                np.testing.assert_allclose(v_f, w_p, rtol=1e-8, atol=1e-300)


def test_random_tiles_agree_with_textbook_form_where_it_is_accurate():
    # where the textbook form loses little (|ka| > 0.05 and |Im k| (a + r0) < 4) both agree
    w = 2 * np.pi * F[:-3]
    checked = 0
    for t in random_tiles(600, seed=3):
        for c in t.cells:
            k = c._wavenumber(w)[1]
            ok = (np.abs(k * c.radius) > 0.05) & (np.abs(k.imag) * (c.radius + c.mass_radius)
                                                   < 4)
            if not ok.any():
                continue
            load = (1.0, np.pi * c.mass_radius**2)
            vol, disk = c.response(w[ok], *load)
            ref_vol, ref_disk = textbook(c, w[ok], *load, lib=np)
            np.testing.assert_allclose(vol, ref_vol, rtol=1e-7)
            if c.mass_radius:
                np.testing.assert_allclose(disk, ref_disk, rtol=1e-7)
            checked += int(ok.sum())
    assert checked > 5000


def test_slack_lossy_tile_stays_finite_in_a_stack_to_20_kHz():
    # a slack, very lossy film: the textbook form overflows here (jv of |Im ka| > 700)
    t = Tile((Cell(0.02, 0.1e-3, 1400.0, 0.2, 1e-3, 0.5e-3, 2.0),), 0.045, "floating", 0.4)
    s = nb.Stack([nb.Plate.from_material(1.6e-3, 2780, 73e9, 0.33, 0.01), nb.AirGap(0.05), t])
    f = np.geomspace(20, 20000, 60)
    tl = s.transmission_loss(f, "field")
    assert np.all(np.isfinite(tl)) and np.all(tl >= 0)
    c, w = t.cells[0], 2 * np.pi * 20000.0
    assert abs((c._wavenumber(w)[1] * c.radius).imag) > 700
    with np.errstate(all="ignore"):
        assert not np.isfinite(textbook(c, w, 1.0, 0.0, lib=np)[0])
    assert np.isfinite(c.response(np.array([w]), 1.0, 0.0)[0][0])


def test_bare_membrane_static_limit():
    # static clamped membrane under pressure p: w(r) = p (a^2 - r^2) / (4 T), mean p a^2 /
    # (8 T) (closed form of T (w'' + w'/r) = -p)
    c = Cell(0.01, 0.25e-3, 1000.0, 80.0, 0.0, 0.0, 0.0)
    r = np.linspace(0, 0.01, 5)
    np.testing.assert_allclose(c.displacement_profile(2 * np.pi * 1e-3, r).real,
                               (1e-4 - r**2) / 320, rtol=1e-9, atol=1e-20)
    vol, _ = c.response(np.array([2 * np.pi * 1e-3]), 1.0, 0.0)
    assert vol[0].real == pytest.approx(np.pi * 1e-4 * 1e-4 / 640, rel=1e-9)


def test_displacement_profile_matches_the_textbook_form():
    # the profile at r = r0 is the disk's displacement, at r = a zero; in between it
    # integrates to the annulus volume (trapezoid on a fine grid)
    c = Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05)
    for f in (50.0, 400.0, 5000.0):
        w = 2 * np.pi * f
        r = np.linspace(c.mass_radius, c.radius, 4001)
        prof = c.displacement_profile(w, r)
        vol, disk = c.response(np.array([w]), 1.0, np.pi * c.mass_radius**2)
        assert prof[0] == pytest.approx(disk[0], rel=1e-9)
        assert abs(prof[-1]) < 1e-12 * abs(disk[0])
        y = 2 * np.pi * r * prof
        assert np.sum((y[1:] + y[:-1]) / 2 * np.diff(r)) == pytest.approx(vol[0], rel=1e-5)
