"""The noise and mass budget: zones, composite TL, interior levels, tones, targets, mass.

Pure functions on arrays and DataFrames; no file parsing here.

Interior level in the cabin's reverberant field (ISO 10140-2 / ISO 16283-1 relation
``R = L1 - L2 + 10 lg(S / A)`` rearranged): for each zone i of area S_i and band TL_i,
``L_int = 10 lg sum_i 10^((L_inc - TL_i + 10 lg(S_i / A)) / 10)``, where ``L_inc`` is the
incident diffuse-field level: the exterior level as given, or the blocked surface pressure
level minus 6.02 dB (pressure doubling). The cabin absorption area ``A`` comes from
Sabine's formula ``A = 0.161 V / T60`` or ``A = alpha S``. Composite TL of a wall:
``tau_c = sum S_i tau_i / sum S_i`` (Bies & Hansen, Engineering Noise Control, ch. 7).
Tones are transmitted with the narrowband TL at their own frequency and added as energy
to the band they fall in. A turbulent boundary layer is not an acoustic field: a
diffuse-field TL applied to it is an engineering approximation.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from .bands import Bands, a_weighting, energy_sum, third_to_octave
from .ratings import RatingError, ratings, sil4
from .stack import TL_CAP_DB

__all__ = ["Condition", "Package", "StudyInputs", "StudyResult", "Zone",
           "compute_budget", "interior_levels", "sabine_area"]

SURFACE_TO_INCIDENT_DB = 20 * np.log10(2.0)  # 6.02 dB: blocked surface pressure doubling


def sabine_area(volume_m3: float, t60_s) -> np.ndarray:
    """Sabine absorption area ``A = 0.161 V / T60`` in m^2 (Sabine; ISO 3382-2)."""
    return 0.161 * volume_m3 / np.asarray(t60_s, dtype=float)


@dataclass(frozen=True)
class Condition:
    """A flight condition: one-third-octave exterior levels and discrete tones."""

    name: str
    bands: Bands
    levels_db: np.ndarray
    tones_hz: np.ndarray = field(default_factory=lambda: np.empty(0))
    tone_levels_db: np.ndarray = field(default_factory=lambda: np.empty(0))
    tone_names: tuple = ()


@dataclass(frozen=True)
class Zone:
    """A part of the cabin wall with its area in m^2."""

    name: str
    area: float


@dataclass(frozen=True)
class Package:
    """A treatment package: a stack per zone plus installation mass per area (kg/m^2)."""

    name: str
    stacks: dict
    installation_mass: float = 0.0
    notes: str = ""


@dataclass(frozen=True)
class StudyInputs:
    """Everything the budget needs, in SI, already validated."""

    title: str
    conditions: tuple
    zones: tuple
    packages: tuple
    baseline: str
    cabin_area_m2: np.ndarray  # absorption area per band of ``cabin_bands``
    cabin_bands: Bands
    exterior_convention: str = "diffuse"  # or "surface"
    incidence: str = "field"
    theta_max_deg: float | None = None
    include_package_absorption: bool = False
    targets: dict = field(default_factory=dict)
    meta: dict = field(default_factory=dict)


@dataclass
class StudyResult:
    """Result tables (pandas DataFrames, units in column names)."""

    inputs: StudyInputs
    summary: pd.DataFrame
    bands: pd.DataFrame
    contributions: pd.DataFrame
    tl: pd.DataFrame
    mass: pd.DataFrame
    ratings: pd.DataFrame
    tones: pd.DataFrame

    def tables(self) -> dict:
        """All tables by name."""
        return {"summary": self.summary, "bands": self.bands,
                "contributions": self.contributions, "tl": self.tl, "mass": self.mass,
                "ratings": self.ratings, "tones": self.tones}


def interior_levels(incident_db, tl_by_zone_db, areas, absorption_m2):
    """Per-zone interior levels and their energy sum.

    Parameters
    ----------
    incident_db : (nb,) incident diffuse-field levels
    tl_by_zone_db : (nz, nb) band TL of each zone
    areas : (nz,) zone areas, m^2
    absorption_m2 : (nb,) cabin absorption area

    Returns
    -------
    per_zone : (nz, nb) dB; total : (nb,) dB
    """
    per_zone = (np.asarray(incident_db)[None, :] - np.asarray(tl_by_zone_db)
                + 10 * np.log10(np.asarray(areas)[:, None] / np.asarray(absorption_m2)[None, :]))
    return per_zone, energy_sum(per_zone, axis=0)


def _composite_tl(tau_by_zone, areas):
    tau = np.sum(np.asarray(areas)[:, None] * tau_by_zone, axis=0) / np.sum(areas)
    return -10 * np.log10(np.maximum(tau, 10 ** (-TL_CAP_DB / 10)))


def compute_budget(inp: StudyInputs) -> StudyResult:
    """Run the budget for every package and condition."""
    zones = inp.zones
    areas = np.array([z.area for z in zones])
    shift = -SURFACE_TO_INCIDENT_DB if inp.exterior_convention == "surface" else 0.0
    all_bands = _union_bands(inp)
    idx_cabin = inp.cabin_bands.index(all_bands.nominal)
    cabin_a = inp.cabin_area_m2[idx_cabin]
    a_w = a_weighting(all_bands.centre)
    rows_sum, rows_band, rows_contrib, rows_tl, rows_mass, rows_rat, rows_tone = ([] for _ in
                                                                                  range(7))
    masses = {}
    band_tl = _band_tl_all(inp, all_bands)  # by id(stack): shared zones computed once
    tone_f = np.unique(np.concatenate([c.tones_hz for c in inp.conditions]))
    tone_tau = {}  # by id(stack): narrowband tau at every tone frequency of the study
    for pkg in inp.packages:  # loop over packages and zones: a handful each
        stacks = [pkg.stacks[z.name] for z in zones]
        tl_z = np.array([band_tl[id(s)] for s in stacks])
        for s in stacks:
            if tone_f.size and id(s) not in tone_tau:
                tone_tau[id(s)] = s.average_transmission(tone_f, inp.incidence,
                                                         inp.theta_max_deg)
        tau_z = 10 ** (-tl_z / 10)
        absorption = cabin_a.copy()
        if inp.include_package_absorption:
            for s, z in zip(stacks, zones, strict=True):
                # seen from the cabin; energy transmitted out counts as absorbed
                absorption = absorption + z.area * s.reversed().random_incidence_absorption(
                    all_bands.centre, "receiver")
        for s, z, tl in zip(stacks, zones, tl_z, strict=True):
            rows_tl += [{"package": pkg.name, "zone": z.name, "band_hz": b, "tl_db": t}
                        for b, t in zip(all_bands.nominal, tl, strict=True)]
            try:
                r = ratings(all_bands.nominal, tl)
            except RatingError:
                r = {k: None for k in ("stc", "rw", "c", "ctr", "oitc")}
            rows_rat.append({"package": pkg.name, "zone": z.name, **r})
            m = s.areal_mass + pkg.installation_mass
            rows_mass.append({"package": pkg.name, "zone": z.name, "area_m2": z.area,
                              "stack_kg_m2": s.areal_mass,
                              "installation_kg_m2": pkg.installation_mass,
                              "areal_mass_kg_m2": m, "mass_kg": m * z.area})
        masses[pkg.name] = sum(r["mass_kg"] for r in rows_mass if r["package"] == pkg.name)
        tl_c = _composite_tl(tau_z, areas)
        for cond in inp.conditions:
            sel = all_bands.index(cond.bands.nominal)
            inc = cond.levels_db + shift
            per_zone, _ = interior_levels(inc, tl_z[:, sel], areas, absorption[sel])
            energy = 10 ** (per_zone / 10)
            names = cond.tone_names or tuple(f"{f:g} Hz" for f in cond.tones_hz)
            for f_t, l_t, name in zip(cond.tones_hz, cond.tone_levels_db, names, strict=True):
                b = cond.bands.containing([f_t])[0]
                k = np.searchsorted(tone_f, f_t)
                tau_t = np.array([tone_tau[id(s)][k] for s in stacks])
                tone_z = (l_t + shift + 10 * np.log10(np.maximum(tau_t, 1e-30))
                          + 10 * np.log10(areas / absorption[sel][b]))
                energy[:, b] += 10 ** (tone_z / 10)
                rows_tone.append({"package": pkg.name, "condition": cond.name, "tone": name,
                                  "tone_hz": f_t, "exterior_db": l_t,
                                  "band_hz": cond.bands.nominal[b],
                                  "tl_db": float(_composite_tl(tau_t[:, None], areas)[0]),
                                  "interior_db": float(energy_sum(tone_z)),
                                  "dominant_zone": zones[int(np.argmax(tone_z))].name})
            with np.errstate(divide="ignore"):
                per_zone = 10 * np.log10(energy)
            total = energy_sum(per_zone, axis=0)
            ext_total = energy_sum(np.append(cond.levels_db, cond.tone_levels_db))
            ext_a = energy_sum(np.concatenate([cond.levels_db + a_w[sel],
                                               cond.tone_levels_db + _a_at(cond.tones_hz)]))
            dba = float(energy_sum(total + a_w[sel]))
            octs, oct_lv = third_to_octave(cond.bands, total)
            try:
                sil = sil4(octs.nominal, oct_lv)
            except RatingError:
                sil = float("nan")
            dominant = [zones[i].name for i in np.argmax(per_zone, axis=0)]
            for j, b in enumerate(cond.bands.nominal):
                rows_band.append({"package": pkg.name, "condition": cond.name, "band_hz": b,
                                  "exterior_db": cond.levels_db[j],
                                  "composite_tl_db": tl_c[sel][j],
                                  "interior_db": total[j],
                                  "noise_reduction_db": cond.levels_db[j] - total[j],
                                  "dominant_zone": dominant[j]})
                for i, z in enumerate(zones):
                    rows_contrib.append({"package": pkg.name, "condition": cond.name,
                                         "band_hz": b, "zone": z.name,
                                         "interior_db": per_zone[i, j]})
            row = {"package": pkg.name, "condition": cond.name,
                   "interior_dbz": float(energy_sum(total)), "interior_dba": dba,
                   "sil4_db": sil, "exterior_dbz": float(ext_total),
                   "exterior_dba": float(ext_a), "noise_reduction_dba": float(ext_a) - dba}
            row.update(_margins(inp.targets, dba, sil, cond.bands, total))
            rows_sum.append(row)
    summary = pd.DataFrame(rows_sum)
    base_mass = masses[inp.baseline]
    summary["mass_kg"] = summary["package"].map(masses)
    summary["added_mass_kg"] = summary["mass_kg"] - base_mass
    base_dba = summary[summary["package"] == inp.baseline].set_index("condition")["interior_dba"]
    gain = summary["condition"].map(base_dba) - summary["interior_dba"]
    with np.errstate(divide="ignore", invalid="ignore"):
        per_kg = np.where(np.abs(summary["added_mass_kg"]) > 1e-9,
                          gain / summary["added_mass_kg"], np.nan)
    summary["dba_gain"] = gain
    summary["dba_gain_per_kg"] = per_kg
    return StudyResult(inp, summary, pd.DataFrame(rows_band), pd.DataFrame(rows_contrib),
                       pd.DataFrame(rows_tl), pd.DataFrame(rows_mass), pd.DataFrame(rows_rat),
                       pd.DataFrame(rows_tone, columns=["package", "condition", "tone",
                                                        "tone_hz", "exterior_db", "band_hz",
                                                        "tl_db", "interior_db",
                                                        "dominant_zone"]))


def _band_tl_all(inp: StudyInputs, bands: Bands) -> dict:
    """Band TL of every distinct stack of the study, keyed by ``id(stack)``.

    The stacks are independent, so they are computed on a small thread pool: numpy
    releases the GIL inside its large array operations, which lets two cores share the
    work.
    """
    import os
    from concurrent.futures import ThreadPoolExecutor

    unique = {id(s): s for p in inp.packages for s in p.stacks.values()}

    def one(s):
        return s.band_transmission_loss(bands, inp.incidence, inp.theta_max_deg)

    from .progress import track

    workers = min(len(unique), os.cpu_count() or 1)
    if workers <= 1:
        return {k: one(s) for k, s in track(unique.items(), what="transmission loss",
                                             unit="stack")}
    with ThreadPoolExecutor(max_workers=workers) as pool:
        done = track(pool.map(one, unique.values()), len(unique), "transmission loss",
                     "stack")
        return dict(zip(unique, done, strict=True))


def _a_at(f_hz):
    return a_weighting(np.asarray(f_hz, dtype=float)) if len(f_hz) else np.empty(0)


def _margins(targets, dba, sil, bands, total):
    out = {}
    if "dba" in targets:
        out["target_dba"] = targets["dba"]
        out["margin_dba"] = targets["dba"] - dba
    if "sil4" in targets:
        out["target_sil4_db"] = targets["sil4"]
        out["margin_sil4_db"] = targets["sil4"] - sil
    if "limit" in targets:
        lim_bands, lim = targets["limit"]
        common = [i for i, b in enumerate(bands.nominal) if b in set(lim_bands)]
        lookup = dict(zip(lim_bands, lim, strict=True))
        diffs = [lookup[bands.nominal[i]] - total[i] for i in common]
        out["margin_limit_db"] = float(min(diffs)) if diffs else float("nan")
    return out


def _union_bands(inp: StudyInputs) -> Bands:
    lo = min(c.bands.centre[0] for c in inp.conditions)
    hi = max(c.bands.centre[-1] for c in inp.conditions)
    from .bands import third_octave_bands

    return third_octave_bands(lo, hi)
