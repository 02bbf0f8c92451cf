"""Review: the workbook and the HTML/PDF reports on awkward reductions of the bundled,
SIMULATED ``sample_runs`` (calwork's own simulator; see sample_runs/README.md).

One sheet mixes: runs that fail (a negative mass, a missing log), a sample whose name is a
formula-injection string and has a single run, a unicode/HTML sample name, a sulfur compound
with a single run (thianthrene C12H8S2 on a borrowed log: its numbers are not physical, the
formulas must still reproduce calwork's), and a solution series (KCl, with blanks and an
electrical calibration). Every workbook formula must equal calwork's value per the
independent ``formulas`` engine (as in test_report_workbook.py); the reports must be
self-contained and escaped; the solution series must be reported as molar enthalpies in
kJ/mol (before the fix its report section printed "Massic energy Δu = — J/g" and its budget
had no unit, in the report and in the workbook).
"""

from __future__ import annotations

import csv
import html
import re
import shutil
import sys
import warnings
from pathlib import Path

import openpyxl
import pytest

sys.path.insert(0, str(Path(__file__).parent))
from report_fixtures import REL, check_with_engine, table

from calwork.reduce import reduce_sheet
from calwork.report import write_report, write_workbook

SAMPLE_RUNS = Path(__file__).resolve().parents[1] / "sample_runs"
INJECTION = '=HYPERLINK("http://example.invalid","x")'
UNICODE = "Acétanilide ü 中文 <b>&amp;</b>"
KEEP = {"BA-01", "BA-02", "BA-03", "SA-01", "SA-02", "SA-03", "AC-01", "AC-02",
        "E01", "E02", "B01", "B02", "K01", "K03"}


@pytest.fixture(scope="module")
def reduction(tmp_path_factory):
    root = tmp_path_factory.mktemp("awkward")
    shutil.copytree(SAMPLE_RUNS / "logs", root / "logs")
    with open(SAMPLE_RUNS / "runs.csv", encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["run"] in KEEP]
    for r in rows:
        if r["run"] == "SA-01":
            r["sample"] = INJECTION  # a single good run of this sample
        if r["run"] == "SA-02":
            r["mass_g"] = "-0.5"  # fails: mass must be positive
        if r["run"] == "SA-03":
            r["log"] = "logs/bomb/missing.csv"  # fails: no log
        if r["run"].startswith("AC"):
            r["sample"] = UNICODE
            r["operator"] = "@SUM(1+1)"
    sulfur = dict(next(r for r in rows if r["run"] == "AC-02"))
    # total acid titre covers the sulfuric acid of w(S) = 0.296 (thianthrene)
    sulfur.update(run="TH-01", sample="-thianthrene", formula="C12H8S2",
                  sulfur_mass_fraction="0.2962", acid_titre_mL="150")
    rows.append(sulfur)
    fields = [*rows[0].keys(), "sulfur_mass_fraction"]
    with open(root / "runs.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=fields, restval="")
        w.writeheader()
        w.writerows(rows)
    return reduce_sheet(root / "runs.csv")


def test_the_sheet_reduces_as_expected(reduction):
    failed = {r.run for r in reduction.runs if r.error}
    assert failed == {"SA-02", "SA-03"}
    kinds = {s.sample: (s.kind, s.n_runs) for s in reduction.samples}
    assert kinds[INJECTION] == ("combustion", 1)
    assert kinds["-thianthrene"] == ("combustion", 1)
    assert kinds["KCl (simulated series)"] == ("solution", 2)


@pytest.fixture(scope="module")
def book(reduction, tmp_path_factory):
    return write_workbook(reduction, tmp_path_factory.mktemp("wb") / "awkward.xlsx",
                          include_readings=False)


def test_every_formula_matches_calwork(book):
    n, worst = check_with_engine(book)
    assert n > 40
    assert worst < REL


def test_solution_budget_rows_carry_their_units(book, reduction):
    wb = openpyxl.load_workbook(book)
    ws = wb["Uncertainty budget"]
    cols, _ = table(ws)
    rows = list(ws.iter_rows(min_row=2, values_only=True))  # series are separated by blanks
    kcl = [r for r in rows if r[cols["series"]] == "KCl (simulated series)"]
    assert kcl
    # calwork.solution.samples: the sample budget components are kJ/mol
    assert {r[cols["unit"]] for r in kcl} == {"kJ/mol"}
    inf = next(r for r in kcl if r[cols["component"]] == "infinite_dilution_fit")
    assert inf[cols["quantity"]] == "ΔH at infinite dilution"
    sc1 = [r for r in rows if r[cols["series"]] == "SC-1 (simulated)"]
    assert sc1
    assert {r[cols["unit"]] for r in sc1} == {"J/K"}  # u(ε) and its components, J/K


def test_injected_names_stay_text(book):
    wb = openpyxl.load_workbook(book)
    cells = [c for ws in wb.worksheets for row in ws.iter_rows() for c in row
             if c.value in (INJECTION, "-thianthrene", "@SUM(1+1)")]
    assert cells
    assert all(c.data_type == "s" and c.quotePrefix for c in cells)


def _text(section_html: str) -> str:
    return html.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", section_html)))


def test_html_report_solution_section_and_escaping(reduction, tmp_path):
    path = write_report(reduction, tmp_path / "awkward.html")
    doc = path.read_text(encoding="utf-8")
    assert not re.search(r'(?:src|href)="(?!data:|#)', doc)  # self-contained
    assert "<b>&amp;amp;</b>" not in doc
    assert "&lt;b&gt;&amp;amp;&lt;/b&gt;" in doc
    start = doc.index('<section id="sample-KCl')
    sec = _text(doc[start:doc.index("</section>", start)])
    s = next(x for x in reduction.samples if x.kind == "solution")
    assert "Massic energy" not in sec
    assert f"ΔH = {s.molar_enthalpy_kJ_per_mol:.3f} ± {s.u_molar_enthalpy_kJ_per_mol:.3f}" in sec
    assert (f"infinite dilution = {s.infinite_dilution_enthalpy_kJ_per_mol:.3f} ± "
            f"{s.u_infinite_dilution_enthalpy_kJ_per_mol:.3f} kJ/mol") in sec
    assert re.search(r"random component [0-9.e-]+ kJ/mol", sec)
    assert "K01" in sec
    assert "K03" in sec


def test_pdf_report_does_not_crash(reduction, tmp_path):
    with warnings.catch_warnings():
        # a CJK sample name has no glyph in the bundled font (matplotlib warns; boxes shown)
        warnings.simplefilter("ignore", UserWarning)
        path = write_report(reduction, tmp_path / "awkward.pdf")
    assert path.read_bytes().startswith(b"%PDF")
