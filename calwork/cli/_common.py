"""Helpers shared by the subcommands: JSON printing and readable tables."""

from __future__ import annotations

import argparse
import json
import sys
import textwrap
from typing import Any

from calwork.core.results import jsonable
from calwork.core.safety import SAFETY_NOTE

__all__ = ["print_json", "with_safety_note", "write_document_outputs"]


def print_json(obj: Any) -> None:
    """Print one JSON object on stdout (records via ``to_dict``; NaN becomes null)."""
    json.dump(jsonable(obj), sys.stdout, indent=2, allow_nan=False)
    sys.stdout.write("\n")


def with_safety_note(description: str) -> str:
    """A command's help text followed by the safety note, wrapped for a terminal."""
    return f"{description.rstrip()}\n\n{textwrap.fill(SAFETY_NOTE, 92)}\n"


def write_document_outputs(doc: Any, args: argparse.Namespace) -> None:
    """The workbook (``--xlsx``) and the report (``--report``) asked for, each written from
    the one document."""
    from calwork.core.errors import ExportError
    from calwork.report.document import write_document

    if args.xlsx:
        if not str(args.xlsx).lower().endswith(".xlsx"):
            raise ExportError("--xlsx writes an .xlsx workbook", path=args.xlsx,
                              expected="a file name ending in .xlsx")
        write_document(doc, args.xlsx)
    if args.report:
        if not str(args.report).lower().endswith((".html", ".htm", ".pdf")):
            raise ExportError("--report writes HTML or PDF", path=args.report,
                              expected="a file name ending in .html or .pdf")
        write_document(doc, args.report)
