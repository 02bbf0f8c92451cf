"""Helpers shared by the subcommands: JSON printing and readable tables."""

from __future__ import annotations

import json
import sys
from collections.abc import Iterable, Sequence
from typing import Any

from calwork.core.results import jsonable

__all__ = ["format_table", "print_json"]


def print_json(obj: Any) -> None:
    """Print one JSON object on stdout (records via ``to_dict``; NaN becomes null)."""
    json.dump(jsonable(obj), sys.stdout, indent=2, allow_nan=False)
    sys.stdout.write("\n")


def format_table(headers: Sequence[str], rows: Iterable[Sequence[Any]]) -> str:
    """A plain-text table with right-aligned numbers."""
    text_rows = [["" if v is None else str(v) for v in row] for row in rows]
    widths = [len(h) for h in headers]
    for row in text_rows:
        for i, cell in enumerate(row):
            widths[i] = max(widths[i], len(cell))
    line = "  ".join(h.ljust(w) for h, w in zip(headers, widths, strict=True))
    out = [line, "  ".join("-" * w for w in widths)]
    out.extend("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)) for row in text_rows)
    return "\n".join(out)
