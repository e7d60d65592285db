"""File schemas: read a TOML table against a dict of :class:`~noisebudget.layers.base.Field`.

This is the file boundary. Stack files, catalog entries and study files are declared as
dicts of ``Field`` (the layer keys beside each layer class, the rest in
:mod:`~noisebudget.stackfile`, :mod:`~noisebudget.catalog` and :mod:`~noisebudget.study`)
and read here: every key's TOML type, unit dimension, range and finiteness is checked and
converted to SI before any computation, and every problem of a file (and of the files it
names) is collected as one :class:`~noisebudget.errors.InputError` line naming the file,
the key path (``layer[2].cell[1].tension``, 1-based) and what is wrong. The key
reference ``docs/file-keys.md`` is generated from the same dicts (:mod:`noisebudget.keyref`).
"""

from __future__ import annotations

import math
import re
import tomllib
import unicodedata
from pathlib import Path

from .errors import InputError, InputErrors, show
from .layers.base import Field
from .units import QUANTITIES, parse_quantity

__all__ = ["INVALID", "PLAIN_UNITS", "Reader", "Values", "check_name", "describe", "join",
           "range_text", "read_bytes", "read_toml", "read_table", "read_value", "suggest"]

PLAIN_UNITS = {"number": "", "db": "dB", "deg": "degrees"}  # plain numbers, display unit
MAX_NAME = 100  # characters of a name (tables, legends and sheets stay readable)
MAX_FILE_BYTES = 16 * 2**20  # an input file (stack, study, catalog, measured data)


class _Invalid:
    """Marks a value that was given but could not be read (its problem is recorded)."""

    def __repr__(self):
        return "INVALID"

    def __bool__(self):
        return False


INVALID = _Invalid()


class Values(dict):
    """The converted values of one table, keyed as in the file (SI floats, tuples,
    :class:`~noisebudget.bands.Bands`, nested ``Values``); absent keys with a default
    hold it. ``bad`` names the keys that were given but invalid (already reported), so
    that nothing else complains about them again."""

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self.bad: set[str] = set()

    def given(self, key: str) -> bool:
        """The key was in the file (valid or not)."""
        return key in self.bad or key in self


class Reader:
    """One pass over a file and the files it names: where values come from (``file``,
    ``base_dir`` for relative paths) and where problems go (``problems``, shared).

    ``shared`` holds what the whole pass shares (the catalog, the files read and their
    hashes, the catalog entries used); ``chain`` the files that include the current one.
    """

    def __init__(self, file: str = "", base_dir=None, problems: list | None = None,
                 shared: dict | None = None, chain: tuple = ()):
        self.file = str(file)
        if base_dir is None:
            base_dir = Path(file).parent if file else Path.cwd()
        self.base_dir = Path(base_dir)
        self.problems = [] if problems is None else problems
        self.shared = {} if shared is None else shared
        self.chain = chain

    def problem(self, key: str, reason: str) -> None:
        """Record one problem at a key path of the current file."""
        self.problems.append(InputError(self.file, key, reason))

    def for_file(self, file, base_dir=None, chain: tuple = ()) -> Reader:
        """A reader for another file of the same pass (same problems, same shared state)."""
        return Reader(str(file), base_dir, self.problems, self.shared, chain)

    def raise_problems(self) -> None:
        """Raise :class:`InputErrors` listing every problem recorded, if any (a problem
        met twice, e.g. in a stack file inserted twice, once)."""
        if self.problems:
            seen = {(p.file, p.key, p.reason): p for p in self.problems}
            raise InputErrors(list(seen.values()))


def read_bytes(path, what: str = "file") -> bytes:
    """The bytes of an input file, at most :data:`MAX_FILE_BYTES` (a device such as
    ``/dev/zero`` or a huge file is refused before it fills the memory); a missing,
    unreadable or oversized file, or a folder, raises InputError."""
    path = Path(path)
    try:
        with path.open("rb") as handle:
            raw = handle.read(MAX_FILE_BYTES + 1)
    except FileNotFoundError:
        raise InputError(str(path), "", "file not found") from None
    except IsADirectoryError:
        raise InputError(str(path), "", f"is a folder, not a {what}") from None
    except OSError as exc:
        raise InputError(str(path), "", f"cannot read file ({exc.strerror or exc})") from None
    if len(raw) > MAX_FILE_BYTES:
        raise InputError(str(path), "", f"larger than {MAX_FILE_BYTES // 2**20} MB: not a "
                                        f"{what} noisebudget reads")
    return raw


def read_toml(path) -> dict:
    """Read a TOML file (UTF-8, a byte-order mark allowed); a missing, unreadable,
    oversized or malformed file raises InputError."""
    path = Path(path)
    raw = read_bytes(path)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(str(path), "", f"not UTF-8 text (byte {exc.start}): save the file "
                                        "as UTF-8") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(str(path), "", f"malformed TOML: {exc}") from None


def suggest(word, options) -> str:
    """``"; did you mean 'x'?"`` for the nearest spelling among ``options``, or ``""``."""
    import difflib

    near = difflib.get_close_matches(str(word), [str(o) for o in options], n=1, cutoff=0.6)
    return f"; did you mean {near[0]!r}?" if near else ""


_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")


def join(where: str, key) -> str:
    """Key path of ``key`` inside ``where``: ``a.b``, or ``a."two words"`` for a key that
    TOML must quote; an integer is a 1-based index, ``a[2]``."""
    if isinstance(key, int):
        return f"{where}[{key}]"
    text = key if _BARE_KEY.fullmatch(key) else '"' + key.encode(
        "unicode_escape").decode("ascii").replace('"', '\\"') + '"'
    return f"{where}.{text}" if where else text


def check_name(value, what: str = "a name") -> str:
    """A label given by the user (package, zone, condition, layer): a non-empty string of
    at most :data:`MAX_NAME` characters without control characters or leading or
    trailing spaces. Any other character is fine: the reports escape text for their
    renderers. Returns the reason it is refused, or ``""``."""
    if not isinstance(value, str):
        return f"expected {what} (a string), got {show(value, typed=True)}"
    if not value.strip():
        return f"{what} must not be empty"
    if value != value.strip():
        return f"{show(value)}: {what} must not start or end with spaces"
    if len(value) > MAX_NAME:
        return f"{what} of {len(value)} characters: at most {MAX_NAME}"
    bad = _control(value, allowed="")
    if bad:
        return f"{show(value)}: {what} must not hold control characters ({bad})"
    return ""


def _control(text: str, allowed: str) -> str:
    """The control or format characters of ``text`` (not in ``allowed``), as U+XXXX."""
    found = sorted({ch for ch in text if ch not in allowed
                    and unicodedata.category(ch) in ("Cc", "Cf", "Zl", "Zp", "Cs", "Co")})
    return ", ".join(f"U+{ord(ch):04X}" for ch in found[:3])


# ---------------------------------------------------------------------------- leaves


def _bounds(spec: Field) -> list[tuple[str, float]]:
    out = []
    if spec.positive:
        out.append((">=" if spec.allow_zero else ">", 0.0))
    for op, v in ((">", spec.gt), (">=", spec.ge), ("<", spec.lt), ("<=", spec.le)):
        if v is not None:
            out.append((op, float(v)))
    return out


_OPS = {">": lambda x, v: x > v, ">=": lambda x, v: x >= v, "<": lambda x, v: x < v,
        "<=": lambda x, v: x <= v}


def _unit_of(spec: Field) -> str:
    if spec.kind in QUANTITIES:
        return " " + QUANTITIES[spec.kind][0]
    unit = PLAIN_UNITS.get(spec.kind, "")
    return f" {unit}" if unit and unit != "degrees" else ""


def range_text(spec: Field) -> str:
    """The allowed range of a numeric field, e.g. ``> 0``, ``(0, 1]``, ``[150 K, 400 K]``."""
    b = _bounds(spec)
    unit = _unit_of(spec)
    lows = [(op, v) for op, v in b if op[0] == ">"]
    highs = [(op, v) for op, v in b if op[0] == "<"]
    low = max(lows, key=lambda t: (t[1], t[0] == ">")) if lows else None
    high = min(highs, key=lambda t: (t[1], t[0] == "<=")) if highs else None
    if low and high:
        return (f"{'(' if low[0] == '>' else '['}{low[1]:g}{unit}, {high[1]:g}{unit}"
                f"{')' if high[0] == '<' else ']'}")
    one = low or high
    return f"{one[0]} {one[1]:g}{unit}" if one else ""


def _number(value, spec: Field, file: str, path: str) -> float:
    kind = spec.kind
    if kind in QUANTITIES:
        x = parse_quantity(value, kind, file, path)
    else:
        unit = PLAIN_UNITS[kind]
        what = f"a plain number in {unit}" if unit else "a plain number"
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            hint = ""
            if isinstance(value, str) and kind == "number":
                hint = " (no unit: this value is dimensionless)"
            elif isinstance(value, str):
                hint = f" (the unit is {unit}: give the number alone)"
            raise InputError(file, path, f"expected {what}, got {show(value, typed=True)}"
                                         f"{hint}")
        x = float(value)
        if not math.isfinite(x):
            raise InputError(file, path, f"{show(value)} is not a finite number")
    _check_bounds(x, value, spec, file, path)
    return x


def _check_bounds(x, value, spec: Field, file: str, path: str) -> None:
    if not all(_OPS[op](x, v) for op, v in _bounds(spec)):
        text = range_text(spec)
        verb = "lie in" if text[0] in "([" else "be"
        raise InputError(file, path, f"must {verb} {text}, got {show(value)}")


def _integer(value, spec: Field, file: str, path: str) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        raise InputError(file, path, f"expected an integer, got {show(value, typed=True)}")
    _check_bounds(value, value, spec, file, path)
    return value


def _boolean(value, spec: Field, file: str, path: str) -> bool:
    if not isinstance(value, bool):
        hint = " (write true or false without quotes)" if isinstance(value, str) else ""
        raise InputError(file, path, f"expected true or false, got {show(value, typed=True)}"
                                     f"{hint}")
    return value


def _choice(value, spec: Field, file: str, path: str) -> str:
    if not isinstance(value, str):
        raise InputError(file, path, f"expected one of {', '.join(spec.choices)}, got "
                                     f"{show(value, typed=True)}")
    if value not in spec.choices:
        raise InputError(file, path, f"unknown value {show(value)}"
                                     f"{suggest(value, spec.choices)} "
                                     f"(one of {', '.join(spec.choices)})")
    return value


def _name(value, spec: Field, file: str, path: str) -> str:
    reason = check_name(value)
    if reason:
        raise InputError(file, path, reason)
    return value


def _text(value, spec: Field, file: str, path: str) -> str:
    if not isinstance(value, str):
        raise InputError(file, path, f"expected text (a string), got {show(value, typed=True)}")
    bad = _control(value, allowed="\t\n\r")
    if bad:
        raise InputError(file, path, f"text must not hold control characters ({bad})")
    return value


def _date(value, spec: Field, file: str, path: str) -> str:
    import datetime

    if isinstance(value, datetime.date | datetime.datetime):
        return value.isoformat()
    return _text(value, spec, file, path)


def _path(value, spec: Field, file: str, path: str) -> str:
    if not isinstance(value, str) or not value.strip():
        raise InputError(file, path, f"expected a file name (a string), got "
                                     f"{show(value, typed=True)}")
    bad = _control(value, allowed="")
    if bad:
        raise InputError(file, path, f"a file name must not hold control characters ({bad})")
    return value


def _bands(value, spec: Field, file: str, path: str, width: str = "third"):
    from .bands import bands_between

    example = "[100, 125, 160]" if width == "third" else "[125, 250, 500]"
    if not isinstance(value, list) or not value:
        raise InputError(file, path, f"expected a list of nominal band frequencies in Hz "
                                     f"such as {example}, got {show(value, typed=True)}")
    for i, v in enumerate(value, start=1):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) \
                or v <= 0:
            raise InputError(file, join(path, i), f"expected a band frequency in Hz (a "
                                                  f"positive number), got "
                                                  f"{show(v, typed=True)}")
    lo, hi = float(value[0]), float(value[-1])
    if not 10.0 <= lo <= hi <= 20000.0:
        raise InputError(file, path, f"bands must lie between 10 Hz and 20000 Hz and rise, "
                                     f"got {lo:g} .. {hi:g} Hz")
    ref = bands_between(lo, hi, 3 if width == "third" else 1)
    if len(ref) != len(value) or not all(math.isclose(a, float(b), rel_tol=1e-6)
                                         for a, b in zip(ref.nominal, value, strict=True)):
        kind = "one-third-octave" if width == "third" else "octave"
        raise InputError(file, path, f"bands must be consecutive ISO 266 {kind} nominal "
                                     f"frequencies from {lo:g} Hz (e.g. {example})")
    return ref


def _frequencies(value, spec: Field, file: str, path: str) -> tuple:
    """A list of rising frequencies in Hz (plain numbers, 10 Hz to 20 kHz) at which the
    values of another key are given (any frequencies, not bands)."""
    if not isinstance(value, list) or not value:
        raise InputError(file, path, f"expected a list of frequencies in Hz such as "
                                     f"[125, 1000, 4000], got {show(value, typed=True)}")
    out = []
    for i, v in enumerate(value, start=1):
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) \
                or not 10.0 <= v <= 20000.0:
            raise InputError(file, join(path, i), f"expected a frequency in Hz from 10 to "
                                                  f"20000 (a plain number), got "
                                                  f"{show(v, typed=True)}")
        out.append(float(v))
    if any(b <= a for a, b in zip(out, out[1:], strict=False)):
        raise InputError(file, path, f"frequencies must rise, got {show(value)}")
    return tuple(out)


def _raw(value, spec: Field, file: str, path: str):
    """Any TOML value, kept as it is: its file module reads it later against another
    field (a trade study's values take the kind of the key they vary)."""
    return value


_LEAVES = {"integer": _integer, "boolean": _boolean, "choice": _choice, "name": _name,
           "text": _text, "date": _date, "path": _path, "raw": _raw}


# ---------------------------------------------------------------------------- values


def read_value(value, spec: Field, path: str, reader: Reader, siblings: Values | None = None):
    """One value of a key against its field; returns the converted value, or
    :data:`INVALID` after recording the problem(s) on ``reader``."""
    try:
        if spec.read is not None:
            return spec.read(value, spec, path, reader)
        if spec.kind in ("table", "tables", "named") and spec.schema is None \
                and spec.variants is None:
            raise TypeError(f"schema of {path}: a {spec.kind!r} field needs schema= (or "
                            "tag= and variants=) to read its tables")
        if spec.kind == "table":
            return read_table(value, spec.schema or {}, path, reader)
        if spec.kind == "tables":
            return _read_tables(value, spec, path, reader)
        if spec.kind == "named":
            return _read_named(value, spec, path, reader)
        if spec.kind == "bands":
            width = (siblings or {}).get("bandwidth", "third")
            return _bands(value, spec, reader.file, path, width)
        if spec.kind == "frequencies":
            return _frequencies(value, spec, reader.file, path)
        if spec.shape == "one" or (spec.shape == "one_or_list" and not isinstance(value, list)):
            return _leaf(value, spec, reader.file, path)
        if not isinstance(value, list):
            raise InputError(reader.file, path, f"expected a list (array) of values, got "
                                                f"{show(value, typed=True)}")
        if not value:
            raise InputError(reader.file, path, "empty list")
        if isinstance(spec.length, int) and len(value) != spec.length:
            raise InputError(reader.file, path, f"expected {spec.length} values, got "
                                                f"{len(value)}")
        out, ok = [], True
        for i, v in enumerate(value, start=1):
            try:
                out.append(_leaf(v, spec, reader.file, join(path, i)))
            except InputError as exc:
                reader.problems.append(exc)
                ok = False
        return tuple(out) if ok else INVALID
    except InputError as exc:
        reader.problems.append(exc)
        return INVALID


def _leaf(value, spec: Field, file: str, path: str):
    if spec.kind in QUANTITIES or spec.kind in PLAIN_UNITS:
        return _number(value, spec, file, path)
    try:
        return _LEAVES[spec.kind](value, spec, file, path)
    except KeyError:
        raise TypeError(f"schema of {path}: unknown field kind {spec.kind!r}") from None


def read_table(table, schema, where: str, reader: Reader, what: str = "a table",
               skip=()) -> Values | object:
    """Read one table against ``schema`` (a dict of key -> Field).

    Every problem goes to ``reader``: a value that is not a table, unknown keys (with the
    nearest spelling and the allowed keys), each key's value, missing required keys,
    alternatives given together (``group``), keys given without the keys they need
    (``needs``) and lists whose length does not match the key they align with
    (``length``). Keys in ``skip`` are left alone. Returns :class:`Values`, or
    :data:`INVALID` when ``table`` is not a table.
    """
    if not isinstance(table, dict):
        reader.problem(where, f"expected {what}, got {show(table, typed=True)}")
        return INVALID
    out = Values()
    for key in table:
        if key not in schema and key not in skip:
            allowed = ", ".join(schema)
            reader.problem(join(where, key), f"unknown key{suggest(key, schema)} "
                                             f"(allowed: {allowed})")
    for key, spec in schema.items():  # schema order: a key may depend on one before it
        if key in skip:
            continue
        if key in table:
            value = read_value(table[key], spec, join(where, key), reader, out)
            if value is INVALID:
                out.bad.add(key)
            else:
                out[key] = value
        elif spec.default is not None:
            out[key] = spec.default
    _check_relations(table, schema, where, reader, out)
    return out


def _check_relations(table, schema, where, reader, out: Values) -> None:
    groups: dict[str, list[str]] = {}
    for key, spec in schema.items():
        if spec.group:
            groups.setdefault(spec.group, []).append(key)
    for keys in groups.values():
        given = [k for k in keys if k in table]
        if len(given) > 1:
            reader.problem(join(where, given[1]), f"give {' or '.join(given)}, not both")
            for k in given:
                out.pop(k, None)
                out.bad.add(k)
        elif not given and any(schema[k].required for k in keys):
            reader.problem(join(where, keys[0]), f"missing: give {' or '.join(keys)}")
    for key, spec in schema.items():
        if spec.required and not spec.group and key not in table:
            reader.problem(join(where, key), f"missing: need at least one [[{key}]]"
                           if spec.kind in ("tables", "layers") else "missing required key")
        if key in table:
            for other in spec.needs:
                if other not in table:
                    reader.problem(join(where, key), f"needs {other} as well")
        if isinstance(spec.length, str) and key in out and isinstance(out[key], tuple):
            ref = spec.length
            if ref in out:
                n = len(out[ref])
                if len(out[key]) != n:
                    of = "" if ref == "bands_hz" else f" of {ref}"
                    what = {"bands": "bands", "frequencies": "frequencies"}.get(
                        schema[ref].kind)
                    reader.problem(join(where, key), f"{len(out[key])} values for {n} "
                                                     f"{what}{of}: the {what} do not match"
                                   if what else
                                   f"{len(out[key])} values for the {n} of {ref}")
                    out.bad.add(key)
                    del out[key]


def _read_tables(value, spec: Field, path: str, reader: Reader):
    name = path.rsplit(".", 1)[-1]
    if isinstance(value, dict):
        reader.problem(path, f"expected an array of tables ([[{name}]]), got a single table "
                             f"([{name}])")
        return INVALID
    if not isinstance(value, list):
        reader.problem(path, f"expected an array of tables ([[{name}]]), got "
                             f"{show(value, typed=True)}")
        return INVALID
    if not value and spec.required:
        reader.problem(path, f"need at least one [[{name}]]")
        return INVALID
    out = []
    seen: dict = {}
    for i, entry in enumerate(value, start=1):
        here = join(path, i)
        schema = spec.schema or {}
        if spec.variants is not None:
            schema = _variant(entry, spec, here, reader)
            if schema is None:
                out.append(INVALID)
                continue
        v = read_table(entry, schema, here, reader)
        if v is not INVALID and spec.unique and spec.unique in v:
            key = v[spec.unique]
            if key in seen:
                reader.problem(join(here, spec.unique), f"duplicate {spec.unique} "
                                                        f"{show(key)} (also {name}[{seen[key]}])")
                v.bad.add(spec.unique)
                del v[spec.unique]
            else:
                seen[key] = i
        out.append(v)
    return out


def _variant(entry, spec: Field, where: str, reader: Reader):
    """The schema of one entry of discriminated tables (tag key plus its variant's keys)."""
    tag_field = Field("choice", required=True, choices=tuple(spec.variants))
    if not isinstance(entry, dict):
        reader.problem(where, f"expected a table, got {show(entry, typed=True)}")
        return None
    if spec.tag not in entry:
        reader.problem(join(where, spec.tag), f"missing: give {spec.tag} "
                                              f"({' or '.join(spec.variants)})")
        return None
    try:
        tag = _choice(entry[spec.tag], tag_field, reader.file, join(where, spec.tag))
    except InputError as exc:
        reader.problems.append(exc)
        return None
    return {spec.tag: tag_field, **spec.variants[tag]}


def _read_named(value, spec: Field, path: str, reader: Reader):
    if not isinstance(value, dict):
        reader.problem(path, f"expected tables keyed by name ([{path}.NAME]), got "
                             f"{show(value, typed=True)}")
        return INVALID
    out = {}
    for name, table in value.items():
        here = join(path, name)
        reason = check_name(name)
        if reason:
            reader.problem(here, reason)
            continue
        out[name] = read_table(table, spec.schema or {}, here, reader)
    return out


def describe(spec: Field) -> str:
    """What a value of the field looks like, in words, for messages and the reference."""
    kind = spec.kind
    if kind in QUANTITIES:
        si, example = QUANTITIES[kind]
        one = f"{kind.replace('_', ' ')} ({si}), e.g. {example}"
    elif kind in PLAIN_UNITS:
        one = f"plain number{' in ' + PLAIN_UNITS[kind] if PLAIN_UNITS[kind] else ''}"
    else:
        one = {"integer": "integer", "boolean": "true or false",
               "choice": " | ".join(f'"{c}"' for c in spec.choices),
               "name": "name (string)", "text": "text (string)",
               "date": "date (2026-12-02) or text", "path": "file name (string), relative "
               "to this file", "bands": "list of consecutive nominal one-third-octave band "
               "frequencies in Hz (ISO 266, 10 Hz to 20 kHz), e.g. [100, 125, 160]",
               "frequencies": "list of rising frequencies in Hz (plain numbers, 10 Hz to "
               "20 kHz), e.g. [125, 1000, 4000]",
               "layers": "array of layer tables (see *Layer entries*)",
               "raw": "value as the varied key takes it (its unit, its range)",
               "table": "table", "tables": "array of tables", "named": "tables keyed by name"
               }.get(kind, kind)
    if spec.shape == "list":
        n = f" of {spec.length}" if isinstance(spec.length, int) else ""
        one = f"list{n}: {one}"
    elif spec.shape == "one_or_list":
        n = f" of {spec.length}" if isinstance(spec.length, int) else ""
        one = f"{one}, or a list{n} of them"
    if isinstance(spec.length, str):
        one += f", one per band of {spec.length}"
    return one
