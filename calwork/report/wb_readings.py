"""Readings of every thermogram, one sheet per run, each with a native chart.

Why one sheet per run rather than one long ``Readings`` table (run, time, temperature):

* each log stays self-contained beside its provenance (file, SHA-256, importer rows), its
  fitted periods and its chart, which is what a reviewer checks run by run;
* the readings stream as two plain number columns; a long table repeats the run id as text
  on every reading, which doubled the export time in the 200-run benchmark
  (``tests/benchmarks/bench_export.py``) and fills a sheet's 1 048 576 rows after ~290 logs
  of 3 600 readings;
* a chart's series are then simple row ranges of its own sheet.

The chart (openpyxl ``ScatterChart``) shows the fore, main and after periods as separate
series, vertical markers at the firing time and at the end of the main period, and the fitted
drift model either side (from the rise result's ``fore_curve``/``after_curve``), with the
Okabe–Ito colours and distinct dash patterns so that it reads in greyscale too.
"""

from __future__ import annotations

import itertools
from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any
from xml.sax.saxutils import escape as xml_escape

import numpy as np
from openpyxl.cell import WriteOnlyCell
from openpyxl.chart import Reference, ScatterChart, Series
from openpyxl.styles import Font, PatternFill

from calwork.core.errors import CalworkError, ExportError
from calwork.report.grid import print_setup, text_cell
from calwork.report.plots import OKABE_ITO
from calwork.report.sanitise import cell_text
from calwork.report.texts import SIMULATED_NOTE, is_simulated, primary_rise

__all__ = ["ReadingsTail", "write_log_sheet"]

_MODEL_POINTS = 40
_BOLD = Font(bold=True)
_FILL = PatternFill("solid", fgColor="D9D9D9")

# (colour, dash) per chart series; dashes follow DrawingML preset names.
_SERIES_STYLE = {
    "fore": (OKABE_ITO["blue"], "solid", 15000),
    "main": (OKABE_ITO["vermillion"], "solid", 22000),
    "after": (OKABE_ITO["bluish green"], "dashDot", 15000),
    "fore model": (OKABE_ITO["orange"], "dash", 12000),
    "after model": (OKABE_ITO["sky blue"], "lgDash", 12000),
    "fire": (OKABE_ITO["black"], "sysDot", 9000),
    "end": (OKABE_ITO["black"], "sysDash", 9000),
}


def _text(ws: Any, value: Any, bold: bool = False) -> WriteOnlyCell:
    """A text cell (never a formula; formula-like text gets the quote prefix)."""
    cell = text_cell(ws, value)
    if bold:
        cell.font = _BOLD
        cell.fill = _FILL
    return cell


def _num(value: Any) -> float | None:
    try:
        value = float(value)
    except (TypeError, ValueError):
        return None
    return value if np.isfinite(value) else None


def _curve(rise: Any, name: str, t: np.ndarray) -> np.ndarray | None:
    fn = getattr(rise, name, None)
    if fn is None:
        return None
    try:
        values = np.asarray(fn(t), dtype=float)
    except (CalworkError, ValueError, TypeError, ArithmeticError):
        return None
    return values if values.shape == t.shape and np.all(np.isfinite(values)) else None


def _info_block(run: Any, th: Any, rise: Any, method: str | None) -> list[tuple[str, Any]]:
    prov = th.provenance
    rows: list[tuple[str, Any]] = [
        ("run", run.run), ("kind", run.kind), ("sample", run.sample),
        ("calorimeter", run.calorimeter),
        ("log file", prov.source_path or "(in memory)"), ("SHA-256", prov.sha256),
        ("importer", prov.importer),
        ("source rows", None if prov.first_row is None else f"{prov.first_row}–{prov.last_row}"),
        ("readings", th.n_points),
        ("simulated", "yes — " + SIMULATED_NOTE if is_simulated(th) else "no"),
        ("rise method", getattr(rise, "method", None) or method),
        ("firing time (s)", _num(getattr(rise, "fire_time_s", None))),
        ("end of main period (s)", _num(getattr(rise, "main_end_s", None))),
        ("corrected rise ΔT_c (K)", _num(run.corrected_rise_K)),
        ("u(ΔT_c) (K)", _num(run.u_corrected_rise_K)),
        ("cooling constant k (1/s)", _num(getattr(rise, "k_per_s", None))),
        ("convergence temperature T∞ (K)", _num(getattr(rise, "T_inf_K", None))),
    ]
    rows.extend((f"log metadata: {k}", v) for k, v in th.metadata.items())
    return [(k, v) for k, v in rows if v is not None]


def _period_rows(t: np.ndarray, fire: float | None, end: float | None
                 ) -> list[tuple[str, int, int]]:
    """Sheet row ranges (first, last; data start at row 2) of the fore/main/after periods."""
    n = t.size
    if fire is None or end is None or not t[0] < fire < end < t[-1]:
        return [("readings", 2, n + 1)]
    i_fire = int(np.searchsorted(t, fire, side="right")) - 1
    i_end = int(np.searchsorted(t, end, side="left"))
    i_fire, i_end = max(i_fire, 0), min(i_end, n - 1)
    out = [("fore", 2, 2 + i_fire), ("main", 2 + i_fire, 2 + i_end), ("after", 2 + i_end, n + 1)]
    return [(name, a, b) for name, a, b in out if b > a]


def _series(ws: Any, name: str, label: str, xcol: int, ycol: int, first: int, last: int) -> Series:
    x = Reference(ws, min_col=xcol, min_row=first, max_row=last)
    y = Reference(ws, min_col=ycol, min_row=first, max_row=last)
    s = Series(y, x, title=label)
    colour, dash, width = _SERIES_STYLE.get(name, (OKABE_ITO["black"], "solid", 12000))
    s.marker.symbol = "none"
    s.smooth = False
    s.graphicalProperties.line.solidFill = colour
    s.graphicalProperties.line.prstDash = dash
    s.graphicalProperties.line.width = width
    return s


@dataclass(frozen=True)
class ReadingsTail:
    """Rows written as raw sheet XML after openpyxl has streamed the sheet's head.

    openpyxl serialises each cell through its XML writer (≈ 40 µs a cell without lxml); the
    bulk of a log is two plain number columns, so those rows — and the chart's helper tables
    in columns D:E, numbers and calwork's own labels — are formatted directly (``repr`` of a
    float: the shortest text that reads back to the same double) and inserted before
    ``</sheetData>`` when the file is saved (:func:`calwork.report.grid.save_workbook`).
    """

    first_row: int
    time_s: list[float]
    temperature_K: list[float]
    #: (D, E) cells of the first rows: a float, a label of calwork's own, or None.
    side: list[tuple[Any, Any]]

    def __call__(self, xml: bytes) -> bytes:
        head, sep, rest = xml.rpartition(b"</sheetData>")
        if not sep:
            raise ExportError("unexpected worksheet layout from openpyxl (no </sheetData>)")
        return head + self.rows_xml() + sep + rest

    def rows_xml(self) -> bytes:
        n_side = len(self.side)
        n = max(len(self.time_s), n_side)
        r0 = self.first_row
        parts = []
        for i in range(min(n_side, n)):
            r = r0 + i
            cells = ""
            if i < len(self.time_s):
                cells = (f'<c r="A{r}"><v>{self.time_s[i]!r}</v></c>'
                         f'<c r="B{r}"><v>{self.temperature_K[i]!r}</v></c>')
            for col, value in zip("DE", self.side[i], strict=True):
                cells += _raw_cell(col, r, value)
            parts.append(f'<row r="{r}">{cells}</row>')
        parts.extend([
            f'<row r="{r}"><c r="A{r}"><v>{a!r}</v></c><c r="B{r}"><v>{b!r}</v></c></row>'
            for r, a, b in zip(itertools.count(r0 + n_side), self.time_s[n_side:],
                               self.temperature_K[n_side:])
        ])
        return "".join(parts).encode()


def _raw_cell(col: str, row: int, value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, str):
        return (f'<c r="{col}{row}" t="inlineStr"><is><t>{xml_escape(cell_text(value))}</t>'
                "</is></c>")
    return f'<c r="{col}{row}"><v>{float(value)!r}</v></c>'


def write_log_sheet(wb: Any, title: str, run: Any, th: Any, *, method: str | None,
                    charts: bool) -> ReadingsTail:
    """Write one run's readings (time in s, temperature in K) with its chart to ``wb``.

    Returns the :class:`ReadingsTail` that :func:`~calwork.report.grid.save_workbook` must
    apply to the sheet's XML.
    """
    ws = wb.create_sheet(title)
    for col, width in (("A", 12), ("B", 16), ("C", 3), ("D", 34), ("E", 66)):
        ws.column_dimensions[col].width = width
    ws.freeze_panes = "A2"
    print_setup(ws)
    rise = primary_rise(run)
    t = np.asarray(th.time_s, dtype=float)
    T = np.asarray(th.temperature_K, dtype=float)
    fire = _num(getattr(rise, "fire_time_s", None))
    end = _num(getattr(rise, "main_end_s", None))
    info = _info_block(run, th, rise, method)

    # the head (header row and the information block, text from logs among it) via openpyxl
    tl, Tl = t.tolist(), T.tolist()
    n_head = len(info) + 1
    for r in range(n_head):
        if r == 0:
            row: list[Any] = [_text(ws, "time t (s)", True), _text(ws, "temperature T (K)", True),
                              None, _text(ws, "about this log", True)]
        else:
            row = [tl[r - 1], Tl[r - 1]] if r <= len(tl) else [None, None]
            k, v = info[r - 1]
            row += [None, _text(ws, k), _text(ws, v) if isinstance(v, str) else v]
        ws.append(row)

    # chart helper tables (D:E, below the block) and the remaining readings: fast path
    side: list[tuple[Any, Any]] = []
    helpers: dict[str, tuple[int, int]] = {}
    first_tail = n_head + 1
    if charts:
        t_lo, t_hi = float(T.min()), float(T.max())
        blocks: list[tuple[str, str, Iterable[tuple[float, float]]]] = []
        if fire is not None:
            blocks.append(("fire", "chart: firing-time marker (t s, T K)",
                           [(fire, t_lo), (fire, t_hi)]))
        if end is not None:
            blocks.append(("end", "chart: end-of-main-period marker (t s, T K)",
                           [(end, t_lo), (end, t_hi)]))
        if fire is not None and end is not None:
            tf = np.linspace(t[0], end, _MODEL_POINTS)
            ta = np.linspace(fire, t[-1], _MODEL_POINTS)
            fore, after = _curve(rise, "fore_curve", tf), _curve(rise, "after_curve", ta)
            if fore is not None:
                blocks.append(("fore model", "chart: fitted drift model, fore (t s, T K)",
                               zip(tf.tolist(), fore.tolist(), strict=True)))
            if after is not None:
                blocks.append(("after model", "chart: fitted drift model, after (t s, T K)",
                               zip(ta.tolist(), after.tolist(), strict=True)))
        side.append((None, None))
        for key, label, points in blocks:
            side.append((label, None))
            start = first_tail + len(side)
            side.extend(points)
            helpers[key] = (start, first_tail + len(side) - 1)
    tail = ReadingsTail(first_row=first_tail, time_s=tl[n_head - 1:],
                        temperature_K=Tl[n_head - 1:], side=side)

    if not charts:
        return tail
    chart = ScatterChart()
    chart.title = f"Run {run.run}: thermogram" + (" (simulated data)" if is_simulated(th) else "")
    chart.style = 2
    chart.height, chart.width = 10.0, 20.0
    chart.x_axis.title = "time t (s)"
    chart.y_axis.title = "temperature T (K)"
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.x_axis.scaling.min, chart.x_axis.scaling.max = float(t[0]), float(t[-1])
    pad = 0.05 * max(float(T.max() - T.min()), 1e-3)
    chart.y_axis.scaling.min = float(np.floor((T.min() - pad) * 100) / 100)
    chart.y_axis.scaling.max = float(np.ceil((T.max() + pad) * 100) / 100)
    labels = {"fore": "fore period", "main": "main period", "after": "after period",
              "readings": "readings"}
    for name, first, last in _period_rows(t, fire, end):
        chart.series.append(_series(ws, name, labels[name], 1, 2, first, last))
    for key, label in (("fore model", "drift model (fore)"), ("after model", "drift model (after)"),
                       ("fire", "firing time"), ("end", "end of main period")):
        if key in helpers:
            first, last = helpers[key]
            chart.series.append(_series(ws, key, label, 4, 5, first, last))
    ws.add_chart(chart, "G2")
    return tail
