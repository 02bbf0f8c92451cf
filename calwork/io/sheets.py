"""Run sheets: one row per run, as CSV, XLSX (first sheet) or TOML (``[[run]]`` tables).

Column names are matched exactly after stripping whitespace (case-insensitive) against the
contract columns (:data:`calwork.core.runinfo.RUN_SHEET_COLUMNS`) and calwork's extensions
(:data:`calwork.core.runinfo.EXTENSION_COLUMNS`); any other column is kept in ``RunInfo.extra`` and
listed by :func:`unknown_columns`. Blank cells mean "not given". Numbers take ``.`` or ``,``
as the decimal mark. ``log`` paths are relative to the sheet's folder and must stay inside it.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import replace
from datetime import date, datetime
from pathlib import Path, PurePosixPath, PureWindowsPath
from typing import Any

from calwork.core.errors import (
    CalworkError,
    DuplicateRunError,
    LogPathError,
    SheetError,
    UnitError,
    ValueCellError,
)
from calwork.core.logtime import LogTime, parse_log_time
from calwork.core.runinfo import (
    EXTENSION_COLUMNS,
    RUN_KINDS,
    RUN_SHEET_COLUMNS,
    RunInfo,
    column_problem,
)
from calwork.core.thermogram import Thermogram
from calwork.core.units import parse_temperature_unit, parse_time_unit
from calwork.data import parse_toml_text
from calwork.io._text import decode_bytes, read_file_bytes
from calwork.io._xlsx import is_xlsx, read_xlsx_rows
from calwork.io.readers import read_log
from calwork.io.sensors import SENSORS
from calwork.plausibility import PLAUSIBLE_COLUMNS, check_plausible

__all__ = [
    "AMENDABLE_COLUMNS",
    "SENSOR_COEFFICIENT_COLUMNS",
    "amended_run",
    "load_run_log",
    "read_run_sheet",
    "unknown_columns",
]

_TYPES: dict[str, type] = {**RUN_SHEET_COLUMNS, **EXTENSION_COLUMNS}
_BY_KEY = {name.lower(): name for name in _TYPES}

#: Quantities that must be > 0 where given (masses, volumes, pressures, amounts, ...).
_FRACTIONS = frozenset(name for name in _TYPES if name.endswith("_mass_fraction"))
#: Optional sheet columns with thermometer coefficients for ``sensor`` (kept in ``extra``).
SENSOR_COEFFICIENT_COLUMNS = {
    "sensor_r0_ohm": "R0_ohm", "sensor_a": "a", "sensor_b": "b", "sensor_c": "c",
    "sensor_cvd_a": "A", "sensor_cvd_b": "B", "sensor_cvd_c": "C",
}
_NUMBER = re.compile(r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?")
_RUN_TABLE = re.compile(r"^[ \t]*\[\[[ \t]*run[ \t]*\]\]", re.MULTILINE)


def _number(text: Any, where: dict[str, Any]) -> float:
    if isinstance(text, bool):
        raise SheetError("must be a number", found=text, expected="a number", **where)
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        s = str(text).strip()
        if not _NUMBER.fullmatch(s) or ("," in s and "." in s):
            raise SheetError("must be a number", found=s,
                             expected="a number (decimal mark '.' or ',')", **where)
        value = float(s.replace(",", "."))
    if not math.isfinite(value):
        raise SheetError("must be a finite number", found=text, expected="a number", **where)
    return value


def _typed(name: str, raw: Any, where: dict[str, Any]) -> Any:
    """The value of one contract/extension cell (``None`` for blank)."""
    if raw is None or (isinstance(raw, str) and not raw.strip()):
        return None
    if _TYPES[name] is LogTime:
        try:
            value = parse_log_time(raw)
        except ValueCellError as err:
            raise SheetError(err.message, found=raw, expected=err.expected, **where) from None
        if isinstance(value, float) and value < 0:
            raise SheetError("a time on the log's axis must not be negative", found=raw,
                             expected="seconds ≥ 0 or a clock time", **where)
        return value
    if _TYPES[name] is float:
        value = _number(raw, where)
        broken = column_problem(name, value)
        if broken is not None:
            raise SheetError(broken[0], found=raw, expected=broken[1], **where)
        if name in PLAUSIBLE_COLUMNS:
            try:
                check_plausible(name, value)
            except UnitError as err:
                raise SheetError(err.message, found=raw, expected=err.expected,
                                 **where) from None
        return value
    if _TYPES[name] is int:
        value = _number(raw, where)
        if not value.is_integer() or value < 1:
            raise SheetError("must be a whole number ≥ 1", found=raw,
                             expected="a count such as 2", **where)
        return int(value)
    if isinstance(raw, float) and raw.is_integer():
        raw = int(raw)  # a run id typed as 7 in a spreadsheet is '7', not '7.0'
    text = str(raw).strip()
    if name == "kind":
        key = text.lower()
        if key not in RUN_KINDS:
            raise SheetError("unknown run kind", found=text, expected=f"one of {list(RUN_KINDS)}",
                             **where)
        return key
    if name == "sensor":
        key = text.lower()
        if key not in SENSORS:
            raise SheetError("unknown sensor", found=text, expected=f"one of {list(SENSORS)}",
                             **where)
        return key
    if name == "date":
        return _iso_date(text, where)
    try:
        if name == "time_unit":
            parse_time_unit(text)
        elif name == "temperature_unit":
            parse_temperature_unit(text)
    except UnitError as err:
        raise SheetError(err.message, found=text, expected=err.expected, **where) from None
    return text


_DOTTED_DATE = re.compile(r"(\d{1,2})\.(\d{1,2})\.(\d{4})(?:[ T](\d{1,2}:\d{2}(?::\d{2})?))?")


def _iso_date(text: str, where: dict[str, Any]) -> str:
    """A ``date`` cell as ISO 8601 text.

    The lab book and the control charts order runs and filter ``--since``/``--until`` by
    this date, so a text they cannot read would silently lose the order. ISO 8601 is kept
    as written; the day-first dotted form a spreadsheet shows (``03.03.2025``, unambiguous:
    it is always day.month.year) becomes ISO; any other form (``3/4/2025`` is ambiguous) is
    refused.
    """
    try:
        (datetime.fromisoformat if ("T" in text or " " in text) else date.fromisoformat)(text)
        return text
    except ValueError:
        pass
    m = _DOTTED_DATE.fullmatch(text)
    if m:
        try:
            day = date(int(m.group(3)), int(m.group(2)), int(m.group(1)))
        except ValueError:
            day = None
        if day is not None:
            if m.group(4) is None:
                return day.isoformat()
            hh, mm, *ss = (int(x) for x in m.group(4).split(":"))
            try:
                return datetime(day.year, day.month, day.day, hh, mm,
                                ss[0] if ss else 0).isoformat()
            except ValueError:
                pass
    raise SheetError("date is not a calendar date in ISO 8601", found=text,
                     expected="YYYY-MM-DD (or YYYY-MM-DDThh:mm:ss; DD.MM.YYYY is also read)",
                     **where)


def _resolve_log(text: str, folder: Path, where: dict[str, Any]) -> Path:
    posix = text.replace("\\", "/")
    if (PurePosixPath(posix).is_absolute() or PureWindowsPath(text).is_absolute()
            or PureWindowsPath(text).drive or posix.startswith("~")):
        raise LogPathError("log path must be relative to the sheet's folder", found=text,
                           expected="a path such as 'logs/run1.csv'", **where)
    base = folder.resolve()
    target = (base / posix).resolve()
    if not target.is_relative_to(base):
        raise LogPathError("log path escapes the sheet's folder", found=text,
                           expected=f"a file inside {str(base)!r}", **where)
    if not target.is_file():
        raise LogPathError("log file not found", found=text,
                           expected=f"an existing file under {str(base)!r}", **where)
    return target


def _build(records: Iterable[tuple[int | None, Mapping[str, Any]]], path: Path,
           strict: bool = True) -> list[RunInfo]:
    runs: list[RunInfo] = []
    seen: dict[str, int | None] = {}
    folder = path.parent
    for line, record in records:
        values: dict[str, Any] = {}
        extra: dict[str, str] = {}
        problems: list[CalworkError] = []
        for key, raw in record.items():
            name = _BY_KEY.get(str(key).strip().lower())
            where = {"path": path, "line": line, "column": name or str(key)}
            if name is None:
                if raw is not None and str(raw).strip():
                    extra[str(key).strip()] = str(raw).strip()
                continue
            try:
                values[name] = _typed(name, raw, where)
            except CalworkError as exc:
                if strict or name in ("run", "kind"):
                    raise
                problems.append(exc)  # the run is reported as failed, the sheet goes on
        for required in ("run", "kind"):
            if values.get(required) is None:
                raise SheetError("required cell is blank", path=path, line=line,
                                 column=required, expected=f"a {required} for every row")
        run = values["run"]
        if run in seen:
            first = seen[run]
            raise DuplicateRunError(
                f"run id used twice (first on line {first}, again on line {line})",
                path=path, line=line, column="run", found=run, expected="unique run ids",
                first_line=first,
            )
        seen[run] = line
        log_path = None
        if values.get("log") is not None:
            try:
                log_path = _resolve_log(values["log"], folder,
                                        {"path": path, "line": line, "column": "log", "run": run})
            except LogPathError as exc:
                if strict:
                    raise
                problems.append(exc)
        runs.append(RunInfo(**values, log_path=log_path, sheet_path=path, line=line,
                            extra=extra, problems=[p.with_context(run=run) for p in problems]))
    if not runs:
        raise SheetError("the run sheet has no runs", path=path,
                         expected="a header row and one row per run")
    return runs


def _check_header(header: list[str], path: Path, line: int) -> list[str]:
    names = [h.strip().lstrip("\ufeff").strip() for h in header]
    keys = [n.lower() for n in names]
    for required in ("run", "kind"):
        if required not in keys:
            raise SheetError("run sheet header lacks a required column", path=path, line=line,
                             column=required, found=names, expected="columns 'run' and 'kind'")
    for i, key in enumerate(keys):
        if key and keys.index(key) != i:
            raise SheetError("column appears twice in the header", path=path, line=line,
                             column=names[i], expected="each column once")
    return names


def _table_records(rows: list[tuple[int, list[Any]]], path: Path):
    """Header + records from (line, cells) rows of a CSV or XLSX sheet."""
    rows = [(n, cells) for n, cells in rows
            if any(c is not None and str(c).strip() for c in cells)
            and not str(cells[0] if cells[0] is not None else "").strip().startswith("#")]
    if not rows:
        raise SheetError("the run sheet is empty", path=path,
                         expected="a header row and one row per run")
    head_at = _header_position(rows)
    head_line, head = rows[head_at]
    names = _check_header(_trim_cells(["" if h is None else str(h) for h in head]), path,
                          head_line)
    body = rows[head_at + 1:]
    if body and _is_units_row(names, body[0][1], path, body[0][0]):
        body = body[1:]
    for line, cells in body:
        if len(cells) > len(names) and any(c is not None and str(c).strip()
                                            for c in cells[len(names):]):
            raise SheetError(f"the row has {len(cells)} cells but the header names {len(names)}",
                             path=path, line=line, expected=f"{len(names)} cells")
        yield line, {n: (cells[i] if i < len(cells) else None)
                     for i, n in enumerate(names) if n}


_HEADER_SEARCH_ROWS = 10  # title lines a spreadsheet may carry above the header row


def _cell_key(cell: Any) -> str:
    return "" if cell is None else str(cell).strip().lstrip("\ufeff").strip().lower()


def _trim_cells(cells: list[str]) -> list[str]:
    while cells and not cells[-1].strip():
        cells = cells[:-1]
    return cells


def _header_position(rows: list[tuple[int, list[Any]]]) -> int:
    """Index of the header row: the first row holding both 'run' and 'kind' among the first
    few (a title such as 'Run sheet March' above it is skipped); 0 if none does, so the
    header check reports the first row."""
    for k, (_, cells) in enumerate(rows[:_HEADER_SEARCH_ROWS]):
        keys = {_cell_key(c) for c in cells}
        if "run" in keys and "kind" in keys:
            return k
    return 0


def _unit_key(text: str) -> str:
    key = text.strip().strip("[]()").strip()
    key = key.replace("·", "_").replace("/", "_per_").replace(" ", "")
    return key.lower()


def _name_unit(name: str) -> str:
    """The unit a column name states, lower case: mass_g → 'g', certified_J_per_g →
    'j_per_g', acid_titrant_mol_per_L → 'mol_per_l'."""
    tokens = name.lower().split("_")
    if "per" in tokens[1:]:
        k = tokens.index("per")
        return "_".join(tokens[k - 1:])
    return tokens[-1]


def _is_units_row(names: list[str], cells: list[Any], path: Path, line: int) -> bool:
    """True for a units row under the header (blank 'run' and 'kind', only unit words).

    The column names carry the units (``mass_g``), so a units row adds nothing; it is
    skipped when every unit agrees with its column name and refused when one does not
    (a 'mg' under ``mass_g`` would otherwise be read as grams).
    """
    cell_of = {n.lower(): (cells[i] if i < len(cells) else None) for i, n in enumerate(names)}
    if _cell_key(cell_of.get("run")) or _cell_key(cell_of.get("kind")):
        return False
    given = [(n, str(cells[i]).strip()) for i, n in enumerate(names)
             if n and i < len(cells) and cells[i] is not None and str(cells[i]).strip()]
    if not given or any(isinstance(cells[i], (int, float)) or _NUMBER.fullmatch(text)
                        for i, (_, text) in enumerate(given)):
        return False
    for name, text in given:
        canonical = _BY_KEY.get(name.lower())
        unit = _unit_key(text)
        if canonical is None or unit in ("", "-"):
            continue
        if canonical in _FRACTIONS and unit in ("1", "g_per_g", "kg_per_kg"):
            continue
        if _TYPES[canonical] is float and unit in (_name_unit(canonical),
                                                  _name_unit(canonical).replace("ohm", "ω")):
            continue
        raise SheetError("units row disagrees with the unit in the column name",
                         path=path, line=line, column=name, found=text,
                         expected=f"values in the unit its name states ({canonical}); "
                         "convert the column or leave the units row out")
    return True


def _csv_rows(text: str, path: Path) -> list[tuple[int, list[Any]]]:
    first = next((ln for ln in text.splitlines() if ln.strip() and not ln.lstrip()
                  .startswith("#")), "")
    counts = {sep: len(first.split(sep)) for sep in ("\t", ";", ",")}
    sep = max(counts, key=lambda s: (counts[s], s == "\t", s == ";"))
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=sep)
    rows = []
    try:
        start = 1
        for cells in reader:
            rows.append((start, cells))
            start = reader.line_num + 1
    except csv.Error as exc:
        raise SheetError(f"malformed CSV: {exc}", path=path, line=reader.line_num) from None
    return rows


def _toml_records(text: str, path: Path):
    data = parse_toml_text(text, path=path, error=SheetError)
    tables = data.get("run")
    if not isinstance(tables, list) or not all(isinstance(t, dict) for t in tables):
        raise SheetError("a TOML run sheet needs [[run]] tables", path=path,
                         found=sorted(data), expected="one [[run]] table per run")
    starts = [text.count("\n", 0, m.start()) + 1 for m in _RUN_TABLE.finditer(text)]
    for k, table in enumerate(tables):
        line = starts[k] if k < len(starts) else None
        record: dict[str, Any] = {}
        for key, value in table.items():
            if isinstance(value, (dict, list)):
                raise SheetError("a run-sheet value must be a single number or text",
                                 path=path, line=line, column=key, found=value)
            record[key] = value.isoformat() if hasattr(value, "isoformat") else value
        yield line, record


def read_run_sheet(path: str | Path, *, strict: bool = True) -> list[RunInfo]:
    """Read a run sheet (CSV, XLSX or TOML) into :class:`~calwork.core.runinfo.RunInfo` records.

    Parameters
    ----------
    path
        ``.csv`` (comma, semicolon or tab; any encoding :func:`calwork.io.read_log` reads),
        ``.xlsx`` (first sheet) or ``.toml`` (``[[run]]`` tables).
    strict
        If true (default) the first bad cell or log path raises. If false, a row-level problem
        (a bad number, a non-positive mass, a missing or escaping log path) is kept in the
        row's ``RunInfo.problems`` so that a batch can report that run as failed and reduce
        the others; problems with the sheet as a whole (header, run ids, kinds) still raise.

    Returns
    -------
    list of RunInfo
        In sheet order, with ``log_path`` resolved, ``sheet_path`` and ``line`` set and unknown
        columns in ``extra``.

    Raises
    ------
    InputFileError, SheetError, DuplicateRunError, LogPathError
        Naming the file, line and column, what was found and what was expected.
    """
    path = Path(path)
    data, _ = read_file_bytes(path)
    if is_xlsx(path, data):
        _, rows = read_xlsx_rows(data, path, None, error=SheetError)
        cells = [(n, [c.isoformat() if hasattr(c, "isoformat") else c for c in v])
                 for n, v in rows]  # date cells as ISO 8601 text
        return _build(_table_records(cells, path), path, strict)
    text, _ = decode_bytes(data, path)
    if path.suffix.lower() == ".toml":
        return _build(_toml_records(text, path), path, strict)
    return _build(_table_records(_csv_rows(text, path), path), path, strict)


#: Run-sheet columns an amendment may change: every contract and extension column except the
#: run id and the kind (a different run or kind is a new run: void this one, add that one).
AMENDABLE_COLUMNS = tuple(name for name in _TYPES if name not in ("run", "kind"))


def amended_run(info: RunInfo, changes: Mapping[str, Any], *,
                source: str = "amendment") -> RunInfo:
    """``info`` with the run-sheet cells in ``changes`` replaced, each read and checked
    exactly as the sheet reader reads that column (numbers, units' plausibility, times in
    the log's notation, log paths inside the sheet's folder); a blank value clears the cell.

    Parameters
    ----------
    info
        The run as read from its sheet.
    changes
        Column name (as in the sheet, case-insensitive) → cell text (or a number).
    source
        Named as the "file" of an error (e.g. ``'--set'``).

    Raises
    ------
    SheetError, LogPathError, UnitError
        An unknown or unchangeable column, or a value the sheet would refuse, naming the
        column, what was found and what was expected.

    Examples
    --------
    >>> from calwork.core.runinfo import RunInfo
    >>> run = RunInfo(run="c1", kind="combustion", mass_g=0.9821)
    >>> amended_run(run, {"mass_g": "0.9812", "fire_time_s": "5:12"}).mass_g
    0.9812
    """
    values: dict[str, Any] = {}
    for key, raw in changes.items():
        name = _BY_KEY.get(str(key).strip().lower())
        where = {"path": source, "line": info.line, "column": str(key), "run": info.run}
        if name is None:
            raise SheetError("not a run-sheet column", found=key,
                             expected=f"one of {list(AMENDABLE_COLUMNS)}", **where)
        if name not in AMENDABLE_COLUMNS:
            raise SheetError(f"the {name} of a recorded run cannot be amended", found=raw,
                             expected="a new run (void this one and record the new one)",
                             **where)
        value = _typed(name, raw, {**where, "column": name})
        if name == "log" and value is not None:
            folder = (info.sheet_path.parent if info.sheet_path is not None else Path.cwd())
            values["log_path"] = _resolve_log(value, folder, {**where, "column": "log"})
        values[name] = value
    return replace(info, **values)


def unknown_columns(runs: Iterable[RunInfo]) -> list[str]:
    """Columns of the sheet that calwork does not know (kept in ``RunInfo.extra``), sorted."""
    names = {key for run in runs for key in run.extra}
    return sorted(n for n in names if n.lower() not in SENSOR_COEFFICIENT_COLUMNS)


def _sensor_coefficients(info: RunInfo) -> dict[str, float] | None:
    out: dict[str, float] = {}
    for key, value in info.extra.items():
        name = SENSOR_COEFFICIENT_COLUMNS.get(key.strip().lower())
        if name is not None:
            out[name] = _number(value, {"path": info.sheet_path, "line": info.line,
                                        "column": key, "run": info.run})
    return out or None


def load_run_log(info: RunInfo) -> Thermogram:
    """Read the log of one run with the row's column, unit and sensor overrides.

    Thermometer coefficients may come from the optional columns ``sensor_R0_ohm``,
    ``sensor_cvd_A``/``_B``/``_C`` (platinum) or ``sensor_a``/``_b``/``_c``
    (Steinhart–Hart). Errors carry the run id.
    """
    if info.log_path is None:
        raise LogPathError("the run has no log file", path=info.sheet_path, line=info.line,
                           column="log", run=info.run, expected="a log path in the sheet")
    try:
        return read_log(
            info.log_path, time_column=info.time_column,
            temperature_column=info.temperature_column, time_unit=info.time_unit,
            temperature_unit=info.temperature_unit, sensor=info.sensor,
            sensor_coefficients=_sensor_coefficients(info),
        )
    except CalworkError as err:
        raise err.with_context(run=info.run) from None
