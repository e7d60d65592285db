"""Limits and refusals: grid and sample options of `tl` and `tile`, library arguments,
`tile --fit` data files, and ratings when the bands fall short. Each case has its
expected outcome: one line naming the option or argument, exit status 2 (or the
library's ArgumentError), never a traceback or a huge allocation."""

import numpy as np
import pytest

import noisebudget as nb
from noisebudget.checks import MAX_FREQUENCIES, ArgumentError
from noisebudget.cli import main
from noisebudget.ratings import rw, stc
from noisebudget.resources import data_path

STACK = str(data_path("examples", "sidewall.toml"))
TILE = str(data_path("examples", "tile.toml"))


def one_line(capsys):
    err = capsys.readouterr().err
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err, err
    return lines[0]


@pytest.mark.parametrize("options, words", [
    (["--fmin", "0"], "--fmin: '0': a frequency must be > 0"),
    (["--fmin", "-20"], "--fmin: '-20': a frequency must be > 0"),
    (["--fmin", "nan"], "--fmin: 'nan' is not a frequency"),
    (["--fmax", "inf"], "--fmax: 'inf' is not a frequency"),
    (["--fmax", "1e12"], "--fmax: 1e+12 Hz: must lie in"),
    (["--fmin", "5000", "--fmax", "100"], "--fmin 5000 Hz must be below --fmax 100 Hz"),
    (["--fmin", "100", "--fmax", "100"], "must be below --fmax"),
    (["--per-octave", "0"], "--per-octave: 0: must lie in 1 .. 1000"),
    (["--per-octave", "-3"], "--per-octave: -3"),
    (["--per-octave", "100000000"], "--per-octave: 100000000: must lie in 1 .. 1000"),
    (["--frequencies", "100,nan"], "--frequencies: 'nan' is not a frequency"),
    (["--frequencies", "100,-10"], "--frequencies: '-10': a frequency must be > 0"),
    (["--frequencies", "0"], "--frequencies: '0': a frequency must be > 0"),
    (["--frequencies", "1e9"], "--frequencies[0] = 1e+09 Hz: must be <= 100000 Hz"),
    (["--frequencies", ",,"], "--frequencies: ',,': need at least one frequency"),
    (["--frequencies", "100,abc"], "--frequencies: 'abc' is not a frequency"),
    (["--frequencies", ",".join(["100"] * (MAX_FREQUENCIES + 1))], "at most"),
    (["--theta-max", "0"], "--theta-max: '0': an angle must be > 0"),
    (["--theta-max", "nan"], "--theta-max: 'nan' is not an angle"),
    (["--theta-max", "91"], "--theta-max: 91 deg"),
    (["--fmin", "100", "--fmax", "105", "--bands", "octave"],
     "--bands octave: no band centre between 100 and 105 Hz"),
])
def test_tl_grid_options_refused_with_one_line(capsys, options, words):
    assert main(["tl", STACK, *options]) == 2
    assert words in one_line(capsys)


@pytest.mark.parametrize("options, words", [
    (["--fmin", "0"], "--fmin: '0': a frequency must be > 0"),
    (["--fmax", "-1"], "--fmax: '-1': a frequency must be > 0"),
    (["--fmin", "300", "--fmax", "20"], "--fmin 300 Hz must be below --fmax 20 Hz"),
    (["--fmax", "nan"], "--fmax: 'nan' is not a frequency"),
    (["--profile", "0"], "--profile: '0': a frequency must be > 0"),
    (["--profile", "inf"], "--profile: 'inf' is not a frequency"),
    (["--profile", "1e7"], "--profile: 1e+07 Hz: must lie in"),
    (["--tune-peak", "1e12Hz"], "--tune-peak: 1e+12 Hz: must lie in"),
    # above 5 kHz the search grid once left the library's frequency range
    (["--tune-peak", "30 kHz"], "--tune-peak: 30000 Hz: must lie in 0.001 .. 20000 Hz"),
    (["--tune-peak", "20 kHz"], "no mass within 1e-06 .. 0.1 (SI) puts the first TL peak at "
                                "20000 Hz"),
    # options that apply to another one, or two that would each write a tile
    (["--fit-mass"], "--fit-mass applies to --fit only"),
    (["--vary", "radius"], "--vary applies to --tune-peak only"),
    (["--tune-peak", "150", "--fit", "m.csv"], "--tune-peak and --fit: give one of them"),
    # an output that cannot be written is refused before any computation
    (["--tune-peak", "150", "-o", "/nonexistent-folder/t.toml"],
     "--output: no folder '/nonexistent-folder' to write it in"),
    (["--tune-peak", "150", "-o", "/tmp"], "/tmp: --output: is a folder; give a file name"),
])
def test_tile_options_refused_with_one_line(capsys, options, words):
    assert main(["tile", TILE, *options]) == 2
    assert words in one_line(capsys)


def test_tile_profile_and_grid_within_limits_run(capsys):
    assert main(["tile", TILE, "--fmin", "20", "--fmax", "20000", "--profile", "20000"]) == 0
    out = capsys.readouterr().out
    assert "cell 1 at 20000 Hz" in out and "nan" not in out.lower()


@pytest.mark.parametrize("call, words", [
    (lambda s: s.transmission_loss([100.0, 200.0, 300.0, -10.0]),
     "f_hz[3] = -10 Hz: must be > 0"),
    (lambda s: s.transmission_loss([np.nan]), "f_hz[0] = nan Hz: must be a finite number"),
    (lambda s: s.transmission_loss([0.0]), "f_hz[0] = 0 Hz: must be > 0"),
    (lambda s: s.transmission_loss([1e-9]), "f_hz[0] = 1e-09 Hz: must be >= 0.001 Hz"),
    (lambda s: s.transmission_loss([3e5]), "f_hz[0] = 300000 Hz: must be <= 100000 Hz"),
    (lambda s: s.transmission_loss(np.ones((2, 2))), "f_hz must be 1-D"),
    (lambda s: s.transmission_loss([]), "f_hz is empty"),
    (lambda s: s.transmission_loss(["a"]), "f_hz: not an array of numbers"),
    (lambda s: s.transmission_loss(np.full(MAX_FREQUENCIES + 1, 100.0)),
     f"f_hz has {MAX_FREQUENCIES + 1} values: at most {MAX_FREQUENCIES} per call"),
    (lambda s: s.transmission_coefficient([100.0], [0.1, 2.0]),
     "theta_rad[1] = 2 rad: must lie in 0 .. pi/2"),
    (lambda s: s.transmission_coefficient(np.full(100000, 100.0), np.zeros(1000)),
     "100000 frequencies x 1000 angles"),
    (lambda s: s.transmission_loss([100.0], "field", float("nan")), "theta_max_deg = nan"),
])
def test_library_arguments_named_with_their_value(call, words):
    s = nb.Stack([nb.Septum(2.0)])
    with pytest.raises(ArgumentError) as info:
        call(s)
    assert words in str(info.value)
    assert isinstance(info.value, ValueError)


def test_large_request_is_computed_in_blocks():
    # 5000 frequencies pass through the quadrature in blocks of 2048 with equal results
    s = nb.Stack([nb.Septum(2.0), nb.AirGap(0.05), nb.Septum(1.0)])
    f = np.geomspace(50, 10000, 5000)
    whole = s.transmission_loss(f)
    np.testing.assert_allclose(whole[4000:4010], s.transmission_loss(f[4000:4010]),
                               rtol=0, atol=1e-9)


FIT_CASES = {  # name: (bytes, expected words); '*' means a folder
    "binary": (b"\x00\x01\x02\x03frequency", "is a binary file"),
    "latin1": (b"frequency_hz,tl_db\n100,3\n# 20 \xb0C\n", "line 3: not UTF-8 text (byte 0xb0)"),
    "empty": (b"", "is empty"),
    "comments": (b"# nothing here\n\n", "is empty"),
    "folder": ("*", "is a folder, not a data file"),
    "inf": (b"frequency_hz,tl_db\n100,3\n200,inf\n", "line 3: frequency and TL must be finite"),
    "nan": (b"frequency_hz,tl_db\nnan,3\n", "line 2: frequency and TL must be finite"),
    "few": (b"frequency_hz,tl_db\n100,3\n200,4\n", "need at least 5 measured points, got 2"),
    "unsorted": (b"frequency_hz,tl_db\n100,3\n200,4\n150,5\n300,1\n400,2\n",
                 "line 4: frequency 150 Hz is below the previous 200 Hz"),
    "repeated": (b"frequency_hz,tl_db\n100,3\n200,4\n200,5\n300,1\n400,2\n",
                 "line 4: frequency 200 Hz repeats the previous 200 Hz"),
    "header": (b"f,tl\n100,3\n", "line 1: expected the header 'frequency_hz,tl_db'"),
    "three": (b"frequency_hz,tl_db\n100,3,4\n", "line 2: expected two numbers"),
    "negative": (b"frequency_hz,tl_db\n-100,3\n", "line 2: frequency -100 Hz: must lie in"),
    "huge": (b"frequency_hz,tl_db\n" + b"100,3\n" * (3 * 2**20), "larger than 16 MB"),
    "tl-absurd": (b"frequency_hz,tl_db\n100,3\n200,1e6\n", "line 3: TL 1e+06 dB: must lie in "
                                                        "-50 .. 200 dB"),
}


@pytest.mark.parametrize("name", sorted(FIT_CASES))
def test_fit_data_files_refused_with_one_line(tmp_path, capsys, name):
    content, words = FIT_CASES[name]
    path = tmp_path / f"{name}.csv"
    if content == "*":
        path.mkdir()
    else:
        path.write_bytes(content)
    assert main(["tile", TILE, "--fit", str(path)]) == 2
    line = one_line(capsys)
    assert line.startswith(str(path)) and words in line


def test_a_device_is_read_no_further_than_the_file_size_limit(capsys):
    # /dev/zero never ends: it is refused after 16 MB instead of filling the memory
    for argv in (["tl", "/dev/zero"], ["check", "/dev/zero"], ["tile", TILE, "--fit", "/dev/zero"]):
        assert main(argv) == 2
        line = one_line(capsys)
        assert line.startswith("/dev/zero: ") and "larger than 16 MB" in line


def test_a_bay_beyond_the_largest_side_is_refused_by_the_api():
    # the radiation table's cost grows as (k D)^2: a 100 m bay never finishes
    from noisebudget.layers import Septum

    stack = nb.Stack([Septum(2.0)])
    for width, height in [(20.0, 1.0), (1.0, 1e5), (np.nan, 1.0), (0.0, 1.0)]:
        with pytest.raises(ValueError, match=r"must lie in \(0, 10\] m"):
            stack.with_panel(width, height)
    assert stack.with_panel(10.0, 10.0).panel.area == 100.0
    for width in ("1 m", None, True):
        with pytest.raises(TypeError, match="panel width must be a number in m"):
            stack.with_panel(width, 1.0)


def test_ratings_name_a_length_mismatch():
    with pytest.raises(ArgumentError, match="nominal_hz has 3 bands and tl_db 2 values"):
        nb.ratings(np.array([100.0, 125.0, 160.0]), np.array([20.0, 22.0]))


def test_no_infinite_level_or_nan_reaches_a_text_table():
    # a path whose energy underflows shows at the -300 dB floor (the TL cap's), and a value
    # the bands do not allow (SIL4 without its octaves) is "-" in the terminal's tables
    from noisebudget.budget_tables import level_db
    from noisebudget.textout import fmt_number, format_table

    np.testing.assert_array_equal(level_db(np.array([0.0, 1e-40, 1.0])), [-300.0, -300.0, 0.0])
    assert fmt_number(float("nan")) == "-" and fmt_number(float("-inf")) == "-"
    assert "nan" not in format_table(["a", "b"], [("x", float("nan"))])


def test_fit_data_file_with_byte_order_mark_is_read(tmp_path):
    from noisebudget.cli_tile import _read_measured
    path = tmp_path / "bom.csv"
    path.write_bytes(b"\xef\xbb\xbffrequency_hz,tl_db\n" + b"".join(
        f"{100 * (i + 1)},{i}\n".encode() for i in range(6)))
    f, tl = _read_measured(path)
    np.testing.assert_array_equal(f, [100, 200, 300, 400, 500, 600])


def test_ratings_return_what_the_bands_allow():
    # ASTM E413 (STC) needs 125-4000 Hz, ISO 717-1 (Rw) 100-3150 Hz, ASTM E1332 (OITC)
    # 80-4000 Hz: from 100 Hz up only OITC is missing; from 125 Hz Rw goes too
    tl = 40.0
    b = nb.third_octave_bands(100, 5000)
    r = nb.ratings(b.nominal, np.full(len(b), tl))
    assert r["stc"] == 40 and r["rw"] == 40
    assert r["oitc"] is None and set(r.unavailable) == {"oitc"}
    assert "missing 80 Hz" in r.unavailable["oitc"]
    b = nb.third_octave_bands(125, 5000)
    r = nb.ratings(b.nominal, np.full(len(b), tl))
    assert r["stc"] == 40 and r["rw"] is None and r["c"] is None and r["ctr"] is None
    assert "missing 100 Hz" in r.unavailable["rw"]
    b = nb.third_octave_bands(160, 5000)
    r = nb.ratings(b.nominal, np.full(len(b), tl))
    assert all(v is None for v in r.values()) and len(r.unavailable) == 5
    # with every band, the same numbers as the single ratings
    b = nb.third_octave_bands(50, 5000)
    vals = np.linspace(20, 55, len(b))
    r = nb.ratings(b.nominal, vals)
    assert r.unavailable == {}
    assert r["stc"] == stc(b.nominal, vals) and (r["rw"], r["c"], r["ctr"]) == rw(b.nominal,
                                                                               vals)


def test_tl_bands_third_above_80_hz_prints_partial_ratings(capsys):
    assert main(["tl", STACK, "--bands", "third", "--fmin", "100", "--fmax", "5000",
                 "--per-octave", "3"]) == 0
    captured = capsys.readouterr()
    assert "OITC -" in captured.out and "STC " in captured.out
    assert "note: OITC unavailable: OITC needs one-third-octave bands 80-4000 Hz" in captured.err


def test_a_fit_that_cannot_determine_a_parameter_says_so(tmp_path, capsys):
    # measured points far above the tile's resonances leave the central mass undetermined:
    # its interval is "not determined", with no overflow warning on the way
    stack = tmp_path / "tile.toml"
    stack.write_text('[[layer]]\ntype = "tile"\npitch = "22 mm"\nframe = "clamped"\n'
                     '[[layer.cell]]\nradius = "10 mm"\nmembrane_thickness = "0.25 mm"\n'
                     'membrane_density = "1000 kg/m^3"\ntension = "80 N/m"\nmass = "0.4 g"\n'
                     'mass_radius = "2 mm"\n')
    data = tmp_path / "m.csv"
    data.write_text("frequency_hz,tl_db\n" + "".join(f"{f},20\n" for f in range(16000, 20001,
                                                                              1000)))
    assert main(["tile", str(stack), "--fit", str(data), "--fit-mass"]) == 0
    out, err = capsys.readouterr()
    mass_row = next(line for line in out.splitlines() if line.startswith("mass "))
    assert "not determined" in mass_row and "inf" not in out
    assert "warning" not in err


_LAYERS = {  # a valid layer of each directly built class, keyword arguments
    "Septum": dict(surface_density=1.0),
    "AirGap": dict(gap=0.05),
    "Solid": dict(layer_thickness=3e-3, density=1200.0, youngs_modulus=3e9, poisson_ratio=0.3),
    "Sandwich": dict(face_thickness=2.5e-4, face_density=1900.0, face_youngs_modulus=2e10,
                     core_thickness=0.01, core_density=48.0, core_shear_modulus=3e7),
    "Plate": dict(surface_density=4.0, bending_stiffness=100.0, youngs_modulus=73e9),
}


@pytest.mark.parametrize("cls, field, bad", [
    (cls, field, bad) for cls, kw in _LAYERS.items() for field in kw
    for bad in (-1.0, float("nan"), float("inf"))
    if not (cls == "Solid" and field == "poisson_ratio" and bad == -1.0)] + [
    ("Plate", "loss_factor", float("nan")), ("Plate", "in_plane_tension", float("nan")),
    ("Plate", "poisson_ratio", 0.5), ("Sandwich", "loss_factor", -0.1),
    ("AirGap", "loss_factor", float("inf")), ("Solid", "loss_factor", float("nan"))])
def test_layers_built_in_a_script_refuse_what_a_file_would(cls, field, bad):
    # a negative, NaN or infinite parameter is refused by the layer itself, naming the key,
    # so no NaN or silent wrong number comes out of a stack built without a file
    from noisebudget import layers

    with pytest.raises(layers.LayerValueError):
        getattr(layers, cls)(**{**_LAYERS[cls], field: bad})
    getattr(layers, cls)(**_LAYERS[cls])  # the valid layer builds
