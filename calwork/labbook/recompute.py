"""Recompute every stored result from the stored raw bytes and compare number by number.

For each stored reduction (every version, so results superseded by a void are re-checked
too) the sheet bundle is written from its blobs into a temporary folder with the original
layout, reduced again with the stored method (the whole sheet, or exactly the runs that
version covered), and every number of every record is compared with the stored one within a
relative tolerance (default 1e-12: agreement to the last bits, allowing for floating-point
summation order). Strings must agree exactly once the temporary folder is mapped back to the
original one. A different calwork version is noted, not counted as a difference.
"""

from __future__ import annotations

import itertools
import json
import math
import multiprocessing
import sqlite3
from collections.abc import Mapping
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from typing import Any

from calwork.core.errors import CalworkError
from calwork.labbook.queries import Filters
from calwork.labbook.reducing import reduce_stored

__all__ = ["DEFAULT_TOLERANCE", "Difference", "RecomputeReport", "compare", "recompute"]

#: Default relative tolerance of ``recompute``.
DEFAULT_TOLERANCE = 1e-12
#: Keys whose value may legitimately change between versions of calwork.
_VERSION_KEYS = frozenset({"calwork_version"})
_MISSING = "<missing>"


@dataclass(frozen=True, kw_only=True)
class Difference:
    """One disagreement between a stored and a recomputed value."""

    sheet_id: int
    reduction_id: int
    record: str
    field: str
    stored: Any
    recomputed: Any
    relative: float | None = None

    def to_dict(self) -> dict[str, Any]:
        return {"sheet_id": self.sheet_id, "reduction_id": self.reduction_id,
                "record": self.record, "field": self.field, "stored": self.stored,
                "recomputed": self.recomputed, "relative_difference": self.relative}


@dataclass(frozen=True, kw_only=True)
class RecomputeReport:
    """Outcome of ``labbook recompute``."""

    tolerance: float
    reductions: int
    records: int
    numbers: int
    runs: int
    differences: tuple[Difference, ...] = ()
    notes: tuple[str, ...] = ()
    filters: Mapping[str, Any] = field(default_factory=dict)

    @property
    def agree(self) -> bool:
        """Whether every stored value was reproduced."""
        return not self.differences

    def to_dict(self) -> dict[str, Any]:
        return {"agree": self.agree, "tolerance": self.tolerance,
                "reductions": self.reductions, "records": self.records,
                "numbers": self.numbers, "runs": self.runs,
                "differences": [d.to_dict() for d in self.differences],
                "notes": list(self.notes), "filters": dict(self.filters)}


def _is_number(v: Any) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def compare(stored: Any, new: Any, tolerance: float, where: str = "") -> tuple[list, int]:
    """``([(field, stored, new, relative)], numbers compared)`` for two JSON values."""
    out: list[tuple[str, Any, Any, float | None]] = []
    count = 0
    if isinstance(stored, Mapping) and isinstance(new, Mapping):
        for key in sorted(set(stored) | set(new), key=str):
            if key in _VERSION_KEYS:
                continue
            sub = f"{where}.{key}" if where else str(key)
            if key not in new or key not in stored:
                out.append((sub, stored.get(key, _MISSING), new.get(key, _MISSING), None))
                continue
            d, n = compare(stored[key], new[key], tolerance, sub)
            out += d
            count += n
    elif isinstance(stored, list) and isinstance(new, list):
        if len(stored) != len(new):
            out.append((f"{where} (length)", len(stored), len(new), None))
        for i, (a, b) in enumerate(zip(stored, new, strict=False)):
            d, n = compare(a, b, tolerance, f"{where}[{i}]")
            out += d
            count += n
    elif _is_number(stored) and _is_number(new):
        count = 1
        if stored != new:
            scale = max(abs(stored), abs(new))
            rel = abs(stored - new) / scale if scale else math.inf
            if not rel <= tolerance:
                out.append((where, stored, new, rel))
    elif stored != new:
        out.append((where, stored, new, None))
    return out, count


def _version_notes(stored: Any, new: Any, notes: set[str]) -> None:
    if isinstance(stored, Mapping) and isinstance(new, Mapping):
        for key in stored.keys() & new.keys():
            if key in _VERSION_KEYS and stored[key] != new[key]:
                notes.add(f"stored with calwork {stored[key]}, recomputed with {new[key]}")
            else:
                _version_notes(stored[key], new[key], notes)


def _selected(conn: sqlite3.Connection, filters: Filters) -> list[tuple]:
    rows = conn.execute(
        "SELECT id, sheet_id, version, method, runs_json, full_sheet, json FROM reductions"
        " ORDER BY sheet_id, version").fetchall()
    if filters.calorimeter is None and filters.since is None and filters.until is None:
        return rows
    keep = set()
    for sheet_id, cal, key in conn.execute("SELECT sheet_id, calorimeter, date_key FROM runs"):
        if (filters.calorimeter is None or cal == filters.calorimeter) and filters.date_ok(key):
            keep.add(sheet_id)
    return [r for r in rows if r[1] in keep]


@dataclass
class _Tally:
    differences: list[Difference] = field(default_factory=list)
    notes: set[str] = field(default_factory=set)
    records: int = 0
    numbers: int = 0
    runs: int = 0

    def add(self, other: _Tally) -> None:
        self.differences += other.differences
        self.notes |= other.notes
        self.records += other.records
        self.numbers += other.numbers
        self.runs += other.runs


def _recompute_one(conn: sqlite3.Connection, row: tuple, tolerance: float) -> _Tally:
    """Recompute one stored reduction and compare it record by record."""
    red_id, sheet_id, _version, method, runs_json, full_sheet, summary_text = row
    tally = _Tally()
    run_ids = json.loads(runs_json)
    stored = conn.execute(
        "SELECT type, key, json FROM results WHERE reduction_id = ? ORDER BY seq",
        (red_id,)).fetchall()
    tally.runs = len(run_ids)
    try:
        again = reduce_stored(conn, sheet_id, run_ids, method=method,
                              full_sheet=bool(full_sheet),
                              overrides=json.loads(summary_text).get("overrides"))
    except CalworkError as exc:
        tally.differences.append(Difference(
            sheet_id=sheet_id, reduction_id=red_id, record="reduction", field="(whole sheet)",
            stored="reduced", recomputed=f"error: {exc}"))
        return tally
    pairs = [("reduction", json.loads(summary_text), json.loads(json.dumps(again.summary)))]
    new_by_key: dict[tuple[str, str], list[Any]] = {}
    for kind, key, rec in again.results:
        new_by_key.setdefault((kind, key), []).append(json.loads(json.dumps(rec)))
    for kind, key, text in stored:
        new_list = new_by_key.get((kind, key)) or []
        pairs.append((f"{kind} {key}", json.loads(text),
                      new_list.pop(0) if new_list else _MISSING))
    pairs += [(f"{kind} {key}", _MISSING, rec)
              for (kind, key), left in new_by_key.items() for rec in left]
    for label, old, new in pairs:
        tally.records += 1
        if old is _MISSING or new is _MISSING:
            tally.differences.append(Difference(
                sheet_id=sheet_id, reduction_id=red_id, record=label, field="(record)",
                stored="present" if old is not _MISSING else _MISSING,
                recomputed="present" if new is not _MISSING else _MISSING))
            continue
        _version_notes(old, new, tally.notes)
        found, count = compare(old, new, tolerance)
        tally.numbers += count
        tally.differences += [Difference(sheet_id=sheet_id, reduction_id=red_id, record=label,
                                         field=f, stored=a, recomputed=b, relative=rel)
                              for f, a, b, rel in found]
    return tally


_WORKER: dict[str, sqlite3.Connection] = {}


def _worker_init(path: str) -> None:
    conn = sqlite3.connect(f"file:{path}?mode=ro", uri=True, isolation_level=None)
    conn.execute("PRAGMA trusted_schema = OFF")
    _WORKER["conn"] = conn


def _worker_task(row: tuple, tolerance: float) -> _Tally:
    return _recompute_one(_WORKER["conn"], row, tolerance)


def recompute(conn: sqlite3.Connection, *, filters: Filters | None = None,
              tolerance: float = DEFAULT_TOLERANCE, jobs: int = 1) -> RecomputeReport:
    """Recompute the selected reductions (see the module docstring).

    ``jobs`` > 1 recomputes sheets in that many worker processes (each with its own
    read-only connection); the report is the same as with one process.
    """
    filters = filters or Filters()
    if not tolerance >= 0:
        raise CalworkError("tolerance must be a relative difference >= 0", found=tolerance)
    if not (isinstance(jobs, int) and jobs >= 1):
        raise CalworkError("jobs must be a whole number >= 1", found=jobs)
    rows = _selected(conn, filters)
    total = _Tally()
    if jobs > 1 and len(rows) > 1:
        path = conn.execute("PRAGMA database_list").fetchone()[2]
        methods = multiprocessing.get_all_start_methods()
        context = multiprocessing.get_context("fork" if "fork" in methods else "spawn")
        with ProcessPoolExecutor(max_workers=min(jobs, len(rows)), mp_context=context,
                                 initializer=_worker_init, initargs=(path,)) as pool:
            for tally in pool.map(_worker_task, rows, itertools.repeat(tolerance)):
                total.add(tally)
    else:
        for row in rows:
            total.add(_recompute_one(conn, row, tolerance))
    return RecomputeReport(tolerance=tolerance, reductions=len(rows), records=total.records,
                           numbers=total.numbers, runs=total.runs,
                           differences=tuple(total.differences),
                           notes=tuple(sorted(total.notes)), filters=filters.to_dict())
