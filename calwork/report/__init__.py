"""Reports that leave the lab: the workbook (live formulas), HTML and PDF reports.

``write_workbook(reduction, path)`` writes an ``.xlsx`` workbook whose arithmetic is live
spreadsheet formulas; ``write_report(reduction, path)`` writes a self-contained ``.html`` or a
``.pdf`` report; ``safe_filename(text)`` turns a sample name into a safe file name.
"""

from calwork.report.document import write_report
from calwork.report.sanitise import safe_filename
from calwork.report.workbook import write_workbook

__all__ = ["safe_filename", "write_report", "write_workbook"]
