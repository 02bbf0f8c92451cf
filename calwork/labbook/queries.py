"""Reading a lab book: runs, calibrations and samples (filtered), one run in full, a run's
audit history, a calorimeter's ε series for QA, and a Reduction rebuilt from the store."""

from __future__ import annotations

import itertools
import json
import re
import sqlite3
from collections.abc import Mapping
from dataclasses import dataclass, fields
from datetime import date, datetime
from typing import Any

from calwork.core.errors import LabbookError, ValueCellError, check_choice
from calwork.core.runinfo import RUN_KINDS
from calwork.labbook import audit
from calwork.labbook.lifecycle import STATES, run_states

__all__ = ["Filters", "calibration_series", "history", "list_calibrations", "list_runs",
           "list_samples", "natural_key", "run_versions", "show_run"]

#: Run kinds whose per-run energy equivalent is a calibration point (bomb; electrical).
CALIBRATION_KINDS = ("calibration", "electrical")
#: Kinds whose ε is a calibration point when the run holds its own electrical calibrations
#: (``details.calibrations``); a combustion run's ε is the one it *used*, never a point.
IN_RUN_CALIBRATION_KINDS = ("solution", "blank")


def _iso_bound(text: str | None, name: str) -> str | None:
    if text is None:
        return None
    try:
        return (datetime.fromisoformat(text).isoformat() if "T" in text or " " in text
                else date.fromisoformat(text).isoformat())
    except ValueError:
        raise ValueCellError(f"--{name} must be an ISO 8601 date", found=text,
                             expected="YYYY-MM-DD or YYYY-MM-DDTHH:MM") from None


@dataclass(frozen=True, kw_only=True)
class Filters:
    """Selection of runs: by calorimeter, sample, kind, state and an inclusive date range."""

    calorimeter: str | None = None
    sample: str | None = None
    kind: str | None = None
    since: str | None = None
    until: str | None = None
    #: only runs in this state (``recorded``, ``approved`` or ``void``)
    state: str | None = None

    def __post_init__(self) -> None:
        if self.kind is not None:
            check_choice("kind", self.kind, RUN_KINDS)
        if self.state is not None:
            check_choice("state", self.state, STATES)
        object.__setattr__(self, "since", _iso_bound(self.since, "since"))
        object.__setattr__(self, "until", _iso_bound(self.until, "until"))

    def date_ok(self, key: str | None) -> bool:
        """Whether a run's date key lies in [since, until] (undated runs fail a bound)."""
        if self.since is None and self.until is None:
            return True
        if key is None:
            return False
        if self.since is not None and key < self.since:
            return False
        return self.until is None or key[: len(self.until)] <= self.until

    def to_dict(self) -> dict[str, Any]:
        return {f.name: getattr(self, f.name) for f in fields(self)}


def natural_key(text: str) -> tuple:
    """Sort key that orders ``cal-2`` before ``cal-10``."""
    return tuple(int(p) if p.isdigit() else p for p in re.split(r"(\d+)", text))


_RUN_SQL = """
SELECT r.id, r.run, r.kind, r.calorimeter, r.sample, r.date, r.date_key, r.sheet_id,
       s.file_name,
       (SELECT res.json FROM results res JOIN reductions red ON red.id = res.reduction_id
        WHERE res.run_id = r.id AND res.type = 'run' ORDER BY red.version DESC LIMIT 1)
FROM runs r JOIN sheets s ON s.id = r.sheet_id
"""


def list_runs(conn: sqlite3.Connection, filters: Filters | None = None, *,
              include_void: bool = True) -> list[dict[str, Any]]:
    """Runs matching ``filters``, ordered by date then run id, with their latest result."""
    filters = filters or Filters()
    where, params = [], []
    for column in ("calorimeter", "sample", "kind"):
        value = getattr(filters, column)
        if value is not None:
            where.append(f"r.{column} = ?")
            params.append(value)
    sql = _RUN_SQL + (" WHERE " + " AND ".join(where) if where else "")
    states = run_states(conn)
    out = []
    for row in conn.execute(sql, params):
        (pk, run, kind, cal, sample, date_text, key, sheet_id, sheet_name, result) = row
        st = states[run]
        if not filters.date_ok(key) or (st.state == "void" and not include_void):
            continue
        if filters.state is not None and st.state != filters.state:
            continue
        rec = json.loads(result) if result else {}
        out.append({
            "run": run, "kind": kind, "calorimeter": cal, "sample": sample, "date": date_text,
            "date_key": key, "status": "void" if st.state == "void" else "active",
            "state": st.state, "version": st.version, "approved_by": st.approved_by,
            "approved_utc": st.approved_utc, "approval_lapsed": st.approval_lapsed,
            "amended": sorted(st.overrides),
            "void_reason": st.void_reason, "voided_utc": st.voided_utc,
            "voided_by": st.voided_by,
            "sheet_id": sheet_id, "sheet": sheet_name,
            "corrected_rise_K": rec.get("corrected_rise_K"),
            "energy_equivalent_J_per_K": rec.get("energy_equivalent_J_per_K"),
            "massic_energy_J_per_g": rec.get("massic_energy_J_per_g"),
            "molar_enthalpy_kJ_per_mol": rec.get("molar_enthalpy_kJ_per_mol"),
            "error": rec.get("error"), "_pk": pk,
            "epsilon_is_calibration": kind in CALIBRATION_KINDS or (
                kind in IN_RUN_CALIBRATION_KINDS
                and bool((rec.get("details") or {}).get("calibrations"))),
        })
    out.sort(key=lambda r: (r["date_key"] is None, r["date_key"] or "", natural_key(r["run"])))
    for r in out:
        del r["_pk"]
    return out


def list_calibrations(conn: sqlite3.Connection, filters: Filters | None = None
                      ) -> list[dict[str, Any]]:
    """Current calibrations with validity: from the series' first date until the next
    calibration of the same calorimeter starts (``None`` = still current)."""
    filters = filters or Filters()
    rows = conn.execute(
        "SELECT c.calorimeter, c.energy_equivalent_J_per_K, c.u_energy_equivalent_J_per_K,"
        " c.n_runs, c.valid_from, c.first_run, c.last_run, red.sheet_id, red.id, red.version,"
        " res.json FROM calibrations c JOIN current_reductions red ON red.id = c.reduction_id"
        " JOIN results res ON res.id = c.result_id ORDER BY c.calorimeter, c.id"
    ).fetchall()
    by_cal: dict[str, list[dict[str, Any]]] = {}
    for (cal, eps, u, n, start, first, last, sheet_id, red_id, version, text) in rows:
        rec = json.loads(text)
        by_cal.setdefault(cal, []).append({
            "calorimeter": cal, "energy_equivalent_J_per_K": eps,
            "u_energy_equivalent_J_per_K": u, "n_runs": n,
            "rsd_percent": rec.get("rsd_percent"), "outlier_test": rec.get("outlier_test"),
            "valid_from": start, "valid_until": None,
            "first_run": first, "last_run": last, "runs": rec.get("runs"),
            "sheet_id": sheet_id, "reduction_id": red_id, "version": version,
        })
    out = []
    for cal, items in sorted(by_cal.items()):
        items.sort(key=lambda c: (c["valid_from"] is None, c["valid_from"] or "",
                                  c["sheet_id"]))
        for this, nxt in itertools.pairwise(items):
            this["valid_until"] = nxt["valid_from"]
        for c in items:
            if filters.calorimeter is not None and cal != filters.calorimeter:
                continue
            if not _overlaps(c, filters):
                continue
            out.append(c)
    return out


def _overlaps(cal: Mapping[str, Any], filters: Filters) -> bool:
    start, end = cal["valid_from"], cal["valid_until"]
    until = filters.until
    if until is not None and start is not None and start[: len(until)] > until:
        return False
    return not (filters.since is not None and end is not None and end <= filters.since)


def list_samples(conn: sqlite3.Connection, filters: Filters | None = None
                 ) -> list[dict[str, Any]]:
    """Current sample results (filtered by sample, calorimeter and their runs' dates)."""
    filters = filters or Filters()
    rows = conn.execute(
        "SELECT res.key, res.json, red.sheet_id, red.id FROM results res"
        " JOIN current_reductions red ON red.id = res.reduction_id"
        " WHERE res.type = 'sample' ORDER BY res.key, red.sheet_id"
    ).fetchall()
    dates = dict(conn.execute("SELECT run, date_key FROM runs"))
    out = []
    for key, text, sheet_id, red_id in rows:
        rec = json.loads(text)
        if filters.sample is not None and key != filters.sample:
            continue
        if filters.calorimeter is not None and rec.get("calorimeter") not in (
                None, filters.calorimeter):
            continue
        if not any(filters.date_ok(dates.get(r)) for r in rec.get("runs") or [None]):
            continue
        out.append({**rec, "sheet_id": sheet_id, "reduction_id": red_id})
    return out


def _run_row(conn: sqlite3.Connection, run: str) -> tuple:
    row = conn.execute(
        "SELECT r.id, r.sheet_id, r.line, r.kind, r.calorimeter, r.sample, r.date,"
        " r.log_file_id, r.row_json FROM runs r WHERE r.run = ?", (run,)).fetchone()
    if row is None:
        raise LabbookError("run is not in the lab book", run=run)
    return row


def show_run(conn: sqlite3.Connection, run: str) -> dict[str, Any]:
    """Everything about one run, with provenance back to the stored raw bytes."""
    pk, sheet_id, line, kind, cal, sample, date_text, log_id, row_json = _run_row(conn, run)
    sheet = conn.execute(
        "SELECT s.file_name, s.original_path, s.sha256, s.added_utc, s.added_by, b.size,"
        " length(b.data), b.codec FROM sheets s JOIN blobs b ON b.sha256 = s.sha256"
        " WHERE s.id = ?", (sheet_id,)).fetchone()
    log = None
    if log_id is not None:
        f = conn.execute(
            "SELECT f.rel_path, f.original_path, f.sha256, f.size, length(b.data), b.codec"
            " FROM files f JOIN blobs b ON b.sha256 = f.sha256 WHERE f.id = ?", (log_id,)
        ).fetchone()
        log = dict(zip(("rel_path", "original_path", "sha256", "size_bytes",
                        "stored_bytes", "codec"), f, strict=True))
    st = run_states(conn, [run])[run]
    versions = conn.execute(
        "SELECT red.id, red.version, red.method, red.calwork_version, red.created_utc,"
        " red.created_by, res.json, res.constants_json, res.json_sha256 FROM results res"
        " JOIN reductions red ON red.id = res.reduction_id WHERE res.run_id = ?"
        " AND res.type = 'run' ORDER BY red.version", (pk,)).fetchall()
    latest = versions[-1] if versions else None
    current = conn.execute("SELECT id FROM current_reductions WHERE sheet_id = ?",
                           (sheet_id,)).fetchone()[0]
    return {
        "run": run, "kind": kind, "calorimeter": cal, "sample": sample, "date": date_text,
        "status": "void" if st.state == "void" else "active",
        "void": None if st.state != "void" else {
            "reason": st.void_reason, "voided_utc": st.voided_utc, "voided_by": st.voided_by},
        "state": {k: v for k, v in st.to_dict().items() if k != "events"},
        "sheet": {"id": sheet_id, "file_name": sheet[0], "original_path": sheet[1],
                  "sha256": sheet[2], "added_utc": sheet[3], "added_by": sheet[4],
                  "size_bytes": sheet[5], "stored_bytes": sheet[6], "codec": sheet[7],
                  "line": line, "row": json.loads(row_json)},
        "log": log,
        "result": None if latest is None else json.loads(latest[6]),
        "result_provenance": None if latest is None else {
            "reduction_id": latest[0], "version": latest[1], "method": latest[2],
            "calwork_version": latest[3], "created_utc": latest[4], "created_by": latest[5],
            "constants": json.loads(latest[7]), "json_sha256": latest[8],
            "current": latest[0] == current,
        },
        "result_versions": [{"reduction_id": v[0], "version": v[1], "created_utc": v[4]}
                            for v in versions],
    }


_RESULT_KEYS = ("corrected_rise_K", "u_corrected_rise_K", "energy_equivalent_J_per_K",
                "massic_energy_J_per_g", "molar_enthalpy_kJ_per_mol", "error")


def run_versions(conn: sqlite3.Connection, run: str) -> list[dict[str, Any]]:
    """The versions of ``run``, oldest first: who made each and why, the cells it changed
    (``changes``: column → [before, after]), the overrides in force, and its result as
    first reduced (the run's row in the reduction its version created)."""
    pk, sheet_id = _run_row(conn, run)[:2]
    added = conn.execute("SELECT added_utc, added_by FROM sheets WHERE id = ?",
                         (sheet_id,)).fetchone()
    first = conn.execute("SELECT id FROM reductions WHERE sheet_id = ? AND version = 1",
                         (sheet_id,)).fetchone()[0]

    def result(reduction_id: int | None) -> dict[str, Any] | None:
        row = conn.execute("SELECT json, json_sha256 FROM results WHERE reduction_id = ?"
                           " AND run_id = ? AND type = 'run'", (reduction_id, pk)).fetchone()
        if row is None:
            return None
        rec = audit.json_of(row[0], f"result of run {run}")
        out = {k: rec.get(k) for k in _RESULT_KEYS if rec.get(k) is not None}
        return out | {"json_sha256": row[1], "reduction_id": reduction_id}

    versions = [{"version": 1, "action": "recorded", "created_utc": added[0],
                 "created_by": added[1], "reason": "", "changes": {}, "overrides": {},
                 "result": result(first)}]
    for e in run_states(conn, [run])[run].events:
        if e["action"] != "amend":
            continue
        fields_ = e["fields"] or {}
        versions.append({"version": e["version"], "action": "amended",
                         "created_utc": e["ts_utc"], "created_by": e["user"],
                         "reason": e["reason"], "changes": fields_.get("changes") or {},
                         "overrides": fields_.get("overrides") or {},
                         "source": fields_.get("source"),
                         "result": result(e["reduction_id"]), "audit_id": e["audit_id"]})
    return versions


def history(conn: sqlite3.Connection, run: str) -> list[audit.AuditEntry]:
    """Audit entries about ``run``: its sheet's recording and every change to the run."""
    sheet_id = _run_row(conn, run)[1]
    return audit.entries(conn, objects=[f"sheet:{sheet_id}", f"run:{run}"])


def calibration_series(conn: sqlite3.Connection, calorimeter: str,
                       filters: Filters | None = None,
                       ) -> tuple[list[dict[str, Any]], list[str]]:
    """Per-run energy equivalents of a calorimeter's active calibration runs, by date then id.

    Calibration points are bomb ``calibration`` and ``electrical`` runs, and solution runs
    with their own electrical calibrations. Returns ``(points, notes)``; void runs and failed
    runs are left out (named in ``notes``).
    """
    filters = filters or Filters()
    sel = Filters(calorimeter=calorimeter, since=filters.since, until=filters.until)
    points, notes = [], []
    for r in list_runs(conn, sel):
        if not r["epsilon_is_calibration"] and r["kind"] not in CALIBRATION_KINDS:
            continue
        if r["status"] == "void":
            notes.append(f"run {r['run']} is void ({r['void_reason']}); excluded")
        elif r["error"] or r["energy_equivalent_J_per_K"] is None:
            notes.append(f"run {r['run']} has no energy equivalent "
                         f"({r['error'] or 'not computed'}); excluded")
        else:
            points.append(r)
    return points, notes
