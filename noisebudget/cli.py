"""The command line: parses arguments and calls the library. User mistakes print one
line each on standard error and exit with status 2."""

from __future__ import annotations

import argparse
import json
import sys
import warnings

__all__ = ["main"]


def _grid(args):
    import numpy as np

    from .bands import log_grid

    if args.frequencies:
        return np.array(sorted(args.frequencies))
    if not 0 < args.fmin < args.fmax:
        raise SystemExit(_usage("--fmin and --fmax: need 0 < fmin < fmax"))
    if args.per_octave < 1:
        raise SystemExit(_usage("--per-octave: need at least 1"))
    return log_grid(args.fmin, args.fmax, args.per_octave)


def _usage(message: str) -> int:
    print(f"noisebudget: {message}", file=sys.stderr)
    return 2


def cmd_tl(args) -> int:
    """Transmission loss of a stack file."""
    from .bands import bands_between
    from .incidence import default_theta_max_deg
    from .ratings import RatingError, ratings
    from .stackfile import load_stack
    from .textout import fmt_number, format_table, plural

    stack = load_stack(args.stack)
    f = _grid(args)
    theta_max = args.theta_max
    if theta_max is not None and not 0 < theta_max <= 90:
        return _usage("--theta-max: need 0 < DEG <= 90")
    if theta_max is None:
        theta_max = default_theta_max_deg(args.incidence)
    if args.incidence == "normal":
        theta_max = 0.0
    tl = stack.transmission_loss(f, args.incidence, theta_max or None)
    out = {"frequency_hz": [float(v) for v in f], "tl_db": [_round(v, 3) for v in tl],
           "areal_mass_kg_m2": _round(stack.areal_mass, 4), "incidence": args.incidence,
           "theta_max_deg": float(theta_max)}
    notes = []
    if args.bands:
        b = 3 if args.bands == "third" else 1
        lo, hi = (args.fmin, args.fmax) if not args.frequencies else (f.min(), f.max())
        bands = bands_between(lo, hi, b)
        btl = stack.band_transmission_loss(bands, args.incidence, theta_max or None)
        out["bands"] = {"nominal_hz": [float(v) for v in bands.nominal],
                        "tl_db": [_round(v, 2) for v in btl]}
        if b == 3:
            try:
                out["ratings"] = ratings(bands.nominal, btl)
            except RatingError as exc:
                notes.append(f"ratings not computed: {exc}")
    if args.format == "json":
        print(json.dumps(out))
    elif args.format == "csv":  # one table: the bands when asked for, else the grid
        if "bands" in out:
            print("band_nominal_hz,tl_db")
            for fv, tv in zip(out["bands"]["nominal_hz"], out["bands"]["tl_db"], strict=True):
                print(f"{fv:g},{fmt_number(tv, 2)}")
            if "ratings" in out:
                notes.append(_ratings_line(out["ratings"]))
        else:
            print("frequency_hz,tl_db")
            for fv, tv in zip(out["frequency_hz"], out["tl_db"], strict=True):
                print(f"{fv:.6g},{fmt_number(tv, 3)}")
    else:
        angle = "" if args.incidence == "normal" else f", limit {theta_max:g} deg"
        print(f"{args.stack}: {plural(len(stack.layers), 'layer')}, "
              f"{stack.areal_mass:.3f} kg/m^2, {stack.thickness * 1000:.1f} mm; "
              f"{args.incidence} incidence{angle}")
        print(format_table(["f (Hz)", "TL (dB)"], [(float(a), float(t)) for a, t in
                                                   zip(f, tl, strict=True)]))
        if "bands" in out:
            print(f"\n{args.bands}-octave bands (energy average over each band)")
            print(format_table(["band (Hz)", "TL (dB)"],
                               list(zip(out["bands"]["nominal_hz"], out["bands"]["tl_db"],
                                        strict=True))))
        if "ratings" in out:
            print("\n" + _ratings_line(out["ratings"]))
        print("\nEstimate for laterally infinite layers: no frames, leaks or flanking, which "
              "limit measured TL, above all at high frequency. Certified tests govern.")
    if not args.quiet:
        for n in notes:
            print(f"note: {n}", file=sys.stderr)
    return 0


def _round(v, digits: int) -> float:
    """Rounded, and never -0.0."""
    return round(float(v), digits) + 0.0


def _ratings_line(r: dict) -> str:
    return (f"STC {r['stc']}   Rw (C; Ctr) = {r['rw']} ({r['c']}; {r['ctr']}) dB   "
            f"OITC {r['oitc']}")


def cmd_catalog(args) -> int:
    """List catalog entries, or show one."""
    from .catalog import load_catalog
    from .errors import InputError
    from .textout import format_table

    cat = load_catalog()
    if args.key:
        entry = cat.get(args.key, "", "catalog")
        print(f"{args.key}  ({cat.source_file(args.key).name})")
        for k, v in entry.items():
            print(f"  {k:<20} {v}")
        return 0
    rows = []
    for key in cat.keys():
        e = cat.entries[key]
        rows.append((key, e.get("type", "-"), e.get("description", "")[:70]))
    if not rows:
        raise InputError("", "catalog", "no catalog entries found")
    print(format_table(["key", "type", "description"], rows))
    return 0


def build_parser() -> argparse.ArgumentParser:
    """The argument parser with every subcommand."""
    from . import __version__, cli_study, cli_tile
    from .cliargs import add_quiet, quantity, quantity_list

    p = argparse.ArgumentParser(prog="noisebudget", description=(
        "Transmission loss, interior noise and mass budgets of cabin sidewall packages. "
        "Quantities on the command line are a number in the unit each option names, or a "
        'number with its own unit ("0.05 kHz"). Results are engineering estimates; '
        "certified testing and the applicable airworthiness rules govern."))
    p.add_argument("--version", action="version", version=f"noisebudget {__version__}")
    sub = p.add_subparsers(dest="command", required=True, metavar="COMMAND")

    t = sub.add_parser("tl", help="transmission loss of a stack file",
                       description="Transmission loss of a stack file, per frequency and "
                                   "optionally per band with single-number ratings.")
    t.add_argument("stack", help="stack file (TOML), layers from the exterior to the cabin")
    t.add_argument("--incidence", choices=("normal", "field", "diffuse"), default="field",
                   help="sound field on the exterior side (default field)")
    t.add_argument("--theta-max", type=quantity("deg", "angle"), default=None,
                   metavar="ANGLE", help="limit angle of the angle integration, deg "
                                         "(default 78 deg for field, 90 deg for diffuse)")
    t.add_argument("--fmin", type=quantity("Hz", "frequency"), default=50.0, metavar="FREQ",
                   help="lowest frequency of the grid, Hz (default 50 Hz)")
    t.add_argument("--fmax", type=quantity("Hz", "frequency"), default=10000.0,
                   metavar="FREQ", help="highest frequency of the grid, Hz (default 10 kHz)")
    t.add_argument("--per-octave", type=int, default=12, metavar="N",
                   help="grid points per octave (default 12)")
    t.add_argument("--frequencies", type=quantity_list("Hz", "frequency"), default=None,
                   metavar="F1,F2,...", help="explicit frequencies instead of the grid, Hz "
                                             '(e.g. 100,1000 or "100 Hz, 1 kHz"; default: '
                                             "the grid)")
    t.add_argument("--bands", choices=("third", "octave"), default=None,
                   help="add band values (and STC, Rw, OITC for third octaves); default none")
    t.add_argument("--format", choices=("table", "csv", "json"), default="table",
                   help="output on standard output (default table); csv writes one "
                        "table: the bands when --bands is given, else the frequency grid")
    add_quiet(t)
    t.set_defaults(func=cmd_tl)

    c = sub.add_parser("catalog", help="list catalog entries or show one",
                       description="List the shipped catalog entries, or show one.")
    c.add_argument("key", nargs="?", default=None,
                   help="entry to show, e.g. trim.honeycomb-glass-10 (default: list all)")
    add_quiet(c)
    c.set_defaults(func=cmd_catalog)
    cli_tile.register(sub)
    cli_study.register(sub)
    return p


def main(argv=None) -> int:
    """Entry point; returns the exit status."""
    from .errors import ModelRangeWarning
    from .progress import configure

    args = build_parser().parse_args(argv)
    configure(False if getattr(args, "quiet", False) else None)
    import threading

    shown: set = set()
    lock = threading.Lock()

    def warning_line(message, category, filename, lineno, file=None, line=None):
        text = str(message)
        with lock:  # once per message, whichever thread or layer warns
            if text in shown:
                return
            shown.add(text)
        print(f"warning: {text}", file=sys.stderr)

    with warnings.catch_warnings():
        warnings.simplefilter("always", ModelRangeWarning)
        warnings.showwarning = warning_line
        try:
            return _run(args)
        finally:
            configure(None)


def _run(args) -> int:
    from .errors import InputError, InputErrors

    try:
        return args.func(args)
    except InputErrors as exc:
        for line in exc.lines():
            print(line, file=sys.stderr)
        return 2
    except InputError as exc:
        print(exc.line(), file=sys.stderr)
        return 2
    except BrokenPipeError:
        return 0
