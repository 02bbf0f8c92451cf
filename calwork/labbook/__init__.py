"""The calwork lab book: runs, raw files, results and an audit trail in one SQLite file.

>>> from calwork.labbook import open_labbook                      # doctest: +SKIP
>>> with open_labbook("calwork-labbook.sqlite", create=True) as book:  # doctest: +SKIP
...     book.add_sheet("runs.csv")

See :mod:`calwork.labbook.store` for the reliability rules (one transaction per change, WAL,
crash safety, busy timeout, refusing foreign files) and :mod:`calwork.labbook.audit` for the
hash chain.
"""

from calwork.labbook.audit import AuditEntry
from calwork.labbook.book import Labbook, open_labbook
from calwork.labbook.ingest import AddResult
from calwork.labbook.queries import Filters
from calwork.labbook.recompute import RecomputeReport
from calwork.labbook.store import DEFAULT_LABBOOK_NAME
from calwork.labbook.verify import VerifyReport

__all__ = [
    "DEFAULT_LABBOOK_NAME",
    "AddResult",
    "AuditEntry",
    "Filters",
    "Labbook",
    "RecomputeReport",
    "VerifyReport",
    "open_labbook",
]
