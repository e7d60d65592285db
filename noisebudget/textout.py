"""Plain-text tables for the terminal."""

from __future__ import annotations

__all__ = ["format_table", "fmt_number"]


def fmt_number(v, digits: int = 1) -> str:
    """A number for a table: fixed decimals for floats, as-is for the rest."""
    if isinstance(v, float):
        return f"{v:.{digits}f}"
    return str(v)


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
