"""Benchmark: the bay's radiation table (``finite_size.RadiationTable``) for the demo
sidewall's 1.0 m x 1.4 m bay, at 1, 5 and 10 kHz.

Per frequency: building the rows (ms of CPU per row, the radial integrand's samples
``J0(kt r) sin(k r)`` per row, the floats a row keeps), and evaluating the table at
(row, kt) points shaped as the angle quadrature asks for them (4096 rows of 30 trace
wavenumbers, the rows drawn from 32 neighbouring frequencies): ns of CPU per point. The
trace wavenumbers run to ``k1 sin 78 deg`` of the exterior air at cruise (field
incidence), the radiated air is the cabin's. Also the largest difference from the
direct radial integral (``Panel.radiation_efficiency``, same radial nodes) relative to
the row's largest sigma. Best of several runs (CPU time of this process).

Usage: python tests/benchmarks/bench_bay_table.py
"""

import time

import numpy as np
import scipy.special

import noisebudget as nb
from noisebudget import finite_size
from noisebudget.media import Air

EXTERIOR = nb.standard_atmosphere(7620.0)   # 25,000 ft
CABIN = Air(295.15, 75262.0)                # 8,000 ft pressure altitude, 22 degC
BAY = nb.Panel(1.0, 1.4)


def cpu_best(fn, repeat):
    best = np.inf
    for _ in range(repeat):
        t0 = time.process_time()
        out = fn()
        best = min(best, time.process_time() - t0)
    return best, out


def count_samples(fn):
    """Values of J0 computed while ``fn`` runs (the radial integrand's samples)."""
    original = scipy.special.j0
    counted = [0]

    def spy(x, *args, **kwargs):
        counted[0] += np.size(x)
        return original(x, *args, **kwargs)

    scipy.special.j0 = spy
    try:
        out = fn()
    finally:
        scipy.special.j0 = original
    return counted[0], out


def rows_at(f_hz, n=32):
    f = f_hz * np.geomspace(0.97, 1.03, n)
    k = 2 * np.pi * f / CABIN.sound_speed
    kt_max = 2 * np.pi * f / EXTERIOR.sound_speed * np.sin(np.radians(78.0))
    return k, kt_max


def build(k, kt_max):
    finite_size._ROWS.clear()
    return BAY.radiation_table(k, kt_max)


def main():
    rng = np.random.default_rng(7)
    BAY.radiation_table(*rows_at(100.0))(np.arange(32), np.zeros((32, 3)))  # warm-up
    print(f"bay {BAY.width} m x {BAY.height} m; rows: 32 neighbouring frequencies; "
          f"points: 4096 x 30 (row, kt)")
    for f_hz in (1000.0, 5000.0, 10000.0):
        k, kt_max = rows_at(f_hz)
        t_build, table = cpu_best(lambda k=k, kt_max=kt_max: build(k, kt_max), 5)
        samples, _ = count_samples(lambda k=k, kt_max=kt_max: build(k, kt_max))
        build(k, kt_max)
        stored = sum(np.size(v[-1]) for v in finite_size._ROWS.values())
        rows = rng.integers(0, k.size, 4096)
        kt = rng.uniform(0, 1, (rows.size, 30)) * kt_max[rows, None]
        t_eval, sigma = cpu_best(lambda table=table, rows=rows, kt=kt: table(rows, kt), 7)
        err = 0.0
        for i in range(k.size):  # the direct integral on the row's own radial nodes
            sel = rows == i
            pts = np.append(kt[sel].ravel(), kt_max[i])
            direct = BAY.radiation_efficiency(k[i], pts)
            peak = np.max(np.abs(BAY.radiation_efficiency(
                k[i], np.linspace(0, kt_max[i], 801))))
            err = max(err, np.max(np.abs(sigma[sel].ravel() - direct[:-1])) / peak)
        print(f"  {f_hz / 1e3:4.0f} kHz (k D = {k.mean() * np.hypot(1.0, 1.4):5.1f}): build "
              f"{1e3 * t_build / k.size:6.2f} ms per row, {samples / k.size:8.0f} samples "
              f"per row, {stored / k.size:6.0f} floats kept per row; evaluation "
              f"{1e9 * t_eval / kt.size:7.1f} ns per point; largest error {err:.1e} of the "
              f"row's largest sigma")


if __name__ == "__main__":
    main()
