"""A large grid's rows written as sheet XML are the same cells as openpyxl writes them.

Every kind of content the grid holds — header, title and note rows, text with line ends and
leading spaces, formula-like text, numbers in several formats, a non-finite number, formulas
with their cached values, gaps between columns — is written once through openpyxl's cell
writer and once as raw rows (:class:`calwork.report.grid._RawRows`), and the two workbooks are
read back and compared cell by cell: value (numbers to 1e-15: openpyxl writes 16 digits, the
raw rows all 17 a double needs), type, number format, font, fill, border, alignment and the
quote prefix; the formulas are then recomputed by the independent formula
engine (common practice: a spreadsheet's formulas are checked by a second evaluator).
"""

from __future__ import annotations

import openpyxl
import pytest
from report_fixtures import check_with_engine

from calwork.report import grid as grid_module
from calwork.report.grid import Grid, Text, new_workbook, save_workbook


def _grid(n_rows: int) -> Grid:
    g = Grid("Residuals")
    g.put(1, 1, Text("A large table"), kind="title")
    g.put(2, 1, Text("a note under the title"), kind="note")
    g.header(3, ["row", "kind", "ΔrH / kJ·mol⁻¹", "u", "sum", "note"])
    for i in range(n_rows):
        r = 4 + i
        g.put(r, 1, f"r{i}")
        g.put(r, 2, ["=SUM(A1)", "+cmd", "  indented", "two\nlines", "<b>&amp;"][i % 5])
        a = g.put(r, 3, -393.51 + i * 1e-3, "0.000")
        b = g.put(r, 4, 0.13 * (i % 7 + 1), "0.00E+00")
        if i % 11 == 0:
            g.put(r, 4, float("nan"))
            b = None
        if a is not None and b is not None:
            g.put(r, 5, a + b, "0.0000")
        if i % 3 == 0:
            g.put(r, 7, i)  # a gap in column F
    g.freeze = "A4"
    return g


def _write(tmp_path, name: str, raw: bool, n_rows: int):
    wb = new_workbook()
    cached: dict = {}
    tails: dict = {}
    _grid(n_rows).write(wb, cached, tails if raw else None)
    assert bool(tails) == raw
    path = tmp_path / name
    save_workbook(wb, path, cached, tails)
    return path


def _cells(path):
    wb = openpyxl.load_workbook(path)
    ws = wb["Residuals"]
    out = {}
    for row in ws.iter_rows():
        for c in row:
            if c.value is None and not c.has_style:
                continue
            out[c.coordinate] = (
                c.value, c.data_type, c.number_format, c.font.b, c.font.i,
                c.font.sz, c.font.color.rgb if c.font.color is not None else None,
                c.fill.fgColor.rgb if c.fill.fill_type else None,
                c.border.bottom.style, c.alignment.wrap_text, c.alignment.vertical,
                c.quotePrefix)
    return out, ws.freeze_panes, ws.column_dimensions["C"].width


def test_raw_rows_are_the_cells_openpyxl_writes(tmp_path, monkeypatch):
    monkeypatch.setattr(grid_module, "RAW_ROWS_CELLS", 100)
    cell_path = _write(tmp_path, "cells.xlsx", raw=False, n_rows=60)
    raw_path = _write(tmp_path, "raw.xlsx", raw=True, n_rows=60)
    by_cells, by_raw = _cells(cell_path), _cells(raw_path)
    assert by_raw[1:] == by_cells[1:]  # freeze panes, column widths
    assert by_raw[0].keys() == by_cells[0].keys()
    for key, expected in by_cells[0].items():
        found = by_raw[0][key]
        if isinstance(expected[0], float):
            # openpyxl writes 16 significant digits, the raw rows the shortest text that reads
            # back to the same double (as the readings sheets do): equal to 1e-15
            assert found[0] == pytest.approx(expected[0], rel=1e-15, abs=0), key
            found, expected = found[1:], expected[1:]
        assert found == expected, key
    # formula-like text stays text, with the quote prefix that keeps it text when edited
    assert by_raw[0]["B4"][:2] == ("=SUM(A1)", "s")
    assert by_raw[0]["B4"][-1] is True
    assert by_raw[0]["B7"][0] == "two\nlines"
    assert by_raw[0]["B7"][9] is True
    assert by_raw[0]["B6"][0] == "  indented"                                 # spaces kept
    n, worst = check_with_engine(raw_path)
    assert n > 40
    assert worst <= 1e-12


def test_small_grids_and_callers_without_tails_use_openpyxl(tmp_path):
    wb = new_workbook()
    tails: dict = {}
    _grid(10).write(wb, {}, tails)
    assert tails == {}  # below RAW_ROWS_CELLS
    save_workbook(wb, tmp_path / "small.xlsx", {}, tails)
    assert grid_module.RAW_ROWS_CELLS >= 10_000


def test_a_network_workbook_is_written_with_raw_rows_and_reads_back(tmp_path):
    pytest.importorskip("formulas")
    g = _grid(4000)
    assert len(g.cells) >= grid_module.RAW_ROWS_CELLS
    wb = new_workbook()
    cached: dict = {}
    tails: dict = {}
    g.write(wb, cached, tails)
    assert "Residuals" in tails
    path = tmp_path / "big.xlsx"
    save_workbook(wb, path, cached, tails)
    ws = openpyxl.load_workbook(path, read_only=True)["Residuals"]
    rows = list(ws.iter_rows(values_only=True))
    assert len(rows) == 3 + 4000
    assert rows[3][0] == "r0"
    assert rows[-1][0] == "r3999"
    assert rows[-1][2] == pytest.approx(-393.51 + 3999e-3, rel=1e-15)
