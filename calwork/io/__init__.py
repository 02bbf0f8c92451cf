"""Importers and writers: temperature logs, run sheets, resistance thermometers.

``read_log`` turns a log file (delimited text or ``.xlsx``) into a
:class:`~calwork.core.thermogram.Thermogram`; ``read_run_sheet`` turns a run sheet into
:class:`~calwork.core.runinfo.RunInfo` records and ``load_run_log`` reads a run's log with the row's
overrides. ``write_log`` / ``write_run_sheet`` write the same formats back.
"""

from calwork.io.readers import read_log
from calwork.io.sensors import (
    cvd_resistance_ohm,
    cvd_temperature_C,
    steinhart_hart_resistance_ohm,
    steinhart_hart_temperature_K,
)
from calwork.io.sheets import (
    AMENDABLE_COLUMNS,
    amended_run,
    load_run_log,
    read_run_sheet,
    unknown_columns,
)
from calwork.io.writers import write_log, write_run_sheet

__all__ = [
    "AMENDABLE_COLUMNS",
    "amended_run",
    "cvd_resistance_ohm",
    "cvd_temperature_C",
    "load_run_log",
    "read_log",
    "read_run_sheet",
    "steinhart_hart_resistance_ohm",
    "steinhart_hart_temperature_K",
    "unknown_columns",
    "write_log",
    "write_run_sheet",
]
