"""Reading ``.xlsx`` workbooks (logs and run sheets) through openpyxl.

openpyxl parses the workbook XML with defusedxml when it is installed (a declared
dependency), so entity-expansion and external-entity attacks raise instead of running;
:func:`xml_is_defused` reports that and the tests assert it.

Work and memory are bounded before openpyxl parses anything: the archive's declared
uncompressed size (zipfile never inflates a member beyond it), its member count, and then
the rows and columns read. The worksheet's ``<dimension>`` record is ignored (openpyxl's
read-only mode would trust it: a stale one drops rows, a hostile one pads every row to
16 384 columns); the sheet's real extent is read.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

from calwork.core.errors import CalworkError, InputFileError, LogFormatError

__all__ = ["is_xlsx", "read_xlsx_rows", "xml_is_defused"]

_XLSX_SUFFIXES = (".xlsx", ".xlsm")
#: Largest total uncompressed size of a workbook's parts (a 100 000-reading log is ~20 MB).
MAX_UNCOMPRESSED_BYTES = 128 * 2**20
#: Most parts in a workbook archive.
MAX_MEMBERS = 2000
#: Most rows (the format's own limit) and columns read from a sheet.
MAX_ROWS = 1_048_576
MAX_COLUMNS = 512


def _check_archive(data: bytes, path: str | Path, error: type[CalworkError]) -> None:
    import zipfile

    try:
        with zipfile.ZipFile(io.BytesIO(data)) as zf:
            infos = zf.infolist()
    except (zipfile.BadZipFile, OSError, ValueError, EOFError) as exc:
        raise error(f"not a readable .xlsx workbook ({_describe(exc)})", path=path) from None
    if len(infos) > MAX_MEMBERS:
        raise error("the workbook archive has too many parts", path=path, found=len(infos),
                    expected=f"at most {MAX_MEMBERS}")
    total = sum(i.file_size for i in infos)
    if total > MAX_UNCOMPRESSED_BYTES:
        raise error("the workbook unpacks to more than calwork reads (a compression bomb or "
                    "a very large sheet)", path=path, found=f"{total / 2**20:.0f} MiB",
                    expected=f"at most {MAX_UNCOMPRESSED_BYTES // 2**20} MiB")


def xml_is_defused() -> bool:
    """True when openpyxl parses XML through defusedxml."""
    from openpyxl.xml import DEFUSEDXML

    return bool(DEFUSEDXML)


def _describe(exc: BaseException) -> str:
    """One line naming the innermost cause (e.g. defusedxml's ``EntitiesForbidden``)."""
    chain = [exc]
    while (nxt := chain[-1].__cause__ or chain[-1].__context__) is not None and len(chain) < 8:
        chain.append(nxt)
    root = chain[-1]
    text = " ".join(str(root).split())[:200]
    return f"{type(root).__name__}: {text}" if text else type(root).__name__


def is_xlsx(path: str | Path, data: bytes) -> bool:
    """A workbook by suffix, or by the ZIP signature of its bytes."""
    return Path(path).suffix.lower() in _XLSX_SUFFIXES or data[:4] == b"PK\x03\x04"


def read_xlsx_rows(
    data: bytes, path: str | Path, sheet: str | None = None,
    error: type[CalworkError] = LogFormatError,
) -> tuple[str, list[tuple[int, tuple[Any, ...]]]]:
    """``(sheet title, [(row number, cell values), ...])`` of the first or a named sheet.

    Cell values are as openpyxl gives them (``float``, ``int``, ``str``, ``datetime``,
    ``time``, ``timedelta``, ``bool`` or ``None``); empty rows are left out.
    """
    if not xml_is_defused():  # pragma: no cover - defusedxml is a declared dependency
        raise InputFileError("refusing to read a workbook without defusedxml installed",
                             path=path)
    from openpyxl import load_workbook

    _check_archive(data, path, error)
    try:
        wb = load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except Exception as exc:  # zipfile/openpyxl/defusedxml raise many types on damaged files
        raise error(f"not a readable .xlsx workbook ({_describe(exc)})", path=path) from None
    try:
        names = list(wb.sheetnames)
        if sheet is None:
            if not names:
                raise error("the workbook has no sheets", path=path)
            ws = wb[names[0]]
        elif sheet in names:
            ws = wb[sheet]
        else:
            raise error("no sheet of that name", path=path, found=sheet,
                        expected=f"one of {names}")
        rows = []
        ws.reset_dimensions()  # the real extent, never the <dimension> record's claim
        try:
            for number, values in enumerate(ws.iter_rows(min_row=1, values_only=True), 1):
                if number > MAX_ROWS:
                    raise error("the sheet has more rows than a workbook can hold", path=path,
                                expected=f"at most {MAX_ROWS}")
                if values and len(values) > MAX_COLUMNS:
                    raise error("a row has more columns than calwork reads", path=path,
                                line=number, found=len(values),
                                expected=f"at most {MAX_COLUMNS}")
                if values and any(v is not None and v != "" for v in values):
                    rows.append((number, tuple(values)))
        except CalworkError:
            raise
        except Exception as exc:  # damaged sheet XML (incl. forbidden entities)
            raise error(f"the sheet cannot be read ({_describe(exc)})", path=path) from None
        return ws.title, rows
    finally:
        wb.close()
