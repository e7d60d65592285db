"""Benchmark: field-incidence band TL of a demo-like sidewall, flat against curved.

The flat stack is the demo sidewall as the flat-plate models had it (flat isotropic
skin, trim as an equivalent plate, infinite extent). The panel stack has a curved,
pressurised, stiffened skin in a 0.5 m x 0.2 m bay and a sandwich trim. Prints the time
(best of several runs, after a warm-up) and the (f, theta, phi) points evaluated; the
goal is within 3x of the flat stack's time. Also times the general nested azimuth
average on a few bands, for comparison with the closed form, the same sidewall with a
Biot foam bonded to the skin (the general solve with a frame on the skin: its azimuth
average is nested), and a sidewall whose foam is bonded to a septum further in (the skin
between fluid media: the general solve's closed-form azimuth mean).
Run by hand (`make bench`).
"""

import time
import warnings

import numpy as np

import noisebudget as nb
import noisebudget.incidence as inc
from noisebudget.bands import third_octave_bands
from noisebudget.media import Air

EXTERIOR = nb.standard_atmosphere(7620.0)   # 25,000 ft
CABIN = Air(295.15, 75262.0)                # 8,000 ft pressure altitude, 22 degC


def _catalog_layer(key, **override):
    return nb.parse_stack({"layer": [{"use": key, **override}]}, "bench").layers[0]


def stacks():
    blanket = _catalog_layer("blanket.glass-0.6pcf-limp", thickness="75 mm")
    film = _catalog_layer("film.cover-1oz")
    flat = nb.Stack([nb.Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01), blanket, film,
                     nb.AirGap(0.02), nb.Plate(1.73, 268.0, 0.02, 0.0105)], EXTERIOR, CABIN)
    skin = nb.Plate.from_material(1.6e-3, 2780, 73.1e9, 0.33, 0.01, curvature_radius=1.35,
                                  bending_stiffness=(1200.0, 300.0))
    skin = nb.Plate(5.4, skin.bending_stiffness, 0.01, 1.6e-3, curvature_radius=1.35,
                    youngs_modulus=73.1e9, poisson_ratio=0.33)
    curved = nb.Stack([skin, blanket, film, nb.AirGap(0.02),
                       _catalog_layer("trim.honeycomb-glass-10")], EXTERIOR, CABIN,
                      panel=nb.Panel(0.5, 0.2))
    return flat, curved


def timed(fn, repeat=5):
    best = np.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def count_points(fn):
    counted = []
    original = inc._gk

    def spy(f, rows, lo, hi):
        counted.append(len(rows) * lo.shape[1] * 15)
        return original(f, rows, lo, hi)

    inc._gk = spy
    try:
        fn()
    finally:
        inc._gk = original
    return sum(counted)


def main():
    warnings.simplefilter("ignore", nb.ModelRangeWarning)
    flat, curved = stacks()
    bands = third_octave_bands(50, 5000)
    for s in (flat, curved):   # warm-up: lazy imports, quadrature tables
        s.band_transmission_loss(bands, "field")
    t_flat = t_new = np.inf   # interleaved, best of 7 each: the machine may be shared
    for _ in range(7):
        t, tl_flat = timed(lambda: flat.band_transmission_loss(bands, "field"), 1)
        t_flat = min(t, t_flat)
        t, tl_new = timed(lambda: curved.band_transmission_loss(bands, "field"), 1)
        t_new = min(t, t_new)
    n_flat = count_points(lambda: flat.band_transmission_loss(bands, "field"))
    n_new = count_points(lambda: curved.band_transmission_loss(bands, "field"))
    print(f"field-incidence band TL, {len(bands)} one-third octaves 50 Hz - 5 kHz")
    print(f"  flat stack (today's model):     {1e3 * t_flat:7.1f} ms, {n_flat:8d} (f, theta) "
          f"points")
    print(f"  curved, pressurised, stiffened, bay, sandwich: {1e3 * t_new:7.1f} ms, "
          f"{n_new:8d} (f, theta) points, azimuth in closed form; "
          f"ratio {t_new / t_flat:.2f}x (goal <= 3x)")
    print("  band TL dB (flat | curved):")
    for fc, a, b in zip(bands.nominal, tl_flat, tl_new, strict=True):
        print(f"    {fc:7.0f} Hz  {a:6.1f} | {b:6.1f}")
    # the general nested average (adaptive azimuth, then angle) on a few frequencies
    f = np.array([100.0, 400.0, 1600.0])
    omega = 2 * np.pi * f[:, None]
    t_closed, closed = timed(lambda: curved.average_transmission(f, "field"), 3)

    def nested():
        table = curved._radiation(omega, np.radians(78.0))
        return curved._azimuth_paris(
            lambda rows, om, th, az: curved._tau(om, th, az, lambda kt: table(rows, kt)),
            omega, np.radians(78.0), 3e-3)

    t_nested, slow = timed(nested, 1)
    n_nested = count_points(nested)
    print(f"  3 frequencies: closed-form azimuth {1e3 * t_closed:.1f} ms; nested adaptive "
          f"{1e3 * t_nested:.0f} ms, {n_nested} (f, theta, phi) points; difference "
          f"{np.max(np.abs(10 * np.log10(closed / slow))):.3f} dB")
    # a Biot foam bonded to the skin: the general solve, whose azimuth average is nested
    foam = _catalog_layer("poroelastic.pu-foam-24")
    bonded_flat = nb.Stack([flat.layers[0], foam, *flat.layers[1:]], EXTERIOR, CABIN)
    bonded = nb.Stack([curved.layers[0], foam, *curved.layers[1:]], EXTERIOR, CABIN,
                      panel=curved.panel)
    t_iso, _ = timed(lambda: bonded_flat.average_transmission(f, "field"), 3)
    t_gen, _ = timed(lambda: bonded.average_transmission(f, "field"), 1)
    n_gen = count_points(lambda: bonded.average_transmission(f, "field"))
    print(f"  foam bonded to the skin (general solve), 3 frequencies: flat skin "
          f"{1e3 * t_iso:.1f} ms; curved, stiffened, bay (nested azimuth) "
          f"{1e3 * t_gen:.0f} ms, {n_gen} (f, theta, phi) points")
    # the general solve with the skin between fluid media (limp blanket behind it, a Biot
    # foam bonded to a septum further in): closed-form azimuth mean from two solves
    septum = _catalog_layer("septum.elastomer-1.5")
    lined = nb.Stack([curved.layers[0], _catalog_layer("blanket.glass-0.6pcf-limp",
                                                       thickness="50 mm"),
                      foam, septum, nb.AirGap(0.02), curved.layers[-1]], EXTERIOR, CABIN,
                     panel=nb.Panel(1.0, 1.4))
    assert lined._azimuth_sheet() == 0
    t_band, _ = timed(lambda: lined.band_transmission_loss(bands, "field"), 1)
    n_band = count_points(lambda: lined.band_transmission_loss(bands, "field"))
    t_closed, closed = timed(lambda: lined.average_transmission(f, "field"), 3)

    def nested_general():
        table = lined._radiation(omega, np.radians(78.0))
        return lined._azimuth_paris(
            lambda rows, om, th, az: lined._tau(om, th, az, lambda kt: table(rows, kt)),
            omega, np.radians(78.0), 3e-3)

    t_nested, slow = timed(nested_general, 1)
    n_nested = count_points(nested_general)
    print(f"  skin | blanket | Biot foam bonded to a septum | gap | trim, bay (general "
          f"solve, skin between fluids): {len(bands)}-band TL {t_band:.2f} s, {n_band} "
          f"(f, theta) points, azimuth in closed form (one solve per point: the skin faces "
          f"the source)")
    print(f"    3 frequencies: closed form {1e3 * t_closed:.0f} ms; nested adaptive "
          f"{1e3 * t_nested:.0f} ms, {n_nested} (f, theta, phi) points; difference "
          f"{np.max(np.abs(10 * np.log10(closed / np.minimum(slow, 1.0)))):.4f} dB")


if __name__ == "__main__":
    main()
