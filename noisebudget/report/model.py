"""The report model: one place that turns a study result into plain tables, labels and
number styles, which the PDF and the workbook both use.

A column's unit comes from the end of its name (``tl_db``, ``mass_kg``, ``area_m2``,
``thickness_mm``): the unit decides the header, the digits shown and the workbook's
number format, so a column that a later budget adds is labelled and formatted without a
change here. Numbers are never shown as ``-0.0``.

This module holds the primitives (columns, tables, number styles, families, colours) and
the results (summary, ratings, mass, tones, band levels, stacks, tiles); the inputs are
in :mod:`.inputs`, the paths into the cabin in :mod:`.paths`, the assumptions and
references in :mod:`.notes`, and :func:`build` gathers them all.

Nothing here computes acoustics except through the library's own functions (tile
curves come from :mod:`noisebudget.tiles`, ring frequencies and mounted tensions from
the layers); everything else is selection, ordering and formatting of the budget's
tables.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from ..textout import plural

__all__ = ["FAMILIES", "PALETTE", "Column", "Table", "band_levels", "band_levels_all", "build",
           "colours", "column", "fmt", "in_study_order", "input_hash", "layer_family",
           "layer_notes", "mass_table", "parameter_rows", "ratings_table", "sig3_text",
           "stacks_model", "stacks_table", "TOTAL_LABELS",
           "summary_table", "tiles_model", "title_block", "tone_table"]

# number styles: Excel format codes; "3sf" is three significant figures, chosen per cell
GENERAL, MM, SIG3, TEXT = "General", "0.0#", "3sf", "@"

# name ending -> (unit shown, style); the first match wins, so longer endings come first
UNIT_ENDINGS = (
    ("_kg_m2", "kg/m²", "0.00"), ("_kg_m3", "kg/m³", "0.0"), ("_dba", "dBA", "0.0"),
    ("_db", "dB", "0.0"), ("_hz", "Hz", GENERAL), ("_kg", "kg", "0.0"),
    ("_mm2", "mm²", "0.0"), ("_m2", "m²", "0.0"),
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
    "zone_tl_db": ("zone TL, with leaks and flanking",),
    "composite_zone_tl_db": ("composite zone TL, with leaks and flanking",),
    "treatment_mass_kg": ("treatment mass per aircraft",),
    "added_mass_kg": ("added mass over the baseline",),
    "treatment_kg_m2": ("treatment with installation",),
    "treatment_layers_kg_m2": ("treatment layers",), "structure_kg_m2": ("structure",),
    "areal_mass_kg_m2": ("total areal mass",),
    "band_share_pct": ("share of the band's energy",),
    "open_area_mm2": ("open area",), "bay_width_mm": ("bay width",),
    "bay_height_mm": ("bay height",), "level_dba": ("A-weighted level",),
    "noise_reduction_dba": ("noise reduction",), "noise_reduction_db": ("noise reduction",),
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
    "skin / plate": ("#8c9bab", ""), "porous": ("#e6c25a", "."),
    "air": ("#d8ecf8", ""), "septum": ("#7b3f98", ""), "trim / sandwich": ("#b07a3c", ""),
    "tile": ("#009e73", "xx"), "screen": ("#cc79a7", "||"),
    "foam, elastic frame": ("#e69f00", "o"), "elastic solid": ("#56606b", "\\\\"),
    "other": ("#bbbbbb", ""),
}


def layer_family(layer, label: str = "") -> str:
    """The drawing family of a layer: from its type, and for plates from the catalog
    group of its label (``trim.*`` entries are sandwich trim panels)."""
    kind = getattr(layer, "type_name", "")
    group = label.split(".", 1)[0] if "." in label else ""
    if kind == "sandwich" or (kind == "plate" and group == "trim"):
        return "trim / sandwich"
    if kind == "porous" and getattr(layer, "elastic", False):
        return "foam, elastic frame"
    return {"plate": "skin / plate", "porous": "porous", "air": "air", "septum": "septum",
            "tile": "tile", "screen": "screen", "solid": "elastic solid"}.get(kind, "other")


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


SUMMARY_KEYS = ("condition", "package", "mass_kg", "treatment_mass_kg", "added_mass_kg",
                "interior_dba", "sil4_db", "margin_dba", "margin_sil4_db", "margin_limit_db",
                "dba_gain", "dba_gain_per_kg")


def summary_table(result) -> Table:
    """Condition by package: mass and treatment mass per aircraft, added mass, dBA,
    SIL4, margins, gain per added kg."""
    s = in_study_order(result.summary, result.inputs, ["condition", "package"])
    return Table.from_frame(s, SUMMARY_KEYS, {"mass_kg": "mass per aircraft (kg)",
                                              "added_mass_kg": "added mass (kg)"})


COMPOSITE = "composite, area-weighted"
#: row labels of totals (drawn as such in the PDF)
TOTAL_LABELS = frozenset({"all zones", "all paths", COMPOSITE})
RATING_KEYS = ("stc", "rw", "c", "ctr", "oitc")


def ratings_table(result) -> Table:
    """Single-number ratings of each package's own TL per zone, then of its
    area-weighted composite TL (the row ``composite, area-weighted``)."""
    r = result.ratings.copy()
    r["zone"] = r["zone"].replace({"composite": COMPOSITE})
    zones = [z.name for z in result.inputs.zones]
    r["_z"] = r["zone"].map({z: i for i, z in enumerate([*zones, COMPOSITE])})
    r = in_study_order(r.sort_values("_z", kind="stable"), result.inputs, ["package"])
    return Table.from_frame(r, ["package", "zone", *[k for k in RATING_KEYS if k in r]])


def mass_table(result) -> Table:
    """Mass per package and zone, split into airframe structure, treatment layers and
    installation, per m² and per aircraft; then each package's total over its zones
    (``all zones``: summed masses and areas, the area-weighted mean areal mass)."""
    inp = result.inputs
    m = result.mass.copy()
    if "treatment_kg_m2" in m:
        m["treatment_layers_kg_m2"] = m["treatment_kg_m2"] - m["installation_kg_m2"]
        m["structure_kg_m2"] = m["stack_kg_m2"] - m["treatment_layers_kg_m2"]
    sums = m.groupby("package", sort=False).sum(numeric_only=True).reset_index()
    sums["zone"] = "all zones"
    for k in [c for c in sums.columns if c.endswith("_kg_m2")]:
        sums[k] = np.nan  # an areal value does not add over zones
    if "area_m2" in sums and "mass_kg" in sums:
        sums["areal_mass_kg_m2"] = sums["mass_kg"] / sums["area_m2"]
    df = in_study_order(pd.concat([m, sums], ignore_index=True), inp, ["package", "zone"])
    keys = ["package", "zone", "area_m2", "structure_kg_m2", "treatment_layers_kg_m2",
            "installation_kg_m2", "areal_mass_kg_m2", "mass_kg", "treatment_mass_kg"]
    keys += [c for c in df.columns if c not in keys and c not in ("stack_kg_m2",
                                                                   "treatment_kg_m2")]
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
    keys = ["condition", "tone", "tone_hz", "exterior_db", "package", "tl_db", "zone_tl_db",
            "interior_db", "dominant_zone", "dominant_path"]
    return Table.from_frame(t, keys, {"tl_db": "package TL at the tone (dB)",
                                      "zone_tl_db": "zone TL at the tone (dB)",
                                      "dominant_zone": "dominant zone",
                                      "dominant_path": "dominant path"})


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



def sig3_text(v) -> str:
    """Three significant figures in words' text, no padding zeros (``0.01``, ``30``,
    ``1.45``)."""
    return f"{float(v):.3g}"


_g = sig3_text


_POROUS_MODELS = {"delany-bazley": "Delany-Bazley", "miki": "Miki",
                  "jca": "JCA, rigid frame", "jca-limp": "JCA, limp frame",
                  "biot": "Biot, elastic frame"}


def layer_notes(stack, i: int) -> str:
    """The model facts of layer ``i`` (0-based) of a stack, in words: curvature and ring
    frequency, smeared stiffeners, in-plane tension as mounted (given, or from the
    pressure difference), the sandwich core's shear modulus, the porous model, the gap's
    loss factor, the tile's frame. Values come from the layers themselves."""
    layer, mounted = stack.layers[i], stack.mounted_layers[i]
    kind = getattr(layer, "type_name", "")
    out = []
    if kind == "plate":
        radius = getattr(layer, "curvature_radius", np.inf)
        if np.isfinite(radius):
            out.append(f"curved, radius {_g(radius)} m, ring frequency "
                       f"{fmt(layer.ring_frequency(), '0')} Hz")
        da, dh = layer.stiffnesses
        if da != dh:
            out.append(f"stiffened, D {_g(da)} N·m axial, {_g(dh)} N·m hoop")
        na, nh = mounted.tensions
        if na or nh:
            origin = "given" if layer.in_plane_tension is not None else \
                "from the pressure difference"
            out.append(f"tension {_g(na / 1e3)} kN/m axial, {_g(nh / 1e3)} "
                       f"kN/m hoop ({origin})")
        out.append(f"loss factor {_g(layer.loss_factor)}")
    elif kind == "sandwich":
        out.append(f"core shear modulus {_g(layer.core_shear_modulus / 1e6)} MPa, "
                   f"loss factor {_g(layer.loss_factor)}")
    elif kind == "porous":
        out.append(_POROUS_MODELS.get(layer.model, layer.model))
    elif kind == "air" and getattr(layer, "loss_factor", 0.0):
        out.append(f"cavity loss factor {_g(layer.loss_factor)}")
    elif kind == "solid":
        out.append(f"elastic solid, E {_g(layer.youngs_modulus / 1e6)} MPa, "
                   f"loss factor {_g(layer.loss_factor)}")
    elif kind == "tile":
        out.append(f"{layer.frame} frame, {plural(len(layer.cells), 'cell kind')}")
    elif kind == "septum":
        out.append("limp mass")
    return "; ".join(out)


def layer_contact(stack, i: int) -> str:
    """How layer ``i`` (0-based) meets the previous one where that matters: ``bonded`` or
    ``unbonded`` when either is elastic (a solid or a Biot layer), or when given as
    unbonded; '' otherwise."""
    if i == 0:
        return ""
    bonding = stack.bonding[i] if i < len(stack.bonding) else "bonded"
    elastic = any(getattr(stack.layers[j], "elastic", False) for j in (i - 1, i))
    return f"{bonding} to {i}" if elastic or bonding != "bonded" else ""


def stacks_model(result) -> list:
    """Every package's stack per zone (a stack taken over unchanged is named once): its
    layers with family, role (airframe structure or treatment), contact and model
    notes, its totals and its bay."""
    inp = result.inputs
    out, drawn = [], {}
    for p in inp.packages:
        for z in inp.zones:
            st = p.stacks[z.name]
            if id(st) in drawn:
                out.append({"package": p.name, "zone": z.name, "same_as": drawn[id(st)]})
                continue
            drawn[id(st)] = p.name
            structure = tuple(p.structure.get(z.name, ())) + (False,) * len(st.layers)
            layers = [{"n": i, "label": lab, "type": layer.type_name,
                       "family": layer_family(layer, lab), "thickness_mm": layer.thickness * 1e3,
                       "areal_mass_kg_m2": layer.areal_mass,
                       "role": "structure" if structure[i - 1] else "treatment",
                       "contact": layer_contact(st, i - 1), "notes": layer_notes(st, i - 1)}
                      for i, (layer, lab) in enumerate(zip(st.layers, st.labels, strict=True),
                                                       1)]
            panel = getattr(st, "panel", None)
            out.append({"package": p.name, "zone": z.name, "layers": layers,
                        "total_mm": st.thickness * 1e3, "total_kg_m2": st.areal_mass,
                        "notes": p.notes, "contacts": any(r["contact"] for r in layers),
                        "bay": None if panel is None else
                        f"{fmt(panel.width * 1e3, '0')} mm x {fmt(panel.height * 1e3, '0')} mm"})
    return out


def stacks_table(stacks: list) -> Table:
    """The layers of every stack as one table (the workbook's Stacks sheet)."""
    rows = []
    for s in stacks:
        if "same_as" in s:
            rows.append([s["package"], s["zone"], None, f"same stack as {s['same_as']}",
                         None, None, None, None, None, None, None])
            continue
        for r in s["layers"]:
            rows.append([s["package"], s["zone"], r["n"], r["label"], r["family"], r["type"],
                         r["role"], r["thickness_mm"], r["areal_mass_kg_m2"],
                         r["contact"] or None, r["notes"] or None])
    return Table([Column("package", "package"), Column("zone", "zone"),
                  Column("n", "layer", "0"), Column("label", "name"),
                  Column("family", "material family"), Column("type", "type"),
                  Column("role", "mass counted as"), column("thickness_mm"),
                  Column("areal_mass_kg_m2", "areal mass (kg/m²)", "0.00", "kg/m²"),
                  Column("contact", "contact with the previous layer"),
                  Column("notes", "model")], rows)


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
    table = Table([Column("tile", "tile layer"),
                   Column("areal_mass_kg_m2", "areal mass (kg/m²)", "0.00", "kg/m²"),
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
    from .inputs import inputs_model
    from .notes import REFERENCES, assumptions
    from .paths import (
        band_contributions,
        contributor_colours,
        contributors,
        dominant_by_band,
        dominant_runs,
        path_levels,
        path_table,
    )

    inp = result.inputs
    conditions = [c.name for c in inp.conditions]
    stacks = stacks_model(result)
    return {"title": title_block(result), "summary": summary_table(result),
            "ratings": ratings_table(result), "mass": mass_table(result),
            "tones": tone_table(result), "inputs": inputs_model(result), "stacks": stacks,
            "stack_layers": stacks_table(stacks),
            "band_levels": [(c, band_levels(result, c)) for c in conditions],
            "band_levels_all": band_levels_all(result),
            "paths": [(c, path_table(result, c)) for c in conditions],
            "paths_all": path_table(result),
            "path_levels": path_levels(result),
            "dominant": dominant_runs(result),
            "dominant_by_band": dominant_by_band(result),
            "band_contributions": band_contributions(result),
            "contributors": contributors(result),
            "contributor_colours": contributor_colours(result),
            "assumptions": assumptions(result), "references": REFERENCES,
            "packages": [p.name for p in inp.packages], "conditions": conditions,
            "zone_names": [z.name for z in inp.zones]}
