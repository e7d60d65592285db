"""Catalogs of materials and layers: ``catalogs/*.toml``, entries keyed ``group.name``.

A catalog file holds tables ``[group."name"]``. A layer entry is a layer table (the keys
of a stack file's ``[[layer]]``, with its ``type``) plus ``source`` (a published source,
"common practice", "from memory" or "demo value") and ``description``; a stack layer
refers to it with ``use = "group.name"`` and may override any key. Entries of a material
group (:data:`MATERIAL_GROUPS`, e.g. membrane materials for tile design) are data for a
designer, not layers. Every entry is checked against its schema when the catalogs load.
"""

from __future__ import annotations

import functools
from pathlib import Path

from .errors import InputError, show
from .layerfile import build_layer
from .layers.base import Field
from .resources import data_path
from .schema import Reader, join, read_table, read_toml

__all__ = ["CATALOG_META", "Catalog", "MATERIAL_GROUPS", "META_KEYS", "SOURCE_TAGS",
           "load_catalog"]

SOURCE_TAGS = ("common practice", "from memory", "demo value")

# keys of every catalog entry besides its layer (or material) keys
CATALOG_META: dict[str, Field] = {
    "source": Field("text", required=True, doc="a published source, \"common practice\", "
                                               "\"from memory\" or \"demo value\""),
    "description": Field("text", doc="one line describing the entry"),
    "notes": Field("text", doc="free text"),
}
META_KEYS = tuple(CATALOG_META)

# groups whose entries are materials (no layer type): group -> schema
MATERIAL_GROUPS: dict[str, dict[str, Field]] = {
    "membrane": {
        "density": Field("density", required=True, doc="membrane material density"),
        "tension_range": Field("tension", shape="list", length=2,
                               doc="usable tension per unit length [low, high]"),
        "thickness_range": Field("length", shape="list", length=2,
                                 doc="available sheet thickness [low, high]"),
        **CATALOG_META,
    },
}


class Catalog:
    """All entries of a set of catalog files, keyed ``"group.name"``."""

    def __init__(self, entries: dict[str, dict], files: dict[str, Path]):
        self.entries = entries
        self.files = files

    def __contains__(self, key):
        return key in self.entries

    def keys(self):
        """Entry keys in file order."""
        return list(self.entries)

    def get(self, key: str, file: str = "", where: str = "use") -> dict:
        """The entry ``key``; an unknown key raises InputError with the near spelling."""
        if not isinstance(key, str) or key not in self.entries:
            import difflib

            near = difflib.get_close_matches(str(key), self.entries, n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            raise InputError(file, where, f"unknown catalog entry {key!r}{hint} "
                                          f"(noisebudget catalog lists them)")
        return dict(self.entries[key])

    def source_file(self, key: str) -> Path:
        """The catalog file an entry came from."""
        return self.files[key]


def check_entry(entry, group: str, where: str, reader: Reader) -> None:
    """Check one catalog entry of ``group`` (key path ``where``) against its schema;
    problems go to ``reader``."""
    if isinstance(entry, dict) and "type" not in entry and group in MATERIAL_GROUPS:
        read_table(entry, MATERIAL_GROUPS[group], where, reader)
    elif isinstance(entry, dict):
        build_layer(entry, where, reader, schema_extra={"source": CATALOG_META["source"]})
    else:
        reader.problem(where, f"expected a table, got {show(entry, typed=True)}")


def _read_catalog_file(path: Path, entries: dict, files: dict, problems: list):
    reader = Reader(str(path), problems=problems)
    try:
        data = read_toml(path)
    except InputError as exc:
        problems.append(exc)
        return
    for group, table in data.items():
        if not isinstance(table, dict):
            reader.problem(join("", group), "expected a table of entries")
            continue
        for name, entry in table.items():
            key = f"{group}.{name}"
            check_entry(entry, group, join(join("", group), name), reader)
            entries[key] = entry
            files[key] = path


@functools.cache
def _load(folders: tuple[str, ...]) -> Catalog:
    from .errors import InputErrors

    entries: dict[str, dict] = {}
    files: dict[str, Path] = {}
    problems: list = []
    for folder in folders:
        if not Path(folder).is_dir():
            problems.append(InputError(folder, "", "catalog folder not found"))
            continue
        for path in sorted(Path(folder).glob("*.toml")):
            _read_catalog_file(path, entries, files, problems)
    if problems:
        raise InputErrors(problems)
    return Catalog(entries, files)


def load_catalog(extra_folders=()) -> Catalog:
    """The shipped catalogs, then any extra folders (later entries win).

    Raises
    ------
    InputErrors
        Listing every entry that does not match its schema.
    """
    folders = (str(data_path("catalogs")), *map(str, extra_folders))
    return _load(folders)
