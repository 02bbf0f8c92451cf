"""verify covers the schema objects and every stored column, and a recorded head exposes a
fully re-chained audit log."""

from __future__ import annotations

import sqlite3

import pytest
from conftest import copy_sample_runs

from calwork.cli.main import main
from calwork.labbook import audit, open_labbook


@pytest.fixture
def book(tmp_path):
    copy_sample_runs(tmp_path / "runs")
    path = tmp_path / "lab.sqlite"
    with open_labbook(path, create=True, user="analyst") as lb:
        lb.add_sheet(tmp_path / "runs" / "runs.csv")
        run = lb.runs()[0]["run"]
        lb.void(run, reason="spilled sample (test)")
        assert lb.verify().ok
    return path, run


def _tamper(path, *statements):
    con = sqlite3.connect(path)
    for (trigger,) in con.execute(
            "SELECT name FROM sqlite_master WHERE type = 'trigger'").fetchall():
        con.execute(f"DROP TRIGGER {trigger}")
    for sql in statements:
        con.execute(sql)
    con.commit()
    con.close()


def _problems(path, **kwargs):
    with open_labbook(path) as lb:
        return lb.verify(**kwargs).problems


def test_a_redefined_view_is_found(book):
    path, _ = book
    con = sqlite3.connect(path)
    con.execute("DROP VIEW current_reductions")
    # one statement that would undo the void in every listing: the first reduction "current"
    con.execute("CREATE VIEW current_reductions AS SELECT r.* FROM reductions r"
                " WHERE r.version = 1")
    con.commit()
    con.close()
    problems = _problems(path)
    assert any("view current_reductions differs" in p for p in problems)


def test_an_extra_object_is_found(book):
    path, _ = book
    con = sqlite3.connect(path)
    con.execute("CREATE VIEW shadow AS SELECT 1")
    con.commit()
    con.close()
    assert any("unexpected view shadow" in p for p in _problems(path))


@pytest.mark.parametrize(("sql", "named"), [
    ("UPDATE sheets SET added_by = 'someone else'", "sheets row 1: who, when"),
    ("UPDATE sheets SET original_path = '/elsewhere/runs.csv'", "original path"),
    ("UPDATE sheets SET rows_json = '[]'", "original path or the stored sheet rows"),
    ("UPDATE results SET constants_json = '{\"R\": 8.3}' WHERE id = 1", "constants"),
    ("UPDATE results SET method = 'dickinson' WHERE id = 1", "method"),
])
def test_every_stored_column_is_covered(book, sql, named):
    path, _ = book
    _tamper(path, sql)
    assert any(named in p for p in _problems(path))


def test_a_rebuilt_chain_is_caught_by_a_recorded_head(book, capsys):
    path, _ = book
    assert main(["labbook", "verify", "--labbook", str(path), "--print-head"]) == 0
    printed = capsys.readouterr().out
    head = printed.split("audit head: ")[1].split()[0]
    # someone with write access rewrites the first entry's user and re-chains everything
    con = sqlite3.connect(path)
    for (trigger,) in con.execute(
            "SELECT name FROM sqlite_master WHERE type = 'trigger'").fetchall():
        con.execute(f"DROP TRIGGER {trigger}")
    con.execute("UPDATE audit SET user = 'forger' WHERE id = 1")
    prev = audit.GENESIS_HASH
    for row in con.execute("SELECT id, ts_utc, user, action, object, reason, details"
                           " FROM audit ORDER BY id").fetchall():
        h = audit.entry_hash(*row, prev)
        con.execute("UPDATE audit SET prev_hash = ?, hash = ? WHERE id = ?", (prev, h, row[0]))
        prev = h
    con.execute("UPDATE meta SET value = ? WHERE key = 'audit_head'", (prev,))
    schema = sqlite3.connect(":memory:")
    from calwork.labbook.schema import migrate

    migrate(schema, 0)
    for (sql,) in schema.execute("SELECT sql FROM sqlite_master WHERE type = 'trigger'"):
        con.execute(sql)
    con.commit()
    con.close()
    # consistent in itself: only the chain-internal problems are gone
    assert not any("audit row" in p for p in _problems(path))
    assert main(["labbook", "verify", "--labbook", str(path), "--expect-head", head]) == 1
    assert "not in the audit chain" in capsys.readouterr().out
