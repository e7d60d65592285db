"""The command line: parses arguments and calls the library. User mistakes print one
line each on standard error and exit with status 2."""

from __future__ import annotations

import argparse
import json
import sys
import warnings

__all__ = ["main"]


def _warning_line(message, category, filename, lineno, file=None, line=None):
    print(f"warning: {message}", file=sys.stderr)


def _grid(args):
    import numpy as np

    from .bands import log_grid

    if args.frequencies:
        try:
            f = np.array([float(v) for v in args.frequencies.split(",") if v.strip()])
        except ValueError:
            raise SystemExit(_usage(f"--frequencies: not a list of numbers: "
                                    f"{args.frequencies!r}")) from None
        if f.size == 0 or np.any(f <= 0):
            raise SystemExit(_usage("--frequencies: need positive frequencies in Hz"))
        return f
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
    from .textout import format_table

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
    out = {"frequency_hz": [float(v) for v in f], "tl_db": [round(float(v), 3) for v in tl],
           "areal_mass_kg_m2": round(stack.areal_mass, 4), "incidence": args.incidence,
           "theta_max_deg": float(theta_max)}
    notes = []
    if args.bands:
        b = 3 if args.bands == "third" else 1
        lo, hi = (args.fmin, args.fmax) if not args.frequencies else (f.min(), f.max())
        bands = bands_between(lo, hi, b)
        btl = stack.band_transmission_loss(bands, args.incidence, theta_max or None)
        out["bands"] = {"nominal_hz": [float(v) for v in bands.nominal],
                        "tl_db": [round(float(v), 2) for v in btl]}
        if b == 3:
            try:
                out["ratings"] = ratings(bands.nominal, btl)
            except RatingError as exc:
                notes.append(f"ratings not computed: {exc}")
    if args.format == "json":
        print(json.dumps(out))
    elif args.format == "csv":
        print("frequency_hz,tl_db")
        for fv, tv in zip(out["frequency_hz"], out["tl_db"], strict=True):
            print(f"{fv:.6g},{tv:.3f}")
        if "bands" in out:
            print("\nband_nominal_hz,band_tl_db")
            for fv, tv in zip(out["bands"]["nominal_hz"], out["bands"]["tl_db"], strict=True):
                print(f"{fv:g},{tv:.2f}")
    else:
        angle = "" if args.incidence == "normal" else f", limit {theta_max:g} deg"
        print(f"{args.stack}: {len(stack.layers)} layers, {stack.areal_mass:.3f} kg/m^2, "
              f"{stack.thickness * 1000:.1f} mm; {args.incidence} incidence{angle}")
        print(format_table(["f (Hz)", "TL (dB)"], [(float(a), float(t)) for a, t in
                                                   zip(f, tl, strict=True)]))
        if "bands" in out:
            print(f"\n{args.bands}-octave bands (energy average over each band)")
            print(format_table(["band (Hz)", "TL (dB)"],
                               list(zip(out["bands"]["nominal_hz"], out["bands"]["tl_db"],
                                        strict=True))))
        if "ratings" in out:
            r = out["ratings"]
            print(f"\nSTC {r['stc']}   Rw (C; Ctr) = {r['rw']} ({r['c']}; {r['ctr']}) dB   "
                  f"OITC {r['oitc']}")
        print("\nEstimate for laterally infinite layers: no frames, leaks or flanking, which "
              "limit measured TL, above all at high frequency. Certified tests govern.")
    for n in notes:
        print(f"note: {n}", file=sys.stderr)
    return 0


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
    p = argparse.ArgumentParser(prog="noisebudget", description=(
        "Transmission loss, interior noise and mass budgets of cabin sidewall packages. "
        "Results are engineering estimates; certified testing governs."))
    sub = p.add_subparsers(dest="command", required=True)

    t = sub.add_parser("tl", help="transmission loss of a stack file")
    t.add_argument("stack", help="stack file (TOML)")
    t.add_argument("--incidence", choices=("normal", "field", "diffuse"), default="field")
    t.add_argument("--theta-max", type=float, default=None, metavar="DEG",
                   help="limit angle (default 78 for field, 90 for diffuse)")
    t.add_argument("--fmin", type=float, default=50.0, help="lowest frequency, Hz")
    t.add_argument("--fmax", type=float, default=10000.0, help="highest frequency, Hz")
    t.add_argument("--per-octave", type=int, default=12, help="grid points per octave")
    t.add_argument("--frequencies", default=None, metavar="F1,F2,...",
                   help="explicit frequencies in Hz")
    t.add_argument("--bands", choices=("third", "octave"), default=None,
                   help="add band values (and ratings for third octaves)")
    t.add_argument("--format", choices=("table", "csv", "json"), default="table")
    t.set_defaults(func=cmd_tl)

    c = sub.add_parser("catalog", help="list catalog entries or show one")
    c.add_argument("key", nargs="?", default=None)
    c.set_defaults(func=cmd_catalog)
    from . import cli_study, cli_tile, cli_trade

    cli_tile.register(sub)
    cli_study.register(sub)
    cli_trade.register(sub)
    return p


def main(argv=None) -> int:
    """Entry point; returns the exit status."""
    from .errors import ModelRangeWarning

    args = build_parser().parse_args(argv)
    with warnings.catch_warnings():
        warnings.simplefilter("once", ModelRangeWarning)
        warnings.showwarning = _warning_line
        return _run(args)


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
