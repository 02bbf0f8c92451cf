"""The one document model every output format is built from: a :class:`Document` of
:class:`Section` s holding :class:`Paragraph` s, :class:`Table` s, :class:`Figure` s, and —
for spreadsheets — :class:`Calculation` s (cells with live formulas) and :class:`Readings`.

Builders (:mod:`calwork.report.content` for the full report, :mod:`calwork.report.summary`
for the summary, :mod:`calwork.report.views` for the other commands,
:func:`calwork.report.workbook.workbook_document` for the workbook) say *what* is reported;
renderers (:mod:`calwork.report.html`, :mod:`calwork.report.pdf`, :mod:`calwork.report.plain`
for markdown and terminal text, :func:`calwork.report.workbook.render_workbook` for xlsx)
say *how*. Every renderer takes every document: the prose formats show a calculation's
values as a table and leave readings to the figures (:func:`prose_blocks`); the workbook
writes paragraphs and tables of any section as a sheet. Cells and paragraphs hold plain text;
each renderer escapes it for its format.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

__all__ = ["Calculation", "Document", "Figure", "Paragraph", "Readings", "Section", "Table",
           "prose_blocks", "prose_sections"]


@dataclass
class Paragraph:
    text: str
    kind: str = "text"  # 'text', 'note', 'warning', 'error', 'safety', 'simulated'


@dataclass
class Table:
    headers: list[str]
    rows: list[list[str]]
    caption: str = ""
    #: Columns (0-based) whose plain decimal texts a spreadsheet stores as numbers; ``None``:
    #: every column. Identifiers (run ids, sample names) belong to the other columns.
    number_columns: tuple[int, ...] | None = None


@dataclass
class Figure:
    png: bytes
    alt: str
    caption: str = ""
    simulated: bool = False


@dataclass
class Calculation:
    """A sheet of cells at fixed places — numbers, text, and formulas that carry their own
    values — planned on a :class:`calwork.report.grid.Grid` (formulas from
    :mod:`calwork.report.formulas`, which may point at cells of other calculations). The
    workbook writes it with live formulas; the prose formats show its values."""

    grid: Any

    def as_prose(self) -> list[Paragraph | Table]:
        """The calculation as the prose formats show it: its titles and notes as paragraphs,
        each header row with the rows below it as a table of values."""
        return [Paragraph(item, "note") if kind == "paragraph" else Table(*item)
                for kind, item in self.grid.as_blocks()]


@dataclass
class Readings:
    """The readings of one run's log (time, temperature) with its periods and fitted drift:
    a sheet with a chart in a workbook; the prose formats draw the thermogram as a
    :class:`Figure` instead."""

    run: Any
    thermogram: Any
    method: str | None
    charts: bool = True


Block = Paragraph | Table | Figure | Calculation | Readings


@dataclass
class Section:
    title: str
    anchor: str
    blocks: list[Block] = field(default_factory=list)
    simulated: bool = False
    #: A sheet only the workbook needs (the live formulas of what another section already
    #: shows); the prose formats leave it out.
    workbook_only: bool = False


@dataclass
class Document:
    title: str
    subtitle: str
    sections: list[Section]
    simulated: bool


def prose_blocks(section: Section) -> Iterator[Paragraph | Table | Figure]:
    """The blocks of ``section`` as the prose formats show them: a calculation as its notes
    and tables of values; readings are left to the figures."""
    for block in section.blocks:
        if isinstance(block, Calculation):
            yield from block.as_prose()
        elif not isinstance(block, Readings):
            yield block


def prose_sections(doc: Document) -> list[Section]:
    """The sections the prose formats show (all but the workbook-only ones)."""
    return [s for s in doc.sections if not s.workbook_only]
