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
   ``files`` rows) and the same ``runs`` rows, and every void has its ``void`` audit entry
   (and vice versa).
"""

from __future__ import annotations

import sqlite3
from dataclasses import dataclass, field
from typing import Any

from calwork.errors import LabbookIntegrityError
from calwork.labbook import audit
from calwork.labbook.blobs import unpack
from calwork.labbook.ingest import results_digest, runs_digest, stored_bundle_digest
from calwork.labbook.schema import EXPECTED_TRIGGERS
from calwork.provenance import sha256_bytes

__all__ = ["VerifyReport", "verify"]


@dataclass(frozen=True, kw_only=True)
class VerifyReport:
    """Outcome of ``labbook verify``."""

    problems: tuple[str, ...]
    counts: dict[str, int] = field(default_factory=dict)

    @property
    def ok(self) -> bool:
        return not self.problems

    def to_dict(self) -> dict[str, Any]:
        return {"ok": self.ok, "problems": list(self.problems), "counts": dict(self.counts)}

    def report(self) -> str:
        checked = ", ".join(f"{n} {k}" for k, n in self.counts.items())
        if self.ok:
            return f"lab book verifies: {checked}"
        tail = (f"lab book does NOT verify: {len(self.problems)} problem(s); "
                f"checked {checked}")
        return "\n".join([*self.problems, tail])


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
    key = {"add": "sheet", "void": "run"}[action]
    return {e.details.get(key): e for e in entries if e.action == action}


def _check_results(conn: sqlite3.Connection, entries: list[audit.AuditEntry],
                   problems: list[str]) -> int:
    by_reduction = {e.details.get("reduction"): e for e in entries
                    if e.action in ("add", "void")}
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
    for red_id, text, digest, sheet_id in conn.execute(
            "SELECT id, json, json_sha256, sheet_id FROM reductions"):
        if sha256_bytes(text.encode()) != digest:
            problems.append(f"reductions row {red_id}: JSON does not match its SHA-256")
        entry = by_reduction.get(red_id)
        if entry is None:
            problems.append(f"reductions row {red_id} (sheet #{sheet_id}): no audit entry "
                            "records it")
        elif entry.details.get("results_sha256") != results_digest(text, hashes.get(red_id, [])):
            problems.append(f"reductions row {red_id} (sheet #{sheet_id}): results differ "
                            f"from those recorded by audit row {entry.id}")
    return n


def _check_records(conn: sqlite3.Connection, entries: list[audit.AuditEntry],
                   problems: list[str]) -> tuple[int, int, int]:
    adds = _audit_by(entries, "add")
    n_sheets = 0
    for sheet_id, bundle in conn.execute("SELECT id, bundle_sha256 FROM sheets"):
        n_sheets += 1
        entry = adds.get(sheet_id)
        if entry is None:
            problems.append(f"sheets row {sheet_id}: no audit entry records it")
            continue
        recorded = entry.details.get("bundle_sha256")
        if recorded != bundle or recorded != stored_bundle_digest(conn, sheet_id):
            problems.append(f"sheets row {sheet_id}: raw files differ from those recorded by "
                            f"audit row {entry.id}")
        if "runs_sha256" in entry.details and \
                entry.details["runs_sha256"] != runs_digest(conn, sheet_id):
            problems.append(f"runs of sheet #{sheet_id}: rows differ from those recorded by "
                            f"audit row {entry.id}")
    voids = _audit_by(entries, "void")
    seen = set()
    n_voids = 0
    for run, audit_id in conn.execute(
            "SELECT r.run, v.audit_id FROM run_voids v JOIN runs r ON r.id = v.run_id"):
        n_voids += 1
        seen.add(run)
        entry = voids.get(run)
        if entry is None or entry.id != audit_id:
            problems.append(f"run_voids row for run {run!r}: no matching void audit entry")
    for run, entry in voids.items():
        if run not in seen:
            problems.append(f"audit row {entry.id}: voids run {run!r} but the run is not void")
    n_runs = conn.execute("SELECT COUNT(*) FROM runs").fetchone()[0]
    return n_sheets, n_runs, n_voids


def verify(conn: sqlite3.Connection) -> VerifyReport:
    """Run every check (see the module docstring); never raises for a failed check."""
    problems: list[str] = []
    for (msg,) in conn.execute("PRAGMA quick_check"):
        if msg != "ok":
            problems.append(f"sqlite quick_check: {msg}")
    triggers = {n for (n,) in conn.execute(
        "SELECT name FROM sqlite_master WHERE type = 'trigger'")}
    problems += [f"trigger {t} is missing (insert-only protection removed)"
                 for t in sorted(EXPECTED_TRIGGERS - triggers)]
    problems += [f"unexpected trigger {t}" for t in sorted(triggers - EXPECTED_TRIGGERS)]
    problems += audit.check_chain(conn)
    entries = audit.entries(conn)
    n_blobs = _check_blobs(conn, problems)
    n_results = _check_results(conn, entries, problems)
    n_sheets, n_runs, n_voids = _check_records(conn, entries, problems)
    counts = {"audit entries": len(entries), "blobs": n_blobs, "sheets": n_sheets,
              "runs": n_runs, "void runs": n_voids, "results": n_results}
    return VerifyReport(problems=tuple(problems), counts=counts)
