"""Sheets planned as grids of cells, then streamed into a write-only openpyxl workbook.

A :class:`Grid` collects cells in any order (so a formula can point at a cell on a sheet
planned later), then writes its rows in order with openpyxl's write-only mode, which keeps
memory flat for large workbooks. Every formula cell's value (from :mod:`.formulas`) is kept and
injected as the cell's cached result when the file is saved (:func:`save_workbook`), so
programs that do not recalculate (previewers, ``openpyxl`` with ``data_only=True``) still show
calwork's numbers; spreadsheet programs recalculate on load (``fullCalcOnLoad``).

Text cells are always stored as strings — never as formulas, whatever they begin with — and
formula-like text gets the quote-prefix style (see :mod:`.sanitise`).
"""

from __future__ import annotations

import math
import re
import zipfile
from collections.abc import Callable, Mapping, Sequence
from contextlib import suppress
from copy import copy
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from xml.sax.saxutils import escape as xml_escape

from openpyxl import Workbook
from openpyxl.cell import WriteOnlyCell
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter
from openpyxl.writer.excel import ExcelWriter

from calwork.core.errors import ExportError
from calwork.report.formulas import Expr, Ref
from calwork.report.sanitise import cell_text, is_formula_like

__all__ = ["Grid", "Text", "grid_of_section", "new_workbook", "number_of", "print_setup",
           "save_workbook", "text_cell"]

#: Plain numbers (inputs and fitted values) are dark blue, formulas black: the usual
#: spreadsheet-modelling cue for "you may change this" versus "this is computed".
INPUT_COLOUR = "1F3A93"
_HEADER_FILL = PatternFill("solid", fgColor="D9D9D9")
_HEADER_BORDER = Border(bottom=Side(style="thin", color="000000"))
_MAX_WIDTH = 60.0


@dataclass(frozen=True)
class Text:
    """Text for a cell (from calwork or from a sheet/log: treated alike, as data)."""

    text: str


@dataclass
class _Entry:
    content: Any
    fmt: str | None
    kind: str  # 'header', 'title', 'note', 'body'


def _display_len(content: Any, fmt: str | None) -> int:
    if isinstance(content, Text):
        longest = max((len(p) for p in content.text.splitlines()), default=0)
        return longest
    value = content.value if isinstance(content, Expr) else content
    if isinstance(value, (int, float)) and math.isfinite(value):
        if fmt and "E" in fmt:
            return 10
        digits = fmt.split(".", 1)[1].count("0") if fmt and "." in fmt else 0
        return len(f"{value:,.{digits}f}") + 1
    return 4


def _as_text(content: Any, fmt: str | None) -> str:
    if content is None:
        return ""
    if isinstance(content, Text):
        return content.text
    value = content.value if isinstance(content, Expr) else content
    if not isinstance(value, (int, float)) or not math.isfinite(value):
        return ""
    if fmt and "E" in fmt:
        return f"{value:.4E}"
    if fmt and fmt.startswith("0"):
        digits = fmt.split(".", 1)[1].count("0") if "." in fmt else 0
        return f"{value:.{digits}f}"
    return f"{value:.10g}"


_NUMBER = re.compile(r"[-+]?(?:0|[1-9]\d*)(?:\.(\d*))?(?:[eE][-+]?\d+)?")


def number_of(text: str) -> tuple[float, str | None] | None:
    """``(value, number format)`` when ``text`` is a plain decimal number (as the documents
    write them: ``-393.51``, ``0.130``, ``1.5e-05``), else ``None`` — also for a leading zero
    (``007`` is an identifier). The format keeps the decimals the text shows."""
    match = _NUMBER.fullmatch(text.strip())
    if match is None:
        return None
    decimals = match.group(1)
    if "e" in text.lower():
        return float(text), "0.00E+00"
    return float(text), ("0." + "0" * len(decimals)) if decimals else "0"


def grid_of_section(title: str, blocks: Sequence[Any]) -> Grid:
    """A sheet for a section of paragraphs and tables (any document): the title, then each
    paragraph as a note and each table with its header row, one empty row between. In the
    table's number columns (:attr:`~calwork.report.model.Table.number_columns`) a plain
    decimal text becomes a number showing the same decimals; all other text stays text."""
    grid = Grid(title)
    grid.put(1, 1, title, kind="title")
    row = 2
    for block in blocks:
        headers = getattr(block, "headers", None)
        if headers is None:  # a paragraph
            grid.put(row, 1, Text(block.text), kind="note")
            row += 1
            continue
        row += 1
        if block.caption:
            grid.put(row, 1, Text(block.caption), kind="note")
            row += 1
        grid.header(row, list(headers))
        for cells in block.rows:
            row += 1
            numeric = block.number_columns
            for col, text in enumerate(cells, start=1):
                number = (number_of(str(text)) if numeric is None or col - 1 in numeric
                          else None)
                if number is None:
                    grid.put(row, col, Text(str(text)) if text != "" else None)
                else:
                    grid.put(row, col, number[0], number[1])
        row += 2
    return grid


class Grid:
    """One worksheet planned cell by cell.

    Parameters
    ----------
    title
        Worksheet title (already valid, see :func:`~calwork.report.sanitise.safe_sheet_title`).
    """

    def __init__(self, title: str) -> None:
        self.title = title
        self.cells: dict[tuple[int, int], _Entry] = {}
        self.freeze: str | None = None
        self.min_widths: dict[int, float] = {}

    # --- planning ------------------------------------------------------------------------------
    def put(self, row: int, col: int, content: Any, fmt: str | None = None,
            kind: str = "body") -> Ref | None:
        """Place ``content`` (number, :class:`Text`, str, Expr or None) at (``row``, ``col``).

        Plain ``str`` is wrapped as :class:`Text`. Returns a :class:`Ref` to the cell when it
        holds a number or a formula (for use in other formulas), else ``None``.
        """
        if isinstance(content, str):
            content = Text(content)
        elif isinstance(content, bool):
            content = Text("yes" if content else "no")
        elif content is not None and not isinstance(content, (Text, Expr, int, float)):
            content = Text(str(content))
        self.cells[(row, col)] = _Entry(content, fmt, kind)
        if isinstance(content, Expr):
            return Ref(self.title, row, col, content.value)
        if isinstance(content, (int, float)) and math.isfinite(content):
            return Ref(self.title, row, col, float(content))
        return None

    def header(self, row: int, labels: Sequence[str], col: int = 1) -> None:
        """A header row (bold, shaded, wrapped)."""
        for i, label in enumerate(labels):
            self.put(row, col + i, Text(label), kind="header")

    # --- reading ---------------------------------------------------------------------------
    def as_blocks(self) -> list[tuple[str, Any]]:
        """The grid as prose: ``("paragraph", text)`` for title and note rows, ``("table",
        (headers, rows))`` for a header row and the rows below it (values of formulas and
        numbers in their cell format), for the prose renderers."""
        rows: dict[int, dict[int, _Entry]] = {}
        for (r, c), entry in self.cells.items():
            if entry.content is not None:
                rows.setdefault(r, {})[c] = entry
        blocks: list[tuple[str, Any]] = []
        table: tuple[list[str], list[list[str]]] | None = None
        first = 1
        for r in sorted(rows):
            line = rows[r]
            kinds = {e.kind for e in line.values()}
            if kinds <= {"title", "note"}:
                table = None
                blocks.extend(("paragraph", _as_text(e.content, e.fmt))
                              for _, e in sorted(line.items()))
                continue
            if "header" in kinds:
                first = min(line)
                width = max(line) - first + 1
                headers = [""] * width
                for c, e in line.items():
                    headers[c - first] = _as_text(e.content, e.fmt)
                table = (headers, [])
                blocks.append(("table", table))
                continue
            if table is None:  # body cells without a header row
                first = 1
                table = ([""] * max(line), [])
                blocks.append(("table", table))
            cells = [""] * len(table[0])
            for c, e in line.items():
                if 0 <= c - first < len(cells):
                    cells[c - first] = _as_text(e.content, e.fmt)
            table[1].append(cells)
        return blocks

    # --- writing -------------------------------------------------------------------------------
    def _widths(self) -> dict[int, float]:
        widths: dict[int, float] = dict(self.min_widths)
        for (_, col), entry in self.cells.items():
            if entry.kind == "header":
                words = entry.content.text.split()
                n = max(12, min(24, max((len(w) for w in words), default=8)))
            elif entry.kind in ("title", "note"):
                continue  # titles and notes may run over empty neighbours
            else:
                n = _display_len(entry.content, entry.fmt)
            widths[col] = max(widths.get(col, 8.0), min(_MAX_WIDTH, n + 2.0))
        return widths

    def write(self, wb: Workbook, cached: dict[str, dict[str, float]],
              tails: dict[str, Callable[[bytes], bytes]] | None = None) -> None:
        """Stream the grid into a new write-only sheet of ``wb``; record formula values.

        With ``tails`` (the mapping :func:`save_workbook` applies), a grid of at least
        :data:`RAW_ROWS_CELLS` cells has its rows after the first written as sheet XML
        directly (:class:`_RawRows`): the same cells, values and styles, ten times faster
        than openpyxl's cell-by-cell writer."""
        ws = wb.create_sheet(self.title)
        for col, width in self._widths().items():
            ws.column_dimensions[get_column_letter(col)].width = width
        if self.freeze:
            ws.freeze_panes = self.freeze
        print_setup(ws)  # before the first row: the fit-to-page flag heads the sheet's XML
        values = cached.setdefault(self.title, {})
        styles = _Styles()
        rows: dict[int, list[tuple[int, _Entry]]] = {}
        for (r, c), entry in self.cells.items():
            rows.setdefault(r, []).append((c, entry))
        last = max(rows, default=0)
        raw = tails is not None and len(self.cells) >= RAW_ROWS_CELLS and last > 1
        for r in range(1, (1 if raw else last) + 1):
            line = sorted(rows.get(r, ()), key=lambda ce: ce[0])
            out: list[Any] = []
            for c, entry in line:
                while len(out) < c - 1:
                    out.append(None)
                out.append(self._cell(ws, r, c, entry, styles, values))
            ws.append(out)
        if raw:
            tails[self.title] = _RawRows(self._rows_xml(wb, ws, rows, last, styles))

    def _rows_xml(self, wb: Workbook, ws: Any, rows: dict[int, list[tuple[int, _Entry]]],
                  last: int, styles: _Styles) -> bytes:
        """Rows 2…``last`` as sheet XML, each cell styled as :meth:`_cell` styles it (one
        prototype cell per style; its index in the workbook's style table)."""
        ids: dict[tuple, int] = {}

        def style_id(key: tuple, entry: _Entry) -> int:
            found = ids.get(key)
            if found is None:
                proto = WriteOnlyCell(ws)
                if key[0] == "text":
                    proto.quotePrefix = key[3]
                styles.style(proto, key, entry)
                found = ids[key] = wb._cell_styles.add(copy(proto._style))
            return found

        parts: list[str] = []
        for r in range(2, last + 1):
            cells: list[str] = []
            for c, entry in sorted(rows.get(r, ()), key=lambda ce: ce[0]):
                content = entry.content
                if content is None:
                    continue
                ref = f"{get_column_letter(c)}{r}"
                if isinstance(content, Text):
                    text, quote = _text_and_quote(content.text)
                    sid = style_id(("text", entry.kind, "\n" in text, quote), entry)
                    space = ' xml:space="preserve"' if text != text.strip() else ""
                    cells.append(f'<c r="{ref}"{_s(sid)} t="inlineStr"><is><t{space}>'
                                 f"{xml_escape(text)}</t></is></c>")
                elif isinstance(content, Expr):
                    sid = style_id(("formula", entry.fmt), entry)
                    value = content.value
                    v = f"<v>{float(value)!r}</v>" if math.isfinite(value) else "<v></v>"
                    cells.append(f'<c r="{ref}"{_s(sid)}><f>'
                                 f"{xml_escape(_formula_body(content.formula(self.title)))}</f>"
                                 f"{v}</c>")
                else:
                    value = float(content)
                    sid = style_id(("input", entry.fmt), entry)
                    if math.isfinite(value):
                        cells.append(f'<c r="{ref}"{_s(sid)} t="n"><v>{value!r}</v></c>')
                    else:
                        cells.append(f'<c r="{ref}"{_s(sid)}/>')
            parts.append(f'<row r="{r}">{"".join(cells)}</row>')
        return "".join(parts).encode("utf-8")

    def _cell(self, ws: Any, r: int, c: int, entry: _Entry, styles: _Styles,
              values: dict[str, float]) -> WriteOnlyCell | None:
        content = entry.content
        if content is None:
            return None
        if isinstance(content, Text):
            cell = text_cell(ws, content.text)
            key = ("text", entry.kind, "\n" in cell.value, cell.quotePrefix)
        elif isinstance(content, Expr):
            cell = WriteOnlyCell(ws, value=content.formula(self.title))
            if math.isfinite(content.value):
                values[f"{get_column_letter(c)}{r}"] = content.value
            key = ("formula", entry.fmt)
        else:
            value = float(content)
            cell = WriteOnlyCell(ws, value=value if math.isfinite(value) else None)
            key = ("input", entry.fmt)
        styles.style(cell, key, entry)
        return cell


def text_cell(ws: Any, value: object) -> WriteOnlyCell:
    """A cell holding ``value`` as text: never a formula, whatever the text begins with.

    Formula-like text (see :func:`~calwork.report.sanitise.is_formula_like`) also gets the
    quote-prefix style, so a spreadsheet program keeps it as text when the cell is edited.
    """
    text, quote = _text_and_quote(value)
    cell = WriteOnlyCell(ws, value=text)
    cell.data_type = "s"  # openpyxl would otherwise take a leading '=' for a formula
    if quote:
        cell.quotePrefix = True
    return cell


def _text_and_quote(value: object) -> tuple[str, bool]:
    """The text a cell holds for ``value`` and whether it needs the quote prefix."""
    text = cell_text(value)
    return text, is_formula_like(str(value)) or is_formula_like(text)


#: Grids of at least this many cells have their rows (after the first) written as sheet XML
#: directly when the caller collects tails (:meth:`Grid.write`).
RAW_ROWS_CELLS = 20_000


def _formula_body(formula: str) -> str:
    return formula[1:] if formula.startswith("=") else formula


def _s(style_id: int) -> str:
    return f' s="{style_id}"' if style_id else ""


@dataclass(frozen=True)
class _RawRows:
    """Rows of sheet XML inserted before ``</sheetData>`` when the workbook is saved."""

    xml: bytes

    def __call__(self, sheet_xml: bytes) -> bytes:
        head, sep, rest = sheet_xml.rpartition(b"</sheetData>")
        if not sep:
            raise ExportError("unexpected worksheet layout from openpyxl (no </sheetData>)")
        return head + self.xml + sep + rest


class _Styles:
    """Shared style objects (openpyxl de-duplicates them; creating few keeps it quick)."""

    def __init__(self) -> None:
        self.fonts = {
            "header": Font(bold=True),
            "title": Font(bold=True, size=13),
            "note": Font(italic=True),
            "input": Font(color=INPUT_COLOUR),
        }
        self.wrap = Alignment(wrap_text=True, vertical="top")
        self.done: dict[tuple, Any] = {}

    def style(self, cell: WriteOnlyCell, key: tuple, entry: Any) -> None:
        """Give ``cell`` the style of its ``key`` (kind of content, number format, ...):
        set attribute by attribute the first time, copied as a whole after that (setting
        styles one by one is most of the time of writing a large sheet)."""
        done = self.done.get(key)
        if done is not None:
            cell._style = copy(done)
            return
        if key[0] == "text":
            self.apply(cell, entry.kind)
            if key[2]:
                cell.alignment = Alignment(wrap_text=True, vertical="top")
        else:
            self.apply(cell, key[0])
            if entry.fmt:
                cell.number_format = entry.fmt
        self.done[key] = copy(cell._style)

    def apply(self, cell: WriteOnlyCell, kind: str) -> None:
        font = self.fonts.get(kind)
        if font is not None:
            cell.font = font
        if kind == "header":
            cell.fill = _HEADER_FILL
            cell.border = _HEADER_BORDER
            cell.alignment = self.wrap


def new_workbook() -> Workbook:
    """An empty write-only workbook that recalculates its formulas when opened."""
    wb = Workbook(write_only=True)
    wb.calculation.fullCalcOnLoad = True
    return wb


_FORMULA_CELL = re.compile(rb'<c r="([A-Z]+[0-9]+)"([^>]*)><f>(.*?)</f><v\s*/>')


def _inject(xml: bytes, values: Mapping[str, float]) -> bytes:
    def repl(m: re.Match[bytes]) -> bytes:
        value = values.get(m.group(1).decode())
        if value is None:
            return m.group(0)
        return b'<c r="%s"%s><f>%s</f><v>%s</v>' % (
            m.group(1), m.group(2), m.group(3), repr(float(value)).encode()
        )

    return _FORMULA_CELL.sub(repl, xml)


_LARGE_PART = 1 << 18


class _PatchingZip(zipfile.ZipFile):
    """A zip archive that rewrites chosen worksheet parts as openpyxl stores them."""

    def __init__(self, path: str, patches: Mapping[str, Callable[[bytes], bytes]]) -> None:
        super().__init__(path, "w", zipfile.ZIP_DEFLATED, allowZip64=True)
        self._patches = patches

    def write(self, filename: Any, arcname: str | None = None, *args: Any, **kwargs: Any) -> None:
        patch = self._patches.get(arcname or "")
        if patch is None:
            super().write(filename, arcname, *args, **kwargs)
            return
        data = patch(Path(filename).read_bytes())
        # large parts are readings: the fastest deflate level costs ~12 % in size, saves 2/3
        # of the compression time
        self.writestr(arcname, data, compresslevel=1 if len(data) > _LARGE_PART else None)


def print_setup(ws: Any) -> None:
    """Print a sheet one page wide (as many pages tall as it needs), with the rows above its
    frozen panes — its title and column headers — repeated on every page."""
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0
    frozen = getattr(ws, "freeze_panes", None)
    if frozen:
        row = int(re.sub(r"[A-Z]+", "", str(frozen)) or 1)
        if row > 1:
            ws.print_title_rows = f"1:{row - 1}"


def save_workbook(wb: Workbook, path: str | Path, cached: Mapping[str, Mapping[str, float]],
                  tails: Mapping[str, Callable[[bytes], bytes]] | None = None) -> Path:
    """Save ``wb`` to ``path`` with the cached formula results and the streamed rows.

    ``cached`` maps sheet title → {cell coordinate: value}; ``tails`` maps sheet title → a
    function that adds rows to the sheet's XML (see
    :class:`calwork.report.wb_readings.ReadingsTail`). Use it inside
    :func:`calwork.report.output.atomic_target`.
    """
    path = Path(path)
    tails = tails or {}
    patches: dict[str, Callable[[bytes], bytes]] = {}
    for i, ws in enumerate(wb.worksheets, 1):
        values, tail = cached.get(ws.title), tails.get(ws.title)
        steps = [step for step in (
            (lambda xml, v=values: _inject(xml, v)) if values else None, tail) if step]
        if steps:
            patches[f"xl/worksheets/sheet{i}.xml"] = _chain(steps)
    try:
        ExcelWriter(wb, _PatchingZip(str(path), patches)).save()
    except OSError:
        for ws in wb.worksheets:  # finish the streamed sheets so their temporary files close
            with suppress(OSError, ValueError):
                ws.close()
        raise
    return path


def _chain(steps: list[Callable[[bytes], bytes]]) -> Callable[[bytes], bytes]:
    def run(xml: bytes) -> bytes:
        for step in steps:
            xml = step(xml)
        return xml

    return run
