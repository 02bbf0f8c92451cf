"""``labbook add --amend``: a corrected sheet for runs already on record becomes amendments.

A lab that finds a typing slip in a recorded sheet corrects the sheet and adds it again.
Run ids are unique in a lab book, so instead of refusing, each row of the corrected sheet is
compared with the version of its run in force (the recorded sheet row with its amendments);
every row that differs is recorded as an amendment of that run with the changed cells and
the reason given, and rows that agree are left alone. Everything is checked before anything
is written: a run id not on record, or a log whose bytes differ from the recorded log (a new
log is a new run), refuses the whole sheet.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path
from typing import Any

from calwork.core.errors import InputFileError, LabbookError
from calwork.core.provenance import sha256_bytes
from calwork.labbook.lifecycle import AmendResult, amend_run, cell_text, run_states
from calwork.labbook.reducing import materialised

__all__ = ["amend_from_sheet", "sheet_changes"]

#: Parsed values that describe where a row came from, not what it says.
_NOT_COMPARED = frozenset({"log_path", "log"})


def sheet_changes(conn: sqlite3.Connection, path: Path, sheet: Path
                  ) -> list[tuple[str, dict[str, str]]]:
    """``[(run, {column: new cell text})]`` for each row of ``sheet`` that differs from the
    version of its run in force (rows that agree are left out)."""
    from calwork.io import amended_run, read_run_sheet

    infos = read_run_sheet(sheet)
    known = dict(conn.execute("SELECT run, sheet_id FROM runs"))
    new = [i.run for i in infos if i.run not in known]
    if new:
        raise LabbookError(
            f"run ids not on record: {new}; --amend only corrects recorded runs — add new "
            "runs in a sheet of their own", path=sheet, column="run", found=new)
    states = run_states(conn, [i.run for i in infos])
    by_sheet: dict[int, list[Any]] = {}
    for info in infos:
        by_sheet.setdefault(known[info.run], []).append(info)
    out = []
    for sheet_id, rows in by_sheet.items():
        logs = dict(conn.execute(
            "SELECT r.run, f.sha256 FROM runs r LEFT JOIN files f ON f.id = r.log_file_id"
            " WHERE r.sheet_id = ?", (sheet_id,)))
        with materialised(conn, sheet_id) as (stored_sheet, _original):
            stored = {i.run: i for i in read_run_sheet(stored_sheet)}
            for info in rows:
                if info.kind != stored[info.run].kind:
                    raise LabbookError(
                        f"run {info.run} is recorded as {stored[info.run].kind}, the corrected "
                        f"sheet says {info.kind}: a different kind is a new run",
                        path=sheet, line=info.line, column="kind", run=info.run)
                if info.log_path is not None and (
                        sha256_bytes(Path(info.log_path).read_bytes()) != logs.get(info.run)):
                    raise LabbookError(
                        "the log differs from the recorded log of this run: a new log is a "
                        "new run (give it a new run id)", path=sheet, line=info.line,
                        column="log", run=info.run)
                in_force = states[info.run].overrides
                before = amended_run(stored[info.run], in_force) if in_force else \
                    stored[info.run]
                old, now = before.given(), info.given()
                cells = {name: cell_text(now.get(name))
                         for name in sorted((set(old) | set(now)) - _NOT_COMPARED)
                         if cell_text(old.get(name)) != cell_text(now.get(name))}
                if cells:
                    out.append((info.run, cells))
    return out


def amend_from_sheet(conn: sqlite3.Connection, path: Path, sheet: str | Path, *, reason: str,
                     user: str) -> list[AmendResult]:
    """Record every changed row of the corrected ``sheet`` as an amendment (see the module
    docstring); returns one result per amended run (empty when nothing changed)."""
    sheet = Path(sheet)
    if not sheet.is_file():
        raise InputFileError("run sheet not found", path=sheet)
    if not (reason or "").strip():
        raise LabbookError("amending from a corrected sheet needs a reason", path=sheet,
                           expected="--reason TEXT")
    changes = sheet_changes(conn, path, sheet.resolve())
    source = {"sheet": sheet.name, "sha256": sha256_bytes(sheet.read_bytes())}
    return [amend_run(conn, path, run, cells, reason=reason, user=user, source=source)
            for run, cells in changes]
