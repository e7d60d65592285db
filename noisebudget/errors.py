"""The one exception family for mistakes a user can make in an input file."""

from __future__ import annotations

__all__ = ["InputError", "InputErrors", "ModelRangeWarning"]


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

    def line(self) -> str:
        """The one-line message the command line prints."""
        parts = [p for p in (self.file, self.key) if p]
        return ": ".join([*parts, self.reason])


class InputErrors(InputError):
    """Several input problems found in one pass; ``errors`` lists them in order."""

    def __init__(self, errors: list[InputError]):
        self.errors = list(errors)
        first = self.errors[0]
        super().__init__(first.file, first.key, first.reason)

    def lines(self) -> list[str]:
        """One line per problem."""
        return [e.line() for e in self.errors]


class ModelRangeWarning(UserWarning):
    """An empirical model is evaluated outside the range it was fitted on."""
