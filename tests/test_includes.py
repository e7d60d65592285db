"""A stack file as a layer entry, ``{ stack = "file.toml" }``, in stacks and packages."""

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.cli import main
from noisebudget.errors import InputNote

SKIN = '[[layer]]\ntype = "plate"\nname = "skin"\nthickness = "1.6 mm"\n' \
       'density = "2780 kg/m^3"\nyoungs_modulus = "73 GPa"\n'
GAP = '[[layer]]\ntype = "air"\nthickness = "40 mm"\n'
SEPTUM = '[[layer]]\ntype = "septum"\nname = "septum"\nsurface_density = "2 kg/m^2"\n'
F = np.array([100.0, 400.0, 1600.0])


def write(folder, name, text):
    path = folder / name
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text)
    return path


def test_inserted_layers_equal_the_same_layers_written_out(tmp_path):
    # layers found relative to the including file, also one folder down and two deep
    write(tmp_path, "parts/inner.toml", SEPTUM)
    write(tmp_path, "parts/middle.toml", GAP + '[[layer]]\nstack = "inner.toml"\n')
    host = write(tmp_path, "host.toml", SKIN + '[[layer]]\nstack = "parts/middle.toml"\n'
                 + GAP)
    flat = write(tmp_path, "flat.toml", SKIN + GAP + SEPTUM + GAP)
    a, b = nb.load_stack(host), nb.load_stack(flat)
    assert a.layers == b.layers and a.labels == ("skin", "air", "septum", "air")
    np.testing.assert_array_equal(a.transmission_loss(F, "diffuse"),
                                  b.transmission_loss(F, "diffuse"))


def test_inserted_file_air_is_ignored_with_a_note(tmp_path, capsys):
    write(tmp_path, "part.toml", '[source_air]\ntemperature = "-50 degC"\n'
                                 'pressure = "20 kPa"\n' + SEPTUM)
    host = write(tmp_path, "host.toml", SKIN + '[[layer]]\nstack = "part.toml"\nname = "B"\n')
    with pytest.warns(InputNote, match=r"layer\[2\].stack: part.toml: its source_air "
                                       "ignored; the layers take the air of the stack"):
        s = nb.load_stack(host)
    assert s.source_air == nb.Air() and s.labels == ("skin", "B: septum")
    assert main(["tl", str(host), "--frequencies", "500", "--format", "json"]) == 0
    err = capsys.readouterr().err.splitlines()
    assert len(err) == 1 and err[0].startswith("note: ") and "part.toml" in err[0]


def test_include_cycles_are_refused(tmp_path, capsys):
    write(tmp_path, "a.toml", SKIN + '[[layer]]\nstack = "b.toml"\n')
    write(tmp_path, "b.toml", GAP + '[[layer]]\nstack = "sub/../a.toml"\n')
    me = write(tmp_path, "me.toml", SKIN + '[[layer]]\nstack = "me.toml"\n')
    with pytest.raises(nb.InputError) as exc:
        nb.load_stack(tmp_path / "a.toml")
    assert exc.value.lines() == [f"{tmp_path / 'b.toml'}: layer[2].stack: include cycle: "
                                 "a.toml -> b.toml -> a.toml"]
    assert main(["tl", str(me)]) == 2
    assert capsys.readouterr().err.strip() == (f"{me}: layer[2].stack: include cycle: "
                                               "me.toml -> me.toml")


def test_problems_of_an_inserted_file_name_that_file(tmp_path, capsys):
    part = write(tmp_path, "part.toml", '[[layer]]\ntype = "air"\nthickness = true\n')
    host = write(tmp_path, "host.toml", SKIN + '[[layer]]\nstack = "part.toml"\n'
                 '[[layer]]\nstack = "nope.toml"\n[[layer]]\nstack = 3\n'
                 '[[layer]]\nstack = "part.toml"\nthickness = "1 mm"\n')
    assert main(["tl", str(host)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err == [
        f"{part}: layer[1].thickness: expected a length with its unit such as \"25 mm\", "
        "got boolean true",
        f"{host}: layer[3].stack: nope.toml: file not found",
        f"{host}: layer[4].stack: expected a file name (a string), got integer 3",
        f"{host}: layer[5].thickness: unknown key (allowed: stack, name, notes, "
        "description, source, bonding, structure)",
    ]


def test_tuned_tile_file_is_a_layer_of_a_package(tmp_path, capsys):
    # the file `tile --tune-peak` writes goes straight into a study package
    from noisebudget.resources import data_path

    tile = write(tmp_path, "tile.toml", data_path("examples", "tile.toml").read_text())
    assert main(["tile", str(tile), "--tune-peak", "150Hz", "--vary", "mass"]) == 0
    capsys.readouterr()
    tuned = tmp_path / "tile-tuned.toml"
    bands = [100, 125, 160, 200, 250]
    write(tmp_path, "wall.toml", SKIN + GAP)
    study = write(tmp_path, "s.toml", f'''
[cabin]
volume = "30 m^3"
bands_hz = {bands}
reverberation_time = {['0.5 s'] * 5}
[[condition]]
name = "cruise"
bands_hz = {bands}
levels_db = {[100] * 5}
[[zone]]
name = "wall"
area = "10 m^2"
[[package]]
name = "bare"
[package.zone.wall]
stack = "wall.toml"
[[package]]
name = "tiled"
[package.zone.wall]
layer = [{{ stack = "wall.toml" }}, {{ stack = "tile-tuned.toml" }}]
''')
    res = nb.run_study(study)
    mass = res.mass.set_index("package")["stack_kg_m2"]
    tuned_tile = nb.load_stack(tuned).layers[0]
    assert mass["tiled"] == pytest.approx(mass["bare"] + tuned_tile.areal_mass)
    assert {p.rsplit("/", 1)[-1] for p in res.files} >= {"s.toml", "wall.toml",
                                                         "tile-tuned.toml"}
    # the package's stack is the wall's layers, then the tuned tile, in the study's air
    wall = nb.load_stack(tmp_path / "wall.toml")
    loaded = nb.load_study(study).inputs
    stack = loaded.packages[1].stacks["wall"]
    assert stack.layers == (*wall.layers, tuned_tile)
    air = loaded.meta["air"]
    assert (stack.source_air, stack.receiver_air) == (air["exterior"], air["cabin"])
    tl = res.tl[res.tl["package"] == "tiled"]["tl_db"].to_numpy()
    expected = stack.band_transmission_loss(nb.third_octave_bands(100, 250), "field")
    np.testing.assert_allclose(tl, expected)


def test_a_zone_gives_layers_or_a_stack_file_not_both(tmp_path):
    write(tmp_path, "wall.toml", SKIN)
    study = write(tmp_path, "s.toml", '''
[cabin]
volume = "30 m^3"
bands_hz = [100]
absorption_area = ["5 m^2"]
[[condition]]
name = "c"
bands_hz = [100]
levels_db = [90]
[[zone]]
name = "wall"
area = "10 m^2"
[[package]]
name = "p"
[package.zone.wall]
stack = "wall.toml"
layer = [{ type = "septum", surface_density = "1 kg/m^2" }]
''')
    with pytest.raises(nb.InputError) as exc:
        nb.load_study(study)
    assert exc.value.lines() == [f"{study}: package[1].zone.wall.stack: give layer or stack, "
                                 "not both"]
