"""The life of a recorded run: amend, approve, void, restore — each one audited transaction.

A run is never edited in place. Its **versions** are the recorded one (version 1, the sheet as
added) and one per amendment; an amendment overrides run-sheet cells (a mistyped mass, a fuse
length, a period boundary such as ``fire_time_s``, the run's ``rise_method``...) with a
reason, and the earlier versions stay readable. Its **state** is one of :data:`STATES`:

``recorded``  reduced and on record, not (or no longer) approved;
``approved``  a second look found the current version's result fit to report: the approval
              names who, when, an optional note and the SHA-256 of the result approved;
``void``      left out of every series and listing of current results (the run and all its
              results stay on record); ``restore`` brings it back.

Rules (docs/methods.md §8; common practice in accredited testing, where a reported result is
reviewed by a second person and a record is corrected by adding to it, never by overwriting
it):

* an amendment to an approved run sends it back to ``recorded``;
* an approval holds only while the run's current result is the one approved: when the sheet
  is re-reduced because *another* run changed (an amended calibration run changes ε and so
  every sample of its sheet), the approval lapses and the run shows ``recorded`` with a note;
* approving names the version reviewed (``expect_version``): a version that changed since
  the reviewer looked is refused;
* with the lab-book setting ``four_eyes`` on, nobody approves a version they recorded or
  amended themselves.

Every change re-reduces the run's sheet from the stored raw bytes with every amendment in
force (:func:`calwork.labbook.reducing.reduce_stored`), so the calorimeter's calibration series
and every sample that used it follow in the same transaction; the new results are the sheet's
next reduction version. The event rows and the reductions are bound into the audit hash
chain, and ``labbook verify`` and ``labbook recompute`` check them.
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from calwork.core.errors import ChoiceError, LabbookBusyError, LabbookError
from calwork.core.provenance import sha256_bytes
from calwork.core.results import jsonable
from calwork.labbook import audit
from calwork.labbook.audit import json_of
from calwork.labbook.ingest import insert_reduction, results_meta_digest
from calwork.labbook.reducing import reduce_stored, stored_info
from calwork.labbook.store import crash_point, write_transaction

__all__ = [
    "SETTINGS",
    "STATES",
    "AmendResult",
    "RunState",
    "amend_run",
    "approve_run",
    "cell_text",
    "event_digest",
    "restore_run",
    "run_states",
    "set_setting",
    "setting",
    "void_run",
]

#: The states of a recorded run.
STATES = ("recorded", "approved", "void")
#: Lab-book settings and their allowed values (``set_setting``).
SETTINGS: Mapping[str, tuple[str, ...]] = {"four_eyes": ("on", "off")}
_DEFAULTS = {"four_eyes": "off"}


@dataclass(frozen=True, kw_only=True)
class RunState:
    """Where a run stands: state, version, the overrides in force and who did what."""

    run: str
    state: str
    version: int
    overrides: Mapping[str, Any] = field(default_factory=dict)
    recorded_by: str = ""
    recorded_utc: str = ""
    amended_by: str | None = None
    amended_utc: str | None = None
    approved_by: str | None = None
    approved_utc: str | None = None
    approval_note: str | None = None
    approved_version: int | None = None
    #: why an earlier approval no longer holds (``None`` if none lapsed)
    approval_lapsed: str | None = None
    void_reason: str | None = None
    voided_by: str | None = None
    voided_utc: str | None = None
    events: tuple[Mapping[str, Any], ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return jsonable({
            "run": self.run, "state": self.state, "version": self.version,
            "overrides": dict(self.overrides), "recorded_by": self.recorded_by,
            "recorded_utc": self.recorded_utc, "amended_by": self.amended_by,
            "amended_utc": self.amended_utc, "approved_by": self.approved_by,
            "approved_utc": self.approved_utc, "approval_note": self.approval_note,
            "approved_version": self.approved_version,
            "approval_lapsed": self.approval_lapsed, "void_reason": self.void_reason,
            "voided_by": self.voided_by, "voided_utc": self.voided_utc,
            "events": [dict(e) for e in self.events],
        })


@dataclass(frozen=True, kw_only=True)
class AmendResult:
    """What one amendment recorded."""

    run: str
    version: int
    changes: Mapping[str, tuple[Any, Any]]
    reason: str
    audit_id: int
    reduction_id: int
    #: runs of the sheet whose stored result changed with this amendment (besides ``run``)
    also_changed: tuple[str, ...] = ()
    error: str | None = None

    def to_dict(self) -> dict[str, Any]:
        return jsonable({
            "run": self.run, "version": self.version,
            "changes": {k: {"from": a, "to": b} for k, (a, b) in self.changes.items()},
            "reason": self.reason, "audit_id": self.audit_id,
            "reduction_id": self.reduction_id, "also_changed": list(self.also_changed),
            "error": self.error,
        })


def cell_text(value: Any) -> str:
    """A parsed sheet value as the cell text that reads back to it exactly (``''`` = blank).

    >>> cell_text(0.9812), cell_text(None), cell_text(3)
    ('0.9812', '', '3')
    """
    if value is None:
        return ""
    text = getattr(value, "text", None)  # a LogTime keeps the notation it was written in
    if isinstance(text, str):
        return text
    if isinstance(value, float):
        return repr(value)
    return str(value)


def event_digest(run: str, action: str, version: int, reason: str, fields_json: str,
                 reduction_id: int | None, result_sha256: str | None, ts_utc: str,
                 user: str) -> str:
    """SHA-256 of a ``run_events`` row's contents (recorded in its audit entry)."""
    return sha256_bytes(audit.canonical_json(
        [run, action, version, reason, fields_json, reduction_id, result_sha256, ts_utc,
         user]).encode())


def setting(conn: sqlite3.Connection, key: str) -> str:
    """The current value of a lab-book setting (its newest row, else the default)."""
    if key not in SETTINGS:
        raise ChoiceError("unknown lab-book setting", found=key, expected=list(SETTINGS))
    row = conn.execute("SELECT value FROM settings WHERE key = ? ORDER BY id DESC LIMIT 1",
                       (key,)).fetchone()
    return _DEFAULTS[key] if row is None else row[0]


def set_setting(conn: sqlite3.Connection, path: Path, key: str, value: str, *, user: str,
                reason: str = "") -> audit.AuditEntry:
    """Change a lab-book setting (audited)."""
    if key not in SETTINGS:
        raise ChoiceError("unknown lab-book setting", found=key, expected=list(SETTINGS))
    value = str(value).strip().lower()
    if value not in SETTINGS[key]:
        raise ChoiceError(f"setting {key} takes one of {list(SETTINGS[key])}", found=value,
                          expected=list(SETTINGS[key]))
    with write_transaction(conn, path):
        now = audit.utc_now()
        entry = audit.append(conn, user=user, action="setting", obj=f"setting:{key}",
                             reason=reason, ts_utc=now, details={"key": key, "value": value})
        conn.execute("INSERT INTO settings (key, value, ts_utc, user, audit_id)"
                     " VALUES (?, ?, ?, ?, ?)", (key, value, now, user, entry.id))
    return entry


# --- reading the state ------------------------------------------------------------------------
def _events(conn: sqlite3.Connection, where: str = "", params: Sequence[Any] = ()
            ) -> dict[int, list[dict[str, Any]]]:
    out: dict[int, list[dict[str, Any]]] = {}
    for (eid, run_pk, action, version, reason, fields_json, red_id, res_sha, ts, user,
         audit_id) in conn.execute(
            "SELECT id, run_id, action, version, reason, fields_json, reduction_id,"
            f" result_sha256, ts_utc, user, audit_id FROM run_events {where} ORDER BY id",
            params):
        out.setdefault(run_pk, []).append({
            "id": eid, "action": action, "version": version, "reason": reason,
            "fields": json_of(fields_json, f"run_events row {eid}", column="fields_json"),
            "reduction_id": red_id, "result_sha256": res_sha, "ts_utc": ts, "user": user,
            "audit_id": audit_id})
    return out


def _current_results(conn: sqlite3.Connection, pks: Sequence[int] | None = None
                     ) -> dict[int, str]:
    """run pk → SHA-256 of its result in its sheet's current reduction."""
    sql = ("SELECT res.run_id, res.json_sha256 FROM results res JOIN current_reductions red"
           " ON red.id = res.reduction_id WHERE res.type = 'run' AND res.run_id IS NOT NULL")
    if pks is None:
        return dict(conn.execute(sql))
    out: dict[int, str] = {}
    for start in range(0, len(pks), 500):
        chunk = list(pks[start:start + 500])
        out.update(conn.execute(sql + f" AND res.run_id IN ({','.join('?' * len(chunk))})",
                                chunk))
    return out


def _state_of(run: str, events: list[dict[str, Any]], current_sha: str | None,
              recorded_by: str, recorded_utc: str) -> RunState:
    version = 1
    overrides: dict[str, Any] = {}
    void = None
    approval = None
    amended = None
    for e in events:
        if e["action"] == "amend":
            version = e["version"]
            overrides = dict((e["fields"] or {}).get("overrides") or {})
            amended = e
            approval = None
        elif e["action"] == "void":
            void, approval = e, None
        elif e["action"] == "restore":
            void, approval = None, None
        elif e["action"] == "approve":
            approval = e
    lapsed = None
    if approval is not None and approval["result_sha256"] != current_sha:
        lapsed = (f"approved by {approval['user']} at {approval['ts_utc']}, but the result "
                  "has changed since (its sheet was re-reduced after another run's change)")
        approval = None
    state = "void" if void is not None else ("approved" if approval is not None
                                             else "recorded")
    return RunState(
        run=run, state=state, version=version, overrides=overrides,
        recorded_by=recorded_by, recorded_utc=recorded_utc,
        amended_by=None if amended is None else amended["user"],
        amended_utc=None if amended is None else amended["ts_utc"],
        approved_by=None if approval is None else approval["user"],
        approved_utc=None if approval is None else approval["ts_utc"],
        approval_note=None if approval is None else (approval["reason"] or None),
        approved_version=None if approval is None else approval["version"],
        approval_lapsed=lapsed,
        void_reason=None if void is None else void["reason"],
        voided_by=None if void is None else void["user"],
        voided_utc=None if void is None else void["ts_utc"],
        events=tuple(events))


def run_states(conn: sqlite3.Connection, runs: Sequence[str] | None = None
               ) -> dict[str, RunState]:
    """The state of each run (all runs, or those named), by run id."""
    sql = ("SELECT r.id, r.run, s.added_by, s.added_utc FROM runs r JOIN sheets s"
           " ON s.id = r.sheet_id")
    if runs is None:
        rows = conn.execute(sql + " ORDER BY r.id").fetchall()
        events, current = _events(conn), _current_results(conn)
    else:
        names = list(dict.fromkeys(runs))
        rows = []
        for start in range(0, len(names), 500):
            chunk = names[start:start + 500]
            rows += conn.execute(sql + f" WHERE r.run IN ({','.join('?' * len(chunk))})"
                                 " ORDER BY r.id", chunk).fetchall()
        pks = [r[0] for r in rows]
        events = {}
        for start in range(0, len(pks), 500):
            chunk = pks[start:start + 500]
            events |= _events(conn, f"WHERE run_id IN ({','.join('?' * len(chunk))})", chunk)
        current = _current_results(conn, pks)
    return {run: _state_of(run, events.get(pk, []), current.get(pk), by, when)
            for pk, run, by, when in rows}


def _run(conn: sqlite3.Connection, path: Path, run: str) -> tuple[int, int]:
    row = conn.execute("SELECT id, sheet_id FROM runs WHERE run = ?", (run,)).fetchone()
    if row is None:
        raise LabbookError("run is not in the lab book", run=run, path=path)
    return row


def _reason(reason: str | None, what: str, run: str) -> str:
    text = (reason or "").strip()
    if not text:
        raise LabbookError(f"{what} needs a reason", run=run, expected="--reason TEXT")
    return text


# --- re-reduction -----------------------------------------------------------------------------
#: How often a change is prepared again when another writer changed the same sheet meanwhile.
_ATTEMPTS = 5


class _SheetMovedError(Exception):
    """Another writer recorded a new reduction of the sheet while this change was prepared."""


def _retrying(change: Any, run: str, path: Path) -> Any:
    """Run ``change()`` (prepare outside, record inside one transaction) again when another
    writer changed the same sheet meanwhile, so that two users amending runs of one sheet at
    once both succeed, with the result of doing them in sequence."""
    for _ in range(_ATTEMPTS):
        try:
            return change()
        except _SheetMovedError:
            continue
    raise LabbookBusyError(f"the sheet kept changing while this change was prepared "
                           f"({_ATTEMPTS} attempts); retry", run=run, path=path)
@dataclass(frozen=True)
class _Plan:
    """A sheet's re-reduction, prepared outside the write transaction."""

    sheet_id: int
    current_id: int
    next_version: int
    reduced: Any
    active: tuple[str, ...]


def _sheet_plan(conn: sqlite3.Connection, sheet_id: int, *,
                void: Mapping[str, bool] | None = None,
                overrides: Mapping[str, Mapping[str, Any]] | None = None) -> _Plan:
    """Re-reduce a stored sheet from its bytes with every amendment in force and the void
    runs left out; ``void`` and ``overrides`` give the change about to be recorded."""
    current = conn.execute(
        "SELECT id, version FROM current_reductions WHERE sheet_id = ?", (sheet_id,)
    ).fetchone()
    method = conn.execute("SELECT method FROM reductions WHERE sheet_id = ? AND version = 1",
                          (sheet_id,)).fetchone()[0]
    names = [r for (r,) in conn.execute("SELECT run FROM runs WHERE sheet_id = ? ORDER BY id",
                                        (sheet_id,))]
    states = run_states(conn, names)
    is_void = {r: states[r].state == "void" for r in names} | dict(void or {})
    in_force = {r: dict(states[r].overrides) for r in names} | {
        r: dict(c) for r, c in (overrides or {}).items()}
    active = tuple(r for r in names if not is_void[r])
    reduced = reduce_stored(conn, sheet_id, active, method=method, full_sheet=False,
                            overrides={r: c for r, c in in_force.items() if r in active})
    return _Plan(sheet_id, current[0], current[1] + 1, reduced, active)


def _record(conn: sqlite3.Connection, path: Path, plan: _Plan, *, run: str, run_pk: int,
            action: str, version: int, reason: str, fields: Mapping[str, Any], user: str,
            result_sha256: str | None = None, crash_prefix: str = "") -> audit.AuditEntry:
    """Inside the write transaction: store the plan's reduction (if any), the audit entry
    and the event row."""
    again = conn.execute("SELECT id FROM current_reductions WHERE sheet_id = ?",
                         (plan.sheet_id,)).fetchone()
    if again[0] != plan.current_id:
        raise _SheetMovedError(run)
    now = audit.utc_now()
    red_id, digest, meta = None, None, None
    if plan.reduced is not None:
        run_ids = dict(conn.execute("SELECT run, id FROM runs WHERE sheet_id = ?",
                                    (plan.sheet_id,)))
        red_id, digest = insert_reduction(conn, plan.sheet_id, plan.next_version,
                                          plan.reduced, run_ids, now, user)
        meta = results_meta_digest(conn, red_id)
        crash_point(f"{crash_prefix}results")
    fields_json = audit.canonical_json(fields)
    details = {"run": run, "sheet": plan.sheet_id, "version": version,
               "event_sha256": event_digest(run, action, version, reason, fields_json, red_id,
                                            result_sha256, now, user)}
    if red_id is not None:
        details |= {"reduction": red_id, "reduction_version": plan.next_version,
                    "active_runs": list(plan.active), "results_sha256": digest,
                    "results_meta_sha256": meta}
    entry = audit.append(conn, user=user, action=action, obj=f"run:{run}", reason=reason,
                         ts_utc=now, details=details)
    crash_point(f"{crash_prefix}audit")
    conn.execute(
        "INSERT INTO run_events (run_id, action, version, reason, fields_json, reduction_id,"
        " result_sha256, ts_utc, user, audit_id) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (run_pk, action, version, reason, fields_json, red_id, result_sha256, now, user,
         entry.id))
    return entry


def _changed_runs(conn: sqlite3.Connection, sheet_id: int, old_id: int, new_id: int
                  ) -> list[str]:
    old = dict(conn.execute("SELECT key, json_sha256 FROM results WHERE reduction_id = ?"
                            " AND type = 'run'", (old_id,)))
    return [k for k, h in conn.execute("SELECT key, json_sha256 FROM results WHERE"
                                       " reduction_id = ? AND type = 'run' ORDER BY seq",
                                       (new_id,)) if old.get(k) != h]


# --- the four changes -------------------------------------------------------------------------
def amend_run(conn: sqlite3.Connection, path: Path, run: str, changes: Mapping[str, Any], *,
              reason: str, user: str, source: Mapping[str, Any] | None = None,
              ) -> AmendResult:
    """Record a new version of ``run`` with the run-sheet cells ``changes`` overridden.

    ``changes`` maps sheet columns to cell text (as one would type it in the sheet; blank
    clears the cell); each is read and checked as the sheet reader reads it. The sheet is
    re-reduced with every amendment in force, in the same transaction. ``source`` (e.g. the
    name and SHA-256 of a corrected sheet) is kept with the amendment.

    Raises
    ------
    LabbookError
        Unknown run, void run, no reason, nothing to change.
    SheetError
        A column that is not a run-sheet column (or is the run id or kind), or a value the
        sheet would refuse.
    """
    from calwork.io import amended_run, read_run_sheet
    from calwork.labbook.reducing import materialised
    from calwork.rise import METHODS

    reason = _reason(reason, "an amendment", run)
    if not changes:
        raise LabbookError("an amendment needs at least one --set COLUMN=VALUE", run=run)

    def once() -> Any:
        run_pk, sheet_id = _run(conn, path, run)
        state = run_states(conn, [run])[run]
        if state.state == "void":
            raise LabbookError("run is void: restore it before amending it", run=run,
                               expected=f"calwork labbook restore {run} --reason ...")
        keys = {str(k).strip().lower() for k in changes} | set(state.overrides)
        if "log" in keys:  # a log path is checked against the stored bundle's own files
            with materialised(conn, sheet_id) as (sheet, _original):
                info = next(i for i in read_run_sheet(sheet) if i.run == run)
                before = amended_run(info, state.overrides) if state.overrides else info
                after = amended_run(before, changes, source="--set")
        else:  # the stored sheet row is enough; no file is written
            row_json, original = conn.execute(
                "SELECT r.row_json, s.original_path FROM runs r JOIN sheets s"
                " ON s.id = r.sheet_id WHERE r.id = ?", (run_pk,)).fetchone()
            info = stored_info(json_of(row_json, f"runs row {run_pk}", column="row_json"),
                               original)
            before = amended_run(info, state.overrides) if state.overrides else info
            after = amended_run(before, changes, source="--set")
        old_given, new_given = before.given(), after.given()
        if after.rise_method is not None and after.rise_method not in METHODS:
            raise ChoiceError("unknown rise method", column="rise_method", run=run,
                              found=after.rise_method, expected=list(METHODS))
        diff = {name: (cell_text(old_given.get(name)), cell_text(new_given.get(name)))
                for name in sorted(set(old_given) | set(new_given))
                if cell_text(old_given.get(name)) != cell_text(new_given.get(name))
                and name != "log_path"}
        if not diff:
            raise LabbookError("the amendment changes nothing: every value given is already in "
                               "force", run=run, found=dict(changes))
        overrides = dict(state.overrides) | {name: new for name, (_old, new) in diff.items()}
        plan = _sheet_plan(conn, sheet_id, overrides={run: overrides})
        version = state.version + 1
        fields = {"set": {name: new for name, (_old, new) in diff.items()},
                  "changes": {name: [old, new] for name, (old, new) in diff.items()},
                  "overrides": overrides}
        if source:
            fields["source"] = dict(source)
        with write_transaction(conn, path, crash_step="amend-commit"):
            entry = _record(conn, path, plan, run=run, run_pk=run_pk, action="amend",
                            version=version, reason=reason, fields=fields, user=user,
                            crash_prefix="amend-")
            red_id = entry.details["reduction"]
            changed = _changed_runs(conn, sheet_id, plan.current_id, red_id)
        crash_point("amend-committed")
        result = json.loads(conn.execute(
            "SELECT json FROM results WHERE reduction_id = ? AND run_id = ? AND type = 'run'",
            (red_id, run_pk)).fetchone()[0])
        return AmendResult(run=run, version=version, changes=diff, reason=reason,
                           audit_id=entry.id, reduction_id=red_id,
                           also_changed=tuple(r for r in changed if r != run),
                           error=result.get("error"))

    return _retrying(once, run, path)


def approve_run(conn: sqlite3.Connection, path: Path, run: str, *, user: str,
                note: str = "", expect_version: int | None = None) -> audit.AuditEntry:
    """Approve the current version of ``run`` (its current result, by SHA-256).

    Raises
    ------
    LabbookError
        Unknown, void or failed run; a version other than ``expect_version``; already
        approved; approval by its recorder or amender while ``four_eyes`` is on.
    """
    run_pk, sheet_id = _run(conn, path, run)
    state = run_states(conn, [run])[run]
    if state.state == "void":
        raise LabbookError("a void run cannot be approved", run=run)
    if expect_version is not None and expect_version != state.version:
        raise LabbookError(
            f"version {expect_version} is not the current version (the run was amended "
            "since): review the current one", run=run, found=expect_version,
            expected=state.version)
    if state.state == "approved":
        raise LabbookError(f"already approved by {state.approved_by} at {state.approved_utc}",
                           run=run)
    author = state.amended_by if state.version > 1 else state.recorded_by
    if setting(conn, "four_eyes") == "on" and user == author:
        what = "amended" if state.version > 1 else "recorded"
        raise LabbookError(
            f"four-eyes approval is on: {user} {what} version {state.version} and cannot "
            "approve it; another person must", run=run, found=user)
    row = conn.execute(
        "SELECT res.json_sha256, res.json FROM results res JOIN current_reductions red"
        " ON red.id = res.reduction_id WHERE res.run_id = ? AND res.type = 'run'",
        (run_pk,)).fetchone()
    if row is None:
        raise LabbookError("the run has no current result to approve", run=run)
    error = json_of(row[1], f"result of run {run}").get("error")
    if error:
        raise LabbookError(f"a failed run cannot be approved ({error}): amend it or void it",
                           run=run)
    current = conn.execute("SELECT id, version FROM current_reductions WHERE sheet_id = ?",
                           (sheet_id,)).fetchone()
    plan = _Plan(sheet_id, current[0], current[1], None, ())
    with write_transaction(conn, path, crash_step="approve-commit"):
        entry = _record(conn, path, plan, run=run, run_pk=run_pk, action="approve",
                        version=state.version, reason=(note or "").strip(), fields={},
                        user=user, result_sha256=row[0], crash_prefix="approve-")
    crash_point("approve-committed")
    return entry


def void_run(conn: sqlite3.Connection, path: Path, run: str, *, reason: str,
             user: str) -> audit.AuditEntry:
    """Mark ``run`` void (audited) and re-reduce its sheet without it."""
    reason = _reason(reason, "voiding a run", run)

    def once() -> Any:
        run_pk, sheet_id = _run(conn, path, run)
        state = run_states(conn, [run])[run]
        if state.state == "void":
            raise LabbookError(f"run is already void (since {state.voided_utc}, by "
                               f"{state.voided_by})", run=run)
        plan = _sheet_plan(conn, sheet_id, void={run: True})
        with write_transaction(conn, path):
            return _record(conn, path, plan, run=run, run_pk=run_pk, action="void",
                           version=state.version, reason=reason, fields={}, user=user)

    return _retrying(once, run, path)


def restore_run(conn: sqlite3.Connection, path: Path, run: str, *, reason: str,
                user: str) -> audit.AuditEntry:
    """Undo a void (audited) and re-reduce the sheet with the run back in it; the run comes
    back as ``recorded`` (an earlier approval does not return)."""
    reason = _reason(reason, "restoring a run", run)

    def once() -> Any:
        run_pk, sheet_id = _run(conn, path, run)
        state = run_states(conn, [run])[run]
        if state.state != "void":
            raise LabbookError(f"run is not void (it is {state.state}); nothing to restore",
                               run=run)
        plan = _sheet_plan(conn, sheet_id, void={run: False})
        with write_transaction(conn, path):
            return _record(conn, path, plan, run=run, run_pk=run_pk, action="restore",
                           version=state.version, reason=reason, fields={}, user=user)


    return _retrying(once, run, path)
