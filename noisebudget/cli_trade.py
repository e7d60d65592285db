"""The `sweep` and `optimize` commands."""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["register", "write_optimize_outputs", "write_sweep_outputs"]


def _common(p):
    p.add_argument("study")
    p.add_argument("-o", "--output", required=True, help="output folder")
    p.add_argument("--force", action="store_true", help="replace existing outputs")
    p.add_argument("--workers", type=int, default=None, metavar="N",
                   help="local processes (default: one per core; 1: no extra processes)")
    p.add_argument("--cluster", default=None, metavar="tcp://HOST:PORT|local",
                   help="evaluate on a Dask scheduler, or on a local Dask cluster")
    p.add_argument("--quiet", action="store_true", help="no progress display")


def register(sub):
    """Add the trade-study subcommands to the parser."""
    s = sub.add_parser("sweep", help="evaluate every variant of a study's [[vary]] entries")
    _common(s)
    s.add_argument("--resume", action="store_true",
                   help="continue an interrupted sweep from its checkpoint")
    s.set_defaults(func=cmd_sweep)
    o = sub.add_parser("optimize", help="lightest treatment meeting the targets over the "
                                        "[[vary]] bounds")
    _common(o)
    o.add_argument("--mass-budget", type=float, default=None, metavar="KG",
                   help="instead: the lowest dBA within this treatment mass per aircraft, kg")
    o.add_argument("--generations", type=int, default=60, metavar="N",
                   help="most generations of differential evolution (default 60)")
    o.add_argument("--population", type=int, default=15, metavar="N",
                   help="candidates per varied parameter in each generation (default 15)")
    o.set_defaults(func=cmd_optimize)


def _tables(result, stem, kind):
    return {f"{stem}-{kind}-{name}.csv": df for name, df in result.tables().items()}


def _sweep_names(stem, monte_carlo):
    from .report.trade import sweep_targets

    names = ["variants", "statistics", "front", "sensitivities"]
    if monte_carlo:
        names.append("probabilities")
    return [f"{stem}-sweep-{n}.csv" for n in names] + sweep_targets(stem)


def _optimize_names(stem):
    from .report.trade import optimize_targets

    return [f"{stem}-optimize-{n}.csv" for n in ("optimum", "slack", "evaluations")] + (
        optimize_targets(stem))


def _refuse_existing(outdir: Path, names, force: bool):
    from .errors import InputError

    existing = [outdir / n for n in names if (outdir / n).exists()]
    if existing and not force:
        raise InputError(str(existing[0]), "", "exists; use --force to replace the outputs")


def _write_csv(tables: dict, outdir: Path) -> list[Path]:
    from .writing import atomic_write_text

    out = []
    for name, df in tables.items():
        atomic_write_text(outdir / name, df.to_csv(index=False, float_format="%.6g"))
        out.append(outdir / name)
    return out


def write_sweep_outputs(result, study_path: Path, outdir: Path, force: bool) -> list[Path]:
    """Write the sweep's CSV tables, PDF and workbook, each atomically."""
    from .report.trade import write_sweep_reports

    outdir.mkdir(parents=True, exist_ok=True)
    stem = study_path.stem
    _refuse_existing(outdir, _sweep_names(stem, result.spec.mode == "monte-carlo"), force)
    written = write_sweep_reports(result, outdir, stem)
    return written + _write_csv(_tables(result, stem, "sweep"), outdir)


def write_optimize_outputs(result, study_path: Path, outdir: Path, force: bool) -> list[Path]:
    """Write the optimiser's CSV tables, PDF and workbook, each atomically."""
    from .report.trade import write_optimize_reports

    outdir.mkdir(parents=True, exist_ok=True)
    stem = study_path.stem
    _refuse_existing(outdir, _optimize_names(stem), force)
    written = write_optimize_reports(result, outdir, stem)
    return written + _write_csv(_tables(result, stem, "optimize"), outdir)


def _bar(quiet):
    from .trade.progress import progress_bar

    return lambda total, initial: progress_bar(total, initial, quiet)


def _check_workers(args):
    from .errors import InputError

    if args.workers is not None and args.workers < 1:
        raise InputError("", "--workers", f"need at least 1, got {args.workers}")


def cmd_sweep(args) -> int:
    """Run a sweep and write its outputs."""
    from .errors import InputError
    from .study import load_study
    from .trade.sweep import sweep_study

    _check_workers(args)
    path, outdir = Path(args.study), Path(args.output)
    loaded = load_study(path)  # mistakes first, before any output or computation
    mc = loaded.trade.mode == "monte-carlo"
    checkpoint = outdir / f"{path.stem}-sweep.checkpoint.npz"
    if args.resume and not checkpoint.exists():
        raise InputError(str(checkpoint), "", "no checkpoint to resume")
    if not args.resume:
        if checkpoint.exists() and not args.force:
            raise InputError(str(checkpoint), "", "an interrupted sweep left this "
                                                  "checkpoint: --resume continues it, "
                                                  "--force starts over")
        _refuse_existing(outdir, _sweep_names(path.stem, mc), args.force)
    outdir.mkdir(parents=True, exist_ok=True)
    try:
        result = sweep_study(path, workers=args.workers, cluster=args.cluster,
                             checkpoint=checkpoint, resume=args.resume,
                             progress=_bar(args.quiet))
    except KeyboardInterrupt:
        kept = f"; the finished variants are kept in {checkpoint}" if checkpoint.exists() \
            else ""
        print(f"noisebudget: sweep interrupted{kept}: continue with --resume",
              file=sys.stderr)
        return 130
    written = write_sweep_outputs(result, path, outdir, True)
    checkpoint.unlink(missing_ok=True)
    _print_sweep(result)
    print(f"\n{len(result.variants)} variants in {result.seconds:.1f} s; wrote "
          f"{len(written)} files to {outdir}", file=sys.stderr)
    print("Engineering estimates: certified testing and the applicable airworthiness, "
          "flammability and noise-exposure rules govern.", file=sys.stderr)
    return 0


def _print_sweep(result):
    from .textout import format_table

    st = result.statistics.set_index("metric")
    keys = [m for m in ("treatment_mass_kg", "max_interior_dba", "max_sil4_db",
                        "min_margin_dba", "min_margin_sil4_db") if m in st.index]
    cols = ["p5", "p50", "p95"] if result.spec.mode == "monte-carlo" else ["min", "max"]
    print(format_table(["metric", *cols], [(k, *(float(st.loc[k, c]) for c in cols))
                                           for k in keys]))
    if result.probabilities is not None:
        rows = [(r.target, r.condition, 100 * r.probability, 100 * r.ci_low, 100 * r.ci_high)
                for r in result.probabilities.itertuples()]
        print()
        print(format_table(["target", "condition", "P(meet) %", "95% low", "95% high"], rows))
    print(f"\nnon-dominated variants: {len(result.front)} of {len(result.variants)}")


def cmd_optimize(args) -> int:
    """Run the optimiser and write its outputs."""
    from .errors import InputError
    from .study import load_study
    from .textout import format_table
    from .trade.optimize import run_optimization

    _check_workers(args)
    for name in ("generations", "population"):
        if getattr(args, name) < 1:
            raise InputError("", f"--{name}", f"need at least 1, got {getattr(args, name)}")
    path, outdir = Path(args.study), Path(args.output)
    load_study(path)
    _refuse_existing(outdir, _optimize_names(path.stem), args.force)
    result = run_optimization(path, mass_budget_kg=args.mass_budget, workers=args.workers,
                              cluster=args.cluster, generations=args.generations,
                              population=args.population, progress=_bar(args.quiet))
    written = write_optimize_outputs(result, path, outdir, True)
    row = result.optimum.iloc[0]
    print(format_table(["value", "at the optimum"],
                       [(c, float(row[c])) for c in result.optimum.columns], digits=4))
    print()
    print(format_table(["constraint", "condition", "value", "limit", "slack"],
                       [tuple(r) for r in result.slack.itertuples(index=False)]))
    state = "meets every constraint" if result.feasible else "NO variant meets every constraint"
    print(f"\n{state}; {result.evaluations_used} variants evaluated in {result.generations} "
          f"generations ({result.seconds:.1f} s); wrote {len(written)} files to {outdir}",
          file=sys.stderr)
    print("Engineering estimates: certified testing and the applicable airworthiness, "
          "flammability and noise-exposure rules govern.", file=sys.stderr)
    return 0
