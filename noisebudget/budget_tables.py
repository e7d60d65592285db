"""The budget's tables (pandas DataFrames, units in column names), built once from arrays.

Each table is a view of the budget's arrays: the product of its coordinates, masked
where a row does not exist (a band outside a condition, a zone without leaks), with
the values raveled; the single-number ratings (a search per curve, ASTM E413, ISO
717-1) for every curve at once.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .bands import a_weighting
from .budget import PATHS, SOURCE_PATH, StudyInputs, StudyResult
from .ratings import rating_table
from .stack import TL_CAP_DB

__all__ = ["build_tables", "level_db", "tl_from_tau"]

_SIL4_OCTAVES = ((400, 500, 630), (800, 1000, 1250), (1600, 2000, 2500), (3150, 4000, 5000))


LEVEL_FLOOR_DB = -TL_CAP_DB  # a path that transmits nothing (tau below the TL cap)


def level_db(energy) -> np.ndarray:
    """``10 lg E`` of mean-square pressures re p0^2, floored at -300 dB (a path whose
    energy underflows to 0 is shown at the floor, never as -inf)."""
    return 10 * np.log10(np.maximum(energy, 10 ** (LEVEL_FLOOR_DB / 10)))


def tl_from_tau(tau) -> np.ndarray:
    """``-10 lg tau``, capped at 300 dB."""
    return -10 * np.log10(np.maximum(tau, 10 ** (-TL_CAP_DB / 10)))


def _composite(tau, areas, axis):
    """Area-weighted composite TL over the zone axis."""
    w = areas.reshape((-1,) + (1,) * (tau.ndim - axis - 1))
    return tl_from_tau(np.sum(w * tau, axis=axis) / np.sum(areas))


def build_tables(inp: StudyInputs, a: dict) -> StudyResult:
    """All result tables of a study from the arrays of
    :func:`noisebudget.budget.budget_arrays`."""
    pkgs = np.array([p.name for p in inp.packages], dtype=object)
    conds = np.array([c.name for c in inp.conditions], dtype=object)
    zones = np.array([z.name for z in inp.zones], dtype=object)
    bands, areas = a["bands"], a["areas"]
    nom = bands.nominal
    energy = a["energy"]                                        # (K, P, C, Z, B)
    src = a["source_energy"]                                    # (S, C, B)
    by_path = np.concatenate([energy.sum(axis=3),
                              np.broadcast_to(src.sum(axis=0), (1,) + energy.shape[1:3]
                                              + energy.shape[4:])])   # (K+1, P, C, B)
    total = by_path.sum(axis=0)                                 # (P, C, B)
    interior = level_db(total)
    tau_zone = a["tau"].sum(axis=0)                             # (P, Z, B)
    tl_pkg = tl_from_tau(a["wall_tau"])
    path_names = np.array([*PATHS, SOURCE_PATH], dtype=object)

    # bands: (P, C, B) where the band belongs to the condition
    p, c, b = np.nonzero(np.broadcast_to(a["in_condition"], total.shape))
    ext = a["exterior_db"]
    bands_df = pd.DataFrame({
        "package": pkgs[p], "condition": conds[c], "band_hz": nom[b],
        "exterior_db": ext[c, b],
        "composite_tl_db": _composite(a["wall_tau"], areas, 1)[p, b],
        "composite_zone_tl_db": _composite(tau_zone, areas, 1)[p, b],
        "interior_db": interior[p, c, b], "noise_reduction_db": ext[c, b] - interior[p, c, b],
        "dominant_zone": zones[np.argmax(energy.sum(axis=0), axis=2)][p, c, b],
        "dominant_path": path_names[np.argmax(by_path, axis=0)][p, c, b]})

    tl_df = _grid_frame({"package": pkgs, "zone": zones, "band_hz": nom},
                        {"tl_db": tl_pkg, "zone_tl_db": tl_from_tau(tau_zone)})
    return StudyResult(inp, _summary(inp, a, total, pkgs, conds), bands_df,
                       _contributions(a, pkgs, conds, zones, path_names), tl_df,
                       _mass(inp, pkgs, zones, areas), _ratings(pkgs, zones, nom, tl_pkg,
                                                               a["wall_tau"], areas),
                       _tones(a, pkgs, conds, zones, path_names, nom))


def _grid_frame(coords: dict, values: dict) -> pd.DataFrame:
    """A table over the product of ``coords`` (in order) with the arrays raveled."""
    grids = np.meshgrid(*coords.values(), indexing="ij")
    out = {k: g.ravel() for k, g in zip(coords, grids, strict=True)}
    out.update({k: np.asarray(v).ravel() for k, v in values.items()})
    return pd.DataFrame(out)


def _contributions(a, pkgs, conds, zones, path_names) -> pd.DataFrame:
    """One row per band and contributor (zone and path, or interior source); their
    energy sum is the band's interior level."""
    energy, src, nom = a["energy"], a["source_energy"], a["bands"].nominal
    exists = np.stack([np.ones_like(a["has_leak"]), a["has_leak"], a["has_flanking"]])
    # zone paths: (P, C, B, Z, K)
    e = np.moveaxis(energy, 0, -1).transpose(0, 1, 3, 2, 4)
    mask = a["in_condition"][None, :, :, None, None] & \
        np.moveaxis(exists, 0, -1)[:, None, None, :, :]
    p, c, b, z, k = np.nonzero(mask)
    rows = {"package": pkgs[p], "condition": conds[c], "band_hz": nom[b], "zone": zones[z],
            "path": path_names[k], "interior_db": level_db(e[p, c, b, z, k])}
    order = [(p, c, b, z * len(PATHS) + k)]
    # interior sources: (P, C, B, S) where the source is present
    names = np.array(a["source_names"], dtype=object)
    if src.size:
        ps, cs, bs, ss = np.nonzero(np.broadcast_to(
            (np.moveaxis(src, 0, -1) > 0)[None], (len(pkgs),) + src.shape[1:] + src.shape[:1]))
        extra = {"package": pkgs[ps], "condition": conds[cs], "band_hz": nom[bs],
                 "zone": names[ss], "path": np.full(ss.size, SOURCE_PATH, dtype=object),
                 "interior_db": level_db(src[ss, cs, bs])}
        rows = {k: np.concatenate([rows[k], extra[k]]) for k in rows}
        order.append((ps, cs, bs, len(zones) * len(PATHS) + ss))
    keys = [np.concatenate(x) for x in zip(*order, strict=True)]
    idx = np.lexsort(keys[::-1])
    return pd.DataFrame({k: v[idx] for k, v in rows.items()})


def _tones(a, pkgs, conds, zones, path_names, nom) -> pd.DataFrame:
    t = a["tones"]
    e = a["tone_energy"]                                         # (K, P, Z, T)
    areas = a["areas"]
    p, i = np.meshgrid(np.arange(len(pkgs)), np.arange(t["hz"].size), indexing="ij")
    p, i = p.ravel(), i.ravel()
    cols = ["package", "condition", "tone", "tone_hz", "exterior_db", "band_hz", "tl_db",
            "zone_tl_db", "interior_db", "dominant_zone", "dominant_path"]
    if not i.size:
        return pd.DataFrame(columns=cols)
    return pd.DataFrame({
        "package": pkgs[p], "condition": conds[t["condition"][i]], "tone": t["name"][i],
        "tone_hz": t["hz"][i], "exterior_db": t["level_db"][i], "band_hz": nom[t["band"][i]],
        "tl_db": _composite(a["wall_tone_tau"], areas, 1)[p, i],
        "zone_tl_db": _composite(a["tone_tau"].sum(axis=0), areas, 1)[p, i],
        "interior_db": level_db(e.sum(axis=(0, 2)))[p, i],
        "dominant_zone": zones[np.argmax(e.sum(axis=0), axis=1)][p, i],
        "dominant_path": path_names[np.argmax(e.sum(axis=2), axis=0)][p, i]}, columns=cols)


def _sil4(total, in_cond, nom) -> np.ndarray:
    """SIL4 (ANSI S3.14-1977): mean of the 500, 1000, 2000 and 4000 Hz octave levels,
    each the energy sum of its three thirds; NaN where a condition lacks a band."""
    lookup = {float(v): i for i, v in enumerate(nom)}
    if not all(float(f) in lookup for o in _SIL4_OCTAVES for f in o):
        return np.full(total.shape[:2], np.nan)
    idx = np.array([[lookup[float(f)] for f in o] for o in _SIL4_OCTAVES])   # (4, 3)
    octave = level_db(total[..., idx].sum(axis=-1))                          # (P, C, 4)
    valid = in_cond[:, idx].all(axis=(-1, -2))                               # (C,)
    return np.where(valid[None, :], octave.mean(axis=-1), np.nan)


def _summary(inp, a, total, pkgs, conds) -> pd.DataFrame:
    bands, t = a["bands"], a["tones"]
    aw = a_weighting(bands.centre)
    dba = level_db(np.sum(total * 10 ** (aw / 10), axis=-1))                 # (P, C)
    sil = _sil4(total, a["in_condition"], bands.nominal)
    ext_e = 10 ** (a["exterior_db"] / 10)                                    # 0 outside
    t_e = 10 ** (t["level_db"] / 10)
    t_a = a_weighting(t["hz"]) if t["hz"].size else np.empty(0)
    ncond = len(conds)
    ext_z = level_db(ext_e.sum(-1) + np.bincount(t["condition"], t_e, ncond))
    ext_a = level_db((ext_e * 10 ** (aw / 10)).sum(-1)
                     + np.bincount(t["condition"], t_e * 10 ** (t_a / 10), ncond))
    p, c = (g.ravel() for g in np.meshgrid(np.arange(len(pkgs)), np.arange(ncond),
                                            indexing="ij"))
    out = {"package": pkgs[p], "condition": conds[c],
           "interior_dbz": level_db(total.sum(-1))[p, c], "interior_dba": dba[p, c],
           "sil4_db": sil[p, c], "exterior_dbz": ext_z[c], "exterior_dba": ext_a[c],
           "noise_reduction_dba": ext_a[c] - dba[p, c]}
    targets = inp.targets
    if "dba" in targets:
        out["target_dba"] = np.full(p.size, targets["dba"])
        out["margin_dba"] = targets["dba"] - dba[p, c]
    if "sil4" in targets:
        out["target_sil4_db"] = np.full(p.size, targets["sil4"])
        out["margin_sil4_db"] = targets["sil4"] - sil[p, c]
    if "limit" in targets:
        lim_bands, lim = targets["limit"]
        limit = np.full(len(bands), np.nan)
        known = np.isin(bands.nominal, lim_bands)
        lookup = dict(zip(lim_bands, lim, strict=True))
        limit[known] = [lookup[v] for v in bands.nominal[known]]
        diff = np.where(a["in_condition"][None] & known, limit - level_db(total), np.nan)
        with np.errstate(invalid="ignore"):
            out["margin_limit_db"] = np.where(np.isnan(diff).all(-1), np.nan,
                                              np.nanmin(np.where(np.isnan(diff), np.inf,
                                                                 diff), axis=-1))[p, c]
    summary = pd.DataFrame(out)
    mass = _package_mass(inp)
    summary["mass_kg"] = summary["package"].map(mass["mass_kg"])
    summary["treatment_mass_kg"] = summary["package"].map(mass["treatment_mass_kg"])
    summary["added_mass_kg"] = summary["mass_kg"] - mass["mass_kg"][inp.baseline]
    base = summary[summary["package"] == inp.baseline].set_index("condition")["interior_dba"]
    gain = summary["condition"].map(base) - summary["interior_dba"]
    with np.errstate(divide="ignore", invalid="ignore"):
        per_kg = np.where(np.abs(summary["added_mass_kg"]) > 1e-9,
                          gain / summary["added_mass_kg"], np.nan)
    summary["dba_gain"] = gain
    summary["dba_gain_per_kg"] = per_kg
    return summary


def _zone_mass(inp):
    """(P, Z) arrays: stack, treatment (non-structure layers) and installation kg/m^2."""
    from .zone_paths import distinct_items

    grid = [[(pkg.stacks[z.name], pkg.structure.get(z.name)) for z in inp.zones]
            for pkg in inp.packages]
    items, index = distinct_items(grid, lambda x: (id(x[0]), x[1]))
    masses = [np.array([layer.areal_mass for layer in s.layers]) for s, _ in items]
    flags = [np.zeros(len(m), bool) if f is None else np.array(f, bool)
             for m, (_, f) in zip(masses, items, strict=True)]
    stack = np.array([m.sum() for m in masses])[index]
    treat = np.array([m[~f].sum() for m, f in zip(masses, flags, strict=True)])[index]
    inst = np.array([[pkg.installation.get(z.name, pkg.installation_mass) for z in inp.zones]
                     for pkg in inp.packages])
    return stack, treat, inst


def _package_mass(inp) -> dict:
    stack, treat, inst = _zone_mass(inp)
    areas = np.array([z.area for z in inp.zones])
    names = [p.name for p in inp.packages]
    return {"mass_kg": dict(zip(names, ((stack + inst) * areas).sum(-1), strict=True)),
            "treatment_mass_kg": dict(zip(names, ((treat + inst) * areas).sum(-1),
                                          strict=True))}


def _mass(inp, pkgs, zones, areas) -> pd.DataFrame:
    stack, treat, inst = _zone_mass(inp)
    df = _grid_frame({"package": pkgs, "zone": zones},
                     {"area_m2": np.broadcast_to(areas, stack.shape), "stack_kg_m2": stack,
                      "installation_kg_m2": inst, "areal_mass_kg_m2": stack + inst,
                      "mass_kg": (stack + inst) * areas, "treatment_kg_m2": treat + inst,
                      "treatment_mass_kg": (treat + inst) * areas})
    return df


def _ratings(pkgs, zones, nom, tl_pkg, wall_tau, areas) -> pd.DataFrame:
    """STC, Rw (C, Ctr) and OITC of each zone's package TL and of the area-weighted
    composite TL of each package (the package alone, as a laboratory rates it)."""
    curves = np.concatenate([tl_pkg, _composite(wall_tau, areas, 1)[:, None]], axis=1)
    labels = np.append(zones, "composite")
    table = rating_table(nom, curves.reshape(-1, curves.shape[-1]))
    return pd.DataFrame({"package": np.repeat(np.asarray(pkgs, dtype=object), labels.size),
                         "zone": np.tile(labels.astype(object), len(pkgs)), **table}
                        ).infer_objects()
