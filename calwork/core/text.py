"""Plain-text tables for terminals and text reports (the one table formatter)."""

from __future__ import annotations

import re
from collections.abc import Iterable, Sequence
from typing import Any

__all__ = ["format_table"]


#: A plain number as tables print it (sign, digits, decimals, exponent).
_NUMBER = re.compile(r"[+\-−]?(\d[\d,]*\.?\d*|\.\d+)([eE][+\-]?\d+)?%?")


def format_table(headers: Sequence[str], rows: Iterable[Sequence[Any]]) -> str:
    """A plain-text table: columns of numbers right-aligned (header too), columns of text
    left-aligned, ``None`` blank.

    Examples
    --------
    >>> print(format_table(["run", "ΔT / K"], [["BA-01", "1.2345"], ["BA-2", None]]))
    run    ΔT / K
    -----  ------
    BA-01  1.2345
    BA-2
    """
    text_rows = [["" if v is None else str(v) for v in row] for row in rows]
    widths = [len(h) for h in headers]
    for row in text_rows:
        for i, cell in enumerate(row):
            widths[i] = max(widths[i], len(cell))
    numeric = [bool(cells) and all(_NUMBER.fullmatch(c) for c in cells)
               for cells in ([r[i] for r in text_rows if r[i].strip()]
                             for i in range(len(headers)))]

    def cell(text: str, width: int, right: bool) -> str:
        return text.rjust(width) if right else text.ljust(width)

    line = "  ".join(cell(h, w, num) for h, w, num in zip(headers, widths, numeric,
                                                          strict=True))
    out = [line.rstrip(), "  ".join("-" * w for w in widths)]
    out.extend("  ".join(cell(c, w, num) for c, w, num in zip(row, widths, numeric,
                                                              strict=True)).rstrip()
               for row in text_rows)
    return "\n".join(out)
