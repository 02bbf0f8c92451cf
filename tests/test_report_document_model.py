"""One document model, every renderer: the workbook is a document (sections of calculations,
readings and tables), every renderer takes every document, and the text the commands print is
the same document rendered as text."""

from __future__ import annotations

import math

import openpyxl
import pytest
from report_fixtures import demo_reduction

from calwork.report.grid import number_of
from calwork.report.html import render_html
from calwork.report.model import Calculation, Document, Paragraph, Readings, Section, Table
from calwork.report.plain import render_markdown, render_text
from calwork.report.summary import summary_document
from calwork.report.workbook import render_workbook, workbook_document, write_workbook


@pytest.fixture(scope="module")
def reduction():
    return demo_reduction(n_calibrations=3, runs_per_sample=2)


def test_the_workbook_is_a_document_of_its_sheets(reduction):
    doc = workbook_document(reduction)
    titles = [s.title for s in doc.sections]
    assert titles[:6] == ["Summary", "Calibration runs", "Sample runs", "Corrections",
                          "Uncertainty budget", "Formation"]
    assert "Provenance" in titles
    kinds = {type(b) for s in doc.sections for b in s.blocks}
    assert {Calculation, Readings, Table, Paragraph} <= kinds
    assert doc.simulated  # the fixture's logs come from the simulator


def test_the_prose_renderers_show_the_workbook_values(reduction):
    """The workbook document read as text shows calwork's numbers (a formula's cached value
    in its cell format), the notes as paragraphs and no readings."""
    doc = workbook_document(reduction, include_readings=False)
    text = render_text(doc, width=120)
    cal = reduction.calibrations[0]
    assert f"{cal.energy_equivalent_J_per_K:.3f}" in text  # Summary, format 0.000
    sample = reduction.samples[0]
    assert f"{sample.delta_f_H_kJ_per_mol:.2f}" in text  # Summary, format 0.00
    assert "Safety:" in text
    md = render_markdown(doc)
    assert "| calorimeter |" in md.replace("  ", " ")
    html = render_html(doc)
    assert "<table" in html
    assert f"{cal.energy_equivalent_J_per_K:.3f}" in html


def test_any_document_renders_as_a_workbook(reduction, tmp_path):
    """A document of paragraphs and tables (here the reduction's summary) becomes one sheet
    per section: title, notes, tables; plain decimal texts become numbers showing the same
    decimals, identifiers stay text."""
    doc = summary_document(reduction)
    path = render_workbook(doc, tmp_path / "summary.xlsx")
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == [s.title[:31] for s in doc.sections]
    calibrations = wb["Calibrations"]
    values = [c for row in calibrations.iter_rows(values_only=True) for c in row
              if c is not None]
    cal = reduction.calibrations[0]
    eps = next(v for v in values if isinstance(v, float) and abs(v - cal.energy_equivalent_J_per_K) < 0.01)
    assert eps == pytest.approx(cal.energy_equivalent_J_per_K, abs=0.005)  # shown with 2 decimals
    assert cal.calorimeter in values


def test_identifiers_stay_text_in_a_workbook(tmp_path):
    doc = Document(title="t", subtitle="", simulated=False, sections=[Section("Runs", "r", [
        Paragraph("runs of the day"),
        Table(["run", "ΔT_c / K", "note"], [["007", "2.000150", "1e-3"], ["12", "-0.5", "x"]],
              number_columns=(1, 2)),
    ])])
    ws = openpyxl.load_workbook(render_workbook(doc, tmp_path / "r.xlsx"))["Runs"]
    rows = [r for r in ws.iter_rows(values_only=True) if any(c is not None for c in r)]
    assert rows[0][0] == "Runs"
    assert rows[1][0] == "runs of the day"
    assert rows[2] == ("run", "ΔT_c / K", "note")
    assert rows[3] == ("007", 2.00015, 0.001)
    assert rows[4] == ("12", -0.5, "x")
    cell = ws.cell(5, 2)
    assert cell.number_format == "0.000000"


@pytest.mark.parametrize(("text", "expected"), [
    ("-393.51", (-393.51, "0.00")), ("0.130", (0.13, "0.000")), ("12", (12.0, "0")),
    ("1.5e-05", (1.5e-05, "0.00E+00")), ("007", None), ("1,5", None), ("—", None),
    ("−4.2", None),  # a typographic minus is text, not a number
    ("nan", None), ("", None),
])
def test_number_of(text, expected):
    got = number_of(text)
    if expected is None:
        assert got is None
    else:
        assert got[0] == expected[0]
        assert got[1] == expected[1]
        assert math.isfinite(got[0])


def test_write_workbook_is_the_rendered_document(reduction, tmp_path):
    """write_workbook is workbook_document rendered: the same sheets, the same cells (the
    timestamp of the Provenance sheet aside)."""
    a = openpyxl.load_workbook(write_workbook(reduction, tmp_path / "a.xlsx",
                                              include_readings=False))
    b = openpyxl.load_workbook(render_workbook(
        workbook_document(reduction, include_readings=False), tmp_path / "b.xlsx"))
    assert a.sheetnames == b.sheetnames
    for name in a.sheetnames:
        rows_a = [r for r in a[name].iter_rows(values_only=True) if "written at (UTC)" not in r]
        rows_b = [r for r in b[name].iter_rows(values_only=True) if "written at (UTC)" not in r]
        assert rows_a == rows_b, name


def test_outputs_get_the_usual_file_mode(reduction, tmp_path):
    """Reports and workbooks are written through a private temporary file, then given the
    mode a new file gets under the user's umask (0644 under 022), not left at 0600."""
    import os
    import stat

    old = os.umask(0o022)
    try:
        path = render_workbook(summary_document(reduction), tmp_path / "s.xlsx")
    finally:
        os.umask(old)
    assert stat.S_IMODE(path.stat().st_mode) == 0o644


def test_run_plots_drawn_on_several_cores_are_the_same_images(reduction):
    """The --out folder draws the run plots in forked workers; each image is byte for byte
    the one drawn in this process, and the report reuses it instead of drawing it again."""
    from calwork.report import plots
    from calwork.report.texts import primary_rise

    items = [(reduction.thermograms[r.run], primary_rise(r)) for r in reduction.runs
             if r.run in reduction.thermograms]
    plots._RISE_PNGS.clear()
    plots.draw_rise_pngs(items)
    parallel = {id(rise): plots._RISE_PNGS[id(rise)][1] for _, rise in items}
    plots._RISE_PNGS.clear()
    serial = {id(rise): plots.rise_png(th, rise) for th, rise in items}
    assert parallel == serial
    assert plots.rise_png(*items[0]) is serial[id(items[0][1])]  # drawn once, then reused
