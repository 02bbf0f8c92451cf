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

The workbook is a document like every other output (:mod:`calwork.report.model`):
:func:`workbook_document` builds it — one section per sheet, holding a
:class:`~calwork.report.model.Calculation` (the planned cells and formulas), the
:class:`~calwork.report.model.Readings` of a log, or paragraphs and tables (the Provenance
sheet) — and :func:`render_workbook` writes any document as ``.xlsx``.
"""

from __future__ import annotations

from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from calwork.core.errors import ExportError
from calwork.core.provenance import calwork_version, sha256_file
from calwork.core.runinfo import SOLUTION_KINDS
from calwork.core.safety import SAFETY_NOTE
from calwork.report.grid import grid_of_section, new_workbook, save_workbook
from calwork.report.model import (
    Calculation,
    Document,
    Figure,
    Paragraph,
    Readings,
    Section,
    Table,
    prose_blocks,
)
from calwork.report.output import atomic_target
from calwork.report.plan import Plan
from calwork.report.sanitise import safe_sheet_title
from calwork.report.summary import review_table
from calwork.report.texts import SIMULATED_NOTE, is_simulated, rise_method, simulated_runs
from calwork.report.wb_fuel import CALORIFIC, plan_calorific
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

__all__ = ["render_workbook", "workbook_document", "write_workbook"]

PROVENANCE = "Provenance"
REVIEW = "Review"


#: The sheets of a reduction's workbook before the per-run log sheets, in order.
RESULT_SHEETS = ("Summary", "Calibration runs", "Sample runs", "Corrections",
                 "Uncertainty budget", "Formation", CALORIFIC, "Solution runs", REVIEW,
                 PROVENANCE)


def _provenance_section(plan: Plan, log_titles: dict[str, str]) -> Section:
    """The Provenance sheet: where every number came from (paragraphs and tables)."""
    red = plan.reduction
    prov = red.provenance
    sheet_sha = prov.sha256 if prov else None
    if sheet_sha is None and red.sheet_path and Path(red.sheet_path).is_file():
        sheet_sha = f"{sha256_file(red.sheet_path)} (of the file on disk at export)"
    pairs: list[tuple[str, Any]] = [
        ("written by", f"calwork {calwork_version()}"),
        ("written at (UTC)", datetime.now(UTC).replace(microsecond=0).isoformat()),
        ("run sheet", red.sheet_path),
        ("run sheet SHA-256", sheet_sha),
        ("importer", prov.importer if prov else None),
        ("corrected-rise method", red.method),
        ("calwork version of the reduction", prov.calwork_version if prov else None),
    ]
    if prov is not None:
        pairs.extend((f"data file: {k}" if str(k).endswith(".toml") else f"constant: {k}", v)
                     for k, v in prov.constants.items())
    runs = []
    for run in red.runs:
        th = red.thermograms.get(run.run)
        p = th.provenance if th is not None else run.provenance
        runs.append([
            run.run, run.kind, _text(p and p.source_path), _text(p and p.sha256),
            _text(p and p.importer),
            f"{p.first_row}–{p.last_row}" if p is not None and p.first_row is not None else "",
            "yes" if th is not None and is_simulated(th) else "no",
            _text(rise_method(run, red.method)), _text(log_titles.get(run.run)),
            "; ".join(f"{k} = {v}" for k, v in run.provenance.constants.items())
            if run.provenance is not None and run.provenance.constants else ""])
    notes = [*(f"reduction warning: {w}" for w in red.warnings),
             *(f"workbook note: {n}" for n in plan.notes), SAFETY_NOTE]
    return Section(PROVENANCE, "provenance", [
        Table(["item", "value"], [[key, _value_text(value)] for key, value in pairs],
              number_columns=(1,)),
        Table(["run", "kind", "log file", "SHA-256 of the log", "importer", "source rows",
               "simulated data", "rise method", "readings sheet", "constants used"], runs,
              number_columns=()),
        *(Paragraph(text, "note") for text in notes)])


def _text(value: Any) -> str:
    return "" if value is None else str(value)


def _value_text(value: Any) -> str:
    """A provenance value as text; a number exactly (``repr``), so the sheet shows it in
    full."""
    if isinstance(value, float):
        return repr(value)
    return _text(value)


def plan_workbook(reduction: Any, *, log_titles: dict[str, str] | None = None) -> Plan:
    """Plan every calculated sheet of ``reduction`` (no file is written)."""
    plan = Plan(reduction)
    for title in RESULT_SHEETS[:6]:
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
    plan_calorific(plan)
    solution = [r for r in reduction.runs if r.kind in SOLUTION_KINDS]
    if solution:
        plan_solution_runs(plan, solution)
    return plan


def workbook_document(reduction: Any, *, include_readings: bool = True,
                      charts: bool = True) -> Document:
    """The workbook of ``reduction`` as a document: one section per sheet (see the module
    docstring); nothing is written."""
    log_titles: dict[str, str] = {}
    if include_readings:
        taken = list(RESULT_SHEETS)
        for run in reduction.runs:
            if run.run in reduction.thermograms:
                title = safe_sheet_title(f"Log {run.run}", taken)
                taken.append(title)
                log_titles[run.run] = title
    plan = plan_workbook(reduction, log_titles=log_titles)
    sections = [Section(title, title.lower().replace(" ", "-"), [Calculation(grid)])
                for title, grid in plan.grids.items() if grid.cells]
    sections.append(Section(REVIEW, "review", [review_table(reduction)]))
    sections.append(_provenance_section(plan, log_titles))
    by_id = {r.run: r for r in reduction.runs}
    sections += [Section(title, f"log-{rid}", [Readings(
        by_id[rid], reduction.thermograms[rid], reduction.method, charts)])
        for rid, title in log_titles.items()]
    sim = simulated_runs(reduction)
    return Document(
        title=f"calwork reduction of {reduction.sheet_path or '(runs given in memory)'}",
        subtitle=SIMULATED_NOTE if sim else "", sections=sections, simulated=bool(sim))


def render_workbook(doc: Document, path: str | Path) -> Path:
    """Write ``doc`` as an ``.xlsx`` workbook, one sheet per section; returns the path.

    A section's :class:`~calwork.report.model.Calculation` is written cell by cell with its
    live formulas (each with calwork's value cached); a section of
    :class:`~calwork.report.model.Readings` becomes a readings sheet with its chart; any
    other section is laid out as its title, paragraphs and tables (figures are named, not
    drawn: they are in the HTML and PDF reports).

    Raises
    ------
    ExportError
        The file cannot be written (or the path is not an ``.xlsx`` file).
    """
    path = Path(path)
    if path.suffix.lower() != ".xlsx":
        raise ExportError("a workbook must be written to an .xlsx file", path=path,
                          found=path.suffix, expected="'.xlsx'")
    with atomic_target(path, what="workbook") as tmp:
        wb = new_workbook()
        cached: dict[str, dict[str, float]] = {}
        tails = {}
        taken: list[str] = []
        for section in doc.sections:
            calculations = [b for b in section.blocks if isinstance(b, Calculation)]
            readings = [b for b in section.blocks if isinstance(b, Readings)]
            if calculations:
                for calc in calculations:
                    calc.grid.write(wb, cached, tails)
                    taken.append(calc.grid.title)
            elif readings:
                r = readings[0]
                title = safe_sheet_title(section.title, taken)
                taken.append(title)
                tails[title] = write_log_sheet(wb, title, r.run, r.thermogram,
                                               method=r.method, charts=r.charts)
            else:
                title = safe_sheet_title(section.title, taken)
                taken.append(title)
                blocks = [Paragraph(f"figure: {b.alt} (drawn in the HTML and PDF reports)",
                                    "note") if isinstance(b, Figure) else b
                          for b in prose_blocks(section)]
                grid_of_section(title, blocks).write(wb, cached, tails)
        save_workbook(wb, tmp, cached, tails)
    return path


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
    The workbook is :func:`workbook_document` rendered by :func:`render_workbook`. Text from
    run sheets and logs is written as text, never as formulas. The workbook holds the safety
    note (:data:`calwork.core.safety.SAFETY_NOTE`).
    """
    path = Path(path)
    if path.suffix.lower() != ".xlsx":  # refused before any planning
        raise ExportError("a workbook must be written to an .xlsx file", path=path,
                          found=path.suffix, expected="'.xlsx'")
    return render_workbook(workbook_document(reduction, include_readings=include_readings,
                                             charts=charts), path)
