"""Writers: a Thermogram as a calwork log file, and run sheets (CSV, XLSX, TOML).

calwork's log layout (what :func:`write_log` writes and :func:`calwork.io.read_log` reads)::

    # calwork temperature log
    # operator: A. Analyst
    # start: 2024-05-01T09:30:00
    time_s,temperature_C,jacket_C,heater_V,heater_A
    0.000000,24.812345,25.000000,0.000000,0.000000
    6.000000,24.812611,25.000000,0.000000,0.000000
    ...

* an optional preamble of ``# key: value`` metadata lines;
* one header row whose column names carry their units: the time column ``time_s`` or
  ``time_min`` (``time`` for ``mm:ss`` / ``hh:mm:ss`` clock text, ``timestamp`` for ISO 8601),
  the temperature column ``temperature_C``, ``temperature_K`` or ``resistance_ohm`` (raw
  sensor resistance), then the optional channels ``jacket_C``/``jacket_K``, ``heater_V``,
  ``heater_A``, ``standard_resistor_V`` and ``resistance_ohm``;
* one reading per line. The separator (``,`` ``;`` tab or space), the decimal mark (``.`` or
  ``,``) and the text encoding are options, so every variant the reader accepts can be made.

``.xlsx`` logs hold the same rows on the first sheet (numbers as numeric cells).
"""

from __future__ import annotations

import csv
import io
import math
from collections.abc import Mapping, Sequence
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

import numpy as np

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import ChoiceError, ExportError, LogFormatError, check_choice
from calwork.core.runinfo import RUN_SHEET_COLUMNS
from calwork.core.thermogram import Thermogram
from calwork.io.sensors import resolve_sensor

__all__ = ["LOG_FORMATS", "TIME_FORMATS", "write_log", "write_run_sheet"]

#: Time formats :func:`write_log` can write.
TIME_FORMATS = ("s", "min", "mm:ss", "hh:mm:ss", "iso")
#: File formats of :func:`write_log`.
LOG_FORMATS = ("csv", "xlsx")
_SEPARATORS = {",": ",", ";": ";", "\t": "\t", "tab": "\t", " ": " ", "space": " "}
_ENCODINGS = ("utf-8", "utf-8-sig", "utf-16", "latin-1")


def _clock(seconds: np.ndarray, with_hours: bool, decimals: int) -> list[str]:
    out = []
    width = 3 + decimals if decimals else 2
    for s in seconds:
        s = round(float(s), decimals)
        if with_hours:
            h, rest = divmod(s, 3600.0)
            m, sec = divmod(rest, 60.0)
            out.append(f"{int(h):02d}:{int(m):02d}:{sec:0{width}.{decimals}f}")
        else:
            m, sec = divmod(s, 60.0)
            out.append(f"{int(m):02d}:{sec:0{width}.{decimals}f}")
    return out


def _start_datetime(start: Any, preamble: Mapping[str, str] | None) -> datetime:
    if start is None and preamble:
        for key in ("start", "start_time", "started"):
            if key in preamble:
                start = preamble[key]
                break
    if start is None:
        raise LogFormatError(
            "time_format 'iso' needs a start date-time",
            expected="start=datetime(...) or a 'start' preamble entry",
        )
    if isinstance(start, datetime):
        return start
    try:
        return datetime.fromisoformat(str(start))
    except ValueError:
        raise LogFormatError("start is not an ISO 8601 date-time", found=start) from None


def _columns(
    thermogram: Thermogram, *, time_format: str, temperature_unit: str, channels: bool,
    digits: int, start: datetime | None, sensor: Any, sensor_coefficients: Any,
) -> list[tuple[str, list[str] | np.ndarray, int]]:
    """(header, values, decimals) per column; values are str lists or float arrays."""
    t = thermogram.time_s
    cols: list[tuple[str, Any, int]] = []
    if time_format == "s":
        cols.append(("time_s", t, digits))
    elif time_format == "min":
        cols.append(("time_min", t / 60.0, digits + 2))
    elif time_format in ("mm:ss", "hh:mm:ss"):
        cols.append(("time", _clock(t, time_format == "hh:mm:ss", min(digits, 3)), 0))
    else:
        assert start is not None
        stamps = [(start + timedelta(seconds=float(s))).isoformat(timespec="milliseconds")
                  for s in t]
        cols.append(("timestamp", stamps, 0))
    T = thermogram.temperature_K
    wrote_resistance = False
    if temperature_unit == "C":
        cols.append(("temperature_C", T - CELSIUS_ZERO_K, digits))
    elif temperature_unit == "K":
        cols.append(("temperature_K", T, digits))
    else:
        if sensor is not None:
            R = resolve_sensor(sensor, sensor_coefficients).resistance_ohm(T)
        elif "resistance_ohm" in thermogram.channels:
            R = thermogram.channels["resistance_ohm"]
        else:
            raise LogFormatError(
                "temperature_unit 'ohm' needs a sensor (or a resistance_ohm channel)",
                expected="sensor='pt100', 'pt1000' or 'steinhart-hart'",
            )
        cols.append(("resistance_ohm", np.asarray(R, dtype=float), digits))
        wrote_resistance = True
    if channels:
        for name, values in thermogram.channels.items():
            if name == "jacket_K":
                if temperature_unit == "K":
                    cols.append(("jacket_K", values, digits))
                else:
                    cols.append(("jacket_C", values - CELSIUS_ZERO_K, digits))
            elif name == "resistance_ohm" and wrote_resistance:
                continue
            else:
                cols.append((name, values, digits))
    return cols


def _format_numbers(values: np.ndarray, decimals: int, decimal: str) -> list[str]:
    text = [f"{v:.{decimals}f}" for v in np.asarray(values, dtype=float).tolist()]
    if decimal == ",":
        text = [s.replace(".", ",") for s in text]
    return text


def write_log(
    thermogram: Thermogram,
    path: str | Path,
    *,
    fmt: str = "csv",
    sep: str = ",",
    decimal: str = ".",
    encoding: str = "utf-8",
    time_format: str = "s",
    temperature_unit: str = "C",
    preamble: Mapping[str, str] | None = None,
    digits: int = 6,
    channels: bool = True,
    start: datetime | str | None = None,
    sensor: str | None = None,
    sensor_coefficients: Mapping[str, float] | None = None,
) -> Path:
    """Write ``thermogram`` as a calwork log file (layout in the module docstring).

    Parameters
    ----------
    thermogram
        The readings to write.
    path
        Output file.
    fmt
        ``'csv'`` (delimited text) or ``'xlsx'``.
    sep
        Separator for text: ``','``, ``';'``, ``'\\t'`` (or ``'tab'``), ``' '`` (or ``'space'``).
    decimal
        Decimal mark for text: ``'.'`` or ``','`` (not together with ``sep=','``).
    encoding
        ``'utf-8'``, ``'utf-8-sig'`` (with BOM), ``'utf-16'`` (with BOM) or ``'latin-1'``.
    time_format
        ``'s'``, ``'min'``, ``'mm:ss'``, ``'hh:mm:ss'`` or ``'iso'`` (needs ``start`` or a
        ``start`` preamble entry).
    temperature_unit
        ``'C'``, ``'K'`` or ``'ohm'`` (sensor resistance; needs ``sensor``).
    preamble
        Metadata written as ``# key: value`` lines before the header.
    digits
        Decimals of temperatures, resistances and channels (and of seconds for ``'s'``; clock
        formats keep at most 3 decimals of a second).
    channels
        Also write the thermogram's channels.
    start
        Date-time of the first reading, for ``time_format='iso'``.
    sensor, sensor_coefficients
        Thermometer model for ``temperature_unit='ohm'`` (see
        :func:`calwork.io.sensors.resolve_sensor`).

    Returns
    -------
    The path written.
    """
    check_choice("fmt", fmt, LOG_FORMATS)
    check_choice("time_format", time_format, TIME_FORMATS)
    check_choice("temperature_unit", temperature_unit, ("C", "K", "ohm"))
    check_choice("decimal", decimal, (".", ","))
    check_choice("encoding", encoding, _ENCODINGS)
    if sep not in _SEPARATORS:
        raise ChoiceError("sep must be one of [',', ';', '\\t', ' ']", found=sep)
    sep = _SEPARATORS[sep]
    if sep == "," and decimal == "," and fmt == "csv":
        raise ChoiceError("decimal ',' needs another separator than ','", found=sep)
    path = Path(path)
    when = _start_datetime(start, preamble) if time_format == "iso" else None
    meta = {str(k): str(v) for k, v in (preamble or {}).items()}
    if time_format == "iso" and "start" not in meta:
        meta["start"] = when.isoformat()
    if temperature_unit == "ohm" and sensor is not None and "sensor" not in meta:
        meta["sensor"] = str(sensor)
    cols = _columns(thermogram, time_format=time_format, temperature_unit=temperature_unit,
                    channels=channels, digits=digits, start=when, sensor=sensor,
                    sensor_coefficients=sensor_coefficients)
    if fmt == "xlsx":
        _write_log_xlsx(path, meta, cols)
        return path
    text_cols = [
        vals if isinstance(vals, list) else _format_numbers(vals, dec, decimal)
        for _, vals, dec in cols
    ]
    lines = [f"# {k}: {v}" for k, v in meta.items()]
    lines.append(sep.join(name for name, _, _ in cols))
    lines.extend(sep.join(row) for row in zip(*text_cols, strict=True))
    try:
        with path.open("w", encoding=encoding, newline="") as fh:
            fh.write("\n".join(lines) + "\n")
    except UnicodeEncodeError as exc:
        raise ExportError(f"text cannot be written in {encoding}: {exc.reason}", path=path,
                          found=exc.object[exc.start:exc.end]) from None
    except OSError as exc:
        raise ExportError(f"cannot write the log: {exc.strerror or exc}", path=path) from None
    return path


def _write_log_xlsx(path: Path, meta: Mapping[str, str], cols) -> None:
    from openpyxl import Workbook

    wb = Workbook(write_only=True)
    ws = wb.create_sheet("log")
    for k, v in meta.items():
        ws.append([f"# {k}: {v}"])
    ws.append([name for name, _, _ in cols])
    data = [vals if isinstance(vals, list) else np.round(np.asarray(vals, float), dec).tolist()
            for _, vals, dec in cols]
    for row in zip(*data, strict=True):
        ws.append(list(row))
    try:
        wb.save(path)
    except OSError as exc:
        raise ExportError(f"cannot write the workbook: {exc.strerror or exc}", path=path) from None


# --- run sheets ---------------------------------------------------------------------------------
def _row_mapping(row: Any) -> dict[str, object]:
    if hasattr(row, "given"):  # a RunInfo: its filled-in columns and the unknown ones
        return {**row.given(), **dict(row.extra)}
    return dict(row)


def _sheet_columns(rows: Sequence[Mapping[str, object]]) -> list[str]:
    seen: dict[str, None] = {}
    for row in rows:
        for key in row:
            seen.setdefault(str(key), None)
    first = [c for c in RUN_SHEET_COLUMNS if c in seen]
    return first + [c for c in seen if c not in RUN_SHEET_COLUMNS]


def _cell_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return "" if math.isnan(value) else repr(value)
    return str(value)


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    text = str(value)
    escaped = (text.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
               .replace("\r", "\\r").replace("\t", "\\t"))
    escaped = "".join(ch if ord(ch) >= 0x20 else f"\\u{ord(ch):04x}" for ch in escaped)
    return f'"{escaped}"'


def _toml_key(key: str) -> str:
    if key and all((ch.isalnum() and ch.isascii()) or ch in "_-" for ch in key):
        return key
    return _toml_value(key)


def write_run_sheet(rows: Sequence[Mapping[str, object]], path: str | Path) -> Path:
    """Write a run sheet as CSV, XLSX or TOML (``[[run]]`` tables), chosen by the suffix.

    Columns: the contract columns (:data:`calwork.core.runinfo.RUN_SHEET_COLUMNS`) that any row
    uses, in contract order, then the others in first-seen order. ``None`` is a blank cell
    (omitted in TOML). Rows may be mappings or :class:`~calwork.core.runinfo.RunInfo` records.

    Parameters
    ----------
    rows
        One mapping per run (column name → value).
    path
        Output file ending in ``.csv``, ``.xlsx`` or ``.toml``.

    Returns
    -------
    The path written.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    check_choice("run sheet suffix", suffix, (".csv", ".xlsx", ".toml"))
    maps = [_row_mapping(r) for r in rows]
    columns = _sheet_columns(maps)
    try:
        if suffix == ".csv":
            buf = io.StringIO()
            writer = csv.writer(buf, lineterminator="\n")
            writer.writerow(columns)
            for row in maps:
                writer.writerow([_cell_text(row.get(c)) for c in columns])
            path.write_text(buf.getvalue(), encoding="utf-8")
        elif suffix == ".toml":
            parts = []
            for row in maps:
                lines = ["[[run]]"]
                for c in columns:
                    value = row.get(c)
                    if value is None or (isinstance(value, float) and math.isnan(value)):
                        continue
                    if isinstance(value, Path):
                        value = value.as_posix()
                    lines.append(f"{_toml_key(c)} = {_toml_value(value)}")
                parts.append("\n".join(lines))
            path.write_text("\n\n".join(parts) + "\n", encoding="utf-8")
        else:
            from openpyxl import Workbook

            wb = Workbook(write_only=True)
            ws = wb.create_sheet("runs")
            ws.append(columns)
            for row in maps:
                cells = []
                for c in columns:
                    value = row.get(c)
                    if isinstance(value, Path):
                        value = value.as_posix()
                    cells.append(value if isinstance(value, (int, float, str)) or value is None
                                 else str(value))
                ws.append(cells)
            wb.save(path)
    except OSError as exc:
        raise ExportError(f"cannot write the run sheet: {exc.strerror or exc}", path=path) from None
    return path
