"""Progress of a long run on standard error: variants done, rate and time left."""

from __future__ import annotations

import sys

__all__ = ["progress_bar"]


def progress_bar(total: int, initial: int = 0, quiet: bool = False, unit: str = "variant"):
    """A progress bar (tqdm) on standard error, silent with ``quiet`` or when standard
    error is not a terminal. The object has ``update(n)`` and ``close()``."""
    from tqdm import tqdm

    return tqdm(total=total, initial=initial, unit=unit, file=sys.stderr,
                disable=quiet or not sys.stderr.isatty(), dynamic_ncols=True, smoothing=0.05,
                leave=False)
