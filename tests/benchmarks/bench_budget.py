"""Benchmark: the demo study's budget (reports excluded), split into its three stages.

The kernel computes the transmission of every distinct stack and leak group (band
averages and tone values); the bookkeeping is everything else: the energy arrays over
(package, condition, zone, band) and the tables. Goal: bookkeeping under 10 % of the
compute. The bookkeeping stages are timed as the best of several repeats (they are short
and the machine may be shared); the kernel once.
"""

import time

import numpy as np

from noisebudget.budget import _tones, _union_bands, budget_arrays
from noisebudget.budget_tables import build_tables
from noisebudget.resources import data_path
from noisebudget.study import load_study
from noisebudget.zone_paths import zone_transmissions


def best_of(fn, repeats=5):
    """Smallest wall time of ``repeats`` calls, and the last result."""
    times, out = [], None
    for _ in range(repeats):
        t = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t)
    return min(times), out


def main():
    t0 = time.perf_counter()
    inp = load_study(data_path("examples", "demo-study.toml")).inputs
    t1 = time.perf_counter()
    bands = _union_bands(inp)
    tones = _tones(inp, bands)
    trans = zone_transmissions(inp, bands, np.unique(tones["hz"]))
    kernel = time.perf_counter() - t1
    t_arrays, arrays = best_of(lambda: budget_arrays(inp, bands, tones, trans))
    t_tables, result = best_of(lambda: build_tables(inp, arrays))
    book = t_arrays + t_tables
    total = kernel + book
    shape = arrays["energy"].shape
    print(f"demo study: {len(inp.packages)} packages, {len(inp.conditions)} conditions, "
          f"{len(inp.zones)} zones, {len(bands)} bands, {tones['hz'].size} tones, "
          f"{len(inp.interior_sources)} interior sources; energy array {shape}")
    print(f"parse {t1 - t0:.2f} s (not counted)")
    print(f"kernel (stacks and leaks) {kernel:.3f} s")
    print(f"bookkeeping: arrays {t_arrays * 1e3:.1f} ms, tables {t_tables * 1e3:.1f} ms")
    print(f"compute {total:.3f} s; bookkeeping {100 * book / total:.1f} % (goal < 10 %)")
    rows = sum(len(t) for t in result.tables().values())
    print(f"{rows} table rows")


if __name__ == "__main__":
    main()
