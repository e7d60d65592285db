"""Study files (TOML): title block, air, cabin, conditions, zones, packages, targets.

Every problem found is collected, so ``noisebudget check`` lists them all; ``load_study``
raises :class:`~noisebudget.errors.InputErrors` when there is any.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

import numpy as np

from .bands import third_octave_bands
from .budget import Condition, Package, StudyInputs, Zone, compute_budget, sabine_area
from .catalog import load_catalog
from .errors import InputError, InputErrors
from .media import Air, standard_atmosphere
from .stackfile import _suggest, parse_air, parse_stack, read_toml
from .units import parse_dimensionless, parse_quantity

__all__ = ["LoadedStudy", "load_study", "run_study", "TARGET_METRICS"]

TARGET_METRICS = ("dba", "sil4", "limit_bands_hz", "limit_db")
_TOP = ("study", "air", "cabin", "condition", "zone", "package", "targets", "vary", "trade")
_STUDY = ("title", "programme", "revision", "author", "date", "baseline", "incidence",
          "theta_max_deg", "exterior_level", "include_package_absorption", "notes")


class LoadedStudy:
    """A validated study: the budget inputs, the files it read (for hashes) and its
    trade-study keys (a :class:`~noisebudget.trade.variants.TradeSpec`)."""

    def __init__(self, inputs: StudyInputs, files: dict, trade=None):
        self.inputs = inputs
        self.files = files          # path -> sha256 of every input file
        self.trade = trade


def _sha256(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def _unknown(table, allowed, file, where, errors):
    for k in table:
        if k not in allowed:
            errors.append(InputError(file, f"{where}{k}", f"unknown key{_suggest(k, allowed)} "
                                                          f"(allowed: {', '.join(allowed)})"))


def _air(table, file, where, errors, default):
    if table is None:
        return default
    if not isinstance(table, dict):
        errors.append(InputError(file, where, "expected a table"))
        return default
    alt_keys = [k for k in ("altitude", "pressure_altitude") if k in table]
    rest = {k: v for k, v in table.items() if k not in alt_keys}
    if alt_keys:
        try:
            h = parse_quantity(table[alt_keys[0]], "length", file, f"{where}.{alt_keys[0]}")
            std = standard_atmosphere(h)
        except InputError as exc:
            errors.append(exc)
            return default
        except ValueError as exc:
            errors.append(InputError(file, f"{where}.{alt_keys[0]}", str(exc)))
            return default
        if alt_keys[0] == "pressure_altitude":  # cabin: pressure of altitude, own temperature
            std = Air(default.temperature, std.pressure)
        return parse_air(rest, file, where, errors, std)
    return parse_air(rest, file, where, errors, default)


def _bands(values, file, where, errors):
    try:
        arr = np.array([float(v) for v in values])
    except (TypeError, ValueError):
        errors.append(InputError(file, where, "expected a list of nominal frequencies in Hz"))
        return None
    if arr.size == 0:
        errors.append(InputError(file, where, "empty band list"))
        return None
    ref = third_octave_bands(arr[0], arr[-1])
    if ref.nominal.size != arr.size or not np.allclose(ref.nominal, arr):
        errors.append(InputError(file, where, "bands must be consecutive ISO 266 one-third-"
                                              f"octave nominal frequencies from {arr[0]:g} Hz"))
        return None
    return ref


def _numbers(values, n, file, where, errors):
    if values is None:
        errors.append(InputError(file, where, "missing required key"))
        return None
    if not isinstance(values, list) or not all(isinstance(v, (int, float))
                                               and not isinstance(v, bool) for v in values):
        errors.append(InputError(file, where, "levels must be a list of numbers (dB)"))
        return None
    if len(values) != n:
        errors.append(InputError(file, where, f"{len(values)} values for {n} bands: the "
                                              "bands do not match"))
        return None
    return np.array(values, dtype=float)


def _cabin(table, file, errors):
    where = "cabin"
    if not isinstance(table, dict):
        errors.append(InputError(file, where, "missing [cabin] table (volume and absorption)"))
        return None, None
    allowed = ("volume", "bands_hz", "absorption_area", "reverberation_time",
               "mean_absorption", "surface_area")
    _unknown(table, allowed, file, f"{where}.", errors)
    bands = _bands(table.get("bands_hz", []), file, f"{where}.bands_hz", errors)
    try:
        volume = parse_quantity(table.get("volume"), "volume", file, f"{where}.volume")
        if volume <= 0:
            raise InputError(file, f"{where}.volume", "must be > 0")
    except InputError as exc:
        errors.append(exc)
        return None, bands
    given = [k for k in ("absorption_area", "reverberation_time", "mean_absorption")
             if k in table]
    if len(given) != 1:
        errors.append(InputError(file, where, "give exactly one of absorption_area, "
                                              "reverberation_time, mean_absorption"))
        return None, bands
    if bands is None:
        return None, bands
    kind = given[0]
    if kind == "mean_absorption":
        try:
            alpha = parse_dimensionless(table[kind], file, f"{where}.{kind}")
            s = parse_quantity(table.get("surface_area"), "area", file,
                               f"{where}.surface_area")
        except InputError as exc:
            errors.append(exc)
            return None, bands
        if not 0 < alpha <= 1 or s <= 0:
            errors.append(InputError(file, f"{where}.{kind}", "need 0 < alpha <= 1 and "
                                                             "surface_area > 0"))
            return None, bands
        return np.full(len(bands), alpha * s), bands
    values = table[kind]
    unit_kind = "area" if kind == "absorption_area" else "time"
    if not isinstance(values, list) or len(values) != len(bands):
        errors.append(InputError(file, f"{where}.{kind}", f"need one value per band "
                                                         f"({len(bands)}): the bands do not "
                                                         "match"))
        return None, bands
    out = []
    for i, v in enumerate(values):
        try:
            x = parse_quantity(v, unit_kind, file, f"{where}.{kind}[{i + 1}]")
            if x <= 0:
                raise InputError(file, f"{where}.{kind}[{i + 1}]", "must be > 0")
            out.append(x)
        except InputError as exc:
            errors.append(exc)
    if len(out) != len(bands):
        return None, bands
    arr = np.array(out)
    return (arr if kind == "absorption_area" else sabine_area(volume, arr)), bands


def _each_table(tables, name, file, errors):
    """``(index, key path, table)`` of every ``[[name]]`` entry that is a table; problems
    (none given, an entry that is not a table) go to ``errors``."""
    if not isinstance(tables, list) or not tables:
        errors.append(InputError(file, name, f"need at least one [[{name}]]"))
        return
    for i, t in enumerate(tables):
        where = f"{name}[{i + 1}]"
        if not isinstance(t, dict):
            errors.append(InputError(file, where, "expected a table"))
            continue
        yield i, where, t


def _conditions(tables, file, errors):
    out = []
    for i, where, t in _each_table(tables, "condition", file, errors):
        _unknown(t, ("name", "bands_hz", "levels_db", "tone", "notes"), file, f"{where}.",
                 errors)
        bands = _bands(t.get("bands_hz", []), file, f"{where}.bands_hz", errors)
        if bands is None:
            continue
        levels = _numbers(t.get("levels_db"), len(bands), file, f"{where}.levels_db", errors)
        tones_f, tones_l = [], []
        for j, tone in enumerate(t.get("tone", [])):
            tw = f"{where}.tone[{j + 1}]"
            if not isinstance(tone, dict):
                errors.append(InputError(file, tw, "expected a table"))
                continue
            _unknown(tone, ("frequency", "level_db", "name"), file, f"{tw}.", errors)
            try:
                f = parse_quantity(tone.get("frequency"), "frequency", file, f"{tw}.frequency")
                lv = tone.get("level_db")
                if isinstance(lv, bool) or not isinstance(lv, (int, float)):
                    raise InputError(file, f"{tw}.level_db", f"not a number: {lv!r}")
                if bands.containing([f])[0] < 0:
                    raise InputError(file, f"{tw}.frequency", f"{f:g} Hz lies outside the "
                                                              "condition's bands")
                tones_f.append(f)
                tones_l.append(float(lv))
            except InputError as exc:
                errors.append(exc)
        if levels is not None:
            out.append(Condition(str(t.get("name", f"condition {i + 1}")), bands, levels,
                                 np.array(tones_f), np.array(tones_l)))
    return out


def _zones(tables, file, errors, names):
    """Valid zones; ``names`` receives every zone name, so that a zone with a bad area
    does not also make each package's stack for it look unknown."""
    out = []
    for i, where, t in _each_table(tables, "zone", file, errors):
        _unknown(t, ("name", "area", "notes"), file, f"{where}.", errors)
        names.append(str(t.get("name", f"zone {i + 1}")))
        try:
            area = parse_quantity(t.get("area"), "area", file, f"{where}.area")
            if area <= 0:
                raise InputError(file, f"{where}.area", f"must be > 0, got {t.get('area')!r}")
            out.append(Zone(str(t.get("name", f"zone {i + 1}")), area))
        except InputError as exc:
            errors.append(exc)
    return out


def _packages(tables, zones, airs, file, base_dir, errors, files, catalog, zone_names):
    out = []
    by_name, failed_of = {}, {}
    for i, where, t in _each_table(tables, "package", file, errors):
        _unknown(t, ("name", "based_on", "installation_mass", "notes", "zone"), file,
                 f"{where}.", errors)
        name = str(t.get("name", f"package {i + 1}"))
        stacks = {}
        failed = set()  # zones whose stack had errors (already reported)
        if "based_on" in t:
            if t["based_on"] not in by_name:
                errors.append(InputError(file, f"{where}.based_on", f"no earlier package "
                                                                    f"{t['based_on']!r}"))
            else:
                stacks.update(by_name[t["based_on"]].stacks)
                failed |= failed_of[t["based_on"]]
        zt = t.get("zone", {})
        if not isinstance(zt, dict):
            errors.append(InputError(file, f"{where}.zone", "expected [package.zone.NAME] "
                                                            "tables"))
            zt = {}
        names = zone_names
        for zname, spec in zt.items():
            zw = f"{where}.zone.{zname}"
            if zname not in names:
                errors.append(InputError(file, zw, f"no such zone{_suggest(zname, names)} "
                                                   f"(zones: {', '.join(names)})"))
                continue
            if not isinstance(spec, dict):
                errors.append(InputError(file, zw, "expected a table"))
                continue
            data = spec
            sfile = file
            if "stack" in spec:
                path = (base_dir / spec["stack"]).resolve()
                try:
                    data = read_toml(path)
                    files[str(path)] = _sha256(path)
                    sfile = str(path)
                except InputError as exc:
                    errors.append(InputError(file, f"{zw}.stack", f"{spec['stack']}: "
                                                                  f"{exc.reason}"))
                    failed.add(zname)
                    continue
            data = dict(data)
            for k, air in zip(("source_air", "receiver_air"), airs, strict=True):
                data[k] = {"temperature": f"{air.temperature} K",  # the study's air governs
                           "pressure": f"{air.pressure} Pa"}
            try:
                stacks[zname] = parse_stack(data, sfile, "" if sfile != file else zw, catalog)
            except InputErrors as exc:
                errors.extend(exc.errors)
                failed.add(zname)
        for z in zones:
            if z.name not in stacks and z.name not in failed:
                errors.append(InputError(file, f"{where}.zone.{z.name}",
                                         "missing: every package needs a stack for every zone"))
        inst = 0.0
        if "installation_mass" in t:
            try:
                inst = parse_quantity(t["installation_mass"], "surface_density", file,
                                      f"{where}.installation_mass")
            except InputError as exc:
                errors.append(exc)
        pkg = Package(name, stacks, inst, str(t.get("notes", "")))
        if name in by_name:
            errors.append(InputError(file, f"{where}.name", f"duplicate package {name!r}"))
        by_name[name] = pkg
        failed_of[name] = failed - set(stacks)
        out.append(pkg)
    return out


def _targets(table, file, errors):
    if table is None:
        return {}
    _unknown(table, TARGET_METRICS, file, "targets.", errors)
    out = {}
    for k in ("dba", "sil4"):
        if k in table:
            v = table[k]
            if isinstance(v, bool) or not isinstance(v, (int, float)):
                errors.append(InputError(file, f"targets.{k}", f"not a number: {v!r}"))
            else:
                out[k] = float(v)
    if ("limit_bands_hz" in table) != ("limit_db" in table):
        errors.append(InputError(file, "targets", "give limit_bands_hz and limit_db together"))
    elif "limit_bands_hz" in table:
        b = _bands(table["limit_bands_hz"], file, "targets.limit_bands_hz", errors)
        if b is not None:
            lim = _numbers(table["limit_db"], len(b), file, "targets.limit_db", errors)
            if lim is not None:
                out["limit"] = (list(b.nominal), list(lim))
    return out


def load_study(path) -> LoadedStudy:
    """Parse and validate a study file; raises InputErrors listing every problem."""
    path = Path(path)
    file = str(path)
    data = read_toml(path)
    files = {str(path.resolve()): _sha256(path)}
    errors: list[InputError] = []
    _unknown(data, _TOP, file, "", errors)
    st = data.get("study", {})
    _unknown(st, _STUDY, file, "study.", errors)
    air = data.get("air", {})
    _unknown(air, ("exterior", "cabin"), file, "air.", errors)
    ext = _air(air.get("exterior"), file, "air.exterior", errors, Air())
    cab = _air(air.get("cabin"), file, "air.cabin", errors, Air(295.15, 101325.0))
    cabin_a, cabin_bands = _cabin(data.get("cabin"), file, errors)
    conditions = _conditions(data.get("condition"), file, errors)
    zone_names: list[str] = []
    zones = _zones(data.get("zone"), file, errors, zone_names)
    catalog = load_catalog()
    packages = _packages(data.get("package"), zones, (ext, cab), file, path.parent,
                         errors, files, catalog, zone_names)
    targets = _targets(data.get("targets"), file, errors)
    trade = _trade_spec(data, file, path.parent, catalog, packages, zone_names, errors)
    incidence = st.get("incidence", "field")
    if incidence not in ("normal", "field", "diffuse"):
        errors.append(InputError(file, "study.incidence", f"unknown incidence {incidence!r} "
                                                          "(normal, field, diffuse)"))
    convention = st.get("exterior_level", "diffuse")
    if convention not in ("diffuse", "surface"):
        errors.append(InputError(file, "study.exterior_level", "must be 'diffuse' (incident "
                                 "diffuse-field level) or 'surface' (blocked surface pressure)"))
    names = [p.name for p in packages]
    baseline = st.get("baseline", names[0] if names else "")
    if names and baseline not in names:
        errors.append(InputError(file, "study.baseline", f"no package {baseline!r}"
                                                         f"{_suggest(str(baseline), names)}"))
    if cabin_bands is not None:
        for i, c in enumerate(conditions):
            if not set(c.bands.nominal) <= set(cabin_bands.nominal):
                errors.append(InputError(file, f"condition[{i + 1}].bands_hz",
                                         "bands do not match: the cabin absorption must cover "
                                         "every band of every condition"))
    used = sorted({key for p in packages for s in p.stacks.values() for key in s.labels
                   if key in catalog})
    for key in used:
        cpath = catalog.source_file(key)
        files[str(cpath)] = _sha256(cpath)
    if errors:
        raise InputErrors(errors)
    theta = st.get("theta_max_deg")
    meta = {k: str(st.get(k, "")) for k in ("title", "programme", "revision", "author",
                                             "date", "notes")}
    meta["catalog_entries"] = used
    meta["air"] = {"exterior": ext, "cabin": cab}
    inputs = StudyInputs(meta["title"] or path.stem, tuple(conditions), tuple(zones),
                         tuple(packages), baseline, cabin_a, cabin_bands, convention,
                         incidence, float(theta) if theta is not None else None,
                         bool(st.get("include_package_absorption", False)), targets, meta)
    return LoadedStudy(inputs, files, trade)


def run_study(path):
    """Load, validate and compute a study file; returns a
    :class:`~noisebudget.budget.StudyResult` (DataFrames with units in column names)."""
    loaded = load_study(path)
    result = compute_budget(loaded.inputs)
    result.files = loaded.files
    return result


# ---- trade-study keys: [[vary]] and [trade] -------------------------------------------

_VARY = ("name", "package", "zone", "layer", "cell", "key", "values", "range", "steps",
         "distribution", "mean", "std", "low", "high", "mode", "notes")
_TRADE = ("mode", "samples", "seed")
_DISTRIBUTIONS = {"normal": ("mean", "std"), "uniform": ("low", "high"),
                  "triangular": ("low", "high", "mode")}


def _trade_table(table, file, errors) -> dict:
    """``[trade]``: ``mode`` (grid | monte-carlo), ``samples``, ``seed``."""
    from .trade.variants import MAX_VARIANTS, TRADE_MODES

    out = {"mode": "grid", "samples": 1000, "seed": 0}
    if table is None:
        return out
    if not isinstance(table, dict):
        errors.append(InputError(file, "trade", "expected a table"))
        return out
    _unknown(table, _TRADE, file, "trade.", errors)
    mode = table.get("mode", "grid")
    if mode not in TRADE_MODES:
        errors.append(InputError(file, "trade.mode", f"unknown mode {mode!r}"
                                 f"{_suggest(str(mode), TRADE_MODES)} (grid, monte-carlo)"))
    else:
        out["mode"] = mode
    for key, low in (("samples", 1), ("seed", 0)):
        if key not in table:
            continue
        v = table[key]
        if isinstance(v, bool) or not isinstance(v, int):
            errors.append(InputError(file, f"trade.{key}", f"expected a whole number, "
                                                           f"got {v!r}"))
        elif key == "samples" and v < 1:
            errors.append(InputError(file, "trade.samples", f"{v} samples: zero variants "
                                                            "(need at least 1)"))
        elif key == "samples" and v > MAX_VARIANTS:
            errors.append(InputError(file, "trade.samples", f"{v} samples exceed the "
                                                            f"maximum of {MAX_VARIANTS}"))
        elif v < low:
            errors.append(InputError(file, f"trade.{key}", f"must be >= {low}, got {v}"))
        else:
            out[key] = v
    if "samples" in table and out["mode"] != "monte-carlo":
        errors.append(InputError(file, "trade.samples", "samples apply to mode = "
                                                        "\"monte-carlo\" only"))
    return out


def _raw_layer_tables(raw_packages, name, zone, base_dir, file):
    """The ``[[layer]]`` tables of a package's zone as written (following ``based_on``
    and ``stack = "file"``) and the file they are in."""
    by_name = {str(t.get("name", f"package {i + 1}")): t for i, t in enumerate(raw_packages)
               if isinstance(t, dict)}
    seen = set()
    while name in by_name and name not in seen:
        seen.add(name)
        t = by_name[name]
        spec = t.get("zone", {}).get(zone) if isinstance(t.get("zone"), dict) else None
        if isinstance(spec, dict):
            if "stack" in spec:
                path = (base_dir / spec["stack"]).resolve()
                return read_toml(path).get("layer"), str(path)
            return spec.get("layer"), file
        name = t.get("based_on")
    return None, file


def _layer_keys(table, file, where, catalog):
    """A ``[[layer]]`` table's class, its keys' SI values (as the stack parser reads
    them) and the prestress of each tile cell that gives one."""
    from .catalog import META_KEYS
    from .layers import LAYER_TYPES
    from .layers.resonators import CELL_SCHEMA
    from .stackfile import parse_fields

    errs: list = []
    table = dict(table)
    if "use" in table:
        entry = {k: v for k, v in catalog.get(table.pop("use")).items() if k not in META_KEYS}
        entry.update(table)
        table = entry
    cls = LAYER_TYPES[table["type"]]
    values = parse_fields(table, cls.schema, file, where, errs,
                          skip=("type", "use", "name", *META_KEYS))
    prestress = {}
    if hasattr(cls, "parse_tables"):
        for i, cell in enumerate(values.get("cell", []), 1):
            v = parse_fields(cell, CELL_SCHEMA, file, where, errs, skip=("name",))
            if "prestress" in v and "tension" not in v:
                prestress[i] = v["prestress"]
        values = cls.parse_tables(values, file, where, errs)
    return cls, values, prestress


def _vary_quantity(value, kind, file, where):
    """One value of a ``[[vary]]`` entry in SI (units as in stack files)."""
    if kind == "number":
        return parse_dimensionless(value, file, where)
    return parse_quantity(value, kind, file, where)


def _named(t, key, names, file, where):
    """The value of ``t[key]``, which must be one of ``names`` (a package or zone)."""
    value = t.get(key)
    if value is None:
        raise InputError(file, f"{where}.{key}", "missing required key")
    if value not in names:
        raise InputError(file, f"{where}.{key}", f"no {key} {value!r}"
                                                 f"{_suggest(str(value), names)} "
                                                 f"({key}s: {', '.join(names)})")
    return value


def _vary_address(t, where, file, base_dir, catalog, packages, raw_packages, zone_names):
    """What a ``[[vary]]`` entry addresses: ``(package, zone, layer, cell, key, kind,
    bounds, target)``; raises InputError."""
    from .layers.base import Field
    from .layers.resonators import CELL_SCHEMA
    from .trade.variants import LayerTarget, physical_bounds

    by_name = {p.name: p for p in packages}
    name = _named(t, "package", list(by_name), file, where)
    key = t.get("key")
    if not isinstance(key, str):
        raise InputError(file, f"{where}.key", "missing required key (the stack-file key "
                                               "to vary, or installation_mass)")
    pkg = by_name[name]
    if key == "installation_mass":
        given = [k for k in ("zone", "layer", "cell") if k in t]
        if given:
            raise InputError(file, f"{where}.{given[0]}", "installation_mass belongs to the "
                                                          "whole package: no zone, layer or cell")
        return pkg, None, None, None, key, "surface_density", physical_bounds(
            key, Field("surface_density", allow_zero=True)), None
    zone = _named(t, "zone", zone_names, file, where)
    if zone not in pkg.stacks:
        return None  # the package's stack for this zone had errors, already reported
    stack = pkg.stacks[zone]
    index = t.get("layer")
    if isinstance(index, bool) or not isinstance(index, int):
        raise InputError(file, f"{where}.layer", "expected the layer's 1-based index in the "
                                                 f"zone's stack, got {index!r}")
    if not 1 <= index <= len(stack.layers):
        raise InputError(file, f"{where}.layer", f"no layer {index}: {name!r} has "
                                                 f"{len(stack.layers)} layers in {zone!r}")
    tables, sfile = _raw_layer_tables(raw_packages, name, zone, base_dir, file)
    cls, values, prestress = _layer_keys(tables[index - 1], sfile, f"layer[{index}]", catalog)
    if cls.from_values(values) != stack.layers[index - 1]:
        raise InputError(file, f"{where}.layer", "this layer cannot be rebuilt from its "
                                                 "keys, so it cannot be varied")
    cell = t.get("cell")
    if cell is not None:
        if cls.type_name != "tile":
            raise InputError(file, f"{where}.cell", f"layer {index} is a {cls.type_name}, "
                                                    "not a tile: it has no cells")
        if isinstance(cell, bool) or not isinstance(cell, int) or not (
                1 <= cell <= len(values["cell"])):
            raise InputError(file, f"{where}.cell", f"no cell {cell!r}: the tile has "
                                                    f"{len(values['cell'])} cell kinds")
    schema = CELL_SCHEMA if cell is not None else cls.schema
    spec = schema.get(key)
    if spec is None or spec.kind in ("choice", "tables", "cells"):
        what = "a tile cell" if cell is not None else f"a {cls.type_name} layer"
        numeric = [k for k, f in schema.items() if f.kind not in ("choice", "tables", "cells")]
        reason = ("has no key" if spec is None else "has no numeric key")
        raise InputError(file, f"{where}.key", f"{what} {reason} {key!r}"
                                               f"{_suggest(key, numeric)} (numeric keys: "
                                               f"{', '.join(numeric)})")
    return (pkg, zone, index, cell, key, spec.kind, physical_bounds(key, spec),
            LayerTarget(cls, values, prestress))


def _vary_distribution(t, kind, bounds, file, where):
    """A ``distribution`` entry, truncated to the physical bounds; a normal without
    ``low``/``high`` is refused when a physical bound lies within 4 std of its mean."""
    from .trade.variants import NORMAL_CLEARANCE, Distribution, bounds_text, within

    dist = t["distribution"]
    if dist not in _DISTRIBUTIONS:
        raise InputError(file, f"{where}.distribution", f"unknown distribution {dist!r}"
                         f"{_suggest(str(dist), _DISTRIBUTIONS)} (normal, uniform, triangular)")
    allowed = set(_DISTRIBUTIONS[dist]) | {"low", "high"}
    for k in ("mean", "std", "low", "high", "mode"):
        if k in t and k not in allowed:
            raise InputError(file, f"{where}.{k}", f"not a key of a {dist} distribution "
                                                   f"(keys: {', '.join(sorted(allowed))})")
    for k in _DISTRIBUTIONS[dist]:
        if k not in t:
            raise InputError(file, f"{where}.{k}", f"missing: a {dist} distribution "
                                                   f"needs {', '.join(_DISTRIBUTIONS[dist])}")
    v = {k: _vary_quantity(t[k], kind, file, f"{where}.{k}") for k in allowed if k in t}
    for k in ("low", "high", "mean", "mode"):
        if k in v and not within(v[k], bounds):
            raise InputError(file, f"{where}.{k}", f"{t[k]!r} is unphysical: the value must "
                                                   f"be {bounds_text(bounds)}")
    lo_b, _, hi_b, _ = bounds
    low, high = v.get("low", lo_b), v.get("high", hi_b)
    if dist == "normal":
        mean, std = v["mean"], v["std"]
        if not std > 0:
            raise InputError(file, f"{where}.std", f"must be > 0, got {t['std']!r}")
        for side, b, given in (("low", low, "low" in v), ("high", high, "high" in v)):
            if not given and abs(mean - b) < NORMAL_CLEARANCE * std:
                raise InputError(file, f"{where}.{side}", "missing: this normal distribution "
                                 f"reaches unphysical values (the value must be "
                                 f"{bounds_text(bounds)}, {abs(mean - b) / std:.1g} std from "
                                 f"the mean); give low and high to truncate it")
        # without low/high, draws stop at the physical bound or 8 std, whichever is nearer
        low = max(low, mean - 2 * NORMAL_CLEARANCE * std) if "low" not in v else low
        high = min(high, mean + 2 * NORMAL_CLEARANCE * std) if "high" not in v else high
        if not low < mean < high:
            raise InputError(file, f"{where}.mean", "must lie between low and high")
        return Distribution("normal", low, high, mean=mean, std=std)
    if not low < high:
        raise InputError(file, f"{where}.high", "must be greater than low")
    if dist == "triangular" and not low <= v["mode"] <= high:
        raise InputError(file, f"{where}.mode", "must lie between low and high")
    return Distribution(dist, low, high, mode=v.get("mode"))


def _vary_entry(t, where, mode, file, base_dir, catalog, packages, raw_packages, zone_names):
    """One ``[[vary]]`` entry to a :class:`~noisebudget.trade.variants.Parameter`."""
    from .layers.base import LayerValueError
    from .trade.variants import MAX_VARIANTS, Parameter, apply_variant, bounds_text, within

    address = _vary_address(t, where, file, base_dir, catalog, packages, raw_packages,
                            zone_names)
    if address is None:
        return None
    pkg, zone, index, cell, key, kind, bounds, target = address
    given = [k for k in ("values", "range", "distribution") if k in t]
    if len(given) != 1:
        raise InputError(file, where, "give exactly one of values, range (with steps), "
                                      "distribution")
    how = given[0]
    if how == "distribution" and mode != "monte-carlo":
        raise InputError(file, f"{where}.distribution", "a distribution needs [trade] mode "
                                                        "= \"monte-carlo\"")
    if how != "distribution" and mode == "monte-carlo":
        raise InputError(file, f"{where}.{how}", "monte-carlo mode draws from "
                                                 "distributions: give distribution (or "
                                                 "[trade] mode = \"grid\")")
    if "steps" in t and how != "range":
        raise InputError(file, f"{where}.steps", "steps go with range")
    values = distribution = None
    if how == "values":
        raw = t["values"]
        if not isinstance(raw, list):
            raise InputError(file, f"{where}.values", "expected a list")
        if not raw:
            raise InputError(file, f"{where}.values", "empty list: zero variants")
        values = tuple(_vary_quantity(v, kind, file, f"{where}.values[{i + 1}]")
                       for i, v in enumerate(raw))
        lo, hi = min(values), max(values)
    elif how == "range":
        raw = t["range"]
        if not isinstance(raw, list) or len(raw) != 2:
            raise InputError(file, f"{where}.range", "expected [low, high]")
        lo, hi = (_vary_quantity(v, kind, file, f"{where}.range[{i + 1}]")
                  for i, v in enumerate(raw))
        if not lo < hi:
            raise InputError(file, f"{where}.range", "high must be greater than low")
        steps = t.get("steps")
        if isinstance(steps, bool) or not isinstance(steps, int):
            raise InputError(file, f"{where}.steps", "missing or not a whole number: a range "
                                                     "needs steps (>= 2)")
        if steps < 2:
            raise InputError(file, f"{where}.steps", f"steps = {steps} gives "
                             f"{'zero variants' if steps < 1 else 'one value'}: need >= 2")
        if steps > MAX_VARIANTS:
            raise InputError(file, f"{where}.steps", f"{steps} steps exceed the maximum of "
                                                     f"{MAX_VARIANTS}")
        values = tuple(np.linspace(lo, hi, steps))
    else:
        distribution = _vary_distribution(t, kind, bounds, file, where)
        lo, hi = distribution.low, distribution.high
    for i, v in enumerate(values or (lo, hi)):
        if not within(v, bounds):
            at = f"{how}[{i + 1}]" if how != "distribution" else how
            raise InputError(file, f"{where}.{at}", f"{v:g} {_si(kind)} is unphysical: the "
                                                    f"value must be {bounds_text(bounds)}")
    if "name" in t:
        label = str(t["name"])
    elif zone is None:
        label = key
    else:
        label = f"{zone}.layer{index}" + (f".cell{cell}" if cell else "") + f".{key}"
    p = Parameter(label, where, pkg.name, zone, index, cell, key, kind, values, distribution,
                  (lo, hi), target)
    for v in (values or (lo, hi)):
        try:
            apply_variant(pkg, (p,), (v,))
        except LayerValueError as exc:
            raise InputError(file, where, f"at {v:g} {_si(kind)}: {exc.key}: "
                                          f"{exc.reason}") from None
    if zone is not None and _ignored(pkg, p, zone, lo, hi):
        raise InputError(file, f"{where}.key", f"varying {key!r} does not change this layer "
                                               "(its file gives the layer by other keys)")
    return p


def _ignored(pkg, p, zone, lo, hi) -> bool:
    """Whether the layer comes out the same at two different values of the key."""
    from .layers.base import LayerValueError
    from .trade.variants import apply_variant

    other = hi if hi != lo else (lo * 0.9 if lo else 1.0)
    try:
        a, b = (apply_variant(pkg, (p,), (v,)).stacks[zone] for v in (lo, other))
    except LayerValueError:
        return False
    return a == b


def _si(kind):
    from .units import QUANTITIES

    return QUANTITIES[kind][0] if kind in QUANTITIES else ""


def _trade_spec(data, file, base_dir, catalog, packages, zone_names, errors):
    """The ``[[vary]]`` entries and ``[trade]`` table as a
    :class:`~noisebudget.trade.variants.TradeSpec`; problems go to ``errors``."""
    from .layers.base import LayerValueError
    from .trade.variants import MAX_VARIANTS, TradeSpec, apply_variant, design

    settings = _trade_table(data.get("trade"), file, errors)
    tables = data.get("vary", [])
    if not isinstance(tables, list):
        errors.append(InputError(file, "vary", "use [[vary]] (an array of tables)"))
        return TradeSpec((), **settings)
    raw_packages = data.get("package") if isinstance(data.get("package"), list) else []
    params, seen = [], {}
    before = len(errors)
    for i, t in enumerate(tables):
        where = f"vary[{i + 1}]"
        if not isinstance(t, dict):
            errors.append(InputError(file, where, "expected a table"))
            continue
        _unknown(t, _VARY, file, f"{where}.", errors)
        try:
            p = _vary_entry(t, where, settings["mode"], file, base_dir, catalog, packages,
                            raw_packages, zone_names)
        except InputError as exc:
            errors.append(exc)
            continue
        if p is None:
            continue
        if params and p.package != params[0].package:
            errors.append(InputError(file, f"{where}.package", f"a trade study varies one "
                                     f"package; {params[0].where} varies {params[0].package!r}"))
            continue
        address = (p.zone, p.layer, p.cell, p.key)
        if address in seen:
            errors.append(InputError(file, where, f"varies the same value as {seen[address]}"))
            continue
        seen[address] = where
        params.append(p)
    spec = TradeSpec(tuple(params), **settings)
    if len(errors) > before or not params:
        return spec
    if settings["mode"] == "grid" and spec.count > MAX_VARIANTS:
        errors.append(InputError(file, "vary", f"the grid has {spec.count} variants, more "
                                               f"than the maximum of {MAX_VARIANTS}"))
        return spec
    layers = [(p.zone, p.layer) for p in params if p.zone is not None]
    if len(set(layers)) < len(layers):  # values of one layer may clash: build every variant
        x = design(spec)
        pkg = next(p for p in packages if p.name == spec.package)
        for row in x:
            try:
                apply_variant(pkg, params, row)
            except LayerValueError as exc:
                values = ", ".join(f"{p.column} = {v:g}" for p, v in zip(params, row,
                                                                          strict=True))
                errors.append(InputError(file, "vary", f"a variant ({values}) is invalid: "
                                                       f"{exc.key}: {exc.reason}"))
                break
    return spec
