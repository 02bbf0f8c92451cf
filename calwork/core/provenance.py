"""Provenance records: where a number came from, down to the bytes."""

from __future__ import annotations

import hashlib
from collections.abc import Mapping
from dataclasses import dataclass, field, fields
from functools import cache
from pathlib import Path
from typing import Any

__all__ = ["Provenance", "calwork_version", "sha256_bytes", "sha256_file"]


@cache
def calwork_version() -> str:
    """The installed calwork version (from the package metadata)."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("calwork")
    except PackageNotFoundError:  # running from a source tree without installation
        return "0+unknown"


def sha256_bytes(data: bytes) -> str:
    """Hex SHA-256 of ``data``."""
    return hashlib.sha256(data).hexdigest()


def sha256_file(path: str | Path) -> str:
    """Hex SHA-256 of a file's bytes."""
    h = hashlib.sha256()
    with Path(path).open("rb") as fh:
        for chunk in iter(lambda: fh.read(1 << 20), b""):
            h.update(chunk)
    return h.hexdigest()


@dataclass(frozen=True, kw_only=True)
class Provenance:
    """Where a record came from.

    Attributes
    ----------
    source_path
        The file read (as given), or ``None`` for computed or simulated records.
    sha256
        Hex SHA-256 of the file's bytes.
    importer
        Name of the importer or producer (e.g. ``'calwork.io.read_log'``).
    first_row, last_row
        1-based line (or spreadsheet row) numbers of the first and last data rows.
    method
        Method that produced a derived record (e.g. ``'newton-fit'``).
    constants
        Names and values (with sources) of the constants used.
    calwork_version
        Version of calwork that made the record.
    parents
        Provenance of the inputs of a derived record.
    """

    source_path: str | None = None
    sha256: str | None = None
    importer: str | None = None
    first_row: int | None = None
    last_row: int | None = None
    method: str | None = None
    constants: dict[str, Any] = field(default_factory=dict)
    calwork_version: str = field(default_factory=calwork_version)
    parents: tuple[Provenance, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """A JSON-ready dictionary."""
        out: dict[str, Any] = {
            "source_path": self.source_path,
            "sha256": self.sha256,
            "importer": self.importer,
            "first_row": self.first_row,
            "last_row": self.last_row,
            "method": self.method,
            "constants": dict(self.constants),
            "calwork_version": self.calwork_version,
        }
        if self.parents:
            out["parents"] = [p.to_dict() for p in self.parents]
        return out

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Provenance:
        """The record :meth:`to_dict` wrote (unknown keys are ignored)."""
        names = {f.name for f in fields(cls)}
        kwargs = {k: v for k, v in data.items() if k in names}
        kwargs["parents"] = tuple(cls.from_dict(p) for p in data.get("parents") or ())
        kwargs["constants"] = dict(data.get("constants") or {})
        return cls(**kwargs)
