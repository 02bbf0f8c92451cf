"""The append-only, hash-chained audit log of a lab book.

Every change to a lab book appends one entry: UTC timestamp, user, action, object, reason,
details (canonical JSON), the previous entry's hash and the entry's own hash::

    hash = SHA-256( canonical JSON of [id, ts_utc, user, action, object, reason,
                                       details, prev_hash] )

with canonical JSON = ``json.dumps(..., sort_keys=True, separators=(",", ":"),
ensure_ascii=False)`` encoded as UTF-8. The first entry's ``prev_hash`` is 64 zeros. Editing
any earlier entry breaks its own hash and every link after it; SQLite triggers also reject
UPDATE and DELETE on the table, so tampering with plain SQLite first needs the triggers
dropped — and :func:`check_chain` still catches it. The hash of the newest entry is kept in
``meta`` (``audit_head``) so that cutting entries off the end is detected too.
"""

from __future__ import annotations

import getpass
import hashlib
import json
import os
import sqlite3
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any

from calwork.core.errors import LabbookIntegrityError
from calwork.core.results import jsonable

__all__ = ["GENESIS_HASH", "AuditEntry", "append", "canonical_json", "check_chain",
           "current_user", "entry_hash", "utc_now"]

#: ``prev_hash`` of the first entry.
GENESIS_HASH = "0" * 64


def canonical_json(obj: Any) -> str:
    """The canonical JSON text of ``obj`` (sorted keys, no spaces, NaN refused)."""
    return json.dumps(jsonable(obj), sort_keys=True, separators=(",", ":"),
                      ensure_ascii=False, allow_nan=False)


def utc_now() -> str:
    """The current time, UTC, ISO 8601 with microseconds and a ``Z``."""
    return datetime.now(UTC).isoformat(timespec="microseconds").replace("+00:00", "Z")


def current_user(explicit: str | None = None) -> str:
    """``explicit``, else ``$CALWORK_USER``, else the OS login name (else ``'unknown'``)."""
    if explicit:
        return explicit
    if os.environ.get("CALWORK_USER"):
        return os.environ["CALWORK_USER"]
    try:
        return getpass.getuser()
    except (OSError, KeyError):  # no login name (some containers)
        return "unknown"


@dataclass(frozen=True, kw_only=True)
class AuditEntry:
    """One audit-log entry."""

    id: int
    ts_utc: str
    user: str
    action: str
    object: str
    reason: str
    details: dict[str, Any]
    prev_hash: str
    hash: str

    def to_dict(self) -> dict[str, Any]:
        return {
            "id": self.id, "ts_utc": self.ts_utc, "user": self.user, "action": self.action,
            "object": self.object, "reason": self.reason, "details": self.details,
            "prev_hash": self.prev_hash, "hash": self.hash,
        }

    @classmethod
    def from_row(cls, row: tuple) -> AuditEntry:
        id_, ts, user, action, obj, reason, details, prev, h = row
        return cls(id=id_, ts_utc=ts, user=user, action=action, object=obj, reason=reason,
                   details=json_of(details, f"audit entry #{id_}", column="details"),
                   prev_hash=prev, hash=h)


def json_of(text: str | None, where: str, *, column: str = "json") -> Any:
    """A stored JSON text, or :class:`LabbookIntegrityError` naming the damaged row."""
    if text is None:
        return None
    try:
        return json.loads(text)
    except (ValueError, TypeError) as exc:
        raise LabbookIntegrityError(f"{where}: the stored {column} is not valid JSON ({exc})",
                                    column=column, expected="the JSON calwork wrote") from None


def entry_hash(id_: int, ts_utc: str, user: str, action: str, obj: str, reason: str,
               details_text: str, prev_hash: str) -> str:
    """SHA-256 (hex) of an entry's canonical serialisation (see the module docstring)."""
    payload = json.dumps([id_, ts_utc, user, action, obj, reason, details_text, prev_hash],
                         separators=(",", ":"), ensure_ascii=False)
    return hashlib.sha256(payload.encode("utf-8")).hexdigest()


_COLUMNS = "id, ts_utc, user, action, object, reason, details, prev_hash, hash"


def append(conn: sqlite3.Connection, *, user: str, action: str, obj: str,
           reason: str = "", details: dict[str, Any] | None = None,
           ts_utc: str | None = None) -> AuditEntry:
    """Append one entry (the caller holds the write transaction)."""
    last = conn.execute("SELECT id, hash FROM audit ORDER BY id DESC LIMIT 1").fetchone()
    id_, prev = (1, GENESIS_HASH) if last is None else (last[0] + 1, last[1])
    ts = ts_utc or utc_now()
    text = canonical_json(details or {})
    h = entry_hash(id_, ts, user, action, obj, reason, text, prev)
    conn.execute(
        f"INSERT INTO audit ({_COLUMNS}) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
        (id_, ts, user, action, obj, reason, text, prev, h),
    )
    conn.execute("INSERT OR REPLACE INTO meta (key, value) VALUES ('audit_head', ?)", (h,))
    return AuditEntry(id=id_, ts_utc=ts, user=user, action=action, object=obj,
                      reason=reason, details=json.loads(text), prev_hash=prev, hash=h)


def entries(conn: sqlite3.Connection, *, objects: list[str] | None = None) -> list[AuditEntry]:
    """Audit entries in order (all, or those whose object is one of ``objects``)."""
    if objects is None:
        rows = conn.execute(f"SELECT {_COLUMNS} FROM audit ORDER BY id").fetchall()
    else:
        marks = ",".join("?" * len(objects))
        rows = conn.execute(
            f"SELECT {_COLUMNS} FROM audit WHERE object IN ({marks}) ORDER BY id", objects
        ).fetchall()
    return [AuditEntry.from_row(r) for r in rows]


def check_chain(conn: sqlite3.Connection) -> list[str]:
    """Problems found in the audit chain (empty when it verifies), naming the row id."""
    problems = []
    prev = GENESIS_HASH
    expected_id = 1
    last_hash = None
    for row in conn.execute(f"SELECT {_COLUMNS} FROM audit ORDER BY id"):
        id_, ts, user, action, obj, reason, details, prev_hash, h = row
        if id_ != expected_id:
            problems.append(f"audit row {id_}: expected row id {expected_id} "
                            "(rows missing or renumbered)")
        if prev_hash != prev:
            problems.append(f"audit row {id_}: prev_hash does not match the hash of the "
                            "entry before it (chain broken)")
        if entry_hash(id_, ts, user, action, obj, reason, details, prev_hash) != h:
            problems.append(f"audit row {id_}: entry hash does not match its contents "
                            f"(row edited: {action} {obj})")
        prev = h
        expected_id = id_ + 1
        last_hash = h
    head = conn.execute("SELECT value FROM meta WHERE key = 'audit_head'").fetchone()
    if head is not None and head[0] != last_hash:
        problems.append("audit log: the newest entry is not the recorded head "
                        "(entries removed from the end or the head edited)")
    return problems
