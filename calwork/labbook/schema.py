"""The lab book's SQLite schema and its forward migrations.

A calwork lab book is one SQLite file recognised by three marks: ``PRAGMA application_id``
(:data:`APPLICATION_ID`), a ``meta`` row ``magic = calwork-labbook`` and ``PRAGMA
user_version`` (the schema version). A new file is built by applying every migration in
:data:`MIGRATIONS` from version 0, so the migration path is exercised on every creation.

Tables (all insert-only except ``meta``; SQLite triggers reject UPDATE and DELETE):

``blobs``        raw file bytes, content-addressed by the SHA-256 of the *uncompressed* bytes
``sheets``       one row per recorded run sheet (its blob, original path, parsed rows)
``files``        the sheet's folder layout: sheet and log files by relative path, with blob hash
``runs``         one row per run (run ids are unique in a lab book)
``run_events``   the run's life: ``amend`` (a new version with overridden sheet cells),
                 ``approve``, ``void`` and ``restore``, each with who, when and why (v3; the
                 v2 ``run_voids`` rows moved here)
``settings``     lab-book settings (e.g. four-eyes approval), newest row per key wins (v3)
``reductions``   one row per reduction of a sheet; ``version`` grows with every re-reduction
                 (void, restore, amendment)
``results``      RunResult / CalibrationResult / SampleResult JSON with method and constants
``calibrations`` energy equivalents per calorimeter with the run range and start of validity
``audit``        the append-only, hash-chained audit log
"""

from __future__ import annotations

import json
import sqlite3
from collections.abc import Callable

__all__ = [
    "APPLICATION_ID",
    "EXPECTED_TRIGGERS",
    "MAGIC",
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "migrate",
]

#: ``PRAGMA application_id`` of a calwork lab book (the ASCII bytes ``CWLB``).
APPLICATION_ID = 0x43574C42
#: Value of the ``meta`` row ``magic``.
MAGIC = "calwork-labbook"
#: Schema version written by this calwork.
SCHEMA_VERSION = 3

_V1 = """
CREATE TABLE meta (key TEXT PRIMARY KEY, value TEXT NOT NULL);
CREATE TABLE blobs (
    sha256 TEXT PRIMARY KEY CHECK (length(sha256) = 64),
    size INTEGER NOT NULL CHECK (size >= 0),
    codec TEXT NOT NULL CHECK (codec IN ('zlib', 'raw')),
    data BLOB NOT NULL
);
CREATE TABLE sheets (
    id INTEGER PRIMARY KEY,
    bundle_sha256 TEXT NOT NULL UNIQUE,
    sha256 TEXT NOT NULL REFERENCES blobs(sha256),
    file_name TEXT NOT NULL,
    original_path TEXT NOT NULL,
    rows_json TEXT NOT NULL,
    added_utc TEXT NOT NULL,
    added_by TEXT NOT NULL
);
CREATE TABLE files (
    id INTEGER PRIMARY KEY,
    sheet_id INTEGER NOT NULL REFERENCES sheets(id),
    role TEXT NOT NULL CHECK (role IN ('sheet', 'log')),
    rel_path TEXT NOT NULL,
    original_path TEXT NOT NULL,
    sha256 TEXT NOT NULL REFERENCES blobs(sha256),
    size INTEGER NOT NULL,
    UNIQUE (sheet_id, rel_path)
);
CREATE TABLE runs (
    id INTEGER PRIMARY KEY,
    run TEXT NOT NULL UNIQUE,
    sheet_id INTEGER NOT NULL REFERENCES sheets(id),
    line INTEGER,
    kind TEXT NOT NULL,
    calorimeter TEXT,
    sample TEXT,
    date TEXT,
    date_key TEXT,
    log_file_id INTEGER REFERENCES files(id),
    row_json TEXT NOT NULL
);
CREATE INDEX runs_sheet ON runs (sheet_id);
CREATE INDEX runs_calorimeter ON runs (calorimeter, date_key);
CREATE TABLE run_voids (
    run_id INTEGER PRIMARY KEY REFERENCES runs(id),
    reason TEXT NOT NULL CHECK (length(reason) > 0),
    voided_utc TEXT NOT NULL,
    voided_by TEXT NOT NULL,
    audit_id INTEGER NOT NULL
);
CREATE TABLE reductions (
    id INTEGER PRIMARY KEY,
    sheet_id INTEGER NOT NULL REFERENCES sheets(id),
    version INTEGER NOT NULL,
    method TEXT NOT NULL,
    calwork_version TEXT NOT NULL,
    runs_json TEXT NOT NULL,
    full_sheet INTEGER NOT NULL,
    json TEXT NOT NULL,
    json_sha256 TEXT NOT NULL,
    created_utc TEXT NOT NULL,
    created_by TEXT NOT NULL,
    UNIQUE (sheet_id, version)
);
CREATE VIEW current_reductions AS
    SELECT r.* FROM reductions r
    WHERE r.version = (SELECT MAX(r2.version) FROM reductions r2 WHERE r2.sheet_id = r.sheet_id);
CREATE TABLE results (
    id INTEGER PRIMARY KEY,
    reduction_id INTEGER NOT NULL REFERENCES reductions(id),
    seq INTEGER NOT NULL,
    type TEXT NOT NULL CHECK (type IN ('run', 'calibration', 'sample')),
    key TEXT NOT NULL,
    run_id INTEGER REFERENCES runs(id),
    method TEXT NOT NULL,
    calwork_version TEXT NOT NULL,
    constants_json TEXT NOT NULL,
    json TEXT NOT NULL,
    json_sha256 TEXT NOT NULL,
    UNIQUE (reduction_id, seq)
);
CREATE INDEX results_run ON results (run_id);
CREATE TABLE audit (
    id INTEGER PRIMARY KEY,
    ts_utc TEXT NOT NULL,
    user TEXT NOT NULL,
    action TEXT NOT NULL,
    object TEXT NOT NULL,
    reason TEXT NOT NULL,
    details TEXT NOT NULL,
    prev_hash TEXT NOT NULL,
    hash TEXT NOT NULL UNIQUE
);
CREATE INDEX audit_object ON audit (object);
CREATE TRIGGER audit_no_update BEFORE UPDATE ON audit
    BEGIN SELECT RAISE(ABORT, 'calwork lab book: the audit log is append-only'); END;
CREATE TRIGGER audit_no_delete BEFORE DELETE ON audit
    BEGIN SELECT RAISE(ABORT, 'calwork lab book: the audit log is append-only'); END;
"""

#: Tables made insert-only by version 2 (the audit table is protected from version 1).
_IMMUTABLE = (
    "blobs", "sheets", "files", "runs", "run_voids", "reductions", "results", "calibrations",
)


def _insert_only(tables: tuple[str, ...]) -> str:
    return "".join(
        f"""
CREATE TRIGGER {t}_no_update BEFORE UPDATE ON {t}
    BEGIN SELECT RAISE(ABORT, 'calwork lab book: {t} rows are never changed'); END;
CREATE TRIGGER {t}_no_delete BEFORE DELETE ON {t}
    BEGIN SELECT RAISE(ABORT, 'calwork lab book: {t} rows are never deleted'); END;
"""
        for t in tables
    )


_V2 = """
CREATE TABLE calibrations (
    id INTEGER PRIMARY KEY,
    reduction_id INTEGER NOT NULL REFERENCES reductions(id),
    result_id INTEGER NOT NULL REFERENCES results(id),
    calorimeter TEXT NOT NULL,
    energy_equivalent_J_per_K REAL,
    u_energy_equivalent_J_per_K REAL,
    n_runs INTEGER,
    valid_from TEXT,
    first_run TEXT,
    last_run TEXT
);
CREATE INDEX calibrations_calorimeter ON calibrations (calorimeter, valid_from);
""" + _insert_only(_IMMUTABLE)


#: Tables added (insert-only) by version 3.
_IMMUTABLE_V3 = ("run_events", "settings")

_V3 = """
CREATE TABLE run_events (
    id INTEGER PRIMARY KEY,
    run_id INTEGER NOT NULL REFERENCES runs(id),
    action TEXT NOT NULL CHECK (action IN ('amend', 'approve', 'void', 'restore')),
    version INTEGER NOT NULL CHECK (version >= 1),
    reason TEXT NOT NULL,
    fields_json TEXT NOT NULL,
    reduction_id INTEGER REFERENCES reductions(id),
    result_sha256 TEXT,
    ts_utc TEXT NOT NULL,
    user TEXT NOT NULL,
    audit_id INTEGER NOT NULL UNIQUE
);
CREATE INDEX run_events_run ON run_events (run_id, id);
CREATE TABLE settings (
    id INTEGER PRIMARY KEY,
    key TEXT NOT NULL,
    value TEXT NOT NULL,
    ts_utc TEXT NOT NULL,
    user TEXT NOT NULL,
    audit_id INTEGER NOT NULL UNIQUE
);
""" + _insert_only(_IMMUTABLE_V3)

#: Triggers every current lab book must have (``verify`` reports missing ones).
EXPECTED_TRIGGERS = frozenset(
    ["audit_no_update", "audit_no_delete"]
    + [f"{t}_no_{op}" for t in (*_IMMUTABLE, *_IMMUTABLE_V3) if t != "run_voids"
       for op in ("update", "delete")]
)


def _migrate_0_to_1(conn: sqlite3.Connection) -> None:
    for statement in _statements(_V1):
        conn.execute(statement)


def _migrate_1_to_2(conn: sqlite3.Connection) -> None:
    for statement in _statements(_V2):
        conn.execute(statement)
    # Backfill the calibrations of every stored reduction from its calibration results.
    rows = conn.execute(
        "SELECT id, reduction_id, json FROM results WHERE type = 'calibration' ORDER BY id"
    ).fetchall()
    for result_id, reduction_id, text in rows:
        cal = json.loads(text)
        runs = list(cal.get("runs") or [])
        dates = [
            d for (d,) in conn.execute(
                f"SELECT date_key FROM runs WHERE run IN ({','.join('?' * len(runs))})", runs
            )
            if d is not None
        ] if runs else []
        conn.execute(
            "INSERT INTO calibrations (reduction_id, result_id, calorimeter,"
            " energy_equivalent_J_per_K, u_energy_equivalent_J_per_K, n_runs, valid_from,"
            " first_run, last_run) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (
                reduction_id, result_id, cal.get("calorimeter") or "",
                cal.get("energy_equivalent_J_per_K"), cal.get("u_energy_equivalent_J_per_K"),
                cal.get("n_runs"), min(dates) if dates else None,
                runs[0] if runs else None, runs[-1] if runs else None,
            ),
        )


def _migrate_2_to_3(conn: sqlite3.Connection) -> None:
    for statement in _statements(_V3):
        conn.execute(statement)
    # the voids of version 2 become the first events of their runs (same who, when, why and
    # audit entry), and their table goes: a void can now be followed by a restore
    conn.execute(
        "INSERT INTO run_events (run_id, action, version, reason, fields_json, reduction_id,"
        " result_sha256, ts_utc, user, audit_id) SELECT run_id, 'void', 1, reason, '{}', NULL,"
        " NULL, voided_utc, voided_by, audit_id FROM run_voids ORDER BY audit_id")
    conn.execute("DROP TRIGGER run_voids_no_update")
    conn.execute("DROP TRIGGER run_voids_no_delete")
    conn.execute("DROP TABLE run_voids")


def _statements(script: str) -> list[str]:
    """Split a DDL script into statements (triggers contain ``;`` inside BEGIN ... END)."""
    out, buf = [], []
    for line in script.strip().splitlines():
        buf.append(line)
        text = "\n".join(buf).strip()
        if text.endswith(";") and (not text.upper().startswith("CREATE TRIGGER")
                                   or text.upper().endswith("END;")):
            out.append(text)
            buf = []
    if "".join(buf).strip():
        out.append("\n".join(buf))
    return out


#: Forward migrations: ``(version reached, description, function(conn))``, applied in order
#: inside one write transaction.
MIGRATIONS: tuple[tuple[int, str, Callable[[sqlite3.Connection], None]], ...] = (
    (1, "initial schema", _migrate_0_to_1),
    (2, "calibrations table with validity; insert-only triggers on every table",
     _migrate_1_to_2),
    (3, "run life cycle: amendments, approvals, voids and restores as run events; settings",
     _migrate_2_to_3),
)


def migrate(conn: sqlite3.Connection, from_version: int, to_version: int = SCHEMA_VERSION,
            ) -> list[tuple[int, str]]:
    """Apply the migrations from ``from_version`` up to ``to_version`` (caller holds the
    write transaction); returns the ``(version, description)`` steps applied."""
    done = []
    for version, description, step in MIGRATIONS:
        if from_version < version <= to_version:
            step(conn)
            conn.execute(f"PRAGMA user_version = {int(version)}")
            done.append((version, description))
    return done
