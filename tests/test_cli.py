"""The command line: --version, --quiet, help with defaults and units, one rule for
quantities, one CSV table, output selection, warnings once, plurals, no negative zero,
and the progress helper."""

import argparse
import io
import json
import subprocess
import sys

import numpy as np
import pytest

from noisebudget.cli import build_parser, main
from noisebudget.resources import data_path

EXAMPLE = data_path("examples", "sidewall.toml")


def write(tmp_path, text, name="s.toml"):
    p = tmp_path / name
    p.write_text(text)
    return p


def test_version(capsys):
    import noisebudget

    with pytest.raises(SystemExit) as exc:
        main(["--version"])
    assert exc.value.code == 0
    assert capsys.readouterr().out.strip() == f"noisebudget {noisebudget.__version__}"


def _options():
    parser = build_parser()
    sub = next(a for a in parser._actions if isinstance(a, argparse._SubParsersAction))
    for name, p in sub.choices.items():
        for a in p._actions:
            if a.option_strings and not isinstance(a, (argparse._HelpAction,)):
                yield name, a


def test_help_gives_defaults_and_units():
    for command, a in _options():
        assert a.help, (command, a.option_strings)
        if isinstance(a, argparse._StoreTrueAction) or a.required:
            continue
        assert "default" in a.help, (command, a.option_strings)
    units = {("tl", "--fmin"): "Hz", ("tl", "--theta-max"): "deg",
             ("tile", "--tune-peak"): "Hz", ("tile", "--profile"): "Hz"}
    helps = {(c, a.option_strings[-1]): a.help for c, a in _options()}
    for key, unit in units.items():
        assert unit in helps[key], key


def test_help_is_fast_to_import():
    """--help and --version load neither numpy nor the physics (lazy imports)."""
    code = ("import sys; from noisebudget.cli import build_parser; build_parser(); "
            "print(sorted(m for m in sys.modules if m in ('numpy', 'pandas', 'scipy', "
            "'matplotlib', 'pint')))")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert r.stdout.strip() == "[]"


@pytest.mark.parametrize("given, expected", [
    ("50", 50.0), ("50 Hz", 50.0), ("50Hz", 50.0), ("0.05 kHz", 50.0), (" 1e2 ", 100.0)])
def test_quantity_rule(given, expected):
    from noisebudget.cliargs import quantity

    assert quantity("Hz", "frequency")(given) == pytest.approx(expected)


def test_quantity_rule_refuses(capsys):
    from noisebudget.cliargs import quantity

    for bad in ("50 m", "fifty", "-5", "0 Hz", "nan"):
        with pytest.raises(argparse.ArgumentTypeError):
            quantity("Hz", "frequency")(bad)
    assert main(["tl", str(EXAMPLE), "--fmin", "50 m"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "not a frequency" in err[0]


def test_option_units_give_the_same_result(capsys):
    runs = [["--fmin", "100", "--fmax", "200", "--theta-max", "60"],
            ["--fmin", "100 Hz", "--fmax", "0.2 kHz", "--theta-max", f"{np.pi / 3} rad"]]
    outs = []
    for extra in runs:
        assert main(["tl", str(EXAMPLE), "--format", "json", "--per-octave", "3", *extra,
                     "-q"]) == 0
        outs.append(json.loads(capsys.readouterr().out))
    assert outs[0]["theta_max_deg"] == pytest.approx(60.0)
    assert outs[1]["theta_max_deg"] == pytest.approx(60.0)
    assert outs[0]["tl_db"] == pytest.approx(outs[1]["tl_db"], abs=1e-3)
    assert main(["tl", str(EXAMPLE), "--frequencies", "100 Hz, 1 kHz", "--format", "json",
                 "-q"]) == 0
    assert json.loads(capsys.readouterr().out)["frequency_hz"] == [100.0, 1000.0]


def test_tune_peak_takes_a_bare_number(tmp_path, capsys):
    src = tmp_path / "tile.toml"
    src.write_text(data_path("examples", "tile.toml").read_text())
    assert main(["tile", str(src), "--tune-peak", "112", "-o", str(tmp_path / "a.toml"),
                 "-q"]) == 0
    first = capsys.readouterr()
    assert "first TL peak at 112 Hz" in first.out and first.err == ""
    assert main(["tile", str(src), "--tune-peak", "112Hz", "-o", str(tmp_path / "b.toml"),
                 "-q"]) == 0
    assert (tmp_path / "a.toml").read_text() == (tmp_path / "b.toml").read_text()


def test_csv_is_one_table(capsys):
    assert main(["tl", str(EXAMPLE), "--format", "csv", "--bands", "third", "--fmin", "100",
                 "--fmax", "1000"]) == 0
    got = capsys.readouterr()
    lines = got.out.splitlines()
    assert lines[0] == "band_nominal_hz,tl_db"
    assert all(line.count(",") == 1 and line.strip() for line in lines)
    assert [float(line.split(",")[0]) for line in lines[1:]] == [
        100, 125, 160, 200, 250, 315, 400, 500, 630, 800, 1000]
    assert "STC" not in got.out
    assert main(["tl", str(EXAMPLE), "--format", "csv", "--fmin", "100", "--fmax", "200",
                 "--per-octave", "1"]) == 0
    lines = capsys.readouterr().out.strip().splitlines()
    assert lines[0] == "frequency_hz,tl_db" and len(lines) == 3


def test_warning_printed_once(tmp_path, capsys):
    stack = write(tmp_path, '[[layer]]\ntype = "porous"\nmodel = "delany-bazley"\n'
                            'thickness = "50 mm"\nflow_resistivity = "20000 Pa*s/m^2"\n'
                            '[[layer]]\ntype = "septum"\nsurface_density = "1.5 kg/m^2"\n')
    assert main(["tl", str(stack), "--bands", "third", "--incidence", "diffuse"]) == 0
    err = capsys.readouterr().err
    assert err.count("warning:") == 1 and "delany-bazley" in err


def test_no_negative_zero_and_plurals(tmp_path, capsys):
    # a lone air gap transmits everything: TL is 0 dB, which rounding can turn into -0.0
    gap = write(tmp_path, '[[layer]]\ntype = "air"\nthickness = "20 mm"\n')
    for fmt in ("json", "csv", "table"):
        assert main(["tl", str(gap), "--format", fmt, "--bands", "third", "-q"]) == 0
        out = capsys.readouterr().out
        assert "-0.0" not in out and "-0," not in out, fmt
    assert "1 layer," in out
    assert main(["tl", str(EXAMPLE), "--frequencies", "500", "-q"]) == 0
    assert "5 layers," in capsys.readouterr().out


def test_check_counts_in_words(tmp_path, capsys):
    demo = data_path("examples", "demo-study.toml").read_text()
    assert main(["check", str(write(tmp_path, demo, "demo.toml"))]) == 0
    assert "5 packages, 3 zones, 2 conditions" in capsys.readouterr().out
    one = demo[:demo.index('[[condition]]\nname = "climb"')] + demo[demo.index("[[zone]]"):]
    one = one.replace('conditions = ["climb"]', 'conditions = ["cruise"]')  # one condition
    assert main(["check", str(write(tmp_path, one, "one.toml"))]) == 0
    assert "2 conditions" not in (out := capsys.readouterr().out) and "1 condition" in out


def test_output_selection_and_quiet(demo_study, tmp_path, capsys):
    out = tmp_path / "only"
    assert main(["run", str(demo_study), "-o", str(out), "--only", "xlsx", "--quiet"]) == 0
    got = capsys.readouterr()
    assert got.err == ""  # quiet: no progress, no notes
    assert sorted(p.name for p in out.iterdir()) == ["demo-study.xlsx"]
    out = tmp_path / "nopdf"
    assert main(["run", str(demo_study), "-o", str(out), "--no-pdf", "--no-xlsx"]) == 0
    names = sorted(p.name for p in out.iterdir())
    assert names and all(n.endswith(".csv") for n in names)
    for name in names:
        assert "-0.000" not in (out / name).read_text()
    err = capsys.readouterr().err
    assert f"wrote {len(names)} files" in err
    assert main(["run", str(demo_study), "-o", str(out), "--only", "pdf,doc"]) == 2
    assert "unknown output doc" in capsys.readouterr().err


def test_progress_silent_unless_shown(monkeypatch):
    from noisebudget import progress

    buf = io.StringIO()
    monkeypatch.setattr(sys, "stderr", buf)
    progress.configure(None)  # standard error is not a terminal here
    assert list(progress.track(range(3), what="work")) == [0, 1, 2]
    with progress.steps(2, "report") as s:
        s.start("one")
        s.start("two")
    with progress.counter(10, 4, "sweep", "variant") as c:  # a resumed count
        c.update(6)
    assert buf.getvalue() == ""
    monkeypatch.setattr(progress, "DELAY_S", 0.0)
    progress.configure(True)
    try:
        assert list(progress.track(range(3), what="transmission loss")) == [0, 1, 2]
        with progress.steps(2, "report") as s:
            s.start("figures")
            s.start("layout")
        c = progress.counter(10, 4, "sweep", "variant")
        c.update(6)
        c.close()
    finally:
        progress.configure(None)
    shown = buf.getvalue()
    assert "transmission loss" in shown and "report:" in shown
    assert "sweep:" in shown and "4/10" in shown and "variant" in shown  # resumed at 4
    progress.configure(False)
    try:
        buf.truncate(0)
        buf.seek(0)
        list(progress.track(range(3), what="x"))
        assert buf.getvalue() == ""
    finally:
        progress.configure(None)
