"""The command line: parses arguments and calls the library. User mistakes print one
line each on standard error and exit with status 2."""

from __future__ import annotations

import argparse
import sys
import warnings

import numpy as np

__all__ = ["main"]


def _warning_line(message, category, filename, lineno, file=None, line=None):
    from .errors import InputNote

    word = "note" if issubclass(category, InputNote) else "warning"
    print(f"{word}: {message}", file=sys.stderr)


class Terminated(BaseException):
    """SIGTERM arrived; raised in the main thread so that clean-up code runs."""


class UsageError(Exception):
    """A bad command-line option value; printed as one line, exit status 2."""


def check_number(value, option: str, low: float, high: float, what: str = "Hz") -> float:
    """A finite option value within [low, high], or a UsageError naming the option."""
    if value is None or not np.isfinite(value):
        raise UsageError(f"{option}: {value} is not a finite number")
    if value <= 0 and low > 0:
        raise UsageError(f"{option}: {value:g} {what}: must be > 0")
    if not low <= value <= high:
        raise UsageError(f"{option}: {value:g} {what}: must lie in {low:g} .. {high:g} "
                         f"{what}")
    return float(value)


def check_band(args, low_name="--fmin", high_name="--fmax"):
    """Checked ``(fmin, fmax)`` of a command: finite, in range, ``fmin < fmax``."""
    from .checks import MAX_FREQUENCY_HZ, MIN_FREQUENCY_HZ

    lo = check_number(args.fmin, low_name, MIN_FREQUENCY_HZ, MAX_FREQUENCY_HZ)
    hi = check_number(args.fmax, high_name, MIN_FREQUENCY_HZ, MAX_FREQUENCY_HZ)
    if not lo < hi:
        raise UsageError(f"{low_name} {lo:g} Hz must be below {high_name} {hi:g} Hz")
    return lo, hi


def _grid(args):
    from .bands import log_grid
    from .checks import MAX_FREQUENCIES, MAX_PER_OCTAVE, ArgumentError, frequencies

    if args.frequencies:
        parts = [v.strip() for v in args.frequencies.split(",") if v.strip()]
        if len(parts) > MAX_FREQUENCIES:
            raise UsageError(f"--frequencies: {len(parts)} values; at most {MAX_FREQUENCIES}")
        try:
            f = np.array([float(v) for v in parts])
        except ValueError:
            raise UsageError(f"--frequencies: not a list of numbers: "
                             f"{args.frequencies[:60]!r}") from None
        if f.size == 0:
            raise UsageError("--frequencies: give at least one frequency in Hz")
        try:
            return frequencies(f, "--frequencies")
        except ArgumentError as exc:
            raise UsageError(str(exc)) from None
    lo, hi = check_band(args)
    if not 1 <= args.per_octave <= MAX_PER_OCTAVE:
        raise UsageError(f"--per-octave: {args.per_octave}: must lie in 1 .. {MAX_PER_OCTAVE}")
    count = args.per_octave * np.log2(hi / lo) + 2
    if count > MAX_FREQUENCIES:
        raise UsageError(f"--per-octave {args.per_octave} from {lo:g} to {hi:g} Hz makes "
                         f"{count:.0f} frequencies; at most {MAX_FREQUENCIES}")
    return log_grid(lo, hi, args.per_octave)


def _ratings_line(r) -> str:
    def v(key):
        return "-" if r.get(key) is None else str(r[key])
    return (f"STC {v('stc')}   Rw (C; Ctr) = {v('rw')} ({v('c')}; {v('ctr')}) dB   "
            f"OITC {v('oitc')}")


def cmd_tl(args) -> int:
    """Transmission loss of a stack file."""
    from .bands import bands_between
    from .incidence import default_theta_max_deg
    from .ratings import ratings
    from .stackfile import load_stack
    from .textout import format_table
    from .writing import strict_json

    f = _grid(args)
    theta_max = args.theta_max
    if theta_max is not None and not 0 < theta_max <= 90:
        raise UsageError(f"--theta-max: {theta_max:g} deg: must lie in (0, 90]")
    bands = None
    if args.bands:
        b = 3 if args.bands == "third" else 1
        lo, hi = (args.fmin, args.fmax) if not args.frequencies else (f.min(), f.max())
        bands = bands_between(lo, hi, b)
        if len(bands) == 0:
            raise UsageError(f"--bands {args.bands}: no band centre between {lo:g} and "
                             f"{hi:g} Hz")
    stack = load_stack(args.stack)
    if theta_max is None:
        theta_max = default_theta_max_deg(args.incidence)
    if args.incidence == "normal":
        theta_max = 0.0
    tl = stack.transmission_loss(f, args.incidence, theta_max or None)
    out = {"frequency_hz": [float(v) for v in f], "tl_db": [round(float(v), 3) for v in tl],
           "areal_mass_kg_m2": round(stack.areal_mass, 4), "incidence": args.incidence,
           "theta_max_deg": float(theta_max)}
    notes = []
    if bands is not None:
        btl = stack.band_transmission_loss(bands, args.incidence, theta_max or None)
        out["bands"] = {"nominal_hz": [float(v) for v in bands.nominal],
                        "tl_db": [round(float(v), 2) for v in btl]}
        if bands.b == 3:
            r = ratings(bands.nominal, btl)
            out["ratings"] = dict(r)
            if r.unavailable:
                out["ratings_unavailable"] = r.unavailable
                notes += [f"{k.upper()} unavailable: {why}" for k, why in r.unavailable.items()
                          if k not in ("c", "ctr")]
    if args.format == "json":
        print(strict_json(out))
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
            print("\n" + _ratings_line(out["ratings"]))
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
    from . import cli_study, cli_tile

    cli_tile.register(sub)
    cli_study.register(sub)
    return p


def main(argv=None) -> int:
    """Entry point; returns the exit status.

    User mistakes print one line each and return 2. SIGINT and SIGTERM print one line
    and return 130 and 143 (128 + signal number) after clean-up: no traceback, no
    temporary file left, earlier outputs intact.
    """
    import signal

    from .errors import InputNote, ModelRangeWarning

    restore = _on_sigterm_raise()
    try:
        args = build_parser().parse_args(argv)
        with warnings.catch_warnings():
            warnings.simplefilter("once", ModelRangeWarning)
            warnings.simplefilter("default", InputNote)
            warnings.showwarning = _warning_line
            return _run(args)
    except KeyboardInterrupt:
        print("noisebudget: interrupted (SIGINT); no partial output left", file=sys.stderr)
        return 128 + signal.SIGINT
    except Terminated:
        print("noisebudget: terminated (SIGTERM); no partial output left", file=sys.stderr)
        return 128 + signal.SIGTERM
    finally:
        restore()


def _on_sigterm_raise():
    """Make SIGTERM raise :class:`Terminated` in the main thread; returns the undo."""
    import signal
    import threading

    if threading.current_thread() is not threading.main_thread():
        return lambda: None
    old = signal.getsignal(signal.SIGTERM)
    if old is not signal.SIG_DFL:  # an embedding program chose its own handling
        return lambda: None

    def raise_terminated(signum, frame):
        raise Terminated

    signal.signal(signal.SIGTERM, raise_terminated)
    return lambda: signal.signal(signal.SIGTERM, old)


def _run(args) -> int:
    from .checks import ArgumentError
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
    except (UsageError, ArgumentError) as exc:
        print(f"noisebudget: {exc}", file=sys.stderr)
        return 2
    except BrokenPipeError:
        return 0
    except OSError as exc:
        where = f"{exc.filename}: " if exc.filename else ""
        print(f"noisebudget: {where}{exc.strerror or exc}", file=sys.stderr)
        return 2
