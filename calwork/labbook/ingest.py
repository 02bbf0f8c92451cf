"""Recording a run sheet (``add``) in one transaction.

``add`` reads the sheet and every log it names, reduces the sheet with
:func:`calwork.reduce.reduce_sheet`, checks that no file changed meanwhile, and then — inside a
single ``BEGIN IMMEDIATE`` transaction — stores the raw bytes, the sheet's folder layout, the
runs, the results (failed runs with their error) and one audit entry. What happens to a
recorded run afterwards (amend, approve, void, restore) is :mod:`calwork.labbook.lifecycle`.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date, datetime
from pathlib import Path
from typing import Any

from calwork.core.errors import (
    InputFileError,
    LabbookError,
    LogPathError,
    check_choice,
)
from calwork.core.provenance import sha256_bytes
from calwork.core.results import jsonable
from calwork.labbook import audit
from calwork.labbook.blobs import put_blob
from calwork.labbook.reducing import ReducedSheet, reduce_from_path
from calwork.labbook.store import crash_point, write_transaction

__all__ = ["AddResult", "add_sheet", "bundle_digest", "date_key", "info_row", "results_digest",
           "runs_digest", "stored_bundle_digest"]


@dataclass(frozen=True, kw_only=True)
class AddResult:
    """What ``labbook add`` recorded (or found already recorded)."""

    sheet_id: int
    file_name: str
    sha256: str
    already_recorded: bool
    method: str
    n_runs: int
    failed: tuple[tuple[str, str], ...] = ()
    calibrations: tuple[Mapping[str, Any], ...] = ()
    samples: tuple[Mapping[str, Any], ...] = ()
    reduction_id: int | None = None
    audit_id: int | None = None
    labbook: str = ""
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        return jsonable({
            "sheet_id": self.sheet_id, "file_name": self.file_name, "sha256": self.sha256,
            "already_recorded": self.already_recorded, "method": self.method,
            "n_runs": self.n_runs,
            "failed": [{"run": r, "error": e} for r, e in self.failed],
            "calibrations": list(self.calibrations), "samples": list(self.samples),
            "reduction_id": self.reduction_id, "audit_id": self.audit_id,
            "labbook": self.labbook, "notes": list(self.notes),
        })


def date_key(value: Any) -> str | None:
    """An ISO 8601 sort key for a run's ``date`` cell (``None`` if blank or unparseable)."""
    if value is None or value == "":
        return None
    if isinstance(value, datetime | date):
        return value.isoformat()
    text = str(value).strip()
    try:
        return datetime.fromisoformat(text).isoformat() if "T" in text or " " in text \
            else date.fromisoformat(text).isoformat()
    except ValueError:
        return None


def info_row(info: Any) -> dict[str, Any]:
    """The parsed sheet row of a RunInfo as JSON-ready data (for ``show``)."""
    row = dict(info.given())
    row["line"] = info.line
    row["extra"] = dict(info.extra)
    row["log_path"] = None if info.log_path is None else str(info.log_path)
    return jsonable(row)


def _collect(sheet: Path, sheet_bytes: bytes, infos: Sequence[Any]) -> list[dict[str, Any]]:
    """The files of a sheet bundle: the sheet itself and each log, by relative path."""
    root = sheet.parent
    files = [{"role": "sheet", "rel_path": sheet.name, "original_path": str(sheet),
              "data": sheet_bytes}]
    seen = {sheet.name}
    for info in infos:
        if info.log_path is None:
            continue
        log = Path(info.log_path)
        log = (log if log.is_absolute() else root / log).resolve()
        try:
            rel = log.relative_to(root).as_posix()
        except ValueError:
            raise LogPathError("log path escapes the run sheet's folder", path=info.sheet_path,
                               line=info.line, run=info.run, column="log",
                               found=info.log, expected=f"a file inside {root}") from None
        if rel in seen or not log.is_file():
            continue
        seen.add(rel)
        files.append({"role": "log", "rel_path": rel, "original_path": str(log),
                      "data": log.read_bytes()})
    for f in files:
        f["sha256"] = sha256_bytes(f["data"])
    return files


def bundle_digest(files: Sequence[Mapping[str, Any]]) -> str:
    """SHA-256 identifying a sheet bundle: every file's role, relative path and hash."""
    return sha256_bytes(audit.canonical_json(
        sorted([f["role"], f["rel_path"], f["sha256"]] for f in files)).encode())


def stored_bundle_digest(conn: sqlite3.Connection, sheet_id: int) -> str:
    """The bundle digest of a stored sheet, recomputed from its ``files`` rows."""
    rows = conn.execute("SELECT role, rel_path, sha256 FROM files WHERE sheet_id = ?",
                        (sheet_id,)).fetchall()
    return bundle_digest([{"role": r, "rel_path": p, "sha256": h} for r, p, h in rows])


def runs_digest(conn: sqlite3.Connection, sheet_id: int) -> str:
    """SHA-256 over a sheet's ``runs`` rows (recorded in the audit log; checked by verify)."""
    rows = conn.execute(
        "SELECT run, line, kind, calorimeter, sample, date, date_key, log_file_id, row_json"
        " FROM runs WHERE sheet_id = ? ORDER BY id", (sheet_id,)).fetchall()
    return sha256_bytes(audit.canonical_json([list(r) for r in rows]).encode())


def _existing_sheet(conn: sqlite3.Connection, bundle: str) -> tuple | None:
    return conn.execute(
        "SELECT s.id, s.file_name, s.sha256, r.method,"
        " (SELECT COUNT(*) FROM runs WHERE sheet_id = s.id)"
        " FROM sheets s JOIN reductions r ON r.sheet_id = s.id AND r.version = 1"
        " WHERE s.bundle_sha256 = ?", (bundle,),
    ).fetchone()


def _conflicts(conn: sqlite3.Connection, infos: Sequence[Any]) -> None:
    ids = [i.run for i in infos]
    for start in range(0, len(ids), 500):
        chunk = ids[start:start + 500]
        row = conn.execute(
            "SELECT r.run, s.id, s.file_name, s.added_utc FROM runs r JOIN sheets s"
            f" ON s.id = r.sheet_id WHERE r.run IN ({','.join('?' * len(chunk))})"
            " ORDER BY r.id LIMIT 1", chunk,
        ).fetchone()
        if row is not None:
            info = next(i for i in infos if i.run == row[0])
            raise LabbookError(
                f"run id already recorded from sheet #{row[1]} {row[2]} (added {row[3]}) "
                "with different raw data; run ids are unique in a lab book — give new runs "
                "new ids, or record a corrected sheet with `labbook add --amend --reason "
                "TEXT`", path=info.sheet_path, line=info.line, run=row[0], column="run",
            )


def add_sheet(conn: sqlite3.Connection, path: Path, sheet_path: str | Path, *, method: str,
              user: str) -> AddResult:
    """Record a run sheet, its raw files and its reduction (see the module docstring)."""
    from calwork.io import read_run_sheet
    from calwork.rise import METHODS

    check_choice("method", method, METHODS)
    sheet = Path(sheet_path)
    if not sheet.is_file():
        raise InputFileError("run sheet not found", path=sheet)
    sheet = sheet.resolve()
    sheet_bytes = sheet.read_bytes()  # first, so that any later change is detected below
    infos = read_run_sheet(sheet)
    files = _collect(sheet, sheet_bytes, infos)
    bundle = bundle_digest(files)
    found = _existing_sheet(conn, bundle)
    if found is not None:
        return _already(found, method, path)
    _conflicts(conn, infos)
    reduced = reduce_from_path(sheet, method=method, infos=infos)
    for f in files:  # the bytes stored must be the bytes reduced
        if sha256_bytes(Path(f["original_path"]).read_bytes()) != f["sha256"]:
            raise LabbookError("file changed while it was being recorded; add it again",
                               path=f["original_path"])
    with write_transaction(conn, path, crash_step="commit"):
        crash_point("begin")
        found = _existing_sheet(conn, bundle)
        if found is not None:  # recorded by another process while we were reducing
            return _already(found, method, path)
        _conflicts(conn, infos)
        for f in files:
            put_blob(conn, f["data"])
        crash_point("blobs")
        now = audit.utc_now()
        sheet_id = conn.execute(
            "INSERT INTO sheets (bundle_sha256, sha256, file_name, original_path, rows_json,"
            " added_utc, added_by) VALUES (?, ?, ?, ?, ?, ?, ?)",
            (bundle, files[0]["sha256"], sheet.name, str(sheet),
             audit.canonical_json([info_row(i) for i in infos]), now, user),
        ).lastrowid
        file_ids = {}
        for f in files:
            file_ids[f["rel_path"]] = conn.execute(
                "INSERT INTO files (sheet_id, role, rel_path, original_path, sha256, size)"
                " VALUES (?, ?, ?, ?, ?, ?)",
                (sheet_id, f["role"], f["rel_path"], f["original_path"], f["sha256"],
                 len(f["data"])),
            ).lastrowid
        crash_point("sheet")
        run_ids = _insert_runs(conn, sheet_id, sheet.parent, infos, file_ids)
        crash_point("runs")
        red_id, digest = insert_reduction(conn, sheet_id, 1, reduced, run_ids, now, user)
        crash_point("results")
        entry = audit.append(
            conn, user=user, action="add", obj=f"sheet:{sheet_id}", ts_utc=now,
            details={"sheet": sheet_id, "file_name": sheet.name, "sha256": files[0]["sha256"],
                     "bundle_sha256": bundle,
                     "files": {f["rel_path"]: f["sha256"] for f in files},
                     "runs": [i.run for i in infos], "reduction": red_id,
                     "method": method, "results_sha256": digest,
                     "runs_sha256": runs_digest(conn, sheet_id),
                     "sheet_record_sha256": sheet_record_digest(conn, sheet_id),
                     "results_meta_sha256": results_meta_digest(conn, red_id)},
        )
        crash_point("audit")
    crash_point("committed")
    return AddResult(
        sheet_id=sheet_id, file_name=sheet.name, sha256=files[0]["sha256"],
        already_recorded=False, method=method, n_runs=len(infos),
        failed=tuple((r["run"], r["error"]) for _t, _k, r in reduced.results
                     if _t == "run" and r.get("error")),
        calibrations=tuple(r for t, _k, r in reduced.results if t == "calibration"),
        samples=tuple(r for t, _k, r in reduced.results if t == "sample"),
        reduction_id=red_id, audit_id=entry.id, labbook=str(path),
    )


def _already(found: tuple, method: str, path: Path) -> AddResult:
    sheet_id, name, sha, stored_method, n = found
    notes = () if stored_method == method else (
        (f"stored reduction used method {stored_method}, not {method}; a sheet is recorded "
         "once — compare methods with `calwork reduce`"),)
    return AddResult(sheet_id=sheet_id, file_name=name, sha256=sha, already_recorded=True,
                     method=stored_method, n_runs=n, labbook=str(path), notes=notes)


def _insert_runs(conn: sqlite3.Connection, sheet_id: int, root: Path, infos: Sequence[Any],
                 file_ids: Mapping[str, int]) -> dict[str, int]:
    run_ids = {}
    for info in infos:
        log_id = None
        if info.log_path is not None:
            log = Path(info.log_path)
            log = (log if log.is_absolute() else root / log).resolve()
            log_id = file_ids.get(log.relative_to(root).as_posix())
        run_ids[info.run] = conn.execute(
            "INSERT INTO runs (run, sheet_id, line, kind, calorimeter, sample, date, date_key,"
            " log_file_id, row_json) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (info.run, sheet_id, info.line, info.kind, info.calorimeter, info.sample,
             None if info.date is None else str(info.date), date_key(info.date), log_id,
             audit.canonical_json(info_row(info))),
        ).lastrowid
    return run_ids


def insert_reduction(conn: sqlite3.Connection, sheet_id: int, version: int,
                     reduced: ReducedSheet, run_ids: Mapping[str, int], now: str,
                     user: str) -> tuple[int, str]:
    """Store one reduction and its results; returns ``(reduction id, results digest)``."""
    red_text = audit.canonical_json(reduced.summary)
    red_id = conn.execute(
        "INSERT INTO reductions (sheet_id, version, method, calwork_version, runs_json,"
        " full_sheet, json, json_sha256, created_utc, created_by)"
        " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (sheet_id, version, reduced.method, reduced.calwork_version,
         audit.canonical_json(list(reduced.run_ids)), int(reduced.full_sheet), red_text,
         sha256_bytes(red_text.encode()), now, user),
    ).lastrowid
    hashes = []
    dates = dict(conn.execute("SELECT run, date_key FROM runs WHERE sheet_id = ?", (sheet_id,)))
    for seq, (kind, key, record) in enumerate(reduced.results):
        text = audit.canonical_json(record)
        digest = sha256_bytes(text.encode())
        hashes.append(digest)
        prov = record.get("provenance") or {}
        constants = prov.get("constants") or reduced.constants
        res_id = conn.execute(
            "INSERT INTO results (reduction_id, seq, type, key, run_id, method,"
            " calwork_version, constants_json, json, json_sha256)"
            " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (red_id, seq, kind, key, run_ids.get(key) if kind == "run" else None,
             prov.get("method") or reduced.method,
             prov.get("calwork_version") or reduced.calwork_version,
             audit.canonical_json(constants), text, digest),
        ).lastrowid
        if kind == "calibration":
            runs = list(record.get("runs") or [])
            run_dates = [dates[r] for r in runs if dates.get(r)]
            conn.execute(
                "INSERT INTO calibrations (reduction_id, result_id, calorimeter,"
                " energy_equivalent_J_per_K, u_energy_equivalent_J_per_K, n_runs, valid_from,"
                " first_run, last_run) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
                (red_id, res_id, key, record.get("energy_equivalent_J_per_K"),
                 record.get("u_energy_equivalent_J_per_K"), record.get("n_runs"),
                 min(run_dates) if run_dates else None,
                 runs[0] if runs else None, runs[-1] if runs else None),
            )
    return red_id, results_digest(red_text, hashes)


def sheet_record_digest(conn: sqlite3.Connection, sheet_id: int) -> str:
    """SHA-256 over a sheets row's stored columns that no other digest covers (original path,
    the sheet's rows as read); recorded in the audit log, checked by verify."""
    row = conn.execute("SELECT original_path, rows_json FROM sheets WHERE id = ?",
                       (sheet_id,)).fetchone()
    return sha256_bytes(audit.canonical_json(list(row) if row else []).encode())


def results_meta_digest(conn: sqlite3.Connection, reduction_id: int) -> str:
    """SHA-256 over the method, calwork version and constants of a reduction and its results
    (the columns beside each result's hashed JSON); recorded in the audit log."""
    red = conn.execute("SELECT method, calwork_version, runs_json, full_sheet FROM reductions"
                       " WHERE id = ?", (reduction_id,)).fetchone()
    rows = conn.execute("SELECT seq, type, key, method, calwork_version, constants_json"
                        " FROM results WHERE reduction_id = ? ORDER BY seq",
                        (reduction_id,)).fetchall()
    return sha256_bytes(audit.canonical_json([list(red or []), [list(r) for r in rows]])
                        .encode())


def results_digest(reduction_json: str, result_hashes: Sequence[str]) -> str:
    """SHA-256 binding a reduction's summary and its results (recorded in the audit log)."""
    return sha256_bytes(audit.canonical_json(
        [sha256_bytes(reduction_json.encode()), list(result_hashes)]).encode())


def loads(text: str | None) -> Any:
    """``json.loads`` that passes ``None`` through."""
    return None if text is None else json.loads(text)
