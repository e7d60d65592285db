"""Plain text for the terminal and the CSV files: tables, numbers, plurals."""

from __future__ import annotations

import math

__all__ = ["fmt_number", "format_table", "no_negative_zero", "plural"]


def fmt_number(v, digits: int = 1) -> str:
    """A number for a table: fixed decimals for floats (never "-0.0"), "-" for a value
    that is not available (NaN, infinite), as-is for the rest."""
    if isinstance(v, float):
        if not math.isfinite(v):
            return "-"
        text = f"{v:.{digits}f}"
        if text.startswith("-") and float(text) == 0:
            text = text[1:]
        return text
    return str(v)


def plural(n: int, word: str, many: str | None = None) -> str:
    """``1 condition``, ``2 conditions``; ``many`` for an irregular plural."""
    return f"{n} {word if n == 1 else (many or word + 's')}"


def no_negative_zero(df, digits: int):
    """A copy of a DataFrame whose float values that round to zero at ``digits``
    decimals are exactly 0.0, so no "-0.000" is written."""
    out = df.copy()
    for col in out.select_dtypes("float").columns:
        v = out[col]
        out[col] = v.mask(v.abs() < 0.5 * 10.0**-digits, 0.0)
    return out


def format_table(headers, rows, digits=1) -> str:
    """Right-aligned columns under a header line and a rule."""
    cells = [[fmt_number(v, digits) for v in row] for row in rows]
    widths = [max(len(str(h)), *(len(r[i]) for r in cells)) if cells else len(str(h))
              for i, h in enumerate(headers)]
    text = ([not isinstance(v, (int, float)) for v in rows[0]] if rows
            else [False] * len(headers))
    lines = ["  ".join(str(h).ljust(w) if t else str(h).rjust(w)
                       for h, w, t in zip(headers, widths, text, strict=True)),
             "  ".join("-" * w for w in widths)]
    lines += ["  ".join(c.ljust(w) if t else c.rjust(w)
                        for c, w, t in zip(r, widths, text, strict=True)) for r in cells]
    return "\n".join(lines)
