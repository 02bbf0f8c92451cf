"""The PDF report: matplotlib-drawn A4 pages (``matplotlib.backends.backend_pdf.PdfPages``).

Each section of the document starts a page (summary with the safety note, each calibration,
each sample series, each run); a section that does not fit continues on the next page. Text is
wrapped, tables are drawn with matplotlib's table artist, figures are placed at full width.
Pages from simulated data carry a "SIMULATED DATA" stamp.
"""

from __future__ import annotations

import io
import textwrap
from pathlib import Path
from typing import Any

from calwork.report import model
from calwork.report.model import Document, Figure, Paragraph, Section, Table
from calwork.report.plots import plot_style, simulated_stamp

__all__ = ["render_pdf"]

_PAGE = (8.27, 11.69)  # A4 portrait, inches
_LEFT, _RIGHT, _TOP, _BOTTOM = 0.07, 0.93, 0.95, 0.06
_LINE = 0.0155  # height of a 9-pt text line, figure fraction
_ROW = 0.0165  # height of a table row
_WRAP = 105  # characters per line of 9-pt text at this width


class _Pages:
    """The page being filled and the cursor on it."""

    def __init__(self, pdf: Any, doc: Document) -> None:
        self.pdf, self.doc = pdf, doc
        self.fig: Any = None
        self.y = _TOP
        self.number = 0
        self.simulated = False

    def new(self, title: str | None, simulated: bool) -> None:
        self.finish()
        from matplotlib.figure import Figure as MplFigure

        self.fig = MplFigure(figsize=_PAGE)
        self.number += 1
        self.simulated = simulated
        self.y = _TOP
        if title:
            self.fig.text(_LEFT, self.y, title, fontsize=13, fontweight="bold", va="top")
            self.y -= 0.035

    def finish(self) -> None:
        if self.fig is None:
            return
        footer = f"{self.doc.title} — {self.doc.subtitle} — page {self.number}"
        self.fig.text(_LEFT, 0.025, textwrap.shorten(footer, 150), fontsize=6.5, color="#444")
        if self.simulated:
            simulated_stamp(self.fig)
        self.pdf.savefig(self.fig)
        self.fig = None

    def room(self, height: float, title: str) -> None:
        if self.y - height < _BOTTOM:
            self.new(f"{title} (continued)", self.simulated)


def _paragraph(pages: _Pages, p: Paragraph, title: str) -> None:
    prefix = {"warning": "Warning: ", "error": "", "note": "", "safety": "", "simulated": ""}
    text = prefix.get(p.kind, "") + p.text
    boxed = p.kind in ("safety", "simulated")
    lines = textwrap.wrap(text, _WRAP - 16 if boxed else _WRAP) or [""]
    style = {"fontsize": 9, "va": "top"}
    if p.kind in ("error", "safety", "simulated"):
        style["fontweight"] = "bold"
    if p.kind == "note":
        style["fontstyle"] = "italic"
    height = len(lines) * _LINE + 0.006
    pages.room(height, title)
    box = ({"boxstyle": "square,pad=0.4", "facecolor": "#f2f2f2", "edgecolor": "#000000"}
           if boxed else None)
    pages.fig.text(_LEFT, pages.y, "\n".join(lines), linespacing=1.35, bbox=box, **style)
    pages.y -= height + (0.012 if box else 0.0)


def _table(pages: _Pages, t: Table, title: str) -> None:
    rows = [[textwrap.shorten(c, 70, placeholder="…") for c in r] for r in t.rows] or [
        ["—"] * len(t.headers)]
    start = 0
    while start < len(rows):
        space = int((pages.y - _BOTTOM - 0.03) / _ROW) - 1
        if space < 3:
            pages.new(f"{title} (continued)", pages.simulated)
            continue
        chunk = rows[start:start + space]
        height = (len(chunk) + 1) * _ROW
        if t.caption:
            pages.fig.text(_LEFT, pages.y, t.caption, fontsize=8.5, fontweight="bold",
                           va="top")
            pages.y -= _LINE
        ax = pages.fig.add_axes((_LEFT, pages.y - height, _RIGHT - _LEFT, height))
        ax.axis("off")
        table = ax.table(cellText=chunk, colLabels=t.headers, loc="upper left",
                         cellLoc="left", bbox=(0, 0, 1, 1))
        table.auto_set_font_size(False)
        table.set_fontsize(7 if len(t.headers) > 5 else 7.5)
        table.auto_set_column_width(list(range(len(t.headers))))
        for (r, _c), cell in table.get_celld().items():
            cell.set_linewidth(0.4)
            if r == 0:
                cell.set_facecolor("#e6e6e6")
                cell.get_text().set_fontweight("bold")
        pages.y -= height + 0.015
        start += len(chunk)


def _figure(pages: _Pages, f: Figure, title: str) -> None:
    import matplotlib.image as mpimg

    image = mpimg.imread(io.BytesIO(f.png), format="png")
    h_px, w_px = image.shape[:2]
    width = _RIGHT - _LEFT
    height = width * (h_px / w_px) * (_PAGE[0] / _PAGE[1])
    pages.room(height + _LINE * 2, title)
    ax = pages.fig.add_axes((_LEFT, pages.y - height, width, height))
    ax.imshow(image, interpolation="antialiased")
    ax.axis("off")
    pages.y -= height + 0.004
    for line in textwrap.wrap(f.caption, _WRAP + 10):
        pages.fig.text(_LEFT, pages.y, line, fontsize=7.5, fontstyle="italic", va="top")
        pages.y -= _LINE * 0.9
    pages.y -= 0.01


def _section(pages: _Pages, s: Section, first: bool) -> None:
    pages.new(s.title, s.simulated)
    if first:
        pages.fig.text(_LEFT, pages.y, pages.doc.title + " — " + pages.doc.subtitle,
                       fontsize=9, va="top")
        pages.y -= 0.025
    for block in model.prose_blocks(s):
        if isinstance(block, Table):
            _table(pages, block, s.title)
        elif isinstance(block, Figure):
            _figure(pages, block, s.title)
        else:
            _paragraph(pages, block, s.title)


def render_pdf(doc: Document, path: str | Path) -> int:
    """Write the document to ``path`` as PDF; returns the number of pages."""
    from matplotlib.backends.backend_pdf import PdfPages

    with plot_style(), PdfPages(path, metadata={"Title": doc.title,
                                                "Subject": doc.subtitle,
                                                "Creator": "calwork"}) as pdf:
        pages = _Pages(pdf, doc)
        for i, section in enumerate(model.prose_sections(doc)):
            _section(pages, section, i == 0)
        pages.finish()
        count = pdf.get_pagecount()
    return count
