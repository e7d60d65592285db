"""Stack files (TOML): parse and validate into a :class:`~noisebudget.stack.Stack`.

Every dimensional value is a string with its unit, read once here with pint; every
problem is reported as an :class:`~noisebudget.errors.InputError` naming the file, the
key path (``layer[2].thickness``) and what is wrong. All problems of a file are collected
before raising, so a user sees them in one pass.
"""

from __future__ import annotations

import difflib
import tomllib
from pathlib import Path

from .catalog import META_KEYS, load_catalog
from .errors import InputError, InputErrors
from .layers import LAYER_TYPES, LayerValueError
from .media import Air
from .stack import Stack
from .units import parse_dimensionless, parse_quantity

__all__ = ["load_stack", "parse_air", "parse_layer", "parse_stack", "read_toml"]

_LAYER_META = ("type", "use", "name", *META_KEYS)


def read_toml(path) -> dict:
    """Read a TOML file; a missing or malformed file raises InputError."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(str(path), "", "file not found") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(str(path), "", f"cannot read file ({exc})") from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(str(path), "", f"malformed TOML: {exc}") from None


def _suggest(word, options) -> str:
    near = difflib.get_close_matches(word, list(options), n=1, cutoff=0.6)
    return f"; did you mean {near[0]!r}?" if near else ""


def _parse_value(value, spec, file: str, path: str) -> float:
    """One number or quantity of a field, in SI, checked for sign."""
    if spec.kind == "number":
        v = parse_dimensionless(value, file, path)
    else:
        v = parse_quantity(value, spec.kind, file, path)
    if spec.positive and (v < 0 or (v == 0 and not spec.allow_zero)):
        bound = ">= 0" if spec.allow_zero else "> 0"
        raise InputError(file, path, f"must be {bound}, got {value!r}")
    return v


def parse_fields(table: dict, schema: dict, file: str, where: str, errors: list,
                 skip=()) -> dict:
    """Check keys against ``schema`` and convert values to SI; problems go to ``errors``."""
    out = {}
    for key, value in table.items():
        if key in skip:
            continue
        path = f"{where}.{key}"
        spec = schema.get(key)
        if spec is None:
            errors.append(InputError(file, path, f"unknown key{_suggest(key, schema)} "
                                                 f"(allowed: {', '.join(schema)})"))
            continue
        try:
            if spec.kind == "choice":
                if value not in spec.choices:
                    raise InputError(file, path, f"unknown value {value!r}"
                                                 f"{_suggest(str(value), spec.choices)} "
                                                 f"(one of {', '.join(spec.choices)})")
                out[key] = value
                continue
            if spec.kind == "tables":
                out[key] = value
                continue
            if isinstance(value, list) and spec.list_lengths:
                if len(value) not in spec.list_lengths:
                    counts = " or ".join(str(n) for n in spec.list_lengths)
                    raise InputError(file, path, f"expected one value or a list of {counts}, "
                                                 f"got a list of {len(value)}")
                out[key] = tuple(_parse_value(item, spec, file, f"{path}[{i + 1}]")
                                 for i, item in enumerate(value))
                continue
            out[key] = _parse_value(value, spec, file, path)
        except InputError as exc:
            errors.append(exc)
    for key, spec in schema.items():
        if spec.required and key not in table:
            errors.append(InputError(file, f"{where}.{key}", "missing required key"))
    return out


def parse_layer(table, file: str, where: str, catalog, errors: list):
    """One ``[[layer]]`` table (with any ``use`` catalog entry merged) to a layer object.

    Returns ``(layer, label)`` or ``(None, label)`` when problems were recorded.
    """
    if not isinstance(table, dict):
        errors.append(InputError(file, where, "expected a table"))
        return None, "?"
    table = dict(table)
    label = table.get("name")
    if "use" in table:
        key = table.pop("use")
        try:
            entry = catalog.get(key, file, f"{where}.use")
        except InputError as exc:
            errors.append(exc)
            return None, str(key)
        if "type" in table and table["type"] != entry.get("type"):
            errors.append(InputError(file, f"{where}.type",
                                     f"{table['type']!r} contradicts catalog entry {key!r} "
                                     f"of type {entry.get('type')!r}"))
            return None, key
        entry = {k: v for k, v in entry.items() if k not in META_KEYS}
        entry.update(table)
        table = entry
        label = label or key
    kind = table.get("type")
    if kind is None:
        errors.append(InputError(file, f"{where}.type", "missing: give a layer type "
                                 f"({', '.join(LAYER_TYPES)}) or use = \"catalog.entry\""))
        return None, label or "?"
    if kind not in LAYER_TYPES:
        errors.append(InputError(file, f"{where}.type", f"unknown layer type {kind!r}"
                                 f"{_suggest(str(kind), LAYER_TYPES)} "
                                 f"(one of {', '.join(LAYER_TYPES)})"))
        return None, label or str(kind)
    cls = LAYER_TYPES[kind]
    before = len(errors)
    values = parse_fields(table, cls.schema, file, where, errors, skip=_LAYER_META)
    for key in cls.required_by(table):
        if key not in table:
            errors.append(InputError(file, f"{where}.{key}", f"missing: model "
                                     f"{table.get('model')!r} needs it"))
    if hasattr(cls, "parse_tables"):
        values = cls.parse_tables(values, file, where, errors)
    if len(errors) > before:
        return None, label or kind
    try:
        return cls.from_values(values), label or kind
    except LayerValueError as exc:
        errors.append(InputError(file, f"{where}.{exc.key}", exc.reason))
        return None, label or kind


def parse_air(table, file: str, where: str, errors: list, default: Air | None = None):
    """An ``[source_air]``-style table (temperature, pressure) to :class:`Air`."""
    from .layers.base import Field

    if table is None:
        return default or Air()
    if not isinstance(table, dict):
        errors.append(InputError(file, where, "expected a table"))
        return default or Air()
    schema = {"temperature": Field("temperature"), "pressure": Field("pressure")}
    v = parse_fields(table, schema, file, where, errors)
    base = default or Air()
    return Air(v.get("temperature", base.temperature), v.get("pressure", base.pressure))


def parse_stack(data: dict, file: str = "", where: str = "", catalog=None) -> Stack:
    """A stack from parsed TOML ``data``; raises InputErrors listing every problem."""
    catalog = catalog or load_catalog()
    errors: list[InputError] = []
    prefix = f"{where}." if where else ""
    allowed = ("source_air", "receiver_air", "cavity_air", "layer", "panel", "title",
               "notes")
    for key in data:
        if key not in allowed:
            errors.append(InputError(file, prefix + key,
                                     f"unknown key{_suggest(key, allowed)} "
                                     f"(allowed: {', '.join(allowed)})"))
    src = parse_air(data.get("source_air"), file, prefix + "source_air", errors)
    rcv = parse_air(data.get("receiver_air"), file, prefix + "receiver_air", errors, src)
    cav = parse_air(data.get("cavity_air"), file, prefix + "cavity_air", errors, rcv)
    tables = data.get("layer")
    if not tables:
        errors.append(InputError(file, prefix + "layer", "no [[layer]] tables: a stack "
                                                        "needs at least one layer"))
        tables = []
    if not isinstance(tables, list):
        errors.append(InputError(file, prefix + "layer", "use [[layer]] (an array of "
                                                        "tables)"))
        tables = []
    layers, labels = [], []
    for i, table in enumerate(tables):
        layer, label = parse_layer(table, file, f"{prefix}layer[{i + 1}]", catalog, errors)
        layers.append(layer)
        labels.append(label)
    panel = _parse_panel(data.get("panel"), file, prefix + "panel", errors)
    if errors:
        raise InputErrors(errors)
    return Stack(tuple(layers), src, rcv, cav, tuple(labels), panel)


def _parse_panel(table, file: str, where: str, errors: list):
    """An optional ``[panel]`` table (``width``, ``height``): the bay the stack fills."""
    from .finite_size import Panel
    from .layers.base import Field

    if table is None:
        return None
    if not isinstance(table, dict):
        errors.append(InputError(file, where, "expected a table with width and height"))
        return None
    schema = {"width": Field("length", required=True), "height": Field("length",
                                                                       required=True)}
    before = len(errors)
    v = parse_fields(table, schema, file, where, errors)
    return Panel(v["width"], v["height"]) if len(errors) == before else None


def load_stack(path) -> Stack:
    """Parse and validate a stack file.

    Parameters
    ----------
    path : str or Path

    Returns
    -------
    Stack

    Raises
    ------
    InputError
        For any problem in the file; ``InputErrors.lines()`` lists all of them.
    """
    return parse_stack(read_toml(path), str(path))
