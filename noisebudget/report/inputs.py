"""The study's inputs as report tables: air, cabin, spectra per band, tones, zones with
their offsets, flanking and bays, packages per zone (installation mass, structure
layers, leaks, flanking overrides), leaks with their dimensions and open areas, interior
sources, targets and the octave-to-third conversions made on reading.

Every table is built from the validated inputs the budget used (SI inside, display
units here); nothing is read from the file again. Inputs that a later budget adds
(dataclass fields not named here) are shown generically, so a new input is never
silently left out.
"""

from __future__ import annotations

from dataclasses import fields, is_dataclass

import numpy as np

from ..textout import plural
from .model import GENERAL, SIG3, TEXT, Column, Table, column, fmt

__all__ = ["band_inputs_table", "curve_text", "describe", "generic_table", "hz_text",
           "inputs_long", "inputs_model", "leaks_table", "package_zones_table",
           "packages_table", "source_levels_table", "sources_table", "stack_origins",
           "zone_bay", "zone_curves_table", "zones_table"]

INTERPOLATION = "linear in log frequency between the points, held beyond them"


def hz_text(f: float) -> str:
    """``63 Hz``, ``1 kHz``, ``1.25 kHz``."""
    return f"{f / 1000:g} kHz" if f >= 1000 else f"{f:g} Hz"


def curve_text(curve, signed: bool = False) -> str:
    """A dB curve in words: ``+3.0 dB at 63 Hz, ..., +1.0 dB at 4 kHz`` (points), or
    ``+2.0 dB at every frequency`` (one value); '-' for none."""
    if curve is None:
        return "-"
    style = "+.1f" if signed else ".1f"

    def db(v):
        text = format(float(v), style)
        return text.replace("-0.0", "0.0").replace("+-", "-") + " dB"

    if not curve.points_hz:
        return f"{db(curve.values_db[0])} at every frequency"
    return ", ".join(f"{db(v)} at {hz_text(f)}"
                     for f, v in zip(curve.points_hz, curve.values_db, strict=True))


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
        return f"{hz_text(nom[0])} to {hz_text(nom[-1])} ({plural(len(nom), 'band')})"
    if hasattr(v, "points_hz") and hasattr(v, "values_db"):  # a dB curve
        return curve_text(v)
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
    scalar = {k: all(isinstance(getattr(o, k), (int, float, np.integer, np.floating))
                     and not isinstance(getattr(o, k), bool) for o in objects) for k in keys}
    cols = []
    for k in keys:
        c = column(k)
        cols.append(c if scalar[k] else Column(k, c.header, TEXT, c.unit))
    rows = [[float(getattr(o, k)) if scalar[k] else describe(getattr(o, k)) for k in keys]
            for o in objects]
    return Table(cols, rows)


# ---------------------------------------------------------------------------------------
# zones

ZONE_FIELDS = ("name", "area", "exterior_offset", "flanking_tl", "panel", "panel_width",
               "panel_height")


def zone_bay(inp, zone):
    """``(width, height)`` in m of the zone's bay (finite panel), or None: from the zone
    where it carries one, else from its packages' stacks when they all agree."""
    panel = getattr(zone, "panel", None)
    if panel is not None:  # (width, height) in m
        return float(panel[0]), float(panel[1])
    w, h = getattr(zone, "panel_width", None), getattr(zone, "panel_height", None)
    if w and h:
        return float(w), float(h)
    found = {(float(p.stacks[zone.name].panel.width), float(p.stacks[zone.name].panel.height))
             for p in inp.packages if getattr(p.stacks[zone.name], "panel", None) is not None}
    return found.pop() if len(found) == 1 else None


def zones_table(result) -> Table:
    """Zones: area, exterior offset and flanking TL in words, bay size when given, and
    any further zone input generically."""
    inp = result.inputs
    bays = [zone_bay(inp, z) for z in inp.zones]
    cols = [Column("zone", "zone"), column("area_m2"),
            Column("exterior_offset", "exterior offset"),
            Column("flanking_tl", "flanking TL (path around the package)")]
    if any(bays):
        cols += [column("bay_width_mm"), column("bay_height_mm")]
    extra = [f.name for f in fields(inp.zones[0]) if f.name not in ZONE_FIELDS] \
        if inp.zones and is_dataclass(inp.zones[0]) else []
    cols += [Column(k, k.replace("_", " ")) for k in extra]
    rows = []
    for z, bay in zip(inp.zones, bays, strict=True):
        row = [z.name, float(z.area), curve_text(z.exterior_offset, signed=True),
               curve_text(z.flanking_tl) if z.flanking_tl is not None else "none"]
        if any(bays):
            row += [bay[0] * 1e3, bay[1] * 1e3] if bay else [None, None]
        row += [describe(getattr(z, k)) for k in extra]
        rows.append(row)
    return Table(cols, rows)


def zone_curves_table(result) -> Table:
    """Every point of the zones' exterior offsets and flanking TL, and of the packages'
    own flanking overrides: one row per point (no frequency: one value everywhere)."""
    inp = result.inputs
    origin = stack_origins(inp)
    rows = []

    def add(zone, by, what, curve):
        if curve is None:
            return
        if not curve.points_hz:
            rows.append([zone, by, what, None, float(curve.values_db[0])])
            return
        for f, v in zip(curve.points_hz, curve.values_db, strict=True):
            rows.append([zone, by, what, float(f), float(v)])

    for z in inp.zones:
        add(z.name, "zone", "exterior offset", z.exterior_offset)
        add(z.name, "zone", "flanking TL", z.flanking_tl)
        for p in inp.packages:
            if origin[p.name, z.name] == p.name and z.name in p.flanking:
                add(z.name, f"package {p.name}", "flanking TL", p.flanking[z.name])
    return Table([Column("zone", "zone"), Column("set_by", "given by"),
                  Column("quantity", "quantity"),
                  Column("frequency_hz", "frequency (Hz)", GENERAL, "Hz"),
                  Column("value_db", "value (dB)", "0.0", "dB")], rows)


# ---------------------------------------------------------------------------------------
# packages

def stack_origins(inp) -> dict:
    """``{(package, zone): package}`` naming, for every package's zone, the first package
    that defines that stack (a zone taken over with ``based_on`` shares its stack, its
    leaks, its flanking override and its installation mass with the package it came
    from)."""
    first: dict = {}
    out = {}
    for p in inp.packages:
        for z in inp.zones:
            out[p.name, z.name] = first.setdefault((z.name, id(p.stacks[z.name])), p.name)
    return out


def _layer_names(stack, picks) -> str:
    names = [f"{i} {label}" for i, (label, pick) in
             enumerate(zip(stack.labels, picks, strict=False), start=1) if pick]
    return "; ".join(names) or "none"


def packages_table(result) -> Table:
    """One row per package: the installation mass it gives, the packages whose zones it
    takes over, its notes."""
    inp = result.inputs
    origin = stack_origins(inp)
    rows = []
    for p in inp.packages:
        taken = {origin[p.name, z.name] for z in inp.zones} - {p.name}
        given = getattr(p, "based_on", None) or ", ".join(
            o for o in dict.fromkeys(origin[p.name, z.name] for z in inp.zones) if o in taken)
        rows.append([p.name, given or "-", float(p.installation_mass), p.notes or "-"])
    return Table([Column("package", "package"), Column("based_on", "zones taken over from"),
                  Column("installation_kg_m2", "installation mass given (kg/m²)", "0.00",
                         "kg/m²"),
                  Column("notes", "notes")], rows)


def package_zones_table(result) -> Table:
    """Per package and zone: who defines the zone, the installation mass it counts, the
    layers that are airframe structure (by name), the leaks and the flanking override."""
    inp = result.inputs
    origin = stack_origins(inp)
    mass = result.mass.set_index(["package", "zone"])
    rows = []
    for p in inp.packages:
        for z in inp.zones:
            st, own = p.stacks[z.name], origin[p.name, z.name]
            leaks = p.leaks.get(z.name, ())
            leak_text = "; ".join(f"{lk.name or 'unnamed'} ({fmt(lk.area * 1e6, '0.0')} mm²)"
                                  for lk in leaks) or "none"
            flank = p.flanking.get(z.name)
            rows.append([p.name, z.name, "this package" if own == p.name else f"{own} (taken over)",
                         float(mass.loc[(p.name, z.name), "installation_kg_m2"]),
                         _layer_names(st, p.structure.get(z.name, ())), leak_text,
                         curve_text(flank) if flank is not None else "zone value"])
    return Table([Column("package", "package"), Column("zone", "zone"),
                  Column("defined_by", "zone defined by"),
                  Column("installation_kg_m2", "installation (kg/m²)", "0.00", "kg/m²"),
                  Column("structure", "structure layers (airframe mass)"),
                  Column("leaks", "leaks (open area)"),
                  Column("flanking", "flanking TL")], rows)


def leaks_table(result) -> Table:
    """Every leak a package defines, with its shape, dimensions (mm), open area (mm²) and
    the layers it sits behind and bypasses. Leaks of a zone taken over with
    ``based_on`` are listed once, under the package that defines them."""
    inp = result.inputs
    origin = stack_origins(inp)
    rows = []
    for p in inp.packages:
        for z in inp.zones:
            if origin[p.name, z.name] != p.name:
                continue
            st = p.stacks[z.name]
            for lk in p.leaks.get(z.name, ()):
                a = lk.aperture
                slit = hasattr(a, "width")
                k = lk.behind_layer
                bypassed = [f"{i} {lab}" for i, lab in enumerate(st.labels, start=1) if i > k]
                rows.append([p.name, z.name, lk.name or "unnamed", "slit" if slit else "hole",
                             a.width * 1e3 if slit else None, a.length * 1e3 if slit else None,
                             None if slit else a.diameter * 1e3, a.depth * 1e3,
                             None if slit else int(a.count), lk.area * 1e6,
                             f"{k} {st.labels[k - 1]}" if k else "0 (opens to the exterior)",
                             "; ".join(bypassed)])
    return Table([Column("package", "package"), Column("zone", "zone"),
                  Column("leak", "leak"), Column("shape", "shape"),
                  column("width_mm"), column("length_mm"), column("diameter_mm"),
                  column("depth_mm"), Column("count", "count", "0"), column("open_area_mm2"),
                  Column("behind_layer", "behind layer"),
                  Column("bypasses", "bypasses layers")], rows)


# ---------------------------------------------------------------------------------------
# spectra, sources, cabin

def _given_as(bandwidth: str) -> str:
    return "octave bands, split into thirds" if bandwidth == "octave" \
        else "one-third-octave bands"


def sources_table(result) -> Table:
    """Interior sources: where they apply, how they were given, their bands and their
    overall A-weighted level."""
    from ..bands import a_weighting, energy_sum

    rows = []
    for s in result.inputs.interior_sources:
        nom = np.asarray(s.bands.nominal)
        dba = float(energy_sum(np.asarray(s.levels_db) + a_weighting(s.bands.centre)))
        rows.append([s.name, ", ".join(s.conditions) if s.conditions else "every condition",
                     _given_as(getattr(s, "input_bandwidth", "third")),
                     f"{hz_text(nom[0])} to {hz_text(nom[-1])}", dba])
    return Table([Column("source", "interior source"), Column("conditions", "sounds in"),
                  Column("given_as", "given in"), Column("bands", "bands"),
                  Column("level_dba", "overall level (dBA)", "0.0", "dBA")], rows)


def source_levels_table(result) -> Table:
    """Interior sources' one-third-octave levels as the budget adds them, one row per
    source and band."""
    rows = [[s.name, float(b), float(v)] for s in result.inputs.interior_sources
            for b, v in zip(s.bands.nominal, s.levels_db, strict=True)]
    return Table([Column("source", "interior source"), column("band_hz"),
                  Column("level_db", "interior level (dB)", "0.0", "dB")], rows)


def band_inputs_table(result) -> Table:
    """One row per band: each condition's exterior level, each interior source's level,
    the cabin's absorption area and reverberation time, the limit spectrum."""
    inp = result.inputs
    conds, sources = inp.conditions, inp.interior_sources
    nominal = sorted({float(b) for c in conds for b in c.bands.nominal}
                     | {float(b) for b in inp.cabin_bands.nominal})
    per = [dict(zip(map(float, c.bands.nominal), c.levels_db, strict=True)) for c in conds]
    per += [dict(zip(map(float, s.bands.nominal), s.levels_db, strict=True)) for s in sources]
    cols = [column("band_hz")]
    cols += [Column(f"exterior:{c.name}", f"{c.name} exterior (dB)", "0.0", "dB")
             for c in conds]
    cols += [Column(f"source:{s.name}", f"{s.name} in the cabin (dB)", "0.0", "dB")
             for s in sources]
    cabin = dict(zip(map(float, inp.cabin_bands.nominal), inp.cabin_area_m2, strict=True))
    volume = inp.meta.get("cabin", {}).get("volume_m3")
    cols.append(column("cabin_absorption_m2"))
    if volume:
        cols.append(column("cabin_t60_s"))
    limit = dict(zip(*inp.targets["limit"], strict=True)) if "limit" in inp.targets else {}
    if limit:
        cols.append(column("limit_db"))
    rows = []
    for b in nominal:
        row = [b, *[d.get(b) for d in per], cabin.get(b)]
        if volume:  # Sabine, A = 0.161 V / T60, read backwards
            row.append(0.161 * volume / cabin[b] if b in cabin else None)
        if limit:
            row.append(limit.get(b))
        rows.append(row)
    return Table(cols, rows)


def _air_table(meta) -> Table:
    air = meta.get("air", {})
    rows = [[side, a.temperature - 273.15, a.pressure / 1e3, a.density, a.sound_speed]
            for side, a in air.items()]
    return Table([Column("side", "air"), column("temperature_degc"), column("pressure_kpa"),
                  column("density_kg_m3"), column("sound_speed_m_s")], rows)


def _tones_table(inp) -> Table:
    rows = [[c.name, name, float(f), float(lv)] for c in inp.conditions
            for f, lv, name in zip(c.tones_hz, c.tone_levels_db,
                                   c.tone_names or [hz_text(x) for x in c.tones_hz],
                                   strict=True)]
    return Table([Column("condition", "condition"), Column("tone", "tone"),
                  column("tone_hz"), column("exterior_db")], rows)


def _targets(inp) -> list:
    out = []
    if "dba" in inp.targets:
        out.append(("interior level", f"{fmt(inp.targets['dba'])} dBA"))
    if "sil4" in inp.targets:
        out.append(("speech interference level SIL4", f"{fmt(inp.targets['sil4'])} dB"))
    if "limit" in inp.targets:
        out.append(("interior limit spectrum", "per band, in the spectra table"))
    return out


# inputs shown by the tables of this module; any other field of the study's inputs (added
# by a later budget) is shown generically
SHOWN_INPUTS = ("title", "conditions", "zones", "packages", "baseline", "cabin_area_m2",
                "cabin_bands", "exterior_convention", "incidence", "theta_max_deg",
                "include_package_absorption", "targets", "meta", "interior_sources")


def inputs_model(result) -> dict:
    """The study's inputs as tables and short texts (see the module notes)."""
    inp = result.inputs
    meta = inp.meta
    volume = meta.get("cabin", {}).get("volume_m3")
    given = meta.get("cabin", {}).get("absorption_given", "")
    cabin_text = [("volume", f"{fmt(volume, SIG3)} m³" if volume else "-"),
                  ("absorption given as", given.replace("_", " ") or "-"),
                  ("absorption of the packages added",
                   "yes" if inp.include_package_absorption else "no")]
    targets = _targets(inp)
    extra = []
    for name in [k for k in vars(inp) if k not in SHOWN_INPUTS]:
        value = getattr(inp, name)
        if isinstance(value, (list, tuple)) and value and is_dataclass(value[0]):
            extra.append((name.replace("_", " "), generic_table(value)))
        elif value not in (None, (), [], {}):
            targets.append((name.replace("_", " "), describe(value)))
    return {"air": _air_table(meta), "bands": band_inputs_table(result),
            "tones": _tones_table(inp), "zones": zones_table(result),
            "zone_curves": zone_curves_table(result), "packages": packages_table(result),
            "package_zones": package_zones_table(result), "leaks": leaks_table(result),
            "sources": sources_table(result), "source_levels": source_levels_table(result),
            "conversions": list(meta.get("conversions", [])), "targets": targets,
            "cabin": cabin_text, "extra": extra, "convention": inp.exterior_convention,
            "incidence": inp.incidence, "theta_max_deg": inp.theta_max_deg,
            "interpolation": INTERPOLATION}


def inputs_long(result, m: dict | None = None) -> tuple:
    """The inputs that are single values, one a row (section, item, value, unit), for
    the workbook: air, cabin, targets, the study's settings, the conversions made and any
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
    rows.append(["cabin", "absorption of the packages added",
                 dict(m["cabin"])["absorption of the packages added"], "", TEXT])
    for key, words, unit in (("dba", "interior level", "dBA"),
                             ("sil4", "speech interference level SIL4", "dB")):
        if key in inp.targets:
            rows.append(["target", words, inp.targets[key], unit, "0.0"])
    if "limit" in inp.targets:
        rows.append(["target", "interior limit spectrum", "per band, sheet Input spectra",
                     "", TEXT])
    rows.append(["study", "baseline", inp.baseline, "", TEXT])
    rows.append(["study", "incidence", inp.incidence, "", TEXT])
    if inp.incidence == "field":
        rows.append(["study", "limit angle", inp.theta_max_deg or 78.0, "deg", "0.0"])
    rows.append(["study", "exterior levels given as",
                 "blocked surface pressure" if inp.exterior_convention == "surface"
                 else "incident diffuse-field level", "", TEXT])
    rows.append(["study", "offsets and flanking between their points", INTERPOLATION, "",
                 TEXT])
    for text in m["conversions"] or ["none: every spectrum given in one-third-octave bands"]:
        rows.append(["conversion", "octave to one-third-octave bands", text, "", TEXT])
    for name, value in m["targets"][len(_targets(inp)):]:
        rows.append(["study", name, value, "", TEXT])
    for name, t in m["extra"]:
        flatten(name, t)
    cols = [Column("section", "section"), Column("item", "item"),
            Column("value", "value", "row"), Column("unit", "unit")]
    return Table(cols, [r[:4] for r in rows]), [r[4] for r in rows]

