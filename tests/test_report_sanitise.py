"""Safety of what leaves the lab: formula injection, XML-illegal text, file and sheet names.

Formula injection ("CSV injection", OWASP): text beginning with ``=``, ``+``, ``-``, ``@``,
tab or carriage return may be run as a formula by a spreadsheet program. Text from run sheets
and logs must arrive in the workbook as plain strings.
"""

from __future__ import annotations

import os
import re
import sys
import zipfile
from dataclasses import replace
from pathlib import Path

import openpyxl
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

sys.path.insert(0, str(Path(__file__).parent))
from report_fixtures import demo_reduction

from calwork.report import safe_filename, write_workbook
from calwork.report.sanitise import cell_text, is_formula_like, safe_sheet_title

SAMPLE = '=HYPERLINK("http://example.invalid","x")'
NOTE = "@SUM(1)"
META = {"comment": "+1+1", "operator_cmd": "-2+3", "tabbed": "\t=1", "cr": "\r=1",
        "control": "bell\x07here"}


@pytest.fixture(scope="module")
def injected(tmp_path_factory):
    red = demo_reduction(sample=SAMPLE, notes=NOTE, n_calibrations=3, runs_per_sample=2)
    th = {k: replace(v, metadata={**v.metadata, **META}) for k, v in red.thermograms.items()}
    red = replace(red, thermograms=th)
    path = tmp_path_factory.mktemp("inj") / "inj.xlsx"
    write_workbook(red, path)
    return path


def _sheet_xml(path: Path) -> dict[str, str]:
    """Sheet title → its worksheet XML."""
    wb = openpyxl.load_workbook(path, read_only=True)
    titles = wb.sheetnames
    wb.close()
    with zipfile.ZipFile(path) as z:
        return {t: z.read(f"xl/worksheets/sheet{i}.xml").decode()
                for i, t in enumerate(titles, 1)}


def test_openpyxl_reads_through_defusedxml():
    # openpyxl parses workbooks with defusedxml when it is installed (XML bombs, entities)
    assert openpyxl.DEFUSEDXML is True


@pytest.mark.parametrize("text", [SAMPLE, NOTE, *[v for v in META.values() if v[0] != "b"]])
def test_formula_triggers_are_recognised(text):
    assert is_formula_like(text)


def test_injected_text_arrives_as_plain_text(injected):
    wb = openpyxl.load_workbook(injected)
    xml = _sheet_xml(injected)
    # XML turns a carriage return into a line feed; calwork writes it as one (cell_text)
    hostile = {SAMPLE, NOTE, *(cell_text(v) for v in META.values() if is_formula_like(v))}
    found: dict[str, list[str]] = {}
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if c.value in hostile:
                    assert c.data_type == "s", (ws.title, c.coordinate)
                    assert c.quotePrefix, (ws.title, c.coordinate)  # kept as text on edit
                    # the raw XML of that cell is an inline string, with no <f> element
                    m = re.search(rf"<c r=\"{c.coordinate}\"[^>]*>(.*?)</c>", xml[ws.title], re.S)
                    assert m is not None
                    assert "<f>" not in m.group(0)
                    assert 't="inlineStr"' in m.group(0)
                    found.setdefault(c.value, []).append(f"{ws.title}!{c.coordinate}")
    # the sample name is in Summary, Sample runs, the budget, Formation and the log sheets
    sheets = {loc.split("!")[0] for loc in found[SAMPLE]}
    assert {"Summary", "Sample runs", "Uncertainty budget", "Formation"} <= sheets
    assert any(s.startswith("Log S") for s in sheets)
    assert {loc.split("!")[0] for loc in found[NOTE]} >= {"Calibration runs", "Sample runs"}
    for value in META.values():
        if is_formula_like(value):
            assert found[cell_text(value)], value


def test_no_formula_cell_contains_sheet_text(injected):
    wb = openpyxl.load_workbook(injected)
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for c in row:
                if c.data_type == "f":
                    assert "HYPERLINK" not in c.value
                    assert "SUM(1)" not in c.value


def test_engine_sees_a_string(injected):
    formulas = pytest.importorskip("formulas")
    solution = formulas.ExcelModel().loads(str(injected)).finish().calculate()
    values = [v.value[0, 0] for k, v in solution.items() if k.endswith("SUMMARY'!A4")]
    assert values == [SAMPLE]


def test_xml_illegal_characters_are_replaced(injected):
    wb = openpyxl.load_workbook(injected)
    ws = wb["Log C1"]
    texts = [c.value for row in ws.iter_rows(max_col=5) for c in row if isinstance(c.value, str)]
    assert "bell\ufffdhere" in texts
    assert cell_text("a\x00b\x1fc\td\ne") == "a\ufffdb\ufffdc\td\ne"
    assert len(cell_text("x" * 40_000)) == 32_767


@pytest.mark.parametrize(("text", "expected"), [
    ("../../etc/passwd", "_.._etc_passwd"),
    ("a/b\\c:d*e?f\"g<h>i|j", "a_b_c_d_e_f_g_h_i_j"),
    ("CON", "_CON"),
    ("nul.txt", "_nul.txt"),
    ("x\x00y\nz", "x_y_z"),
    ("  ..hidden. ", "hidden"),
    ("", "unnamed"),
    ("...", "unnamed"),
    ("benzoic acid (SRM 39j)", "benzoic acid (SRM 39j)"),
    ("naphthalène", "naphthalène"),
    (SAMPLE, '=HYPERLINK(_http___example.invalid_,_x_)'),
])
def test_safe_filename(text, expected):
    assert safe_filename(text) == expected


@settings(max_examples=200, deadline=None)
@given(st.text())
def test_safe_filename_is_never_a_path(text):
    name = safe_filename(text)
    assert name
    assert os.path.basename(name) == name
    assert name not in (".", "..")
    assert not re.search(r"[\x00-\x1f\x7f/\\]", name)
    assert len(name) <= 120
    assert not name.startswith((".", " "))


def test_safe_sheet_title():
    taken = ["Summary"]
    assert safe_sheet_title("summary", taken) == "summary (2)"
    title = safe_sheet_title("Log " + "x" * 40 + "[1]:/?*", taken)
    assert len(title) <= 31
    assert not re.search(r"[\[\]:/?*\\]", title)
    assert safe_sheet_title("'quoted'") == "quoted"
    assert safe_sheet_title("History") == "History_"
    titles: list[str] = []
    for _ in range(12):
        titles.append(safe_sheet_title("Log " + "y" * 30, titles))
    assert len({t.lower() for t in titles}) == 12
    assert all(len(t) <= 31 for t in titles)
