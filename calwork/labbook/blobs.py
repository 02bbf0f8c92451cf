"""Content-addressed raw files: the exact bytes of every sheet and log, zlib-compressed.

A blob is keyed by the SHA-256 of its *uncompressed* bytes, so a record survives the original
file being moved, edited or deleted, and ``verify`` can re-hash what is stored. Stored relative
paths are checked again before anything is written out (:func:`safe_relative_path`,
:func:`write_inside`): nothing leaves the destination folder, whatever the lab book holds.
"""

from __future__ import annotations

import os
import sqlite3
import zlib
from pathlib import Path, PurePosixPath

from calwork.core.errors import LabbookError, LabbookIntegrityError
from calwork.core.provenance import sha256_bytes

__all__ = ["get_blob", "put_blob", "safe_relative_path", "write_inside"]

#: zlib level: 6 is zlib's own default balance of speed and size.
_LEVEL = 6


def put_blob(conn: sqlite3.Connection, data: bytes) -> str:
    """Store ``data`` (once; identical bytes share one row) and return its SHA-256."""
    digest = sha256_bytes(data)
    if conn.execute("SELECT 1 FROM blobs WHERE sha256 = ?", (digest,)).fetchone():
        return digest
    packed = zlib.compress(data, _LEVEL)
    codec = "zlib"
    if len(packed) >= len(data):  # incompressible: keep the bytes as they are
        packed, codec = data, "raw"
    conn.execute(
        "INSERT INTO blobs (sha256, size, codec, data) VALUES (?, ?, ?, ?)",
        (digest, len(data), codec, packed),
    )
    return digest


def unpack(sha256: str, size: int, codec: str, data: bytes) -> bytes:
    """The uncompressed bytes of a stored blob, checked against its hash and size.

    Raises
    ------
    LabbookIntegrityError
        If the stored bytes do not decompress or do not match the hash or size.
    """
    try:
        raw = zlib.decompress(data) if codec == "zlib" else bytes(data)
    except zlib.error as exc:
        raise LabbookIntegrityError(
            f"stored blob {sha256} does not decompress ({exc})"
        ) from None
    if len(raw) != size or sha256_bytes(raw) != sha256:
        raise LabbookIntegrityError(
            f"stored blob {sha256} does not match its SHA-256 (the bytes were altered)",
            found=sha256_bytes(raw), expected=sha256,
        )
    return raw


def get_blob(conn: sqlite3.Connection, sha256: str) -> bytes:
    """The verified bytes of blob ``sha256``."""
    row = conn.execute(
        "SELECT size, codec, data FROM blobs WHERE sha256 = ?", (sha256,)
    ).fetchone()
    if row is None:
        raise LabbookIntegrityError(f"blob {sha256} is missing from the lab book")
    return unpack(sha256, row[0], row[1], row[2])


def safe_relative_path(text: str) -> PurePosixPath:
    """Check a stored relative path: no absolute paths, drives, ``..``, or backslashes.

    Raises
    ------
    LabbookIntegrityError
        If the path could point outside the folder it is relative to.
    """
    rel = PurePosixPath(text)
    bad = (
        not text
        or "\\" in text
        or "\x00" in text
        or rel.is_absolute()
        or (len(text) > 1 and text[1] == ":")
        or any(part in ("", ".", "..") for part in text.split("/"))
    )
    if bad:
        raise LabbookIntegrityError(
            "stored file path is not a plain relative path inside the sheet's folder",
            found=text, expected="a relative path without '..', drive letters or backslashes",
        )
    return rel


def write_inside(dest: Path, rel_text: str, data: bytes, *, exist_ok_same: bool = True) -> Path:
    """Write ``data`` to ``dest / rel_text`` without leaving ``dest`` or replacing a file.

    Existing files with identical bytes are accepted (when ``exist_ok_same``); anything else
    already there is refused. Files are created exclusively (``O_EXCL``), so a planted
    symbolic link is never followed.
    """
    rel = safe_relative_path(rel_text)
    root = dest.resolve()
    target = root.joinpath(*rel.parts)
    target.parent.mkdir(parents=True, exist_ok=True)
    if not target.parent.resolve().is_relative_to(root):
        raise LabbookError(
            "refusing to write outside the destination folder", path=target,
            expected=f"a path inside {root}",
        )
    if target.exists() or target.is_symlink():
        if exist_ok_same and not target.is_symlink() and target.read_bytes() == data:
            return target
        raise LabbookError("file already exists; not overwritten", path=target)
    flags = os.O_WRONLY | os.O_CREAT | os.O_EXCL | getattr(os, "O_BINARY", 0)
    fd = os.open(target, flags, 0o644)
    with os.fdopen(fd, "wb") as fh:
        fh.write(data)
    return target
