"""Every path into the cabin: zone offsets, leaks, flanking, interior sources, octave
inputs, treatment mass, ratings per zone, and the bad inputs of these keys."""

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.apertures import Slit
from noisebudget.bands import a_weighting
from noisebudget.cli import main
from noisebudget.media import Air
from noisebudget.ratings import ratings

BANDS = [100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000, 1250, 1600, 2000, 2500,
         3150, 4000, 5000]
A_CABIN = 0.161 * 50 / 0.5   # Sabine, m^2


def study(zone="", package="", extra="", level=90.0, condition=None, cabin=None,
          bands=BANDS):
    """A one-zone study at normal incidence in standard air (20 m^2 wall)."""
    n = len(bands)
    condition = condition or (f'[[condition]]\nname = "flat"\nbands_hz = {bands}\n'
                              f'levels_db = {[level] * n}\n'
                              '[[condition.tone]]\nname = "T"\nfrequency = "500 Hz"\n'
                              'level_db = 95\n')
    cabin = cabin or (f'[cabin]\nvolume = "50 m^3"\nbands_hz = {bands}\n'
                      f'reverberation_time = {["0.5 s"] * n}\n')
    package = package or ('[[package]]\nname = "septum"\n[package.zone.wall]\n'
                          'layer = [{ type = "septum", surface_density = "10 kg/m^2" }]\n')
    return f'''
[study]
title = "paths"
incidence = "normal"
[air.exterior]
temperature = "20 degC"
pressure = "101.325 kPa"
[air.cabin]
temperature = "20 degC"
pressure = "101.325 kPa"
{cabin}
{condition}
[[zone]]
name = "wall"
area = "20 m^2"
{zone}
{extra}
{package}
'''


def run(tmp_path, text, name="s.toml"):
    path = tmp_path / name
    path.write_text(text)
    return nb.run_study(path)


def test_zone_offset_raises_every_band_and_tone_by_its_value(tmp_path):
    plain = run(tmp_path, study())
    louder = run(tmp_path, study(zone="exterior_offset_db = 5"), "b.toml")
    np.testing.assert_allclose(louder.bands["interior_db"] - plain.bands["interior_db"], 5,
                               atol=1e-9)
    np.testing.assert_allclose(louder.tones["interior_db"] - plain.tones["interior_db"], 5,
                               atol=1e-9)
    assert louder.summary["interior_dbz"][0] - plain.summary["interior_dbz"][0] == \
        pytest.approx(5, abs=1e-9)


def test_offset_list_is_linear_in_log_frequency(tmp_path):
    plain = run(tmp_path, study())
    shaped = run(tmp_path, study(zone="exterior_offset_db = [0, 10]\n"
                                      "offset_bands_hz = [100, 1000]"), "b.toml")
    d = (shaped.bands.set_index("band_hz")["interior_db"]
         - plain.bands.set_index("band_hz")["interior_db"])
    # at the 315 Hz band: 10 lg(315 / 100) (the band's nominal frequency); above 1 kHz
    # held at 10; the 500 Hz tone takes 10 lg(500 / 100) at its own frequency
    assert d[315.0] == pytest.approx(10 * np.log10(3.15), abs=1e-9)
    assert d[2000.0] == pytest.approx(10.0, abs=1e-9)
    assert d[100.0] == pytest.approx(0.0, abs=1e-9)
    assert shaped.tones["interior_db"][0] - plain.tones["interior_db"][0] == pytest.approx(
        10 * np.log10(5), abs=1e-9)


def test_interior_source_adds_by_energy(tmp_path):
    n = len(BANDS)
    src = (f'[[interior_source]]\nname = "air conditioning"\nbands_hz = {BANDS}\n'
           f'levels_db = {[60.0] * n}\nconditions = ["flat"]\n')
    plain = run(tmp_path, study())
    res = run(tmp_path, study(extra=src), "b.toml")
    li = plain.bands["interior_db"].to_numpy()
    # L = 10 lg(10^(Li/10) + 10^(60/10))
    np.testing.assert_allclose(res.bands["interior_db"],
                               10 * np.log10(10 ** (li / 10) + 10 ** 6.0), atol=1e-9)
    rows = res.contributions[res.contributions["path"] == "interior source"]
    assert set(rows["zone"]) == {"air conditioning"} and len(rows) == n
    # the energy sum of each band's contributions is its interior level
    sums = res.contributions.groupby("band_hz")["interior_db"].apply(
        lambda v: 10 * np.log10(np.sum(10 ** (v / 10))))
    np.testing.assert_allclose(sums.to_numpy(), res.bands["interior_db"], atol=1e-9)
    high = res.bands.set_index("band_hz").loc[5000.0]
    assert high["dominant_path"] == "interior source" and high["dominant_zone"] == "wall"


def test_flanking_caps_a_very_heavy_package(tmp_path):
    pkg = ('[[package]]\nname = "lead"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "10000 kg/m^2" }]\n')
    res = run(tmp_path, study(zone="flanking_tl_db = 30", package=pkg))
    np.testing.assert_allclose(res.tl["zone_tl_db"], 30.0, atol=0.1)
    assert (res.tl["tl_db"] > 70).all()
    assert set(res.bands["dominant_path"]) == {"flanking"}
    # a package's own flanking value overrides the zone's
    res = run(tmp_path, study(zone="flanking_tl_db = 30", package=pkg + "flanking_tl_db = 40\n"),
              "b.toml")
    np.testing.assert_allclose(res.tl["zone_tl_db"], 40.0, atol=0.1)


def test_octave_condition_equals_its_equal_split(tmp_path):
    octaves = [125, 250, 500, 1000, 2000, 4000]
    levels = [95.0, 93.0, 90.0, 86.0, 82.0, 78.0]
    third_levels = [float(v) for v in np.repeat(levels, 3) - 10 * np.log10(3)]
    tone = '[[condition.tone]]\nname = "T"\nfrequency = "500 Hz"\nlevel_db = 95\n'
    oct_cond = (f'[[condition]]\nname = "flat"\nbandwidth = "octave"\nbands_hz = {octaves}\n'
                f'levels_db = {levels}\n' + tone)
    third_cond = (f'[[condition]]\nname = "flat"\nbands_hz = {BANDS}\n'
                  f'levels_db = {third_levels}\n' + tone)
    oct_cabin = (f'[cabin]\nvolume = "50 m^3"\nbandwidth = "octave"\nbands_hz = {octaves}\n'
                 f'reverberation_time = {["0.5 s"] * 6}\n')
    a = run(tmp_path, study(condition=oct_cond, cabin=oct_cabin))
    b = run(tmp_path, study(condition=third_cond), "b.toml")
    for name in ("summary", "bands", "contributions", "tones"):
        ta, tb = a.tables()[name], b.tables()[name]
        num = ta.select_dtypes("number").columns
        np.testing.assert_allclose(ta[num].to_numpy(float), tb[num].to_numpy(float),
                                   atol=1e-9, err_msg=name)
    assert any("octave" in line for line in a.inputs.meta["conversions"])
    assert not b.inputs.meta["conversions"]


def test_treatment_mass_and_inherited_installation(tmp_path):
    zones = 'exterior_offset_db = 0\n[[zone]]\nname = "crown"\narea = "10 m^2"\n'
    pkgs = '''
[[package]]
name = "base"
[package.zone.wall]
layer = [{ use = "skin.al2024-t3-1.6mm" }, { type = "septum", surface_density = "2 kg/m^2" }]
[package.zone.crown]
layer = [{ type = "septum", surface_density = "3 kg/m^2", structure = true },
         { type = "septum", surface_density = "1 kg/m^2" }]
[[package]]
name = "heavier wall"
based_on = "base"
installation_mass = "0.5 kg/m^2"
[package.zone.wall]
layer = [{ use = "skin.al2024-t3-1.6mm" }, { type = "septum", surface_density = "4 kg/m^2" }]
'''
    res = run(tmp_path, study(zone=zones, package=pkgs))
    m = res.mass.set_index(["package", "zone"])
    skin = 2780 * 1.6e-3                          # 2024-T3 sheet, catalog demo value
    assert m.loc[("base", "wall"), "stack_kg_m2"] == pytest.approx(skin + 2)
    assert m.loc[("base", "wall"), "treatment_kg_m2"] == pytest.approx(2)   # skin excluded
    assert m.loc[("base", "crown"), "treatment_kg_m2"] == pytest.approx(1)  # structure = true
    assert m.loc[("heavier wall", "wall"), "treatment_kg_m2"] == pytest.approx(4.5)
    # the crown is inherited unchanged: the derived package's installation mass is not
    # added there
    assert m.loc[("heavier wall", "crown"), "installation_kg_m2"] == 0.0
    s = res.summary.set_index("package")
    assert s.loc["heavier wall", "treatment_mass_kg"] == pytest.approx(4.5 * 20 + 1 * 10)
    assert s.loc["heavier wall", "added_mass_kg"] == pytest.approx(2.5 * 20)


def test_ratings_per_zone_and_composite(tmp_path):
    zones = '[[zone]]\nname = "window"\narea = "5 m^2"\n'
    pkg = ('[[package]]\nname = "septum"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "10 kg/m^2" }]\n'
           '[package.zone.window]\nlayer = [{ type = "septum", surface_density = "3 kg/m^2" }]\n')
    res = run(tmp_path, study(zone=zones, package=pkg, bands=[80, *BANDS]))  # OITC: 80 Hz
    assert list(res.ratings["zone"]) == ["wall", "window", "composite"]
    tl = res.tl.pivot(index="band_hz", columns="zone", values="tl_db")
    tau = (20 * 10 ** (-tl["wall"] / 10) + 5 * 10 ** (-tl["window"] / 10)) / 25
    expected = ratings(tl.index.to_numpy(), -10 * np.log10(tau.to_numpy()))
    got = res.ratings.set_index("zone").loc["composite"]
    assert {k: got[k] for k in expected} == expected


def test_leak_and_flanking_paths_against_the_interior_level_relation(tmp_path):
    # each path: L2 = L1 + O - TL_path + 10 lg(S / A) (ISO 10140-2 rearranged) with
    # TL_wall = TL - 10 lg((S - S_leak) / S), tau_leak = S_leak tau_slit / S and the
    # flanking path 10^(-F/10); the slit's tau from the aperture model, normal incidence
    leak = ('[[package.zone.wall.leak]]\nshape = "slit"\nwidth = "1 mm"\nlength = "2 m"\n'
            'depth = "10 mm"\n')
    pkg = ('[[package]]\nname = "septum"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "10 kg/m^2" }]\n' + leak)
    res = run(tmp_path, study(zone="flanking_tl_db = 60\nexterior_offset_db = 2", package=pkg))
    c = res.contributions.set_index(["band_hz", "path"])["interior_db"]
    tl = res.tl.set_index("band_hz")["tl_db"]
    f = 2000.0
    wall = 92 - tl[f] + 10 * np.log10((20 - 0.002) / A_CABIN)
    assert c[(f, "wall")] == pytest.approx(wall, abs=1e-9)
    assert c[(f, "flanking")] == pytest.approx(92 - 60 + 10 * np.log10(20 / A_CABIN), abs=1e-9)
    # the leak's band value is the band average of the slit's tau (energy)
    from noisebudget.bands import band_average, third_octave_bands

    b = third_octave_bands(2000, 2000)
    tau = band_average(lambda x: Slit(1e-3, 2.0, 1e-2).average_transmission(
        x, "normal", None, Air(), Air(), Air()), b)[0]
    assert c[(f, "leak")] == pytest.approx(92 + 10 * np.log10(0.002 * tau / A_CABIN), abs=1e-3)
    assert res.tl["zone_tl_db"].lt(res.tl["tl_db"]).all()
    sums = res.contributions.groupby("band_hz")["interior_db"].apply(
        lambda v: 10 * np.log10(np.sum(10 ** (v / 10))))
    np.testing.assert_allclose(sums.to_numpy(), res.bands["interior_db"], atol=1e-9)
    # tones take every path too
    t = res.tones.iloc[0]
    assert t["zone_tl_db"] < t["tl_db"] and t["dominant_path"] in ("wall", "leak", "flanking")


def test_large_open_area_caps_the_composite_tl(tmp_path):
    # an opening transmits about what falls on it once it is not small against the
    # wavelength: a heavy wall with an open fraction p has a composite TL near -10 lg p
    # at high frequency (common practice). p = 0.01 here: a 10 mm slit, 20 m long
    pkg = ('[[package]]\nname = "heavy"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "200 kg/m^2" }]\n'
           '[[package.zone.wall.leak]]\nshape = "slit"\nwidth = "10 mm"\nlength = "20 m"\n'
           'depth = "2 mm"\n')
    res = run(tmp_path, study(package=pkg))
    ztl = res.tl.set_index("band_hz")["zone_tl_db"]
    for f in (2500.0, 3150.0, 4000.0, 5000.0):
        assert ztl[f] == pytest.approx(20.0, abs=3.0), f


def test_leak_behind_layers_is_in_series_with_them(tmp_path):
    # behind_layer = 1: the first septum transmits to the slit, which bypasses the second
    from noisebudget.budget import _union_bands
    from noisebudget.zone_paths import zone_transmissions

    pkg = ('[[package]]\nname = "double"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "5 kg/m^2" }, { type = "air", '
           'thickness = "50 mm" }, { type = "septum", surface_density = "5 kg/m^2" }]\n'
           '[[package.zone.wall.leak]]\nshape = "slit"\nwidth = "2 mm"\nlength = "1 m"\n'
           'depth = "5 mm"\nbehind_layer = 2\n')
    path = tmp_path / "s.toml"
    path.write_text(study(package=pkg))
    inp = nb.load_study(path).inputs
    f = np.array([500.0, 2000.0])
    tr = zone_transmissions(inp, _union_bands(inp), f)
    front = nb.Stack([nb.Septum(5.0), nb.AirGap(0.05)]).average_transmission(f, "normal")
    slit = Slit(2e-3, 1.0, 5e-3).average_transmission(f, "normal")
    np.testing.assert_allclose(tr["leak_tone_area"][0, 0], 2e-3 * slit * front, rtol=1e-9)


def test_dba_of_the_contributions(tmp_path):
    res = run(tmp_path, study(zone="flanking_tl_db = [40, 60]\nflanking_bands_hz = [100, 5000]"))
    b = res.bands
    aw = a_weighting(nb.third_octave_bands(100, 5000).centre)
    dba = 10 * np.log10(np.sum(10 ** ((b["interior_db"].to_numpy() + aw) / 10)))
    assert res.summary["interior_dba"][0] == pytest.approx(dba, abs=1e-9)


BAD = [
    ("leak larger than its zone", "", '[[package.zone.wall.leak]]\nshape = "slit"\n'
     'width = "10 mm"\nlength = "3000 m"\ndepth = "1 mm"\n', "package[1].zone.wall.leak"),
    ("negative width", "", '[[package.zone.wall.leak]]\nshape = "slit"\nwidth = "-1 mm"\n'
     'length = "1 m"\ndepth = "1 mm"\n', "package[1].zone.wall.leak[1].width"),
    ("unknown shape", "", '[[package.zone.wall.leak]]\nshape = "oval"\nwidth = "1 mm"\n',
     "package[1].zone.wall.leak[1].shape"),
    ("unknown key 'path' in a leak", "", '[[package.zone.wall.leak]]\nshape = "hole"\n'
     'diameter = "1 mm"\ndepth = "1 mm"\npath = "wall"\n', "package[1].zone.wall.leak[1].path"),
    ("leak behind a layer the stack lacks", "", '[[package.zone.wall.leak]]\nshape = "hole"\n'
     'diameter = "1 mm"\ndepth = "1 mm"\nbehind_layer = 1\n',
     "package[1].zone.wall.leak[1].behind_layer"),
    ("offset list of another length", "exterior_offset_db = [1, 2, 3]\n"
     "offset_bands_hz = [100, 1000]", "", "zone[1].exterior_offset_db"),
    ("negative flanking TL", "flanking_tl_db = -3", "", "zone[1].flanking_tl_db"),
    ("flanking bands without values", "flanking_bands_hz = [100]", "",
     "zone[1].flanking_bands_hz"),
]


@pytest.mark.parametrize("what, zone, leak, key", BAD, ids=[b[0] for b in BAD])
def test_bad_paths_are_refused_by_check_and_run(tmp_path, capsys, what, zone, leak, key):
    pkg = ('[[package]]\nname = "septum"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "10 kg/m^2" }]\n' + leak)
    _refused(tmp_path, capsys, study(zone=zone, package=pkg), key)


SOURCE = '[[interior_source]]\nname = "ac"\nbands_hz = {bands}\nlevels_db = {levels}\n{more}'
BAD_SOURCES = [
    ("bands that do not fit", [50, 63, 80], [60, 60, 60], "", "interior_source[1].bands_hz"),
    ("levels that do not match", BANDS, [60], "", "interior_source[1].levels_db"),
    ("unknown condition", BANDS, [60] * len(BANDS), 'conditions = ["taxi"]\n',
     "interior_source[1].conditions[1]"),
    ("unknown bandwidth", BANDS, [60] * len(BANDS), 'bandwidth = "half"\n',
     "interior_source[1].bandwidth"),
    ("name of a zone", BANDS, [60] * len(BANDS), "", "interior_source[1].name"),
]


@pytest.mark.parametrize("what, bands, levels, more, key", BAD_SOURCES,
                         ids=[b[0] for b in BAD_SOURCES])
def test_bad_interior_sources_are_refused(tmp_path, capsys, what, bands, levels, more, key):
    text = SOURCE.format(bands=bands, levels=levels, more=more)
    if what == "name of a zone":
        text = text.replace('"ac"', '"wall"')
    _refused(tmp_path, capsys, study(extra=text), key)


def test_bad_structure_flag_is_refused(tmp_path, capsys):
    pkg = ('[[package]]\nname = "septum"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "10 kg/m^2", structure = "yes" }]\n')
    _refused(tmp_path, capsys, study(package=pkg), "package[1].zone.wall.layer[1].structure")


def _refused(tmp_path, capsys, text, key):
    path = tmp_path / "bad.toml"
    path.write_text(text)
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert f"{path}: {key}:" in err, err
    assert "Traceback" not in err
    out = tmp_path / "out"
    assert main(["run", str(path), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert f"{path}: {key}:" in err and "Traceback" not in err
    assert not out.exists() or not any(out.iterdir())


def test_a_zone_never_passes_more_than_falls_on_it(tmp_path):
    # 10 mm slits over 95 % of the wall pass far more than their area at low frequency
    # (isolated-aperture model); the zone's transmission is capped at tau = 1 (energy
    # conservation) with a warning, and the paths still add up to the interior level
    from noisebudget.errors import ModelRangeWarning

    pkg = ('[[package]]\nname = "open"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "10 kg/m^2" }]\n'
           '[[package.zone.wall.leak]]\nshape = "slit"\nwidth = "10 mm"\nlength = "1900 m"\n'
           'depth = "2 mm"\n')
    with pytest.warns(ModelRangeWarning, match="capped"):
        res = run(tmp_path, study(package=pkg))
    assert (res.tl["zone_tl_db"] >= -1e-9).all()
    sums = res.contributions.groupby("band_hz")["interior_db"].apply(
        lambda v: 10 * np.log10(np.sum(10 ** (v / 10))))
    np.testing.assert_allclose(sums.to_numpy(), res.bands["interior_db"], atol=1e-9)


def test_a_zone_given_in_a_package_replaces_what_it_inherited(tmp_path):
    # based_on copies stack, leaks and flanking value of each zone; a zone the package
    # gives itself starts afresh (its own stack, no leak, the zone's flanking TL)
    pkgs = ('[[package]]\nname = "leaky"\n[package.zone.wall]\n'
            'layer = [{ type = "septum", surface_density = "10 kg/m^2" }]\n'
            'flanking_tl_db = 40\n'
            '[[package.zone.wall.leak]]\nshape = "hole"\ndiameter = "5 mm"\ndepth = "2 mm"\n'
            'count = 10\n'
            '[[package]]\nname = "copy"\nbased_on = "leaky"\n'
            '[[package]]\nname = "sealed"\nbased_on = "leaky"\n[package.zone.wall]\n'
            'layer = [{ type = "septum", surface_density = "10 kg/m^2" }]\n')
    path = tmp_path / "s.toml"
    path.write_text(study(zone="flanking_tl_db = 60", package=pkgs))
    leaky, copy, sealed = nb.load_study(path).inputs.packages
    assert copy.leaks == leaky.leaks and len(leaky.leaks["wall"]) == 1
    assert copy.flanking == leaky.flanking and copy.stacks["wall"] is leaky.stacks["wall"]
    assert sealed.leaks == {"wall": ()} and sealed.flanking == {}
    res = nb.run_study(path)
    paths = res.contributions.groupby("package")["path"].unique()
    assert "leak" in paths["copy"] and "leak" not in paths["sealed"]
    ztl = res.tl.set_index(["package", "band_hz"])["zone_tl_db"]
    assert ztl["sealed"].max() < 60.0 + 1e-6 and ztl["copy"].max() < 40.0 + 1e-6


def test_leaks_in_a_study_without_tones(tmp_path):
    cond = (f'[[condition]]\nname = "flat"\nbands_hz = {BANDS}\n'
            f'levels_db = {[90.0] * len(BANDS)}\n')
    pkg = ('[[package]]\nname = "septum"\n[package.zone.wall]\n'
           'layer = [{ type = "septum", surface_density = "10 kg/m^2" }, { type = "air", '
           'thickness = "20 mm" }, { type = "septum", surface_density = "2 kg/m^2" }]\n'
           '[[package.zone.wall.leak]]\nshape = "slit"\nwidth = "1 mm"\nlength = "1 m"\n'
           'depth = "5 mm"\nbehind_layer = 2\n')
    res = run(tmp_path, study(condition=cond, package=pkg))
    assert res.tones.empty and np.isfinite(res.summary["interior_dba"]).all()


def test_structure_of_inserted_layers_and_catalog_skins(tmp_path):
    (tmp_path / "frame.toml").write_text(
        '[[layer]]\ntype = "septum"\nsurface_density = "3 kg/m^2"\n'
        '[[layer]]\ntype = "septum"\nsurface_density = "1 kg/m^2"\n')
    pkg = ('[[package]]\nname = "p"\n[package.zone.wall]\n'
           'layer = [{ use = "skin.al2024-t3-1.6mm", structure = false },\n'
           '         { stack = "frame.toml", structure = true },\n'
           '         { use = "skin.al2024-t3-1.6mm" },\n'
           '         { type = "septum", surface_density = "2 kg/m^2" }]\n')
    path = tmp_path / "s.toml"
    path.write_text(study(package=pkg))
    (p,) = nb.load_study(path).inputs.packages
    # a catalog skin is structure unless it says otherwise; an inserted file's layers
    # all take the entry's value
    assert p.structure["wall"] == (False, True, True, True, False)
    res = nb.run_study(path)
    skin = 2780 * 1.6e-3                          # 2024-T3 sheet, catalog demo value
    m = res.mass.set_index("zone").loc["wall"]
    assert m["treatment_kg_m2"] == pytest.approx(skin + 2)
    assert m["stack_kg_m2"] == pytest.approx(2 * skin + 3 + 1 + 2)
