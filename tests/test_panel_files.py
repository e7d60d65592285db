"""Stack-file keys of curved, tensioned and stiffened skins, sandwiches and lossy gaps."""

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.cli import main

SIDEWALL = '''
[source_air]
temperature = "-34.5 degC"
pressure = "37.6 kPa"
[receiver_air]
temperature = "22 degC"
pressure = "75.3 kPa"

[[layer]]
type = "plate"
thickness = "1.6 mm"
density = "2780 kg/m^3"
youngs_modulus = "73.1 GPa"
poisson_ratio = 0.33
surface_density = "5.4 kg/m^2"
bending_stiffness = ["400 N*m", "90 N*m"]
curvature_radius = "1.4 m"

[[layer]]
type = "air"
thickness = "75 mm"
loss_factor = 0.05

[[layer]]
type = "sandwich"
face_thickness = "0.25 mm"
face_density = "1900 kg/m^3"
face_youngs_modulus = "20 GPa"
face_poisson_ratio = 0.15
core_thickness = "10 mm"
core_density = "48 kg/m^3"
core_shear_modulus = "30 MPa"
loss_factor = 0.02
added_surface_density = "0.3 kg/m^2"
'''


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_panel_keys_parse(tmp_path):
    s = nb.load_stack(write(tmp_path, SIDEWALL))
    skin, gap, trim = s.layers
    assert skin.bending_stiffness == (400.0, 90.0) and skin.surface_density == 5.4
    assert skin.curvature_radius == 1.4 and skin.youngs_modulus == pytest.approx(73.1e9)
    assert skin.in_plane_tension is None and not s.isotropic
    dp = s.receiver_air.pressure - s.source_air.pressure
    assert s.mounted_layers[0].in_plane_tension == pytest.approx((dp * 0.7, dp * 1.4))
    assert gap.loss_factor == 0.05
    assert trim.areal_mass == pytest.approx(2 * 1900 * 0.25e-3 + 0.48 + 0.3)
    assert trim.core_shear_modulus == pytest.approx(30e6)
    text = SIDEWALL.replace('curvature_radius = "1.4 m"',
                            'in_plane_tension = ["20 kN/m", "40 kN/m"]')
    s = nb.load_stack(write(tmp_path, text))
    assert s.layers[0].in_plane_tension == (2e4, 4e4)
    text = SIDEWALL.replace('curvature_radius = "1.4 m"', 'in_plane_tension = "1 kN/m"')
    assert nb.load_stack(write(tmp_path, text)).layers[0].in_plane_tension == (1e3, 1e3)


def test_panel_table_sets_the_bay(tmp_path):
    s = nb.load_stack(write(tmp_path, SIDEWALL + '[panel]\nwidth = "0.5 m"\nheight = "200 mm"\n'))
    assert s.panel == nb.Panel(0.5, 0.2)
    assert nb.load_stack(write(tmp_path, SIDEWALL)).panel is None
    for body, key, words in [('width = "0.5 m"', "panel.height", "missing"),
                             ('width = "-0.5 m"\nheight = "0.2 m"', "panel.width",
                              "must lie in (0 m, 10 m]"),
                             ('width = "0.5 m"\nheight = "0.2 m"\ndepth = "1 m"', "panel.depth",
                              "unknown key")]:
        with pytest.raises(nb.InputErrors) as info:
            nb.load_stack(write(tmp_path, SIDEWALL + f"[panel]\n{body}\n"))
        line = info.value.lines()[0]
        assert f"{key}: " in line and words in line


def test_panel_stack_file_runs(tmp_path):
    path = write(tmp_path, SIDEWALL)
    assert main(["tl", str(path), "--frequencies", "100,1000", "--format", "json"]) == 0
    tl = nb.load_stack(path).transmission_loss([100.0, 1000.0])
    assert np.all(np.isfinite(tl))


_PLATE = ('type = "plate"\nthickness = "1.6 mm"\ndensity = "2780 kg/m^3"\n'
          'youngs_modulus = "73 GPa"\n')

BAD = [
    (_PLATE + 'curvature_radius = "-1.4 m"', "layer[1].curvature_radius", "> 0"),
    ('type = "air"\nthickness = "20 mm"\ncurvature_radius = "1.4 m"',
     "layer[1].curvature_radius", "unknown key"),
    (_PLATE + 'in_plane_tension = ["1 kN/m", "2 kN/m", "3 kN/m"]', "layer[1].in_plane_tension",
     "expected 2 values, got 3"),
    (_PLATE + 'bending_stiffness = ["400 N*m", "-90 N*m"]', "layer[1].bending_stiffness[2]",
     "> 0"),
    (_PLATE + 'in_plane_tension = "-1 kN/m"', "layer[1].in_plane_tension", ">= 0"),
    ('type = "plate"\nsurface_density = "4 kg/m^2"\nbending_stiffness = "30 N*m"\n'
     'curvature_radius = "1.4 m"', "layer[1].curvature_radius", "youngs_modulus"),
    ('type = "air"\nthickness = "20 mm"\nloss_factor = -0.1', "layer[1].loss_factor",
     "must lie in [0, 2]"),
    ('type = "septum"\nsurface_density = "2 kg/m^2"\nin_plane_tension = "1 kN/m"',
     "layer[1].in_plane_tension", "unknown key"),
    (_PLATE + 'bending_stiffness = ["400 N*m", "90 N*m"]', "layer[1].bending_stiffness",
     "not both"),
    (_PLATE + 'in_plane_tension = ["1 kN/m", "-2 kN/m"]', "layer[1].in_plane_tension[2]",
     ">= 0"),
    (_PLATE + 'bending_stiffness = []', "layer[1].bending_stiffness", "empty list"),
    ('type = "sandwich"\nface_thickness = "0.25 mm"\nface_density = "1900 kg/m^3"\n'
     'face_youngs_modulus = "20 GPa"\ncore_thickness = "10 mm"\ncore_density = "48 kg/m^3"',
     "layer[1].core_shear_modulus", "missing"),
]


@pytest.mark.parametrize("body,key,words", BAD)
def test_bad_panel_input_gives_one_line_and_exit_2(tmp_path, capsys, body, key, words):
    path = write(tmp_path, f"[[layer]]\n{body}\n")
    assert main(["tl", str(path)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err and all(line.startswith(f"{path}: layer[1].") for line in err)
    assert err[0].startswith(f"{path}: {key}: ") and words in err[0]
    assert not any("Traceback" in line for line in err)


def test_plate_and_sandwich_parameters_carry_their_units(tmp_path):
    # tables and the workbook show SI quantities in the units of their kind: D in N*m,
    # tension in N/m, E in GPa, G in MPa, lengths in mm, the radius in m
    from noisebudget.report.model import parameter_rows

    s = nb.load_stack(write(tmp_path, SIDEWALL.replace(
        'curvature_radius = "1.4 m"', 'curvature_radius = "1.4 m"\n'
                                      'in_plane_tension = ["20 kN/m", "40 kN/m"]')))
    rows = {name: (value, unit) for name, value, unit, _ in parameter_rows(s.layers[0])}
    assert rows["bending_stiffness_axial"] == (400.0, "N·m")
    assert rows["bending_stiffness_hoop"] == (90.0, "N·m")
    assert rows["in_plane_tension_hoop"] == (4e4, "N/m")
    assert rows["curvature_radius"] == (1.4, "m")
    assert rows["youngs_modulus"] == (pytest.approx(73.1), "GPa")
    assert rows["plate_thickness"] == (pytest.approx(1.6), "mm")
    rows = {name: (value, unit) for name, value, unit, _ in parameter_rows(s.layers[2])}
    assert rows["core_shear_modulus"] == (pytest.approx(30.0), "MPa")
    assert rows["added_surface_density"] == (pytest.approx(0.3), "kg/m²")
    assert rows["face_density"] == (pytest.approx(1900.0), "kg/m³")
    assert rows["core_thickness"] == (pytest.approx(10.0), "mm")


def test_curved_skin_bonded_to_a_foam_in_a_bay_runs(tmp_path):
    # what check accepts, run computes: a pressurised curved stiffened skin with a Biot
    # foam glued to it (the general solve, nested azimuth average) in a bay
    text = SIDEWALL.replace('[[layer]]\ntype = "air"', '[[layer]]\nuse = '
                            '"poroelastic.pu-foam-24"\n\n[[layer]]\ntype = "air"', 1)
    path = write(tmp_path, text + '[panel]\nwidth = "0.5 m"\nheight = "0.2 m"\n')
    s = nb.load_stack(path)
    assert s._general and not s.isotropic and s.panel == nb.Panel(0.5, 0.2)
    assert main(["tl", str(path), "--frequencies", "200,2000", "--format", "json"]) == 0
