"""The records and helpers every stage shares: the exception tree, units and constants, the
thermogram, the run-sheet record, the result records, provenance and small numerical helpers.

Nothing here imports any other part of calwork; public names are re-exported by
:mod:`calwork` itself (``calwork.Thermogram``, ``calwork.CalworkError`` …).
"""
