"""The report model: one place that turns a study result into plain tables, labels and
number styles, which the PDF and the workbook both use.

A column's unit comes from the end of its name (``tl_db``, ``mass_kg``, ``area_m2``,
``thickness_mm``): the unit decides the header, the digits shown and the workbook's
number format, so a column that a later budget adds is labelled and formatted without a
change here. Numbers are never shown as ``-0.0``.

Nothing here computes acoustics except through the library's own functions (tile
curves come from :mod:`noisebudget.tiles`); everything else is selection, ordering and
formatting of the budget's tables.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field, fields, is_dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..textout import plural

__all__ = ["FAMILIES", "PALETTE", "Column", "Table", "build", "colours", "column", "fmt",
           "in_study_order", "input_hash", "layer_family", "parameter_rows"]

# number styles: Excel format codes; "3sf" is three significant figures, chosen per cell
GENERAL, MM, SIG3, TEXT = "General", "0.0#", "3sf", "@"

# name ending -> (unit shown, style); the first match wins, so longer endings come first
UNIT_ENDINGS = (
    ("_kg_m2", "kg/m²", "0.00"), ("_kg_m3", "kg/m³", "0.0"), ("_dba", "dBA", "0.0"),
    ("_db", "dB", "0.0"), ("_hz", "Hz", GENERAL), ("_kg", "kg", "0.0"), ("_m2", "m²", "0.0"),
    ("_m3", "m³", "0.0"), ("_mm", "mm", MM), ("_pct", "%", "0.0"), ("_m_s", "m/s", "0.0"),
    ("_kpa", "kPa", "0.00"), ("_degc", "°C", "0.0"), ("_deg", "deg", "0.0"),
    ("_s", "s", "0.00"), ("_g", "g", SIG3), ("_m", "m", "0.00"),
)

# columns whose plain-word name is not just the key with underscores as spaces
NAMES = {
    "band_hz": ("band", "Hz", GENERAL), "tone_hz": ("tone frequency", "Hz", "0.0"),
    "tl_db": ("TL",), "composite_tl_db": ("composite TL",),
    "exterior_db": ("exterior level",), "interior_db": ("interior level",),
    "interior_dbz": ("interior level, unweighted", "dB", "0.0"),
    "exterior_dbz": ("exterior level, unweighted", "dB", "0.0"),
    "interior_dba": ("interior level",), "exterior_dba": ("exterior level",),
    "sil4_db": ("SIL4",), "target_dba": ("target",), "margin_dba": ("margin",),
    "target_sil4_db": ("target SIL4",), "margin_sil4_db": ("margin SIL4",),
    "margin_limit_db": ("margin to limit spectrum",), "mass_kg": ("mass",),
    "dba_gain": ("gain over baseline", "dBA", "0.0"),
    "dba_gain_per_kg": ("gain per added kg", "dBA/kg", "0.000"),
    "stack_kg_m2": ("stack",), "installation_kg_m2": ("installation",),
    "stc": ("STC", "", "0"), "oitc": ("OITC", "", "0"), "rw": ("Rw", "dB", "0"),
    "c": ("C", "dB", "0"), "ctr": ("Ctr", "dB", "0"),
    "cabin_t60_s": ("reverberation time", "s", "0.00"),
    "cabin_absorption_m2": ("absorption area", "m²", "0.0"),
    "limit_db": ("interior limit",), "share_pct": ("share of interior A-weighted energy",),
    "temperature_degc": ("temperature",), "pressure_kpa": ("static pressure",),
    "density_kg_m3": ("density", "kg/m³", "0.000"), "sound_speed_m_s": ("speed of sound",),
    "tile_peak_hz": ("first TL peak", "Hz", "0.0"), "tile_dip_hz": ("first TL dip", "Hz", "0.0"),
    "treatment_mass_kg": ("treatment mass",), "treatment_kg_m2": ("treatment areal mass",),
    "max_interior_dba": ("interior level, loudest condition",),
    "max_sil4_db": ("SIL4, loudest condition",),
    "min_margin_dba": ("margin, worst condition",),
    "min_margin_sil4_db": ("margin SIL4, worst condition",),
    "min_margin_limit_db": ("margin to limit spectrum, worst condition",),
    "meets_targets": ("meets every target",),
}


_WORDS = {"tl": "TL", "sil4": "SIL4", "stc": "STC", "rw": "Rw", "oitc": "OITC"}


@dataclass(frozen=True)
class Column:
    """A table column: key, plain-word header with its unit, number style, unit."""

    key: str
    header: str
    style: str = TEXT
    unit: str = ""


def column(key: str, header: str | None = None) -> Column:
    """The column for ``key``: its unit from :data:`NAMES` or the end of the key.

    A key with a qualifier in brackets, ``interior_dba[cruise]`` (a trade study's metric of
    one condition or zone), is the column of ``interior_dba`` with the qualifier after its
    words: "interior level, cruise (dBA)".
    """
    if key.endswith("]") and "[" in key:
        base, qualifier = key[:-1].split("[", 1)
        c = column(base)
        words = c.header[:-len(c.unit) - 3] if c.unit else c.header
        head = header or (f"{words}, {qualifier} ({c.unit})" if c.unit
                          else f"{words}, {qualifier}")
        return Column(key, head, c.style, c.unit)
    words, unit, style = key.replace("_", " "), "", TEXT
    for end, u, s in UNIT_ENDINGS:
        if key.endswith(end) and len(key) > len(end):
            words, unit, style = key[:-len(end)].replace("_", " "), u, s
            break
    words = " ".join(_WORDS.get(w, w) for w in words.split(" "))
    if key in NAMES:
        spec = NAMES[key]
        words = spec[0]
        if len(spec) > 1:
            unit, style = spec[1], spec[2]
    head = header or (f"{words} ({unit})" if unit else words)
    return Column(key, head, style, unit)


@dataclass
class Table:
    """Columns and rows of plain values (str, float, int or None).

    A column whose style is ``"row"`` holds values of different units (one quantity per
    row); ``styles`` then gives each row's number style.
    """

    columns: list
    rows: list = field(default_factory=list)
    styles: list | None = None

    @classmethod
    def from_frame(cls, df: pd.DataFrame, keys=None, headers=None) -> Table:
        """A table of the frame's ``keys`` (default all) in frame order."""
        keys = [k for k in (keys or df.columns) if k in df.columns]
        cols = [column(k, (headers or {}).get(k)) for k in keys]
        rows = [[_plain(v) for v in row] for row in df[keys].itertuples(index=False)]
        return cls(cols, rows)

    def values(self, key: str) -> list:
        """One column's values."""
        j = [c.key for c in self.columns].index(key)
        return [r[j] for r in self.rows]


def _plain(v):
    if v is None or isinstance(v, str):
        return v
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (int, np.integer)):
        return int(v)
    if isinstance(v, (float, np.floating)):
        return None if not math.isfinite(v) else float(v)
    return str(v)


def decimals_3sf(v: float) -> int | None:
    """Decimals that show three significant figures; None beyond 1e6 or below 1e-3."""
    a = abs(v)
    if a == 0:
        return 0
    if a >= 1e6 or a < 1e-3:
        return None
    return max(0, 2 - math.floor(math.log10(a)))


def fmt(v, style: str = "0.0") -> str:
    """A value as text in ``style``; '-' for missing; never '-0.0'."""
    v = _plain(v)
    if v is None:
        return "-"
    if isinstance(v, str):
        return v
    if style == GENERAL:
        s = f"{v:g}"
    elif style == MM:
        s = f"{v:.1f}" if round(v, 1) == round(v, 2) else f"{v:.2f}"
    elif style == SIG3:
        d = decimals_3sf(v)
        s = f"{v:.3g}" if d is None else f"{v:.{d}f}"
    elif style == TEXT:
        s = str(v)
    else:
        d = len(style.split(".")[1]) if "." in style else 0
        s = f"{v:.{d}f}"
    if s.startswith("-") and float(s) == 0:
        s = s[1:]
    return s


def input_hash(files: dict) -> str:
    """SHA-256 over the input files' own SHA-256 digests and names, in name order: one
    value that changes when any input changes, wherever the files were kept."""
    lines = sorted(f"{digest}  {Path(p).name}" for p, digest in files.items())
    return hashlib.sha256("\n".join(lines).encode("utf-8")).hexdigest()


# series colours, the same in the PDF and the workbook (matplotlib's tab10 cycle)
PALETTE = ("1f77b4", "ff7f0e", "2ca02c", "d62728", "9467bd", "8c564b", "e377c2", "7f7f7f",
           "bcbd22", "17becf")


def colours(names) -> dict:
    """A fixed colour (hex, no '#') per name, in the order given."""
    return {n: PALETTE[i % len(PALETTE)] for i, n in enumerate(dict.fromkeys(names))}


# material families of the stack drawings: name, colour (Okabe-Ito palette), hatch
FAMILIES = {
    "skin / plate": ("#8c9bab", ""), "porous": ("#e6c25a", "..."),
    "air": ("#d8ecf8", ""), "septum": ("#7b3f98", ""), "trim / sandwich": ("#b07a3c", ""),
    "tile": ("#009e73", "xx"), "screen": ("#cc79a7", "||"), "other": ("#bbbbbb", ""),
}


def layer_family(layer, label: str = "") -> str:
    """The drawing family of a layer: from its type, and for plates from the catalog
    group of its label (``trim.*`` entries are sandwich trim panels)."""
    kind = getattr(layer, "type_name", "")
    group = label.split(".", 1)[0] if "." in label else ""
    if kind == "sandwich" or (kind == "plate" and group == "trim"):
        return "trim / sandwich"
    return {"plate": "skin / plate", "porous": "porous", "air": "air", "septum": "septum",
            "tile": "tile", "screen": "screen"}.get(kind, "other")


# layer parameter -> (unit shown, factor from SI, style)
_PARAMS = {
    "mass": ("g", 1e3, SIG3), "surface_density": ("kg/m²", 1.0, SIG3),
    "frame_areal_mass": ("kg/m²", 1.0, SIG3), "bending_stiffness": ("N·m", 1.0, SIG3),
    "flow_resistivity": ("Pa·s/m²", 1.0, SIG3), "flow_resistance": ("Pa·s/m", 1.0, SIG3),
    "tension": ("N/m", 1.0, SIG3), "youngs_modulus": ("GPa", 1e-9, SIG3),
    "face_youngs_modulus": ("GPa", 1e-9, SIG3), "shear_modulus": ("MPa", 1e-6, SIG3),
    "core_shear_modulus": ("MPa", 1e-6, SIG3), "in_plane_tension": ("N/m", 1.0, SIG3),
    "added_surface_density": ("kg/m²", 1.0, SIG3), "curvature_radius": ("m", 1.0, SIG3),
}
_LENGTHS = ("thickness", "gap", "radius", "pitch", "length", "width", "height", "diameter",
            "depth")


def _parameter_unit(name: str):
    base = name.rsplit(".", 1)[-1]
    for axis in ("_axial", "_hoop"):  # a plate's axis pairs: bending_stiffness_axial, ...
        base = base.removesuffix(axis)
    if base in _PARAMS:
        return _PARAMS[base]
    if base.endswith(_LENGTHS):
        return "mm", 1e3, MM
    if base.endswith("density"):
        return "kg/m³", 1.0, SIG3
    if base.endswith("modulus"):
        return "Pa", 1.0, SIG3
    return "-", 1.0, SIG3


def parameter_rows(layer) -> list:
    """``(parameter, value, unit, style)`` of a layer in display units (mm, g, GPa)."""
    out = []
    for name, value in layer.parameters().items():
        if name == "cells":
            for i, cell in enumerate(value, 1):
                for cn, cv in vars(cell).items():
                    out.append(_param(f"cell[{i}].{cn}", cv))
            continue
        out.append(_param(name, value))
    return out


def _param(name, value):
    unit, factor, style = _parameter_unit(name)
    if isinstance(value, (int, float, np.floating)) and not isinstance(value, bool):
        return name, float(value) * factor, unit, style
    if isinstance(value, (list, tuple, np.ndarray)):
        return name, ", ".join(fmt(float(v) * factor, style) for v in value), unit, TEXT
    return name, None if value is None else str(value), "-" if value is None else "", TEXT


def describe(v) -> str:
    """Short text for an input value of any shape (for inputs shown generically)."""
    if v is None:
        return "-"
    if isinstance(v, str):
        return v
    if isinstance(v, (bool, np.bool_)):
        return "yes" if v else "no"
    if isinstance(v, (int, float, np.integer, np.floating)):
        return fmt(float(v), SIG3)
    if hasattr(v, "nominal"):  # a band set
        nom = np.asarray(v.nominal)
        return f"{nom[0]:g} to {nom[-1]:g} Hz ({plural(len(nom), 'band')})"
    if is_dataclass(v):
        name = getattr(v, "name", None)
        return str(name) if name else "; ".join(f"{f.name} {describe(getattr(v, f.name))}"
                                                for f in fields(v))
    if isinstance(v, dict):
        return "; ".join(f"{k}: {describe(x)}" for k, x in v.items()) or "-"
    if isinstance(v, (list, tuple, np.ndarray)):
        items = list(v)
        if not items:
            return "-"
        text = ", ".join(describe(x) for x in items[:24])
        return text + (", ..." if len(items) > 24 else "")
    return str(v)


def generic_table(objects, skip=()) -> Table:
    """One row per dataclass object, one column per field (except ``skip``): numbers as
    numbers with units from their names, everything else described in words."""
    objects = list(objects)
    if not objects:
        return Table([])
    keys = [f.name for f in fields(objects[0]) if f.name not in skip]
    cols, rows = [], []
    scalar = {k: all(isinstance(getattr(o, k), (int, float, np.integer, np.floating))
                     and not isinstance(getattr(o, k), bool) for o in objects) for k in keys}
    for k in keys:
        c = column(k)
        cols.append(c if scalar[k] else Column(k, c.header, TEXT, c.unit))
    for o in objects:
        rows.append([float(getattr(o, k)) if scalar[k] else describe(getattr(o, k))
                     for k in keys])
    return Table(cols, rows)


# ---------------------------------------------------------------------------------------
# the model of one study result

def in_study_order(df: pd.DataFrame, inp, keys) -> pd.DataFrame:
    """Rows in the study's own order of conditions, packages and zones."""
    order = {"condition": [c.name for c in inp.conditions],
             "package": [p.name for p in inp.packages],
             "zone": [z.name for z in inp.zones] + ["all zones"]}
    tmp = df.copy()
    for k in keys:
        if k in order and k in tmp:
            extra = [v for v in dict.fromkeys(tmp[k]) if v not in order[k]]
            tmp[k] = pd.Categorical(tmp[k], categories=order[k] + extra, ordered=True)
    tmp = tmp.sort_values([k for k in keys if k in tmp], kind="stable")
    for k in keys:
        if k in order and k in tmp:
            tmp[k] = tmp[k].astype(str)
    return tmp.reset_index(drop=True)


SUMMARY_KEYS = ("condition", "package", "mass_kg", "added_mass_kg", "interior_dba",
                "sil4_db", "margin_dba", "margin_sil4_db", "margin_limit_db", "dba_gain",
                "dba_gain_per_kg")


def summary_table(result) -> Table:
    """Package by condition: mass, added mass, dBA, SIL4, margins, gain per added kg."""
    s = in_study_order(result.summary, result.inputs, ["condition", "package"])
    return Table.from_frame(s, SUMMARY_KEYS, {"mass_kg": "mass per aircraft (kg)"})


def zone_table(result) -> Table:
    """Ratings and mass per package and zone, then each package's total over its zones
    (with the composite ratings when the ratings table has them)."""
    inp = result.inputs
    rat, mass = result.ratings.copy(), result.mass.copy()
    composite = rat[rat["zone"] == "composite"].assign(zone="all zones")
    rat = rat[rat["zone"] != "composite"]
    sums = mass.groupby("package", sort=False).sum(numeric_only=True).reset_index()
    sums["zone"] = "all zones"
    if "area_m2" in sums and "mass_kg" in sums:
        sums["areal_mass_kg_m2"] = sums["mass_kg"] / sums["area_m2"]
    for k in [c for c in sums.columns if c.endswith("_kg_m2") and c != "areal_mass_kg_m2"]:
        sums[k] = np.nan  # an areal value does not add over zones
    per_zone = mass.merge(rat, on=["package", "zone"], how="outer")
    total = sums.merge(composite, on=["package", "zone"], how="left")
    df = in_study_order(pd.concat([per_zone, total], ignore_index=True), inp, ["package", "zone"])
    keys = ["package", "zone"] + [c for c in df.columns if c not in ("package", "zone")]
    return Table.from_frame(df, keys, {"mass_kg": "mass per aircraft (kg)"})


def tone_table(result) -> Table:
    """Each tone: exterior level, TL at the tone, interior level, where it comes in."""
    t = result.tones
    if t.empty:
        return Table([])
    t = in_study_order(t, result.inputs, ["condition", "package"])
    t = t.sort_values(["condition", "tone_hz"], kind="stable",
                      key=lambda s: s if s.name == "tone_hz" else s.map(
                          {c.name: i for i, c in enumerate(result.inputs.conditions)}))
    keys = ["condition", "tone", "tone_hz", "exterior_db", "package", "tl_db", "interior_db",
            "dominant_zone", "dominant_path"]
    return Table.from_frame(t, keys, {"tl_db": "TL at the tone (dB)",
                                      "dominant_zone": "dominant zone"})


def band_levels(result, condition: str) -> Table:
    """Interior band levels of one condition: a row per band, a column per package."""
    packages = [p.name for p in result.inputs.packages]
    d = result.bands[result.bands["condition"] == condition]
    pivot = d.pivot(index="band_hz", columns="package", values="interior_db")[packages]
    cols = [column("band_hz")] + [Column(p, f"{p} (dB)", "0.0", "dB") for p in packages]
    return Table(cols, [[float(b), *map(float, row)] for b, row in
                        zip(pivot.index, pivot.to_numpy(), strict=True)])


def band_levels_all(result) -> tuple:
    """Interior band levels of every condition and package in one table (a column per
    condition and package), with the column groups ``[(condition, n_columns)]``."""
    tables = [(c.name, band_levels(result, c.name)) for c in result.inputs.conditions]
    bands = sorted({r[0] for _, t in tables for r in t.rows})
    cols, groups, lookup = [column("band_hz")], [], []
    for name, t in tables:
        cols += [Column(f"{name}:{c.key}", c.key, c.style, c.unit) for c in t.columns[1:]]
        groups.append((name, len(t.columns) - 1))
        lookup.append({r[0]: r[1:] for r in t.rows})
    n = [len(t.columns) - 1 for _, t in tables]
    rows = [[b, *[v for lk, k in zip(lookup, n, strict=True) for v in lk.get(b, [None] * k)]]
            for b in bands]
    return Table(cols, rows), groups


def contribution_shares(result) -> pd.DataFrame:
    """Share of each contributor (zone, or zone and path) in the interior A-weighted
    energy, per package and condition, in percent."""
    from ..bands import a_weighting, third_octave_bands

    c = result.contributions.copy()
    label = c["zone"].astype(str) if "zone" in c else pd.Series("", index=c.index)
    if "path" in c:
        path = c["path"].fillna("wall").astype(str)
        label = label.where(path == "wall", (label + " " + path).str.strip())
    c["contributor"] = label.where(label.str.len() > 0, "other")
    lo, hi = float(c["band_hz"].min()), float(c["band_hz"].max())
    bands = third_octave_bands(lo, hi)
    weight = dict(zip(bands.nominal, a_weighting(bands.centre), strict=True))
    c["energy"] = 10 ** ((c["interior_db"] + c["band_hz"].map(weight)) / 10)
    g = c.groupby(["package", "condition", "contributor"], sort=False)["energy"].sum()
    total = g.groupby(level=[0, 1], sort=False).transform("sum")
    out = (100 * g / total).rename("share_pct").reset_index()
    return in_study_order(out, result.inputs, ["condition", "package"])


# inputs shown by their own tables above; any other field of the study's inputs (added by
# a later budget: interior sources, leaks, ...) is shown generically
SHOWN_INPUTS = ("title", "conditions", "zones", "packages", "baseline", "cabin_area_m2",
                "cabin_bands", "exterior_convention", "incidence", "theta_max_deg",
                "include_package_absorption", "targets", "meta")


def inputs_model(result) -> dict:
    """The study's inputs as tables: air, cabin and exterior bands, tones, zones,
    packages, targets, and any further inputs the study carries."""
    inp = result.inputs
    meta = inp.meta
    air = meta.get("air", {})
    air_rows = [[side, a.temperature - 273.15, a.pressure / 1e3, a.density, a.sound_speed]
                for side, a in air.items()]
    air_t = Table([Column("side", "air"), column("temperature_degc"), column("pressure_kpa"),
                   column("density_kg_m3"), column("sound_speed_m_s")], air_rows)
    # one row per band: each condition's exterior level, the cabin, the limit spectrum
    conds = inp.conditions
    nominal = sorted({float(b) for c in conds for b in c.bands.nominal}
                     | {float(b) for b in inp.cabin_bands.nominal})
    cols = [column("band_hz")] + [Column(f"exterior:{c.name}", f"{c.name} exterior (dB)",
                                         "0.0", "dB") for c in conds]
    per_cond = [dict(zip(map(float, c.bands.nominal), c.levels_db, strict=True))
                for c in conds]
    cabin = dict(zip(map(float, inp.cabin_bands.nominal), inp.cabin_area_m2, strict=True))
    volume = meta.get("cabin", {}).get("volume_m3")
    cols.append(column("cabin_absorption_m2"))
    if volume:
        cols.append(column("cabin_t60_s"))
    limit = dict(zip(*inp.targets["limit"], strict=True)) if "limit" in inp.targets else {}
    if limit:
        cols.append(column("limit_db"))
    rows = []
    for b in nominal:
        row = [b, *[pc.get(b) for pc in per_cond], cabin.get(b)]
        if volume:  # Sabine, A = 0.161 V / T60, read backwards
            row.append(0.161 * volume / cabin[b] if b in cabin else None)
        if limit:
            row.append(limit.get(b))
        rows.append(row)
    bands_t = Table(cols, rows)
    tone_rows = [[c.name, name, float(f), float(lv)] for c in conds
                 for f, lv, name in zip(c.tones_hz, c.tone_levels_db,
                                        c.tone_names or [f"{x:g} Hz" for x in c.tones_hz],
                                        strict=True)]
    tones_t = Table([Column("condition", "condition"), Column("tone", "tone"),
                     column("tone_hz"), column("exterior_db")],
                    tone_rows)
    zones_t = generic_table(inp.zones, skip=())
    zones_t.columns = [column("area_m2") if c.key == "area" else c for c in zones_t.columns]
    pkg_t = generic_table(inp.packages, skip=("stacks",))
    pkg_t.columns = [Column(c.key, "installation (kg/m²)", "0.00", "kg/m²")
                     if c.key == "installation_mass" else c for c in pkg_t.columns]
    targets = []
    if "dba" in inp.targets:
        targets.append(("interior level", f"{fmt(inp.targets['dba'])} dBA"))
    if "sil4" in inp.targets:
        targets.append(("speech interference level SIL4", f"{fmt(inp.targets['sil4'])} dB"))
    if limit:
        targets.append(("interior limit spectrum", "per band, in the band table"))
    given = meta.get("cabin", {}).get("absorption_given", "")
    cabin_text = [("volume", f"{fmt(volume, SIG3)} m³" if volume else "-"),
                  ("absorption given as", given.replace("_", " ") or "-"),
                  ("absorption of the packages added",
                   "yes" if inp.include_package_absorption else "no")]
    # inputs the budget carries beyond these (interior sources, leaks, ...): each list of
    # records becomes one more table, shown as it comes
    extra = []
    for name in [k for k in vars(inp) if k not in SHOWN_INPUTS]:
        value = getattr(inp, name)
        if isinstance(value, (list, tuple)) and value and is_dataclass(value[0]):
            extra.append((name.replace("_", " "), generic_table(value)))
        elif value not in (None, (), [], {}):
            targets.append((name.replace("_", " "), describe(value)))
    return {"air": air_t, "bands": bands_t, "tones": tones_t, "zones": zones_t,
            "packages": pkg_t, "targets": targets, "cabin": cabin_text, "extra": extra,
            "convention": inp.exterior_convention, "incidence": inp.incidence,
            "theta_max_deg": inp.theta_max_deg}


def inputs_long(result, m: dict | None = None) -> tuple:
    """The inputs that are not per band, one value a row (section, item, value, unit),
    for the workbook: air, cabin, zones, packages, targets, the study's settings and any
    further inputs the study carries. Returns the table and each row's number style."""
    m = m or inputs_model(result)
    inp = result.inputs
    rows = []

    def flatten(section, table):
        for r in table.rows:
            for c, v in list(zip(table.columns, r, strict=True))[1:]:
                words = c.header[:-len(c.unit) - 3] if c.unit else c.header
                rows.append([section, f"{r[0]}: {words}", v, c.unit, c.style])

    flatten("air", m["air"])
    volume = inp.meta.get("cabin", {}).get("volume_m3")
    rows.append(["cabin", "volume", volume, "m³", "0.0"])
    rows.append(["cabin", "absorption given as", dict(m["cabin"])["absorption given as"], "",
                 TEXT])
    flatten("zone", m["zones"])
    flatten("package", m["packages"])
    for key, words, unit in (("dba", "interior level", "dBA"),
                             ("sil4", "speech interference level SIL4", "dB")):
        if key in inp.targets:
            rows.append(["target", words, inp.targets[key], unit, "0.0"])
    if "limit" in inp.targets:
        rows.append(["target", "interior limit spectrum", "per band, sheet Exterior", "",
                     TEXT])
    rows.append(["study", "baseline", inp.baseline, "", TEXT])
    rows.append(["study", "incidence", inp.incidence, "", TEXT])
    if inp.incidence == "field":
        rows.append(["study", "limit angle", inp.theta_max_deg or 78.0, "deg", "0.0"])
    rows.append(["study", "exterior levels given as",
                 "blocked surface pressure" if inp.exterior_convention == "surface"
                 else "incident diffuse-field level", "", TEXT])
    for name, t in m["extra"]:
        flatten(name, t)
    cols = [Column("section", "section"), Column("item", "item"),
            Column("value", "value", "row"), Column("unit", "unit")]
    return Table(cols, [r[:4] for r in rows]), [r[4] for r in rows]


def stacks_model(result) -> list:
    """Every package's stack per zone (a stack taken over unchanged is named once)."""
    inp = result.inputs
    out, drawn = [], {}
    for p in inp.packages:
        for z in inp.zones:
            st = p.stacks[z.name]
            if id(st) in drawn:
                out.append({"package": p.name, "zone": z.name, "same_as": drawn[id(st)]})
                continue
            drawn[id(st)] = p.name
            layers = [{"n": i, "label": lab, "type": layer.type_name,
                       "family": layer_family(layer, lab), "thickness_mm": layer.thickness * 1e3,
                       "areal_mass_kg_m2": layer.areal_mass}
                      for i, (layer, lab) in enumerate(zip(st.layers, st.labels, strict=True),
                                                       1)]
            out.append({"package": p.name, "zone": z.name, "layers": layers,
                        "total_mm": st.thickness * 1e3, "total_kg_m2": st.areal_mass,
                        "notes": p.notes})
    return out


def tiles_model(result, fmin: float = 20.0, fmax: float = 2000.0, points: int = 600):
    """Each distinct tile layer alone at normal incidence: effective mass, TL and mass
    law curves, first dip and peak, and the peak's gain over the mass law."""
    from ..tiles import mass_law_tl, normal_tl, tile_extrema

    seen, curves, rows = set(), [], []
    f = np.geomspace(fmin, fmax, points)
    for p in result.inputs.packages:
        for zone, st in p.stacks.items():
            for layer, lab in zip(st.layers, st.labels, strict=True):
                if layer.type_name != "tile" or layer in seen:
                    continue
                seen.add(layer)
                label = f"{lab} ({p.name}, {zone})"
                curves.append({"label": label, "f_hz": f,
                               "mass": layer.effective_mass(2 * np.pi * f).real,
                               "tl_db": normal_tl(layer, f),
                               "mass_law_db": mass_law_tl(layer.areal_mass, f)})
                ext = tile_extrema(layer, 10.0, 5000.0)
                peak = float(ext.peak_hz[0]) if ext.peak_hz.size else None
                peak_db = float(ext.peak_db[0]) if ext.peak_hz.size else None
                gain = (peak_db - float(mass_law_tl(layer.areal_mass, [peak])[0])
                        if peak else None)
                rows.append([label, layer.areal_mass,
                             float(ext.dip_hz[0]) if ext.dip_hz.size else None, peak, peak_db,
                             gain])
    table = Table([Column("tile", "tile layer"), column("areal_mass_kg_m2"),
                   column("tile_dip_hz"), column("tile_peak_hz"),
                   Column("peak_db", "TL at the peak (dB)", "0.0", "dB"),
                   Column("gain_db", "gain over mass law (dB)", "0.0", "dB")], rows)
    return curves, table


def title_block(result) -> dict:
    """Study, programme, revision, author, date, tool version and input hash."""
    from .. import __version__

    inp = result.inputs
    files = getattr(result, "files", {}) or {}
    m = inp.meta
    return {"title": inp.title, "programme": m.get("programme", ""),
            "revision": m.get("revision", ""), "author": m.get("author", ""),
            "date": m.get("date", ""), "baseline": inp.baseline,
            "tool": f"noisebudget {__version__}", "input_hash": input_hash(files),
            "files": sorted((Path(p).name, d) for p, d in files.items()),
            "notes": m.get("notes", "")}


def build(result) -> dict:
    """Everything the PDF and the workbook show, as plain tables and values."""
    inp = result.inputs
    return {"title": title_block(result), "summary": summary_table(result),
            "zones": zone_table(result), "tones": tone_table(result),
            "inputs": inputs_model(result), "stacks": stacks_model(result),
            "band_levels": [(c.name, band_levels(result, c.name)) for c in inp.conditions],
            "band_levels_all": band_levels_all(result),
            "shares": contribution_shares(result),
            "packages": [p.name for p in inp.packages],
            "conditions": [c.name for c in inp.conditions],
            "zone_names": [z.name for z in inp.zones]}
