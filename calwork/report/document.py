"""``write_report``: the reduction as a self-contained HTML page or a PDF, by file suffix;
``write_document``: any document as HTML, PDF, markdown, text or a workbook, by suffix."""

from __future__ import annotations

from pathlib import Path
from typing import Any

from calwork.core.errors import ExportError
from calwork.report.content import build_document
from calwork.report.html import render_html
from calwork.report.output import atomic_target
from calwork.report.pdf import render_pdf

__all__ = ["DOCUMENT_FORMATS", "REPORT_FORMATS", "write_document", "write_report"]

#: File suffixes :func:`write_report` writes.
REPORT_FORMATS = (".html", ".htm", ".pdf")
#: File suffixes :func:`write_document` writes.
DOCUMENT_FORMATS = (".html", ".htm", ".pdf", ".md", ".txt", ".xlsx")


def write_document(doc: Any, path: str | Path) -> Path:
    """Write the document ``doc`` to ``path`` in the format its suffix names (HTML, PDF,
    markdown, text, or an ``.xlsx`` workbook — every format from the one model).

    Raises
    ------
    ExportError
        Unknown suffix, or the file cannot be written.
    """
    path, suffix = _checked(path, DOCUMENT_FORMATS, "unknown output format")
    if suffix == ".xlsx":
        from calwork.report.workbook import render_workbook

        return render_workbook(doc, path)
    from calwork.report.plain import render_markdown, render_text

    with atomic_target(path, what="report") as tmp:
        if suffix == ".pdf":
            render_pdf(doc, tmp)
        elif suffix == ".md":
            tmp.write_text(render_markdown(doc), encoding="utf-8")
        elif suffix == ".txt":
            tmp.write_text(render_text(doc), encoding="utf-8")
        else:
            tmp.write_text(render_html(doc), encoding="utf-8")
    return path


def write_report(reduction: Any, path: str | Path) -> Path:
    """Write the report of ``reduction`` to ``path`` (``.html``/``.htm`` or ``.pdf``).

    The report holds, per sample series, the result with its uncertainty budget and the key
    values used; per calibrated calorimeter, the runs and the control chart of ε (mean,
    ±2s warning and ±3s action limits, from :mod:`calwork.qa`); per run, the values,
    warnings and the thermogram with its periods, drift model and residuals
    (:func:`calwork.rise.plot_rise`). Everything from simulated logs is labelled simulated.
    HTML is self-contained (inline CSS, base64 PNG images, no external resources; all text
    escaped). PDF pages are drawn with matplotlib.

    The report carries the safety note (:data:`calwork.core.safety.SAFETY_NOTE`).

    Raises
    ------
    ExportError
        Unknown suffix, or the file cannot be written.
    """
    path, _ = _checked(path, REPORT_FORMATS, "a report is written as HTML or PDF")
    return write_document(build_document(reduction), path)


def _checked(path: str | Path, formats: tuple[str, ...], message: str) -> tuple[Path, str]:
    """The path and its (lower-case) suffix, which must be one of ``formats``."""
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix not in formats:
        raise ExportError(message, path=path, found=path.suffix,
                          expected=f"one of {list(formats)}")
    return path, suffix
