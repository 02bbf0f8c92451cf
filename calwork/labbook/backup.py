"""Copy a lab book while it is in use, with SQLite's online backup API.

:meth:`sqlite3.Connection.backup` copies the database page by page inside one read
transaction of the source, so the copy is a consistent snapshot even while other processes
keep writing (in WAL mode writers are not blocked; the copy simply does not see commits made
after it started). A plain file copy (``cp``) of a WAL-mode lab book can miss committed
transactions still in the ``-wal`` file or catch a half-written checkpoint: use
``calwork labbook backup DEST`` instead.

The copy is written to a temporary file next to ``DEST``, checked (calwork magic, audit chain,
blobs) and then linked into place; an existing ``DEST`` is never replaced.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import sqlite3
from pathlib import Path

from calwork.core.errors import LabbookError, LabbookIntegrityError

__all__ = ["backup"]


def backup(conn: sqlite3.Connection, dest: str | Path) -> Path:
    """Write a consistent copy of the open lab book ``conn`` to ``dest`` and verify it.

    Raises
    ------
    LabbookError
        ``dest`` exists already or its folder does not.
    LabbookIntegrityError
        The copy does not verify.
    """
    from calwork.labbook.verify import verify

    dest = Path(dest)
    if dest.exists() or dest.is_symlink():
        raise LabbookError("backup destination exists; not overwritten", path=dest)
    if not dest.parent.is_dir():
        raise LabbookError("folder of the backup destination does not exist", path=dest)
    tmp = dest.with_name(f".{dest.name}.{os.getpid()}.{secrets.token_hex(4)}.partial")
    try:
        target = sqlite3.connect(str(tmp), isolation_level=None)
        try:
            target.execute("PRAGMA trusted_schema = OFF")
            conn.backup(target)  # all pages in one step: one consistent snapshot
            report = verify(target)
        finally:
            target.close()
        if not report.ok:
            raise LabbookIntegrityError(
                "backup copy does not verify: " + "; ".join(report.problems[:3]), path=dest)
        try:
            os.link(tmp, dest)
        except FileExistsError:
            raise LabbookError("backup destination appeared meanwhile; not overwritten",
                               path=dest) from None
    finally:
        for suffix in ("", "-wal", "-shm"):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(f"{tmp}{suffix}")
    return dest
