"""The `sweep` and `optimize` commands.

Their outputs are report sets like `run`'s (:func:`noisebudget.cli_study.write_outputs`):
the folder is locked and checked before anything is computed, an existing set is replaced
only with ``--force``, and the set is written into a temporary folder and moved into
place whole. An interrupted sweep (SIGINT or SIGTERM) keeps its finished variants in a
checkpoint beside the outputs, which ``--resume`` continues.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

__all__ = ["checkpoint_path", "register", "trade_output_names", "write_trade_outputs"]

_TABLES = {"sweep": ("variants", "statistics", "front", "sensitivities", "probabilities"),
           "optimize": ("optimum", "slack", "evaluations")}


def _count(text: str) -> int:
    """An argparse ``type``: a whole number >= 1."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"{text!r} is not a whole number") from None
    if value < 1:
        raise argparse.ArgumentTypeError(f"{value}: must be at least 1")
    return value


_count.__name__ = "count"


def _common(p, what: str):
    from .cliargs import add_output_selection, add_quiet

    p.add_argument("study", help="study file (TOML) with [[vary]] entries")
    p.add_argument("-o", "--output", required=True, metavar="FOLDER",
                   help="output folder (created if missing)")
    p.add_argument("--force", action="store_true",
                   help=f"replace an existing {what} output set")
    p.add_argument("--workers", type=_count, default=None, metavar="N",
                   help="local processes evaluating variants (default: one per core; 1: "
                        "this process only)")
    p.add_argument("--cluster", default=None, metavar="ADDRESS",
                   help="evaluate on a Dask scheduler at tcp://HOST:PORT, or on a local "
                        "Dask cluster of --workers processes with 'local' (default: "
                        "local processes; needs noisebudget[cluster])")
    add_output_selection(p)
    add_quiet(p)


def register(sub):
    """Add the trade-study subcommands to the parser."""
    from .cliargs import quantity

    s = sub.add_parser("sweep", help="evaluate every variant of a study's [[vary]] entries",
                       description="Evaluate every variant of a study's [[vary]] entries "
                                   "(a grid, or Monte Carlo samples) and write their "
                                   "statistics, the non-dominated variants and the "
                                   "sensitivities as CSV tables, a PDF and a workbook.")
    _common(s, "sweep")
    s.add_argument("--resume", action="store_true",
                   help="continue an interrupted sweep from the checkpoint it left in the "
                        "output folder (default: start afresh)")
    s.set_defaults(func=cmd_sweep)
    o = sub.add_parser("optimize", help="lightest treatment meeting the targets within the "
                                        "[[vary]] ranges",
                       description="Search the ranges of a study's [[vary]] entries for the "
                                   "lightest treatment that meets every target in every "
                                   "flight condition (or, with --mass-budget, the quietest "
                                   "within a treatment mass) and write the result.")
    _common(o, "optimize")
    o.add_argument("--mass-budget", type=quantity("kg", "mass"), default=None,
                   metavar="MASS",
                   help="instead: the lowest interior level of the loudest condition "
                        "within this treatment mass per aircraft, kg (default: none)")
    o.add_argument("--generations", type=_count, default=60, metavar="N",
                   help="most generations of the search (default 60)")
    o.add_argument("--population", type=_count, default=15, metavar="N",
                   help="candidates per varied parameter in each generation (default 15)")
    o.set_defaults(func=cmd_optimize)


def trade_output_names(stem: str, kind: str, kinds=("csv", "pdf", "xlsx")) -> list[str]:
    """Every file name of a ``sweep`` or ``optimize`` output set (``kind``), for the
    chosen output ``kinds``."""
    from .report.trade import optimize_targets, sweep_targets

    names = [f"{stem}-{kind}-{t}.csv" for t in _TABLES[kind]] if "csv" in kinds else []
    targets = sweep_targets if kind == "sweep" else optimize_targets
    return names + targets(stem, kinds)


def checkpoint_path(outdir: Path, stem: str) -> Path:
    """Where an interrupted sweep keeps its finished variants."""
    return Path(outdir) / f"{stem}-sweep.checkpoint.npz"


def write_trade_outputs(result, kind: str, study_path: Path, outdir: Path, force: bool,
                        kinds=("csv", "pdf", "xlsx")) -> list[Path]:
    """Write a sweep's or an optimum's output set into ``outdir`` as one unit (locked,
    checked, staged and moved into place whole, as :func:`~noisebudget.cli_study.
    write_outputs`)."""
    from .report.trade import write_optimize_reports, write_sweep_reports
    from .textout import no_negative_zero
    from .writing import atomic_write_text, check_free, csv_text, folder_lock, staged_set

    outdir, stem = Path(outdir), Path(study_path).stem
    every = trade_output_names(stem, kind)
    write = write_sweep_reports if kind == "sweep" else write_optimize_reports
    with folder_lock(outdir):
        check_free(outdir, every, force)
        with staged_set(outdir, stem, replaces=every) as stage:
            if "csv" in kinds:
                for name, table in result.tables().items():
                    atomic_write_text(stage / f"{stem}-{kind}-{name}.csv",
                                      csv_text(no_negative_zero(table, 12), "%.6g"))
            write(result, stage, stem, kinds)
            names = sorted(p.name for p in stage.iterdir())
    return [outdir / n for n in names]


def _kinds(args):
    from .cliargs import output_kinds

    try:
        return output_kinds(args)
    except argparse.ArgumentTypeError as exc:
        from .cli import UsageError

        raise UsageError(str(exc)) from None


def _loaded(path):
    """The study, its mistakes first (before any output or computation)."""
    from .errors import InputError
    from .study import load_study

    loaded = load_study(path)
    if not loaded.trade.parameters:
        raise InputError(str(path), "vary", "no [[vary]] entries: nothing to vary (add "
                                            "[[vary]] tables; see docs/file-keys.md)")
    return loaded


def cmd_sweep(args) -> int:
    """Run a sweep and write its outputs."""
    import signal

    from .cli import Terminated
    from .errors import InputError
    from .trade.checkpoint import finished
    from .trade.sweep import sweep_study
    from .writing import check_free, folder_lock

    kinds = _kinds(args)
    path, outdir = Path(args.study), Path(args.output)
    _loaded(path)
    checkpoint = checkpoint_path(outdir, path.stem)
    with folder_lock(outdir):
        if args.resume and not checkpoint.exists():
            raise InputError(str(checkpoint), "", "no checkpoint to resume: run the sweep "
                                                  "without --resume")
        if not args.resume and checkpoint.exists() and not args.force:
            raise InputError(str(checkpoint), "", "an interrupted sweep left this checkpoint: "
                                                  "--resume continues it, --force starts "
                                                  "over")
        check_free(outdir, trade_output_names(path.stem, "sweep"), args.force)
        try:
            result = sweep_study(path, workers=args.workers, cluster=args.cluster,
                                 checkpoint=checkpoint, resume=args.resume)
        except (KeyboardInterrupt, Terminated) as exc:
            sig = signal.SIGINT if isinstance(exc, KeyboardInterrupt) else signal.SIGTERM
            n = finished(checkpoint)
            kept = (f"; {n} finished variant{'s' * (n != 1)} kept in {checkpoint}: continue "
                    "with --resume") if n else "; no variant had finished"
            print(f"noisebudget: sweep interrupted ({sig.name}){kept}", file=sys.stderr)
            return 128 + sig
        written = write_trade_outputs(result, "sweep", path, outdir, args.force, kinds)
        checkpoint.unlink(missing_ok=True)
    _print_sweep(result)
    _done(args, f"{len(result.variants)} variants in {result.seconds:.1f} s", written)
    return 0


def _done(args, what: str, written) -> None:
    from .textout import plural

    if not args.quiet:
        print(f"\n{what}; wrote {plural(len(written), 'file')} to {args.output}",
              file=sys.stderr)
        print("Engineering estimates: certified testing and the applicable airworthiness, "
              "flammability and noise-exposure rules govern.", file=sys.stderr)


def _print_sweep(result):
    from .report.model import column
    from .textout import format_table, plural

    st = result.statistics.set_index("metric")
    mc = result.spec.mode == "monte-carlo"
    cols = ["p5", "p50", "p95"] if mc else ["min", "max"]
    keys = [m for m in ("treatment_mass_kg", "max_interior_dba", "max_sil4_db",
                        "min_margin_dba", "min_margin_sil4_db") if m in st.index]
    ref = result.reference.iloc[0]
    print(format_table(["metric", "as written", *(("P5", "median", "P95") if mc else
                                                  ("lowest", "highest"))],
                       [(column(k).header, float(ref[k]), *(float(st.loc[k, c])
                                                            for c in cols)) for k in keys]))
    if result.probabilities is not None:
        from .report.trade import probabilities_table

        t = probabilities_table(result)
        print()
        print(format_table(["target", "condition", "meeting it (%)", "95 % from", "to"],
                           [(r[0], r[1], *r[4:]) for r in t.rows]))
    print(f"\nnon-dominated: {plural(len(result.front), 'variant')} of "
          f"{len(result.variants)}")


def cmd_optimize(args) -> int:
    """Run the optimiser and write its outputs."""
    from .trade.optimize import run_optimization
    from .writing import check_free, folder_lock

    kinds = _kinds(args)
    path, outdir = Path(args.study), Path(args.output)
    _loaded(path)
    with folder_lock(outdir):
        check_free(outdir, trade_output_names(path.stem, "optimize"), args.force)
        result = run_optimization(path, mass_budget_kg=args.mass_budget,
                                  workers=args.workers, cluster=args.cluster,
                                  generations=args.generations, population=args.population)
        written = write_trade_outputs(result, "optimize", path, outdir, args.force, kinds)
    _print_optimum(result)
    state = ("meets every constraint" if result.feasible else
             "NO variant within the ranges meets every constraint")
    _done(args, f"{state}; {result.evaluations_used} variants evaluated in "
                f"{result.generations} generations ({result.seconds:.1f} s)", written)
    return 0


def _print_optimum(result):
    from .report.model import fmt
    from .report.trade import optimum_table, slack_table
    from .textout import format_table

    opt = optimum_table(result)
    shown = [(fmt(r[2], style), fmt(r[3], style))
             for r, style in zip(opt.rows, opt.styles, strict=True)]
    width = max(len(t) for pair in shown for t in pair)  # numbers right-aligned
    print(format_table(["quantity", "unit", "as written", "optimum"],
                       [(r[0], r[1], a.rjust(width), b.rjust(width))
                        for r, (a, b) in zip(opt.rows, shown, strict=True)]))
    print()
    sl = slack_table(result)
    print(format_table([c.header for c in sl.columns],
                       [[v if v is not None else float("nan") for v in r] for r in sl.rows]))
