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

import json
import math
import sqlite3
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from calwork.errors import CalworkError
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

    def report(self) -> str:
        rel = "" if self.relative is None else f" (relative difference {self.relative:.3g})"
        return (f"sheet #{self.sheet_id} reduction #{self.reduction_id} {self.record} "
                f"{self.field}: stored {self.stored!r}, recomputed {self.recomputed!r}{rel}")


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

    def report(self) -> str:
        lines = [d.report() for d in self.differences] + [f"note: {n}" for n in self.notes]
        verdict = (f"all agree within {self.tolerance:g} relative" if self.agree
                   else f"{len(self.differences)} difference(s) beyond {self.tolerance:g} "
                        "relative")
        lines.append(f"recomputed {self.records} records ({self.numbers} numbers, "
                     f"{self.runs} runs) in {self.reductions} reductions: {verdict}")
        return "\n".join(lines)


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


def recompute(conn: sqlite3.Connection, *, filters: Filters | None = None,
              tolerance: float = DEFAULT_TOLERANCE) -> RecomputeReport:
    """Recompute the selected reductions (see the module docstring)."""
    filters = filters or Filters()
    if not tolerance >= 0:
        raise CalworkError("tolerance must be a relative difference >= 0", found=tolerance)
    diffs: list[Difference] = []
    notes: set[str] = set()
    n_records = n_numbers = n_runs = 0
    rows = _selected(conn, filters)
    for red_id, sheet_id, _version, method, runs_json, full_sheet, summary_text in rows:
        run_ids = json.loads(runs_json)
        stored = conn.execute(
            "SELECT type, key, json FROM results WHERE reduction_id = ? ORDER BY seq",
            (red_id,)).fetchall()
        n_runs += len(run_ids)
        try:
            again = reduce_stored(conn, sheet_id, run_ids, method=method,
                                  full_sheet=bool(full_sheet))
        except CalworkError as exc:
            diffs.append(Difference(sheet_id=sheet_id, reduction_id=red_id, record="reduction",
                                    field="(whole sheet)", stored="reduced",
                                    recomputed=f"error: {exc}"))
            continue
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
            n_records += 1
            if old is _MISSING or new is _MISSING:
                diffs.append(Difference(sheet_id=sheet_id, reduction_id=red_id, record=label,
                                        field="(record)",
                                        stored="present" if old is not _MISSING else _MISSING,
                                        recomputed="present" if new is not _MISSING
                                        else _MISSING))
                continue
            _version_notes(old, new, notes)
            found, count = compare(old, new, tolerance)
            n_numbers += count
            diffs += [Difference(sheet_id=sheet_id, reduction_id=red_id, record=label,
                                 field=f, stored=a, recomputed=b, relative=rel)
                      for f, a, b, rel in found]
    return RecomputeReport(tolerance=tolerance, reductions=len(rows), records=n_records,
                           numbers=n_numbers, runs=n_runs, differences=tuple(diffs),
                           notes=tuple(sorted(notes)), filters=filters.to_dict())
