"""The :class:`Labbook` facade: one open lab book and everything one can do with it."""

from __future__ import annotations

import functools
import json
import os
import sqlite3
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any, TypeVar

from calwork.core.errors import (
    LabbookBusyError,
    LabbookError,
    LabbookFormatError,
    LabbookIntegrityError,
)
from calwork.core.results import Reduction
from calwork.labbook import amend_sheet as _amend_sheet
from calwork.labbook import audit, ingest, lifecycle, queries, store
from calwork.labbook import backup as _backup
from calwork.labbook import export as _export
from calwork.labbook import recompute as _recompute
from calwork.labbook import verify as _verify

__all__ = ["Labbook", "open_labbook"]

_T = TypeVar("_T")


def _guarded(method: Callable[..., _T]) -> Callable[..., _T]:
    """Turn SQLite exceptions escaping a lab-book operation into calwork's errors."""

    @functools.wraps(method)
    def wrapper(self: Labbook, *args: Any, **kwargs: Any) -> _T:
        try:
            return method(self, *args, **kwargs)
        except sqlite3.IntegrityError as exc:
            raise LabbookError(f"lab book refused the change: {exc}", path=self.path) from None
        except sqlite3.OperationalError as exc:
            if store.is_busy(exc):
                raise LabbookBusyError("lab book is busy (another process is writing); retry",
                                       path=self.path) from None
            raise LabbookError(f"lab book error: {exc}", path=self.path) from None
        except sqlite3.DatabaseError as exc:
            raise LabbookFormatError(f"corrupt lab book: {exc}", path=self.path) from None
        except json.JSONDecodeError as exc:
            raise LabbookIntegrityError(
                f"damaged record: a stored JSON text does not parse ({exc}); run `calwork "
                "labbook verify` to name it", path=self.path) from None

    return wrapper


class Labbook:
    """An open calwork lab book (use :func:`open_labbook`).

    Parameters
    ----------
    conn
        The checked SQLite connection.
    path
        The lab book file.
    user
        Name recorded in the audit log for changes made through this object.
    """

    def __init__(self, conn: sqlite3.Connection, path: Path, user: str) -> None:
        self._conn = conn
        self.path = path
        self.user = user

    # --- life cycle ---------------------------------------------------------------------------
    def close(self) -> None:
        """Close the connection."""
        self._conn.close()

    def __enter__(self) -> Labbook:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @property
    def connection(self) -> sqlite3.Connection:
        """The underlying connection (read-only use; writes go through the methods)."""
        return self._conn

    # --- changes ------------------------------------------------------------------------------
    @_guarded
    def add_sheet(self, sheet: str | os.PathLike[str], *,
                  method: str = "newton-fit") -> ingest.AddResult:
        """Import and reduce a run sheet; store its raw bytes and results in one transaction.

        A sheet whose bytes (sheet and every log) are already recorded is reported as
        ``already_recorded`` and nothing changes; a different sheet re-using a recorded run id
        raises :class:`~calwork.core.errors.LabbookError` (run ids are unique in a lab book).
        """
        return ingest.add_sheet(self._conn, self.path, sheet, method=method, user=self.user)

    @_guarded
    def void(self, run: str, *, reason: str) -> audit.AuditEntry:
        """Mark ``run`` void with a reason (audited; the run stays on record) and re-reduce
        its sheet without it, so later series exclude it."""
        return lifecycle.void_run(self._conn, self.path, run, reason=reason, user=self.user)

    @_guarded
    def restore(self, run: str, *, reason: str) -> audit.AuditEntry:
        """Undo a void with a reason (audited) and re-reduce the sheet with the run."""
        return lifecycle.restore_run(self._conn, self.path, run, reason=reason,
                                     user=self.user)

    @_guarded
    def amend(self, run: str, changes: Mapping[str, Any], *,
              reason: str) -> lifecycle.AmendResult:
        """Record a new version of ``run`` with the run-sheet cells ``changes`` (column →
        cell text) overridden, and re-reduce its sheet (see :mod:`calwork.labbook.lifecycle`)."""
        return lifecycle.amend_run(self._conn, self.path, run, changes, reason=reason,
                                   user=self.user)

    @_guarded
    def approve(self, run: str, *, note: str = "",
                expect_version: int | None = None) -> audit.AuditEntry:
        """Approve the current version of ``run`` (refused if it is not ``expect_version``)."""
        return lifecycle.approve_run(self._conn, self.path, run, user=self.user, note=note,
                                     expect_version=expect_version)

    @_guarded
    def amend_from_sheet(self, sheet: str | os.PathLike[str], *,
                         reason: str) -> list[lifecycle.AmendResult]:
        """Record each changed row of a corrected sheet whose runs are already recorded as an
        amendment of that run (see :func:`calwork.labbook.amend_sheet.amend_from_sheet`)."""
        return _amend_sheet.amend_from_sheet(self._conn, self.path, sheet, reason=reason,
                                             user=self.user)

    @_guarded
    def set_setting(self, key: str, value: str, *, reason: str = "") -> audit.AuditEntry:
        """Change a lab-book setting (``four_eyes``: ``on``/``off``), audited."""
        return lifecycle.set_setting(self._conn, self.path, key, value, user=self.user,
                                     reason=reason)

    @_guarded
    def setting(self, key: str) -> str:
        """The current value of a lab-book setting."""
        return lifecycle.setting(self._conn, key)

    @_guarded
    def states(self, runs: list[str] | None = None) -> dict[str, lifecycle.RunState]:
        """State, version, overrides and approvals of each run (or of ``runs``)."""
        return lifecycle.run_states(self._conn, runs)

    @_guarded
    def versions(self, run: str) -> list[dict[str, Any]]:
        """The versions of ``run``: cells, result and the change from the version before."""
        return queries.run_versions(self._conn, run)

    # --- reading ------------------------------------------------------------------------------
    @_guarded
    def runs(self, filters: queries.Filters | None = None, *,
             include_void: bool = True) -> list[dict[str, Any]]:
        """Runs (with status and latest numbers), ordered by date then run id."""
        return queries.list_runs(self._conn, filters, include_void=include_void)

    @_guarded
    def calibrations(self, filters: queries.Filters | None = None) -> list[dict[str, Any]]:
        """Current calibrations per calorimeter with their validity."""
        return queries.list_calibrations(self._conn, filters)

    @_guarded
    def samples(self, filters: queries.Filters | None = None) -> list[dict[str, Any]]:
        """Current sample results."""
        return queries.list_samples(self._conn, filters)

    @_guarded
    def show(self, run: str) -> dict[str, Any]:
        """Everything about one run, down to the blob hashes of its raw files."""
        return queries.show_run(self._conn, run)

    @_guarded
    def history(self, run: str) -> list[audit.AuditEntry]:
        """Audit entries about one run."""
        return queries.history(self._conn, run)

    @_guarded
    def audit_log(self) -> list[audit.AuditEntry]:
        """The whole audit log, oldest first."""
        return audit.entries(self._conn)

    @_guarded
    def calibration_series(self, calorimeter: str,
                           filters: queries.Filters | None = None,
                           ) -> tuple[list[dict[str, Any]], list[str]]:
        """ε of each active calibration run of ``calorimeter`` (for QA) and notes."""
        return queries.calibration_series(self._conn, calorimeter, filters)

    @_guarded
    def first_series_runs(self, calorimeter: str) -> list[str]:
        """Run ids of the first recorded calibration series of ``calorimeter``."""
        row = self._conn.execute(
            "SELECT res.json FROM calibrations c JOIN current_reductions red"
            " ON red.id = c.reduction_id JOIN results res ON res.id = c.result_id"
            " WHERE c.calorimeter = ? ORDER BY c.valid_from IS NULL, c.valid_from, c.id"
            " LIMIT 1", (calorimeter,)).fetchone()
        return [] if row is None else list(json.loads(row[0]).get("runs") or [])

    # --- checks and copies --------------------------------------------------------------------
    @_guarded
    def recompute(self, filters: queries.Filters | None = None, *,
                  tolerance: float = _recompute.DEFAULT_TOLERANCE,
                  jobs: int = 1) -> _recompute.RecomputeReport:
        """Recompute stored results from the stored raw bytes and compare (``jobs``
        worker processes)."""
        return _recompute.recompute(self._conn, filters=filters, tolerance=tolerance,
                                    jobs=jobs)

    @_guarded
    def verify(self, *, expect_head: str | None = None) -> _verify.VerifyReport:
        """Check the schema, the audit chain, the blobs, the results and the triggers (and
        that the chain contains ``expect_head``, a head recorded earlier)."""
        return _verify.verify(self._conn, expect_head=expect_head)

    @_guarded
    def export_raw(self, run: str, dest: str | os.PathLike[str]) -> list[Path]:
        """Write the run's sheet and log bytes into ``dest``."""
        return _export.export_raw(self._conn, run, dest)

    @_guarded
    def reduction(self, filters: queries.Filters | None = None, *,
                  thermograms: bool = True) -> Reduction:
        """A Reduction of the selected active runs rebuilt from the store."""
        return _export.rebuild_reduction(self._conn, filters, thermograms=thermograms)

    @_guarded
    def backup(self, dest: str | os.PathLike[str]) -> Path:
        """Consistent copy to ``dest`` with SQLite's online backup API (safe while in use)."""
        return _backup.backup(self._conn, dest)

    @_guarded
    def counts(self) -> dict[str, int]:
        """Row counts of the main tables."""
        out = {}
        for table in ("blobs", "sheets", "files", "runs", "run_events", "reductions",
                      "results", "calibrations", "audit"):
            out[table] = self._conn.execute(f"SELECT COUNT(*) FROM {table}").fetchone()[0]
        return out


def open_labbook(path: str | os.PathLike[str] | None = None, *, create: bool = False,
                 user: str | None = None, timeout_s: float | None = None) -> Labbook:
    """Open the lab book at ``path`` (else ``$CALWORK_LABBOOK``, else
    ``calwork-labbook.sqlite`` in the working folder).

    Parameters
    ----------
    path
        Lab book file.
    create
        Make a new lab book if there is none (``labbook add`` does; reading commands do not).
    user
        Name for the audit log (else ``$CALWORK_USER``, else the OS login name).
    timeout_s
        Seconds to wait for another writer, s (else ``$CALWORK_LABBOOK_TIMEOUT``, else 30 s).

    Raises
    ------
    LabbookFormatError
        The file is not a calwork lab book (it is left untouched).
    LabbookError
        There is no lab book and ``create`` is false.
    """
    resolved = store.resolve_labbook_path(path)
    timeout = store.timeout_from_env() if timeout_s is None else float(timeout_s)
    if not timeout >= 0:
        raise LabbookError("busy timeout must be >= 0 s", found=timeout_s)
    who = audit.current_user(user)
    conn = store.connect_checked(resolved, create=create, timeout_s=timeout, user=who)
    return Labbook(conn, resolved, who)
