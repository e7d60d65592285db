"""Benchmark: tile effective mass (3 cell kinds, 2000 frequencies) and a 200-point fit.

Targets: under 20 ms and under 2 s. Run by hand; prints figures.
"""

import time

import numpy as np

from noisebudget.layers import Cell, Tile
from noisebudget.tiles import fit_tile, normal_tl


def main():
    kinds = tuple(Cell(0.01, 0.25e-3, 1150.0, 80.0, m, 2e-3, 0.05, share=1 / 3)
                  for m in (0.2e-3, 0.4e-3, 0.8e-3))
    tile = Tile(kinds, 0.022, "floating", 0.6)
    w = 2 * np.pi * np.geomspace(20, 5000, 2000)
    best = min(_time(lambda: tile.effective_mass(w)) for _ in range(20))
    print(f"effective mass, 3 cell kinds, 2000 frequencies: {best * 1e3:.2f} ms (best of 20)")
    one = Tile((Cell(0.01, 0.25e-3, 1150.0, 80.0, 0.4e-3, 2e-3, 0.05),), 0.022, "clamped")
    f = np.geomspace(60, 1500, 200)
    y = normal_tl(one, f) + np.random.default_rng(3).normal(0, 0.5, f.size)
    guess = one.with_cell(0, tension=45.0, loss_factor=0.15)
    t = _time(lambda: fit_tile(guess, f, y))
    print(f"calibration fit, 200 points (tension, loss factor): {t:.2f} s")
    t = _time(lambda: fit_tile(guess, f, y, fit_mass=True))
    print(f"calibration fit, 200 points (tension, loss factor, mass): {t:.2f} s")


def _time(fn):
    t0 = time.perf_counter()
    fn()
    return time.perf_counter() - t0


if __name__ == "__main__":
    main()
