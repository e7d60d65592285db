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
_TOP = ("study", "air", "cabin", "condition", "zone", "package", "targets")
_STUDY = ("title", "programme", "revision", "author", "date", "baseline", "incidence",
          "theta_max_deg", "exterior_level", "include_package_absorption", "notes")


class LoadedStudy:
    """A validated study: the budget inputs plus the files it read (for hashes)."""

    def __init__(self, inputs: StudyInputs, files: dict):
        self.inputs = inputs
        self.files = files          # path -> sha256 of every input file


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


def _cabin(table, file, errors, info):
    """Absorption area per band and the bands; ``info`` receives the volume and which
    form of absorption the file gave, for the report's inputs."""
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
    info.update(volume_m3=volume, absorption_given=given[0] if len(given) == 1 else "")
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
        tones_f, tones_l, tones_n = [], [], []
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
                tones_n.append(str(tone.get("name", f"{f:g} Hz")))
            except InputError as exc:
                errors.append(exc)
        if levels is not None:
            out.append(Condition(str(t.get("name", f"condition {i + 1}")), bands, levels,
                                 np.array(tones_f), np.array(tones_l), tuple(tones_n)))
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
    cabin_info: dict = {}
    cabin_a, cabin_bands = _cabin(data.get("cabin"), file, errors, cabin_info)
    conditions = _conditions(data.get("condition"), file, errors)
    zone_names: list[str] = []
    zones = _zones(data.get("zone"), file, errors, zone_names)
    catalog = load_catalog()
    packages = _packages(data.get("package"), zones, (ext, cab), file, path.parent,
                         errors, files, catalog, zone_names)
    targets = _targets(data.get("targets"), file, errors)
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
    meta["cabin"] = cabin_info
    inputs = StudyInputs(meta["title"] or path.stem, tuple(conditions), tuple(zones),
                         tuple(packages), baseline, cabin_a, cabin_bands, convention,
                         incidence, float(theta) if theta is not None else None,
                         bool(st.get("include_package_absorption", False)), targets, meta)
    return LoadedStudy(inputs, files)


def run_study(path):
    """Load, validate and compute a study file; returns a
    :class:`~noisebudget.budget.StudyResult` (DataFrames with units in column names)."""
    loaded = load_study(path)
    result = compute_budget(loaded.inputs)
    result.files = loaded.files
    return result
