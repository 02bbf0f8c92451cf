"""Hand-read records: the readings a technician writes in a notebook, typed as a small CSV.

The format (documented in the README with an example from calwork's fictional lab)::

    # calwork hand-read record
    # temperature_unit: °C
    # calorimeter: bomb-A            (any other "# key: value" lines are kept as metadata)
    time,temperature,remark
    10:00,22.512,
    10:01,22.515,
    ...
    10:05,22.530,fired
    10:05:30,23.71,
    ...

* The first line is ``# calwork hand-read record``; ``# key: value`` lines follow. The
  ``temperature_unit`` line is required (``°C``/``C`` or ``K``): a hand-read record has no
  other place to say it, and calwork does not guess a unit.
* ``time`` is written as on the sheet: a clock time (``10:05``, ``10:05:30``), mm:ss, or a
  number with ``# time_unit: s`` or ``min``; clock times of day count from midnight (as in
  any log of times of day; ``calwork inspect`` shows it).
* ``temperature`` is the value as read, with a decimal point (or a decimal comma). The
  number of decimals written is the record's reading resolution.
* ``remark`` is optional: ``fired`` (or ``firing``, ``ignition``) marks the firing time and
  ``end of main period`` (or ``main end``) the end of the main period — each used like
  ``--fire-time`` / ``--main-end`` unless those are given; any other remark (``stirrer
  stopped``) is kept with its time in the metadata.

What a reader of notebooks gets wrong is refused with the line: times out of order or
repeated, a reading written as ``—`` or left blank, a value without its decimal point
(``2254`` among readings near 22.5).
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import LogFormatError, TimeAxisError, ValueCellError
from calwork.core.logtime import LogTime, parse_log_time, seconds_of
from calwork.core.numeric import median
from calwork.core.provenance import Provenance, calwork_version
from calwork.core.thermogram import Thermogram
from calwork.io._text import decode_bytes

__all__ = ["MARKER", "HandReadReader", "read_hand_record_text", "write_hand_record"]

#: The first line of a hand-read record.
MARKER = "# calwork hand-read record"
_FIRE = {"fired", "fire", "firing", "ignition", "ignited"}
_END = {"end of main period", "main end", "end of main", "main period end"}
_UNITS = {"°c": "C", "c": "C", "degc": "C", "k": "K"}
_DECIMAL = re.compile(r"[-+]?\d+(?:[.,](\d+))?")


class HandReadReader:
    """The built-in reader of hand-read records (``# calwork hand-read record``)."""

    name = "hand-read record"

    def sniff(self, path: Path, head: bytes) -> bool:
        text = head.lstrip(b"\xef\xbb\xbf").lstrip()
        return text[:len(MARKER)].lower() == MARKER.encode()

    def read(self, path: Path, data: bytes, options, sha256: str) -> Thermogram:
        text, _ = decode_bytes(data, path)
        return read_hand_record_text(text, path=path, sha256=sha256)


def read_hand_record_text(text: str, *, path: str | Path | None = None,
                          sha256: str | None = None) -> Thermogram:
    """The thermogram of a hand-read record's text (see the module documentation)."""
    where = {"path": path}
    meta: dict[str, str] = {}
    header: list[str] | None = None
    rows: list[tuple[int, list[str]]] = []
    for number, raw in enumerate(text.splitlines(), start=1):
        line = raw.strip()
        if not line:
            continue
        if line.startswith("#"):
            if number > 1 and ":" in line and header is None:
                key, _, value = line[1:].partition(":")
                meta[key.strip().lower().replace(" ", "_")] = value.strip()
            continue
        cells = [c.strip() for c in line.split(",")] if "," in line and ";" not in line else [
            c.strip() for c in line.split(";")]
        if header is None:
            header = [c.lower() for c in cells]
            continue
        rows.append((number, cells))
    if header is None or "time" not in header or "temperature" not in header:
        raise LogFormatError("a hand-read record needs a header line with the columns time "
                             "and temperature (and optionally remark)", found=header,
                             expected="time,temperature,remark", **where)
    unit = _UNITS.get(meta.get("temperature_unit", "").lower())
    if unit is None:
        raise LogFormatError("a hand-read record must say its temperature unit",
                             column="temperature_unit", found=meta.get("temperature_unit"),
                             expected="a line '# temperature_unit: °C' (or K)", **where)
    i_t, i_T = header.index("time"), header.index("temperature")
    i_r = header.index("remark") if "remark" in header else None
    time_unit = meta.get("time_unit", "").lower() or None
    times, temps, lines, decimals = [], [], [], 0
    remarks: list[tuple[int, str, str]] = []
    for number, cells in rows:
        cell_where = {**where, "line": number}
        if len(cells) <= max(i_t, i_T):
            raise LogFormatError("a reading line needs a time and a temperature", found=cells,
                                 expected="time,temperature[,remark]", **cell_where)
        times.append(_time(cells[i_t], time_unit, cell_where))
        value, places = _reading(cells[i_T], cell_where)
        temps.append(value)
        decimals = max(decimals, places)
        lines.append(number)
        if i_r is not None and len(cells) > i_r and cells[i_r]:
            remarks.append((number, cells[i_t], cells[i_r]))
    if len(times) < 2:
        raise LogFormatError("a hand-read record needs readings", found=len(times),
                             expected="at least the fore, main and after-period readings",
                             **where)
    clock = any(isinstance(t, LogTime) for t in times)
    kind = _time_kind(times, time_unit, where)
    meta["time_unit"] = kind
    meta["time_unit_source"] = "hand-read record"
    t_s = np.asarray([seconds_of(t, times_of_day=kind == "clock") if clock else float(t)
                      for t in times], dtype=float)
    if kind == "clock":  # a record that passes midnight continues on the next day
        t_s = t_s + 86400.0 * np.concatenate([[0.0], np.cumsum(np.diff(t_s) < -43200.0)])
    steps = np.diff(t_s)
    bad = np.flatnonzero(steps <= 0)
    if bad.size:
        j = int(bad[0]) + 1
        raise TimeAxisError("times out of order or repeated", line=lines[j], column="time",
                            found=rows[j][1][i_t], expected=f"a time after "
                            f"{rows[j - 1][1][i_t]} (line {lines[j - 1]})", **where)
    T = np.asarray(temps, dtype=float)
    _check_decimal_points(T, lines, [cells[i_T] for _, cells in rows], where)
    T_K = T + CELSIUS_ZERO_K if unit == "C" else T
    meta["columns"] = json.dumps(header)
    meta.update({"temperature_unit": unit, "temperature_unit_source": "hand-read record",
                 "time_column": "time", "temperature_column": "temperature",
                 "reading_resolution": f"{10.0 ** -decimals:g}", "hand_read": "yes"})
    for number, written, remark in remarks:
        key = remark.strip().lower()
        moment = float(t_s[lines.index(number)])
        if key in _FIRE:
            meta["record_fire_time_s"] = repr(moment)
        elif key in _END:
            meta["record_main_end_s"] = repr(moment)
        meta.setdefault("remarks", "")
        meta["remarks"] = "; ".join(filter(None, [meta["remarks"], f"{written} {remark}"]))
    provenance = Provenance(source_path=None if path is None else str(path), sha256=sha256,
                            importer="calwork.io.read_log (hand-read record)",
                            first_row=lines[0], last_row=lines[-1],
                            calwork_version=calwork_version())
    return Thermogram(time_s=t_s, temperature_K=T_K, rows=np.asarray(lines), metadata=meta,
                      provenance=provenance)


def _time(cell: str, time_unit: str | None, where: dict) -> float | LogTime:
    if not cell:
        raise ValueCellError("a reading without its time", column="time", found=cell,
                             expected="the time as written (10:05, 10:05:30, or a number)",
                             **where)
    if time_unit in ("min", "s") and ":" not in cell:
        try:
            number = float(cell.replace(",", "."))
        except ValueError:
            raise ValueCellError("not a time", column="time", found=cell,
                                 expected=f"a number of {time_unit}", **where) from None
        return number * (60.0 if time_unit == "min" else 1.0)
    value = parse_log_time(cell, column="time", **where)
    if not isinstance(value, LogTime) and time_unit is None:
        raise ValueCellError("a time written as a number needs its unit", column="time",
                             found=cell, expected="a clock time (10:05), or a line "
                             "'# time_unit: min' (or s) before the header", **where)
    return value


def _time_kind(times: list, time_unit: str | None, where: dict) -> str:
    clocks = [t for t in times if isinstance(t, LogTime)]
    if not clocks:
        return "s"
    if len(clocks) != len(times):
        raise ValueCellError("mixed time notations: some times are clock times, some numbers",
                             column="time", expected="one notation for the whole record",
                             **where)
    if time_unit in ("mm:ss",):
        return "mm:ss"
    return "clock"


def _reading(cell: str, where: dict) -> tuple[float, int]:
    m = _DECIMAL.fullmatch(cell)
    if not m:
        raise ValueCellError("a reading that is not a number", column="temperature",
                             found=cell, expected="the temperature as read (22.54); leave out "
                             "a line whose reading was missed", **where)
    return float(cell.replace(",", ".")), len(m.group(1) or "")


def _check_decimal_points(T: np.ndarray, lines: list[int], cells: list[str],
                          where: dict) -> None:
    """A reading 10× or more off the record's median, written without a decimal point, is a
    slip (``2254`` for ``22.54``)."""
    centre = median(np.abs(T))
    if centre == 0:
        return
    for value, number, cell in zip(T, lines, cells, strict=True):
        if abs(value) >= 10.0 * centre and "." not in cell and "," not in cell:
            digits = len(cell.lstrip("+-"))
            guess = next((f"{value / 10 ** k:.{k}f}" for k in range(1, digits)
                          if abs(value / 10 ** k - centre) < 0.5 * centre), None)
            hint = f"{guess} without its decimal point" if guess else "a value out of range"
            raise ValueCellError(f"the reading {cell} looks like {hint}", column="temperature",
                                 line=number, found=cell,
                                 expected=f"a value near {centre:.4g} with its decimal point",
                                 **where)


def write_hand_record(thermogram: Thermogram, path: str | Path, *, clock_start_s: float,
                      fire_time_s: float, main_end_s: float | None = None,
                      resolution_C: float = 0.01,
                      preamble: dict[str, str] | None = None,
                      remarks: dict[float, str] | None = None) -> Path:
    """Write ``thermogram`` as a hand-read record (times of day from ``clock_start_s`` after
    midnight, temperatures in °C to ``resolution_C``, ``fired`` at ``fire_time_s`` and
    ``end of main period`` at ``main_end_s``) — how calwork's example records are made from
    the simulator. ``remarks`` adds other remarks by time (s on the thermogram's axis)."""
    decimals = max(0, round(-np.log10(resolution_C)))
    marks = {float(fire_time_s): "fired", **(remarks or {})}
    if main_end_s is not None:
        marks[float(main_end_s)] = "end of main period"
    lines = [MARKER, "# temperature_unit: °C"]
    lines += [f"# {k}: {v}" for k, v in (preamble or {}).items()]
    lines.append("time,temperature,remark")
    for t, T in zip(thermogram.time_s, thermogram.temperature_K, strict=True):
        clock = clock_start_s + float(t)
        h, rest = divmod(round(clock), 3600)
        m, s = divmod(rest, 60)
        written = f"{h:02d}:{m:02d}" if s == 0 else f"{h:02d}:{m:02d}:{s:02d}"
        value = f"{float(T) - CELSIUS_ZERO_K:.{decimals}f}"
        lines.append(f"{written},{value},{marks.get(float(t), '')}")
    out = Path(path)
    out.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return out
