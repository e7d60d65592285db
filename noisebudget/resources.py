"""Files shipped inside the package (catalogs, templates, examples), found from a wheel too."""

from __future__ import annotations

from importlib import resources
from pathlib import Path

__all__ = ["data_path"]


def data_path(*parts: str) -> Path:
    """Path of a shipped data file or folder, e.g. ``data_path("catalogs")``."""
    return Path(str(resources.files("noisebudget").joinpath("data", *parts)))
