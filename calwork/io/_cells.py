"""Cell-by-cell parsing (the careful path): numbers, clock times, ISO 8601 date-times.

Each parser returns the value or raises :class:`~calwork.core.errors.ValueCellError` naming the
file, line, column, the text found and what was expected.
"""

from __future__ import annotations

import math
import re
from datetime import date, datetime, time, timedelta
from typing import Any

from calwork.core.errors import ValueCellError

__all__ = ["parse_clock_s", "parse_iso", "parse_number"]

_NUMBER = {
    ".": re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"),
    ",": re.compile(r"[+-]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][+-]?\d+)?"),
}
_CLOCK = re.compile(r"([+-]?)(\d+):(\d{1,2})(?::(\d{1,2}))?(?:[.,](\d+))?")


def _where(path, line, column) -> dict[str, Any]:
    return {"path": path, "line": line, "column": column}


def parse_number(cell: Any, decimal: str, *, path=None, line=None, column=None) -> float:
    """A finite float from a cell (text with ``decimal`` as the decimal mark, or a number)."""
    if isinstance(cell, bool):
        raise ValueCellError("not a number", found=cell, expected="a number",
                             **_where(path, line, column))
    if isinstance(cell, (int, float)):
        value = float(cell)
    else:
        text = "" if cell is None else str(cell).strip()
        if not text:
            raise ValueCellError("blank cell where a number is needed", found=text,
                                 expected="a number", **_where(path, line, column))
        if _NUMBER[decimal].fullmatch(text):
            value = float(text.replace(",", ".")) if decimal == "," else float(text)
        elif text.lower().lstrip("+-") in ("nan", "inf", "infinity"):
            raise ValueCellError("not a finite number", found=text,
                                 expected="a finite number", **_where(path, line, column))
        else:
            other = "," if decimal == "." else "."
            hint = (f" with decimal mark {decimal!r} (this cell uses {other!r})"
                    if _NUMBER[other].fullmatch(text) else "")
            raise ValueCellError("not a number" + hint, found=text,
                                 expected=f"a number with decimal mark {decimal!r}",
                                 **_where(path, line, column))
    if not math.isfinite(value):
        raise ValueCellError("not a finite number", found=cell, expected="a finite number",
                             **_where(path, line, column))
    return value


def parse_clock_s(cell: Any, *, path=None, line=None, column=None) -> float:
    """Seconds from ``mm:ss(.fff)`` or ``hh:mm:ss(.fff)`` text, or a ``time``/``timedelta``."""
    if isinstance(cell, timedelta):
        return cell.total_seconds()
    if isinstance(cell, time):
        return cell.hour * 3600 + cell.minute * 60 + cell.second + cell.microsecond * 1e-6
    text = "" if cell is None else str(cell).strip()
    m = _CLOCK.fullmatch(text)
    if not m:
        raise ValueCellError("not a clock time", found=text,
                             expected="mm:ss or hh:mm:ss with optional decimals",
                             **_where(path, line, column))
    sign, a, b, c, frac = m.groups()
    if c is None:
        minutes, seconds, hours = int(a), int(b), 0
    else:
        hours, minutes, seconds = int(a), int(b), int(c)
        if minutes >= 60:
            raise ValueCellError("minutes must be below 60 in hh:mm:ss", found=text,
                                 expected="hh:mm:ss", **_where(path, line, column))
    if seconds >= 60:
        raise ValueCellError("seconds must be below 60", found=text,
                             expected="mm:ss or hh:mm:ss", **_where(path, line, column))
    value = hours * 3600 + minutes * 60 + seconds + (float("0." + frac) if frac else 0.0)
    return -value if sign == "-" else value


def parse_iso(cell: Any, *, path=None, line=None, column=None) -> datetime:
    """A ``datetime`` from ISO 8601 text (``2024-05-01T09:30:06.250``, optional offset)."""
    if isinstance(cell, datetime):
        return cell
    if isinstance(cell, date):
        return datetime(cell.year, cell.month, cell.day)
    text = "" if cell is None else str(cell).strip()
    try:
        if not text or not text[:4].isdigit():
            raise ValueError(text)
        return datetime.fromisoformat(text.replace(",", ".") if "T" in text else text)
    except ValueError:
        raise ValueCellError("not an ISO 8601 date-time", found=text,
                             expected="e.g. 2024-05-01T09:30:06.250",
                             **_where(path, line, column)) from None
