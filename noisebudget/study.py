"""Study files (TOML): title block, air, cabin, conditions, zones, packages, targets.

Every problem found is collected, so ``noisebudget check`` lists them all; ``load_study``
raises :class:`~noisebudget.errors.InputErrors` when there is any.
"""

from __future__ import annotations

import hashlib
import math
from pathlib import Path

import numpy as np

from .bands import bands_between, octave_to_thirds
from .budget import (
    Condition,
    Curve,
    InteriorSource,
    Leak,
    Package,
    StudyInputs,
    Zone,
    compute_budget,
    sabine_area,
)
from .catalog import load_catalog
from .errors import InputError, InputErrors
from .media import Air, standard_atmosphere
from .stackfile import _suggest, layer_is_structure, parse_air, parse_stack, read_toml
from .units import parse_dimensionless, parse_quantity

__all__ = ["LoadedStudy", "load_study", "run_study", "TARGET_METRICS"]

TARGET_METRICS = ("dba", "sil4", "limit_bands_hz", "limit_db")
_TOP = ("study", "air", "cabin", "condition", "zone", "package", "targets", "interior_source")
_ZONE_KEYS = ("leak", "flanking_tl_db", "flanking_bands_hz")  # [package.zone.NAME], not stack
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


def _bands(values, file, where, errors, b=3):
    try:
        arr = np.array([float(v) for v in values])
    except (TypeError, ValueError):
        errors.append(InputError(file, where, "expected a list of nominal frequencies in Hz"))
        return None
    if arr.size == 0:
        errors.append(InputError(file, where, "empty band list"))
        return None
    name = "one-third-octave" if b == 3 else "octave"
    if not (np.all(np.isfinite(arr)) and arr[0] > 0 and arr[-1] >= arr[0]):
        errors.append(InputError(file, where, f"bands must be increasing {name} nominal "
                                              "frequencies in Hz"))
        return None
    ref = bands_between(arr[0], arr[-1], b)
    if ref.nominal.size != arr.size or not np.allclose(ref.nominal, arr):
        errors.append(InputError(file, where, f"bands must be consecutive ISO 266 {name} "
                                              f"nominal frequencies from {arr[0]:g} Hz"))
        return None
    return ref


def _bandwidth(table, file, where, errors):
    """``bandwidth`` of a banded table: 3 (one-third octave, default) or 1 (octave)."""
    bw = table.get("bandwidth", "third")
    if bw not in ("third", "octave"):
        errors.append(InputError(file, f"{where}.bandwidth", f"unknown bandwidth {bw!r} "
                                                             "(third, octave)"))
        return None
    return 3 if bw == "third" else 1


def _spectrum(table, file, where, errors):
    """``bands_hz`` and ``levels_db`` of a condition or interior source, octave levels
    split into thirds of equal energy; ``(bands, levels, b)`` or Nones."""
    b = _bandwidth(table, file, where, errors)
    bands = _bands(table.get("bands_hz", []), file, f"{where}.bands_hz", errors, b or 3)
    if bands is None or b is None:
        return None, None, b
    levels = _numbers(table.get("levels_db"), len(bands), file, f"{where}.levels_db", errors)
    if levels is None or b == 3:
        return bands, levels, b
    return *octave_to_thirds(bands, levels), b


def _is_number(v) -> bool:
    """A finite plain number (not a bool)."""
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _numbers(values, n, file, where, errors):
    if values is None:
        errors.append(InputError(file, where, "missing required key"))
        return None
    if not isinstance(values, list) or not all(_is_number(v) for v in values):
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
               "mean_absorption", "surface_area", "bandwidth")
    _unknown(table, allowed, file, f"{where}.", errors)
    b = _bandwidth(table, file, where, errors)
    bands = _bands(table.get("bands_hz", []), file, f"{where}.bands_hz", errors, b or 3)
    if b == 1 and bands is not None:  # octave values are copied to their three thirds
        octaves, bands = bands, octave_to_thirds(bands, np.zeros(len(bands)))[0]
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
    value_bands = octaves if b == 1 else bands
    if not isinstance(values, list) or len(values) != len(value_bands):
        errors.append(InputError(file, f"{where}.{kind}", f"need one value per band "
                                                         f"({len(value_bands)}): the bands do "
                                                         "not match"))
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
    if len(out) != len(value_bands):
        return None, bands
    arr = np.array(out) if b != 1 else octave_to_thirds(octaves, out, "copy")[1]
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
        _unknown(t, ("name", "bands_hz", "levels_db", "tone", "notes", "bandwidth"), file,
                 f"{where}.", errors)
        bands, levels, b = _spectrum(t, file, where, errors)
        if bands is None:
            continue
        tones_f, tones_l, names = [], [], []
        for j, tone in enumerate(t.get("tone", [])):
            tw = f"{where}.tone[{j + 1}]"
            if not isinstance(tone, dict):
                errors.append(InputError(file, tw, "expected a table"))
                continue
            _unknown(tone, ("frequency", "level_db", "name"), file, f"{tw}.", errors)
            try:
                f = parse_quantity(tone.get("frequency"), "frequency", file, f"{tw}.frequency")
                lv = tone.get("level_db")
                if not _is_number(lv):
                    raise InputError(file, f"{tw}.level_db", f"not a number: {lv!r}")
                if bands.containing([f])[0] < 0:
                    raise InputError(file, f"{tw}.frequency", f"{f:g} Hz lies outside the "
                                                              "condition's bands")
                tones_f.append(f)
                tones_l.append(float(lv))
                names.append(str(tone.get("name", f"{f:g} Hz")))
            except InputError as exc:
                errors.append(exc)
        if levels is not None:
            out.append(Condition(str(t.get("name", f"condition {i + 1}")), bands, levels,
                                 np.array(tones_f), np.array(tones_l), tuple(names),
                                 "third" if b == 3 else "octave"))
    return out


def _curve(table, key, bands_key, file, where, errors, lowest=None):
    """A dB value given as a number, or as a list aligned with the frequencies (Hz) of
    ``bands_key``: a :class:`~noisebudget.budget.Curve`, or None (absent or bad)."""
    if key not in table:
        if bands_key in table:
            errors.append(InputError(file, f"{where}.{bands_key}", f"given without {key}"))
        return None
    value, points = table[key], table.get(bands_key)
    kw, bw = f"{where}.{key}", f"{where}.{bands_key}"
    if _is_number(value):
        values = (float(value),)
        if points is not None:
            errors.append(InputError(file, bw, f"a single {key} takes no frequencies"))
            return None
    elif isinstance(value, list) and value and all(_is_number(v) for v in value):
        values = tuple(float(v) for v in value)
        if points is None:
            errors.append(InputError(file, bw, f"missing: a list of {key} needs its "
                                               "frequencies in Hz"))
            return None
        if not (isinstance(points, list) and points and all(_is_number(v) and v > 0
                                                             for v in points)
                and all(b > a for a, b in zip(points, points[1:], strict=False))):
            errors.append(InputError(file, bw, "expected increasing frequencies in Hz"))
            return None
        if len(points) != len(values):
            errors.append(InputError(file, kw, f"{len(values)} values for {len(points)} "
                                               f"frequencies in {bands_key}"))
            return None
    else:
        errors.append(InputError(file, kw, "expected a number (dB) or a list of numbers"))
        return None
    if lowest is not None and min(values) < lowest:
        errors.append(InputError(file, kw, f"must be >= {lowest:g} dB"))
        return None
    return Curve(tuple(float(v) for v in points or ()), values)


def _flanking(table, file, where, errors):
    """``flanking_tl_db`` (+ ``flanking_bands_hz``) of a zone or a package's zone."""
    return _curve(table, "flanking_tl_db", "flanking_bands_hz", file, where, errors, 0.0)


def _zones(tables, file, errors, names):
    """Valid zones; ``names`` receives every zone name, so that a zone with a bad area
    does not also make each package's stack for it look unknown."""
    out = []
    for i, where, t in _each_table(tables, "zone", file, errors):
        _unknown(t, ("name", "area", "notes", "exterior_offset_db", "offset_bands_hz",
                     "flanking_tl_db", "flanking_bands_hz"), file, f"{where}.", errors)
        names.append(str(t.get("name", f"zone {i + 1}")))
        offset = _curve(t, "exterior_offset_db", "offset_bands_hz", file, where, errors)
        flanking = _flanking(t, file, where, errors)
        try:
            area = parse_quantity(t.get("area"), "area", file, f"{where}.area")
            if area <= 0:
                raise InputError(file, f"{where}.area", f"must be > 0, got {t.get('area')!r}")
            out.append(Zone(names[-1], area, offset or Curve(), flanking))
        except InputError as exc:
            errors.append(exc)
    return out


_APERTURE_KEYS = {"slit": ("width", "length", "depth"), "hole": ("diameter", "depth")}


def _leak(t, file, where, errors):
    """One ``[[package.zone.NAME.leak]]`` table: a :class:`~noisebudget.budget.Leak` or
    None (problems recorded)."""
    from .apertures import Hole, Slit

    shape = t.get("shape")
    if shape not in _APERTURE_KEYS:
        reason = "missing" if shape is None else \
            f"unknown shape {shape!r}{_suggest(str(shape), _APERTURE_KEYS)}"
        errors.append(InputError(file, f"{where}.shape", f"{reason} (slit, hole)"))
        return None
    keys = _APERTURE_KEYS[shape]
    _unknown(t, ("shape", "name", "behind_layer", *keys, *(("count",) * (shape == "hole"))),
             file, f"{where}.", errors)
    before = len(errors)
    size = {}
    for k in keys:
        try:
            v = parse_quantity(t[k], "length", file, f"{where}.{k}") if k in t else None
            if v is None:
                raise InputError(file, f"{where}.{k}", "missing required key")
            if v < 0 or (v == 0 and k != "depth"):
                bound = ">= 0" if k == "depth" else "> 0"
                raise InputError(file, f"{where}.{k}", f"must be {bound}, got {t[k]!r}")
            size[k] = v
        except InputError as exc:
            errors.append(exc)
    for k, low in (("count", 1), ("behind_layer", 0)):
        v = t.get(k, low)
        if isinstance(v, bool) or not isinstance(v, int) or v < low:
            errors.append(InputError(file, f"{where}.{k}", f"must be a whole number >= {low}, "
                                                           f"got {v!r}"))
    if len(errors) > before:
        return None
    aperture = Slit(**size) if shape == "slit" else Hole(**size, count=t.get("count", 1))
    return Leak(aperture, t.get("behind_layer", 0), str(t.get("name", "")))


def _leaks(spec, stack, area, file, where, errors):
    """The leaks of one package zone, checked against its stack and area."""
    tables = spec.get("leak")
    if tables is None:
        return ()
    if not isinstance(tables, list):
        errors.append(InputError(file, f"{where}.leak", "use [[...leak]] tables"))
        return ()
    out = []
    for i, t in enumerate(tables):
        lw = f"{where}.leak[{i + 1}]"
        if not isinstance(t, dict):
            errors.append(InputError(file, lw, "expected a table"))
            continue
        leak = _leak(t, file, lw, errors)
        if leak is not None and stack is not None and leak.behind_layer >= len(stack.layers):
            errors.append(InputError(file, f"{lw}.behind_layer", f"the stack has "
                                     f"{len(stack.layers)} layers: a leak behind layer "
                                     f"{leak.behind_layer} opens nowhere"))
        elif leak is not None:
            out.append(leak)
    open_area = sum(lk.area for lk in out)
    if area is not None and open_area >= area:
        errors.append(InputError(file, f"{where}.leak", f"the leaks' open area "
                                 f"({open_area:.4g} m^2) must be smaller than the zone's "
                                 f"area ({area:.4g} m^2)"))
    return tuple(out)


def _interior_sources(tables, conditions, zone_names, file, errors):
    """``[[interior_source]]`` entries, each fitting every condition it applies to."""
    if tables is None:
        return ()
    out = []
    cond_names = [c.name for c in conditions]
    for i, where, t in _each_table(tables, "interior_source", file, errors):
        _unknown(t, ("name", "bands_hz", "levels_db", "conditions", "bandwidth", "notes"),
                 file, f"{where}.", errors)
        name = str(t.get("name", f"interior source {i + 1}"))
        if name in zone_names or name in [s.name for s in out]:
            errors.append(InputError(file, f"{where}.name", f"{name!r} is already the name "
                                                            "of a zone or source"))
        bands, levels, b = _spectrum(t, file, where, errors)
        applies = t.get("conditions")
        if applies is not None and not (isinstance(applies, list) and all(
                isinstance(c, str) for c in applies)):
            errors.append(InputError(file, f"{where}.conditions", "expected a list of "
                                                                  "condition names"))
            continue
        for c in applies or []:
            if c not in cond_names:
                errors.append(InputError(file, f"{where}.conditions", f"no condition {c!r}"
                                         f"{_suggest(c, cond_names)}"))
        if bands is None or levels is None:
            continue
        for c in conditions:
            if (applies is None or c.name in applies) and not set(bands.nominal) <= set(
                    c.bands.nominal):
                errors.append(InputError(file, f"{where}.bands_hz", f"bands do not fit: "
                                         f"{bands.nominal[0]:g}-{bands.nominal[-1]:g} Hz lies "
                                         f"outside condition {c.name!r} "
                                         f"({c.bands.nominal[0]:g}-{c.bands.nominal[-1]:g} Hz)"))
                break
        else:
            out.append(InteriorSource(name, bands, levels, tuple(applies) if applies is not
                                      None else None, "third" if b == 3 else "octave"))
    return tuple(out)


def _packages(tables, zones, airs, file, base_dir, errors, files, catalog, zone_names):
    out = []
    by_name, failed_of = {}, {}
    areas = {z.name: z.area for z in zones}
    for i, where, t in _each_table(tables, "package", file, errors):
        _unknown(t, ("name", "based_on", "installation_mass", "notes", "zone"), file,
                 f"{where}.", errors)
        name = str(t.get("name", f"package {i + 1}"))
        inst = 0.0
        if "installation_mass" in t:
            try:
                inst = parse_quantity(t["installation_mass"], "surface_density", file,
                                      f"{where}.installation_mass")
            except InputError as exc:
                errors.append(exc)
        # per zone: stack, leaks, flanking override, structure flags, installation mass
        zd = {"stacks": {}, "leaks": {}, "flanking": {}, "structure": {}, "installation": {}}
        failed = set()  # zones whose stack had errors (already reported)
        if "based_on" in t:
            if t["based_on"] not in by_name:
                errors.append(InputError(file, f"{where}.based_on", f"no earlier package "
                                                                    f"{t['based_on']!r}"))
            else:
                base = by_name[t["based_on"]]
                for key in zd:
                    zd[key].update(getattr(base, key))
                failed |= failed_of[t["based_on"]]
        zt = t.get("zone", {})
        if not isinstance(zt, dict):
            errors.append(InputError(file, f"{where}.zone", "expected [package.zone.NAME] "
                                                            "tables"))
            zt = {}
        for zname, spec in zt.items():
            zw = f"{where}.zone.{zname}"
            if zname not in zone_names:
                errors.append(InputError(file, zw, f"no such zone{_suggest(zname, zone_names)} "
                                                   f"(zones: {', '.join(zone_names)})"))
                continue
            if not isinstance(spec, dict):
                errors.append(InputError(file, zw, "expected a table"))
                continue
            for key in zd:  # a zone given here replaces everything inherited for it
                zd[key].pop(zname, None)
            failed.discard(zname)
            zd["installation"][zname] = inst
            flanking = _flanking(spec, file, zw, errors)
            if flanking is not None:
                zd["flanking"][zname] = flanking
            stack, structure = _zone_stack(spec, zw, airs, file, base_dir, errors, files,
                                           catalog)
            zd["leaks"][zname] = _leaks(spec, stack, areas.get(zname), file, zw, errors)
            if stack is None:
                failed.add(zname)
                continue
            zd["stacks"][zname] = stack
            zd["structure"][zname] = structure
        for z in zones:
            if z.name not in zd["stacks"] and z.name not in failed:
                errors.append(InputError(file, f"{where}.zone.{z.name}",
                                         "missing: every package needs a stack for every zone"))
        pkg = Package(name, zd["stacks"], inst, str(t.get("notes", "")), zd["leaks"],
                      zd["flanking"], zd["structure"], zd["installation"])
        if name in by_name:
            errors.append(InputError(file, f"{where}.name", f"duplicate package {name!r}"))
        by_name[name] = pkg
        failed_of[name] = failed - set(zd["stacks"])
        out.append(pkg)
    return out


def _zone_stack(spec, zw, airs, file, base_dir, errors, files, catalog):
    """The stack of ``[package.zone.NAME]`` (inline layers or ``stack = "file"``), with
    the study's air, and its layers' structure flags; ``(None, ())`` on errors."""
    data, sfile = {k: v for k, v in spec.items() if k not in _ZONE_KEYS}, file
    if "stack" in spec:
        path = (base_dir / spec["stack"]).resolve()
        try:
            data = read_toml(path)
            files[str(path)] = _sha256(path)
            sfile = str(path)
        except InputError as exc:
            errors.append(InputError(file, f"{zw}.stack", f"{spec['stack']}: {exc.reason}"))
            return None, ()
    data = dict(data)
    for k, air in zip(("source_air", "receiver_air"), airs, strict=True):
        data[k] = {"temperature": f"{air.temperature} K",  # the study's air governs
                   "pressure": f"{air.pressure} Pa"}
    try:
        stack = parse_stack(data, sfile, "" if sfile != file else zw, catalog)
    except InputErrors as exc:
        errors.extend(exc.errors)
        return None, ()
    return stack, tuple(layer_is_structure(t, catalog) for t in data["layer"])


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


def _conversions(cabin, conditions, sources) -> list[str]:
    """Plain sentences stating every octave-to-third conversion made, for the report."""
    split = "octave-band levels split into three one-third-octave bands of equal energy " \
            "(-4.77 dB each)"
    out = [f"condition {c.name!r}: {split}" for c in conditions
           if c.input_bandwidth == "octave"]
    out += [f"interior source {s.name!r}: {split}" for s in sources
            if s.input_bandwidth == "octave"]
    if cabin.get("bandwidth") == "octave":
        out.append("cabin: octave-band values copied to their three one-third-octave bands")
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
    sources = _interior_sources(data.get("interior_source"), conditions, zone_names, file,
                                errors)
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
    meta["conversions"] = _conversions(data.get("cabin", {}), conditions, sources)
    inputs = StudyInputs(meta["title"] or path.stem, tuple(conditions), tuple(zones),
                         tuple(packages), baseline, cabin_a, cabin_bands, convention,
                         incidence, float(theta) if theta is not None else None,
                         bool(st.get("include_package_absorption", False)), targets, meta,
                         sources)
    return LoadedStudy(inputs, files)


def run_study(path):
    """Load, validate and compute a study file; returns a
    :class:`~noisebudget.budget.StudyResult` (DataFrames with units in column names)."""
    loaded = load_study(path)
    result = compute_budget(loaded.inputs)
    result.files = loaded.files
    return result
