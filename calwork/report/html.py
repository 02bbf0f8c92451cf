"""A self-contained HTML report: inline CSS, images embedded as base64 PNG, no external files.

Every piece of text (sample names, notes, warnings, metadata from sheets and logs) is
HTML-escaped; nothing is loaded from anywhere else (no links, scripts, fonts or style sheets),
so the file can be mailed, archived and opened offline. The styles are greyscale-safe: the
simulated-data banner, warnings and errors differ by border style and wording, not by colour
alone.
"""

from __future__ import annotations

import base64
from html import escape
from typing import Any

from calwork.report.model import (
    Document,
    Figure,
    Paragraph,
    Section,
    Table,
    prose_blocks,
    prose_sections,
)

__all__ = ["render_html", "render_html_sections"]

_CSS = """
body { font-family: sans-serif; max-width: 62rem; margin: 1.5rem auto; padding: 0 1rem;
       color: #111; line-height: 1.4; }
h1 { font-size: 1.6rem; margin-bottom: 0.2rem; }
h2 { font-size: 1.25rem; border-bottom: 2px solid #333; padding-bottom: 0.15rem;
     margin-top: 2.2rem; }
.subtitle { color: #444; margin-top: 0; }
table { border-collapse: collapse; margin: 0.6rem 0 1rem; font-size: 0.9rem; }
th, td { border: 1px solid #999; padding: 0.2rem 0.5rem; text-align: left;
         vertical-align: top; }
th { background: #e6e6e6; }
caption { text-align: left; font-weight: bold; padding: 0.2rem 0; }
td.num { text-align: right; font-variant-numeric: tabular-nums; }
p.note { font-style: italic; }
p.warning { border-left: 4px dashed #555; padding-left: 0.6rem; }
p.warning::before { content: "Warning: "; font-weight: bold; }
p.error { border-left: 6px solid #000; padding-left: 0.6rem; font-weight: bold; }
.safety { border: 2px solid #000; padding: 0.6rem 0.8rem; background: #f2f2f2; }
.simulated { border: 3px double #000; padding: 0.5rem 0.8rem; font-weight: bold;
             letter-spacing: 0.02em; }
figure { margin: 0.8rem 0; position: relative; }
figure img { max-width: 100%; height: auto; border: 1px solid #ccc; }
figure .stamp { position: absolute; top: 0.4rem; right: 0.6rem; border: 2px solid #000;
                background: #fff; padding: 0.1rem 0.4rem; font-weight: bold; }
figcaption { font-size: 0.85rem; color: #333; }
nav ol { columns: 2; font-size: 0.9rem; }
"""


def _is_number(text: str) -> bool:
    """True for a number cell ("12.3", "−4.5 ± 0.2", "1.0 / 2.0"): aligned right."""
    t = text.split("±")[0].split("/")[0].strip().replace("−", "-")
    try:
        float(t)
    except ValueError:
        return False
    return True


def _table(t: Table) -> str:
    out = ["<table>"]
    if t.caption:
        out.append(f"<caption>{escape(t.caption)}</caption>")
    out.append("<thead><tr>" + "".join(f"<th>{escape(h)}</th>" for h in t.headers)
               + "</tr></thead><tbody>")
    for row in t.rows:
        cells = []
        for v in row:
            cls = ' class="num"' if _is_number(v) else ""
            cells.append(f"<td{cls}>{escape(v)}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def _figure(f: Figure) -> str:
    data = base64.b64encode(f.png).decode("ascii")
    stamp = '<span class="stamp">SIMULATED DATA</span>' if f.simulated else ""
    return (f'<figure><img src="data:image/png;base64,{data}" alt="{escape(f.alt)}">'
            f"{stamp}<figcaption>{escape(f.caption)}</figcaption></figure>")


def _paragraph(p: Paragraph) -> str:
    if p.kind == "safety":
        return f'<div class="safety" role="note">{escape(p.text)}</div>'
    if p.kind == "simulated":
        return f'<div class="simulated" role="note">{escape(p.text)}</div>'
    cls = f' class="{p.kind}"' if p.kind != "text" else ""
    return f"<p{cls}>{escape(p.text)}</p>"


def _section(s: Section) -> str:
    parts = [f'<section id="{escape(s.anchor)}"><h2>{escape(s.title)}</h2>']
    for block in prose_blocks(s):
        if isinstance(block, Table):
            parts.append(_table(block))
        elif isinstance(block, Figure):
            parts.append(_figure(block))
        else:
            parts.append(_paragraph(block))
    parts.append("</section>")
    return "\n".join(parts)


def render_html_sections(doc: Document) -> str:
    """The document's sections as an HTML fragment (escaped), to place inside a page of
    one's own, e.g. the workbench's."""
    return "\n".join(_section(s) for s in prose_sections(doc))


def render_html(doc: Document) -> str:
    """The document as one self-contained HTML page."""
    toc = "".join(f'<li><a href="#{escape(s.anchor)}">{escape(s.title)}</a></li>'
                  for s in prose_sections(doc))
    body: list[Any] = [
        (f"<header><h1>{escape(doc.title)}</h1>"
        f'<p class="subtitle">{escape(doc.subtitle)}</p></header>'),
    ]
    if doc.simulated:
        body.append('<div class="simulated" role="note">This report contains SIMULATED DATA '
                    "(invented by calwork's simulator, not measurements).</div>")
    body.append(f"<nav><h2>Contents</h2><ol>{toc}</ol></nav>")
    body.extend(_section(s) for s in prose_sections(doc))
    return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
            f"<title>{escape(doc.title)}</title><style>{_CSS}</style></head><body>\n"
            + "\n".join(body) + "\n</body></html>\n")
