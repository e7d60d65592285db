"""The file schema: every kind and shape of key, every problem in one pass, one line each.

The ``PLANNED`` declarations are the shapes of keys that other parts of the project add
(plate tension and orthotropic stiffness, air loss, bonding, structure, the finite panel,
zone offsets and flanking, leaks, interior sources, octave inputs, trade studies): each is
one ``Field`` line, and these tests show the schema reads and refuses each shape.
"""

import math
import pickle
import time

import pytest

from noisebudget.errors import InputError, InputErrors, show, toml_type
from noisebudget.layers.base import Field, LayerValueError, LayerValueErrors
from noisebudget.schema import INVALID, Reader, check_name, read_table
from noisebudget.units import parse_quantity


def read(table, schema):
    """Values and the problem lines of one table read in one pass."""
    r = Reader("f.toml")
    v = read_table(table, schema, "t", r)
    return v, [p.line() for p in r.problems]


def one_problem(table, schema):
    _, lines = read(table, schema)
    assert len(lines) == 1, lines
    return lines[0]


# ------------------------------------------------------------------ kinds


@pytest.mark.parametrize("value,words", [
    (True, "expected a length with its unit such as \"25 mm\", got boolean true"),
    (["1 mm"], "got array ['1 mm']"),
    ({"a": 1}, "got table {a}"),
    (25, "bare number 25: a length needs a unit"),
    ("25", "'25' has no unit"),
    ("25 kg", "'25 kg' is not a length"),
    ("25 furlongz", "cannot read '25 furlongz' as a quantity"),
    ("nan mm", "cannot read 'nan mm'"),
    ("1e400 mm", "is not a finite number"),
    ("-2 mm", "must be > 0 m, got '-2 mm'"),
    ("2*3 mm", "cannot read '2*3 mm' as a quantity"),
])
def test_quantity_problems_are_named(value, words):
    line = one_problem({"x": value}, {"x": Field("length")})
    assert line.startswith("f.toml: t.x: ") and words in line


def test_quantity_conversions():
    # unit factors: NIST SP 811 (2008) appendix B.8: 1 lb/ft^3 = 16.01846 kg/m^3,
    # 1 in = 0.0254 m exactly; 20 degC = 293.15 K
    assert parse_quantity("1 lb/ft^3", "density") == pytest.approx(16.01846, rel=1e-6)
    assert parse_quantity("3 in", "length") == pytest.approx(0.0762)
    assert parse_quantity("20 degC", "temperature") == pytest.approx(293.15)
    assert parse_quantity("  25mm ", "length") == pytest.approx(0.025)
    assert parse_quantity("1e4 Pa*s/m^2", "flow_resistivity") == pytest.approx(1e4)
    assert parse_quantity("2 kg m^-3", "density") == pytest.approx(2.0)


def test_quantity_text_cannot_make_the_parser_compute():
    # a power tower is refused by the text pattern before any unit parser sees it
    t0 = time.perf_counter()
    for text in ("10**10**10 mm", "1 m^(10^10^10)", "1 mm**999999"):
        with pytest.raises(InputError, match="cannot read"):
            parse_quantity(text, "length")
    assert time.perf_counter() - t0 < 5.0  # a hang, not a timing check


@pytest.mark.parametrize("kind,value,words", [
    ("number", True, "expected a plain number, got boolean true"),
    ("number", "0.3", "(no unit: this value is dimensionless)"),
    ("number", float("nan"), "nan is not a finite number"),
    ("number", float("inf"), "inf is not a finite number"),
    ("db", "90 dB", "(the unit is dB: give the number alone)"),
    ("db", False, "got boolean false"),
    ("boolean", "false", "expected true or false, got string 'false' (write true or false"),
    ("boolean", 0, "expected true or false, got integer 0"),
    ("integer", 2.0, "expected an integer, got float 2.0"),
    ("integer", True, "expected an integer, got boolean true"),
    ("text", 5, "expected text (a string), got integer 5"),
    ("text", "a\x07b", "text must not hold control characters (U+0007)"),
    ("name", "a\nb", "must not hold control characters (U+000A)"),
    ("name", "\u202eevil", "must not hold control characters (U+202E)"),
    ("name", " pad", "must not start or end with spaces"),
    ("name", "", "must not be empty"),
    ("name", ["x"], "expected a name (a string), got array"),
    ("path", 3, "expected a file name (a string)"),
])
def test_plain_kinds_refuse_the_wrong_type(kind, value, words):
    line = one_problem({"x": value}, {"x": Field(kind, positive=False)})
    assert words in line, line
    assert "\n" not in line


def test_names_with_markup_characters_and_any_script_are_accepted():
    for name in ("$x^2$", "wall \\ $ _a_b_", "_first", "=SUM(A1)", "Kabine vorn ü", "窓"):
        assert check_name(name) == ""


def test_text_keeps_tabs_and_line_breaks_and_dates_become_text():
    import datetime

    v, lines = read({"n": "two\nlines\tand a tab", "d": datetime.date(2026, 12, 2)},
                    {"n": Field("text"), "d": Field("date")})
    assert not lines and v["n"].count("\n") == 1 and v["d"] == "2026-12-02"


def test_choice_suggests_the_near_spelling():
    line = one_problem({"x": "difuse"}, {"x": Field("choice", choices=("field", "diffuse"))})
    assert "unknown value 'difuse'; did you mean 'diffuse'? (one of field, diffuse)" in line


def test_ranges_and_defaults():
    schema = {"a": Field("deg", le=90.0), "b": Field("number", allow_zero=True, default=0.05),
              "c": Field("temperature", ge=150.0, le=400.0)}
    assert "t.a: must lie in (0, 90], got 0" in one_problem({"a": 0}, schema)
    assert "must lie in (0, 90], got 91" in one_problem({"a": 91}, schema)
    assert "t.c: must lie in [150 K, 400 K], got '20 K'" in one_problem({"c": "20 K"}, schema)
    v, lines = read({"a": 90}, schema)
    assert not lines and v == {"a": 90.0, "b": 0.05}


# ------------------------------------------------------------------ tables


def test_every_problem_of_a_table_in_one_pass():
    schema = {"thickness": Field("length", required=True), "density": Field("density"),
              "loss_factor": Field("number", allow_zero=True)}
    v, lines = read({"thicknes": "1 mm", "density": True, "loss_factor": "x"}, schema)
    assert lines == [
        "f.toml: t.thicknes: unknown key; did you mean 'thickness'? (allowed: thickness, "
        "density, loss_factor)",
        "f.toml: t.density: expected a density with its unit such as \"9.6 kg/m^3\", got "
        "boolean true",
        "f.toml: t.loss_factor: expected a plain number, got string 'x' (no unit: this "
        "value is dimensionless)",
        "f.toml: t.thickness: missing required key",
    ]
    assert v.bad == {"density", "loss_factor"} and not v.given("thickness")


def test_a_table_where_a_value_belongs_and_the_reverse():
    assert "expected a table, got string 'x'" in one_problem(
        {"air": "x"}, {"air": Field("table", schema={})})
    assert "t.cell: expected an array of tables ([[cell]]), got a single table" in \
        one_problem({"cell": {"radius": "1 mm"}}, {"cell": Field("tables", schema={})})
    assert "t.cell[2]: expected a table, got integer 3" in one_problem(
        {"cell": [{}, 3]}, {"cell": Field("tables", schema={})})


def test_groups_needs_and_unique_names():
    cabin = {"reverberation_time": Field("time", group="a", required=True),
             "mean_absorption": Field("number", group="a", required=True,
                                      needs=("surface_area",)),
             "surface_area": Field("area")}
    assert "t.reverberation_time: missing: give reverberation_time or mean_absorption" in \
        one_problem({}, cabin)
    assert "t.mean_absorption: give reverberation_time or mean_absorption, not both" in \
        one_problem({"reverberation_time": "1 s", "mean_absorption": 0.2,
                     "surface_area": "1 m^2"}, cabin)
    assert "t.mean_absorption: needs surface_area as well" in one_problem(
        {"mean_absorption": 0.2}, cabin)
    zones = {"zone": Field("tables", unique="name", schema={"name": Field("name")})}
    assert "t.zone[3].name: duplicate name 'wall' (also zone[1])" in one_problem(
        {"zone": [{"name": "wall"}, {"name": "door"}, {"name": "wall"}]}, zones)


def test_named_tables_check_their_names():
    schema = {"zone": Field("named", schema={"notes": Field("text")})}
    v, lines = read({"zone": {"wall": {"notes": "x"}, "a\x01": {}}}, schema)
    assert v["zone"]["wall"] == {"notes": "x"}
    assert lines == ['f.toml: t.zone."a\\x01": \'a\\x01\': a name must not hold control '
                     'characters (U+0001)']


# ------------------------------------------------------------------ planned shapes

BANDS = [500, 630, 800]
PLANNED = {
    # layers/panels.py Plate.schema
    "in_plane_tension": Field("tension", allow_zero=True, shape="one_or_list", length=2,
                              doc="membrane tension: one value, or [axial, hoop]"),
    "bending_stiffness": Field("bending_stiffness", shape="one_or_list", length=2,
                               doc="D, or [D_axial, D_hoop]"),
    "curvature_radius": Field("length", doc="fuselage radius"),
    # layerfile.LAYER_META
    "bonding": Field("choice", choices=("bonded", "unbonded"), default="bonded"),
    "structure": Field("boolean", default=False, doc="counts as structure, not treatment"),
    # study ZONE
    "bandwidth": Field("choice", choices=("third", "octave"), default="third"),
    "offset_bands_hz": Field("bands", needs=("exterior_offset_db",)),
    "exterior_offset_db": Field("db", positive=False, shape="one_or_list",
                                length="offset_bands_hz"),
    "panel_width": Field("length"),
    # study PACKAGE_ZONE
    "leak": Field("tables", tag="shape", variants={
        "slit": {"width": Field("length", required=True),
                 "length": Field("length", required=True),
                 "depth": Field("length", required=True)},
        "hole": {"diameter": Field("length", required=True),
                 "depth": Field("length", required=True),
                 "count": Field("integer", ge=1, default=1)}}),
    # stack file [panel], study [trade] and [[vary]]
    "panel": Field("table", schema={"width": Field("length", required=True),
                                    "height": Field("length", required=True)}),
    "trade": Field("table", schema={
        "mode": Field("choice", choices=("grid", "monte-carlo"), default="grid"),
        "samples": Field("integer", ge=1, le=100000), "seed": Field("integer", ge=0)}),
    "vary": Field("tables", schema={"package": Field("name", required=True),
                                    "layer": Field("integer", ge=1),
                                    "key": Field("text", required=True),
                                    "values": Field("raw", shape="list")}),
}


def test_planned_shapes_accept_their_forms():
    v, lines = read({
        "in_plane_tension": ["2 kN/m", "0 N/m"], "bending_stiffness": "250 N*m",
        "bonding": "unbonded", "structure": True, "offset_bands_hz": [500, 630, 800],
        "exterior_offset_db": [0, -1.5, 2], "panel_width": "0.5 m",
        "leak": [{"shape": "slit", "width": "1 mm", "length": "0.4 m", "depth": "2 mm"},
                 {"shape": "hole", "diameter": "5 mm", "depth": "2 mm"}],
        "panel": {"width": "0.5 m", "height": "0.6 m"}, "trade": {"samples": 200},
        "vary": [{"package": "p", "layer": 2, "key": "thickness", "values": ["5 mm", "9 mm"]}],
    }, PLANNED)
    assert not lines, lines
    assert v["in_plane_tension"] == (2000.0, 0.0) and v["bending_stiffness"] == 250.0
    assert len(v["offset_bands_hz"]) == 3 and v["exterior_offset_db"] == (0.0, -1.5, 2.0)
    assert v["leak"][1] == {"shape": "hole", "diameter": 0.005, "depth": 0.002, "count": 1}
    assert v["trade"] == {"mode": "grid", "samples": 200}
    v, lines = read({"bandwidth": "octave", "offset_bands_hz": [125, 250, 500],
                     "exterior_offset_db": 3}, PLANNED)
    assert not lines and v["offset_bands_hz"].b == 1 and v["exterior_offset_db"] == 3.0


@pytest.mark.parametrize("table,key,words", [
    ({"in_plane_tension": ["1 N/m"] * 3}, "t.in_plane_tension", "expected 2 values, got 3"),
    ({"in_plane_tension": [1, "1 N/m"]}, "t.in_plane_tension[1]", "bare number 1"),
    ({"in_plane_tension": ["1 N/m", "-1 N/m"]}, "t.in_plane_tension[2]", "must be >= 0"),
    ({"bonding": "glued"}, "t.bonding", "one of bonded, unbonded"),
    ({"structure": "true"}, "t.structure", "expected true or false"),
    ({"offset_bands_hz": BANDS, "exterior_offset_db": [1, 2]}, "t.exterior_offset_db",
     "2 values for 3 bands of offset_bands_hz: the bands do not match"),
    ({"offset_bands_hz": [500, 800], "exterior_offset_db": 1}, "t.offset_bands_hz",
     "consecutive ISO 266 one-third-octave"),
    ({"offset_bands_hz": [5, 6.3], "exterior_offset_db": 1}, "t.offset_bands_hz",
     "between 10 Hz and 20000 Hz"),
    ({"leak": [{"shape": "slot"}]}, "t.leak[1].shape", "did you mean 'slit'"),
    ({"leak": [{"width": "1 mm"}]}, "t.leak[1].shape", "missing: give shape (slit or hole)"),
    ({"leak": [{"shape": "hole", "diameter": "5 mm", "depth": "1 mm", "count": 0}]},
     "t.leak[1].count", "must be >= 1"),
    ({"leak": [{"shape": "hole", "diameter": "5 mm", "depth": "1 mm", "width": "1 mm"}]},
     "t.leak[1].width", "unknown key"),
    ({"panel": {"width": "0.5 m"}}, "t.panel.height", "missing required key"),
    ({"trade": {"mode": "random"}}, "t.trade.mode", "grid, monte-carlo"),
    ({"vary": [{"package": "p", "key": "k", "layer": 0}]}, "t.vary[1].layer", ">= 1"),
])
def test_planned_shapes_refuse_wrong_forms(table, key, words):
    line = one_problem(table, PLANNED)
    assert line.startswith(f"f.toml: {key}: ") and words in line, line


# ------------------------------------------------------------------ frequencies

CURVE = {"tl_db": Field("db", allow_zero=True, shape="one_or_list", length="points_hz"),
         "points_hz": Field("frequencies", needs=("tl_db",))}


def test_frequencies_are_any_rising_frequencies():
    v, lines = read({"tl_db": [30, 45, 50], "points_hz": [63, 1000, 4000.5]}, CURVE)
    assert not lines and v["points_hz"] == (63.0, 1000.0, 4000.5)
    assert v["tl_db"] == (30.0, 45.0, 50.0)


@pytest.mark.parametrize("table,key,words", [
    ({"tl_db": [1, 2], "points_hz": [100, 100]}, "t.points_hz", "frequencies must rise"),
    ({"tl_db": [1, 2], "points_hz": [100, 50]}, "t.points_hz", "frequencies must rise"),
    ({"tl_db": [1], "points_hz": [5]}, "t.points_hz[1]", "from 10 to 20000"),
    ({"tl_db": [1], "points_hz": [True]}, "t.points_hz[1]", "got boolean true"),
    ({"tl_db": [1], "points_hz": 100}, "t.points_hz", "expected a list of frequencies"),
    ({"tl_db": [1], "points_hz": []}, "t.points_hz", "expected a list of frequencies"),
    ({"tl_db": [1, 2, 3], "points_hz": [100, 200]}, "t.tl_db",
     "3 values for 2 frequencies of points_hz: the frequencies do not match"),
    ({"points_hz": [100]}, "t.points_hz", "needs tl_db as well"),
])
def test_frequencies_refuse_wrong_forms(table, key, words):
    line = one_problem(table, CURVE)
    assert line.startswith(f"f.toml: {key}: ") and words in line, line


# ------------------------------------------------------------------ errors


def test_errors_survive_pickle_and_print_one_line_each():
    e = InputError("a.toml", "layer[1].thickness", "missing required key")
    many = InputErrors([e, InputError("b.toml", "x", "bad\nvalue")])
    for err in (e, many, LayerValueError("k", "r"), LayerValueErrors([LayerValueError("k", "r")])):
        back = pickle.loads(pickle.dumps(err))
        assert type(back) is type(err) and str(back) == str(err)
    back = pickle.loads(pickle.dumps(many))
    assert back.lines() == ["a.toml: layer[1].thickness: missing required key",
                            "b.toml: x: bad value"]
    assert (back.file, back.key, back.reason) == ("a.toml", "layer[1].thickness",
                                                  "missing required key")


def test_values_are_shown_with_their_toml_type():
    assert show(True, typed=True) == "boolean true"
    assert show(float("nan"), typed=True) == "float nan"
    assert toml_type([{}]) == "array of tables" and toml_type([]) == "array"
    assert show("x" * 100).endswith("...'") and math.isinf(float("inf"))


def test_invalid_marks_values_not_read():
    r = Reader("f.toml")
    assert read_table(3, {}, "t", r) is INVALID and not INVALID
    assert r.problems[0].line() == "f.toml: t: expected a table, got integer 3"


def test_key_reference_is_generated_from_the_schema():
    from pathlib import Path

    from noisebudget.keyref import markdown

    path = Path(__file__).resolve().parents[1] / "docs" / "file-keys.md"
    assert path.read_text(encoding="utf-8") == markdown(), (
        "docs/file-keys.md is out of date: run python -m noisebudget.keyref docs/file-keys.md")
