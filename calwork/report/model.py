"""The one document model every report format is built from: a :class:`Document` of
:class:`Section` s holding :class:`Paragraph` s, :class:`Table` s and :class:`Figure` s.

Builders (:mod:`calwork.report.content` for the full report, :mod:`calwork.report.summary`
for the summary) say *what* is reported; renderers (:mod:`calwork.report.html`,
:mod:`calwork.report.pdf`, :mod:`calwork.report.plain` for markdown and terminal text) say
*how*. Cells and paragraphs hold plain text; each renderer escapes it for its format.
"""

from __future__ import annotations

from dataclasses import dataclass, field

__all__ = ["Document", "Figure", "Paragraph", "Section", "Table"]


@dataclass
class Paragraph:
    text: str
    kind: str = "text"  # 'text', 'note', 'warning', 'error', 'safety', 'simulated'


@dataclass
class Table:
    headers: list[str]
    rows: list[list[str]]
    caption: str = ""


@dataclass
class Figure:
    png: bytes
    alt: str
    caption: str = ""
    simulated: bool = False


@dataclass
class Section:
    title: str
    anchor: str
    blocks: list[Paragraph | Table | Figure] = field(default_factory=list)
    simulated: bool = False


@dataclass
class Document:
    title: str
    subtitle: str
    sections: list[Section]
    simulated: bool
