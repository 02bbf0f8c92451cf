"""Lab book store: recognising files, creation, migration, blobs, audit chain, triggers."""

from __future__ import annotations

import json
import sqlite3
import zlib

import pytest

from calwork.core.errors import (
    LabbookError,
    LabbookFormatError,
    LabbookIntegrityError,
)
from calwork.core.provenance import sha256_bytes
from calwork.labbook import audit, open_labbook, schema
from calwork.labbook.blobs import get_blob, put_blob, safe_relative_path, write_inside
from calwork.labbook.ingest import bundle_digest, results_digest
from calwork.labbook.store import resolve_labbook_path


def test_new_labbook_is_marked_and_versioned(tmp_path):
    path = tmp_path / "book.sqlite"
    with open_labbook(path, create=True, user="alice") as book:
        conn = book.connection
        assert conn.execute("PRAGMA application_id").fetchone()[0] == schema.APPLICATION_ID
        assert conn.execute("PRAGMA user_version").fetchone()[0] == schema.SCHEMA_VERSION
        assert conn.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        # synchronous=FULL is 2 (SQLite documentation of PRAGMA synchronous)
        assert conn.execute("PRAGMA synchronous").fetchone()[0] == 2
        magic = conn.execute("SELECT value FROM meta WHERE key = 'magic'").fetchone()[0]
        assert magic == schema.MAGIC
        (entry,) = book.audit_log()
        assert (entry.action, entry.user, entry.prev_hash) == ("create", "alice",
                                                              audit.GENESIS_HASH)
        assert book.verify().ok
    # nothing but the lab book is left in the folder (no temporary creation files)
    assert sorted(p.name for p in tmp_path.iterdir()) == ["book.sqlite"]


def test_reading_commands_do_not_create(tmp_path):
    with pytest.raises(LabbookError, match="no lab book here"):
        open_labbook(tmp_path / "missing.sqlite")
    assert not (tmp_path / "missing.sqlite").exists()


def test_path_resolution_order(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    monkeypatch.delenv("CALWORK_LABBOOK", raising=False)
    assert resolve_labbook_path(None).name == "calwork-labbook.sqlite"
    monkeypatch.setenv("CALWORK_LABBOOK", str(tmp_path / "env.sqlite"))
    assert resolve_labbook_path(None) == tmp_path / "env.sqlite"
    assert resolve_labbook_path(tmp_path / "x.sqlite") == tmp_path / "x.sqlite"


def test_user_resolution(monkeypatch):
    monkeypatch.setenv("CALWORK_USER", "bob")
    assert audit.current_user("carol") == "carol"
    assert audit.current_user(None) == "bob"
    monkeypatch.delenv("CALWORK_USER")
    assert audit.current_user(None)  # the OS login name (or 'unknown')


def _unchanged(path, action):
    before = path.read_bytes()
    with pytest.raises(LabbookFormatError) as info:
        action()
    assert path.read_bytes() == before  # never overwritten
    return str(info.value)


def test_foreign_sqlite_database_is_refused(tmp_path):
    path = tmp_path / "other.sqlite"
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE customers (id INTEGER PRIMARY KEY, name TEXT)")
    conn.execute("INSERT INTO customers (name) VALUES ('x')")
    conn.commit()
    conn.close()
    msg = _unchanged(path, lambda: open_labbook(path, create=True))
    assert "another application" in msg
    assert "other.sqlite" in msg


def test_sqlite_with_our_id_but_no_magic_is_refused(tmp_path):
    path = tmp_path / "fake.sqlite"
    conn = sqlite3.connect(path)
    conn.execute(f"PRAGMA application_id = {schema.APPLICATION_ID}")
    conn.execute("CREATE TABLE t (x)")
    conn.commit()
    conn.close()
    assert "magic" in _unchanged(path, lambda: open_labbook(path))


def test_text_and_empty_files_are_refused(tmp_path):
    text = tmp_path / "notes.sqlite"
    text.write_text("run,kind\ncal-1,calibration\n")
    assert "not an SQLite database" in _unchanged(text, lambda: open_labbook(text, create=True))
    empty = tmp_path / "empty.sqlite"
    empty.write_bytes(b"")
    assert "empty file" in _unchanged(empty, lambda: open_labbook(empty, create=True))


def test_truncated_labbook_is_refused(tmp_path):
    path = tmp_path / "book.sqlite"
    with open_labbook(path, create=True) as book:
        from calwork.labbook.store import write_transaction

        with write_transaction(book.connection):  # fill pages so truncation cuts content
            for i in range(40):
                put_blob(book.connection, bytes(range(256)) * 64 + i.to_bytes(4, "big"))
    data = path.read_bytes()
    assert len(data) > 8 * 4096
    for cut in (len(data) // 2, 4096 * 3, 1000):
        path.write_bytes(data[:cut])
        msg = _unchanged(path, lambda: open_labbook(path))
        assert "truncated" in msg or "corrupt" in msg


def test_newer_schema_is_refused(tmp_path):
    path = tmp_path / "book.sqlite"
    open_labbook(path, create=True).close()
    conn = sqlite3.connect(path)
    conn.execute(f"PRAGMA user_version = {schema.SCHEMA_VERSION + 1}")
    conn.commit()
    conn.close()
    assert "newer calwork" in _unchanged(path, lambda: open_labbook(path))


def _v1_labbook(path):
    """A version-1 lab book with one sheet, one calibration run and its calibration."""
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA journal_mode = WAL")
    conn.execute("BEGIN IMMEDIATE")
    conn.execute(f"PRAGMA application_id = {schema.APPLICATION_ID}")
    schema.migrate(conn, 0, 1)
    conn.execute("INSERT INTO meta VALUES ('magic', ?)", (schema.MAGIC,))
    audit.append(conn, user="old", action="create", obj="labbook",
                 details={"schema_version": 1})
    sheet = b"run,kind,log\ncal-1,calibration,cal-1.csv\n"
    log = b"time_s,temperature_C\n0,25\n6,25.001\n"
    for data in (sheet, log):
        put_blob(conn, data)
    bundle = bundle_digest([
        {"role": "sheet", "rel_path": "runs.csv", "sha256": sha256_bytes(sheet)},
        {"role": "log", "rel_path": "cal-1.csv", "sha256": sha256_bytes(log)}])
    conn.execute("INSERT INTO sheets VALUES (1, ?, ?, 'runs.csv', '/old/runs.csv', '[]',"
                 " '2024-01-01T00:00:00Z', 'old')", (bundle, sha256_bytes(sheet)))
    conn.execute("INSERT INTO files VALUES (1, 1, 'sheet', 'runs.csv', '/old/runs.csv', ?, ?)",
                 (sha256_bytes(sheet), len(sheet)))
    conn.execute("INSERT INTO files VALUES (2, 1, 'log', 'cal-1.csv', '/old/cal-1.csv', ?, ?)",
                 (sha256_bytes(log), len(log)))
    conn.execute("INSERT INTO runs VALUES (1, 'cal-1', 1, 2, 'calibration', 'cal-A', NULL,"
                 " '2024-01-02', '2024-01-02', 2, '{}')")
    summary = audit.canonical_json({"method": "newton-fit"})
    conn.execute("INSERT INTO reductions VALUES (1, 1, 1, 'newton-fit', '0.0.1', '[\"cal-1\"]',"
                 " 1, ?, ?, '2024-01-01T00:00:00Z', 'old')",
                 (summary, sha256_bytes(summary.encode())))
    records = [("run", "cal-1", 1, {"run": "cal-1", "energy_equivalent_J_per_K": 10000.5}),
               ("calibration", "cal-A", None,
                {"calorimeter": "cal-A", "energy_equivalent_J_per_K": 10000.5,
                 "u_energy_equivalent_J_per_K": 1.5, "n_runs": 1, "runs": ["cal-1"]})]
    hashes = []
    for seq, (kind, key, run_id, rec) in enumerate(records):
        text = audit.canonical_json(rec)
        hashes.append(sha256_bytes(text.encode()))
        conn.execute("INSERT INTO results (reduction_id, seq, type, key, run_id, method,"
                     " calwork_version, constants_json, json, json_sha256)"
                     " VALUES (1, ?, ?, ?, ?, 'newton-fit', '0.0.1', '{}', ?, ?)",
                     (seq, kind, key, run_id, text, hashes[-1]))
    audit.append(conn, user="old", action="add", obj="sheet:1",
                 details={"sheet": 1, "bundle_sha256": bundle, "reduction": 1,
                          "results_sha256": results_digest(summary, hashes)})
    conn.execute("COMMIT")
    conn.close()


def test_migrating_a_version_1_labbook(tmp_path):
    path = tmp_path / "v1.sqlite"
    _v1_labbook(path)
    with open_labbook(path, user="migrator") as book:
        conn = book.connection
        assert conn.execute("PRAGMA user_version").fetchone()[0] == schema.SCHEMA_VERSION
        (cal,) = book.calibrations()
        assert cal["calorimeter"] == "cal-A"
        assert cal["energy_equivalent_J_per_K"] == 10000.5
        assert cal["valid_from"] == "2024-01-02"  # backfilled from the run's date
        log = book.audit_log()
        assert [e.action for e in log] == ["create", "add", "migrate"]
        assert log[-1].details["from"] == 1
        assert log[-1].details["to"] == schema.SCHEMA_VERSION
        assert log[-1].user == "migrator"
        report = book.verify()
        assert report.ok, report.problems
        with pytest.raises(sqlite3.IntegrityError, match="never changed"):
            conn.execute("UPDATE runs SET kind = 'combustion'")
    with open_labbook(path) as book:  # a second open does not migrate again
        assert [e.action for e in book.audit_log()].count("migrate") == 1


def test_blobs_are_content_addressed_and_compressed(tmp_path):
    with open_labbook(tmp_path / "b.sqlite", create=True) as book:
        conn = book.connection
        text = b"time_s,temperature_C\n" + b"".join(
            f"{i * 6.0:.1f},{25 + i * 1e-4:.6f}\n".encode() for i in range(2000))
        noise = bytes(range(256)) * 4
        conn.execute("BEGIN IMMEDIATE")
        h1 = put_blob(conn, text)
        assert put_blob(conn, text) == h1  # stored once
        h2 = put_blob(conn, noise)
        conn.execute("COMMIT")
        assert h1 == sha256_bytes(text)  # the hash of the uncompressed bytes
        size, codec, stored = conn.execute(
            "SELECT size, codec, length(data) FROM blobs WHERE sha256 = ?", (h1,)).fetchone()
        assert (size, codec) == (len(text), "zlib")
        assert stored < len(text) / 3
        assert conn.execute("SELECT COUNT(*) FROM blobs").fetchone()[0] == 2
        assert get_blob(conn, h1) == text
        assert get_blob(conn, h2) == noise
        with pytest.raises(LabbookIntegrityError, match="missing"):
            get_blob(conn, "0" * 64)


def test_triggers_reject_update_and_delete(tmp_path):
    with open_labbook(tmp_path / "t.sqlite", create=True) as book:
        conn = book.connection
        with pytest.raises(sqlite3.IntegrityError, match="append-only"):
            conn.execute("UPDATE audit SET user = 'mallory'")
        with pytest.raises(sqlite3.IntegrityError, match="append-only"):
            conn.execute("DELETE FROM audit")
        conn.execute("BEGIN IMMEDIATE")
        put_blob(conn, b"abc")
        conn.execute("COMMIT")
        with pytest.raises(sqlite3.IntegrityError, match="never"):
            conn.execute("UPDATE blobs SET data = x'00'")
        with pytest.raises(sqlite3.IntegrityError, match="never deleted"):
            conn.execute("DELETE FROM blobs")


def test_audit_chain_detects_edits_even_without_triggers(tmp_path):
    path = tmp_path / "a.sqlite"
    with open_labbook(path, create=True, user="u") as book:
        from calwork.labbook.store import write_transaction

        with write_transaction(book.connection):
            for i in range(4):
                audit.append(book.connection, user="u", action="note", obj=f"thing:{i}",
                             details={"i": i})
        assert audit.check_chain(book.connection) == []
    conn = sqlite3.connect(path)  # plain SQLite, as someone tampering would
    conn.execute("DROP TRIGGER audit_no_update")
    conn.execute("UPDATE audit SET details = ? WHERE id = 3", (json.dumps({"i": 99}),))
    conn.commit()
    conn.close()
    with open_labbook(path) as book:
        problems = book.verify().problems
    assert any(p.startswith("audit row 3:") and "edited" in p for p in problems)
    assert any("trigger audit_no_update is missing" in p for p in problems)


def test_audit_chain_detects_removed_last_entry(tmp_path):
    path = tmp_path / "a.sqlite"
    with open_labbook(path, create=True) as book:
        from calwork.labbook.store import write_transaction

        with write_transaction(book.connection):
            audit.append(book.connection, user="u", action="note", obj="x")
    conn = sqlite3.connect(path)
    conn.execute("DROP TRIGGER audit_no_delete")
    conn.execute("DELETE FROM audit WHERE id = (SELECT MAX(id) FROM audit)")
    conn.commit()
    conn.close()
    with open_labbook(path) as book:
        assert any("removed from the end" in p for p in book.verify().problems)


def test_entry_hash_is_sha256_of_canonical_serialisation():
    # independent recomputation with hashlib over the documented serialisation
    import hashlib

    details = audit.canonical_json({"b": 1, "a": [1.5, None]})
    assert details == '{"a":[1.5,null],"b":1}'
    payload = json.dumps([7, "2024-01-01T00:00:00.000000Z", "u", "add", "sheet:1", "", details,
                          "0" * 64], separators=(",", ":"), ensure_ascii=False)
    expected = hashlib.sha256(payload.encode("utf-8")).hexdigest()
    assert audit.entry_hash(7, "2024-01-01T00:00:00.000000Z", "u", "add", "sheet:1", "",
                            details, "0" * 64) == expected


@pytest.mark.parametrize("bad", ["", "/etc/passwd", "../up.csv", "logs/../../x", "a//b",
                                 "C:/x.csv", "c:x", "logs\\x.csv", "./x.csv", "x\x00y"])
def test_stored_relative_paths_are_sanitised(bad):
    with pytest.raises(LabbookIntegrityError, match="plain relative path"):
        safe_relative_path(bad)


def test_write_inside_never_leaves_the_folder_or_replaces(tmp_path):
    dest = tmp_path / "out"
    dest.mkdir()
    (tmp_path / "secret.txt").write_text("keep")
    assert write_inside(dest, "logs/a.csv", b"abc").read_bytes() == b"abc"
    assert write_inside(dest, "logs/a.csv", b"abc").read_bytes() == b"abc"  # same bytes: ok
    with pytest.raises(LabbookError, match="not overwritten"):
        write_inside(dest, "logs/a.csv", b"other")
    (dest / "link").symlink_to(tmp_path)  # a planted link to outside
    with pytest.raises(LabbookError, match="outside the destination"):
        write_inside(dest, "link/secret.txt", b"evil")
    (dest / "trap.csv").symlink_to(tmp_path / "secret.txt")
    with pytest.raises(LabbookError, match="not overwritten"):
        write_inside(dest, "trap.csv", b"evil")
    assert (tmp_path / "secret.txt").read_text() == "keep"


def test_zlib_blob_tampering_is_named(tmp_path):
    path = tmp_path / "z.sqlite"
    with open_labbook(path, create=True) as book:
        conn = book.connection
        conn.execute("BEGIN IMMEDIATE")
        digest = put_blob(conn, b"x" * 1000)
        conn.execute("COMMIT")
    conn = sqlite3.connect(path)
    conn.execute("DROP TRIGGER blobs_no_update")
    conn.execute("UPDATE blobs SET data = ? WHERE sha256 = ?", (zlib.compress(b"y" * 1000),
                                                                digest))
    conn.commit()
    conn.close()
    with open_labbook(path) as book:
        problems = book.verify().problems
        assert any(p.startswith(f"blob {digest}") for p in problems)
        with pytest.raises(LabbookIntegrityError, match="does not match its SHA-256"):
            get_blob(book.connection, digest)
