"""The workbook export: live formulas checked by an independent formula engine, round trip,
layout, readings and charts.

The independent engine is the ``formulas`` package (an Excel formula interpreter from the
package registry, test-only dependency); every formula cell of the exported workbook must
reproduce calwork's value (written as the cell's cached result) within 1e-9 relative, and the
key cells must equal the Reduction's numbers directly.
"""

from __future__ import annotations

import json
import math
import re
import sys
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pytest

sys.path.insert(0, str(Path(__file__).parent))
from report_fixtures import REL, cached_reduction, check_with_engine, demo_reduction, table

from calwork.core.errors import ExportError
from calwork.report import write_workbook


@pytest.fixture(scope="module")
def reduction():
    return cached_reduction(failed_run=True)


@pytest.fixture(scope="module")
def book(reduction, tmp_path_factory):
    path = tmp_path_factory.mktemp("wb") / "demo.xlsx"
    write_workbook(reduction, path)
    return path


def col_with(cols: dict[str, int], start: str) -> int:
    (i,) = [i for h, i in cols.items() if h.startswith(start)]
    return i


# --- the formula check ------------------------------------------------------------------------
def test_every_formula_reproduces_calwork_with_an_independent_engine(book):
    n, worst = check_with_engine(book)
    assert n >= 70  # every run's ε, Δu, Δu°, mass, Jessup factor, referral; series; ΔfH...
    assert worst < REL


def test_formulas_are_where_the_arithmetic_is(book, reduction):
    wf = openpyxl.load_workbook(book)
    wv = openpyxl.load_workbook(book, data_only=True)
    cols, rows = table(wf["Calibration runs"])
    eps = col_with(cols, "energy equivalent ε")
    rise = col_with(cols, "corrected rise")
    for i, row in enumerate(rows):
        assert str(row[eps]).startswith("=(")  # ε is a formula ...
        assert isinstance(row[rise], float)  # ... the fitted rise a plain number
        run = next(r for r in reduction.runs if r.run == row[0])
        cached = wv["Calibration runs"].cell(2 + i, eps + 1).value
        # the chain's ε (calwork.bomb.chain) equals the workbook's value
        assert cached == pytest.approx(run.energy_equivalent_J_per_K, rel=1e-12)
    cols, rows = table(wf["Sample runs"])
    du = col_with(cols, "massic energy Δu")
    for row in rows:
        run = next(r for r in reduction.runs if r.run == row[0])
        if run.error is None:
            assert str(row[du]).startswith("=-(")
        else:  # a failed run keeps its row and its error, with no formula
            assert row[du] is None
            assert row[col_with(cols, "error")] == run.error
    summary = wf["Summary"]
    assert summary["E4"].value.startswith("=AVERAGE(")
    assert summary["F4"].value.startswith("=STDEV(")
    provenance = [r[0] for r in wf["Provenance"].iter_rows(values_only=True) if r[0]]
    assert not [p for p in provenance if str(p).startswith("workbook note")]


def test_formation_formula_matches_the_hess_solver(book, reduction):
    wv = openpyxl.load_workbook(book, data_only=True)
    wf = openpyxl.load_workbook(book)
    cols, rows = table(wf["Formation"])
    s = reduction.samples[0]
    row = next(r for r in rows if r[0] == s.sample)
    assert row[col_with(cols, "ΔfH° = a·")].startswith("=")
    r = 2 + rows.index(row)
    got = wv["Formation"].cell(r, col_with(cols, "ΔfH° = a·") + 1).value
    # calwork.hess.combustion_link_many solves a network; the formula is docs/methods.md (3.9)
    assert got == pytest.approx(s.delta_f_H_kJ_per_mol, rel=1e-12)
    kv = {v["species"]: v for v in s.key_values_used["values"]}
    assert kv["CO2(g)"]["value_kJ_per_mol"] == -393.51  # CODATA 1989 (docs/references.md §1a)


def test_inconsistent_value_is_written_as_value_with_a_note(tmp_path):
    from dataclasses import replace

    red = demo_reduction(n_calibrations=3, runs_per_sample=2)
    bad = replace(red.runs[0], energy_equivalent_J_per_K=red.runs[0].energy_equivalent_J_per_K
                  + 1.0)
    red = replace(red, runs=(bad, *red.runs[1:]))
    path = write_workbook(red, tmp_path / "bad.xlsx", include_readings=False)
    wf = openpyxl.load_workbook(path)
    cols, rows = table(wf["Calibration runs"])
    cell = rows[0][col_with(cols, "energy equivalent ε")]
    assert cell == pytest.approx(bad.energy_equivalent_J_per_K, rel=1e-15)
    notes = [r[0] for r in wf["Provenance"].iter_rows(values_only=True)
             if r[0] and str(r[0]).startswith("workbook note")]
    assert any("energy equivalent of calibration run C1" in n for n in notes)


# --- round trip against the JSON output -------------------------------------------------------
def test_round_trip_summary_equals_json(book, reduction):
    data = json.loads(json.dumps(reduction.to_dict(), allow_nan=False, default=float))
    wv = openpyxl.load_workbook(book, data_only=True)
    ws = wv["Summary"]
    cols, _ = table(ws, header_row=3)
    keys = {
        "mean massic energy Δu (J/g)": "massic_energy_J_per_g",
        "u(Δu) of the mean (J/g)": "u_massic_energy_J_per_g",
        "mean standard massic energy Δu° (J/g)": "standard_massic_energy_J_per_g",
        "u(Δu°) (J/g)": "u_standard_massic_energy_J_per_g",
        "ΔcU° (kJ/mol)": "delta_c_U_kJ_per_mol", "u(ΔcU°) (kJ/mol)": "u_delta_c_U_kJ_per_mol",
        "ΔcH° (kJ/mol)": "delta_c_H_kJ_per_mol", "u(ΔcH°) (kJ/mol)": "u_delta_c_H_kJ_per_mol",
        "ΔfH° (kJ/mol)": "delta_f_H_kJ_per_mol", "u(ΔfH°) (kJ/mol)": "u_delta_f_H_kJ_per_mol",
        "U(ΔfH°) = k·u (kJ/mol)": "U_delta_f_H_kJ_per_mol", "runs n": "n_runs",
    }
    for i, sample in enumerate(data["samples"]):
        row = [c.value for c in ws[4 + i]]
        assert row[cols["sample"]] == sample["sample"]
        for header, key in keys.items():
            assert row[cols[header]] == pytest.approx(sample[key], rel=1e-12), header
    first = 4 + len(data["samples"]) + 4  # title, header, then the rows
    cal_cols = {c.value: i for i, c in enumerate(ws[first - 1]) if c.value}
    for i, cal in enumerate(data["calibrations"]):
        row = [c.value for c in ws[first + i]]
        assert row[cal_cols["calorimeter"]] == cal["calorimeter"]
        assert row[cal_cols["mean energy equivalent ε (J/K)"]] == pytest.approx(
            cal["energy_equivalent_J_per_K"], rel=1e-12)
        assert row[cal_cols["u(ε) of the mean (J/K)"]] == pytest.approx(
            cal["u_energy_equivalent_J_per_K"], rel=1e-12)
        assert row[cal_cols["RSD of ε (%)"]] == pytest.approx(cal["rsd_percent"], rel=1e-9)
        assert row[cal_cols["runs n"]] == cal["n_runs"]


def test_readings_round_trip(book, reduction):
    wb = openpyxl.load_workbook(book, read_only=True)
    for rid, th in reduction.thermograms.items():
        ws = wb[f"Log {rid}"]
        rows = list(ws.iter_rows(min_row=2, max_col=2, values_only=True))
        t = np.array([r[0] for r in rows if r[0] is not None], dtype=float)
        T = np.array([r[1] for r in rows if r[1] is not None], dtype=float)
        # openpyxl writes 16 significant digits; the rest is written exactly (repr)
        np.testing.assert_allclose(t, th.time_s, rtol=1e-15, atol=0)
        np.testing.assert_allclose(T, th.temperature_K, rtol=1e-15, atol=0)
    wb.close()


# --- layout -----------------------------------------------------------------------------------
def test_layout_units_frozen_headers_widths(book):
    wb = openpyxl.load_workbook(book)
    expected = ["Summary", "Calibration runs", "Sample runs", "Corrections",
                "Uncertainty budget", "Formation", "Review", "Provenance"]
    assert wb.sheetnames[:8] == expected
    for name in expected[1:6]:
        ws = wb[name]
        assert ws.freeze_panes == "B2", name
        _, rows = table(ws)
        for c in ws[1]:
            if c.value is None:
                continue
            assert c.font.b, (name, c.value)
            column = [r[c.column - 1] for r in rows]
            numbers = [v for v in column if isinstance(v, float) or str(v).startswith("=")]
            if numbers:  # every numeric column says its unit (or "1" for a pure number)
                assert re.search(r"\(.*\)|atoms|factor|Δn", c.value), (name, c.value)
        widths = [ws.column_dimensions[chr(65 + i)].width for i in range(3)]
        assert all(w and 8 <= w <= 62 for w in widths), (name, widths)
    assert wb["Summary"].freeze_panes == "B4"
    fmt = wb["Sample runs"]["F2"].number_format  # mass in vacuum
    assert fmt == "0.000000"


def test_charts_one_per_run_with_periods_and_markers(book, reduction):
    with zipfile.ZipFile(book) as z:
        charts = sorted(n for n in z.namelist() if n.startswith("xl/charts/chart"))
        assert len(charts) == len(reduction.thermograms)
        xml = z.read(charts[0]).decode()
    for label in ("fore period", "main period", "after period", "drift model (fore)",
                  "drift model (after)", "firing time", "end of main period"):
        assert f"<v>{label}</v>" in xml
    assert "simulated data" in xml  # the simulator's logs are labelled
    # Okabe–Ito colours and distinct dash patterns (greyscale-readable)
    assert "0072B2" in xml
    assert "D55E00" in xml
    assert 'prstDash val="dashDot"' in xml


def test_without_readings_or_charts(reduction, tmp_path):
    path = write_workbook(reduction, tmp_path / "lean.xlsx", include_readings=False)
    wb = openpyxl.load_workbook(path)
    assert not [n for n in wb.sheetnames if n.startswith("Log ")]
    path = write_workbook(reduction, tmp_path / "nocharts.xlsx", charts=False)
    with zipfile.ZipFile(path) as z:
        assert not [n for n in z.namelist() if n.startswith("xl/charts/")]
    assert openpyxl.load_workbook(path)["Log C1"]["A2"].value == 0


def test_export_errors(reduction, tmp_path):
    with pytest.raises(ExportError, match="xlsx"):
        write_workbook(reduction, tmp_path / "out.csv")
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    with pytest.raises(ExportError, match="cannot write"):
        write_workbook(reduction, blocker / "out.xlsx", include_readings=False)


def test_simulated_label_and_safety_note(book):
    wb = openpyxl.load_workbook(book)
    text = " ".join(str(c.value) for row in wb["Summary"].iter_rows() for c in row if c.value)
    assert "SIMULATED DATA" in text
    assert "pressure vessels" in text
    assert "3 MPa" in text
    assert "does not make a procedure safe" in text
    assert math.isfinite(wb["Log C1"]["B2"].value)


def test_every_sheet_prints_one_page_wide_with_its_headers_repeated(book):
    wb = openpyxl.load_workbook(book)
    for ws in wb.worksheets:
        assert ws.sheet_properties.pageSetUpPr.fitToPage, ws.title
        assert (ws.page_setup.fitToWidth, ws.page_setup.fitToHeight) == (1, 0), ws.title
        if ws.freeze_panes:
            row = int("".join(ch for ch in ws.freeze_panes if ch.isdigit()))
            if row > 1:
                assert ws.print_title_rows == f"$1:${row - 1}", ws.title
