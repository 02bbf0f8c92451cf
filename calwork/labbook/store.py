"""Opening a lab book: locating the file, recognising it, creating it, transactions.

The lab book is one SQLite file (stdlib :mod:`sqlite3`): ``calwork-labbook.sqlite`` in the
working folder, or the path given by ``--labbook`` or ``$CALWORK_LABBOOK``.

Reliability, in the order things happen:

* An existing file is recognised before anything is written to it: SQLite header, a size
  consistent with the header (a truncated copy is refused), ``PRAGMA application_id``, the
  ``meta`` magic and a schema version this calwork can read. Anything else raises
  :class:`~calwork.core.errors.LabbookFormatError`; such a file is never modified.
* A new lab book is built completely in a temporary file next to the target and then
  hard-linked into place (never replacing a file that appeared meanwhile), so a crash while
  creating leaves either no lab book or a complete one.
* Connections use WAL journaling (readers never block the writer), ``synchronous=FULL``
  (a committed transaction survives power loss), ``trusted_schema=OFF`` (SQL functions in a
  planted view or trigger are not run) and foreign keys.
* Every change is one ``BEGIN IMMEDIATE`` transaction. A process killed inside it leaves the
  file exactly as before (SQLite's WAL recovery discards the uncommitted frames). A second
  writer waits up to the busy timeout (``$CALWORK_LABBOOK_TIMEOUT`` seconds, default 30) and
  then gets :class:`~calwork.core.errors.LabbookBusyError` ("busy, retry").

WAL needs a local file system (shared memory between processes); do not keep a lab book on a
network share. Copy a lab book in use with ``calwork labbook backup DEST`` (SQLite's online
backup API), not with ``cp``.
"""

from __future__ import annotations

import contextlib
import os
import secrets
import sqlite3
from collections.abc import Iterator
from pathlib import Path

from calwork.core.errors import LabbookBusyError, LabbookError, LabbookFormatError
from calwork.core.provenance import calwork_version
from calwork.labbook import audit
from calwork.labbook.schema import APPLICATION_ID, MAGIC, SCHEMA_VERSION, migrate

__all__ = [
    "DEFAULT_LABBOOK_NAME",
    "DEFAULT_TIMEOUT_S",
    "connect_checked",
    "crash_point",
    "is_busy",
    "is_disk_full",
    "resolve_labbook_path",
    "write_transaction",
]

#: File name of the lab book in the working folder when no path is given.
DEFAULT_LABBOOK_NAME = "calwork-labbook.sqlite"
#: Seconds a writer waits for another writer before giving up (``$CALWORK_LABBOOK_TIMEOUT``).
DEFAULT_TIMEOUT_S = 30.0

_SQLITE_MAGIC = b"SQLite format 3\x00"


def resolve_labbook_path(path: str | os.PathLike[str] | None = None) -> Path:
    """The lab book path: ``path``, else ``$CALWORK_LABBOOK``, else the default name."""
    if path:
        return Path(path)
    env = os.environ.get("CALWORK_LABBOOK")
    return Path(env) if env else Path(DEFAULT_LABBOOK_NAME)


def timeout_from_env() -> float:
    """Busy timeout in seconds from ``$CALWORK_LABBOOK_TIMEOUT`` (default 30 s)."""
    text = os.environ.get("CALWORK_LABBOOK_TIMEOUT")
    if not text:
        return DEFAULT_TIMEOUT_S
    try:
        value = float(text)
    except ValueError:
        value = -1.0
    if not value >= 0:
        raise LabbookError("CALWORK_LABBOOK_TIMEOUT must be a number of seconds >= 0",
                           found=text)
    return value


def crash_point(step: str) -> None:
    """Test hook: end the process abruptly when ``$CALWORK_TEST_CRASH_AFTER == step``.

    Used by the crash-safety tests to stop a real ``labbook add`` in the middle of its
    transaction; it does nothing unless that variable names this step.
    """
    if os.environ.get("CALWORK_TEST_CRASH_AFTER") == step:
        os._exit(86)


def is_busy(exc: sqlite3.Error) -> bool:
    """Whether an SQLite error means another connection holds a lock."""
    name = getattr(exc, "sqlite_errorname", "")
    return name.startswith(("SQLITE_BUSY", "SQLITE_LOCKED")) or "locked" in str(exc)


def is_disk_full(exc: BaseException) -> bool:
    """Whether an error means the disk (or the file-size limit) is full."""
    if isinstance(exc, sqlite3.Error):
        name = getattr(exc, "sqlite_errorname", "")
        return name.startswith("SQLITE_FULL") or "database or disk is full" in str(exc)
    return isinstance(exc, OSError) and exc.errno in (28, 27)  # ENOSPC, EFBIG


def _space_hint(path: Path, exc: BaseException) -> str:
    """For an I/O failure: the free space of the lab book's disk, the usual cause."""
    if "disk I/O error" not in str(exc) and not is_disk_full(exc):
        return ""
    import shutil

    try:
        free = shutil.disk_usage(path.parent).free
    except OSError:
        return " (is the disk full?)"
    return f" (is the disk full? {free / 2**20:.0f} MiB free)"


def _check_file_header(path: Path) -> None:
    """Refuse files that are not SQLite databases or are truncated, before SQLite sees them."""
    try:
        size = path.stat().st_size
        with path.open("rb") as fh:
            head = fh.read(100)
    except OSError as exc:
        raise LabbookError(f"cannot read the lab book ({exc.strerror})", path=path) from None
    if size == 0:
        raise LabbookFormatError("empty file, not a calwork lab book (not overwritten)",
                                 path=path)
    if not head.startswith(_SQLITE_MAGIC):
        raise LabbookFormatError(
            "not a calwork lab book: not an SQLite database (not overwritten)", path=path,
            found=head[:16].decode("latin-1"),
        )
    page_size = int.from_bytes(head[16:18], "big") if len(head) >= 18 else 0
    page_size = 65536 if page_size == 1 else page_size
    if len(head) < 100 or page_size < 512:
        raise LabbookFormatError("truncated or corrupt lab book (header incomplete)", path=path)
    n_pages = int.from_bytes(head[28:32], "big")
    header_valid = head[24:28] == head[92:96]
    wal = path.with_name(path.name + "-wal")
    with contextlib.suppress(OSError):
        if wal.stat().st_size > 0:
            # WAL mode: until a checkpoint completes (it may have stopped at a full disk) the
            # main file can be shorter than its header says; the pages are in the WAL and
            # SQLite's recovery reads them. SQLite itself judges such a file.
            return
    if size % page_size or (header_valid and n_pages and size < n_pages * page_size):
        raise LabbookFormatError(
            "truncated or corrupt lab book (file shorter than its header says)", path=path,
            found=size, expected=f"{n_pages * page_size} bytes",
        )


def _configure(conn: sqlite3.Connection) -> None:
    conn.execute("PRAGMA trusted_schema = OFF")
    conn.execute("PRAGMA foreign_keys = ON")
    conn.execute("PRAGMA cell_size_check = ON")
    conn.execute("PRAGMA synchronous = FULL")


def _connect(path: Path, timeout_s: float) -> sqlite3.Connection:
    conn = sqlite3.connect(str(path), timeout=timeout_s, isolation_level=None)
    _configure(conn)
    return conn


@contextlib.contextmanager
def write_transaction(conn: sqlite3.Connection, path: Path | None = None, *,
                      crash_step: str | None = None) -> Iterator[None]:
    """One ``BEGIN IMMEDIATE`` ... ``COMMIT`` transaction; rolled back on any exception.

    ``crash_step`` names the :func:`crash_point` just before ``COMMIT`` (test hook).
    """
    try:
        conn.execute("BEGIN IMMEDIATE")
    except sqlite3.OperationalError as exc:
        if is_busy(exc):
            raise LabbookBusyError(
                "lab book is busy (another process is writing); retry", path=path
            ) from None
        raise LabbookError(f"cannot start a transaction: {exc}", path=path) from None
    try:
        yield
        if crash_step:
            crash_point(crash_step)
        conn.execute("COMMIT")
    except BaseException as exc:
        if conn.in_transaction:
            conn.execute("ROLLBACK")
        if isinstance(exc, sqlite3.OperationalError) and is_busy(exc):
            raise LabbookBusyError(
                "lab book is busy (another process is writing); retry", path=path
            ) from None
        if is_disk_full(exc):
            raise LabbookError("disk full: nothing was written to the lab book; free some "
                               "space and retry", path=path) from None
        if "readonly" in str(exc):
            raise LabbookError("the lab book is read-only here (file or folder not writable); "
                               "nothing was written", path=path) from None
        if isinstance(exc, sqlite3.DatabaseError):
            hint = _space_hint(path, exc) if path is not None else ""
            raise LabbookError(f"lab book write failed: {exc}{hint}; nothing was written "
                               "(the transaction was rolled back)", path=path) from None
        raise


def _create(path: Path, timeout_s: float, user: str) -> None:
    """Build a new lab book in a temporary file and link it into place atomically."""
    if not path.parent.is_dir():
        raise LabbookError("folder of the lab book does not exist", path=path)
    if not os.access(path.parent, os.W_OK):
        raise LabbookError("cannot create the lab book: its folder is not writable", path=path)
    tmp = path.with_name(f".{path.name}.{os.getpid()}.{secrets.token_hex(4)}.creating")
    conn = None
    try:
        conn = sqlite3.connect(str(tmp), timeout=timeout_s, isolation_level=None)
        _build_new(conn, tmp, user)
        conn.close()
        _link_into_place(tmp, path)
    except (sqlite3.Error, OSError) as exc:
        if is_disk_full(exc):
            raise LabbookError("disk full: the lab book was not created", path=path) from None
        raise LabbookError(f"cannot create the lab book: {exc}", path=path) from None
    finally:
        if conn is not None:
            conn.close()
        for suffix in ("", "-wal", "-shm"):
            with contextlib.suppress(FileNotFoundError):
                os.unlink(f"{tmp}{suffix}")


def _link_into_place(tmp: Path, path: Path) -> None:
    """Put the finished file at ``path`` without ever replacing a file that is there."""
    try:
        os.link(tmp, path)
    except FileExistsError:  # another process created it first: use theirs
        return
    except OSError:  # no hard links on this file system: rename if still absent
        if not path.exists():
            os.rename(tmp, path)


def _build_new(conn: sqlite3.Connection, tmp: Path, user: str) -> None:
    """Create the schema, marks and the first audit entry in the new file."""
    _configure(conn)
    conn.execute("PRAGMA journal_mode = WAL")
    with write_transaction(conn, tmp):
        conn.execute(f"PRAGMA application_id = {APPLICATION_ID:d}")
        migrate(conn, 0)
        for key, value in (
            ("magic", MAGIC),
            ("created_utc", audit.utc_now()),
            ("created_by_calwork", calwork_version()),
        ):
            conn.execute("INSERT INTO meta (key, value) VALUES (?, ?)", (key, value))
        audit.append(conn, user=user, action="create", obj="labbook",
                     details={"schema_version": SCHEMA_VERSION,
                              "calwork_version": calwork_version()})


def connect_checked(path: Path, *, create: bool, timeout_s: float,
                    user: str) -> sqlite3.Connection:
    """Open (and if ``create``, make) the lab book at ``path``; migrate it forward.

    Raises
    ------
    LabbookError
        No lab book at ``path`` and ``create`` is false.
    LabbookFormatError
        The file is not a calwork lab book, is corrupt or truncated, or is too new.
    """
    if path.is_dir():
        raise LabbookError("lab book path is a folder", path=path,
                           expected="a file such as calwork-labbook.sqlite")
    if not path.exists():
        if not create:
            raise LabbookError(
                "no lab book here (`calwork labbook add SHEET` creates one)", path=path
            )
        _create(path, timeout_s, user)
    _check_file_header(path)
    read_only = not (os.access(path, os.W_OK) and os.access(path.parent, os.W_OK))
    try:
        conn = _connect_read_only(path, timeout_s) if read_only else _connect(path, timeout_s)
    except sqlite3.OperationalError as exc:
        raise LabbookError(f"cannot open the lab book: {exc}{_space_hint(path, exc)}",
                           path=path) from None
    except sqlite3.Error as exc:
        raise LabbookFormatError(f"cannot open the lab book: {exc}", path=path) from None
    try:
        _check_identity(conn, path, user, read_only=read_only)
    except BaseException:
        conn.close()
        raise
    return conn


def _connect_read_only(path: Path, timeout_s: float) -> sqlite3.Connection:
    """A lab book in a place this user cannot write (a read-only folder or file): readers
    work, writers get SQLite's "readonly database" error (a :class:`LabbookError`)."""
    from urllib.parse import quote

    uri = f"file:{quote(str(path.resolve()))}?mode=ro"
    wal = path.with_name(path.name + "-wal")
    if not os.access(path.parent, os.W_OK) and not wal.exists():
        # no writer can change a file whose folder cannot hold its WAL: reading it as
        # immutable needs no shared-memory file (which could not be created here)
        uri += "&immutable=1"
    conn = sqlite3.connect(uri, uri=True, timeout=timeout_s, isolation_level=None)
    conn.execute("PRAGMA trusted_schema = OFF")
    return conn


def _check_identity(conn: sqlite3.Connection, path: Path, user: str, *,
                    read_only: bool = False) -> None:
    try:
        app_id = conn.execute("PRAGMA application_id").fetchone()[0]
        version = conn.execute("PRAGMA user_version").fetchone()[0]
        if app_id != APPLICATION_ID:
            raise LabbookFormatError(
                "not a calwork lab book: an SQLite database of another application "
                "(not overwritten)", path=path, found=app_id, expected=APPLICATION_ID,
            )
        try:
            magic = conn.execute("SELECT value FROM meta WHERE key = 'magic'").fetchone()
        except sqlite3.OperationalError:
            magic = None
        if magic is None or magic[0] != MAGIC:
            raise LabbookFormatError(
                "not a calwork lab book: the meta table has no calwork magic", path=path,
                found=None if magic is None else magic[0], expected=MAGIC,
            )
        if version > SCHEMA_VERSION:
            raise LabbookFormatError(
                f"lab book was written by a newer calwork (schema {version}; this calwork "
                f"{calwork_version()} reads up to schema {SCHEMA_VERSION})", path=path,
            )
        if read_only:
            if version < SCHEMA_VERSION:
                raise LabbookError(
                    f"the lab book (schema {version}) must be migrated to schema "
                    f"{SCHEMA_VERSION} before this calwork reads it, and it is read-only "
                    "here: open it once where it can be written", path=path)
            return
        if conn.execute("PRAGMA journal_mode").fetchone()[0].lower() != "wal":
            conn.execute("PRAGMA journal_mode = WAL")
        if version < SCHEMA_VERSION:
            _migrate_file(conn, path, version, user)
    except sqlite3.DatabaseError as exc:
        if isinstance(exc, sqlite3.OperationalError) and is_busy(exc):
            raise LabbookBusyError("lab book is busy; retry", path=path) from None
        raise LabbookFormatError(f"corrupt lab book: {exc}", path=path) from None


def _migrate_file(conn: sqlite3.Connection, path: Path, version: int, user: str) -> None:
    with write_transaction(conn, path):
        now = conn.execute("PRAGMA user_version").fetchone()[0]
        if now >= SCHEMA_VERSION:  # another process migrated it meanwhile
            return
        steps = migrate(conn, now)
        audit.append(conn, user=user, action="migrate", obj="labbook",
                     details={"from": now, "to": SCHEMA_VERSION,
                              "steps": [f"{v}: {d}" for v, d in steps],
                              "calwork_version": calwork_version()})
