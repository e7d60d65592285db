"""The `run`, `check` and `demo` commands."""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["register", "write_outputs"]


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


def write_outputs(result, study_path: Path, outdir: Path, force: bool,
                  kinds=("csv", "pdf", "xlsx")) -> list[Path]:
    """Write the CSV tables, the PDF and the workbook (those named in ``kinds``), each
    atomically."""
    from .errors import InputError
    from .textout import no_negative_zero
    from .writing import atomic_write_text

    outdir.mkdir(parents=True, exist_ok=True)
    stem = study_path.stem
    targets = ({f"{stem}-{name}.csv": table for name, table in result.tables().items()}
               if "csv" in kinds else {})
    from .report import report_targets, write_reports

    reports = [n for n in report_targets(stem) if n.rsplit(".", 1)[-1] in kinds]
    existing = [outdir / n for n in [*targets, *reports] if (outdir / n).exists()]
    if existing and not force:
        raise InputError(str(existing[0]), "", "exists; use --force to replace the outputs")
    written = write_reports(result, study_path, outdir, stem, kinds) if reports else []
    for name, table in targets.items():
        atomic_write_text(outdir / name, no_negative_zero(table, 3).to_csv(
            index=False, float_format="%.3f"))
        written.append(outdir / name)
    return written


def _print_summary(result):
    from .textout import format_table

    s = result.summary
    rows = [(r["package"], r["condition"], float(r["mass_kg"]), float(r["added_mass_kg"]),
             float(r["interior_dba"]), float(r["sil4_db"]),
             float(r.get("margin_dba", float("nan")))) for _, r in s.iterrows()]
    print(format_table(["package", "condition", "mass kg", "added kg", "dBA", "SIL4 dB",
                        "margin dBA"], rows))


def cmd_run(args, study=None) -> int:
    """Run a study and write its outputs."""
    import argparse
    import time

    from .cliargs import output_kinds
    from .study import run_study
    from .textout import plural

    try:
        kinds = output_kinds(args)
    except argparse.ArgumentTypeError as exc:
        print(f"noisebudget: {exc}", file=sys.stderr)
        return 2
    path = Path(study or args.study)
    t0 = time.perf_counter()
    result = run_study(path)
    t1 = time.perf_counter()
    written = write_outputs(result, path, Path(args.output), args.force, kinds)
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
    print(f"{args.study}: OK: {plural(len(inp.packages), 'package')}, "
          f"{plural(len(inp.zones), 'zone')}, {plural(len(inp.conditions), 'condition')}")
    return 0


def cmd_demo(args) -> int:
    """Run the shipped demo study."""
    from .resources import data_path

    return cmd_run(args, data_path("examples", "demo-study.toml"))
