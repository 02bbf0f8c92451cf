"""Plain-text tables for terminals and text reports (the one table formatter)."""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from typing import Any

__all__ = ["format_table"]


def format_table(headers: Sequence[str], rows: Iterable[Sequence[Any]]) -> str:
    """A plain-text table: headers left-aligned, cells right-aligned, ``None`` blank.

    Examples
    --------
    >>> print(format_table(["run", "ΔT / K"], [["BA-01", "1.2345"], ["BA-02", None]]))
    run    ΔT / K
    -----  ------
    BA-01  1.2345
    BA-02
    """
    text_rows = [["" if v is None else str(v) for v in row] for row in rows]
    widths = [len(h) for h in headers]
    for row in text_rows:
        for i, cell in enumerate(row):
            widths[i] = max(widths[i], len(cell))
    line = "  ".join(h.ljust(w) for h, w in zip(headers, widths, strict=True))
    out = [line.rstrip(), "  ".join("-" * w for w in widths)]
    out.extend("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)).rstrip()
               for row in text_rows)
    return "\n".join(out)
