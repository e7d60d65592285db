"""Study files and the noise and mass budget against hand calculations."""

import numpy as np
import pandas as pd
import pytest

import noisebudget as nb
from noisebudget.bands import a_weighting, third_octave_bands
from noisebudget.budget import sabine_area
from noisebudget.cli import main
from noisebudget.media import Air
from noisebudget.resources import data_path

BANDS = [100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500,
         3150, 4000, 5000]


def one_zone_study(extra="", zones=None, level=90.0, convention="diffuse", tone=""):
    n = len(BANDS)
    zones = zones or '[[zone]]\nname = "wall"\narea = "20 m^2"\n'
    return f'''
[study]
title = "hand check"
incidence = "normal"
exterior_level = "{convention}"
[air.exterior]
temperature = "20 degC"
pressure = "101.325 kPa"
[air.cabin]
temperature = "20 degC"
pressure = "101.325 kPa"
[cabin]
volume = "50 m^3"
bands_hz = {BANDS}
reverberation_time = {['0.5 s'] * n}
[[condition]]
name = "flat"
bands_hz = {BANDS}
levels_db = {[level] * n}
{tone}
{zones}
[targets]
dba = 60
sil4 = 50
{extra}
'''


SEPTUM_PKG = '''
[[package]]
name = "septum"
[package.zone.wall]
layer = [{ type = "septum", surface_density = "10 kg/m^2" }]
'''


def test_sabine_formula():
    # Sabine: A = 0.161 V / T60 (ISO 3382-2); 50 m^3 at 0.5 s -> 16.1 m^2
    assert sabine_area(50.0, 0.5) == pytest.approx(16.1)
    np.testing.assert_allclose(sabine_area(100.0, [1.0, 2.0]), [16.1, 8.05])


def test_one_zone_septum_against_hand_calculation(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(one_zone_study(SEPTUM_PKG))
    res = nb.run_study(path)
    # hand calculation: band-averaged normal-incidence mass law in closed form,
    # <tau> = [atan(beta fu) - atan(beta fl)] / (beta (fu - fl)), beta = pi m / (rho c)
    # (integral of Vigran 2008 eq. 6.109 at theta = 0 over the band)
    rc = Air().impedance
    b = third_octave_bands(100, 5000)
    beta = np.pi * 10.0 / rc
    tau = (np.arctan(beta * b.upper) - np.arctan(beta * b.lower)) / (beta * (b.upper - b.lower))
    tl = -10 * np.log10(tau)
    a = 0.161 * 50 / 0.5                      # Sabine absorption area, m^2
    l_int = 90.0 - tl + 10 * np.log10(20 / a)  # L2 = L1 - TL + 10 lg(S/A) (ISO 10140-2)
    bands = res.bands
    np.testing.assert_allclose(bands["composite_tl_db"], tl, atol=0.02)
    np.testing.assert_allclose(bands["interior_db"], l_int, atol=0.02)
    dba = 10 * np.log10(np.sum(10 ** ((l_int + a_weighting(b.centre)) / 10)))
    octave = [10 * np.log10(np.sum(10 ** (l_int[i:i + 3] / 10))) for i in (6, 9, 12, 15)]
    sil4 = np.mean(octave)                    # 500, 1k, 2k, 4k octaves (ANSI S3.14)
    row = res.summary.iloc[0]
    assert row["interior_dba"] == pytest.approx(dba, abs=0.02)
    assert row["sil4_db"] == pytest.approx(sil4, abs=0.02)
    assert row["margin_dba"] == pytest.approx(60 - dba, abs=0.02)
    assert row["exterior_dba"] - row["interior_dba"] == pytest.approx(row["noise_reduction_dba"])


def test_surface_pressure_convention_is_6_db_lower(tmp_path):
    p1, p2 = tmp_path / "a.toml", tmp_path / "b.toml"
    p1.write_text(one_zone_study(SEPTUM_PKG))
    p2.write_text(one_zone_study(SEPTUM_PKG, convention="surface"))
    d = (nb.run_study(p1).bands["interior_db"] - nb.run_study(p2).bands["interior_db"])
    np.testing.assert_allclose(d, 20 * np.log10(2), atol=1e-9)  # pressure doubling


def test_tone_uses_narrowband_tl(tmp_path):
    tone = '[[condition.tone]]\nfrequency = "1000 Hz"\nlevel_db = 110\n'
    path = tmp_path / "s.toml"
    path.write_text(one_zone_study(SEPTUM_PKG, level=0.0, tone=tone))
    res = nb.run_study(path)
    rc = Air().impedance
    tl_1k = 10 * np.log10(1 + (2 * np.pi * 1000 * 10 / (2 * rc)) ** 2)  # mass law at 1 kHz
    expected = 110 - tl_1k + 10 * np.log10(20 / 16.1)
    t = res.tones.iloc[0]
    assert t["tl_db"] == pytest.approx(tl_1k, abs=1e-6)
    assert t["interior_db"] == pytest.approx(expected, abs=1e-6)
    band = res.bands.set_index("band_hz").loc[1000.0, "interior_db"]
    broadband = 0.0 - res.bands.set_index("band_hz").loc[1000.0, "composite_tl_db"] + \
        10 * np.log10(20 / 16.1)
    assert band == pytest.approx(10 * np.log10(10 ** (expected / 10) + 10 ** (broadband / 10)))


def test_composite_tl_of_two_zones(tmp_path):
    # Composite TL = -10 lg(sum S_i tau_i / sum S_i) (Bies & Hansen, Engineering Noise
    # Control, ch. 7)
    zones = ('[[zone]]\nname = "wall"\narea = "20 m^2"\n'
             '[[zone]]\nname = "window"\narea = "5 m^2"\n')
    pkg = SEPTUM_PKG + '[package.zone.window]\nlayer = [{ type = "septum", ' \
                       'surface_density = "3 kg/m^2" }]\n'
    path = tmp_path / "s.toml"
    path.write_text(one_zone_study(pkg, zones=zones))
    res = nb.run_study(path)
    tl = res.tl.pivot(index="band_hz", columns="zone", values="tl_db")
    tau = (20 * 10 ** (-tl["wall"] / 10) + 5 * 10 ** (-tl["window"] / 10)) / 25
    np.testing.assert_allclose(res.bands["composite_tl_db"], -10 * np.log10(tau.values),
                               atol=1e-9)
    dom = res.bands.set_index("band_hz")["dominant_zone"]
    assert dom.loc[5000.0] == "window"  # the light window dominates


def test_demo_added_mass_and_dba_per_kg_by_hand():
    res = nb.run_study(data_path("examples", "demo-study.toml"))
    # heavy blanket vs baseline, by hand from the catalog densities (demo values):
    # sidewall 90 mm x 16 kg/m^3 - 75 mm x 9.6 kg/m^3 = 0.72 kg/m^2 over 62 m^2;
    # crown 120 mm x (16 - 9.6) kg/m^3 = 0.768 kg/m^2 over 48 m^2
    added = 0.72 * 62 + 0.768 * 48
    s = res.summary.set_index(["package", "condition"])
    assert s.loc[("heavy blanket", "cruise"), "added_mass_kg"] == pytest.approx(added, rel=1e-3)
    gain = (s.loc[("baseline", "cruise"), "interior_dba"]
            - s.loc[("heavy blanket", "cruise"), "interior_dba"])
    assert s.loc[("heavy blanket", "cruise"), "dba_gain_per_kg"] == pytest.approx(gain / added)
    assert np.isnan(s.loc[("baseline", "cruise"), "dba_gain_per_kg"])
    assert set(res.summary["package"]) == {"baseline", "heavy blanket", "septum", "BPF tiles",
                                           "foam barrier"}
    # foam barrier vs baseline on the sidewall only (the crown inherited): 60 mm x 9.6
    # kg/m^3 + 25 mm x 24 kg/m^3 + 1.5 kg/m^2 - 75 mm x 9.6 kg/m^3 - 1 oz/yd^2 (33.9 g/m^2),
    # and 0.35 - 0.25 kg/m^2 of installation, over 62 m^2
    foam = (0.576 + 0.6 + 1.5 - 0.72 - 0.0339 + 0.10) * 62
    assert s.loc[("foam barrier", "cruise"), "added_mass_kg"] == pytest.approx(foam, rel=1e-3)
    # the tuned tiles are the package that lowers the BPF-dominated dBA
    assert s.loc[("BPF tiles", "cruise"), "dba_gain"] > 2


def test_bad_study_lists_every_problem(tmp_path, capsys):
    text = one_zone_study(SEPTUM_PKG, zones='[[zone]]\nname = "wall"\narea = "20 m^2"\n'
                                            '[[zone]]\nname = "door"\narea = "0 m^2"\n')
    text = text.replace("dba = 60", "dba = 60\nloudness = 3")
    text = text.replace(f"levels_db = {[90.0] * len(BANDS)}", 'levels_db = ["loud"]')
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    joined = "\n".join(err)
    assert "zone[2].area: must be > 0" in joined
    assert "targets.loudness: unknown key" in joined
    assert "condition[1].levels_db[1]: expected a plain number in dB, got string" in joined
    assert all(line.startswith(f"{path}: ") for line in err)
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out)]) == 2
    assert not out.exists() or not any(out.iterdir())  # nothing written


def test_missing_zone_and_band_mismatch(tmp_path, capsys):
    zones = '[[zone]]\nname = "wall"\narea = "20 m^2"\n[[zone]]\nname = "door"\narea = "2 m^2"\n'
    text = one_zone_study(SEPTUM_PKG, zones=zones).replace(
        f"levels_db = {[90.0] * len(BANDS)}", f"levels_db = {[90.0] * (len(BANDS) - 1)}")
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert "package[1].zone.door: missing" in err
    assert "condition[1].levels_db: 17 values for 18 bands: the bands do not match" in err


def test_run_writes_tables_and_refuses_to_overwrite(tmp_path, capsys):
    path = tmp_path / "s.toml"
    path.write_text(one_zone_study(SEPTUM_PKG))
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out)]) == 0
    summary = pd.read_csv(out / "s-summary.csv")
    assert {"interior_dba", "sil4_db", "mass_kg", "added_mass_kg"} <= set(summary.columns)
    before = (out / "s-summary.csv").read_bytes()
    assert main(["run", str(path), "-o", str(out)]) == 2
    assert (out / "s-summary.csv").read_bytes() == before
    assert main(["run", str(path), "-o", str(out), "--force"]) == 0
    assert main(["check", str(path)]) == 0


def test_random_incidence_absorption_of_a_limp_sheet():
    # Seen from the cabin, a lossless limp sheet backed by free air "absorbs" exactly what
    # it transmits: alpha(theta) = tau(theta), so the Paris average is the diffuse-field
    # closed form ln(1 + a^2) / a^2 (Vigran 2008 eq. 6.109, integrated)
    rc = Air().impedance
    f = np.array([100.0, 400.0, 1600.0])
    a = 2 * np.pi * f * 2.0 / (2 * rc)
    got = nb.Stack([nb.Septum(2.0)]).random_incidence_absorption(f, "receiver")
    np.testing.assert_allclose(got, np.log(1 + a**2) / a**2, rtol=1e-3)


def test_package_absorption_lowers_the_interior_level(tmp_path):
    pkg = '''
[[package]]
name = "absorbing"
[[package.zone.wall.layer]]
type = "septum"
surface_density = "10 kg/m^2"
[[package.zone.wall.layer]]
type = "porous"
model = "jca"
thickness = "50 mm"
flow_resistivity = "10000 Pa*s/m^2"
porosity = 0.98
tortuosity = 1.05
viscous_length = "100 um"
thermal_length = "200 um"
'''
    plain, wet = tmp_path / "a.toml", tmp_path / "b.toml"
    plain.write_text(one_zone_study(pkg))
    wet.write_text(one_zone_study(pkg).replace('incidence = "normal"',
                                                'incidence = "normal"\n'
                                                'include_package_absorption = true'))
    a = nb.run_study(plain).bands.set_index("band_hz")["interior_db"]
    b = nb.run_study(wet).bands.set_index("band_hz")["interior_db"]
    assert np.all(b <= a + 1e-12) and (a - b).loc[1000.0] > 1.0  # 20 m^2 of absorber added


def test_stack_file_referenced_from_a_study(tmp_path):
    (tmp_path / "wall.toml").write_text('[[layer]]\ntype = "septum"\n'
                                        'surface_density = "10 kg/m^2"\n')
    pkg = '[[package]]\nname = "septum"\n[package.zone.wall]\nstack = "wall.toml"\n'
    inline, by_file = tmp_path / "a.toml", tmp_path / "b.toml"
    inline.write_text(one_zone_study(SEPTUM_PKG))
    by_file.write_text(one_zone_study(pkg))
    r1, r2 = nb.run_study(inline), nb.run_study(by_file)
    np.testing.assert_allclose(r1.bands["interior_db"], r2.bands["interior_db"])
    assert any(p.endswith("wall.toml") for p in r2.files)  # hashed for the report
    bad = tmp_path / "c.toml"
    bad.write_text(one_zone_study(pkg.replace("wall.toml", "nope.toml")))
    with pytest.raises(nb.InputError, match="package\\[1\\].zone.wall.stack: nope.toml: "
                                            "file not found"):
        nb.load_study(bad)


def test_per_band_limit_margin(tmp_path):
    extra = ("limit_bands_hz = [500, 630, 800, 1000]\nlimit_db = [60, 58, 56, 54]\n"
             + SEPTUM_PKG)
    path = tmp_path / "s.toml"
    path.write_text(one_zone_study(extra.replace("[[package]]", "\n[[package]]")))
    res = nb.run_study(path)
    bands = res.bands.set_index("band_hz")["interior_db"]
    expected = min(lim - bands.loc[b] for b, lim in zip([500.0, 630.0, 800.0, 1000.0],
                                                       [60, 58, 56, 54], strict=True))
    assert res.summary.iloc[0]["margin_limit_db"] == pytest.approx(expected)


def test_entries_that_are_not_tables(tmp_path, capsys):
    text = 'zone = ["wall"]\n' + one_zone_study(SEPTUM_PKG, zones="\n")
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == 2
    assert "zone[1]: expected a table" in capsys.readouterr().err


def test_one_mistake_gives_one_line(tmp_path, capsys):
    # a mistyped catalog key in the baseline is reported where it is, not again as a
    # "missing" zone in the packages based on it; a bad zone area does not make the
    # packages' stacks for that zone look unknown
    text = data_path("examples", "demo-study.toml").read_text()
    text = text.replace('use = "skin.al2024-t3-1.27mm"', 'use = "skin.al2024-t3-1.25mm"', 1)
    text = text.replace('area = "4.5 m^2"', 'area = "4.5"')
    path = tmp_path / "typo.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 2, err
    assert "zone[2].area: '4.5' has no unit: an area needs one" in err[0]
    assert "package[1].zone.crown.layer[1].use: unknown catalog entry" in err[1]
