"""Command-line option helpers: one rule for quantities, help that states defaults and
units, the common ``--quiet`` option and output selection.

The rule for quantities, the same for every option: a plain number is read in the
option's documented unit (``--fmin 50`` is 50 Hz), or the number carries its own unit
(``--fmin "0.05 kHz"``, ``--tune-peak 112Hz``, ``--theta-max "1.2 rad"``). Units are
read by the package's pint registry, loaded only when a unit is given, so plain numbers
and ``--help`` stay fast.
"""

from __future__ import annotations

import argparse
import math
import re

__all__ = ["OUTPUT_KINDS", "add_output_selection", "add_quiet", "output_kinds", "quantity",
           "quantity_list"]

OUTPUT_KINDS = ("csv", "pdf", "xlsx")
_NUMBER = re.compile(r"\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*")


def quantity(unit: str, kind: str, positive: bool = True):
    """An argparse ``type``: a number in ``unit``, or a number with a unit of the same
    kind, returned as a float in ``unit``.

    Parameters
    ----------
    unit : str
        The option's unit, as pint spells it (``"Hz"``, ``"deg"``).
    kind : str
        What the value is, for messages (``"frequency"``).
    positive : bool
        Refuse zero and negative values.
    """

    a_kind = f"{'an' if kind[0] in 'aeiou' else 'a'} {kind}"

    def parse(text: str) -> float:
        example = f'e.g. 50 or "50 {unit}"'
        m = _NUMBER.fullmatch(text)
        if not m:
            raise argparse.ArgumentTypeError(
                f"{text!r} is not {a_kind}: give a number in {unit} or a number with its "
                f"unit, {example}")
        value, given = float(m[1]), m[2]
        if given:
            from .units import registry

            ureg = registry()
            try:
                value = float(ureg.Quantity(value, given).to(unit).magnitude)
            except Exception:  # pint raises several types for unknown or wrong units
                raise argparse.ArgumentTypeError(
                    f"{text!r} is not {a_kind} (expected units of {unit}, {example})") from None
        if not math.isfinite(value) or (positive and value <= 0):
            raise argparse.ArgumentTypeError(f"{text!r}: {a_kind} must be > 0")
        return value

    parse.__name__ = kind  # argparse names the type in its messages
    return parse


def quantity_list(unit: str, kind: str):
    """An argparse ``type`` for a comma-separated list of quantities (each by
    :func:`quantity`'s rule), e.g. ``"100,1000"`` or ``"100 Hz, 1 kHz"``."""
    one = quantity(unit, kind)

    def parse(text: str) -> list[float]:
        items = [t for t in text.split(",") if t.strip()]
        if not items:
            raise argparse.ArgumentTypeError(f"{text!r}: need at least one {kind}")
        return [one(t) for t in items]

    parse.__name__ = f"{kind} list"
    return parse


def add_quiet(parser) -> None:
    """``-q/--quiet``: no progress display and no informational lines on standard
    error (warnings and errors are still printed)."""
    parser.add_argument("-q", "--quiet", action="store_true",
                        help="no progress display and no notes on standard error; "
                             "warnings and errors are still shown")


def add_output_selection(parser) -> None:
    """``--only`` and ``--no-csv``/``--no-pdf``/``--no-xlsx`` for ``run`` and ``demo``."""
    parser.add_argument("--only", default=None, metavar="KINDS",
                        help="write only these outputs, comma-separated from "
                             f"{', '.join(OUTPUT_KINDS)} (default: all)")
    for kind, what in zip(OUTPUT_KINDS, ("the CSV tables", "the PDF report", "the workbook"),
                          strict=True):
        parser.add_argument(f"--no-{kind}", action="store_true", help=f"do not write {what}")


def output_kinds(args) -> tuple[str, ...]:
    """The outputs chosen by ``--only`` and ``--no-*``, in a fixed order."""
    chosen = set(OUTPUT_KINDS)
    if args.only:
        asked = {k.strip().lower() for k in args.only.split(",") if k.strip()}
        unknown = sorted(asked - set(OUTPUT_KINDS))
        if unknown:
            raise argparse.ArgumentTypeError(
                f"--only: unknown output {', '.join(unknown)} (choose from "
                f"{', '.join(OUTPUT_KINDS)})")
        chosen = asked
    chosen -= {k for k in OUTPUT_KINDS if getattr(args, f"no_{k}", False)}
    if not chosen:
        raise argparse.ArgumentTypeError("--only / --no-*: nothing left to write")
    return tuple(k for k in OUTPUT_KINDS if k in chosen)
