"""Report sets: checked before computing, written whole or not at all, locked against a
second run, cleaned up after SIGINT and SIGTERM, created with the umask, and free of
spreadsheet formulas and of NaN in JSON.

The interruption and concurrency tests drive the command line in a subprocess. A small
driver holds the run at a known point (computing, or half-way through writing) and says
so on standard output; the test waits for that marker, never for a fixed time.
"""

import json
import os
import re
import signal
import stat
import subprocess
import sys
import textwrap
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest

import noisebudget as nb
from noisebudget.cli import main
from noisebudget.cli_study import KINDS, output_names, write_outputs
from noisebudget.resources import data_path
from noisebudget.writing import csv_text, neutralise_formula, strict_json

DEMO = data_path("examples", "demo-study.toml")
SET = output_names("demo-study", KINDS)

DRIVER = textwrap.dedent(r'''
    import signal
    import sys
    # SIGINT as from a terminal, even where the test runner was started with it ignored
    signal.signal(signal.SIGINT, signal.default_int_handler)
    import noisebudget.cli as cli
    import noisebudget.report as report
    import noisebudget.study as study

    mode, argv = sys.argv[1], sys.argv[2:]
    real_run, real_reports = study.run_study, report.write_reports

    def no_pdf(result, study_path, outdir, stem, kinds=report.REPORT_KINDS):
        return real_reports(result, study_path, outdir, stem, [k for k in kinds if k != "pdf"])

    def hold(path):            # the run holds its lock until standard input closes
        print("MARK computing", flush=True)
        sys.stdin.read()
        return real_run(path)

    def stuck(path):           # interrupted while computing
        print("MARK computing", flush=True)
        sys.stdin.read()
        raise SystemExit("not interrupted")

    def half_written(result, study_path, outdir, stem, kinds=report.REPORT_KINDS):
        real_reports(result, study_path, outdir, stem, ["xlsx"])
        print("MARK writing", outdir, flush=True)
        sys.stdin.read()
        raise SystemExit("not interrupted")

    def busy_workers(path):    # interrupted while the budget's worker threads compute
        import threading
        from noisebudget import zone_paths

        def task():
            print("MARK computing", flush=True)
            threading.Event().wait()  # a computation that would not end by itself
        zone_paths._run({"a": task, "b": task})
        raise SystemExit("not interrupted")

    report.write_reports = no_pdf
    if mode == "pool":
        study.run_study = busy_workers
    elif mode == "hold":
        study.run_study = hold
    elif mode == "stuck":
        study.run_study = stuck
    elif mode == "half":
        report.write_reports = half_written
    sys.exit(cli.main(argv))
''')


def _env():
    env = dict(os.environ)
    env.setdefault("MPLBACKEND", "Agg")
    return env


def start(mode, outdir, *extra, umask=None):
    args = [sys.executable, "-c", DRIVER, mode, "demo", "-o", str(outdir), *extra]
    return subprocess.Popen(args, stdin=subprocess.PIPE, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True, env=_env(),
                            **({} if umask is None else {"umask": umask}))


def wait_marker(proc, word):
    """Read standard output until the marker line; fail if the process ends first."""
    for line in proc.stdout:
        if line.startswith(f"MARK {word}"):
            return line.split(maxsplit=2)[2].strip() if word == "writing" else line
    proc.wait(timeout=120)
    pytest.fail(f"no '{word}' marker; exit {proc.returncode}: {proc.stderr.read()}")


def finish(proc):
    out, err = proc.communicate(timeout=300)
    return proc.returncode, out, err


def earlier_set(folder):
    """A complete earlier set (stand-in contents) and its snapshot."""
    folder.mkdir(parents=True, exist_ok=True)
    for name in SET:
        (folder / name).write_text(f"earlier {name}\n")
    return snapshot(folder)


def snapshot(folder):
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


def assert_one_line(err, pattern):
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    assert "Traceback" not in err
    assert re.search(pattern, lines[0]), lines[0]


@pytest.mark.parametrize("sig, code, word", [(signal.SIGINT, 130, "SIGINT"),
                                             (signal.SIGTERM, 143, "SIGTERM")])
@pytest.mark.parametrize("phase", ["stuck", "half"])
def test_interrupted_run_leaves_earlier_set_intact(tmp_path, sig, code, word, phase):
    out = tmp_path / "out"
    before = earlier_set(out)
    proc = start(phase, out, "--force")
    stage = wait_marker(proc, "computing" if phase == "stuck" else "writing")
    if phase == "half":  # half a new set exists in the hidden staging folder
        assert Path(stage).parent == out and Path(stage).name.startswith(".demo-study.")
        assert (Path(stage) / "demo-study.xlsx").exists()
        assert (Path(stage) / "demo-study-summary.csv").exists()
    proc.send_signal(sig)
    rc, _, err = finish(proc)
    assert rc == code
    assert_one_line(err, rf"^noisebudget: .*\({word}\)")
    assert snapshot(out) == before  # no temporary folder or file, earlier set unchanged


def test_interrupt_before_anything_exists_leaves_no_folder(tmp_path):
    out = tmp_path / "new" / "out"
    proc = start("stuck", out)
    wait_marker(proc, "computing")
    assert out.is_dir()  # created and locked before computing
    proc.send_signal(signal.SIGTERM)
    rc, _, err = finish(proc)
    assert rc == 143 and "Traceback" not in err
    assert not out.exists()


@pytest.mark.parametrize("sig, code", [(signal.SIGINT, 130), (signal.SIGTERM, 143)])
def test_interrupt_does_not_wait_for_running_worker_threads(tmp_path, sig, code):
    out = tmp_path / "out"
    before = earlier_set(out)
    proc = start("pool", out, "--force")
    wait_marker(proc, "computing")
    proc.send_signal(sig)
    try:
        _, err = proc.communicate(timeout=60)  # the workers' tasks never end
    except subprocess.TimeoutExpired:
        proc.kill()
        proc.communicate()
        pytest.fail("the run waited for its worker threads after the signal")
    assert proc.returncode == code, err
    assert_one_line(err, r"^noisebudget: .*no partial output left")
    assert snapshot(out) == before


def test_second_run_into_a_locked_folder_is_refused(tmp_path):
    out = tmp_path / "out"
    first = start("hold", out)
    wait_marker(first, "computing")
    second = subprocess.run([sys.executable, "-m", "noisebudget", "demo", "-o", str(out),
                             "--force"], capture_output=True, text=True, env=_env(),
                            timeout=120)
    assert second.returncode == 2
    assert_one_line(second.stderr, "another noisebudget run is writing into this folder")
    rc, _, err = finish(first)  # closing its input lets the first run go on
    assert rc == 0, err
    names = sorted(p.name for p in out.iterdir())
    assert names == sorted(n for n in SET if not n.endswith(".pdf"))


@pytest.mark.parametrize("umask", [0o022, 0o077, 0o002])
def test_created_files_honour_the_umask(tmp_path, umask):
    out = tmp_path / "out"
    rc, _, err = finish(start("run", out, umask=umask))
    assert rc == 0, err
    assert stat.S_IMODE(out.stat().st_mode) == 0o777 & ~umask
    files = list(out.iterdir())
    assert len(files) == len(SET) - 1  # every table and the workbook (no PDF here)
    for p in files:
        assert stat.S_IMODE(p.stat().st_mode) == 0o666 & ~umask, p.name


def test_existing_output_refused_before_computing(tmp_path, monkeypatch, capsys):
    out = tmp_path / "out"
    before = earlier_set(out)

    def must_not_run(path):
        raise AssertionError("computed although the outputs exist")

    monkeypatch.setattr("noisebudget.study.run_study", must_not_run)
    assert main(["demo", "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert_one_line(err, r"demo-study-\w+\.csv: exists \(and \d+ more\); use --force")
    assert snapshot(out) == before


def test_output_folder_that_is_a_file_is_refused(tmp_path, capsys):
    target = tmp_path / "file"
    target.write_text("x")
    assert main(["demo", "-o", str(target)]) == 2
    assert_one_line(capsys.readouterr().err, "exists and is not a folder")


@pytest.fixture(scope="module")
def odd_names(tmp_path_factory):
    """The demo study with user text that a spreadsheet would read as formulas."""
    text = DEMO.read_text()
    text = text.replace('name = "cruise"', 'name = "=1+2"')
    text = text.replace('name = "climb"', 'name = "@SUM(A1:A9)"')
    text = text.replace('conditions = ["cruise"]', 'conditions = ["=1+2"]')
    text = text.replace('conditions = ["climb"]', 'conditions = ["@SUM(A1:A9)"]')
    folder = tmp_path_factory.mktemp("odd")
    path = folder / "odd.toml"
    path.write_text(text)
    return path, nb.run_study(path)


def test_kinds_select_the_files_and_force_replaces_the_whole_set(odd_names, tmp_path):
    path, result = odd_names
    out = tmp_path / "out"
    out.mkdir()
    for name in ("odd.pdf", "odd.xlsx", "other.pdf"):
        (out / name).write_text("earlier")
    with pytest.raises(nb.InputError, match="exists"):
        write_outputs(result, path, out, False, kinds=("csv",))
    written = write_outputs(result, path, out, True, kinds=("csv",))
    assert sorted(p.name for p in written) == sorted(output_names("odd", ("csv",)))
    # the earlier set's PDF and workbook go (a folder never mixes two runs); other files stay
    assert sorted(p.name for p in out.iterdir()) == sorted([*output_names("odd", ("csv",)),
                                                            "other.pdf"])
    with pytest.raises(ValueError, match="kinds"):
        write_outputs(result, path, out, True, kinds=("docx",))


def test_csv_and_workbook_keep_user_text_as_text(odd_names, tmp_path):
    path, result = odd_names
    out = tmp_path / "out"
    write_outputs(result, path, out, False, kinds=("csv", "xlsx"))
    summary = (out / "odd-summary.csv").read_text()
    # OWASP CSV-injection guidance: a leading apostrophe keeps the cell text
    assert "'=1+2" in summary and "'@SUM(A1:A9)" in summary
    assert not re.search(r"(^|,)[=+@]", summary, re.M)
    # numbers (negative ones too) stay numbers
    back = pd.read_csv(out / "odd-summary.csv")
    assert back["margin_dba"].dtype == float and (back["margin_dba"] < 0).any()
    # the workbook stores the names as strings: no formula element in any sheet
    with zipfile.ZipFile(out / "odd.xlsx") as z:
        sheets = [n for n in z.namelist() if n.startswith("xl/worksheets/sheet")]
        assert sheets
        for n in sheets:
            assert "<f>" not in z.read(n).decode() and "<f " not in z.read(n).decode()
    wb = openpyxl.load_workbook(out / "odd.xlsx")
    values = {c.value: c.data_type for row in wb["Summary"].iter_rows() for c in row}
    assert values.get("=1+2") == "s" and values.get("@SUM(A1:A9)") == "s"


def test_neutralise_formula_cases():
    cases = {"=1+2": "'=1+2", "+4": "'+4", "-x": "'-x", "@A1": "'@A1", "\tx": "'\tx",
             "\rx": "'\rx", "plain": "plain", "a=b": "a=b", "": ""}
    for given, expected in cases.items():
        assert neutralise_formula(given) == expected
    assert neutralise_formula(-3.5) == -3.5
    text = csv_text(pd.DataFrame({"name": ["=cmd", "ok"], "v": [-1.0, np.nan]}))
    assert text.splitlines() == ["name,v", "'=cmd,-1.000", "ok,"]


def test_json_never_holds_nan_or_infinity(capsys):
    text = strict_json({"a": [1.0, float("nan"), float("inf")], "b": np.float64("-inf")})
    assert json.loads(text) == {"a": [1.0, None, None], "b": None}
    stack = data_path("examples", "sidewall.toml")
    assert main(["tl", str(stack), "--format", "json", "--bands", "third", "--fmin", "100",
                 "--fmax", "5000", "--per-octave", "3"]) == 0
    captured = capsys.readouterr()
    out = json.loads(captured.out, parse_constant=lambda c: pytest.fail(f"JSON has {c}"))
    assert out["ratings"]["oitc"] is None and out["ratings"]["stc"] is not None
    assert "missing 80 Hz" in out["ratings_unavailable"]["oitc"]
    assert "OITC unavailable" in captured.err
