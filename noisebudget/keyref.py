"""The reference of stack-file, catalog and study-file keys, generated from the schema.

``python -m noisebudget.keyref docs/file-keys.md`` writes it; a test regenerates it and
compares, so the reference cannot drift from what the files accept.
"""

from __future__ import annotations

import sys
from pathlib import Path

from .layers.base import Field
from .schema import describe, range_text
from .units import LIMITS, QUANTITIES

__all__ = ["markdown", "main"]

_NUMERIC = ("number", "db", "deg", "integer")


def _default(spec: Field) -> str:
    d = spec.default
    if d is None:
        return ""
    if isinstance(d, bool):
        return f"default {'true' if d else 'false'}"
    if isinstance(d, str):
        return f'default "{d}"'
    unit = f" {QUANTITIES[spec.kind][0]}" if spec.kind in QUANTITIES else ""
    return f"default {d:g}{unit}"


def _status(key: str, spec: Field, schema: dict) -> str:
    parts = []
    if spec.group:
        others = [k for k, s in schema.items() if s.group == spec.group]
        need = "one of" if any(schema[k].required for k in others) else "at most one of"
        parts.append(f"{need} {', '.join(f'`{k}`' for k in others)}")
    elif spec.required:
        parts.append("required")
    if spec.needs:
        parts.append("with " + ", ".join(f"`{k}`" for k in spec.needs))
    if spec.default is not None:
        parts.append(_default(spec))
    return "; ".join(parts)


def _row(key: str, spec: Field, schema: dict, seen: dict) -> str:
    rng = range_text(spec) if (spec.kind in QUANTITIES or spec.kind in _NUMERIC) else ""
    value = describe(spec)
    nested = spec.schema if spec.variants is None else None
    if nested is not None and id(nested) in seen:
        value += f" (see *{seen[id(nested)]}*)"
    cells = [f"`{key}`", value, _status(key, spec, schema), rng, spec.doc]
    return "| " + " | ".join(c.replace("|", "\\|") for c in cells) + " |"


def _section(title: str, schema: dict, level: int, header: str, out: list, seen: dict,
             path: str = "") -> None:
    """A table of ``schema``'s keys (TOML header ``path``), then one section per nested
    table not described elsewhere (``seen`` maps a schema's id to its section title)."""
    seen.setdefault(id(schema), title.replace("`", ""))
    nested = []
    for key, spec in schema.items():
        child = f"{path}.{key}" if path else key
        if spec.kind == "tables" and spec.variants is not None:
            for tag, variant in spec.variants.items():
                nested.append((f'[[{child}]] with {spec.tag} = "{tag}"',
                               {spec.tag: Field("choice", required=True,
                                                choices=tuple(spec.variants)), **variant},
                               spec.doc, child))
        elif spec.schema is not None and id(spec.schema) not in seen:
            head = {"table": f"[{child}]", "tables": f"[[{child}]]",
                    "named": f"[{child}.NAME]"}[spec.kind]
            seen[id(spec.schema)] = head
            nested.append((head, spec.schema, spec.doc,
                           f"{child}.NAME" if spec.kind == "named" else child))
    out += ["", f"{'#' * level} {title}", ""]
    if header:
        out += [header, ""]
    out += ["| key | value | required / default | range | meaning |",
            "| --- | --- | --- | --- | --- |"]
    out += [_row(k, s, schema, seen) for k, s in schema.items()]
    for head, sub, doc, child in nested:
        _section(f"`{head}`", sub, level + 1, doc[:1].upper() + doc[1:] + ".", out, seen,
                 child)


def markdown() -> str:
    """The key reference as Markdown text."""
    from .catalog import CATALOG_META, MATERIAL_GROUPS
    from .layerfile import LAYER_META, type_field
    from .layers import LAYER_TYPES
    from .stackfile import AIR_STATE, INCLUDE_ENTRY, STACK_FILE
    from .study import STUDY_FILE

    out = ["# Keys of stack files, catalogs and study files", "",
           "Generated from the schema by `python -m noisebudget.keyref docs/file-keys.md`; "
           "a test regenerates it and compares, so do not edit it by hand.", "",
           "Every dimensional value is a string with its unit (`\"25 mm\"`, "
           "`\"0.6 lb/ft^3\"`, `\"20 degC\"`): a plain number and a unit, no arithmetic. "
           "Plain numbers are for dimensionless values, levels in dB and angles in degrees. "
           "Names (packages, zones, conditions, layers) may hold any character except "
           "control characters; text may hold tabs and line breaks. Values must be "
           "finite; ranges are shown in SI units. Key paths in messages count from 1: "
           "`layer[2].cell[1].tension`. `noisebudget check` lists every problem of a "
           "study file, one line each."]
    out += ["", "Beyond each key's own range, a quantity's size must lie in the span the "
            "models are meant for (zero stays allowed where a key allows it); a value "
            "outside is a slip of unit or exponent:", "",
            "| quantity | SI unit | example | smallest size | largest size |",
            "| --- | --- | --- | --- | --- |"]
    out += [f"| {kind.replace('_', ' ')} | {si} | `{example}` | {LIMITS[kind][0]:g} | "
            f"{LIMITS[kind][1]:g} |" for kind, (si, example) in QUANTITIES.items()]
    seen = {id(AIR_STATE): "Air tables"}
    _section("Stack files", STACK_FILE, 2,
             "A stack file lists its layers from the source (exterior) side to the "
             "receiving (cabin) side.", out, seen)
    _section("Air tables", AIR_STATE, 3,
             "`[source_air]`, `[receiver_air]` and `[cavity_air]` of a stack file, "
             "`[air.exterior]` and `[air.cabin]` of a study file.", out, seen)
    entry = {"type": Field("choice", choices=type_field().choices, doc=type_field().doc),
             "use": Field("text", doc="a catalog entry `group.name` (`noisebudget catalog` "
                                      "lists them); the entry's other keys override it"),
             "stack": Field("path", doc=INCLUDE_ENTRY["stack"].doc), **LAYER_META}
    _section("Layer entries", entry, 3,
             "Each `[[layer]]` (or each `{ ... }` of a study package's `layer = [...]`) is "
             "one of: `type = \"...\"` with the keys of that layer type below; `use = "
             "\"group.name\"`, a catalog entry, with any of its keys overridden; or `stack = "
             "\"file.toml\"`, every layer of that stack file inserted in place (found "
             "relative to the file that names it; its air states and `[panel]` are ignored "
             "with a note, since the layers take the air and bay of the stack or study they "
             "join; a file that "
             "includes itself, directly or not, is refused). Keys of the entries:", out, seen)
    for name, cls in LAYER_TYPES.items():
        doc = (cls.__doc__ or "").strip().splitlines()[0]
        _section(f'`type = "{name}"`', cls.schema, 3, doc, out, seen, "layer")
    _section("Catalog entries", {**LAYER_META, **CATALOG_META}, 2,
             "A catalog file (`catalogs/*.toml`) holds entries `[group.\"name\"]`. A layer "
             "entry has a `type` and that type's keys, plus these keys:", out, seen)
    for group, schema in MATERIAL_GROUPS.items():
        _section(f"Material entries `[{group}.\"name\"]`", schema, 3,
                 "Data for a designer, not a layer: no `type`.", out, seen)
    _section("Study files", STUDY_FILE, 2,
             "A study file holds the title block, the air, the cabin, the flight "
             "conditions, the zones, the interior sources, the packages and the targets. "
             "A package's zone is given by `layer = [...]` (layer entries as in a stack "
             "file) or by `stack = \"file.toml\"` (a stack file's layers; its air states "
             "are ignored, since the study's air governs), with its leaks and flanking; a "
             "zone a package gives replaces everything it took over with `based_on` for "
             "that zone. A value given at frequencies (`exterior_offset_db` with "
             "`offset_bands_hz`, `flanking_tl_db` with `flanking_bands_hz`) is linear in "
             "lg f between them and constant outside; one value holds everywhere.", out,
             seen)
    return "\n".join(out) + "\n"


def main(argv=None) -> int:
    """Write the reference to the file given, or print it."""
    argv = sys.argv[1:] if argv is None else argv
    text = markdown()
    if argv:
        Path(argv[0]).write_text(text, encoding="utf-8")
    else:
        sys.stdout.write(text)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
