"""Transmission coefficients of every distinct stack and leak of a study, computed once.

This is the physics kernel of the budget: band averages (energy, never dB) over the
study's one-third-octave bands and narrowband values at the tones' frequencies, for
each distinct package stack (packages built with ``based_on`` share stack objects) and
each group of leaks. The tasks are independent and run on a small thread pool (numpy
releases the GIL inside its large array operations).

A leak behind the first k layers of a stack transmits ``tau_front(f) * tau_leak(f)``,
with ``tau_front`` the transmission of those layers into the cavity air (the leak then
joins the cavity air to the cabin); the band value is the band average of that product,
to a relative accuracy of 1 % (0.04 dB; a leak is one path of several).
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace

import numpy as np

from .bands import Bands, band_average

__all__ = ["zone_transmissions"]

_LEAK_RTOL = 1e-2


def _leak_function(stack, behind: int, leaks, incidence, theta_max_deg):
    """``f -> sum S_l tau_l(f)`` (m^2) of the leaks behind the first ``behind`` layers."""
    if behind:
        front = replace(stack, layers=stack.layers[:behind], labels=stack.labels[:behind],
                        receiver_air=stack.cavity_air)
        airs = (stack.cavity_air, stack.receiver_air, stack.cavity_air)
    else:
        front, airs = None, (stack.source_air, stack.receiver_air, stack.cavity_air)

    def area(f):
        total = sum(lk.area * lk.aperture.average_transmission(f, incidence, theta_max_deg,
                                                                *airs) for lk in leaks)
        if front is not None:
            total = total * front.average_transmission(f, incidence, theta_max_deg,
                                                       3 * _LEAK_RTOL)
        return total

    return area


def zone_transmissions(inp, bands: Bands, tone_hz) -> dict:
    """Transmission of each package's zones over ``bands`` and at ``tone_hz``.

    Returns
    -------
    dict of arrays
        ``wall`` (P, Z, B) and ``wall_tone`` (P, Z, F): the package stack's tau;
        ``leak_area`` (P, Z, B) and ``leak_tone_area`` (P, Z, F): ``sum S_l tau_l`` in
        m^2; ``open_area`` (P, Z): the leaks' open area; ``absorption`` (P, B): cabin
        absorption area; ``tone_hz`` (F,).
    """
    zones, pkgs = inp.zones, inp.packages
    tone_hz = np.asarray(tone_hz, dtype=float)
    inc, tmax = inp.incidence, inp.theta_max_deg
    tasks = {}
    for pkg in pkgs:  # collect distinct work: packages x zones, a handful each
        for z in zones:
            s = pkg.stacks[z.name]
            tasks.setdefault(("band", id(s)), lambda s=s: 10 ** (
                -s.band_transmission_loss(bands, inc, tmax) / 10))
            if tone_hz.size:
                tasks.setdefault(("tone", id(s)), lambda s=s: s.average_transmission(
                    tone_hz, inc, tmax))
            if inp.include_package_absorption:
                tasks.setdefault(("absorb", id(s)), lambda s=s: s.reversed(
                    ).random_incidence_absorption(bands.centre, "receiver"))
            for behind, group in _groups(pkg.leaks.get(z.name, ())).items():
                fn = _leak_function(s, behind, group, inc, tmax)
                key = (id(s), behind, group)
                tasks.setdefault(("leak",) + key, lambda fn=fn: band_average(fn, bands,
                                                                                _LEAK_RTOL))
                if tone_hz.size:
                    tasks.setdefault(("leak-tone",) + key, lambda fn=fn: fn(tone_hz))
    done = _run(tasks)
    shape = (len(pkgs), len(zones))
    out = {"wall": np.zeros(shape + (len(bands),)), "leak_area": np.zeros(shape + (len(bands),)),
           "wall_tone": np.zeros(shape + (tone_hz.size,)),
           "leak_tone_area": np.zeros(shape + (tone_hz.size,)), "open_area": np.zeros(shape),
           "absorption": np.tile(inp.cabin_area_m2[inp.cabin_bands.index(bands.nominal)],
                                 (len(pkgs), 1)), "tone_hz": tone_hz}
    for p, pkg in enumerate(pkgs):  # scatter the results into the arrays
        for z, zone in enumerate(zones):
            s = pkg.stacks[zone.name]
            out["wall"][p, z] = done[("band", id(s))]
            if tone_hz.size:
                out["wall_tone"][p, z] = done[("tone", id(s))]
            if inp.include_package_absorption:
                out["absorption"][p] += zone.area * done[("absorb", id(s))]
            leaks = pkg.leaks.get(zone.name, ())
            out["open_area"][p, z] = sum(lk.area for lk in leaks)
            for behind, group in _groups(leaks).items():
                out["leak_area"][p, z] += done[("leak", id(s), behind, group)]
                if tone_hz.size:
                    out["leak_tone_area"][p, z] += done[("leak-tone", id(s), behind, group)]
    return out


def _groups(leaks) -> dict:
    """Leaks grouped by the layer they sit behind: ``{behind: (leak, ...)}``."""
    out: dict = {}
    for lk in leaks:
        out[lk.behind_layer] = out.get(lk.behind_layer, ()) + (lk,)
    return out


def _run(tasks: dict) -> dict:
    """Run the tasks, on a thread pool when there are several and several cores."""
    workers = min(len(tasks), os.cpu_count() or 1)
    if workers <= 1:
        return {k: fn() for k, fn in tasks.items()}
    with ThreadPoolExecutor(max_workers=workers) as pool:
        return dict(zip(tasks, pool.map(lambda fn: fn(), tasks.values()), strict=True))
