"""The `run`, `check` and `demo` commands."""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["register", "write_outputs"]


def register(sub):
    """Add the study subcommands to the parser."""
    r = sub.add_parser("run", help="run a study file and write its tables and reports")
    r.add_argument("study")
    r.add_argument("-o", "--output", required=True, help="output folder")
    r.add_argument("--force", action="store_true", help="replace existing reports")
    r.set_defaults(func=cmd_run)
    c = sub.add_parser("check", help="validate a study file and list every problem")
    c.add_argument("study")
    c.set_defaults(func=cmd_check)
    d = sub.add_parser("demo", help="run the built-in demo study (NB-70 turboprop)")
    d.add_argument("-o", "--output", required=True, help="output folder")
    d.add_argument("--force", action="store_true", help="replace existing reports")
    d.set_defaults(func=cmd_demo)


def write_outputs(result, study_path: Path, outdir: Path, force: bool) -> list[Path]:
    """Write the CSV tables, the PDF and the workbook, each atomically."""
    from .errors import InputError
    from .writing import atomic_write_text

    outdir.mkdir(parents=True, exist_ok=True)
    stem = study_path.stem
    targets = {f"{stem}-{name}.csv": table for name, table in result.tables().items()}
    from .report import report_targets, write_reports

    existing = [outdir / n for n in [*targets, *report_targets(stem)] if (outdir / n).exists()]
    if existing and not force:
        raise InputError(str(existing[0]), "", "exists; use --force to replace the outputs")
    written = write_reports(result, study_path, outdir, stem)
    for name, table in targets.items():
        atomic_write_text(outdir / name, table.to_csv(index=False, float_format="%.3f"))
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
    import time

    from .study import run_study

    path = Path(study or args.study)
    t0 = time.perf_counter()
    result = run_study(path)
    t1 = time.perf_counter()
    written = write_outputs(result, path, Path(args.output), args.force)
    _print_summary(result)
    print(f"\ncomputed in {t1 - t0:.2f} s; wrote {len(written)} files to {args.output}",
          file=sys.stderr)
    print("Engineering estimates: certified testing and the applicable airworthiness, "
          "flammability and noise-exposure rules govern.", file=sys.stderr)
    return 0


def cmd_check(args) -> int:
    """Validate only."""
    from .study import load_study

    loaded = load_study(args.study)
    inp = loaded.inputs
    trade = loaded.trade
    varies = (f"; {len(trade.parameters)} [[vary]] entries on {trade.package!r}, "
              f"{trade.count} variants ({trade.mode})") if trade and trade.parameters else ""
    print(f"{args.study}: OK: {len(inp.packages)} packages, {len(inp.zones)} zones, "
          f"{len(inp.conditions)} conditions{varies}")
    return 0


def cmd_demo(args) -> int:
    """Run the shipped demo study."""
    from .resources import data_path

    return cmd_run(args, data_path("examples", "demo-study.toml"))
