"""Benchmark: the demo study (5 packages, 3 zones, 2 conditions; curved pressurised skins,
bays, sandwich trim, a Biot foam package) after import, and `noisebudget demo` end to end
(imports, reports) in a fresh process; target under about 20 s end to end on two cores.

Also prints the kernel's dearest tasks, run one after another (the budget runs them on a
thread pool, dearest first): the foam package's sidewall (the general solve) leads.
"""

import subprocess
import sys
import tempfile
import time
import warnings

from noisebudget import zone_paths
from noisebudget.budget import compute_budget
from noisebudget.errors import ModelRangeWarning
from noisebudget.resources import data_path
from noisebudget.study import load_study


def main():
    warnings.simplefilter("ignore", ModelRangeWarning)
    t0 = time.perf_counter()
    loaded = load_study(data_path("examples", "demo-study.toml"))
    t1 = time.perf_counter()
    compute_budget(loaded.inputs)
    t2 = time.perf_counter()
    print(f"demo study: parse {t1 - t0:.2f} s, compute {t2 - t1:.2f} s")
    times = {}
    pool = zone_paths._run

    def one_by_one(tasks):
        out = {}
        for key, fn in tasks.items():
            t = time.perf_counter()
            out[key] = fn()
            times[key] = time.perf_counter() - t
        return out

    zone_paths._run = one_by_one
    try:
        compute_budget(loaded.inputs)
    finally:
        zone_paths._run = pool
    dear = sorted(times.items(), key=lambda kv: -kv[1])[:4]
    print(f"  kernel tasks one by one: {sum(times.values()):.2f} s in all; dearest "
          + ", ".join(f"{kind} {i}: {t:.2f} s" for (kind, i), t in dear))
    with tempfile.TemporaryDirectory() as out:
        t3 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "noisebudget", "demo", "-o", out],
                       check=True, capture_output=True)
        print(f"noisebudget demo end to end: {time.perf_counter() - t3:.2f} s")


if __name__ == "__main__":
    main()
