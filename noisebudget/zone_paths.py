"""Transmission coefficients of every distinct stack and leak of a study, computed once.

This is the physics kernel of the budget: band averages (energy, never dB) over the
study's one-third-octave bands and narrowband values at the tones' frequencies, for
each distinct package stack (packages built with ``based_on`` share stack objects) and
each group of leaks. Stacks of one structure (the variants of a trade study, each a
package of one budget) are computed as one batch along a leading variants axis
(:meth:`~noisebudget.stack.Stack.band_transmission_losses`, :mod:`noisebudget.batch`);
a variant's numbers do not depend on which variants share its batch. The batches and
each stack the batch cannot take (the general solve of elastic layers, nested azimuth
averages) are independent tasks on a small thread pool (numpy and the compiled kernels
release the GIL), the dearest first; then the leaks, whose tolerances follow from the
walls, and the package absorption.

A zone with a bay (``Zone.panel``) puts every package's stack on it into that bay
(:meth:`~noisebudget.stack.Stack.with_panel`): its band and tone transmission include
the finite-size radiation correction. The bay is the panel radiating into the cabin; the
layers in front of a leak radiate into the cavity and keep the infinite stack.

A leak behind the first k layers of a stack transmits ``tau_front(f) * tau_leak(f)``,
with ``tau_front`` the transmission of those layers into the cavity air (the leak then
joins the cavity air to the cabin); the band value is the band average of that product.
A leak is one path of its zone: its band value is held to the budget's 2 % of the
zone's wall power ``S tau_wall`` or of itself, whichever is larger, but never looser
than 10 % of itself (0.41 dB), so that its own level in the reports keeps a stated
accuracy (the demo sidewall's leak, 20 dB and more below its wall, takes about 40 %
fewer angle points than at 2 % of itself). The fronts of all
leak groups are batched like the stacks, and each leak's own transmission (which depends
on the frequency and the airs only) is computed once per distinct frequency.
"""

from __future__ import annotations

import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import replace

import numpy as np

from . import batch
from .bands import Bands, band_average
from .multilayer import needs_general_solve

__all__ = ["LEAK_SELF_RTOL", "WALL_RTOL", "distinct_items", "zone_transmissions"]

# Estimated relative accuracy of the budget's transmission coefficients (walls' bands and
# tones, leak fronts): 2e-2 is 0.086 dB estimated, within the 0.1 dB a trade variant must
# hold of its single run; the estimates are conservative: over every demo stack in its bay
# to 10 kHz the realised band error is at most 0.030 dB, and 0.017 dB with every skin
# flat and no bay (against runs at 3e-5)
WALL_RTOL = 2e-2
_LEAK_RTOL = WALL_RTOL
# A leak path is one part of its zone's power: its band value is held to _LEAK_RTOL of the
# zone's wall power (S tau_wall; the least over the cells the leak set serves) or of
# itself, whichever is larger, but to LEAK_SELF_RTOL of itself at worst (0.41 dB), so that a
# path's own level in the reports keeps a stated accuracy
LEAK_SELF_RTOL = 0.1


def _by_class(stacks, method: str, *args) -> np.ndarray:
    """``cls.method(stacks_of_cls, *args)`` for each stack class present (a subclass may
    remember results, e.g. a trade study's known stacks), rows in the stacks' order."""
    out = None
    for cls in dict.fromkeys(type(s) for s in stacks):  # a loop over a class or two
        idx = [i for i, s in enumerate(stacks) if type(s) is cls]
        part = getattr(cls, method)([stacks[i] for i in idx], *args)
        if out is None:
            out = np.empty((len(stacks), part.shape[1]))
        out[idx] = part
    return out


def _leak_terms(leak_sets):
    """One term per group of leaks behind the same layer: ``(set, front, leaks, airs)``,
    with ``front`` the layers in front of the leaks (into the cavity air) or None."""
    terms = []
    for i, (stack, leaks) in enumerate(leak_sets):
        for behind, group in _groups(leaks).items():
            if behind:
                front = replace(stack, layers=stack.layers[:behind],
                                labels=stack.labels[:behind], receiver_air=stack.cavity_air)
                airs = (stack.cavity_air, stack.receiver_air, stack.cavity_air)
            else:
                front, airs = None, (stack.source_air, stack.receiver_air, stack.cavity_air)
            terms.append((i, front, group, airs))
    return terms


def _leak_area(terms, n_sets, sets, f, incidence, theta_max_deg, atol=None):
    """``sum S_l tau_l(f) tau_front(f)`` (m^2) of the leak set ``sets[p]`` at ``f[p]``, per
    point: the terms of a set in order (a loop over term positions, a set has few), each
    leak's transmission once per distinct frequency, the fronts batched. With ``atol``
    (m^2 per point: the band's tolerance of the set), the fronts' angle integrals take
    ``_INNER`` times its share per term as their own absolute tolerance, up to
    ``_INNER * LEAK_SELF_RTOL`` of themselves (:func:`noisebudget.batch.average_rows`)."""
    out = np.zeros(f.size)
    if not terms:
        return out
    owner = np.array([t[0] for t in terms])  # ascending: a set's terms are consecutive
    first = np.searchsorted(owner, np.arange(n_sets + 1))
    count = np.diff(first)
    for j in range(int(count.max())):  # term positions within a set
        sel = np.flatnonzero(count[sets] > j)
        if not sel.size:
            continue
        term = first[sets[sel]] + j
        area = np.zeros(sel.size)
        apertures = {}  # the leaks' own transmission: once per group of leaks and airs
        for k in np.unique(term):  # a loop over distinct leak groups
            key = (terms[k][2], terms[k][3])
            apertures.setdefault(key, []).append(k)
        for (leaks, airs), ks in apertures.items():
            mine = np.isin(term, ks)
            freqs, back = np.unique(f[sel[mine]], return_inverse=True)
            total = sum(lk.area * lk.aperture.average_transmission(
                freqs, incidence, theta_max_deg, *airs) for lk in leaks)
            area[mine] = total[back]
        fronts = [terms[k][1] for k in range(len(terms))]
        has = np.array([fr is not None for fr in fronts])[term]
        if has.any():
            used = sorted(set(term[has].tolist()))
            where = {k: n for n, k in enumerate(used)}
            inner = None
            if atol is not None:  # the band's share of this term, as tau_front
                with np.errstate(divide="ignore", invalid="ignore"):
                    inner = batch._INNER * atol[sel[has]] / count[sets[sel[has]]] / area[has]
                inner = np.where(np.isfinite(inner), inner, 0.0)  # no leak: rtol
            area[has] = area[has] * batch.average_rows(
                [fronts[k] for k in used], np.array([where[k] for k in term[has]]),
                f[sel[has]], incidence, theta_max_deg, batch._INNER * _LEAK_RTOL,
                atol=inner, rtol_max=batch._INNER * LEAK_SELF_RTOL)
        out[sel] += area
    return out


def zone_transmissions(inp, bands: Bands, tone_hz, rtol: float = WALL_RTOL) -> dict:
    """Transmission of each package's zones over ``bands`` and at ``tone_hz``.

    Each distinct stack and each distinct set of leaks (with its stack) is computed once;
    the results are gathered onto the (package, zone) grid by index arrays. ``rtol`` is
    the walls' estimated relative accuracy (band averages, with the angle integral inside
    at ``3 rtol``, and tones); the leaks' bands are held to 2 % of the zone's wall power
    or of themselves, and to 10 % of themselves at worst (``LEAK_SELF_RTOL``); their tones'
    fronts to 3 times 2 % of themselves (an angle integral's tolerance, as in a band).

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
    together = [i for i, s in enumerate(stacks) if batch.batchable(s)]
    alone = [i for i, s in enumerate(stacks) if not batch.batchable(s)]

    def walls(idx):
        chosen = [stacks[i] for i in idx]
        band = 10 ** (-_by_class(chosen, "band_transmission_losses", bands, inc, tmax,
                                 rtol) / 10)
        tone = (_by_class(chosen, "average_transmissions", tone_hz, inc, tmax, rtol)
                if tone_hz.size else np.empty((len(idx), 0)))
        return band, tone

    terms = _leak_terms(leak_sets)
    n_sets = len(leak_sets)

    def leak_paths(wall):
        if terms:
            atol = _LEAK_RTOL * _set_power(wall, s_idx, l_idx, zones, n_sets)

            def area(g, f):
                b = np.minimum(np.searchsorted(bands.upper, f), len(bands) - 1)
                return _leak_area(terms, n_sets, g, f, inc, tmax, atol[g, b])

            band = band_average(area, bands, _LEAK_RTOL, groups=n_sets, atol=atol,
                                rtol_max=LEAK_SELF_RTOL)
        else:
            band = np.zeros((n_sets, len(bands)))
        tone = _leak_area(terms, n_sets, np.repeat(np.arange(n_sets), tone_hz.size),
                          np.tile(tone_hz, n_sets), inc, tmax).reshape(n_sets, tone_hz.size)
        return band, tone

    tasks = {}  # the walls first: the leaks' tolerances follow from them
    for i in alone:  # stacks the batch cannot take: one task each, on the pool
        tasks["wall", i] = lambda i=i: walls([i])
    if together:
        tasks["batch", 0] = lambda: walls(together)
    done = _run(_longest_first(tasks, stacks))
    wall = np.empty((len(stacks), len(bands)))
    wall_tone = np.empty((len(stacks), tone_hz.size))
    for i in alone:
        wall[i], wall_tone[i] = done["wall", i][0][0], done["wall", i][1][0]
    if together:
        wall[together], wall_tone[together] = done["batch", 0]
    tasks = {("leak", 0): lambda: leak_paths(wall)}
    if inp.include_package_absorption:
        for i, s in enumerate(stacks):
            tasks["absorb", i] = lambda s=s: s.reversed().random_incidence_absorption(
                bands.centre, "receiver")
    done = _run(_longest_first(tasks, stacks))
    leak, leak_tone = done["leak", 0]

    absorption = inp.cabin_area_m2[inp.cabin_bands.index(bands.nominal)][None, :]
    if inp.include_package_absorption:
        areas = np.array([z.area for z in zones])
        absorbed = np.stack([done["absorb", i] for i in range(len(stacks))])[s_idx]
        absorption = absorption + np.sum(areas[None, :, None] * absorbed, axis=1)
    return {"wall": wall[s_idx],
            "wall_tone": wall_tone[s_idx],
            "leak_area": leak[l_idx],
            "leak_tone_area": leak_tone[l_idx],
            "open_area": np.array([sum(lk.area for lk in leaks) for _, leaks in leak_sets]
                                  )[l_idx],
            "absorption": np.broadcast_to(absorption, (len(pkgs), len(bands))).copy(),
            "tone_hz": tone_hz}


def _set_power(wall, s_idx, l_idx, zones, n_sets):
    """Per leak set and band, the least wall power ``S tau_wall`` (m^2) of the (package,
    zone) cells it serves: (n_sets, B)."""
    areas = np.array([z.area for z in zones])
    power = (areas[None, :, None] * wall[s_idx]).reshape(-1, wall.shape[1])
    out = np.full((n_sets, wall.shape[1]), np.inf)
    np.minimum.at(out, l_idx.ravel(), power)
    return out


def _longest_first(tasks: dict, stacks) -> dict:
    """The tasks reordered by a rough cost, dearest first, so that the thread pool does not
    start the longest one last: stacks of the general solve (elastic layers) before
    direction-dependent ones before the batch of the rest, then the leaks, then the
    absorption (a longest-first schedule)."""
    kind = {"wall": 0, "batch": 1, "leak": 2, "absorb": 3}

    def rank(key):
        what, i = key
        if what == "wall":
            s = stacks[i]
            return (0, 0 if needs_general_solve(s.layers) else 1 if not s.isotropic else 2)
        return (kind[what], 0)

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


WORKER_PREFIX = "noisebudget-paths"  # names of the worker threads


def _run(tasks: dict) -> dict:
    """Run the tasks, on a thread pool when there are several and several cores."""
    workers = min(len(tasks), os.cpu_count() or 1)
    if workers <= 1:
        return {k: fn() for k, fn in tasks.items()}
    pool = ThreadPoolExecutor(max_workers=workers, thread_name_prefix=WORKER_PREFIX)
    try:
        out = dict(zip(tasks, pool.map(lambda fn: fn(), tasks.values()), strict=True))
    except BaseException:  # SIGINT, SIGTERM or an error: start no further task
        pool.shutdown(wait=False, cancel_futures=True)
        raise
    pool.shutdown()
    return out
