"""The `run`, `check` and `demo` commands."""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["KINDS", "output_names", "register", "write_outputs"]


def register(sub):
    """Add the study subcommands to the parser."""
    from .cliargs import add_output_selection, add_quiet

    r = sub.add_parser("run", help="run a study file and write its tables and reports",
                       description="Run a study file; print the summary and write the CSV "
                                   "tables, the PDF report and the workbook.")
    r.add_argument("study", help="study file (TOML)")
    r.add_argument("-o", "--output", required=True, metavar="FOLDER",
                   help="output folder (created if missing)")
    r.add_argument("--force", action="store_true", help="replace existing outputs")
    add_output_selection(r)
    add_quiet(r)
    r.set_defaults(func=cmd_run)
    c = sub.add_parser("check", help="validate a study file and list every problem",
                       description="Validate a study file and list every problem, one line "
                                   "each; exit status 2 when there is any.")
    c.add_argument("study", help="study file (TOML)")
    add_quiet(c)
    c.set_defaults(func=cmd_check)
    d = sub.add_parser("demo", help="run the built-in demo study (NB-70 turboprop)",
                       description="Run the built-in demo study of an invented regional "
                                   "turboprop programme and write its outputs.")
    d.add_argument("-o", "--output", required=True, metavar="FOLDER",
                   help="output folder (created if missing)")
    d.add_argument("--force", action="store_true", help="replace existing outputs")
    add_output_selection(d)
    add_quiet(d)
    d.set_defaults(func=cmd_demo)


KINDS = ("csv", "pdf", "xlsx")


def output_names(stem: str, kinds=KINDS, tables=None) -> list[str]:
    """File names of a study's output set: ``<stem>-<table>.csv`` per result table,
    ``<stem>.pdf`` and ``<stem>.xlsx``, for the chosen ``kinds``. ``tables`` defaults to
    the tables every study result has."""
    from .report import report_targets

    if tables is None:
        from dataclasses import fields

        from .budget import StudyResult

        tables = [f.name for f in fields(StudyResult) if f.name != "inputs"]
    names = [f"{stem}-{t}.csv" for t in tables] if "csv" in kinds else []
    return names + report_targets(stem, kinds)


def _kinds(kinds) -> tuple:
    kinds = tuple(dict.fromkeys(kinds))
    unknown = [k for k in kinds if k not in KINDS]
    if unknown or not kinds:
        raise ValueError(f"kinds = {kinds!r}: choose from {', '.join(KINDS)}")
    return kinds


def write_outputs(result, study_path: Path, outdir: Path, force: bool,
                  kinds=KINDS) -> list[Path]:
    """Write a study's output set into ``outdir`` as one unit.

    ``kinds`` selects CSV tables, the PDF and the workbook. The set is refused if any of
    its files exists (unless ``force``); it is written into a temporary folder under a
    lock on ``outdir`` and moved into place whole; with ``force`` the files of an earlier
    set that this one does not contain are removed, so the folder never mixes two runs.
    """
    from .report import write_reports
    from .textout import no_negative_zero
    from .writing import atomic_write_text, check_free, csv_text, folder_lock, staged_set

    kinds = _kinds(kinds)
    outdir, study_path = Path(outdir), Path(study_path)
    stem = study_path.stem
    tables = result.tables()
    every = output_names(stem, KINDS) + output_names(stem, ("csv",), tables)
    with folder_lock(outdir):
        check_free(outdir, every, force)
        with staged_set(outdir, stem, replaces=every) as stage:
            if "csv" in kinds:
                for name, table in tables.items():
                    atomic_write_text(stage / f"{stem}-{name}.csv",
                                      csv_text(no_negative_zero(table, 3)))
            write_reports(result, study_path, stage, stem, kinds)
            names = sorted(p.name for p in stage.iterdir())
    return [outdir / n for n in names]


def _print_summary(result):
    from .textout import format_table

    s = result.summary
    rows = [(r["package"], r["condition"], float(r["mass_kg"]), float(r["added_mass_kg"]),
             float(r["interior_dba"]), float(r["sil4_db"]),
             float(r.get("margin_dba", float("nan")))) for _, r in s.iterrows()]
    print(format_table(["package", "condition", "mass kg", "added kg", "dBA", "SIL4 dB",
                        "margin dBA"], rows))


def cmd_run(args, study=None) -> int:
    """Run a study and write its outputs.

    The output folder is locked and checked before any computation: an existing set is
    refused (unless ``--force``) without computing anything.
    """
    import argparse
    import time

    from .cliargs import output_kinds
    from .textout import plural
    from .writing import check_free, folder_lock

    try:
        kinds = output_kinds(args)
    except argparse.ArgumentTypeError as exc:
        print(f"noisebudget: {exc}", file=sys.stderr)
        return 2
    path = Path(study or args.study)
    outdir = Path(args.output)
    with folder_lock(outdir):
        check_free(outdir, output_names(path.stem), args.force)
        from .study import run_study

        t0 = time.perf_counter()
        result = run_study(path)
        t1 = time.perf_counter()
        written = write_outputs(result, path, outdir, args.force, kinds)
    _print_summary(result)
    if not args.quiet:
        print(f"\ncomputed in {t1 - t0:.2f} s; wrote {plural(len(written), 'file')} to "
              f"{args.output}", file=sys.stderr)
        print("Engineering estimates: certified testing and the applicable airworthiness, "
              "flammability and noise-exposure rules govern.", file=sys.stderr)
    return 0


def cmd_check(args) -> int:
    """Validate only."""
    from .study import load_study
    from .textout import plural

    loaded = load_study(args.study)
    inp = loaded.inputs
    trade = loaded.trade
    varies = (f"; {plural(len(trade.parameters), '[[vary]] entry', '[[vary]] entries')} on "
              f"{trade.package!r}, {plural(trade.count, 'variant')} ({trade.mode})"
              if trade.parameters else "")
    print(f"{args.study}: OK: {plural(len(inp.packages), 'package')}, "
          f"{plural(len(inp.zones), 'zone')}, {plural(len(inp.conditions), 'condition')}"
          f"{varies}")
    return 0


def cmd_demo(args) -> int:
    """Run the shipped demo study."""
    from .resources import data_path

    return cmd_run(args, data_path("examples", "demo-study.toml"))
