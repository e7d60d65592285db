"""The `tile` command: resonances, peak, mode shape, tuning and calibration of a tile."""

from __future__ import annotations

import sys
from pathlib import Path

__all__ = ["register", "tile_toml"]


def register(sub):
    """Add the `tile` subcommand to the parser."""
    from .cliargs import add_quiet, quantity

    freq = quantity("Hz", "frequency")
    t = sub.add_parser("tile", help="analyse, tune or calibrate a resonator tile",
                       description="TL dips and peaks of the tile in a stack file at normal "
                                   "incidence; tune its first peak to a tone, or fit it to "
                                   "an impedance-tube measurement.")
    t.add_argument("stack", help="stack file holding one tile layer")
    t.add_argument("--fmin", type=freq, default=10.0, metavar="FREQ",
                   help="lowest frequency searched, Hz (default 10 Hz)")
    t.add_argument("--fmax", type=freq, default=5000.0, metavar="FREQ",
                   help="highest frequency searched, Hz (default 5 kHz)")
    t.add_argument("--profile", type=freq, default=None, metavar="FREQ",
                   help="print a cell's radial displacement profile at this frequency, Hz "
                        "(default: none)")
    t.add_argument("--cell", type=int, default=1, metavar="N",
                   help="cell kind to profile, tune or fit, counted from 1 (default 1)")
    t.add_argument("--tune-peak", type=freq, default=None, metavar="FREQ",
                   help='target frequency of the first TL peak, Hz (e.g. 112 or "112 Hz"); '
                        "writes a tuned stack file (default: no tuning)")
    t.add_argument("--vary", choices=("mass", "tension", "radius"), default=None,
                   help="cell parameter that --tune-peak changes (default mass)")
    t.add_argument("--fit", default=None, metavar="MEASURED.csv",
                   help="fit tension and loss factor to a tube TL file with the header "
                        "frequency_hz,tl_db; writes a fitted stack file (default: no fit)")
    t.add_argument("--fit-mass", action="store_true",
                   help="with --fit: fit the central mass too")
    t.add_argument("-o", "--output", default=None, metavar="FILE",
                   help="file for the tuned or fitted tile (default <stack>-tuned.toml or "
                        "<stack>-fitted.toml beside the input)")
    t.add_argument("--force", action="store_true", help="replace an existing output file")
    add_quiet(t)
    t.set_defaults(func=cmd_tile)


def _the_tile(stack, path):
    from .errors import InputError
    from .layers.resonators import Tile

    idx = [i for i, layer in enumerate(stack.layers) if isinstance(layer, Tile)]
    if len(idx) != 1:
        raise InputError(str(path), "layer", f"expected exactly one tile layer, found "
                                              f"{len(idx)}")
    return idx[0], stack.layers[idx[0]]


def tile_toml(tile, title: str) -> str:
    """A stack file holding the tile, values written with units."""
    lines = [f"# {title}", "", "[[layer]]", 'type = "tile"', f'frame = "{tile.frame}"',
             f'pitch = "{tile.pitch * 1e3:.6g} mm"']
    if tile.frame_areal_mass:
        lines.append(f'frame_areal_mass = "{tile.frame_areal_mass:.6g} kg/m^2"')
    if tile.tile_thickness:
        lines.append(f'thickness = "{tile.tile_thickness * 1e3:.6g} mm"')
    for c in tile.cells:
        lines += ["", "[[layer.cell]]", f"share = {c.share:.6g}",
                  f'radius = "{c.radius * 1e3:.6g} mm"',
                  f'membrane_thickness = "{c.membrane_thickness * 1e3:.6g} mm"',
                  f'membrane_density = "{c.membrane_density:.6g} kg/m^3"',
                  f'tension = "{c.tension:.6g} N/m"', f'mass = "{c.mass * 1e3:.6g} g"',
                  f'mass_radius = "{c.mass_radius * 1e3:.6g} mm"',
                  f"loss_factor = {c.loss_factor:.6g}"]
    return "\n".join(lines) + "\n"


def _check_output(path: Path, source: Path, force: bool):
    """Refuse an output file that cannot be written, before any computation."""
    from .errors import InputError

    if path.resolve() == source.resolve():
        raise InputError(str(path), "--output", "would overwrite the input file; choose "
                                                "another name")
    if path.is_dir():
        raise InputError(str(path), "--output", "is a folder; give a file name")
    if not path.parent.is_dir():
        raise InputError(str(path), "--output", f"no folder {str(path.parent)!r} to write "
                                                f"it in")
    if path.exists() and not force:
        raise InputError(str(path), "--output", "exists; use --force to replace it")


def _write_new(path: Path, text: str, source: Path, force: bool):
    from .writing import atomic_write_text

    _check_output(path, source, force)
    atomic_write_text(path, text)


MAX_MEASURED_POINTS = 100_000
MAX_TUNED_PEAK_HZ = 20_000.0  # the bands' upper end


def _read_measured(path):
    """Measured tube TL: a UTF-8 text file with the header ``frequency_hz,tl_db`` and one
    row per frequency, frequencies increasing, ``#`` comments allowed. Each problem
    raises one InputError (file, line, reason)."""
    import numpy as np

    from .checks import MAX_FREQUENCY_HZ, MIN_FREQUENCY_HZ
    from .errors import InputError
    from .schema import read_bytes

    where = str(path)
    p = Path(path)
    raw = read_bytes(p, "data file")
    if b"\0" in raw[:8192]:
        raise InputError(where, "", "is a binary file; expected UTF-8 text "
                                    "'frequency_hz,tl_db' rows")
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[:exc.start].count(b"\n") + 1
        raise InputError(where, f"line {line}", f"not UTF-8 text (byte 0x{raw[exc.start]:02x}); "
                                                f"save the file as UTF-8") from None
    numbered = [(n, line) for n, line in enumerate(text.splitlines(), start=1)
                if line.strip() and not line.lstrip().startswith("#")]  # '#' comments
    if not numbered:
        raise InputError(where, "", "is empty; expected the header 'frequency_hz,tl_db' and "
                                    "measured rows")
    if [h.strip() for h in numbered[0][1].split(",")] != ["frequency_hz", "tl_db"]:
        raise InputError(where, f"line {numbered[0][0]}", "expected the header "
                                                         "'frequency_hz,tl_db'")
    if len(numbered) - 1 > MAX_MEASURED_POINTS:
        raise InputError(where, "", f"{len(numbered) - 1} rows; at most "
                                    f"{MAX_MEASURED_POINTS}")
    rows, previous = [], None
    for n, line in numbered[1:]:
        try:
            f, tl = (float(v) for v in line.split(","))
        except ValueError:
            raise InputError(where, f"line {n}", f"expected two numbers, got "
                                                 f"{line[:60]!r}") from None
        if not (np.isfinite(f) and np.isfinite(tl)):
            raise InputError(where, f"line {n}", "frequency and TL must be finite numbers")
        if not MIN_FREQUENCY_HZ <= f <= MAX_FREQUENCY_HZ:
            raise InputError(where, f"line {n}", f"frequency {f:g} Hz: must lie in "
                                                 f"{MIN_FREQUENCY_HZ:g} .. "
                                                 f"{MAX_FREQUENCY_HZ:g} Hz")
        if not -50.0 <= tl <= 200.0:
            raise InputError(where, f"line {n}", f"TL {tl:g} dB: must lie in -50 .. 200 dB")
        if previous is not None and f <= previous:
            word = "repeats" if f == previous else "is below"
            raise InputError(where, f"line {n}", f"frequency {f:g} Hz {word} the previous "
                                                 f"{previous:g} Hz; frequencies must increase")
        previous = f
        rows.append((f, tl))
    if len(rows) < 5:
        raise InputError(where, "", f"need at least 5 measured points, got {len(rows)}")
    data = np.array(rows)
    return data[:, 0], data[:, 1]


def cmd_tile(args) -> int:
    """Analyse, tune or calibrate the tile in a stack file."""
    import numpy as np

    from .checks import MAX_FREQUENCY_HZ, MIN_FREQUENCY_HZ
    from .cli import UsageError, check_band, check_number
    from .errors import InputError
    from .stackfile import load_stack
    from .textout import format_table, plural
    from .tiles import TuningError, fit_tile, mass_law_tl, tile_extrema, tune_peak

    path = Path(args.stack)
    fmin, fmax = check_band(args)
    if args.profile is not None:
        check_number(args.profile, "--profile", MIN_FREQUENCY_HZ, MAX_FREQUENCY_HZ)
    if args.tune_peak is not None and args.fit:
        raise UsageError("--tune-peak and --fit: give one of them (each writes its own tile)")
    if args.fit_mass and not args.fit:
        raise UsageError("--fit-mass applies to --fit only")
    if args.vary is not None and args.tune_peak is None:
        raise UsageError("--vary applies to --tune-peak only")
    vary = args.vary or "mass"
    if args.tune_peak is not None:
        check_number(args.tune_peak, "--tune-peak", MIN_FREQUENCY_HZ, MAX_TUNED_PEAK_HZ)
    out = None
    if args.tune_peak is not None or args.fit:
        out = Path(args.output) if args.output else path.with_name(
            f"{path.stem}-tuned.toml" if args.tune_peak is not None else
            f"{path.stem}-fitted.toml")
        _check_output(out, path, args.force)  # before computing anything
    stack = load_stack(path)
    _, tile = _the_tile(stack, path)
    air = stack.source_air
    cell = args.cell - 1
    if not 0 <= cell < len(tile.cells):
        raise InputError(str(path), "--cell", f"no cell kind {args.cell}; the tile has "
                                              f"{len(tile.cells)}")
    out_note = None
    if args.tune_peak is not None:
        target = args.tune_peak
        try:
            tile, value = tune_peak(tile, target, vary, cell, air)
        except TuningError as exc:
            raise InputError(str(path), "--tune-peak", str(exc)) from None
        unit = {"mass": (1e3, "g"), "tension": (1.0, "N/m"), "radius": (1e3, "mm")}[vary]
        print(f"tuned {vary} of cell {args.cell}: {value * unit[0]:.5g} {unit[1]} puts "
              f"the first TL peak at {target:g} Hz")
        out_note = f"tile tuned: first TL peak at {target:g} Hz by {vary}"
    if args.fit:
        f, tl = _read_measured(args.fit)
        res = fit_tile(tile, f, tl, args.fit_mass, cell, air)
        tile = res.tile
        rows = []
        for name, v, lo, hi in zip(res.names, res.values, res.lower, res.upper, strict=True):
            scale, unit = {"tension": (1.0, "N/m"), "loss_factor": (1.0, "-"),
                           "mass": (1e3, "g")}[name]
            interval = (f"{lo * scale:.4g} .. {hi * scale:.4g}" if 0 < lo and np.isfinite(hi)
                        else "not determined")
            rows.append((name, f"{v * scale:.4g}", interval, unit))
        print(f"fit to {args.fit} ({len(f)} points)")
        print(format_table(["parameter", "fitted", "95 % interval", "unit"], rows))
        print(f"RMS residual {res.rms_db:.2f} dB; first dip off by {res.dip_error_pct:+.2f} %, "
              f"first peak off by {res.peak_error_pct:+.2f} %")
        out_note = f"tile fitted to {Path(args.fit).name}"
    ext = tile_extrema(tile, fmin, fmax, air)
    m = tile.areal_mass
    print(f"\n{path}: tile, {tile.frame} grid, pitch {tile.pitch * 1e3:g} mm, "
          f"{plural(len(tile.cells), 'cell kind')}, areal mass {m:.3f} kg/m^2 "
          "(normal incidence)")
    print(format_table(["TL dip (Hz)", "TL (dB)"], list(zip(ext.dip_hz, ext.dip_db,
                                                            strict=True))))
    if ext.peak_hz.size:
        fp, tp = ext.peak_hz[0], ext.peak_db[0]
        gain = tp - mass_law_tl(m, [fp], air)[0]
        print(f"\nfirst TL peak {fp:.1f} Hz, {tp:.1f} dB: {gain:+.1f} dB over the mass law of "
              f"{m:.3f} kg/m^2")
    else:
        print(f"\nno TL peak between {fmin:g} and {fmax:g} Hz")
    if args.profile is not None:
        c = tile.cells[cell]
        r = np.linspace(0, c.radius, 11)
        w = c.displacement_profile(2 * np.pi * args.profile, r)
        mean = c.effective_mass(np.array([2 * np.pi * args.profile]))[0]
        print(f"\ncell {args.cell} at {args.profile:g} Hz, clamped rim, 1 Pa: "
              f"effective mass {mean.real:.4g} kg/m^2")
        print(format_table(["r (mm)", "Re w (um)", "Im w (um)"],
                           [(float(ri * 1e3), float(wi.real * 1e6), float(wi.imag * 1e6))
                            for ri, wi in zip(r, w, strict=True)], digits=4))
        print("(where the disk and the rim annulus move in opposite senses the area-averaged "
              "displacement can vanish: that is the TL peak)")
    if out_note:
        _write_new(out, tile_toml(tile, out_note), path, args.force)
        if not args.quiet:
            print(f"\nwrote {out}", file=sys.stderr)
    return 0
