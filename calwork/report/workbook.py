"""Workbook export of a reduction: live formulas a reviewer can follow and change.

Sheets: ``Summary`` (samples and calibrations with their series statistics), ``Calibration
runs``, ``Sample runs``, ``Corrections``, ``Uncertainty budget``, ``Formation``, ``Solution
runs`` (when there are any), ``Provenance`` and one ``Log <run>`` sheet of readings with a
chart per run (see :mod:`calwork.report.wb_readings` for why one sheet per run).

What is arithmetic is a formula — energy equivalents, massic energies, sums of corrections,
series means (``AVERAGE``), standard deviations (``STDEV``), RSD, combined uncertainties,
molar quantities and formation enthalpies — and carries calwork's value as its cached result.
What comes from fits (the corrected rise and its uncertainty) or from calwork's propagation is
a plain number with the method named. A formula is written only where it reproduces calwork's
number (to 1e-10 relative); otherwise calwork's value is written and the Provenance sheet says
so. Plain numbers are dark blue, formulas black.

Text from run sheets and logs is stored as text, never as a formula (see
:mod:`calwork.report.sanitise`).
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from calwork.core.errors import ExportError
from calwork.core.provenance import calwork_version, sha256_file
from calwork.core.runinfo import SOLUTION_KINDS
from calwork.core.safety import SAFETY_NOTE
from calwork.report.grid import new_workbook, save_workbook
from calwork.report.output import atomic_target
from calwork.report.plan import Plan, Table
from calwork.report.sanitise import safe_sheet_title
from calwork.report.texts import is_simulated, rise_method
from calwork.report.wb_readings import write_log_sheet
from calwork.report.wb_results import (
    plan_budget,
    plan_formation,
    plan_summary_calibrations,
    plan_summary_samples,
)
from calwork.report.wb_runs import (
    ordered_bomb_runs,
    plan_calibration_runs,
    plan_corrections,
    plan_sample_runs,
    plan_solution_runs,
)

__all__ = ["write_workbook"]

PROVENANCE = "Provenance"


def _plan_provenance(plan: Plan, log_titles: dict[str, str]) -> None:
    red = plan.reduction
    grid = plan.grid(PROVENANCE)
    prov = red.provenance
    grid.put(1, 1, "Provenance of this workbook", kind="title")
    sheet_sha = prov.sha256 if prov else None
    if sheet_sha is None and red.sheet_path and Path(red.sheet_path).is_file():
        sheet_sha = f"{sha256_file(red.sheet_path)} (of the file on disk at export)"
    rows: list[tuple[str, Any]] = [
        ("written by", f"calwork {calwork_version()}"),
        ("written at (UTC)", datetime.now(UTC).replace(microsecond=0).isoformat()),
        ("run sheet", red.sheet_path),
        ("run sheet SHA-256", sheet_sha),
        ("importer", prov.importer if prov else None),
        ("corrected-rise method", red.method),
        ("calwork version of the reduction", prov.calwork_version if prov else None),
    ]
    if prov is not None:
        rows.extend((f"data file: {k}" if str(k).endswith(".toml") else f"constant: {k}",
                     v if isinstance(v, (int, float)) else str(v))
                    for k, v in prov.constants.items())
    r = 2
    for key, value in rows:
        grid.put(r, 1, key)
        grid.put(r, 2, value, "0.000000000" if isinstance(value, float) else None)
        r += 1
    r += 1
    table = Table(grid, r, [
        ("run", "run", None), ("kind", "kind", None), ("log", "log file", None),
        ("sha", "SHA-256 of the log", None), ("importer", "importer", None),
        ("rows", "source rows", None), ("simulated", "simulated data", None),
        ("method", "rise method", None), ("sheet", "readings sheet", None),
        ("constants", "constants used", None),
    ], freeze=False)
    for run in red.runs:
        r += 1
        th = red.thermograms.get(run.run)
        p = th.provenance if th is not None else run.provenance
        table.put(r, "run", run.run)
        table.put(r, "kind", run.kind)
        if p is not None:
            table.put(r, "log", p.source_path)
            table.put(r, "sha", p.sha256)
            table.put(r, "importer", p.importer)
            if p.first_row is not None:
                table.put(r, "rows", f"{p.first_row}–{p.last_row}")
        table.put(r, "simulated", "yes" if th is not None and is_simulated(th) else "no")
        table.put(r, "method", rise_method(run, red.method))
        table.put(r, "sheet", log_titles.get(run.run))
        if run.provenance is not None and run.provenance.constants:
            table.put(r, "constants", "; ".join(f"{k} = {v}"
                                                for k, v in run.provenance.constants.items()))
    r += 2
    notes = [*(f"reduction warning: {w}" for w in red.warnings),
             *(f"workbook note: {n}" for n in plan.notes), SAFETY_NOTE]
    for text in notes:
        grid.put(r, 1, text, kind="note")
        r += 1
    grid.min_widths.update({1: 24.0, 2: 30.0})


def plan_workbook(reduction: Any, *, log_titles: dict[str, str] | None = None) -> Plan:
    """Plan every result sheet of ``reduction`` (no file is written)."""
    plan = Plan(reduction)
    for title in ("Summary", "Calibration runs", "Sample runs", "Corrections",
                  "Uncertainty budget", "Formation"):
        plan.grid(title)  # fix the sheet order
    cal_runs, sample_runs = ordered_bomb_runs(plan)
    if cal_runs or sample_runs:
        plan_corrections(plan, cal_runs + sample_runs)
    if cal_runs:
        plan_calibration_runs(plan, cal_runs)
    plan_summary_calibrations(plan)
    plan_sample_runs(plan, sample_runs)
    plan_summary_samples(plan)
    plan_budget(plan)
    plan_formation(plan)
    solution = [r for r in reduction.runs if r.kind in SOLUTION_KINDS]
    if solution:
        plan_solution_runs(plan, solution)
    _plan_provenance(plan, log_titles or {})
    return plan


def write_workbook(reduction: Any, path: str | Path, *, include_readings: bool = True,
                   charts: bool = True) -> Path:
    """Write ``reduction`` as an ``.xlsx`` workbook with live formulas; returns the path.

    Parameters
    ----------
    reduction
        A :class:`calwork.core.results.Reduction`.
    path
        Output file (``.xlsx``); written atomically (a temporary file, then renamed).
    include_readings
        Add one sheet of readings (time in s, temperature in K) per run with a thermogram.
    charts
        Add a native chart of each thermogram (periods, drift model, markers) to its readings
        sheet; needs ``include_readings``.

    Raises
    ------
    ExportError
        The file cannot be written (or the path is not an ``.xlsx`` file).

    Notes
    -----
    Text from run sheets and logs is written as text, never as formulas. The workbook holds
    the safety note (:data:`calwork.core.safety.SAFETY_NOTE`).
    """
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise ExportError("a workbook must be written to an .xlsx file", path=path,
                          found=path.suffix, expected="'.xlsx'")
    log_titles: dict[str, str] = {}
    if include_readings:
        taken = ["Summary", "Calibration runs", "Sample runs", "Corrections",
                 "Uncertainty budget", "Formation", "Solution runs", PROVENANCE]
        for run in reduction.runs:
            if run.run in reduction.thermograms:
                title = safe_sheet_title(f"Log {run.run}", taken)
                taken.append(title)
                log_titles[run.run] = title
    with atomic_target(path, what="workbook") as tmp:
        plan = plan_workbook(reduction, log_titles=log_titles)
        wb = new_workbook()
        cached: dict[str, dict[str, float]] = {}
        for grid in plan.grids.values():
            if grid.cells:
                grid.write(wb, cached)
        by_id = {r.run: r for r in reduction.runs}
        tails = {
            title: write_log_sheet(wb, title, by_id[rid], reduction.thermograms[rid],
                                   method=reduction.method, charts=charts)
            for rid, title in log_titles.items()
        }
        save_workbook(wb, tmp, cached, tails)
    return path
