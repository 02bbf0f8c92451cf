"""One recorded run as the review workbench needs it: its sheet row with the amendments in
force and its thermogram, read back from the stored log bytes (nothing read from disk)."""

from __future__ import annotations

import json
import sqlite3
import tempfile
from dataclasses import replace
from pathlib import Path, PurePath
from typing import Any

from calwork.core.errors import LabbookError
from calwork.core.runinfo import RunInfo
from calwork.labbook.blobs import get_blob, safe_relative_path, write_inside
from calwork.labbook.lifecycle import run_states
from calwork.labbook.reducing import stored_info

__all__ = ["StoredRun", "stored_info", "stored_run"]


class StoredRun:
    """A recorded run: ``info`` (with amendments in force, except a changed ``log``),
    ``thermogram`` (``None`` without a log), ``log_sha256`` and its state."""

    def __init__(self, info: RunInfo, thermogram: Any, log_sha256: str | None,
                 state: Any) -> None:
        self.info = info
        self.thermogram = thermogram
        self.log_sha256 = log_sha256
        self.state = state


def stored_run(conn: sqlite3.Connection, run: str, *, cache: dict[Any, Any] | None = None
               ) -> StoredRun:
    """The run ``run`` from the lab book (see the module docstring).

    ``cache`` maps (log SHA-256, the columns that say how to read it) → thermogram: the bytes
    are content-addressed, so an entry never goes stale; the caller owns it.

    Raises
    ------
    LabbookError
        Unknown run.
    CalworkError
        The stored log cannot be read (as the reduction reported it).
    """
    from calwork.io import amended_run, load_run_log

    row = conn.execute(
        "SELECT r.row_json, r.log_file_id, s.original_path FROM runs r JOIN sheets s"
        " ON s.id = r.sheet_id WHERE r.run = ?", (run,)).fetchone()
    if row is None:
        raise LabbookError("run is not in the lab book", run=run)
    row_json, log_id, original = row
    info = stored_info(json.loads(row_json), original)
    state = run_states(conn, [run])[run]
    in_force = {k: v for k, v in state.overrides.items() if k != "log"}
    if in_force:
        info = amended_run(info, in_force)
    if log_id is None:
        return StoredRun(info, None, None, state)
    rel, sha = conn.execute("SELECT rel_path, sha256 FROM files WHERE id = ?",
                            (log_id,)).fetchone()
    key = (sha, info.time_column, info.temperature_column, info.time_unit,
           info.temperature_unit, info.sensor, tuple(sorted(info.extra.items())))
    if cache is not None and key in cache:
        return StoredRun(info, cache[key], sha, state)
    safe_relative_path(rel)
    with tempfile.TemporaryDirectory(prefix="calwork-run-") as tmp:
        path = write_inside(Path(tmp), rel, get_blob(conn, sha))
        tg = load_run_log(replace(info, log_path=path))
    source = str(PurePath(original).parent / rel)
    tg = replace(tg, provenance=replace(tg.provenance, source_path=source))
    if cache is not None:
        cache[key] = tg
    return StoredRun(info, tg, sha, state)
