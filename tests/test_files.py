"""Stack files, catalogs and the `tl` / `catalog` commands: contracts and bad input."""

import json
import subprocess
import sys

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.catalog import SOURCE_TAGS, load_catalog
from noisebudget.cli import main
from noisebudget.resources import data_path

EXAMPLE = data_path("examples", "sidewall.toml")

DESIGN_STACK = '''
[source_air]
temperature = "20 degC"
pressure = "101.325 kPa"

[[layer]]
type = "plate"
thickness = "1.6 mm"
density = "2780 kg/m^3"
youngs_modulus = "73 GPa"
poisson_ratio = 0.33
loss_factor = 0.01

[[layer]]
type = "porous"
model = "delany-bazley"
thickness = "50 mm"
flow_resistivity = "20000 Pa*s/m^2"

[[layer]]
type = "air"
thickness = "20 mm"

[[layer]]
type = "septum"
surface_density = "1.5 kg/m^2"

[[layer]]
use = "trim.honeycomb-glass-10"
'''


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_design_example_stack_parses(tmp_path):
    s = nb.load_stack(write(tmp_path, DESIGN_STACK))
    assert len(s.layers) == 5
    assert s.areal_mass == pytest.approx(2780 * 1.6e-3 + 1.5 + 1.73)
    assert s.layers[0].bending_stiffness == pytest.approx(73e9 * 1.6e-3**3 / (12 * (1 - 0.33**2)))


def test_units_are_converted_at_the_boundary(tmp_path):
    text = '[[layer]]\ntype = "septum"\nsurface_density = "1 lb/ft^2"\n'
    s = nb.load_stack(write(tmp_path, text))
    assert s.areal_mass == pytest.approx(4.8824, rel=1e-4)  # 1 lb/ft^2 = 4.8824 kg/m^2
    text = ('[[layer]]\ntype = "porous"\nmodel = "miki"\nthickness = "3 in"\n'
            'flow_resistivity = "20000 Pa*s/m^2"\nbulk_density = "0.6 lb/ft^3"\n')
    s = nb.load_stack(write(tmp_path, text))
    assert s.layers[0].thickness == pytest.approx(0.0762)
    assert s.layers[0].bulk_density == pytest.approx(9.611, rel=1e-3)  # 0.6 lb/ft^3


def test_catalog_override(tmp_path):
    text = '[[layer]]\nuse = "blanket.glass-0.6pcf"\nthickness = "75 mm"\n'
    s = nb.load_stack(write(tmp_path, text))
    assert s.layers[0].thickness == pytest.approx(0.075)
    assert s.labels == ("blanket.glass-0.6pcf",)


def test_every_catalog_entry_builds_and_names_its_source():
    cat = load_catalog()
    assert len(cat.keys()) >= 20
    for key in cat.keys():
        entry = cat.entries[key]
        src = entry["source"].lower()
        assert src and (any(t in src for t in SOURCE_TAGS) or any(ch.isdigit() for ch in src))
        if "type" in entry:
            nb.parse_stack({"layer": [{"use": key}]}, "catalog")


BAD = [
    ('type = "plat"', "layer[1].type", "did you mean 'plate'"),
    ('type = "septum"\nsurface_density = 1.5', "layer[1].surface_density", "bare number"),
    ('type = "septum"\nsurface_density = "1.5 kg"', "layer[1].surface_density", "not a surface"),
    ('type = "air"\nthicknes = "2 mm"', "layer[1].thicknes", "did you mean 'thickness'"),
    ('type = "air"', "layer[1].thickness", "missing"),
    ('type = "septum"\nsurface_density = "0 kg/m^2"', "layer[1].surface_density", "> 0"),
    ('type = "plate"\nthickness = "-1 mm"\ndensity = "2700 kg/m^3"\nyoungs_modulus = "70 GPa"',
     "layer[1].thickness", "> 0"),
    ('type = "plate"\nthickness = "1 mm"\ndensity = "-2700 kg/m^3"\nyoungs_modulus = "70 GPa"',
     "layer[1].density", "> 0"),
    ('type = "porous"\nmodel = "delaney"\nthickness = "5 mm"\nflow_resistivity = '
     '"1e4 Pa*s/m^2"', "layer[1].model", "delany-bazley"),
    ('type = "porous"\nmodel = "jca"\nthickness = "5 mm"\nflow_resistivity = "1e4 Pa*s/m^2"',
     "layer[1].porosity", "missing"),
    ('use = "skin.al2024-t3-1.6"', "layer[1].use", "did you mean 'skin.al2024-t3-1.6mm'"),
    ('type = "air"\nthickness = "banana"', "layer[1].thickness", "cannot read"),
]


@pytest.mark.parametrize("body,key,words", BAD)
def test_bad_input_gives_one_line_and_exit_2(tmp_path, capsys, body, key, words):
    path = write(tmp_path, f"[[layer]]\n{body}\n")
    assert main(["tl", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    # one line per problem, each naming the file; the first is the one under test
    assert err and all(line.startswith(f"{path}: layer[1].") for line in err)
    assert err[0].startswith(f"{path}: {key}: ") and words in err[0]
    assert not any("Traceback" in line for line in err)


def test_malformed_toml_and_missing_file(tmp_path, capsys):
    assert main(["tl", str(write(tmp_path, "[[layer]\n"))]) == 2
    assert "malformed TOML" in capsys.readouterr().err
    assert main(["tl", str(tmp_path / "nope.toml")]) == 2
    assert "file not found" in capsys.readouterr().err


def test_all_problems_of_a_layer_in_one_pass(tmp_path, capsys):
    # a unit mistake does not hide the model's missing parameters
    text = ('[[layer]]\ntype = "porous"\nmodel = "jca"\nthickness = "50 mm"\n'
            'flow_resistivity = "20000 Pa*s/m"\n')
    assert main(["tl", str(write(tmp_path, text))]) == 2
    err = capsys.readouterr().err
    assert "layer[1].flow_resistivity: '20000 Pa*s/m' is not a flow resistivity" in err
    for key in ("porosity", "tortuosity", "viscous_length", "thermal_length"):
        assert f"layer[1].{key}: missing: model 'jca' needs it" in err


def test_second_layer_index_is_named(tmp_path, capsys):
    text = '[[layer]]\ntype = "septum"\nsurface_density = "1 kg/m^2"\n[[layer]]\ntype = "air"\n'
    assert main(["tl", str(write(tmp_path, text))]) == 2
    assert "layer[2].thickness: missing" in capsys.readouterr().err


def test_tl_json_contract(capsys):
    assert main(["tl", str(EXAMPLE), "--format", "json", "--incidence", "diffuse"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert set(out) >= {"frequency_hz", "tl_db", "areal_mass_kg_m2", "incidence",
                        "theta_max_deg"}
    assert out["incidence"] == "diffuse" and out["theta_max_deg"] == 90.0
    f = np.array(out["frequency_hz"])
    assert f[0] == 50.0 and f[-1] == 10000.0
    assert np.allclose(np.diff(np.log2(f[:-1])), 1 / 12)
    stack = nb.load_stack(EXAMPLE)
    with pytest.warns(nb.ModelRangeWarning):  # the example blanket's DB range, as the CLI says
        expected = stack.transmission_loss(f, "diffuse")
    np.testing.assert_allclose(out["tl_db"], expected, atol=1e-3)


def test_tl_json_with_bands_and_ratings(capsys):
    assert main(["tl", str(EXAMPLE), "--format", "json", "--bands", "third"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["bands"]["nominal_hz"][0] == 50.0 and 10000.0 in out["bands"]["nominal_hz"]
    assert set(out["ratings"]) == {"stc", "rw", "c", "ctr", "oitc"}
    assert all(isinstance(v, int) for v in out["ratings"].values())


def test_tl_explicit_frequencies_and_table(capsys):
    assert main(["tl", str(EXAMPLE), "--frequencies", "100,1000", "--incidence", "normal"]) == 0
    out = capsys.readouterr().out
    assert "normal incidence" in out and "1000.0" in out and "TL (dB)" in out


def test_tl_csv(capsys):
    assert main(["tl", str(EXAMPLE), "--format", "csv", "--fmin", "100", "--fmax", "200",
                 "--per-octave", "1"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert lines[0] == "frequency_hz,tl_db" and len(lines) == 3


def test_catalog_command(capsys):
    assert main(["catalog"]) == 0
    out = capsys.readouterr().out
    assert "skin.ti6al4v-1.0mm" in out and "foam.melamine-10" in out
    assert main(["catalog", "trim.honeycomb-glass-10"]) == 0
    assert "core_shear_modulus" in capsys.readouterr().out
    assert main(["catalog", "trim.honeycomb"]) == 2


def test_python_dash_m_runs():
    r = subprocess.run([sys.executable, "-m", "noisebudget", "tl", str(EXAMPLE),
                        "--frequencies", "500", "--format", "json"],
                       capture_output=True, text=True, check=False)
    assert r.returncode == 0 and json.loads(r.stdout)["tl_db"][0] > 20
