"""Study files (TOML): title block, air, cabin, conditions, zones, packages, targets.

The keys are declared section by section below (dicts of
:class:`~noisebudget.layers.base.Field`, read by :mod:`noisebudget.schema`), so that a
key is added with one line in its section and appears in the key reference. Every
problem of the file, and of the stack files it names, is collected; ``load_study``
raises :class:`~noisebudget.errors.InputErrors` when there is any, and what it accepts
``run_study`` computes: ``check`` and ``run`` share this one validation.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np

from .catalog import load_catalog
from .layers.base import Field
from .media import Air
from .schema import INVALID, Reader, join, read_table, read_toml, suggest
from .stackfile import AIR_STATE, air_from, bonding_of, include_stack, read_layers

__all__ = ["AIR_SECTION", "CABIN", "CONDITION", "LoadedStudy", "PACKAGE", "PACKAGE_ZONE",
           "STUDY_FILE", "STUDY_SECTION", "TARGETS", "TARGET_METRICS", "TONE", "ZONE",
           "load_study", "parse_study", "run_study"]

LEVEL = {"positive": False, "ge": -50.0, "le": 200.0}  # a band or tone level, dB

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
    "bands_hz": Field("bands", required=True, doc="bands of the exterior levels"),
    "levels_db": Field("db", shape="list", length="bands_hz", required=True, **LEVEL,
                       doc="exterior band levels"),
    "tone": Field("tables", schema=TONE, doc="discrete tones, one [[condition.tone]] each"),
    "notes": Field("text", doc="free text"),
}

# ------------------------------------------------------------------ [[zone]]
ZONE: dict[str, Field] = {
    "name": Field("name", required=True, doc="name of the zone (packages refer to it)"),
    "area": Field("area", required=True, doc="wall area of the zone"),
    "notes": Field("text", doc="free text"),
}

# ------------------------------------------------------------------ [[package]]
PACKAGE_ZONE: dict[str, Field] = {
    "layer": Field("layers", group="stack", required=True, read=read_layers,
                   doc="the zone's layers, exterior first (stack-file layer entries)"),
    "stack": Field("path", group="stack", required=True,
                   doc="a stack file holding the zone's layers (its air states are "
                       "ignored: the study's air governs)"),
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

# ------------------------------------------------------------------ the file
STUDY_FILE: dict[str, Field] = {
    "study": Field("table", schema=STUDY_SECTION, doc="title block and options"),
    "air": Field("table", schema=AIR_SECTION, doc="exterior and cabin air"),
    "cabin": Field("table", schema=CABIN, required=True, doc="cabin volume and absorption"),
    "condition": Field("tables", schema=CONDITION, required=True, unique="name",
                       doc="flight conditions: exterior levels and tones"),
    "zone": Field("tables", schema=ZONE, required=True, unique="name",
                  doc="parts of the cabin wall"),
    "package": Field("tables", schema=PACKAGE, required=True, unique="name",
                     doc="treatment packages: a stack per zone"),
    "targets": Field("table", schema=TARGETS, doc="targets for every condition"),
}


class LoadedStudy:
    """A validated study: the budget inputs plus the files it read (for hashes)."""

    def __init__(self, inputs, files: dict):
        self.inputs = inputs
        self.files = files          # path -> sha256 of every input file


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _valid(entries):
    """``(1-based index, Values)`` of the entries of an array of tables that were tables."""
    if not isinstance(entries, list):
        return []
    return [(i, v) for i, v in enumerate(entries, start=1) if v is not INVALID]


def _cabin(v):
    if not v or "bands_hz" not in v or "volume" not in v:
        return None, None
    bands = v["bands_hz"]
    if "absorption_area" in v:
        return np.array(v["absorption_area"]), bands
    if "reverberation_time" in v:
        from .budget import sabine_area

        return sabine_area(v["volume"], np.array(v["reverberation_time"])), bands
    if "mean_absorption" in v and "surface_area" in v:
        return np.full(len(bands), v["mean_absorption"] * v["surface_area"]), bands
    return None, bands


def _conditions(entries, reader):
    from .budget import Condition

    out = []
    for i, v in _valid(entries):
        where = f"condition[{i}]"
        if "bands_hz" not in v:
            continue
        bands = v["bands_hz"]
        tones_f, tones_l, tones_n, ok = [], [], [], True
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
            tones_n.append(t.get("name") or f"{t['frequency']:g} Hz")
        if ok and "levels_db" in v and "name" in v and not v.bad:
            out.append(Condition(v["name"], bands, np.array(v["levels_db"]),
                                 np.array(tones_f), np.array(tones_l), tuple(tones_n)))
    return out


def _zones(entries):
    from .budget import Zone

    return [Zone(v["name"], v["area"]) for _, v in _valid(entries)
            if "name" in v and "area" in v]


def _raw_names(data, section):
    """Every string name given in an array of tables, valid or not: references to them
    are then not reported a second time."""
    tables = data.get(section)
    if not isinstance(tables, list):
        return []
    return [t["name"] for t in tables if isinstance(t, dict) and isinstance(t.get("name"), str)]


def _packages(entries, zone_names, zones, airs, reader, package_names):
    from .budget import Package
    from .stack import Stack

    out = []
    done: dict[str, tuple] = {}   # name -> (stacks, zones whose stack failed)
    for i, v in _valid(entries):
        where = f"package[{i}]"
        stacks: dict = {}
        failed: set = set()
        if "based_on" in v:
            base = v["based_on"]
            if base in done:
                stacks.update(done[base][0])
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
            stacks.pop(zname, None)
            entries_z = INVALID
            if zv is not INVALID and "layer" in zv:
                entries_z = zv["layer"]
            elif zv is not INVALID and "stack" in zv:
                entries_z = include_stack(zv["stack"], join(zw, "stack"), reader,
                                          host="study's zone")
            if entries_z is INVALID:
                failed.add(zname)
                continue
            failed.discard(zname)
            stacks[zname] = Stack(tuple(e.layer for e in entries_z), airs[0], airs[1],
                                  airs[1], tuple(e.label for e in entries_z),
                                  bonding_of(entries_z))
        for z in zone_names:
            if z not in stacks and z not in failed:
                reader.problem(join(join(where, "zone"), z),
                               "missing: every package needs a stack for every zone")
        if "name" in v:
            done[v["name"]] = (stacks, failed)
            if "installation_mass" in v and set(stacks) >= {z.name for z in zones}:
                out.append(Package(v["name"], stacks, v["installation_mass"],
                                   v.get("notes", "")))
    return out


def _targets(v):
    out = {k: v[k] for k in ("dba", "sil4") if k in v}
    if "limit_bands_hz" in v and "limit_db" in v:
        out["limit"] = (list(v["limit_bands_hz"].nominal), list(v["limit_db"]))
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
    zones = _zones(v.get("zone"))
    zone_names = list(dict.fromkeys(_raw_names(data, "zone")))
    package_names = _raw_names(data, "package")
    packages = _packages(v.get("package"), zone_names, zones, (ext, cab), reader,
                         package_names)
    names = [p.name for p in packages]
    baseline = st.get("baseline", names[0] if names else "")
    if "baseline" in st and baseline not in package_names:
        reader.problem("study.baseline", f"no package {baseline!r}"
                                         f"{suggest(baseline, package_names)}")
    if cabin_bands is not None:
        for i, c in enumerate(v.get("condition") or [], start=1):
            if c is not INVALID and "bands_hz" in c and not set(
                    c["bands_hz"].nominal) <= set(cabin_bands.nominal):
                reader.problem(f"condition[{i}].bands_hz", "bands do not match: the cabin "
                                                           "absorption must cover every band "
                                                           "of every condition")
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
    title = meta["title"] or (Path(file).stem if file else "study")
    inputs = StudyInputs(title, tuple(conditions), tuple(zones), tuple(packages), baseline,
                         cabin_a, cabin_bands, st["exterior_level"], st["incidence"],
                         st.get("theta_max_deg"), st["include_package_absorption"],
                         _targets(v.get("targets", {})), meta)
    return LoadedStudy(inputs, dict(files))


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
