"""The one exception family for mistakes a user can make in an input file.

The classes survive a pickle round trip (a process pool or a remote worker can send them
back), and ``str()`` of each is the line the command line prints.
"""

from __future__ import annotations

import re

__all__ = ["InputError", "InputErrors", "InputNote", "ModelRangeWarning", "show", "toml_type"]

_BREAKS = re.compile(r"\s*[\r\n\u2028\u2029\x0b\x0c\x85]\s*")
_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")


def _one_line(text: str) -> str:
    """Line breaks to spaces and other control characters escaped: a message never
    spans two lines nor drives a terminal."""
    text = _BREAKS.sub(" ", text)
    return _CONTROL.sub(lambda m: f"\\x{ord(m.group()):02x}", text)


class InputError(ValueError):
    """A problem in an input file or value, located by file and key path.

    Parameters
    ----------
    file : str
        The file the value came from ("" when it came from Python).
    key : str
        The key path inside the file, e.g. ``layer[2].thickness``.
    reason : str
        What is wrong, stating what was expected and what was found.
    """

    def __init__(self, file: str, key: str, reason: str):
        self.file = str(file)
        self.key = key
        self.reason = reason
        super().__init__(self.line())

    def __reduce__(self):
        return (type(self), (self.file, self.key, self.reason))

    def line(self) -> str:
        """The one-line message the command line prints."""
        parts = [p for p in (self.file, self.key) if p]
        return _one_line(": ".join([*parts, self.reason]))

    def lines(self) -> list[str]:
        """One line per problem (a single error has one)."""
        return [self.line()]


class InputErrors(InputError):
    """Several input problems found in one pass; ``errors`` lists them in order.

    ``file``, ``key`` and ``reason`` are those of the first problem.
    """

    def __init__(self, errors: list[InputError]):
        self.errors = [e for err in errors for e in getattr(err, "errors", [err])]
        if not self.errors:
            raise ValueError("InputErrors needs at least one error")
        first = self.errors[0]
        super().__init__(first.file, first.key, first.reason)

    def __reduce__(self):
        return (type(self), (self.errors,))

    def __str__(self) -> str:
        return "\n".join(self.lines())

    def lines(self) -> list[str]:
        """One line per problem."""
        return [e.line() for e in self.errors]


class InputNote(UserWarning):
    """A remark on an input that changes nothing the user asked for, e.g. that the air
    states of a stack file inserted as layers are replaced by the including file's air.
    The command line prints it as one ``note:`` line."""


class ModelRangeWarning(UserWarning):
    """An empirical model is evaluated outside the range it was fitted on."""


def toml_type(value) -> str:
    """The TOML name of a parsed value's type: string, integer, float, boolean, array,
    table, array of tables, date, time or date-time."""
    import datetime  # on first use: keeps the package import light

    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, int):
        return "integer"
    if isinstance(value, float):
        return "float"
    if isinstance(value, str):
        return "string"
    if isinstance(value, dict):
        return "table"
    if isinstance(value, list):
        return "array of tables" if value and all(isinstance(v, dict) for v in value) \
            else "array"
    if isinstance(value, datetime.datetime):
        return "date-time"
    if isinstance(value, datetime.date):
        return "date"
    if isinstance(value, datetime.time):
        return "time"
    return type(value).__name__


def show(value, typed: bool = False, limit: int = 40) -> str:
    """A short rendering of a parsed value for a message, e.g. ``'25 mm'``, ``true``,
    ``[1, 2, ...]``; with ``typed`` its TOML type first (``boolean true``)."""
    if isinstance(value, bool):
        text = "true" if value else "false"
    elif isinstance(value, float) and value != value:
        text = "nan"
    elif isinstance(value, (int, float)):
        text = repr(value)
    elif isinstance(value, str):
        text = repr(value if len(value) <= limit else value[:limit] + "...")
    elif isinstance(value, dict):
        text = "{" + ", ".join(list(map(str, value))[:4]) + (", ..." if len(value) > 4 else "") \
            + "}"
        text = "{...}" if len(text) > limit else text
    elif isinstance(value, list):
        text = "[" + ", ".join(show(v, limit=12) for v in value[:4]) \
            + (", ..." if len(value) > 4 else "") + "]"
    else:
        text = str(value)
    if len(text) > limit + 10:
        text = text[:limit] + "..."
    return f"{toml_type(value)} {text}" if typed else text
