"""Getting things out of a lab book: a run's raw bytes, and a Reduction for the workbook."""

from __future__ import annotations

import contextlib
import json
import sqlite3
from collections.abc import Mapping
from pathlib import Path
from typing import Any

from calwork.core.errors import CalworkError, LabbookError
from calwork.core.results import CalibrationResult, Reduction, RunResult, SampleResult
from calwork.core.runinfo import RunInfo
from calwork.labbook.blobs import get_blob, write_inside
from calwork.labbook.lifecycle import run_states
from calwork.labbook.queries import Filters, list_calibrations, list_runs, list_samples
from calwork.labbook.reducing import stored_info

__all__ = ["export_raw", "rebuild_reduction"]


def export_raw(conn: sqlite3.Connection, run: str, dest: str | Path) -> list[Path]:
    """Write the run's sheet and log bytes into ``dest`` (original relative layout).

    Files are byte-identical to what was recorded; an existing different file is never
    replaced, and stored paths are re-checked so nothing is written outside ``dest``.
    """
    row = conn.execute(
        "SELECT r.sheet_id, r.log_file_id, s.file_name, s.sha256 FROM runs r"
        " JOIN sheets s ON s.id = r.sheet_id WHERE r.run = ?", (run,)).fetchone()
    if row is None:
        raise LabbookError("run is not in the lab book", run=run)
    _sheet_id, log_id, name, sheet_sha = row
    dest = Path(dest)
    dest.mkdir(parents=True, exist_ok=True)
    written = [write_inside(dest, name, get_blob(conn, sheet_sha))]
    if log_id is not None:
        rel, sha = conn.execute("SELECT rel_path, sha256 FROM files WHERE id = ?",
                                (log_id,)).fetchone()
        written.append(write_inside(dest, rel, get_blob(conn, sha)))
    return written


def _build(cls: type, data: Mapping[str, Any]) -> Any:
    return cls.from_dict(data)


def rebuild_reduction(conn: sqlite3.Connection, filters: Filters | None = None, *,
                      thermograms: bool = True) -> Reduction:
    """A :class:`~calwork.core.results.Reduction` of the selected active runs from the store.

    Run, calibration and sample records are the stored (current) results; ``run_infos`` are
    the stored sheet rows with the amendments in force; ``review`` holds each run's state,
    version and approval; with ``thermograms`` the logs are read back from the stored bytes.
    """
    filters = filters or Filters()
    from calwork.io import amended_run

    runs = list_runs(conn, filters, include_void=False)
    wanted = [r["run"] for r in runs]
    states = run_states(conn, wanted)
    records, infos, methods, sheets = [], [], set(), set()
    for run in wanted:
        res, row_json, sheet_id, original, method = conn.execute(
            "SELECT res.json, r.row_json, r.sheet_id, s.original_path, red.method FROM runs r"
            " JOIN sheets s ON s.id = r.sheet_id JOIN results res ON res.run_id = r.id"
            " JOIN current_reductions red ON red.id = res.reduction_id WHERE r.run = ?",
            (run,)).fetchone()
        records.append(_build(RunResult, json.loads(res)))
        info = stored_info(json.loads(row_json), original)
        in_force = {k: v for k, v in states[run].overrides.items() if k != "log"}
        infos.append(amended_run(info, in_force) if in_force else info)
        methods.add(method)
        sheets.add(sheet_id)
    wanted_cals = {(c["reduction_id"], c["calorimeter"])
                   for c in list_calibrations(conn, filters)}
    calibrations = [
        _build(CalibrationResult, json.loads(text)) for rid, key, text in conn.execute(
            "SELECT reduction_id, key, json FROM results WHERE type = 'calibration'"
            " ORDER BY id")
        if (rid, key) in wanted_cals
    ]
    samples = [_build(SampleResult, s) for s in list_samples(conn, filters)]
    traces = _thermograms(conn, infos, sheets) if thermograms else {}
    return Reduction(
        calibrations=tuple(calibrations), runs=tuple(records), samples=tuple(samples),
        method=methods.pop() if len(methods) == 1 else "mixed" if methods else "newton-fit",
        sheet_path=None, run_infos=tuple(infos), thermograms=traces,
        warnings=(f"rebuilt from the lab book ({len(sheets)} sheet(s))",),
        review={run: {k: v for k, v in states[run].to_dict().items() if k != "events"}
                for run in wanted},
    )


def _thermograms(conn: sqlite3.Connection, infos: list[RunInfo],
                 sheets: set[int]) -> dict[str, Any]:
    """Thermograms read from the stored log bytes (skipped if the importer is missing)."""
    try:
        from calwork.io import load_run_log
    except ImportError:
        return {}
    from dataclasses import replace

    from calwork.labbook.reducing import materialised

    out: dict[str, Any] = {}
    by_sheet: dict[int, list[RunInfo]] = {}
    for info in infos:
        sheet_id = conn.execute("SELECT sheet_id FROM runs WHERE run = ?",
                                (info.run,)).fetchone()[0]
        by_sheet.setdefault(sheet_id, []).append(info)
    for sheet_id, group in by_sheet.items():
        with materialised(conn, sheet_id) as (sheet, original_dir):
            for info in group:
                if info.log_path is None:
                    continue
                try:
                    rel = Path(info.log_path).relative_to(original_dir)
                except ValueError:
                    continue
                with contextlib.suppress(CalworkError):  # a failed run may have a bad log
                    out[info.run] = load_run_log(replace(info, log_path=sheet.parent / rel))
    return out
