"""Benchmark: Monte Carlo variants of the demo sidewall with a tile (six layers: a skin
curved to the fuselage and pressurised, in the zone's 1.0 m x 1.4 m bay; field incidence,
both conditions), through the trade engine (``sweep_study``).

Prints variants per second with 1 and 2 local processes, CPU time per variant, the
(frequency, angle) points of the angle quadrature per variant, and the agreement with the
single-variant path: each variant's sidewall band TL (in its bay) against its stack's own
``band_transmission_loss`` at the trade tolerance (``TRADE_RTOL``; a batch of one: equal
bit for bit; the budget's own, so ``run_study`` gives the same numbers) and at the
single-stack methods' default 3e-3 (a tighter single-variant result), against the
stack's nested route without batches (``Stack._average_nested``: graded panels in
``u = sin^2 theta``, band averages as ``band_transmission_loss`` takes them) at 3e-3 and
at a tolerance 100 times tighter than the trade's, and, for two variants, the interior
dBA of the study file with the variant's values written in, run by ``run_study``. The
goal: 10,000 variants in under 60 s on two cores, every variant within 0.1 dB.

Usage: python tests/benchmarks/bench_trade.py [VARIANTS] [--fmax 10000] [--flat]
    [--fixed-tile] [--check N]   (defaults: 256 variants, the demo's bands to 5 kHz,
    the demo's curved skins and bays, the tile's tension varied, 6 checked)

``--fmax 10000`` extends the study's one-third octaves to 10 kHz (the exterior spectra
continue 2 dB lower per band, demo values); ``--flat`` makes every skin flat and drops
the zones' bays (infinite, isotropic stacks: no azimuth, no radiation table);
``--fixed-tile`` varies the blanket and the gap only (the tile's Bessel functions are
then computed once per frequency, not per variant).
"""

import argparse
import os
import re
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np

import noisebudget.incidence as inc
from noisebudget.bands import band_average, third_octave_bands
from noisebudget.errors import ModelRangeWarning
from noisebudget.resources import data_path
from noisebudget.stack import Stack
from noisebudget.trade.evaluate import TRADE_RTOL
from noisebudget.trade.sweep import sweep_study

VARY = """
[trade]
mode = "monte-carlo"
samples = {n}
seed = 1

[[vary]]
name = "blanket"
package = "BPF tiles"
zone = "sidewall"
layer = 2
key = "thickness"
distribution = "normal"
mean = "75 mm"
std = "3 mm"

[[vary]]
name = "gap"
package = "BPF tiles"
zone = "sidewall"
layer = 4
key = "thickness"
distribution = "uniform"
low = "10 mm"
high = "18 mm"

[[vary]]
name = "tension"
package = "BPF tiles"
zone = "sidewall"
layer = 5
cell = 1
key = "tension"
distribution = "normal"
mean = "27.24 N/m"
std = "1.5 N/m"
"""



def _extend_to_10k(text: str) -> str:
    """Every band list ending at 5 kHz continued to 10 kHz, its levels 2 dB lower per
    band and the reverberation times 0.01 s shorter (demo values)."""
    text = text.replace("3150, 4000, 5000]", "3150, 4000, 5000, 6300, 8000, 10000]")

    def levels(m):
        values = [int(v) for v in m.group(1).split(",")]
        if len(values) != 21:
            return m.group(0)
        return "levels_db = [" + ", ".join(map(str, values + [values[-1] - 2 * k
                                                              for k in (1, 2, 3)])) + "]"

    text = re.sub(r"levels_db = \[([^\]]*)\]", levels, text)
    return text.replace('"0.27 s", "0.26 s"]', '"0.27 s", "0.26 s", "0.25 s", "0.24 s", '
                                              '"0.23 s"]')


def _flat(text: str) -> str:
    """Every skin flat and no zone bays: infinite, isotropic stacks."""
    text = re.sub(r', curvature_radius = "[^"]*"', "", text)
    return re.sub(r'(?m)^panel_(width|height) = .*\n', "", text)


def _count():
    """Count the angle quadrature's (frequency, angle) points and its rows."""
    count = {"points": 0, "rows": 0}
    original = inc._gk

    def counted(fn, rows, lo, hi):
        count["points"] += len(rows) * lo.shape[1] * 15
        return original(fn, rows, lo, hi)

    inc._gk = counted
    return count, lambda: setattr(inc, "_gk", original)


def _plain(stack):
    """The same stack as a plain Stack (no remembered results)."""
    return Stack(stack.layers, stack.source_air, stack.receiver_air, stack.cavity_air,
                 stack.labels, stack.bonding, panel=stack.panel)


def _nested_band_tl(stack, bands, rtol):
    """Band TL by the stack's nested route, without batches: ``band_transmission_loss``'s
    band averages of ``Stack._average_nested`` (angle integral at ``3 rtol``)."""
    tau = band_average(lambda f: stack._average_nested(f, "field", None, 3 * rtol), bands,
                       rtol)
    return -10 * np.log10(tau)


def _single_dba(text: str, values, tmp: Path):
    """The interior dBA of the variant's values written into the study file."""
    from noisebudget.study import run_study

    blanket, gap, *rest = (float(v) for v in values)
    tension = rest[0] if rest else 27.24   # the catalog tile's own tension
    cell = ('cell = [{ share = 1.0, radius = "10 mm", membrane_thickness = "0.25 mm", '
            f'membrane_density = "1150 kg/m^3", tension = "{tension!r} N/m", '
            'mass = "0.338 g", mass_radius = "2 mm", loss_factor = 0.05 }]')
    base = text.split("[trade]")[0]
    start = base.index('[package.zone.sidewall]\nlayer = [{ use = "skin.al2024-t3-1.6mm',
                       base.index('name = "BPF tiles"'))
    end = base.index('{ use = "tile.bpf-105-floating" }', start) + len(
        '{ use = "tile.bpf-105-floating" }')
    block = base[start:end].replace('"75 mm"', f'"{blanket!r} m"').replace(
        '"14 mm"', f'"{gap!r} m"').replace('{ use = "tile.bpf-105-floating" }',
                                           '{ use = "tile.bpf-105-floating", ' + cell + ' }')
    one = tmp / "one.toml"
    one.write_text(base[:start] + block + base[end:])
    r = run_study(one)
    return r.summary[r.summary["package"] == "BPF tiles"]["interior_dba"].to_numpy()


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("variants", nargs="?", type=int, default=256)
    ap.add_argument("--fmax", type=float, default=5000.0)
    ap.add_argument("--flat", action="store_true")
    ap.add_argument("--check", type=int, default=6)
    ap.add_argument("--fixed-tile", action="store_true",
                    help="vary the blanket and the gap only (the tile's tension fixed)")
    args = ap.parse_args()
    n = args.variants
    warnings.simplefilter("ignore", ModelRangeWarning)
    text = data_path("examples", "demo-study.toml").read_text()
    if args.fmax > 5000:
        text = _extend_to_10k(text)
    if args.flat:
        text = _flat(text)
    vary = VARY.format(n=n)
    if args.fixed_tile:
        vary = vary[:vary.index('[[vary]]\nname = "tension"')]
    text += vary
    what = (f"demo sidewall ({'flat skin, infinite' if args.flat else 'curved skin, bay'}"
            f"{'; tile fixed' if args.fixed_tile else ''}), "
            f"one-third octaves 50 Hz - {args.fmax / 1000:g} kHz")
    print(f"{n} variants of the {what}")
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        path = tmp / "trade.toml"
        path.write_text(text)
        count, restore = _count()
        t0, c0 = time.perf_counter(), time.process_time()
        one = sweep_study(path, workers=1)
        t1, c1 = time.perf_counter(), time.process_time()
        restore()
        print(f"  1 process:   {n / (t1 - t0):6.1f} variants/s ({t1 - t0:.1f} s, set-up "
              f"included; {1e3 * (c1 - c0) / n:.1f} ms of CPU per variant); per variant "
              f"{count['points'] / n:,.0f} (f, theta) points (every stack and leak front)")
        t2 = time.perf_counter()
        two = sweep_study(path, workers=2)
        t3 = time.perf_counter()
        same = np.array_equal(one.spectra.metrics, two.spectra.metrics, equal_nan=True)
        print(f"  2 processes: {n / (t3 - t2):6.1f} variants/s ({t3 - t2:.1f} s); identical "
              f"to 1 process: {same}")
        print(f"  10,000 variants at the 2-process rate: {10000 * (t3 - t2) / n:.0f} s "
              "(goal < 60 s)")
        print(f"  10,000 variants at the 1-process CPU time per variant, on two idle cores: "
              f"{10000 * (c1 - c0) / n / 2:.0f} s (the rates above depend on the cores' "
              f"load: {os.getloadavg()[0]:.1f} processes running, 1-minute mean)")
        # agreement with the single-variant path, and with a tighter reference
        from noisebudget.study import load_study
        from noisebudget.trade.variants import apply_variant

        loaded = load_study(path)
        spec = loaded.trade
        pkg = next(p for p in loaded.inputs.packages if p.name == spec.package)
        zones = [z.name for z in loaded.inputs.zones]
        zi = zones.index("sidewall")
        bands = third_octave_bands(50, args.fmax)
        cols = one.variants.columns[1:1 + len(spec.parameters)]
        x = one.variants[cols].to_numpy(float)
        k = min(args.check, n)
        bay = next(z for z in loaded.inputs.zones if z.name == "sidewall").panel
        alone, single, nested, tight = [], [], [], []
        for i in range(k):  # a loop over a few checked variants
            stack = _plain(apply_variant(pkg, spec.parameters, x[i]).stacks["sidewall"])
            if bay is not None:
                stack = stack.with_panel(*bay)
            swept = one.spectra.tl_db[i, zi]
            alone.append(np.max(np.abs(swept - stack.band_transmission_loss(
                bands, rtol=TRADE_RTOL))))
            single.append(np.abs(swept - stack.band_transmission_loss(bands)))
            nested.append(np.abs(swept - _nested_band_tl(stack, bands, 3e-3)))
            tight.append(np.abs(swept - _nested_band_tl(stack, bands, TRADE_RTOL / 100)))
        single = np.concatenate(single)
        nested, tight = np.concatenate(nested), np.concatenate(tight)
        print(f"  band TL against the stack's own band_transmission_loss at the trade "
              f"tolerance {TRADE_RTOL:g} ({k} variants): largest difference {max(alone):.2g} dB")
        for name, d in (("the single-variant band_transmission_loss (3e-3)", single),
                        ("the nested route at 3e-3", nested),
                        (f"the nested route at {TRADE_RTOL / 100:g} (100 times tighter)",
                         tight)):
            print(f"  band TL against {name} ({d.size} bands): median {np.median(d):.1e}, "
                  f"99th percentile {np.quantile(d, 0.99):.1e}, largest {d.max():.1e} dB")
        dba = [c for c in one.variants.columns if c.startswith("interior_dba[")]
        worst = max(float(np.max(np.abs(one.variants.iloc[i][dba].to_numpy(float)
                                        - _single_dba(text, x[i], tmp))))
                    for i in range(min(2, n)))
        print(f"  interior dBA against run_study of the study file written out (2 variants): "
              f"largest difference {worst:.2g} dB")


if __name__ == "__main__":
    main()
