"""Benchmark: general solve of a stack with two Biot layers and two plates, 256 f x 48 angles.

Run by hand (`make bench`); prints milliseconds (best of 10) beside the 2x2 cascade of the
same stack with the Biot layers as rigid-frame (JCA) equivalent fluids, for scale, and the
same stack with the skin as a 1.6 mm aluminium solid layer (a stiff solid: the wave basis
that stays independent in the static limit and the stress-free reference face).
Target: under 250 ms on one core.
"""

import time

import numpy as np

import noisebudget as nb

JCA = dict(porosity=0.98, tortuosity=1.2, viscous_length=80e-6, thermal_length=200e-6)
FRAME = dict(youngs_modulus=2.5e5, poisson_ratio=0.3, loss_factor=0.1)


def stacks():
    skin = nb.Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01)
    trim = nb.Plate(1.73, 268.0, 0.02, 0.0105)

    def foams(model, **frame):
        return (nb.Porous(model, 0.05, 1.5e4, **JCA, bulk_density=24.0, **frame),
                nb.Porous(model, 0.025, 1e4, **JCA, bulk_density=9.5, **frame))

    a, b = foams("biot", **FRAME)
    biot = nb.Stack([skin, a, nb.AirGap(0.02), b, trim],
                    bonding=("bonded", "bonded", "bonded", "bonded", "unbonded"))
    solid = nb.Stack([nb.Solid(1.6e-3, 2780, 73.1e9, 0.33, 0.01), *biot.layers[1:]],
                     bonding=biot.bonding)
    a, b = foams("jca")
    fluid = nb.Stack([skin, a, nb.AirGap(0.02), b, trim])
    return biot, fluid, solid


def best_ms(fn, repeat):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best * 1e3


def main():
    biot, fluid, solid = stacks()
    f = np.geomspace(50, 10000, 256)
    th = np.linspace(0, np.radians(89), 48)
    general = best_ms(lambda: biot.transmission_coefficient(f, th), 10)
    cascade = best_ms(lambda: fluid.transmission_coefficient(f, th), 10)
    print(f"general solve, 2 Biot layers + 2 plates + gap, 256 x 48: {general:.1f} ms "
          f"(best of 10; target < 250 ms)")
    print(f"2x2 cascade, same stack with rigid-frame foams, 256 x 48: {cascade:.1f} ms")
    stiff = best_ms(lambda: solid.transmission_coefficient(f, th), 10)
    print(f"general solve, same stack with an aluminium solid skin, 256 x 48: {stiff:.1f} ms")
    tl = best_ms(lambda: biot.transmission_loss(f, "field"), 3)
    print(f"transmission_loss field, 256 frequencies (adaptive angles): {tl:.0f} ms")


if __name__ == "__main__":
    main()
