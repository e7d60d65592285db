"""The command line: parses arguments and calls the library. User mistakes print one
line each on standard error and exit with status 2."""

from __future__ import annotations

import argparse
import math
import os
import sys
import warnings

__all__ = ["main"]


class Terminated(BaseException):
    """SIGTERM arrived; raised in the main thread so that clean-up code runs."""


class UsageError(Exception):
    """A bad command-line option value; printed as one line, exit status 2."""


class OneLineParser(argparse.ArgumentParser):
    """An argument parser whose mistakes are one line (``noisebudget tl: argument
    --fmin: ...``), exit status 2, without the multi-line usage block."""

    def error(self, message):
        raise UsageError(f"{self.prog}: {message} (see {self.prog} --help)")


def check_number(value, option: str, low: float, high: float, what: str = "Hz") -> float:
    """A finite option value within [low, high], or a UsageError naming the option."""
    if value is None or not math.isfinite(value):
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
    import numpy as np

    from .bands import log_grid
    from .checks import MAX_FREQUENCIES, MAX_PER_OCTAVE, ArgumentError, frequencies

    if args.frequencies:
        if len(args.frequencies) > MAX_FREQUENCIES:
            raise UsageError(f"--frequencies: {len(args.frequencies)} values; at most "
                             f"{MAX_FREQUENCIES}")
        try:
            return frequencies(np.array(sorted(args.frequencies)), "--frequencies")
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


def _round(v, digits: int) -> float:
    """Rounded, and never -0.0."""
    return round(float(v), digits) + 0.0


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
    from .textout import fmt_number, format_table, plural
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
    out = {"frequency_hz": [float(v) for v in f], "tl_db": [_round(v, 3) for v in tl],
           "areal_mass_kg_m2": _round(stack.areal_mass, 4), "incidence": args.incidence,
           "theta_max_deg": float(theta_max)}
    notes = []
    if bands is not None:
        btl = stack.band_transmission_loss(bands, args.incidence, theta_max or None)
        out["bands"] = {"nominal_hz": [float(v) for v in bands.nominal],
                        "tl_db": [_round(v, 2) for v in btl]}
        if bands.b == 3:
            r = ratings(bands.nominal, btl)
            out["ratings"] = dict(r)
            if r.unavailable:
                out["ratings_unavailable"] = r.unavailable
                notes += [f"{k.upper()} unavailable: {why}" for k, why in r.unavailable.items()
                          if k not in ("c", "ctr")]
    if args.format == "json":
        print(strict_json(out))
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
    from . import __version__, cli_study, cli_tile, cli_trade
    from .cliargs import add_quiet, quantity, quantity_list

    p = OneLineParser(prog="noisebudget", description=(
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
    cli_trade.register(sub)
    return p


def main(argv=None) -> int:
    """Entry point; returns the exit status.

    User mistakes print one line each and return 2. SIGINT and SIGTERM print one line
    and return 130 and 143 (128 + signal number) after clean-up: no traceback, no
    temporary file left, earlier outputs intact. Each warning is printed once. A task
    still running on a worker thread when the signal came is not waited for: once the
    clean-up is done the process ends with that status.
    """
    status = _main(argv)
    if status in (130, 143) and _busy_threads():
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(status)
    return status


def _busy_threads() -> bool:
    """Whether one of the budget's worker threads is still running a computation."""
    import threading

    paths = sys.modules.get("noisebudget.zone_paths")  # not imported: no worker threads
    return paths is not None and any(t.name.startswith(paths.WORKER_PREFIX) and t.is_alive()
                                     for t in threading.enumerate())


def _main(argv) -> int:
    import signal
    import threading

    from .errors import InputNote, ModelRangeWarning
    from .progress import configure

    restore = _on_sigterm_raise()
    shown: set = set()
    lock = threading.Lock()

    def warning_line(message, category, filename, lineno, file=None, line=None):
        text = str(message)
        with lock:  # once per message, whichever thread or layer warns
            if text in shown:
                return
            shown.add(text)
        word = "note" if issubclass(category, InputNote) else "warning"
        print(f"{word}: {text}", file=sys.stderr)

    try:
        try:
            args = build_parser().parse_args(argv)
        except UsageError as exc:
            print(exc, file=sys.stderr)
            return 2
        configure(False if getattr(args, "quiet", False) else None)
        with warnings.catch_warnings():
            warnings.simplefilter("always", ModelRangeWarning)
            warnings.simplefilter("always", InputNote)
            warnings.showwarning = warning_line
            return _run(args)
    except KeyboardInterrupt:
        print("noisebudget: interrupted (SIGINT); no partial output left", file=sys.stderr)
        return 128 + signal.SIGINT
    except Terminated:
        print("noisebudget: terminated (SIGTERM); no partial output left", file=sys.stderr)
        return 128 + signal.SIGTERM
    finally:
        configure(None)
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
