"""Membrane-mass cells and tiles against classical membrane theory, static stiffness,
the mass law, and round trips of tuning and calibration."""

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.cli import main
from noisebudget.layers import Cell, Tile
from noisebudget.media import Air
from noisebudget.tiles import fit_tile, mass_law_tl, normal_tl, tile_extrema, tune_peak

J01, J02 = 2.404825557695773, 5.520078110286311  # zeros of J0 (Abramowitz & Stegun 9.5)


def bare(tension=80.0, radius=0.01, eta=1e-3):
    return Cell(radius, 0.25e-3, 1000.0, tension, 0.0, 0.0, eta)


def test_bare_membrane_dips_at_j0_zeros():
    # Clamped circular membrane (Rayleigh, Theory of Sound; Morse & Ingard): the
    # area-averaged response diverges at f0n = j0n / (2 pi a) sqrt(T / rho_s)
    c = bare()
    f01 = J01 / (2 * np.pi * 0.01) * np.sqrt(80.0 / 0.25)
    assert c.first_membrane_frequency() == pytest.approx(f01)
    ext = tile_extrema(Tile((c,), 0.02, "clamped"), 100, 3000)
    assert ext.dip_hz[0] == pytest.approx(f01, rel=1e-3)
    assert ext.dip_hz[1] == pytest.approx(f01 * J02 / J01, rel=1e-3)


def test_bare_membrane_effective_mass_closed_form():
    # m_eff = rho_s / [1 - 2 J1(ka) / (ka J0(ka))] (derived for the clamped membrane);
    # infinite (TL peak) at the first zero of J2, ka = 5.135622 (A&S 9.5)
    from scipy.special import jv
    c = bare(eta=0.0)
    w = 2 * np.pi * np.array([300.0, 900.0, 1800.0])
    ka = w * np.sqrt(0.25 / 80.0) * 0.01
    expected = 0.25 / (1 - 2 * jv(1, ka) / (ka * jv(0, ka)))
    np.testing.assert_allclose(c.effective_mass(w).real, expected, rtol=1e-9)
    f_peak = 5.135622 / (2 * np.pi * 0.01) * np.sqrt(80.0 / 0.25)
    assert abs(c.effective_mass(np.array([2 * np.pi * f_peak]))[0]) > 1e4


def test_heavy_central_mass_static_stiffness():
    # Annular membrane under a central point force: k = 2 pi T / ln(a / r0) (derived from
    # the static membrane equation); a heavy disk resonates at (1 / 2 pi) sqrt(k / M)
    a, r0, t, m = 0.01, 1.5e-3, 60.0, 5e-3
    c = Cell(a, 0.1e-3, 1000.0, t, m, r0, 1e-3)
    k = 2 * np.pi * t / np.log(a / r0)
    f0 = np.sqrt(k / m) / (2 * np.pi)
    ext = tile_extrema(Tile((c,), 0.022, "clamped"), 5, 500)
    assert ext.dip_hz[0] == pytest.approx(f0, rel=0.01)


def test_more_mass_lowers_dip_and_peak_and_raises_peak():
    # common practice for these tiles (what tuning exploits): a heavier central mass moves
    # the first dip and the first peak down, and the peak grows
    def first(m):
        c = Cell(0.01, 0.25e-3, 1150.0, 80.0, m, 2e-3, 0.05)
        return tile_extrema(Tile((c,), 0.022, "floating", 0.6), 20, 3000)
    light, heavy = first(0.2e-3), first(0.8e-3)
    assert heavy.dip_hz[0] < light.dip_hz[0]
    assert heavy.peak_hz[0] < light.peak_hz[0]
    assert heavy.peak_db[0] > light.peak_db[0]


def test_40_db_is_one_percent_of_pressure():
    # dB identity: TL = 20 lg(p_i / p_t) at normal incidence in equal air, 40 dB -> 1 %
    air = Air()
    m = 10 ** 2 * 2 * air.impedance / (2 * np.pi * 500.0)  # |1 + j w m / 2 rho c| ~ 100
    s = nb.Stack([nb.Septum(m)], air)
    tau = s.transmission_coefficient([500.0], [0.0])[0, 0]
    pressure_ratio = np.sqrt(tau)
    assert -20 * np.log10(pressure_ratio) == pytest.approx(40.0, abs=1e-3)
    assert pressure_ratio == pytest.approx(0.01, rel=1e-4)


def test_floating_tile_follows_mass_law_at_low_frequency():
    # at low frequency the floating tile moves as one mass: normal-incidence mass law of
    # its total areal mass (Vigran 2008 eq. 6.109 at theta = 0)
    c = Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05)
    t = Tile((c,), 0.022, "floating", 0.6)
    f = np.array([5.0, 10.0, 20.0])
    np.testing.assert_allclose(normal_tl(t, f), mass_law_tl(t.areal_mass, f), atol=0.05)
    assert t.areal_mass == pytest.approx(0.6 + (0.25e-3 * 1150 * np.pi * 1e-4 + 0.4e-3)
                                         / 0.022**2)


def test_cell_kinds_mix_by_area():
    # admittances add in proportion to area: two identical kinds at 50/50 equal one kind
    c = Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05)
    half = Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05, share=0.5)
    w = 2 * np.pi * np.geomspace(20, 2000, 50)
    for frame, fm in (("clamped", 0.0), ("floating", 0.6)):
        one = Tile((c,), 0.022, frame, fm).impedance(w)
        two = Tile((half, half), 0.022, frame, fm).impedance(w)
        np.testing.assert_allclose(two, one, rtol=1e-10)


def test_tile_is_locally_reacting_in_a_stack():
    t = Tile((Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05),), 0.022, "floating", 0.6)
    tau = nb.Stack([t]).transmission_coefficient([150.0], np.radians([0.0, 60.0]))
    # locally reacting sheet: tau(theta) = |1 + Z cos(theta) / (2 rho c)|^-2
    z = t.impedance(np.array([2 * np.pi * 150.0]))[0]
    rc = Air().impedance
    np.testing.assert_allclose(tau[0], 1 / np.abs(1 + z * np.cos(np.radians([0, 60]))
                                                  / (2 * rc)) ** 2, rtol=1e-10)


def test_tuning_round_trip():
    # issue check: tune, then compute, lands on the target within 0.5 %
    base = Tile((Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05),), 0.022, "floating",
                0.6)
    for vary, target in (("mass", 180.0), ("tension", 240.0), ("radius", 200.0)):
        tuned, _ = tune_peak(base, target, vary)
        assert tile_extrema(tuned, 20, 3000).peak_hz[0] == pytest.approx(target, rel=0.005)


def test_tuning_out_of_reach_is_an_error(tmp_path, capsys):
    path = tmp_path / "t.toml"
    path.write_text('[[layer]]\nuse = "tile.bpf-180-floating"\n')
    assert main(["tile", str(path), "--tune-peak", "5Hz", "--vary", "tension"]) == 2
    assert "--tune-peak: no tension within" in capsys.readouterr().err


def test_calibration_round_trip():
    # issue check: synthetic data from known parameters plus 0.5 dB noise recovers the
    # tension within 5 % and the dip and peak frequencies within 2 %
    true = Tile((Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05),), 0.022, "clamped")
    f = np.geomspace(60, 1500, 200)
    rng = np.random.default_rng(7)
    measured = normal_tl(true, f) + rng.normal(0, 0.5, f.size)
    guess = true.with_cell(0, tension=45.0, loss_factor=0.15)
    res = fit_tile(guess, f, measured)
    assert res.values[0] == pytest.approx(80.0, rel=0.05)
    assert res.lower[0] < 80.0 < res.upper[0]
    assert res.rms_db == pytest.approx(0.5, abs=0.1)
    ext_true, ext_fit = tile_extrema(true, 60, 1500), tile_extrema(res.tile, 60, 1500)
    assert ext_fit.dip_hz[0] == pytest.approx(ext_true.dip_hz[0], rel=0.02)
    assert ext_fit.peak_hz[0] == pytest.approx(ext_true.peak_hz[0], rel=0.02)
    assert abs(res.dip_error_pct) < 2 and abs(res.peak_error_pct) < 2


def test_tile_command_fit_writes_a_new_file(tmp_path, capsys):
    from noisebudget.cli_tile import tile_toml
    sample = tmp_path / "catalog.toml"
    sample.write_text('[[layer]]\nuse = "tile.tube-sample-clamped"\n')
    true = nb.load_stack(sample).layers[0]
    stack = tmp_path / "sample.toml"
    stack.write_text(tile_toml(true.with_cell(0, tension=50.0), "starting guess"))
    f = np.geomspace(60, 1500, 120)
    rows = "\n".join(f"{a:.4f},{b:.3f}" for a, b in zip(f, normal_tl(true, f), strict=True))
    csv = tmp_path / "tube.csv"
    csv.write_text("frequency_hz,tl_db\n" + rows + "\n")
    before = stack.read_text()
    assert main(["tile", str(stack), "--fit", str(csv)]) == 0
    out = capsys.readouterr().out
    assert "tension" in out and "95 % interval" in out and "RMS residual" in out
    fitted = tmp_path / "sample-fitted.toml"
    assert stack.read_text() == before  # never over the input
    assert nb.load_stack(fitted).layers[0].cells[0].tension == pytest.approx(80.0, rel=1e-3)
    assert main(["tile", str(stack), "--fit", str(csv)]) == 2  # exists: needs --force
    assert main(["tile", str(stack), "--fit", str(csv), "-o", str(stack)]) == 2


def test_tile_command_reports_and_profile(capsys):
    from noisebudget.resources import data_path
    assert main(["tile", str(data_path("examples", "tile.toml")), "--profile", "200"]) == 0
    out = capsys.readouterr().out
    assert "TL dip (Hz)" in out and "first TL peak" in out and "over the mass law" in out
    assert "r (mm)" in out


def test_bad_tile_inputs(tmp_path, capsys):
    cases = [
        ('[[layer]]\ntype = "tile"\npitch = "22 mm"\nframe = "floating"\n'
         'frame_areal_mass = "0.6 kg/m^2"\n', "layer[1].cell"),
        ('[[layer]]\ntype = "tile"\npitch = "12 mm"\nframe = "clamped"\n[[layer.cell]]\n'
         'radius = "10 mm"\nmembrane_thickness = "0.2 mm"\nmembrane_density = "1000 kg/m^3"\n'
         'tension = "80 N/m"\n', "layer[1].cell[1].radius"),
        ('[[layer]]\ntype = "tile"\npitch = "22 mm"\nframe = "clamped"\n[[layer.cell]]\n'
         'radius = "10 mm"\nmembrane_thickness = "0.2 mm"\nmembrane_density = "1000 kg/m^3"\n',
         "layer[1].cell[1].tension"),
        ('[[layer]]\ntype = "tile"\npitch = "22 mm"\nframe = "clamped"\n[[layer.cell]]\n'
         'radius = "10 mm"\nmembrane_thickness = "0.2 mm"\nmembrane_density = "1000 kg/m^3"\n'
         'tension = "80 N/m"\nmass = "1 g"\n', "layer[1].cell[1].mass_radius"),
    ]
    for text, key in cases:
        p = tmp_path / "bad.toml"
        p.write_text(text)
        assert main(["tile", str(p)]) == 2
        err = capsys.readouterr().err
        assert f"{p}: {key}" in err, err


def test_shipped_tube_example_fits(tmp_path, capsys):
    # the README's example: a synthetic tube measurement (tension 82 N/m, eta 0.045, with
    # '#' comment lines) fitted from the shipped starting values
    from noisebudget.resources import data_path
    out = tmp_path / "fitted.toml"
    assert main(["tile", str(data_path("examples", "tube-sample.toml")), "--fit",
                 str(data_path("examples", "tube-demo.csv")), "-o", str(out)]) == 0
    cell = nb.load_stack(out).layers[0].cells[0]
    assert cell.tension == pytest.approx(82.0, rel=0.02)
    assert cell.loss_factor == pytest.approx(0.045, rel=0.1)
