"""``labbook verify``: is the lab book intact?

Checks, each naming the failing row id or blob:

1. SQLite's own ``PRAGMA quick_check`` (page-level corruption);
2. the insert-only triggers are all present and no others were planted;
3. the audit hash chain (:func:`calwork.labbook.audit.check_chain`);
4. every stored blob decompresses to bytes matching its SHA-256 and size, and every file
   row points at an existing blob;
5. every result row matches its own SHA-256, and every reduction's results digest matches the
   one recorded in the audit entry that created it (so a result edited together with its hash
   column is still caught);
6. every sheet has its ``add`` audit entry with the same bundle hash (recomputed from the
   ``files`` rows) and the same ``runs`` rows (a changed run row is named: its columns must
   agree with its stored sheet row and with its hashed results);
8. every run event (amendment, approval, void, restore) and every setting repeats the audit
   entry that recorded it — action, run, who, when, why and the SHA-256 of the whole row
   (version, changed cells, overrides, approved result, reduction) — and every such audit
   entry has its row;
7. every ``calibrations`` row (the energy equivalents that ``labbook list`` and QA read)
   agrees with the hashed calibration result it points at, and every calibration result has
   its row.
"""

from __future__ import annotations

import json
import sqlite3
from dataclasses import dataclass, field
from typing import Any

from calwork.core.errors import LabbookIntegrityError
from calwork.core.provenance import sha256_bytes
from calwork.labbook import audit
from calwork.labbook.audit import json_of
from calwork.labbook.blobs import unpack
from calwork.labbook.ingest import (
    date_key,
    results_digest,
    results_meta_digest,
    runs_digest,
    sheet_record_digest,
    stored_bundle_digest,
)
from calwork.labbook.lifecycle import event_digest, run_states
from calwork.labbook.schema import EXPECTED_TRIGGERS, migrate

__all__ = ["VerifyReport", "verify"]


@dataclass(frozen=True, kw_only=True)
class VerifyReport:
    """Outcome of ``labbook verify``."""

    problems: tuple[str, ...]
    counts: dict[str, int] = field(default_factory=dict)
    #: hash of the newest audit entry (record it outside the lab book, and give it back with
    #: ``expect_head`` later: a rebuilt chain cannot contain it)
    head: str | None = None
    head_entry: int | None = None

    @property
    def ok(self) -> bool:
        return not self.problems

    def to_dict(self) -> dict[str, Any]:
        return {"ok": self.ok, "problems": list(self.problems), "counts": dict(self.counts),
                "head": self.head, "head_entry": self.head_entry}


def _check_blobs(conn: sqlite3.Connection, problems: list[str]) -> int:
    users: dict[str, list[str]] = {}
    for sheet_id, rel, sha in conn.execute("SELECT sheet_id, rel_path, sha256 FROM files"):
        users.setdefault(sha, []).append(f"sheet #{sheet_id} {rel}")
    n = 0
    stored = set()
    for sha, size, codec, data in conn.execute("SELECT sha256, size, codec, data FROM blobs"):
        n += 1
        stored.add(sha)
        try:
            unpack(sha, size, codec, data)
        except LabbookIntegrityError as exc:
            used = "; ".join(users.get(sha, ["no file"]))
            problems.append(f"blob {sha}: {exc.message} (used by {used})")
    for sha, names in users.items():
        if sha not in stored:
            problems.append(f"blob {sha}: missing (needed by {'; '.join(names)})")
    return n


def _audit_by(entries: list[audit.AuditEntry], action: str) -> dict[Any, audit.AuditEntry]:
    key = {"add": "sheet"}[action]
    return {e.details.get(key): e for e in entries if e.action == action}


#: Audit actions that record a run event (a ``run_events`` row each).
_EVENT_ACTIONS = ("amend", "approve", "void", "restore")


def _check_events(conn: sqlite3.Connection, entries: list[audit.AuditEntry],
                  problems: list[str]) -> int:
    """Each run event (amendment, approval, void, restore) and each setting row must repeat
    the audit entry that recorded it (its action, run, who, when and why, and the digest of
    the whole row), and each such audit entry must have its row."""
    by_id = {e.id: e for e in entries}
    seen: set[int] = set()
    n = 0
    for (eid, run, action, version, reason, fields_json, red_id, res_sha, ts, user,
         audit_id) in conn.execute(
            "SELECT e.id, r.run, e.action, e.version, e.reason, e.fields_json,"
            " e.reduction_id, e.result_sha256, e.ts_utc, e.user, e.audit_id FROM run_events e"
            " LEFT JOIN runs r ON r.id = e.run_id ORDER BY e.id"):
        n += 1
        seen.add(audit_id)
        entry = by_id.get(audit_id)
        label = f"run_events row {eid} ({action} of run {run!r})"
        if entry is None or entry.action != action or entry.object != f"run:{run}":
            problems.append(f"{label}: no matching {action} audit entry")
            continue
        if (reason, ts, user) != (entry.reason, entry.ts_utc, entry.user):
            problems.append(f"{label}: reason, time or user differ from audit row {entry.id}")
        recorded = entry.details.get("event_sha256")
        if recorded is not None and recorded != event_digest(
                run, action, version, reason, fields_json, red_id, res_sha, ts, user):
            problems.append(f"{label}: its version, changed fields, overrides, approved "
                            f"result or reduction differ from those recorded by audit row "
                            f"{entry.id}")
        if red_id is not None and entry.details.get("reduction") != red_id:
            problems.append(f"{label}: points at reductions row {red_id}, audit row "
                            f"{entry.id} recorded {entry.details.get('reduction')}")
    problems.extend(f"audit row {e.id}: records a {e.action} of {e.object} but no run event "
                    "row holds it" for e in entries
                    if e.action in _EVENT_ACTIONS and e.id not in seen)
    settings_seen: set[int] = set()
    for sid, key, value, ts, user, audit_id in conn.execute(
            "SELECT id, key, value, ts_utc, user, audit_id FROM settings ORDER BY id"):
        settings_seen.add(audit_id)
        entry = by_id.get(audit_id)
        if entry is None or entry.action != "setting" or (
                entry.details.get("key"), entry.details.get("value"), entry.ts_utc,
                entry.user) != (key, value, ts, user):
            problems.append(f"settings row {sid} ({key} = {value}): not as recorded by an "
                            "audit entry")
    problems.extend(f"audit row {e.id}: records setting {e.details.get('key')} but no "
                    "settings row holds it" for e in entries
                    if e.action == "setting" and e.id not in settings_seen)
    return n


def _check_results(conn: sqlite3.Connection, entries: list[audit.AuditEntry],
                   problems: list[str]) -> int:
    by_reduction = {e.details.get("reduction"): e for e in entries
                    if e.action in ("add", "void", "restore", "amend")
                    and e.details.get("reduction") is not None}
    n = 0
    hashes: dict[int, list[str]] = {}
    for res_id, red_id, kind, key, text, digest in conn.execute(
            "SELECT id, reduction_id, type, key, json, json_sha256 FROM results ORDER BY"
            " reduction_id, seq"):
        n += 1
        actual = sha256_bytes(text.encode())
        if actual != digest:
            problems.append(f"results row {res_id} ({kind} {key}): JSON does not match its "
                            "SHA-256 (edited)")
        hashes.setdefault(red_id, []).append(actual)
    present = set()
    for red_id, text, digest, sheet_id in conn.execute(
            "SELECT id, json, json_sha256, sheet_id FROM reductions"):
        present.add(red_id)
        if sha256_bytes(text.encode()) != digest:
            problems.append(f"reductions row {red_id}: JSON does not match its SHA-256")
        entry = by_reduction.get(red_id)
        if entry is None:
            problems.append(f"reductions row {red_id} (sheet #{sheet_id}): no audit entry "
                            "records it")
        elif entry.details.get("results_sha256") != results_digest(text, hashes.get(red_id, [])):
            problems.append(f"reductions row {red_id} (sheet #{sheet_id}): results differ "
                            f"from those recorded by audit row {entry.id}")
        elif ("results_meta_sha256" in entry.details
              and entry.details["results_meta_sha256"] != results_meta_digest(conn, red_id)):
            problems.append(f"reductions row {red_id} (sheet #{sheet_id}): the stored method, "
                            "calwork version or constants differ from those recorded by audit "
                            f"row {entry.id}")
    problems.extend(f"results of reductions row {red_id}: the reduction is missing"
                    for red_id in sorted(set(hashes) - present))
    problems.extend(f"audit row {e.id} ({e.action} {e.object}): the reduction it recorded "
                    f"(reductions row {red_id}) is missing"
                    for red_id, e in sorted(by_reduction.items()) if red_id not in present)
    return n


def _check_records(conn: sqlite3.Connection, entries: list[audit.AuditEntry],
                   problems: list[str]) -> tuple[int, int, int]:
    adds = _audit_by(entries, "add")
    n_sheets = 0
    for sheet_id, bundle, added_utc, added_by, file_name in conn.execute(
            "SELECT id, bundle_sha256, added_utc, added_by, file_name FROM sheets"):
        n_sheets += 1
        entry = adds.get(sheet_id)
        if entry is None:
            problems.append(f"sheets row {sheet_id}: no audit entry records it")
            continue
        # ingest writes the sheets row with the audit entry's time and user (entries that
        # name the file; older lab books' entries may not)
        if "file_name" in entry.details and (added_utc, added_by, file_name) != (
                entry.ts_utc, entry.user, entry.details["file_name"]):
            problems.append(f"sheets row {sheet_id}: who, when or the file name differ from "
                            f"audit row {entry.id}")
        if ("sheet_record_sha256" in entry.details
                and entry.details["sheet_record_sha256"] != sheet_record_digest(conn, sheet_id)):
            problems.append(f"sheets row {sheet_id}: the original path or the stored sheet rows "
                            f"differ from those recorded by audit row {entry.id}")
        recorded = entry.details.get("bundle_sha256")
        if recorded != bundle or recorded != stored_bundle_digest(conn, sheet_id):
            problems.append(f"sheets row {sheet_id}: raw files differ from those recorded by "
                            f"audit row {entry.id}")
        if "runs_sha256" in entry.details and \
                entry.details["runs_sha256"] != runs_digest(conn, sheet_id):
            problems.append(f"runs of sheet #{sheet_id}: rows differ from those recorded by "
                            f"audit row {entry.id}")
            problems += _changed_runs(conn, sheet_id)
    n_voids = 0
    n_runs = conn.execute("SELECT COUNT(*) FROM runs").fetchone()[0]
    return n_sheets, n_runs, n_voids


def _changed_runs(conn: sqlite3.Connection, sheet_id: int) -> list[str]:
    """Name the run rows of a sheet whose columns disagree with their own stored sheet row
    (``row_json``, as ``ingest`` wrote both) or with the hashed results of the run."""
    recorded: dict[str, list[dict[str, Any]]] = {}
    for rid, key, text in conn.execute(
            "SELECT res.id, res.key, res.json FROM results res JOIN reductions red"
            " ON red.id = res.reduction_id WHERE red.sheet_id = ? AND res.type = 'run'",
            (sheet_id,)):
        recorded.setdefault(key, []).append(json_of(text, f"result row {rid} (run {key})"))
    out = []
    for pk, run, line, kind, cal, sample, date, dkey, row_text in conn.execute(
            "SELECT id, run, line, kind, calorimeter, sample, date, date_key, row_json"
            " FROM runs WHERE sheet_id = ? ORDER BY id", (sheet_id,)):
        try:
            row = json.loads(row_text)
        except (TypeError, ValueError):
            out.append(f"runs row {pk} (run {run!r}): stored sheet row is not JSON")
            continue
        cols = {"run": run, "line": line, "kind": kind, "calorimeter": cal,
                "sample": sample, "date": date}
        bad = [c for c, v in cols.items() if row.get(c) != v]
        if dkey != date_key(row.get("date")):
            bad.append("date_key")
        results = recorded.get(run, [])
        if not results:
            bad.append("results (none recorded for this run)")
        for name in ("kind", "calorimeter", "sample"):
            if any(r.get(name) != cols[name] for r in results) and name not in bad:
                bad.append(name)
        if bad:
            out.append(f"runs row {pk} (run {run!r}): {', '.join(bad)} changed")
    return out


def _check_calibrations(conn: sqlite3.Connection, problems: list[str]) -> None:
    """Each calibrations row must repeat its hashed calibration result (as
    ``ingest.insert_reduction`` writes it), and each calibration result must have its row."""
    dates = dict(conn.execute("SELECT run, date_key FROM runs"))
    linked: set[int] = set()
    for (cid, red_id, res_id, cal, eps, u, n, start, first, last, res_red, kind,
         text) in conn.execute(
            "SELECT c.id, c.reduction_id, c.result_id, c.calorimeter,"
            " c.energy_equivalent_J_per_K, c.u_energy_equivalent_J_per_K, c.n_runs,"
            " c.valid_from, c.first_run, c.last_run, res.reduction_id, res.type, res.json"
            " FROM calibrations c LEFT JOIN results res ON res.id = c.result_id ORDER BY c.id"):
        if text is None or kind != "calibration":
            problems.append(f"calibrations row {cid} ({cal}): result row {res_id} is missing "
                            "or not a calibration")
            continue
        linked.add(res_id)
        rec = json.loads(text)
        runs = list(rec.get("runs") or [])
        run_dates = [dates[r] for r in runs if dates.get(r)]
        expected = {
            "reduction_id": res_red, "calorimeter": rec.get("calorimeter") or cal,
            "energy_equivalent_J_per_K": rec.get("energy_equivalent_J_per_K"),
            "u_energy_equivalent_J_per_K": rec.get("u_energy_equivalent_J_per_K"),
            "n_runs": rec.get("n_runs"), "valid_from": min(run_dates) if run_dates else None,
            "first_run": runs[0] if runs else None, "last_run": runs[-1] if runs else None,
        }
        actual = {"reduction_id": red_id, "calorimeter": cal, "energy_equivalent_J_per_K": eps,
                  "u_energy_equivalent_J_per_K": u, "n_runs": n, "valid_from": start,
                  "first_run": first, "last_run": last}
        bad = [k for k in expected if expected[k] != actual[k]]
        if bad:
            problems.append(f"calibrations row {cid} ({cal}): {', '.join(bad)} not as in "
                            f"its result row {res_id}")
    for res_id, key in conn.execute(
            "SELECT id, key FROM results WHERE type = 'calibration' ORDER BY id"):
        if res_id not in linked:
            problems.append(f"results row {res_id} (calibration {key}): its calibrations row "
                            "is missing")


def _schema_objects(conn: sqlite3.Connection) -> dict[tuple[str, str], str]:
    """(type, name) → definition: the SQL of views, triggers and indexes (white space
    folded), the column list of tables (``ALTER TABLE`` in migrations rewrites a table's
    stored text, not its columns)."""
    out: dict[tuple[str, str], str] = {}
    for kind, name, sql in conn.execute(
            "SELECT type, name, sql FROM sqlite_master WHERE name NOT LIKE 'sqlite_%'"):
        if kind == "table":
            cols = conn.execute(f'PRAGMA table_info("{name}")').fetchall()
            out[(kind, name)] = ", ".join(f"{c[1]} {c[2]}" for c in cols)
        else:
            out[(kind, name)] = " ".join((sql or "").split())
    return out


def _check_schema(conn: sqlite3.Connection) -> list[str]:
    """Every view, trigger, index and table as calwork defines them: a redefined view (one
    statement that would undo a void in every listing) or an extra object is a finding."""
    fresh = sqlite3.connect(":memory:")
    try:
        migrate(fresh, 0)
        expected = _schema_objects(fresh)
    finally:
        fresh.close()
    actual = _schema_objects(conn)
    problems = []
    for key in sorted(set(expected) | set(actual)):
        kind, name = key
        if kind == "trigger" and (key not in actual) != (key not in expected):
            continue  # missing/unexpected triggers are reported by the trigger check
        if key not in actual:
            problems.append(f"{kind} {name} is missing from the schema")
        elif key not in expected:
            problems.append(f"unexpected {kind} {name} in the schema (not calwork's)")
        elif actual[key] != expected[key]:
            problems.append(f"{kind} {name} differs from calwork's definition (redefined)")
    return problems


def _noting(problems: list[str], default: Any, check: Any) -> Any:
    """Run one check; a damaged row it cannot read is a finding, not a crash."""
    try:
        return check()
    except LabbookIntegrityError as exc:
        problems.append(exc.message)
        return default


def verify(conn: sqlite3.Connection, *, expect_head: str | None = None) -> VerifyReport:
    """Run every check (see the module docstring); never raises for a failed check.

    ``expect_head`` is an audit head recorded earlier outside the lab book: the chain must
    still contain it (entries may have been added since); a chain rebuilt by someone with
    write access, consistent in itself, does not.
    """
    problems: list[str] = []
    for (msg,) in conn.execute("PRAGMA quick_check"):
        if msg != "ok":
            problems.append(f"sqlite quick_check: {msg}")
    triggers = {n for (n,) in conn.execute(
        "SELECT name FROM sqlite_master WHERE type = 'trigger'")}
    problems += [f"trigger {t} is missing (insert-only protection removed)"
                 for t in sorted(EXPECTED_TRIGGERS - triggers)]
    problems += [f"unexpected trigger {t}" for t in sorted(triggers - EXPECTED_TRIGGERS)]
    problems += _check_schema(conn)
    problems += audit.check_chain(conn)
    entries = _noting(problems, [], lambda: audit.entries(conn))
    n_blobs = _check_blobs(conn, problems)
    n_results = _noting(problems, 0, lambda: _check_results(conn, entries, problems))
    n_sheets, n_runs, n_voids = _noting(problems, (0, 0, 0),
                                        lambda: _check_records(conn, entries, problems))
    _noting(problems, None, lambda: _check_calibrations(conn, problems))
    n_events = _noting(problems, 0, lambda: _check_events(conn, entries, problems))
    n_voids = _noting(problems, 0, lambda: sum(
        s.state == "void" for s in run_states(conn).values()))
    counts = {"audit entries": len(entries), "blobs": n_blobs, "sheets": n_sheets,
              "runs": n_runs, "void runs": n_voids, "run events": n_events,
              "results": n_results}
    last = conn.execute("SELECT id, hash FROM audit ORDER BY id DESC LIMIT 1").fetchone()
    if expect_head is not None:
        wanted = expect_head.strip().lower()
        if conn.execute("SELECT 1 FROM audit WHERE hash = ?", (wanted,)).fetchone() is None:
            problems.append(f"the recorded audit head {wanted} is not in the audit chain (the "
                            "chain was rebuilt, or entries were removed)")
    return VerifyReport(problems=tuple(problems), counts=counts,
                        head=None if last is None else last[1],
                        head_entry=None if last is None else last[0])
