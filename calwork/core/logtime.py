"""Times as the lab writes them: a moment of a log given in the log's own notation.

A firing time or the end of a main period may be written

* as seconds on the log's time axis: ``312``, ``312.5``, ``312 s``;
* with a unit: ``5.2 min``, ``0.1 h``, ``5 min 12 s``;
* as a clock: ``10:05:00`` or ``10:05`` in a log of times of day (and ``10:05:00`` in a log
  with ISO date-times, on the day it starts); ``05:12`` (mm:ss) or ``1:05:12`` (h:mm:ss) in a
  log of elapsed time.

:func:`parse_log_time` checks the notation where it is written (a run sheet, an option) and
keeps it as a :class:`LogTime`; :func:`log_time_s` turns it into seconds on a particular
log's axis — the axis the readings, :class:`~calwork.core.thermogram.Thermogram` ``time_s``
and every ``..._s`` field of a result use (:func:`time_origin` says where its zero is). The
JSON output always holds seconds.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from calwork.core.errors import ValueCellError

__all__ = ["LogTime", "describe_time", "log_time_s", "on_axis_s", "parse_log_time",
           "seconds_of", "time_origin"]

_NUMBER = r"[-+]?\d+(?:\.\d*)?(?:[eE][-+]?\d+)?"
_WITH_UNIT = re.compile(rf"({_NUMBER})\s*(s|sec|min|h)?")
_MIN_SEC = re.compile(rf"(\d+)\s*min\s+({_NUMBER})\s*s")
_CLOCK = re.compile(r"(\d{1,2}):(\d{2})(?::(\d{2}(?:\.\d*)?))?")
_FACTOR = {None: 1.0, "s": 1.0, "sec": 1.0, "min": 60.0, "h": 3600.0}
#: Log time units (the importer's ``time_unit``) whose values are times of day.
_TIMES_OF_DAY = ("clock", "hh:mm:ss")


@dataclass(frozen=True)
class LogTime:
    """A moment written in a notation that needs the log to become seconds (a clock time);
    plain seconds and times with a unit are floats already."""

    text: str
    #: (hours, minutes, seconds) as written; hours is ``None`` for two-part ``a:b`` text
    parts: tuple[int | None, int, float]

    def __str__(self) -> str:
        return self.text

    def to_dict(self) -> str:
        """The JSON form of a time as written: its text."""
        return self.text


def parse_log_time(value: Any, *, column: str | None = None, path: Any = None,
                   line: int | None = None) -> float | LogTime:
    """Seconds (a float) for a number or a time with a unit; a :class:`LogTime` for a clock
    time. :class:`~calwork.core.errors.ValueCellError` names what was found and the
    notations accepted.

    Examples
    --------
    >>> parse_log_time("312"), parse_log_time("5.2 min"), parse_log_time("5 min 12 s")
    (312.0, 312.0, 312.0)
    >>> parse_log_time("10:05:00").parts
    (10, 5, 0.0)
    """
    where = {"column": column, "path": path, "line": line}
    if isinstance(value, bool):
        raise ValueCellError("a time is a number of seconds or a clock time", found=value,
                             expected=_EXPECTED, **where)
    if isinstance(value, (int, float)):
        seconds = float(value)
    else:
        text = str(value).strip().replace(",", ".") if _only_decimal_comma(value) else str(
            value).strip()
        m = _CLOCK.fullmatch(text)
        if m:
            a, b, c = m.groups()
            if int(b) >= 60 or (c is not None and float(c) >= 60):
                raise ValueCellError("minutes and seconds of a clock time must be below 60",
                                     found=text, expected=_EXPECTED, **where)
            parts = (int(a), int(b), float(c)) if c is not None else (None, int(a), float(b))
            return LogTime(text=text, parts=parts)
        m = _MIN_SEC.fullmatch(text)
        if m:
            seconds = 60.0 * int(m.group(1)) + float(m.group(2))
        else:
            m = _WITH_UNIT.fullmatch(text)
            if not m:
                raise ValueCellError("not a time", found=text, expected=_EXPECTED, **where)
            seconds = float(m.group(1)) * _FACTOR[m.group(2)]
    if not math.isfinite(seconds):
        raise ValueCellError("a time must be a finite number", found=value, expected=_EXPECTED,
                             **where)
    return seconds


_EXPECTED = ("seconds (312, 312 s), a time with a unit (5.2 min, 5 min 12 s, 0.1 h) or a clock "
             "time in the log's notation (10:05:00, 10:05, mm:ss)")


def _only_decimal_comma(value: Any) -> bool:
    text = str(value).strip()
    return text.count(",") == 1 and "." not in text and ":" not in text


def log_time_s(value: float | LogTime | None, metadata: dict[str, Any] | Any, time_s: Any, *,
               column: str | None = None, path: Any = None) -> float | None:
    """``value`` as seconds on the axis of a log with ``metadata`` (the importer's) and
    readings at ``time_s``; ``None`` stays ``None``.

    A clock time is read in the log's notation: a time of day in a log of times of day (two
    parts are hh:mm; a record that passes midnight continues on the next day), a time of day
    on the start date in a log of ISO date-times, elapsed mm:ss / h:mm:ss otherwise. The
    result must lie within the record.

    Examples
    --------
    >>> log_time_s(parse_log_time("10:05"), {"time_unit": "clock"}, [36000.0, 36900.0])
    36300.0
    >>> log_time_s(parse_log_time("05:12"), {"time_unit": "s"}, [0.0, 900.0])
    312.0
    """
    if value is None:
        return None
    unit = metadata.get("time_unit") if hasattr(metadata, "get") else None
    t0, t1 = float(time_s[0]), float(time_s[-1])
    where = {"column": column, "path": path}
    if isinstance(value, LogTime):
        h, _, s = value.parts
        if unit in _TIMES_OF_DAY or unit == "iso":
            if h is None and s != int(s):
                raise ValueCellError("a two-part time of day is hh:mm", found=value.text,
                                     expected="hh:mm or hh:mm:ss", **where)
            of_day = seconds_of(value, times_of_day=True)
            if unit == "iso":
                start = _start(metadata, value, where)
                of_day -= (start.hour * 3600.0 + start.minute * 60.0 + start.second
                           + start.microsecond * 1e-6)
            # the same time of day on the record's first, second, ... day
            days = range(int(max(t1 - of_day, 0.0) // 86400.0) + 1)
            inside = [of_day + 86400.0 * d for d in days if t0 <= of_day + 86400.0 * d <= t1]
            out = inside[0] if inside else of_day
        else:
            out = seconds_of(value, times_of_day=False)
    else:
        out = float(value)
    if not t0 <= out <= t1:
        raise ValueCellError(
            "the time is outside the record", found=f"{value} (= {out:.6g} s on the log's axis)",
            expected=f"between the first and the last reading, {describe_time(t0, metadata)} "
                     f"and {describe_time(t1, metadata)} ({t0:.6g}–{t1:.6g} s)", **where)
    return out


def seconds_of(value: LogTime, *, times_of_day: bool) -> float:
    """The seconds a clock time stands for: from midnight for a time of day (two parts are
    hh:mm), else elapsed (two parts are mm:ss).

    Examples
    --------
    >>> seconds_of(parse_log_time("10:05"), times_of_day=True)
    36300.0
    >>> seconds_of(parse_log_time("10:05"), times_of_day=False)
    605.0
    """
    h, m, s = value.parts
    if h is None:
        return 3600.0 * m + 60.0 * s if times_of_day else 60.0 * m + s
    return 3600.0 * h + 60.0 * m + s


def _start(metadata: Any, value: LogTime, where: dict) -> datetime:
    text = metadata.get("start")
    try:
        return datetime.fromisoformat(str(text))
    except (TypeError, ValueError):
        raise ValueCellError("the log's start date-time is unknown, so a clock time cannot be "
                             "placed on it", found=value.text, expected="seconds", **where
                             ) from None


def describe_time(t_s: float, metadata: Any) -> str:
    """A time on a log's axis written in the log's own notation.

    Examples
    --------
    >>> describe_time(36300.0, {"time_unit": "clock"})
    '10:05:00'
    >>> describe_time(312.0, {"time_unit": "mm:ss"}), describe_time(312.0, {"time_unit": "s"})
    ('05:12', '312 s')
    """
    unit = metadata.get("time_unit") if hasattr(metadata, "get") else None
    if unit in _TIMES_OF_DAY:
        return _clock(t_s % 86400.0, hours=True)
    if unit == "mm:ss":
        return _clock(t_s, hours=t_s >= 3600.0)
    if unit == "iso" and metadata.get("start"):
        try:
            from datetime import timedelta

            moment = datetime.fromisoformat(str(metadata["start"])) + timedelta(seconds=t_s)
            return moment.isoformat(timespec="seconds")
        except ValueError:
            pass
    if unit == "min":
        return f"{t_s / 60.0:.6g} min"
    if unit == "h":
        return f"{t_s / 3600.0:.6g} h"
    return f"{t_s:.6g} s"


def _clock(t_s: float, *, hours: bool) -> str:
    whole = math.floor(t_s + 1e-9)
    frac = t_s - whole
    h, rest = divmod(whole, 3600)
    m, s = divmod(rest, 60)
    tail = f"{s:02d}" + (f"{frac:.3f}"[1:].rstrip("0").rstrip(".") if frac > 1e-6 else "")
    return f"{h:02d}:{m:02d}:{tail}" if hours else f"{m + 60 * h:02d}:{tail}"


def time_origin(metadata: Any, time_s: Any) -> str:
    """Where zero of a log's time axis is, in words (what ``inspect`` shows).

    Examples
    --------
    >>> time_origin({"time_unit": "clock"}, [36000.0, 37800.0])
    't = 0 s is midnight (00:00:00): the log gives times of day, first reading 10:00:00'
    """
    unit = metadata.get("time_unit") if hasattr(metadata, "get") else None
    first = describe_time(float(time_s[0]), metadata)
    if unit in _TIMES_OF_DAY:
        return f"t = 0 s is midnight (00:00:00): the log gives times of day, first reading {first}"
    if unit == "iso":
        return (f"t = 0 s is the first reading, {metadata.get('start')}: the log gives "
                "date-times")
    if unit == "mm:ss":
        return f"t = 0 s is 00:00 of the log's elapsed time (mm:ss), first reading {first}"
    return f"t = 0 s is the log's time zero (unit {unit or 's'}), first reading at {first}"


def on_axis_s(value: float | LogTime | None, thermogram: Any, *,
              column: str | None = None) -> float | None:
    """``value`` in seconds on ``thermogram``'s axis: a clock time through
    :func:`log_time_s`; seconds (a float) and ``None`` as they are."""
    if not isinstance(value, LogTime):
        return value
    return log_time_s(value, thermogram.metadata, thermogram.time_s, column=column,
                      path=thermogram.provenance.source_path)
