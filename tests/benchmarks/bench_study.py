"""Benchmark: the demo study (4 packages, 3 zones, 2 conditions) after import; target < 1 s.

Also times `noisebudget demo` end to end (imports, reports) in a fresh process.
"""

import subprocess
import sys
import tempfile
import time

from noisebudget.budget import compute_budget
from noisebudget.resources import data_path
from noisebudget.study import load_study


def main():
    t0 = time.perf_counter()
    loaded = load_study(data_path("examples", "demo-study.toml"))
    t1 = time.perf_counter()
    compute_budget(loaded.inputs)
    t2 = time.perf_counter()
    print(f"demo study: parse {t1 - t0:.2f} s, compute {t2 - t1:.2f} s")
    with tempfile.TemporaryDirectory() as out:
        t3 = time.perf_counter()
        subprocess.run([sys.executable, "-m", "noisebudget", "demo", "-o", out],
                       check=True, capture_output=True)
        print(f"noisebudget demo end to end: {time.perf_counter() - t3:.2f} s")


if __name__ == "__main__":
    main()
