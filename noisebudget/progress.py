"""Progress on standard error for work that takes more than about a second.

Library code wraps its long loops in :func:`track` or :class:`steps`; whoever runs the
library (the command line, a trade-study script) decides with :func:`configure` whether
anything is shown. By default a display appears only when standard error is a terminal,
and only once the work has run for a second, so quick calls, pipes, log files,
notebooks and tests stay silent. The display is tqdm's; it is imported only when shown.
"""

from __future__ import annotations

import sys

__all__ = ["configure", "counter", "enabled", "steps", "track"]

DELAY_S = 1.0  # nothing is drawn for work shorter than this
_setting: bool | None = None  # None: shown when standard error is a terminal


def configure(show: bool | None) -> None:
    """Show progress (True), never (False), or when standard error is a terminal
    (None, the default)."""
    global _setting
    _setting = show


def enabled() -> bool:
    """Whether progress is shown now."""
    if _setting is not None:
        return _setting
    isatty = getattr(sys.stderr, "isatty", None)
    return bool(isatty and isatty())


def _bar(total, what, unit, initial=0):
    from tqdm import tqdm

    return tqdm(total=total, desc=what, unit=unit, delay=DELAY_S, file=sys.stderr,
                leave=False, dynamic_ncols=True, initial=initial)


def track(iterable, total: int | None = None, what: str = "", unit: str = "step"):
    """Iterate ``iterable``, showing progress when :func:`enabled`.

    Parameters
    ----------
    iterable : iterable
    total : int, optional
        Number of items, when ``len(iterable)`` is not available.
    what : str
        Short description of the work, e.g. ``"transmission loss"``.
    unit : str
        What one item is, e.g. ``"stack"``.
    """
    if not enabled():
        yield from iterable
        return
    if total is None and hasattr(iterable, "__len__"):
        total = len(iterable)
    bar = _bar(total, what, unit)
    try:
        for item in iterable:
            yield item
            bar.update()
    finally:
        bar.close()


class steps:
    """Progress through a known number of named steps.

    >>> with steps(3, "report") as s:  # doctest: +SKIP
    ...     s.start("figures"); ...; s.start("layout"); ...; s.start("workbook"); ...
    """

    def __init__(self, total: int, what: str = "", unit: str = "step"):
        self.total, self.what, self.unit = total, what, unit
        self._bar = None
        self._running = False

    def __enter__(self) -> steps:
        if enabled():
            self._bar = _bar(self.total, self.what, self.unit)
        return self

    def start(self, label: str = "") -> None:
        """The step before (if any) is done; ``label`` names the one starting now."""
        if self._bar is not None:
            self._bar.set_postfix_str(label, refresh=False)
            self._bar.update(1 if self._running else 0)
        self._running = True

    def __exit__(self, *exc) -> None:
        if self._bar is not None:
            self._bar.close()


class counter:
    """Progress through a count of items finished in groups of any size (variants of a
    trade study finishing chunk by chunk), starting from ``initial`` (a resumed run).

    Called as ``counter(total, initial)`` it has the form the trade runs take for their
    ``progress`` argument; ``update(n)`` adds ``n`` finished items and ``close()`` ends
    the display.
    """

    def __init__(self, total: int, initial: int = 0, what: str = "", unit: str = "item"):
        self._bar = _bar(total, what, unit, initial) if enabled() else None

    def update(self, n: int = 1) -> None:
        """``n`` more items are done."""
        if self._bar is not None:
            self._bar.update(n)

    def close(self) -> None:
        """End the display (it leaves no line behind)."""
        if self._bar is not None:
            self._bar.close()
            self._bar = None

    def __enter__(self) -> counter:
        return self

    def __exit__(self, *exc) -> None:
        self.close()
