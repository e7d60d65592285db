"""One layer table of a stack file or a catalog: its ``type``, the keys every layer
entry shares, and the keys of its layer class (the class's ``schema``), read and built.

Used by :mod:`~noisebudget.catalog` (every entry is checked when the catalogs load) and
:mod:`~noisebudget.stackfile` (layer entries, catalog entries with overrides, inserted
stack files).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .layers import LAYER_TYPES, Layer, LayerValueError
from .layers.base import Field
from .multilayer import BONDING
from .schema import INVALID, Reader, join, read_table, suggest

__all__ = ["LAYER_META", "LayerEntry", "build_layer", "layer_schema"]

# keys any layer entry may carry, whatever its type; one line here adds a key to every
# layer entry, also to a `{ stack = "file.toml" }` entry (its value then applies to each
# layer inserted)
LAYER_META: dict[str, Field] = {
    "name": Field("name", doc="label of the layer in tables and drawings"),
    "notes": Field("text", doc="free text"),
    "description": Field("text", doc="one line describing the layer"),
    "source": Field("text", doc="where the values come from (a published source, "
                                "\"common practice\", \"from memory\" or \"demo value\")"),
    "bonding": Field("choice", choices=BONDING,
                     doc="contact with the previous layer where an elastic layer (solid, "
                         "Biot) takes part: \"bonded\" (default) or \"unbonded\" (a thin "
                         "air film); on a `{ stack = ... }` entry it applies to the first "
                         "layer inserted"),
    "structure": Field("boolean",
                       doc="the layer belongs to the airframe, not the treatment: its mass "
                           "counts in the stack but not in the treatment mass (default true "
                           "for catalog skins, `use = \"skin.*\"`, else false); on a `{ stack "
                           "= ... }` entry it applies to every layer inserted"),
}


@dataclass(frozen=True)
class LayerEntry:
    """A layer built from a file, its display label, its entry's meta keys
    (:data:`LAYER_META`) as read, and the SI values of its class's own keys (``schema``,
    defaults filled in) that built it: ``type(layer).from_values(values)`` rebuilds it,
    and a trade study's variant is that call with one value changed."""

    layer: Layer
    label: str
    meta: dict = field(default_factory=dict)
    values: dict = field(default_factory=dict, compare=False)


def type_field() -> Field:
    """The ``type`` key: one of the registered layer types."""
    return Field("choice", required=True, choices=tuple(LAYER_TYPES),
                 doc="the layer model (see the layer types below)")


def layer_schema(cls) -> dict[str, Field]:
    """Every key a layer table of class ``cls`` may hold: ``type``, the shared meta keys,
    and the class's own ``schema``."""
    return {"type": type_field(), **LAYER_META, **cls.schema}


def build_layer(table: dict, where: str, reader: Reader, schema_extra=None):
    """Read a layer table that names its ``type`` and build the layer.

    Parameters
    ----------
    table : dict
        The layer's keys as parsed from TOML (a catalog entry already merged in).
    where : str
        Key path of the table, e.g. ``layer[2]``.
    reader : Reader
        Receives every problem.
    schema_extra : dict, optional
        Keys that replace or add to the layer schema here (a catalog requires ``source``).

    Returns
    -------
    (Layer, Values) or INVALID
    """
    kind = table.get("type")
    if kind is None:
        reader.problem(join(where, "type"), "missing: give a layer type "
                                            f"({', '.join(LAYER_TYPES)}) or use = "
                                            "\"catalog.entry\"")
        return INVALID
    if not isinstance(kind, str) or kind not in LAYER_TYPES:
        reader.problem(join(where, "type"), f"unknown layer type {kind!r}"
                                            f"{suggest(kind, LAYER_TYPES)} "
                                            f"(one of {', '.join(LAYER_TYPES)})")
        return INVALID
    cls = LAYER_TYPES[kind]
    before = len(reader.problems)
    values = read_table(table, {**layer_schema(cls), **(schema_extra or {})}, where, reader)
    for key in cls.required_by(values):  # the values as read: a bad model needs nothing
        if not values.given(key):
            reader.problem(join(where, key), f"missing: model {values.get('model')!r} needs it")
    if len(reader.problems) > before:
        return INVALID
    try:
        layer = cls.from_values({k: v for k, v in values.items() if k in cls.schema})
    except LayerValueError as exc:
        for e in getattr(exc, "errors", [exc]):
            reader.problem(f"{where}.{e.key}" if where else e.key, e.reason)
        return INVALID
    return layer, values
