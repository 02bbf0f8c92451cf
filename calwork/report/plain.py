"""Plain renderers of the document model: markdown (``report.md``) and terminal text.

Every text from a sheet or a log is escaped for markdown (:func:`calwork.report.sanitise.
markdown_text`); figures are left out of both (the HTML and PDF reports carry them).
"""

from __future__ import annotations

import textwrap

from calwork.core.text import format_table
from calwork.report.model import Document, Figure, Paragraph, Table, prose_blocks, prose_sections
from calwork.report.sanitise import markdown_text

__all__ = ["render_markdown", "render_text"]

_MARK = {"warning": "Warning: ", "error": "Error: ", "safety": "", "note": "", "text": "",
         "simulated": ""}


def render_markdown(doc: Document) -> str:
    """The document as markdown: headings, paragraphs, pipe tables."""
    md = markdown_text
    lines = [f"# {md(doc.title)}", ""]
    if doc.subtitle:
        lines += [md(doc.subtitle), ""]
    for section in prose_sections(doc):
        lines += [f"## {md(section.title)}", ""]
        for block in prose_blocks(section):
            if isinstance(block, Paragraph):
                prefix = "- " if block.kind == "warning" else ""
                lines.append(f"{prefix}{_MARK.get(block.kind, '')}{md(block.text)}")
                if block.kind != "warning":
                    lines.append("")
            elif isinstance(block, Table):
                if block.caption:
                    lines += [f"### {md(block.caption)}", ""]
                lines.append("| " + " | ".join(md(h) for h in block.headers) + " |")
                lines.append("|" + "---|" * len(block.headers))
                lines += ["| " + " | ".join(md(c) for c in row) + " |" for row in block.rows]
                lines.append("")
            elif isinstance(block, Figure):
                continue
        if lines[-1] != "":
            lines.append("")
    return "\n".join(lines)


def render_text(doc: Document, *, width: int = 92) -> str:
    """The document as terminal text: titled sections, aligned tables."""
    out: list[str] = []
    for section in prose_sections(doc):
        out += [section.title, ""]
        for block in prose_blocks(section):
            if isinstance(block, Paragraph):
                text = _MARK.get(block.kind, "") + block.text
                out.append(textwrap.fill(text, width, initial_indent="- " if block.kind ==
                                         "warning" else "", subsequent_indent="  "
                                         if block.kind == "warning" else "",
                                         break_on_hyphens=False))
            elif isinstance(block, Table):
                if out and out[-1] != "":
                    out.append("")
                if block.caption:
                    out.append(block.caption)
                out += [format_table(block.headers, block.rows), ""]
        if out[-1] != "":
            out.append("")
    return "\n".join(out).rstrip() + "\n"
