"""Transmission coefficients of every distinct stack and leak of a study, computed once.

This is the physics kernel of the budget: band averages (energy, never dB) over the
study's one-third-octave bands and narrowband values at the tones' frequencies, for
each distinct package stack (packages built with ``based_on`` share stack objects) and
each group of leaks. The tasks are independent and run on a small thread pool (numpy
releases the GIL inside its large array operations).

A zone with a bay (``Zone.panel``) puts every package's stack on it into that bay
(:meth:`~noisebudget.stack.Stack.with_panel`): its band and tone transmission include
the finite-size radiation correction. The bay is the panel radiating into the cabin; the
layers in front of a leak radiate into the cavity and keep the infinite stack.

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
from .multilayer import needs_general_solve

__all__ = ["distinct_items", "zone_transmissions"]

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

    Each distinct stack and each distinct set of leaks (with its stack) is computed once;
    the results are gathered onto the (package, zone) grid by index arrays.

    Returns
    -------
    dict of arrays
        ``wall`` (P, Z, B) and ``wall_tone`` (P, Z, F): the package stack's tau (in the
        zone's bay, if it has one);
        ``leak_area`` (P, Z, B) and ``leak_tone_area`` (P, Z, F): ``sum S_l tau_l`` in
        m^2; ``open_area`` (P, Z): the leaks' open area; ``absorption`` (P, B): cabin
        absorption area; ``tone_hz`` (F,).
    """
    zones, pkgs = inp.zones, inp.packages
    tone_hz = np.asarray(tone_hz, dtype=float)
    inc, tmax = inp.incidence, inp.theta_max_deg
    stacks, s_idx = distinct_items([[(p.stacks[z.name], z.panel) for z in zones]
                                    for p in pkgs], lambda x: (id(x[0]), x[1]))
    stacks = [s if bay is None else s.with_panel(*bay) for s, bay in stacks]
    leak_sets, l_idx = distinct_items([[(p.stacks[z.name], p.leaks.get(z.name, ())) for z in zones]
                                  for p in pkgs], lambda x: (id(x[0]), x[1]))
    tasks = {}
    for i, s in enumerate(stacks):
        tasks["band", i] = lambda s=s: 10 ** (-s.band_transmission_loss(bands, inc, tmax) / 10)
        tasks["tone", i] = lambda s=s: s.average_transmission(tone_hz, inc, tmax) \
            if tone_hz.size else np.empty(0)
        if inp.include_package_absorption:
            tasks["absorb", i] = lambda s=s: s.reversed().random_incidence_absorption(
                bands.centre, "receiver")
    for i, (s, leaks) in enumerate(leak_sets):
        fns = [_leak_function(s, k, group, inc, tmax) for k, group in _groups(leaks).items()]
        tasks["leak", i] = lambda fns=fns: band_average(
            lambda f: sum(fn(f) for fn in fns), bands, _LEAK_RTOL) if fns else \
            np.zeros(len(bands))
        tasks["leak-tone", i] = lambda fns=fns: sum((fn(tone_hz) for fn in fns),
                                                    np.zeros(tone_hz.size)) \
            if tone_hz.size else np.zeros(0)
    done = _run(_longest_first(tasks, stacks, leak_sets))

    def gather(kind, n, index):
        return np.stack([done[kind, i] for i in range(n)])[index]

    absorption = inp.cabin_area_m2[inp.cabin_bands.index(bands.nominal)][None, :]
    if inp.include_package_absorption:
        areas = np.array([z.area for z in zones])
        absorption = absorption + np.sum(areas[None, :, None] * gather(
            "absorb", len(stacks), s_idx), axis=1)
    return {"wall": gather("band", len(stacks), s_idx),
            "wall_tone": gather("tone", len(stacks), s_idx),
            "leak_area": gather("leak", len(leak_sets), l_idx),
            "leak_tone_area": gather("leak-tone", len(leak_sets), l_idx),
            "open_area": np.array([sum(lk.area for lk in leaks) for _, leaks in leak_sets]
                                  )[l_idx],
            "absorption": np.broadcast_to(absorption, (len(pkgs), len(bands))).copy(),
            "tone_hz": tone_hz}


def _longest_first(tasks: dict, stacks, leak_sets) -> dict:
    """The tasks reordered by a rough cost, dearest first, so that the thread pool does not
    start the longest one last: band averages before leaks before narrowband values;
    stacks of the general solve (elastic layers) before direction-dependent ones before the
    rest (a longest-first schedule)."""
    kind = {"band": 0, "leak": 1, "absorb": 2, "tone": 3, "leak-tone": 4}

    def rank(key):
        what, i = key
        s = leak_sets[i][0] if what.startswith("leak") else stacks[i]
        solve = 0 if needs_general_solve(s.layers) else 1 if not s.isotropic else 2
        return (kind[what] > 1, solve, kind[what])

    return {k: tasks[k] for k in sorted(tasks, key=rank)}


def distinct_items(grid, key):
    """The distinct items of a nested (P, Z) list (by ``key(item)``) and the (P, Z) index
    array into them."""
    seen, items = {}, []
    index = np.zeros((len(grid), len(grid[0]) if grid else 0), dtype=int)
    for p, row in enumerate(grid):  # a handful of packages and zones: object look-ups
        for z, item in enumerate(row):
            k = key(item)
            if k not in seen:
                seen[k] = len(items)
                items.append(item)
            index[p, z] = seen[k]
    return items, index


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
