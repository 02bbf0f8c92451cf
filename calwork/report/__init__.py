"""Reports that leave the lab: the workbook (live formulas), HTML and PDF reports.

``write_workbook(reduction, path)`` writes an ``.xlsx`` workbook whose arithmetic is live
spreadsheet formulas; ``write_report(reduction, path)`` writes a self-contained ``.html`` or a
``.pdf`` report; ``safe_filename(text)`` turns a sample name into a safe file name.
"""

from importlib import import_module

__all__ = ["safe_filename", "write_report", "write_workbook"]

# imported on first use: the workbook and PDF writers pull in openpyxl and matplotlib, which a
# caller that only needs the text sanitisers (the CSV and markdown outputs) should not pay for
_HOMES = {"safe_filename": "sanitise", "write_report": "document", "write_workbook": "workbook"}


def __getattr__(name: str):
    if name in _HOMES:
        return getattr(import_module(f"calwork.report.{_HOMES[name]}"), name)
    raise AttributeError(f"module 'calwork.report' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
