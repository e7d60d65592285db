"""Study files (TOML): title block, air, cabin, conditions, zones, interior sources,
packages (stacks, leaks, flanking), targets, and the trade-study keys (``[[vary]]``,
``[trade]``; their rules across keys in :mod:`noisebudget.tradefile`).

The keys are declared section by section below (dicts of
:class:`~noisebudget.layers.base.Field`, read by :mod:`noisebudget.schema`), so that a
key is added with one line in its section and appears in the key reference. Every
problem of the file, and of the stack files it names, is collected; ``load_study``
raises :class:`~noisebudget.errors.InputErrors` when there is any, and what it accepts
``run_study`` computes: ``check`` and ``run`` share this one validation.
"""

from __future__ import annotations

import hashlib
from dataclasses import replace
from pathlib import Path

import numpy as np

from .catalog import load_catalog
from .checks import MAX_VARIANTS
from .finite_size import MAX_BAY_SIDE_M
from .layers.base import Field
from .media import Air
from .schema import INVALID, Reader, join, read_table, read_toml, suggest
from .stackfile import AIR_STATE, air_from, bonding_of, include_stack, read_layers, structure_of
from .trade.variants import DISTRIBUTIONS, TRADE_MODES

__all__ = ["AIR_SECTION", "CABIN", "CONDITION", "HOLE", "INTERIOR_SOURCE", "LoadedStudy",
           "PACKAGE", "PACKAGE_ZONE", "SLIT", "STUDY_FILE", "STUDY_SECTION", "TARGETS",
           "TARGET_METRICS", "TONE", "TRADE", "VARY", "ZONE", "load_study", "parse_study",
           "run_study"]

LEVEL = {"positive": False, "ge": -50.0, "le": 200.0}  # a band or tone level, dB
BANDWIDTH = Field("choice", choices=("third", "octave"), default="third",
                  doc="bandwidth of bands_hz and the values on them: \"octave\" levels are "
                      "split into three one-third octaves of equal energy (-4.77 dB each), "
                      "other values copied to them")

# ------------------------------------------------------------------ [study]
STUDY_SECTION: dict[str, Field] = {
    "title": Field("text", doc="title of the study (default: the file name)"),
    "programme": Field("text", doc="programme or aircraft"),
    "revision": Field("text", doc="revision of the study"),
    "author": Field("text", doc="author or team"),
    "date": Field("date", doc="date of the study"),
    "baseline": Field("name", doc="the package the others are compared with (default: the "
                                  "first)"),
    "incidence": Field("choice", choices=("normal", "field", "diffuse"), default="field",
                       doc="sound field on the wall"),
    "theta_max_deg": Field("deg", le=90.0, doc="limit angle of field incidence in degrees "
                                               "(default 78 for field, 90 for diffuse)"),
    "exterior_level": Field("choice", choices=("diffuse", "surface"), default="diffuse",
                            doc="the exterior levels are the incident diffuse-field level, "
                                "or blocked surface pressure (6 dB above it)"),
    "include_package_absorption": Field("boolean", default=False,
                                        doc="add each package's cabin-side absorption to the "
                                            "cabin's"),
    "notes": Field("text", doc="free text"),
}

# ------------------------------------------------------------------ [air]
AIR_SECTION: dict[str, Field] = {
    "exterior": Field("table", schema=AIR_STATE,
                      doc="exterior air (default 20 degC, 101.325 kPa)"),
    "cabin": Field("table", schema=AIR_STATE, doc="cabin air (default 22 degC, 101.325 kPa)"),
}

# ------------------------------------------------------------------ [cabin]
CABIN: dict[str, Field] = {
    "volume": Field("volume", required=True, doc="cabin volume (Sabine's formula)"),
    "bandwidth": BANDWIDTH,
    "bands_hz": Field("bands", required=True, doc="bands of the absorption values"),
    "absorption_area": Field("area", shape="list", length="bands_hz", group="absorption",
                             required=True, doc="absorption area per band"),
    "reverberation_time": Field("time", shape="list", length="bands_hz", group="absorption",
                                required=True, doc="reverberation time T60 per band "
                                                   "(A = 0.161 V / T60)"),
    "mean_absorption": Field("number", le=1.0, group="absorption", required=True,
                             needs=("surface_area",),
                             doc="mean absorption coefficient of all surfaces (A = alpha S)"),
    "surface_area": Field("area", needs=("mean_absorption",),
                          doc="total surface area, with mean_absorption"),
}

# ------------------------------------------------------------------ [[condition]]
TONE: dict[str, Field] = {
    "name": Field("name", doc="label of the tone (e.g. BPF)"),
    "frequency": Field("frequency", required=True, doc="tone frequency (inside the bands)"),
    "level_db": Field("db", required=True, **LEVEL, doc="tone level"),
}
CONDITION: dict[str, Field] = {
    "name": Field("name", required=True, doc="name of the flight condition"),
    "bandwidth": BANDWIDTH,
    "bands_hz": Field("bands", required=True, doc="bands of the exterior levels"),
    "levels_db": Field("db", shape="list", length="bands_hz", required=True, **LEVEL,
                       doc="exterior band levels"),
    "tone": Field("tables", schema=TONE, doc="discrete tones, one [[condition.tone]] each"),
    "notes": Field("text", doc="free text"),
}

# ------------------------------------------------------------------ [[zone]]
FLANKING: dict[str, Field] = {
    "flanking_tl_db": Field("db", allow_zero=True, le=200.0, shape="one_or_list",
                            length="flanking_bands_hz",
                            doc="TL of the path around the packages (frames, reveals), in "
                                "parallel with them: one value, or one per frequency of "
                                "flanking_bands_hz"),
    "flanking_bands_hz": Field("frequencies", needs=("flanking_tl_db",),
                               doc="frequencies of a list of flanking_tl_db (linear in lg f "
                                   "between them, constant outside)"),
}
ZONE: dict[str, Field] = {
    "name": Field("name", required=True, doc="name of the zone (packages refer to it)"),
    "area": Field("area", required=True, doc="wall area of the zone"),
    "exterior_offset_db": Field("db", positive=False, ge=-100.0, le=100.0,
                                shape="one_or_list", length="offset_bands_hz",
                                doc="added to the condition's levels and tones on this zone: "
                                    "one value, or one per frequency of offset_bands_hz"),
    "offset_bands_hz": Field("frequencies", needs=("exterior_offset_db",),
                             doc="frequencies of a list of exterior_offset_db (linear in lg f "
                                 "between them, constant outside; a tone takes the offset at "
                                 "its frequency)"),
    **FLANKING,
    "panel_width": Field("length", needs=("panel_height",), le=MAX_BAY_SIDE_M,
                         doc="width of the panel that radiates into the cabin on this zone "
                             "(e.g. a trim panel): with panel_height, every package's stack "
                             "on the zone is a finite bay of that size (finite-size radiation "
                             "correction by spatial windowing; a stack file's own [panel] is "
                             "ignored with a note); at most the zone's area"),
    "panel_height": Field("length", needs=("panel_width",), le=MAX_BAY_SIDE_M,
                          doc="height of that panel, with panel_width"),
    "notes": Field("text", doc="free text"),
}

# ------------------------------------------------------------------ [[interior_source]]
INTERIOR_SOURCE: dict[str, Field] = {
    "name": Field("name", required=True, doc="name of the source (not a zone's name)"),
    "bandwidth": BANDWIDTH,
    "bands_hz": Field("bands", required=True,
                      doc="bands of the levels (inside every condition it sounds in)"),
    "levels_db": Field("db", shape="list", length="bands_hz", required=True, **LEVEL,
                       doc="interior band levels in the cabin (air conditioning, "
                           "structure-borne noise)"),
    "conditions": Field("name", shape="list",
                        doc="the conditions it sounds in (default: every condition)"),
    "notes": Field("text", doc="free text"),
}

# ------------------------------------------------------------------ [[package]]
_LEAK_COMMON: dict[str, Field] = {
    "name": Field("name", doc="label of the leak"),
    "behind_layer": Field("integer", allow_zero=True, default=0,
                          doc="the leak opens behind the stack's first k layers (they "
                              "transmit to it, it bypasses the rest); 0: through the whole "
                              "wall"),
}
MAX_LEAK_DEPTH_M = 1.0  # a leak runs through a sidewall, not along a duct
SLIT: dict[str, Field] = {
    "width": Field("length", required=True, doc="narrow dimension of the slit"),
    "length": Field("length", required=True, doc="long dimension of the slit"),
    "depth": Field("length", required=True, allow_zero=True, le=MAX_LEAK_DEPTH_M,
                   doc="wall thickness the slit runs through"),
    **_LEAK_COMMON,
}
HOLE: dict[str, Field] = {
    "diameter": Field("length", required=True, doc="hole diameter"),
    "depth": Field("length", required=True, allow_zero=True, le=MAX_LEAK_DEPTH_M,
                   doc="wall thickness the hole runs through"),
    "count": Field("integer", ge=1, default=1, doc="number of holes, far apart"),
    **_LEAK_COMMON,
}
PACKAGE_ZONE: dict[str, Field] = {
    "layer": Field("layers", group="stack", required=True, read=read_layers,
                   doc="the zone's layers, exterior first (stack-file layer entries)"),
    "stack": Field("path", group="stack", required=True,
                   doc="a stack file holding the zone's layers (its air states are "
                       "ignored: the study's air governs)"),
    "leak": Field("tables", tag="shape", variants={"slit": SLIT, "hole": HOLE},
                  doc="an aperture in the zone's package (slit after Gomperts & Kihlman "
                      "1967, holes after Wilson & Soroka 1965); their open area must be "
                      "smaller than the zone's"),
    "flanking_tl_db": replace(FLANKING["flanking_tl_db"],
                              doc="this package's flanking TL on the zone, replacing the "
                                  "zone's: one value, or one per frequency of "
                                  "flanking_bands_hz"),
    "flanking_bands_hz": FLANKING["flanking_bands_hz"],
    "notes": Field("text", doc="free text"),
}
PACKAGE: dict[str, Field] = {
    "name": Field("name", required=True, doc="name of the package"),
    "based_on": Field("name", doc="an earlier package whose zones this one copies"),
    "installation_mass": Field("surface_density", allow_zero=True, default=0.0,
                               doc="fasteners, brackets and seals per unit area"),
    "notes": Field("text", doc="free text"),
    "zone": Field("named", schema=PACKAGE_ZONE,
                  doc="the stack of each zone: one table per zone NAME"),
}

# ------------------------------------------------------------------ [targets]
TARGETS: dict[str, Field] = {
    "dba": Field("db", **LEVEL, doc="interior A-weighted level target"),
    "sil4": Field("db", **LEVEL, doc="speech interference level target (SIL4)"),
    "limit_bands_hz": Field("bands", needs=("limit_db",), doc="bands of a limit curve"),
    "limit_db": Field("db", shape="list", length="limit_bands_hz", needs=("limit_bands_hz",),
                      **LEVEL, doc="interior band level limit"),
}
TARGET_METRICS = tuple(TARGETS)

# ------------------------------------------------------------------ [[vary]], [trade]
# values, range, mean, std, low, high and mode are read against the varied key's own
# field (its unit and range) once the entry's address is known (tradefile.read_trade)
VARY: dict[str, Field] = {
    "name": Field("name", doc="label of the parameter in tables and figures (default: its "
                              "address, e.g. sidewall.layer2.thickness)"),
    "package": Field("name", required=True,
                     doc="the package varied (every entry varies the same package)"),
    "zone": Field("name", doc="the zone whose stack holds the layer (none for "
                              "installation_mass)"),
    "layer": Field("integer", ge=1, needs=("zone",),
                   doc="1-based index of the layer in the zone's stack, layers of inserted "
                       "stack files counted in place"),
    "cell": Field("integer", ge=1, needs=("layer",),
                  doc="1-based index of the tile layer's cell kind whose key is varied"),
    "key": Field("name", required=True,
                 doc="the layer's (or cell's) stack-file key, or installation_mass"),
    "values": Field("raw", shape="list", group="spread", required=True,
                    doc="grid: the values, each as the key takes it (\"40 mm\", 0.3)"),
    "range": Field("raw", shape="list", length=2, group="spread", required=True,
                   needs=("steps",), doc="grid: [low, high], steps values evenly spaced"),
    "steps": Field("integer", ge=2, le=MAX_VARIANTS, needs=("range",),
                   doc="number of values of range"),
    "distribution": Field("choice", choices=tuple(DISTRIBUTIONS), group="spread",
                          required=True,
                          doc="monte-carlo: normal (mean, std; low and high truncate it), "
                              "uniform (low, high) or triangular (low, mode, high)"),
    "mean": Field("raw", needs=("distribution",), doc="normal: the mean"),
    "std": Field("raw", needs=("distribution",),
                 doc="normal: the standard deviation (> 0, in the key's unit)"),
    "low": Field("raw", needs=("distribution",), doc="the lowest value drawn"),
    "high": Field("raw", needs=("distribution",), doc="the highest value drawn"),
    "mode": Field("raw", needs=("distribution",), doc="triangular: the most likely value"),
    "notes": Field("text", doc="free text"),
}
TRADE: dict[str, Field] = {
    "mode": Field("choice", choices=TRADE_MODES, default="grid",
                  doc="grid: every combination of the entries' values; monte-carlo: "
                      "samples drawn from their distributions"),
    "samples": Field("integer", ge=1, le=MAX_VARIANTS, default=1000,
                     doc="monte-carlo: number of variants drawn"),
    "seed": Field("integer", allow_zero=True, default=0,
                  doc="seed of the random draws and of the optimiser: the same seed gives "
                      "the same variants and the same optimum"),
}

# ------------------------------------------------------------------ the file
STUDY_FILE: dict[str, Field] = {
    "study": Field("table", schema=STUDY_SECTION, doc="title block and options"),
    "air": Field("table", schema=AIR_SECTION, doc="exterior and cabin air"),
    "cabin": Field("table", schema=CABIN, required=True, doc="cabin volume and absorption"),
    "condition": Field("tables", schema=CONDITION, required=True, unique="name",
                       doc="flight conditions: exterior levels and tones"),
    "zone": Field("tables", schema=ZONE, required=True, unique="name",
                  doc="parts of the cabin wall"),
    "interior_source": Field("tables", schema=INTERIOR_SOURCE, unique="name",
                             doc="sounds already in the cabin, added as energy"),
    "package": Field("tables", schema=PACKAGE, required=True, unique="name",
                     doc="treatment packages: a stack per zone, leaks, flanking"),
    "targets": Field("table", schema=TARGETS, doc="targets for every condition"),
    "vary": Field("tables", schema=VARY, unique="name",
                  doc="trade study: one value of one package each (a layer key of a zone's "
                      "stack, a tile cell's key, or installation_mass)"),
    "trade": Field("table", schema=TRADE, doc="trade study: grid or Monte Carlo, samples, "
                                              "seed"),
}


class LoadedStudy:
    """A validated study: the budget inputs, the files it read (for hashes) and its
    trade-study keys (a :class:`~noisebudget.trade.variants.TradeSpec`, empty without
    ``[[vary]]`` entries)."""

    def __init__(self, inputs, files: dict, trade=None):
        from .trade.variants import TradeSpec

        self.inputs = inputs
        self.files = files          # path -> sha256 of every input file
        self.trade = trade if trade is not None else TradeSpec()


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _valid(entries):
    """``(1-based index, Values)`` of the entries of an array of tables that were tables."""
    if not isinstance(entries, list):
        return []
    return [(i, v) for i, v in enumerate(entries, start=1) if v is not INVALID]


def _thirds(v):
    """The one-third-octave bands of a table's ``bands_hz`` (octave bands split where its
    ``bandwidth`` says so), or None."""
    if "bands_hz" not in v:
        return None
    if v.get("bandwidth") == "octave":
        from .bands import octave_to_thirds

        return octave_to_thirds(v["bands_hz"], np.zeros(len(v["bands_hz"])))[0]
    return v["bands_hz"]


def _on_thirds(v, values, kind):
    """``(bands, values)`` on one-third octaves of a table's banded values: octave levels
    split into thirds of equal energy (``kind="level"``) or copied (``"copy"``)."""
    values = np.asarray(values, dtype=float)
    if v.get("bandwidth") == "octave":
        from .bands import octave_to_thirds

        return octave_to_thirds(v["bands_hz"], values, kind)
    return v["bands_hz"], values


def _cabin(v):
    if not v or "bands_hz" not in v or "volume" not in v:
        return None, None
    thirds = _thirds(v)
    if "absorption_area" in v:
        return _on_thirds(v, v["absorption_area"], "copy")[1], thirds
    if "reverberation_time" in v:
        from .budget import sabine_area

        return sabine_area(v["volume"], _on_thirds(v, v["reverberation_time"], "copy")[1]), \
            thirds
    if "mean_absorption" in v and "surface_area" in v:
        return np.full(len(thirds), v["mean_absorption"] * v["surface_area"]), thirds
    return None, thirds


def _conditions(entries, reader):
    from .budget import Condition

    out = []
    for i, v in _valid(entries):
        where = f"condition[{i}]"
        if "bands_hz" not in v:
            continue
        bands = v["bands_hz"]
        tones_f, tones_l, names, ok = [], [], [], True
        for j, t in _valid(v.get("tone", [])):
            if "frequency" not in t or "level_db" not in t:
                ok = False
                continue
            if bands.containing([t["frequency"]])[0] < 0:
                reader.problem(f"{where}.tone[{j}].frequency",
                               f"{t['frequency']:g} Hz lies outside the condition's bands "
                               f"({bands.lower[0]:.4g} .. {bands.upper[-1]:.4g} Hz)")
                ok = False
                continue
            tones_f.append(t["frequency"])
            tones_l.append(t["level_db"])
            names.append(t.get("name", f"{t['frequency']:g} Hz"))
        if ok and "levels_db" in v and "name" in v and not v.bad:
            thirds, levels = _on_thirds(v, v["levels_db"], "level")
            out.append(Condition(v["name"], thirds, levels, np.array(tones_f),
                                 np.array(tones_l), tuple(names), v["bandwidth"]))
    return out


def _curve(v, key, points_key, where, reader):
    """A dB value given as one number, or as a list at the frequencies of ``points_key``:
    a :class:`~noisebudget.budget.Curve`; None when absent; INVALID when refused (its
    problem recorded here or by the schema)."""
    from .budget import Curve

    if key not in v:
        return INVALID if v.given(key) or v.given(points_key) else None
    values = v[key]
    if isinstance(values, tuple):
        if points_key not in v:
            if not v.given(points_key):
                reader.problem(join(where, points_key),
                               f"missing: a list of {key} needs its frequencies in Hz")
            return INVALID
        return Curve(v[points_key], values)
    if v.given(points_key):
        reader.problem(join(where, points_key), f"a single {key} takes no frequencies: give "
                                                f"one value per frequency, or drop "
                                                f"{points_key}")
        return INVALID
    return Curve((), (values,))


def _bay(v, where, reader):
    """A zone's panel ``(width, height)`` in m, None without one, INVALID when refused
    (the schema says when only one side is given; here: a bay larger than its zone)."""
    if "panel_width" not in v or "panel_height" not in v:
        return INVALID if v.given("panel_width") or v.given("panel_height") else None
    w, h = v["panel_width"], v["panel_height"]
    if "area" in v and w * h > v["area"]:
        reader.problem(join(where, "panel_width"),
                       f"the bay ({w:.4g} m x {h:.4g} m = {w * h:.4g} m^2) is larger than "
                       f"the zone ({v['area']:.4g} m^2)")
        return INVALID
    return (w, h)


def _zones(entries, reader):
    from .budget import Curve, Zone

    out = []
    for i, v in _valid(entries):
        where = f"zone[{i}]"
        offset = _curve(v, "exterior_offset_db", "offset_bands_hz", where, reader)
        flanking = _curve(v, "flanking_tl_db", "flanking_bands_hz", where, reader)
        bay = _bay(v, where, reader)
        if "name" in v and "area" in v and all(x is not INVALID for x in (offset, flanking, bay)):
            out.append(Zone(v["name"], v["area"], offset or Curve(), flanking, bay))
    return out


def _interior_sources(entries, conditions, reader, zone_names, condition_names):
    """``[[interior_source]]`` entries: names apart from the zones', conditions that
    exist, bands inside every condition the source sounds in."""
    from .budget import InteriorSource

    out = []
    for i, v in _valid(entries):
        where = f"interior_source[{i}]"
        ok = not v.bad
        if v.get("name") in zone_names:
            reader.problem(join(where, "name"), f"{v['name']!r} is the name of a zone: the "
                                                "contributions table names sources and "
                                                "zones alike")
            ok = False
        applies = v.get("conditions")
        for j, c in enumerate(applies or (), start=1):
            if c not in condition_names:
                reader.problem(join(join(where, "conditions"), j),
                               f"no condition {c!r}{suggest(c, condition_names)}")
                ok = False
            elif c in applies[:j - 1]:
                reader.problem(join(join(where, "conditions"), j),
                               f"condition {c!r} is listed twice")
                ok = False
        thirds = _thirds(v)
        if thirds is not None:
            for c in conditions:
                if (applies is None or c.name in applies) and not set(
                        thirds.nominal) <= set(c.bands.nominal):
                    reader.problem(join(where, "bands_hz"),
                                   f"bands do not fit: {thirds.nominal[0]:g} .. "
                                   f"{thirds.nominal[-1]:g} Hz reaches outside condition "
                                   f"{c.name!r} ({c.bands.nominal[0]:g} .. "
                                   f"{c.bands.nominal[-1]:g} Hz)")
                    ok = False
                    break
        if ok and "name" in v and "levels_db" in v and thirds is not None:
            _, levels = _on_thirds(v, v["levels_db"], "level")
            out.append(InteriorSource(v["name"], thirds, levels, applies, v["bandwidth"]))
    return out


def _raw_names(data, section):
    """Every string name given in an array of tables, valid or not: references to them
    are then not reported a second time."""
    tables = data.get(section)
    if not isinstance(tables, list):
        return []
    return [t["name"] for t in tables if isinstance(t, dict) and isinstance(t.get("name"), str)]


def _leaks(zv, n_layers, area, where, reader):
    """The leaks of one package zone as :class:`~noisebudget.budget.Leak`, checked against
    the zone's stack (``behind_layer``) and area (their open area); INVALID when refused."""
    from .apertures import Hole, Slit
    from .budget import Leak

    entries = zv.get("leak", [])
    if zv.given("leak") and "leak" not in zv:
        return INVALID
    out, ok = [], True
    for i, t in enumerate(entries, start=1):
        if t is INVALID or t.bad:
            ok = False
            continue
        lw = join(join(where, "leak"), i)
        if n_layers is not None and t["behind_layer"] >= n_layers:
            reader.problem(join(lw, "behind_layer"),
                           f"the stack has {n_layers} layer{'s' * (n_layers != 1)}: a leak "
                           f"behind layer {t['behind_layer']} opens nowhere (at most "
                           f"{n_layers - 1})")
            ok = False
            continue
        sizes = SLIT if t["shape"] == "slit" else HOLE
        if any(spec.required and k not in t for k, spec in sizes.items()):
            ok = False   # a required size missing (reported)
            continue
        aperture = Slit(t["width"], t["length"], t["depth"]) if t["shape"] == "slit" \
            else Hole(t["diameter"], t["depth"], t["count"])
        out.append(Leak(aperture, t["behind_layer"], t.get("name", "")))
    open_area = sum(lk.area for lk in out)
    if area is not None and open_area >= area:
        reader.problem(join(where, "leak"), f"the leaks' open area ({open_area:.4g} m^2) must "
                                            f"be smaller than the zone's area ({area:.4g} m^2)")
        ok = False
    return tuple(out) if ok else INVALID


_ZONE_ITEMS = ("stacks", "structure", "leaks", "flanking", "installation", "entries")


def _packages(entries, zone_names, zones, airs, reader, package_names):
    """Packages with, per zone, stack, structure flags, leaks, flanking override and
    installation mass; ``based_on`` copies all of these, and a zone the package gives
    itself replaces everything it inherited for that zone.

    Returns the packages and, per package name, its zones' layer entries (for a trade
    study's ``[[vary]]`` entries) and the zones it gives itself."""
    from .budget import Package
    from .stack import Stack

    areas = {z.name: z.area for z in zones}
    out, layer_entries, own = [], {}, {}
    done: dict[str, tuple] = {}   # name -> (per-zone items, zones whose stack failed)
    for i, v in _valid(entries):
        where = f"package[{i}]"
        items: dict = {k: {} for k in _ZONE_ITEMS}
        failed: set = set()
        if "based_on" in v:
            base = v["based_on"]
            if base in done:
                for k in _ZONE_ITEMS:
                    items[k].update(done[base][0][k])
                failed |= done[base][1]
            else:
                later = base in package_names
                reader.problem(join(where, "based_on"),
                               f"package {base!r} comes later: based_on needs an earlier one"
                               if later else f"no earlier package {base!r}"
                               f"{suggest(base, list(done))}")
                failed |= set(zone_names)
        elif v.given("based_on"):
            failed |= set(zone_names)
        if v.given("zone") and "zone" not in v:
            failed |= set(zone_names)
        for zname, zv in v.get("zone", {}).items():
            zw = join(join(where, "zone"), zname)
            if zname not in zone_names:
                reader.problem(zw, f"no such zone{suggest(zname, zone_names)} "
                                   f"(zones: {', '.join(zone_names)})")
                continue
            for k in _ZONE_ITEMS:   # the zone given here replaces what was inherited
                items[k].pop(zname, None)
            if zv is INVALID:
                failed.add(zname)
                continue
            entries_z = INVALID
            if "layer" in zv:
                entries_z = zv["layer"]
            elif "stack" in zv:
                entries_z = include_stack(zv["stack"], join(zw, "stack"), reader,
                                          host="study's zone")
            n_layers = None if entries_z is INVALID else len(entries_z)
            leaks = _leaks(zv, n_layers, areas.get(zname), zw, reader)
            flanking = _curve(zv, "flanking_tl_db", "flanking_bands_hz", zw, reader)
            if entries_z is INVALID or leaks is INVALID or flanking is INVALID:
                failed.add(zname)
                continue
            failed.discard(zname)
            items["stacks"][zname] = Stack(tuple(e.layer for e in entries_z), airs[0],
                                           airs[1], airs[1],
                                           tuple(e.label for e in entries_z),
                                           bonding_of(entries_z))
            items["structure"][zname] = structure_of(entries_z)
            items["entries"][zname] = tuple(entries_z)
            items["leaks"][zname] = leaks
            if flanking is not None:
                items["flanking"][zname] = flanking
            if "installation_mass" in v:
                items["installation"][zname] = v["installation_mass"]
        for z in zone_names:
            if z not in items["stacks"] and z not in failed:
                reader.problem(join(join(where, "zone"), z),
                               "missing: every package needs a stack for every zone")
        if "name" in v:
            done[v["name"]] = (items, failed)
            layer_entries[v["name"]] = items["entries"]
            own[v["name"]] = tuple(z for z in v.get("zone", {}) if z in items["stacks"])
            if "installation_mass" in v and set(items["stacks"]) >= {z.name for z in zones}:
                out.append(Package(v["name"], items["stacks"], v["installation_mass"],
                                   v.get("notes", ""), items["leaks"], items["flanking"],
                                   items["structure"], items["installation"]))
    return out, layer_entries, own


def _targets(v):
    out = {k: v[k] for k in ("dba", "sil4") if k in v}
    if "limit_bands_hz" in v and "limit_db" in v:
        out["limit"] = (list(v["limit_bands_hz"].nominal), list(v["limit_db"]))
    return out


def _conversions(cabin, conditions, sources) -> list[str]:
    """Plain sentences stating every octave-to-third conversion made, for the report."""
    split = "octave-band levels split into three one-third-octave bands of equal energy " \
            "(-4.77 dB each)"
    out = [f"condition {c.name!r}: {split}" for c in conditions
           if c.input_bandwidth == "octave"]
    out += [f"interior source {s.name!r}: {split}" for s in sources
            if s.input_bandwidth == "octave"]
    if (cabin or {}).get("bandwidth") == "octave":
        out.append("cabin: octave-band values copied to their three one-third-octave bands")
    return out


def parse_study(data: dict, file: str = "", base_dir=None) -> LoadedStudy:
    """Validate parsed TOML ``data`` of a study file into budget inputs.

    Parameters
    ----------
    data : dict
        The file as parsed by tomllib.
    file : str
        The file's path, for messages; stack files it names are found relative to
        ``base_dir`` (default: the file's folder).

    Returns
    -------
    LoadedStudy

    Raises
    ------
    InputErrors
        Listing every problem of the file and of the stack files it names.
    """
    from .budget import StudyInputs

    chain = (Path(file).resolve(),) if file else ()
    reader = Reader(file, base_dir, chain=chain)
    files = reader.shared.setdefault("files", {})
    if file and Path(file).is_file():
        files[str(Path(file).resolve())] = _sha256(Path(file))
    catalog = reader.shared["catalog"] = load_catalog()
    v = read_table(data, STUDY_FILE, "", reader, what="a study file (a table)")
    if v is INVALID:
        reader.raise_problems()
    st = v.get("study") or read_table({}, STUDY_SECTION, "study", reader)  # the defaults
    air = v.get("air", {})
    ext = air_from(air.get("exterior"), Air())
    cab = air_from(air.get("cabin"), Air(295.15, 101325.0))
    cabin_a, cabin_bands = _cabin(v.get("cabin"))
    conditions = _conditions(v.get("condition"), reader)
    zones = _zones(v.get("zone"), reader)
    zone_names = list(dict.fromkeys(_raw_names(data, "zone")))
    sources = _interior_sources(v.get("interior_source"), conditions, reader, zone_names,
                                _raw_names(data, "condition"))
    package_names = _raw_names(data, "package")
    packages, layer_entries, own = _packages(v.get("package"), zone_names, zones,
                                             (ext, cab), reader, package_names)
    names = [p.name for p in packages]
    baseline = st.get("baseline", names[0] if names else "")
    if "baseline" in st and baseline not in package_names:
        reader.problem("study.baseline", f"no package {baseline!r}"
                                         f"{suggest(baseline, package_names)}")
    if cabin_bands is not None:
        for i, c in _valid(v.get("condition")):
            thirds = _thirds(c)
            if thirds is not None and not set(thirds.nominal) <= set(cabin_bands.nominal):
                reader.problem(f"condition[{i}].bands_hz", "bands do not match: the cabin "
                                                           "absorption must cover every band "
                                                           "of every condition")
    from .tradefile import read_trade

    trade = read_trade(data, v, packages, layer_entries, own, package_names, zone_names,
                       reader)
    reader.raise_problems()
    used = sorted(reader.shared.get("catalog_used", {}))
    for key in used:
        files.setdefault(str(catalog.source_file(key)), _sha256(catalog.source_file(key)))
    meta = {k: str(st.get(k, "")) for k in ("title", "programme", "revision", "author",
                                             "date", "notes")}
    meta["catalog_entries"] = used
    meta["air"] = {"exterior": ext, "cabin": cab}
    cabin = v.get("cabin") or {}
    meta["cabin"] = {"volume_m3": cabin.get("volume"),
                     "absorption_given": next((k for k in ("absorption_area",
                                                           "reverberation_time",
                                                           "mean_absorption") if k in cabin),
                                              "")}
    meta["conversions"] = _conversions(v.get("cabin"), conditions, sources)
    title = meta["title"] or (Path(file).stem if file else "study")
    inputs = StudyInputs(title, tuple(conditions), tuple(zones), tuple(packages), baseline,
                         cabin_a, cabin_bands, st["exterior_level"], st["incidence"],
                         st.get("theta_max_deg"), st["include_package_absorption"],
                         _targets(v.get("targets", {})), meta, tuple(sources))
    return LoadedStudy(inputs, dict(files), trade)


def load_study(path) -> LoadedStudy:
    """Parse and validate a study file; raises InputErrors listing every problem."""
    path = Path(path)
    return parse_study(read_toml(path), str(path))


def run_study(path):
    """Load, validate and compute a study file; returns a
    :class:`~noisebudget.budget.StudyResult` (DataFrames with units in column names)."""
    from .budget import compute_budget

    loaded = load_study(path)
    result = compute_budget(loaded.inputs)
    result.files = loaded.files
    return result
