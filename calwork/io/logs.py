"""The built-in log readers: delimited text and ``.xlsx`` → :class:`Thermogram`
(:func:`calwork.io.read_log` offers each file to the registered readers first, see
:mod:`calwork.io.readers`).

The file is read once and hashed; the layout (encoding, separator, decimal mark, preamble,
header, optional units row) is sniffed on the first few kilobytes; the readings are parsed by
numpy (a plain numeric block) or ``pandas.read_csv`` on the decoded text and, if anything is
off, again cell by cell so the error names the exact line and column. Workbooks are turned
into the same tab-separated text (numbers as exact ``repr``) with spreadsheet row numbers, and
go the same way.

What was detected is kept in ``Thermogram.metadata`` next to the preamble entries:
``detected_encoding``, ``detected_separator``, ``detected_decimal``, ``header_line``,
``columns``, ``time_column``, ``time_unit``, ``temperature_column``, ``temperature_unit``,
``channels`` (JSON: channel → column) and ``ignored_columns``.
"""

from __future__ import annotations

import io
import json
import operator
from collections.abc import Mapping
from dataclasses import dataclass
from datetime import date, datetime, time, timedelta
from functools import cache
from pathlib import Path
from typing import Any

import numpy as np

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import (
    CalworkError,
    LogFormatError,
    SensorRangeError,
    TimeAxisError,
    UnitError,
    ValueCellError,
)
from calwork.core.numeric import median
from calwork.core.provenance import Provenance, calwork_version
from calwork.core.thermogram import Thermogram
from calwork.core.units import temperature_to_K
from calwork.io._cells import parse_clock_s, parse_iso, parse_number
from calwork.io._columns import ColumnPlan, plan_columns
from calwork.io._text import (
    CLOCK,
    ISO,
    SEPARATOR_NAMES,
    SNIFF_CHARS,
    SNIFF_LINES,
    decode_bytes,
    is_comment,
    parse_preamble,
    sniff_layout,
    split_cells,
    split_lines,
)
from calwork.io._xlsx import is_xlsx, read_xlsx_rows
from calwork.io.sensors import SensorModel, resolve_sensor
from calwork.plausibility import temperature_slip

__all__ = [
    "MIN_READINGS",
    "PLAUSIBLE_RANGE_K",
    "DelimitedTextReader",
    "LogOptions",
    "WorkbookReader",
]

#: Fewest readings a log must hold (fore, main and after period need several each).
MIN_READINGS = 10
#: Plausible calorimeter (and jacket) temperatures, K; outside this a unit or sensor is wrong.
PLAUSIBLE_RANGE_K = (150.0, 700.0)
_CHANNEL_NAMES = {"jacket": "jacket_K", "heater_V": "heater_V", "heater_A": "heater_A",
                  "standard_resistor_V": "standard_resistor_V", "resistance": "resistance_ohm"}


def _has_odd_lines(block: str) -> bool:
    """Comment marks in the readings (single-character tests: they are fast). Blank lines
    need no test: they come out of pandas as NaN rows, and NaN sends the block to the
    careful path."""
    return not block or "#" in block or "%" in block or "/" in block


@cache
def _version() -> str:
    return calwork_version()


class _Table:
    """Decoded text of a log with its sniffing head, and (on demand) all its lines.

    ``numbers`` maps line index → source line/row (``None``: index + 1). Only the first few
    kilobytes are split for sniffing; the readings go to the parser as one slice of text.
    """

    def __init__(self, text: str, numbers: list[int] | None, detected: dict[str, str]):
        if "\r" in text:
            text = text.replace("\r\n", "\n").replace("\r", "\n")
        self.text = text
        self.numbers = numbers
        self.detected = detected
        head = text[:SNIFF_CHARS]
        self.head = head.split("\n", SNIFF_LINES)
        if len(self.head) > SNIFF_LINES or len(head) < len(text):
            self.head.pop()  # the rest of the text, or a line cut by the sniffing limit
        elif self.head and self.head[-1] == "":
            self.head.pop()
        self._lines: list[str] | None = None

    @property
    def lines(self) -> list[str]:
        if self._lines is None:
            self._lines = split_lines(self.text)
        return self._lines

    def number(self, index: int) -> int:
        return index + 1 if self.numbers is None else self.numbers[index]

    def block(self, index: int) -> str:
        """The text from line ``index`` to the end, without the final newline."""
        pos = 0
        for _ in range(index):
            pos = self.text.find("\n", pos) + 1
            if pos == 0:
                return ""
        end = len(self.text) - 1 if self.text.endswith("\n") else len(self.text)
        return self.text[pos:end]


def _text_table(data: bytes, path: str | Path) -> _Table:
    text, encoding = decode_bytes(data, path)
    return _Table(text, None, {"format": "text", "detected_encoding": encoding})


def _xlsx_cell_text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, float):
        return repr(value)
    if isinstance(value, datetime | date | time):
        return value.isoformat()
    if isinstance(value, timedelta):
        total = value.total_seconds()
        h, rest = divmod(abs(total), 3600.0)
        m, s = divmod(rest, 60.0)
        return f"{'-' if total < 0 else ''}{int(h)}:{int(m):02d}:{s:09.6f}"
    return str(value).replace("\t", " ").replace("\n", " ").replace("\r", " ")


def _xlsx_table(data: bytes, path: str | Path, sheet: str | None) -> _Table:
    title, rows = read_xlsx_rows(data, path, sheet)
    lines, numbers = [], []
    for number, values in rows:
        cells = [_xlsx_cell_text(v) for v in values]
        while cells and not cells[-1]:
            cells.pop()
        lines.append("\t".join(cells))
        numbers.append(number)
    return _Table("\n".join(lines), numbers, {"format": "xlsx", "sheet": title})


def _time_kind(plan: ColumnPlan, first_cell: str) -> str:
    if plan.unit in ("mm:ss", "hh:mm:ss"):
        return "clock"
    if plan.unit == "iso":
        return "iso"
    if plan.unit is None or plan.unit_source == "assumed":
        if ISO.fullmatch(first_cell) and "-" in first_cell[1:]:
            return "iso"
        if CLOCK.fullmatch(first_cell):
            return "clock"
    return "num"


#: Blocks of at most this many cells are parsed by numpy (see :func:`_fast_parse`).
_NUMPY_CELLS = 1500


def _all_numbers(block: str, nrows: int, sep: str | None, decimal: str,
                 n_fields: int) -> np.ndarray | None:
    """The block as an ``(nrows, n_fields)`` array when every cell is a plain number (the
    usual logger file), else ``None``. Every line must hold exactly ``n_fields`` cells, so a
    short line and a long one cannot make up for each other; anything unusual (non-ASCII,
    digit-group underscores, a point in a decimal-comma block, a text cell) returns ``None``
    for the general parser."""
    if not block.isascii() or "_" in block or (decimal == "," and "." in block):
        return None
    # the caller checked the block's total cell count: the fewest cells on a line being
    # n_fields then means every line has n_fields
    lines = block.split("\n")
    if sep is None:
        if min(map(len, map(str.split, lines))) != n_fields:
            return None
        cells = block.split()
    else:
        if min(map(operator.methodcaller("count", sep), lines)) != n_fields - 1:
            return None
        cells = block.replace("\n", sep).split(sep)
    if decimal == ",":
        cells = [c.replace(",", ".") for c in cells]
    try:
        values = np.array(cells, dtype=float)
    except ValueError:  # a text or empty cell
        return None
    return values.reshape(nrows, n_fields)


def _fast_parse(block: str, nrows: int, sep: str | None, decimal: str, n_fields: int,
                kinds: dict[int, str]) -> dict[int, Any] | None:
    """Columns by index via pandas, or ``None`` when anything needs the careful path."""
    if '"' in block or max(kinds) >= n_fields or _has_odd_lines(block):
        return None
    if sep is not None:
        if block.count(sep) != (n_fields - 1) * nrows:
            return None
    elif len(block.split()) != n_fields * nrows:
        return None
    # numpy parses a short plain block faster than pandas starts up; pandas wins on long ones
    # (measured: equal at about 1,500 cells)
    numbers = (_all_numbers(block, nrows, sep, decimal, n_fields)
               if nrows * n_fields <= _NUMPY_CELLS else None)
    if numbers is not None:  # then no cell is a clock time or a timestamp either
        columns = {i: numbers[:, i].copy() for i in kinds}
        return columns if all(np.isfinite(c).all() for c in columns.values()) else None
    import pandas as pd

    try:
        frame = pd.read_csv(
            io.StringIO(block), sep=sep if sep is not None else r"\s+", decimal=decimal,
            header=None, names=list(range(n_fields)), usecols=sorted(kinds), engine="c",
            dtype={i: (float if k == "num" else str) for i, k in kinds.items()},
            skip_blank_lines=False,
        )
    except Exception:  # any parser complaint: the careful path gives the exact message
        return None
    if len(frame) != nrows:
        return None
    out: dict[int, Any] = {}
    for i, kind in kinds.items():
        if kind == "num":
            arr = frame[i].to_numpy(dtype=float)
            if not np.isfinite(arr).all():
                return None
            out[i] = arr
        else:
            values = frame[i].tolist()
            if any(not isinstance(v, str) for v in values):
                return None
            out[i] = values
    return out


def _careful_parse(table: _Table, start: int, sep: str | None, decimal: str,
                   width: int, kinds: dict[int, str], names: dict[int, str],
                   path) -> tuple[dict[int, list], list[int]]:
    """Columns by index and source line numbers, cell by cell with exact errors."""
    out: dict[int, list] = {i: [] for i in kinds}
    rows: list[int] = []
    for k in range(start, len(table.lines)):
        line = table.lines[k]
        if is_comment(line):
            continue
        number = table.number(k)
        cells = split_cells(line, sep)
        if len(cells) > width and any(cells[width:]):
            raise LogFormatError(
                f"the line has {len(cells)} fields but the header names {width}",
                path=path, line=number, found=line[:80], expected=f"{width} fields",
            )
        for i, kind in kinds.items():
            cell = cells[i] if i < len(cells) else ""
            where = {"path": path, "line": number, "column": names[i]}
            if kind == "num":
                out[i].append(parse_number(cell, decimal, **where))
            elif kind == "clock":
                out[i].append(parse_clock_s(cell, **where))
            else:
                parse_iso(cell, **where)
                out[i].append(cell)
        rows.append(number)
    return out, rows


def _iso_elapsed_s(cells: list[str], rows: np.ndarray, path, column: str) -> tuple[np.ndarray, str]:
    stamps = [parse_iso(c, path=path, line=int(r), column=column)
              for c, r in zip(cells, rows, strict=True)]
    aware = stamps[0].tzinfo is not None
    for s, r in zip(stamps, rows, strict=True):
        if (s.tzinfo is not None) != aware:
            raise ValueCellError(
                "time-zone offsets given for some timestamps but not others", path=path,
                line=int(r), column=column, found=s.isoformat(),
                expected="all timestamps with an offset or all without",
            )
    t0 = stamps[0]
    return np.array([(s - t0).total_seconds() for s in stamps], dtype=float), t0.isoformat()


def _check_range_K(values_K: np.ndarray, raw: np.ndarray, rows: np.ndarray, path, column: str,
                   unit: str) -> None:
    lo, hi = PLAUSIBLE_RANGE_K
    bad = np.flatnonzero((values_K < lo) | (values_K > hi))
    if bad.size:
        i = int(bad[0])
        raise SensorRangeError(
            f"temperature outside the plausible range for a calorimeter (read as {unit})",
            path=path, line=int(rows[i]), column=column, found=float(raw[i]),
            expected=f"{lo:g} K to {hi:g} K ({lo - CELSIUS_ZERO_K:g} °C to "
            f"{hi - CELSIUS_ZERO_K:g} °C); check the unit or the sensor",
        )


_UNIT_WORDS = {"C": "°C", "K": "kelvin", "F": "°F"}


def _check_unit_slip(raw: np.ndarray, rows: np.ndarray, path, column: str, unit: str,
                     inferred: bool) -> None:
    """A calorimeter log sits near room temperature: readings whose median is far from it in
    the unit they were read in are a unit slip (°F or kelvin read as °C...), named."""
    middle = median(raw)
    slip, (lo, hi) = temperature_slip(middle, unit)
    if slip is None:
        return
    i = int(np.argmin(np.abs(raw - middle)))
    how = "no unit given, so read" if inferred else "read"
    hint = (f"they look like {_UNIT_WORDS[slip]}: give the unit ({slip}) in the header, "
            "temperature_unit or --temperature-unit" if slip != "?" else
            "check the unit and the column")
    raise SensorRangeError(
        f"temperatures ({how} as {_UNIT_WORDS[unit]}) are not near room temperature; {hint}",
        path=path, line=int(rows[i]), column=column, found=float(raw[i]),
        expected=f"{lo:g} to {hi:g} {_UNIT_WORDS[unit]} for a calorimeter (common practice)")


def _to_kelvin(raw: np.ndarray, unit: str | None, rows: np.ndarray, path, column: str,
               model: SensorModel | None) -> tuple[np.ndarray, str, bool]:
    """(kelvin, unit used, unit inferred?) for a temperature-like column."""
    inferred = unit is None
    if unit is None:
        unit = "K" if median(raw) > PLAUSIBLE_RANGE_K[0] else "C"
    if unit == "ohm":
        if model is None:
            raise UnitError(
                "the temperature column holds resistance in ohm; a sensor model is needed",
                path=path, column=column,
                expected="sensor='pt100', 'pt1000' or 'steinhart-hart' (--sensor)",
            )
        bad = np.flatnonzero(raw <= 0.0)
        if bad.size:
            i = int(bad[0])
            raise SensorRangeError("a thermometer resistance must be positive", path=path,
                                   line=int(rows[i]), column=column, found=float(raw[i]),
                                   expected="R > 0 ohm")
        span = model.resistance_range_ohm()
        if span is not None:
            out = np.flatnonzero((raw < span[0]) | (raw > span[1]))
            if out.size:
                i = int(out[0])
                raise SensorRangeError(
                    f"resistance outside the range of the {model.name} sensor", path=path,
                    line=int(rows[i]), column=column, found=float(raw[i]),
                    expected=f"{span[0]:.4f} to {span[1]:.4f} ohm (−200 °C to 850 °C, "
                    "IEC 60751)",
                )
        try:
            kelvin = np.asarray(model.temperature_K(raw), dtype=float)
        except SensorRangeError as err:
            raise err.with_context(path=path, column=column) from None
    else:
        kelvin = np.asarray(temperature_to_K(raw, unit), dtype=float)
        _check_unit_slip(raw, rows, path, column, unit, inferred)
    _check_range_K(kelvin, raw, rows, path, column, unit)
    return kelvin, unit, inferred


def _preamble_sensor(preamble: Mapping[str, str]) -> SensorModel | None:
    """A platinum sensor named by a ``sensor: pt100`` preamble line (as write_log writes)."""
    for key, value in preamble.items():
        if key.strip().lower() == "sensor" and value.strip().lower() in ("pt100", "pt1000"):
            return resolve_sensor(value.strip().lower())
    return None


@dataclass(frozen=True, kw_only=True)
class LogOptions:
    """What the caller of :func:`read_log` asked for (the run sheet's or the command's column
    and unit overrides), as every log reader receives it."""

    time_column: str | None = None
    temperature_column: str | None = None
    time_unit: str | None = None
    temperature_unit: str | None = None
    sensor: str | None = None
    sensor_coefficients: Mapping[str, float] | None = None
    sheet: str | None = None


class DelimitedTextReader:
    """The built-in reader of delimited text logs (any separator, decimal mark, encoding)."""

    name = "delimited text"

    def sniff(self, path: Path, head: bytes) -> bool:
        return True  # the reader of last resort: it says precisely what it cannot read

    def read(self, path: Path, data: bytes, options: LogOptions, sha256: str) -> Thermogram:
        return _thermogram(path, _text_table(data, path), options, sha256)


class WorkbookReader:
    """The built-in reader of ``.xlsx`` logs (first or named sheet)."""

    name = "xlsx workbook"

    def sniff(self, path: Path, head: bytes) -> bool:
        return is_xlsx(path, head)

    def read(self, path: Path, data: bytes, options: LogOptions, sha256: str) -> Thermogram:
        return _thermogram(path, _xlsx_table(data, path, options.sheet), options, sha256)


def _thermogram(path, table: _Table, options: LogOptions, sha: str) -> Thermogram:
    """A table of text lines (from a text file or a workbook) → Thermogram."""
    time_column, temperature_column = options.time_column, options.temperature_column
    time_unit, temperature_unit = options.time_unit, options.temperature_unit
    model = None
    if options.sensor is not None:
        try:
            model = resolve_sensor(options.sensor, options.sensor_coefficients)
        except CalworkError as err:
            raise err.with_context(path=path) from None
    layout = sniff_layout(table.head, path)
    header = list(layout.header)
    units = list(layout.units) if layout.units is not None else None
    preamble = parse_preamble(table.head[: layout.header_index])
    preamble_model = None if model is not None else _preamble_sensor(preamble)
    plans = plan_columns(
        header, units, path, time_column=time_column, temperature_column=temperature_column,
        time_unit=time_unit, temperature_unit=temperature_unit,
        resistance_source=model is not None, resistance_fallback=preamble_model is not None,
    )
    sensor_source = "argument" if model is not None else ""
    if model is None and preamble_model is not None and plans["temperature"].unit == "ohm":
        model, sensor_source = preamble_model, "preamble"
    start = layout.data_index
    lines = table.head if start + 1 < len(table.head) else table.lines
    first = next((k for k in range(start, len(lines)) if not is_comment(lines[k])), None)
    if first is None and lines is table.head:
        lines = table.lines
        first = next((k for k in range(start, len(lines)) if not is_comment(lines[k])), None)
    if first is None:
        raise LogFormatError("no readings below the header", path=path,
                             line=table.number(layout.header_index))
    tplan = plans["time"]
    first_cells = split_cells(lines[first], layout.sep)
    kind = _time_kind(tplan, first_cells[tplan.index] if tplan.index < len(first_cells) else "")
    kinds = {p.index: "num" for p in plans.values()}
    kinds[tplan.index] = kind
    names = {p.index: p.name for p in plans.values()}
    width = max(len(header), layout.n_fields)

    block = table.block(start)
    nrows = block.count("\n") + 1
    parsed = _fast_parse(block, nrows, layout.sep, layout.decimal, layout.n_fields, kinds)
    if parsed is not None:
        rows = (np.arange(start + 1, start + 1 + nrows) if table.numbers is None
                else np.asarray(table.numbers[start:], dtype=np.int64))
        if kind == "clock":
            parsed[tplan.index] = np.array([
                parse_clock_s(c, path=path, line=int(r), column=tplan.name)
                for c, r in zip(parsed[tplan.index], rows, strict=True)
            ], dtype=float)
    else:
        cols, row_list = _careful_parse(table, start, layout.sep, layout.decimal, width, kinds,
                                        names, path)
        parsed = {i: (np.asarray(v, dtype=float) if kinds[i] != "iso" else v)
                  for i, v in cols.items()}
        rows = np.asarray(row_list, dtype=np.int64)
    n = int(rows.size)
    if n < MIN_READINGS:
        raise LogFormatError("too few readings for a thermogram", path=path, found=n,
                             expected=f"at least {MIN_READINGS} readings")

    meta: dict[str, str] = dict(table.detected)
    meta.update({
        "detected_separator": SEPARATOR_NAMES[layout.sep] if table.numbers is None else "cells",
        "detected_decimal": layout.decimal,
        "header_line": str(table.number(layout.header_index)),
        "columns": json.dumps(header, ensure_ascii=False),
    })
    if table.numbers is not None:
        meta["header_row"] = meta.pop("header_line")
    if layout.units_index is not None:
        meta["units_line"] = str(table.number(layout.units_index))

    # --- time ---------------------------------------------------------------------------------
    traw = parsed[tplan.index]
    if kind == "iso":
        t_s, start_iso = _iso_elapsed_s(traw, rows, path, tplan.name)
        meta["start"] = start_iso
        time_unit_used = "iso"
    elif kind == "clock":
        t_s = np.asarray(traw, dtype=float)
        steps = np.diff(t_s)
        wraps = steps < -43200.0  # a time of day passing midnight
        if wraps.any():
            t_s = t_s + 86400.0 * np.concatenate([[0.0], np.cumsum(wraps)])
            meta["clock_rollover"] = "times of day passed midnight; 24 h added"
        time_unit_used = tplan.unit if tplan.unit in ("mm:ss", "hh:mm:ss") else "clock"
    else:
        unit = tplan.unit or "s"
        factor = {"s": 1.0, "min": 60.0, "h": 3600.0, "ms": 1e-3}[unit]
        t_s = np.asarray(traw, dtype=float) * factor
        time_unit_used = unit
    meta.update({"time_column": tplan.name, "time_unit": time_unit_used,
                 "time_unit_source": tplan.unit_source if kind == "num" else "cells"})

    # --- temperature and channels ---------------------------------------------------------------
    Tplan = plans["temperature"]
    Traw = np.asarray(parsed[Tplan.index], dtype=float)
    T_K, T_unit, inferred = _to_kelvin(Traw, Tplan.unit, rows, path, Tplan.name, model)
    meta.update({"temperature_column": Tplan.name, "temperature_unit": T_unit,
                 "temperature_unit_source": "inferred from the values" if inferred
                 else Tplan.unit_source})
    channels: dict[str, np.ndarray] = {}
    channel_columns: dict[str, str] = {}
    if T_unit == "ohm":
        channels["resistance_ohm"] = Traw
        channel_columns["resistance_ohm"] = Tplan.name
        meta["sensor_model"] = model.describe() if model is not None else ""
        meta["sensor_source"] = sensor_source
    for role, name in _CHANNEL_NAMES.items():
        plan = plans.get(role)
        if plan is None or name in channels:
            continue
        values = np.asarray(parsed[plan.index], dtype=float)
        if role == "jacket":
            unit = plan.unit if plan.unit is not None else (T_unit if T_unit != "ohm" else None)
            values, _, _ = _to_kelvin(values, unit, rows, path, plan.name, None)
        channels[name] = values
        channel_columns[name] = plan.name
    meta["channels"] = json.dumps(channel_columns, ensure_ascii=False)
    used = {p.name for p in plans.values()}
    meta["ignored_columns"] = json.dumps([h for h in header if h and h not in used],
                                         ensure_ascii=False)
    metadata = {(f"preamble_{k}" if k in meta else k): v for k, v in preamble.items()}
    metadata.update(meta)

    provenance = Provenance(source_path=str(path), sha256=sha, importer="calwork.io.read_log",
                            first_row=int(rows[0]), last_row=int(rows[-1]),
                            calwork_version=_version())
    try:
        return Thermogram(time_s=t_s, temperature_K=T_K, channels=channels, rows=rows,
                          metadata=metadata, provenance=provenance)
    except TimeAxisError as err:
        raise err.with_context(column=tplan.name) from None
