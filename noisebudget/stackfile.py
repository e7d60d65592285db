"""Stack files (TOML): parse and validate into a :class:`~noisebudget.stack.Stack`.

Every dimensional value is a string with its unit, read once here; every problem is
reported as an :class:`~noisebudget.errors.InputError` naming the file, the key path
(``layer[2].thickness``) and what is wrong, all problems of a file (and of the files it
inserts) in one pass. The keys are declared in :data:`STACK_FILE`, :data:`AIR_STATE`,
:data:`~noisebudget.layerfile.LAYER_META` and each layer class's ``schema``.

A layer entry is one of

* ``type = "..."`` and that layer type's keys;
* ``use = "group.name"``: a catalog entry, any of whose keys the entry may override;
* ``stack = "file.toml"``: every layer of that stack file, inserted in place (the path is
  relative to the file that names it; the inserted file's air states and ``[panel]`` are
  ignored with a note, since the layers take the air and the bay of the stack they join;
  include cycles are refused).

A top-level ``[panel]`` (``width``, ``height``) makes the stack a finite bay
(:class:`~noisebudget.finite_size.Panel`).
"""

from __future__ import annotations

import hashlib
import warnings
from dataclasses import replace
from pathlib import Path

from .catalog import CATALOG_META, load_catalog
from .errors import InputError, InputNote, show
from .finite_size import MAX_BAY_SIDE_M, Panel
from .layerfile import LAYER_META, LayerEntry, build_layer
from .layers.base import Field
from .media import Air, standard_atmosphere
from .schema import INVALID, Reader, join, read_table, read_toml
from .stack import Stack

__all__ = ["AIR_STATE", "INCLUDE_ENTRY", "STACK_FILE", "STRUCTURE_GROUPS", "air_from",
           "bonding_of", "include_stack", "load_stack", "parse_stack", "read_layers",
           "read_toml", "structure_of"]

#: catalog groups whose entries are airframe structure unless an entry says otherwise
STRUCTURE_GROUPS = ("skin",)

AIR_STATE: dict[str, Field] = {
    "temperature": Field("temperature", ge=150.0, le=400.0,
                         doc="air temperature (with altitude: replaces the standard "
                             "atmosphere's)"),
    "pressure": Field("pressure", group="pressure", ge=1e3, le=1e6, doc="static pressure"),
    "altitude": Field("length", group="pressure", positive=False, ge=-1000.0, le=20000.0,
                      doc="temperature and pressure of the International Standard "
                          "Atmosphere at this altitude"),
    "pressure_altitude": Field("length", group="pressure", positive=False, ge=-1000.0,
                               le=20000.0, doc="pressure of the standard atmosphere at this "
                                               "altitude (a cabin's pressure altitude); "
                                               "the temperature stays as given"),
}


def air_from(values, default: Air) -> Air:
    """Air of a table read against :data:`AIR_STATE`; absent keys keep ``default``'s."""
    if not values:
        return default
    t, p = default.temperature, default.pressure
    if "altitude" in values:
        std = standard_atmosphere(values["altitude"])
        t, p = std.temperature, std.pressure
    elif "pressure_altitude" in values:
        p = standard_atmosphere(values["pressure_altitude"]).pressure
    return Air(values.get("temperature", t), values.get("pressure", p))


def read_layers(value, spec: Field, path: str, reader: Reader):
    """A list of layer entries (``[[layer]]``, or ``layer = [...]`` in a study package)
    to a list of :class:`~noisebudget.layerfile.LayerEntry`, or INVALID after recording
    every problem on ``reader``."""
    name = path.rsplit(".", 1)[-1]
    if not isinstance(value, list) or not all(isinstance(v, dict) for v in value):
        if isinstance(value, list):
            bad = next(i for i, v in enumerate(value, 1) if not isinstance(v, dict))
            reader.problem(join(path, bad), f"expected a layer table, got "
                                            f"{show(value[bad - 1], typed=True)}")
        else:
            reader.problem(path, f"expected an array of layer tables ([[{name}]] or "
                                 f"{name} = [{{...}}, ...]), got {show(value, typed=True)}")
        return INVALID
    if not value:
        reader.problem(path, "no layers: a stack needs at least one")
        return INVALID
    out, ok = [], True
    for i, entry in enumerate(value, start=1):
        got = _layer_entry(entry, join(path, i), reader)
        if got is INVALID:
            ok = False
        else:
            out.extend(got)
    return out if ok else INVALID


INCLUDE_ENTRY: dict[str, Field] = {
    "stack": Field("path", required=True, doc="a stack file whose layers are inserted here"),
    **LAYER_META,
}

STACK_FILE: dict[str, Field] = {
    "title": Field("text", doc="what the stack is"),
    "notes": Field("text", doc="free text"),
    "source_air": Field("table", schema=AIR_STATE,
                        doc="air on the source (exterior) side; default 20 degC, 101.325 kPa"),
    "receiver_air": Field("table", schema=AIR_STATE,
                          doc="air on the receiving (cabin) side; default the source air"),
    "cavity_air": Field("table", schema=AIR_STATE,
                        doc="air in gaps and pores; default the receiving air"),
    "layer": Field("layers", required=True, read=read_layers,
                   doc="the layers from the source side to the receiving side"),
    "panel": Field("table", schema={"width": Field("length", required=True, le=MAX_BAY_SIDE_M,
                                                   doc="bay width"),
                                    "height": Field("length", required=True, le=MAX_BAY_SIDE_M,
                                                    doc="bay height")},
                   doc="finite bay the stack fills (between frames and stringers): the "
                       "incidence averages window the radiated side to it; absent, the "
                       "stack is infinite"),
}
_AIR_KEYS = ("source_air", "receiver_air", "cavity_air")


def _record_file(reader: Reader, path: Path) -> None:
    files = reader.shared.setdefault("files", {})
    if str(path) not in files:
        files[str(path)] = hashlib.sha256(path.read_bytes()).hexdigest()


def _layer_entry(entry: dict, where: str, reader: Reader):
    if "stack" in entry:
        values = read_table(entry, INCLUDE_ENTRY, where, reader)
        if "stack" not in values:
            return INVALID
        got = include_stack(values["stack"], join(where, "stack"), reader)
        if got is INVALID:
            return INVALID
        meta = {k: v for k, v in values.items() if k in LAYER_META}
        label = meta.pop("name", None)
        first = meta.pop("bonding", None)  # the contact of the first inserted layer only
        out = [replace(e, label=f"{label}: {e.label}" if label else e.label,
                       meta={**e.meta, **meta}) for e in got]
        if first is not None:
            out[0] = replace(out[0], meta={**out[0].meta, "bonding": first})
        return out
    table = dict(entry)
    label = None
    if "use" in table:
        key = table.pop("use")
        if not isinstance(key, str):
            reader.problem(join(where, "use"), "expected a catalog entry name such as "
                                               f"\"skin.al2024-t3-1.6mm\", got "
                                               f"{show(key, typed=True)}")
            return INVALID
        catalog = reader.shared.get("catalog") or load_catalog()
        try:
            base = catalog.get(key, reader.file, join(where, "use"))
        except InputError as exc:
            reader.problems.append(exc)
            return INVALID
        if "type" not in base:
            reader.problem(join(where, "use"), f"{key!r} is a {key.split('.')[0]} material, "
                                               "not a layer")
            return INVALID
        if "type" in table and table["type"] != base["type"]:
            reader.problem(join(where, "type"), f"{show(table['type'])} contradicts catalog "
                                                f"entry {key!r} of type {base['type']!r}")
            return INVALID
        reader.shared.setdefault("catalog_used", {})[key] = catalog.source_file(key)
        base = {k: v for k, v in base.items() if k not in CATALOG_META}
        table = {**base, **table}
        label = key
    built = build_layer(table, where, reader)
    if built is INVALID:
        return INVALID
    layer, values = built
    meta = {k: v for k, v in values.items() if k in LAYER_META}
    if label and "structure" not in meta and label.split(".")[0] in STRUCTURE_GROUPS:
        meta["structure"] = True
    own = {k: v for k, v in values.items() if k in type(layer).schema}
    return [LayerEntry(layer, meta.get("name") or label or layer.type_name, meta, own)]


def include_stack(rel: str, where: str, reader: Reader, host: str = "stack"):
    """The layer entries of stack file ``rel`` (relative to the reader's file), for a
    ``stack = "file.toml"`` key at ``where``; its air states are ignored with an
    :class:`~noisebudget.errors.InputNote`. Returns INVALID after recording problems
    (the file's own problems name that file)."""
    path = (reader.base_dir / rel).resolve()
    chain = reader.chain
    if path in chain:
        loop = " -> ".join(p.name for p in (*chain[chain.index(path):], path))
        reader.problem(where, f"include cycle: {loop}")
        return INVALID
    try:
        data = read_toml(path)
    except InputError as exc:
        reader.problem(where, f"{rel}: {exc.reason}")
        return INVALID
    _record_file(reader, path)
    sub = reader.for_file(path, path.parent, (*chain, path))
    before = len(reader.problems)
    values = read_table(data, STACK_FILE, "", sub, what="a stack file (a table)")
    ignored = [k for k in _AIR_KEYS if k in data]
    if ignored:
        warnings.warn(InputNote(f"{reader.file}: {where}: {rel}: its "
                                f"{', '.join(ignored)} ignored; the layers take the air of "
                                f"the {host} they join"), stacklevel=2)
    if "panel" in data:
        bay = ("the zone sets the bay (panel_width and panel_height of its [[zone]]; "
               "without them the wall is infinite)" if host == "study's zone"
               else f"the layers fill the bay of the {host} they join")
        warnings.warn(InputNote(f"{reader.file}: {where}: {rel}: its panel ignored; {bay}"),
                      stacklevel=2)
    if len(reader.problems) > before or values is INVALID:
        return INVALID
    return values["layer"]


def stack_from(values, entries, default_air: Air | None = None) -> Stack:
    """A Stack from a stack file's values (read against :data:`STACK_FILE`)."""
    src = air_from(values.get("source_air"), default_air or Air())
    rcv = air_from(values.get("receiver_air"), src)
    cav = air_from(values.get("cavity_air"), rcv)
    panel = values.get("panel")
    return Stack(tuple(e.layer for e in entries), src, rcv, cav,
                 tuple(e.label for e in entries), bonding_of(entries),
                 panel=None if panel is None else Panel(panel["width"], panel["height"]))


def bonding_of(entries) -> tuple:
    """Each layer entry's contact with the previous layer (default ``"bonded"``)."""
    return tuple(e.meta.get("bonding") or "bonded" for e in entries)


def structure_of(entries) -> tuple:
    """Whether each layer entry is airframe structure (its ``structure`` key, else true
    for entries of the catalog's :data:`STRUCTURE_GROUPS`)."""
    return tuple(bool(e.meta.get("structure", False)) for e in entries)


def parse_stack(data: dict, file: str = "", where: str = "", catalog=None) -> Stack:
    """A stack from parsed TOML ``data`` of ``file``; raises InputErrors listing every
    problem. Inserted stack files (``stack = "..."``) are found relative to ``file``."""
    chain = (Path(file).resolve(),) if file else ()
    reader = Reader(file, chain=chain)
    reader.shared["catalog"] = catalog or load_catalog()
    values = read_table(data, STACK_FILE, where, reader, what="a stack file (a table)")
    reader.raise_problems()
    return stack_from(values, values["layer"])


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
