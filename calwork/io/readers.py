"""Log readers: the importer protocol and its registration point.

A *log reader* turns one file into a :class:`~calwork.core.thermogram.Thermogram`. It is any
object with

``name``
    a short label (provenance and messages name it);
``sniff(path, head) -> bool``
    whether it reads this file, from its path and first bytes (:data:`SNIFF_BYTES`);
``read(path, data, options, sha256) -> Thermogram``
    the readings in SI units (time in s, temperature in K), each with its source row, given
    the whole file's bytes, the caller's :class:`~calwork.io.logs.LogOptions` and the file's
    SHA-256.

:func:`read_log` (through :func:`read_with_registered_reader`) offers the file to the readers
registered with :func:`register_log_reader` (latest first), then to the built-in ones: the
workbook reader, the reader of hand-read records (:mod:`calwork.io.handread`), then the
delimited-text reader, which takes any file and says precisely what
it cannot read. Whatever reader is used, the thermogram's provenance names the file, its
SHA-256 and the reader. DEVELOPERS.md has a worked example of an importer.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any, Protocol, runtime_checkable

import numpy as np

from calwork.core.errors import CalworkError, LogFormatError
from calwork.core.provenance import calwork_version
from calwork.core.thermogram import Thermogram
from calwork.io._text import read_file_bytes
from calwork.io.handread import HandReadReader
from calwork.io.logs import DelimitedTextReader, LogOptions, WorkbookReader

__all__ = [
    "SNIFF_BYTES",
    "LogReader",
    "log_readers",
    "read_log",
    "read_with_registered_reader",
    "register_log_reader",
    "unregister_log_reader",
]

#: How many leading bytes ``sniff`` is shown.
SNIFF_BYTES = 65536

#: The importer recorded in provenance for the built-in readers.
BUILT_IN_IMPORTER = "calwork.io.read_log"


@runtime_checkable
class LogReader(Protocol):
    """What a log reader provides (see the module documentation)."""

    name: str

    def sniff(self, path: Path, head: bytes) -> bool: ...

    def read(self, path: Path, data: bytes, options: LogOptions,
             sha256: str) -> Thermogram: ...


_BUILT_IN: tuple[LogReader, ...] = (WorkbookReader(), HandReadReader(), DelimitedTextReader())
_REGISTERED: list[LogReader] = []


def register_log_reader(reader: Any) -> None:
    """Offer files to ``reader`` before the built-in readers (and before readers registered
    earlier).

    Raises
    ------
    TypeError
        ``reader`` lacks ``name``, ``sniff`` or ``read``, or its name is already taken.
    """
    if not isinstance(reader, LogReader) or not isinstance(getattr(reader, "name", None), str):
        raise TypeError("a log reader needs a str 'name' and the methods 'sniff' and 'read'")
    if any(r.name == reader.name for r in (*_REGISTERED, *_BUILT_IN)):
        raise TypeError(f"a log reader named {reader.name!r} is already registered")
    _REGISTERED.insert(0, reader)


def unregister_log_reader(name: str) -> None:
    """Remove the registered reader called ``name`` (built-in readers stay)."""
    _REGISTERED[:] = [r for r in _REGISTERED if r.name != name]


def log_readers() -> tuple[LogReader, ...]:
    """The readers in the order files are offered to them."""
    return (*_REGISTERED, *_BUILT_IN)


def read_with_registered_reader(path: str | Path, data: bytes, sha256: str,
                                options: LogOptions) -> Thermogram:
    """The thermogram of the first reader that claims the file (see the module docs)."""
    head = data[:SNIFF_BYTES]
    for reader in log_readers():
        if reader in _BUILT_IN:
            if reader.sniff(path, head):
                return reader.read(path, data, options, sha256)
            continue
        try:
            if not reader.sniff(Path(path), head):
                continue
            thermogram = reader.read(Path(path), data, options, sha256)
        except CalworkError as err:
            raise err.with_context(path=path) from None
        except Exception as exc:  # a plug-in's own failure: one clear error, no traceback
            raise LogFormatError(f"the log reader {reader.name!r} failed: {exc}",
                                 path=path) from None
        if not isinstance(thermogram, Thermogram):
            raise LogFormatError(f"the log reader {reader.name!r} returned "
                                 f"{type(thermogram).__name__}, not a Thermogram", path=path)
        provenance = replace(thermogram.provenance, source_path=str(path), sha256=sha256,
                             importer=f"{BUILT_IN_IMPORTER} ({reader.name})",
                             calwork_version=calwork_version())
        return replace(thermogram, provenance=provenance)
    raise LogFormatError("no log reader claims the file", path=path)  # unreachable: text


def read_log(
    path: str | Path,
    *,
    time_column: str | None = None,
    temperature_column: str | None = None,
    time_unit: str | None = None,
    temperature_unit: str | None = None,
    sensor: str | None = None,
    sensor_coefficients: Mapping[str, float] | None = None,
    sheet: str | None = None,
) -> Thermogram:
    """Read a temperature log into a :class:`~calwork.core.thermogram.Thermogram`.

    Parameters
    ----------
    path
        Delimited text (comma, semicolon, tab or whitespace; decimal point or comma; UTF-8
        with or without BOM, UTF-16 with BOM, or Latin-1) or an ``.xlsx`` workbook.
    time_column, temperature_column
        Header names to use instead of the automatic choice.
    time_unit
        ``'s'``, ``'min'``, ``'h'``, ``'ms'``, ``'mm:ss'``, ``'hh:mm:ss'`` or ``'iso'``;
        overrides the unit in the header (default: from the header, else seconds, or the clock
        / ISO 8601 form the cells show).
    temperature_unit
        ``'C'``, ``'K'`` or ``'ohm'``; overrides the header (default: from the header, else
        inferred from the values).
    sensor
        ``'pt100'``, ``'pt1000'`` or ``'steinhart-hart'``: convert a resistance column (Ω).
        Without it, a log with only a resistance column is converted when its preamble names
        ``sensor: pt100`` or ``pt1000``.
    sensor_coefficients
        ``R0_ohm``, ``A``, ``B``, ``C`` overrides (platinum) or ``a``, ``b``, ``c``
        (Steinhart–Hart, required).
    sheet
        Worksheet name for ``.xlsx`` (default: the first sheet).

    Returns
    -------
    Thermogram
        Time in s (ISO timestamps become seconds from the first reading), temperature in K,
        channels ``jacket_K``, ``heater_V``, ``heater_A``, ``standard_resistor_V``,
        ``resistance_ohm`` where present, ``rows`` = source line (or spreadsheet row) of every
        reading, ``metadata`` = preamble plus what was detected.

    Raises
    ------
    InputFileError, LogFormatError, ColumnError, AmbiguousColumnError, ValueCellError,
    TimeAxisError, UnitError, SensorRangeError
        Each naming the file, line and column, what was found and what was expected.
    """
    options = LogOptions(time_column=time_column, temperature_column=temperature_column,
                         time_unit=time_unit, temperature_unit=temperature_unit, sensor=sensor,
                         sensor_coefficients=sensor_coefficients, sheet=sheet)
    data, sha = read_file_bytes(path)
    with np.errstate(all="ignore"):  # overflow → inf, caught by the finite-value checks
        return read_with_registered_reader(path, data, sha, options)
