"""Benchmark: Monte Carlo variants of the demo sidewall with a tile (six layers, one-third
octaves 50 Hz to 5 kHz, field incidence, both conditions).

Prints variants per second with 1 and 2 local processes, (frequency, angle) points per
variant, and the largest difference from the single-variant path (the study file with the
variant's values written in, run by ``run_study``). The goal for the batched kernels is
10,000 variants in under 60 s on two cores, every variant within 0.1 dB.

Usage: python tests/benchmarks/bench_trade.py [VARIANTS]   (default 24)
"""

import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from noisebudget.resources import data_path
from noisebudget.stack import Stack
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


def _count_points():
    """Wrap the stack's transmission kernel to count (frequency, angle) points."""
    count = [0]
    original = Stack._tau

    def counted(self, omega, theta):
        count[0] += int(np.broadcast_shapes(np.shape(omega), np.shape(theta))[0]
                        * np.shape(theta)[-1])
        return original(self, omega, theta)

    Stack._tau = counted
    return count, lambda: setattr(Stack, "_tau", original)


def _single(path: Path, values, tmp: Path):
    """The variant written into the study file (catalog keys overridden), run alone."""
    from noisebudget.study import run_study

    text = path.read_text().split("[trade]")[0]
    blanket, gap, tension = values
    sidewall = ('[package.zone.sidewall]\nlayer = [{ use = "skin.al2024-t3-1.6mm" },\n'
                '         { use = "blanket.glass-0.6pcf-limp", thickness = "75 mm" },\n'
                '         { use = "film.cover-1oz" },\n'
                '         { type = "air", thickness = "14 mm" },\n'
                '         { use = "tile.bpf-105-floating" },\n')
    assert sidewall in text
    cell = ('cell = [{ share = 1.0, radius = "10 mm", membrane_thickness = "0.25 mm", '
            f'membrane_density = "1150 kg/m^3", tension = "{tension!r} N/m", '
            'mass = "0.338 g", mass_radius = "2 mm", loss_factor = 0.05 }]')
    new = sidewall.replace('"75 mm"', f'"{blanket!r} m"').replace(
        '"14 mm"', f'"{gap!r} m"').replace('{ use = "tile.bpf-105-floating" }',
                                           '{ use = "tile.bpf-105-floating", ' + cell + ' }')
    one = tmp / "one.toml"
    one.write_text(text.replace(sidewall, new))
    r = run_study(one)
    return r.summary[r.summary["package"] == "BPF tiles"]["interior_dba"].to_numpy()


def main():
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 24
    with tempfile.TemporaryDirectory() as d:
        tmp = Path(d)
        path = tmp / "trade.toml"
        path.write_text(data_path("examples", "demo-study.toml").read_text()
                        + VARY.format(n=n))
        count, restore = _count_points()
        t0 = time.perf_counter()
        one = sweep_study(path, workers=1)
        t1 = time.perf_counter()
        restore()
        print(f"{n} variants, 1 process: {n / (t1 - t0):.2f} variants/s "
              f"({t1 - t0:.1f} s, model set-up included); "
              f"{count[0] / (n + 1):,.0f} (f, theta) points per variant")
        t2 = time.perf_counter()
        two = sweep_study(path, workers=2)
        t3 = time.perf_counter()
        same = np.array_equal(one.spectra.metrics, two.spectra.metrics, equal_nan=True)
        print(f"{n} variants, 2 processes: {n / (t3 - t2):.2f} variants/s "
              f"({t3 - t2:.1f} s); identical to 1 process: {same}")
        cols = [c for c in one.variants.columns if c.startswith("interior_dba[")]
        worst = 0.0
        for i in range(min(3, n)):
            values = [float(v) for v in one.variants.iloc[i, 1:4]]
            worst = max(worst, float(np.max(np.abs(
                one.variants.iloc[i][cols].to_numpy(dtype=float) - _single(path, values,
                                                                           tmp)))))
        print(f"largest dBA difference from the single-variant path (3 variants): "
              f"{worst:.3g} dB")
        print(f"10,000 variants at the 2-process rate: {10000 / (n / (t3 - t2)):.0f} s "
              "(goal < 60 s)")


if __name__ == "__main__":
    main()
