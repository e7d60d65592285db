"""Catalogs of materials and layers: ``catalogs/*.toml``, entries keyed ``group.name``.

A catalog file holds tables ``[group."name"]``; each entry is a layer table (the keys of
a stack file's ``[[layer]]``) plus ``source`` (a published source, "common practice",
"from memory" or "demo value") and ``description``. A stack layer refers to an entry
with ``use = "group.name"`` and may override any key.
"""

from __future__ import annotations

import functools
import tomllib
from pathlib import Path

from .errors import InputError
from .resources import data_path

__all__ = ["Catalog", "load_catalog", "META_KEYS", "SOURCE_TAGS"]

META_KEYS = ("source", "description", "notes")
SOURCE_TAGS = ("common practice", "from memory", "demo value")


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
        if key not in self.entries:
            import difflib

            near = difflib.get_close_matches(key, self.entries, n=1, cutoff=0.5)
            hint = f"; did you mean {near[0]!r}?" if near else ""
            raise InputError(file, where, f"unknown catalog entry {key!r}{hint} "
                                          f"(noisebudget catalog lists them)")
        return dict(self.entries[key])

    def source_file(self, key: str) -> Path:
        """The catalog file an entry came from."""
        return self.files[key]


def _read_catalog_file(path: Path, entries: dict, files: dict):
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(str(path), "", f"malformed TOML: {exc}") from None
    for group, table in data.items():
        if not isinstance(table, dict):
            raise InputError(str(path), group, "expected a table of entries")
        for name, entry in table.items():
            key = f"{group}.{name}"
            if not isinstance(entry, dict):
                raise InputError(str(path), key, "expected a table")
            if "source" not in entry:
                raise InputError(str(path), key, "every catalog entry needs a 'source'")
            entries[key] = entry
            files[key] = path


@functools.cache
def _load(folders: tuple[str, ...]) -> Catalog:
    entries: dict[str, dict] = {}
    files: dict[str, Path] = {}
    for folder in folders:
        for path in sorted(Path(folder).glob("*.toml")):
            _read_catalog_file(path, entries, files)
    return Catalog(entries, files)


def load_catalog(extra_folders=()) -> Catalog:
    """The shipped catalogs, then any extra folders (later entries win)."""
    folders = (str(data_path("catalogs")), *map(str, extra_folders))
    return _load(folders)
