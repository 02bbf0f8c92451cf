"""Text layer of the importers: read bytes once, decode, split lines, sniff the layout.

Sniffing looks at the first few kilobytes only: for every separator/decimal-mark pair it finds
the first run of consistent value-like lines (the readings); the header is the nearest line
above them made only of names, an optional units row sits between the two, and everything
above the header is the preamble.
"""

from __future__ import annotations

import csv
import re
from dataclasses import dataclass
from pathlib import Path

from calwork.core.errors import InputFileError, LogFormatError
from calwork.core.provenance import sha256_bytes

__all__ = [
    "Layout",
    "decode_bytes",
    "parse_preamble",
    "read_file_bytes",
    "sniff_layout",
    "split_cells",
    "split_lines",
    "value_like",
]

#: Separator candidates in order of preference (``None`` = runs of whitespace).
_SEPARATORS: tuple[str | None, ...] = ("\t", ";", ",", None)
SEPARATOR_NAMES = {"\t": "tab", ";": "semicolon", ",": "comma", None: "whitespace"}
SNIFF_CHARS = 64 * 1024
SNIFF_LINES = 400
_RUN = 3  # consistent value-like lines that make a block of readings
_COMMENT = ("#", "//", "%")

_NUM = {
    ".": re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"),
    ",": re.compile(r"[+-]?(?:\d+(?:,\d*)?|,\d+)(?:[eE][+-]?\d+)?"),
}
_NONFINITE = re.compile(r"[+-]?(?:nan|inf|infinity)", re.IGNORECASE)
CLOCK = re.compile(r"(\d+):(\d{1,2})(?::(\d{1,2}))?(?:[.,](\d+))?")
ISO = re.compile(
    r"\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?)?(?:Z|[+-]\d{2}:?\d{2})?"
)
# a header name in a whitespace-separated file, with an optional "[unit]" / "(unit)" after it
_WS_HEADER = re.compile(r"[^\s\[\(]+(?:\s*[\[\(][^\]\)]*[\]\)])?|[\[\(][^\]\)]*[\]\)]|\S+")


def read_file_bytes(path: str | Path) -> tuple[bytes, str]:
    """The file's bytes and their SHA-256; missing or unreadable files raise InputFileError."""
    p = Path(path)
    if "\x00" in str(p):
        raise InputFileError("a file name cannot contain a NUL character", path=repr(str(p)))
    try:
        data = p.read_bytes()
    except FileNotFoundError:
        raise InputFileError("file not found", path=path) from None
    except IsADirectoryError:
        raise InputFileError("is a directory, not a file", path=path) from None
    except (OSError, ValueError) as exc:  # ENAMETOOLONG, ELOOP, …
        reason = getattr(exc, "strerror", None) or str(exc)
        raise InputFileError(f"cannot read the file: {reason}", path=path) from None
    return data, sha256_bytes(data)


def decode_bytes(data: bytes, path: str | Path) -> tuple[str, str]:
    """Decode text trying, in order: a BOM (UTF-8 or UTF-16), UTF-8, UTF-16 without BOM
    (NUL-byte pattern), Latin-1. Returns ``(text, encoding_name)``."""
    if data.startswith(b"\xef\xbb\xbf"):
        candidates = ["utf-8-sig"]
    elif data.startswith((b"\xff\xfe", b"\xfe\xff")):
        candidates = ["utf-16"]
    else:
        candidates = ["utf-8"]
        head = data[:4096]
        if head and head.count(b"\x00") > len(head) // 4:
            even, odd = head[0::2].count(b"\x00"), head[1::2].count(b"\x00")
            candidates.append("utf-16-le" if odd > even else "utf-16-be")
        candidates.append("latin-1")
    last: UnicodeDecodeError | None = None
    for enc in candidates:
        try:
            text = data.decode(enc)
        except UnicodeDecodeError as exc:
            last = exc
            continue
        if "\x00" in text:
            continue
        return text, {"utf-16-le": "utf-16", "utf-16-be": "utf-16"}.get(enc, enc)
    reason = f" ({last.reason} at byte {last.start})" if last is not None else ""
    raise InputFileError(
        f"not a text file in a readable encoding{reason}",
        path=path, expected="UTF-8 (with or without BOM), UTF-16 with BOM, or Latin-1 text",
    )


def split_lines(text: str) -> list[str]:
    """Lines without their end-of-line characters (``\\n``, ``\\r\\n`` or ``\\r``)."""
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    return lines


def is_comment(line: str) -> bool:
    """True for a blank line or one starting with ``#``, ``//`` or ``%``."""
    s = line.strip()
    return not s or s.startswith(_COMMENT)


def split_cells(line: str, sep: str | None, *, header: bool = False) -> list[str]:
    """Cells of one line (stripped; CSV quoting honoured for real separators)."""
    if sep is None:
        parts = _WS_HEADER.findall(line) if header else line.split()
        return [p.strip().strip('"') for p in parts]
    if '"' in line:
        try:
            parts = next(csv.reader([line], delimiter=sep))
        except (csv.Error, StopIteration):
            parts = line.split(sep)
    else:
        parts = line.split(sep)
    return [p.strip() for p in parts]


def value_like(cell: str, decimal: str) -> bool:
    """Could ``cell`` be a reading (number, NaN/inf, clock time, ISO date-time)?"""
    return bool(
        _NUM[decimal].fullmatch(cell) or _NONFINITE.fullmatch(cell)
        or CLOCK.fullmatch(cell) or ISO.fullmatch(cell)
    )


def _name_like(cell: str, decimal: str) -> bool:
    return not value_like(cell, ".") and not value_like(cell, decimal)


@dataclass(frozen=True)
class Layout:
    """What sniffing found (line indices are 0-based into the line list)."""

    sep: str | None
    decimal: str
    header_index: int
    units_index: int | None
    data_index: int
    n_fields: int
    header: tuple[str, ...]
    units: tuple[str, ...] | None


def _find_block(lines: list[str], sep: str | None, dec: str,
                stop_after: int | None = None) -> tuple[int, int, int] | None:
    """(start index, field count, run length up to 12) of the first block of readings.

    ``stop_after``: a block found by another separator already starts at this index with a
    full run, so a block starting later cannot win — the scan stops there."""
    run_start, run_len, run_n = -1, 0, 0
    for i, line in enumerate(lines):
        if stop_after is not None and i > stop_after and run_len == 0:
            return None
        if is_comment(line):
            continue
        if sep is not None and sep not in line:
            if run_len >= _RUN:
                break
            run_len = 0
            continue
        cells = _trim(split_cells(line, sep))
        values = sum(1 for c in cells if value_like(c, dec))
        ok = (values >= 2 and 2 * values >= len(cells)  # text columns (events, notes) allowed
              and not (sep is not None and any(_packed_values(c, dec) for c in cells)))
        if ok and run_len and len(cells) == run_n:
            run_len += 1
            if run_len >= 12:
                break
        elif run_len >= _RUN:
            break
        elif ok:
            run_start, run_len, run_n = i, 1, len(cells)
        else:
            run_len = 0
    if run_len >= _RUN or (run_len and run_start >= 0 and _rest_is_short(lines, run_start)):
        return run_start, run_n, run_len
    return None


def _packed_values(cell: str, dec: str) -> bool:
    """True for a cell such as ``'0000   23'``: several readings run together by whitespace,
    the sign that the candidate separator splits inside the numbers (a whitespace-separated
    log with decimal commas is not a comma-separated one)."""
    parts = cell.split()
    return (len(parts) >= 2 and not value_like(cell, dec)  # '2024-05-01 09:30:00' is one
            and all(value_like(p, dec) for p in parts))


def _rest_is_short(lines: list[str], start: int) -> bool:
    # a short file (fewer readings than a run) still has a block, so "too few points" is
    # reported instead of "no readings"
    return sum(1 for ln in lines[start:] if not is_comment(ln)) < _RUN


def _sample_end(lines: list[str]) -> int:
    """End of the sniffing sample: a dozen lines past the first three lines that start like
    numbers (a cheap guess of where the readings begin), within the first few kilobytes."""
    size, run = 0, 0
    for i, line in enumerate(lines):
        size += len(line) + 1
        if size > SNIFF_CHARS or i >= SNIFF_LINES:
            return i + 1
        head = line.lstrip()[:1]
        if head and (head.isdigit() or head in "+-.,"):
            run += 1
            if run >= _RUN:
                return i + 13
        elif not is_comment(line):
            run = 0
    return len(lines)


def sniff_layout(lines: list[str], path: str | Path) -> Layout:
    """Find separator, decimal mark, header, optional units row and first reading."""
    sample = lines[: _sample_end(lines)]
    best = None
    tied = False
    for sep in _SEPARATORS:
        for dec in (".", ","):
            if sep == "," and dec == ",":
                continue
            full = best is not None and best[0][0] == -12
            found = _find_block(sample, sep, dec, best[3] if full else None)
            if found is None:
                continue
            start, n, run = found
            key = (-run, start)
            if best is None or key < best[0]:
                best = (key, sep, dec, start, n)
            elif dec == "," and best[1] == sep and key == best[0]:
                tied = True  # both marks fit the first readings (whole numbers): look further
    if tied and best is not None and best[2] == ".":
        rest = "\n".join(lines[best[3]:])
        if "," in rest and "." not in rest:
            best = (best[0], best[1], ",", best[3], best[4])
    if best is None:
        raise LogFormatError(
            "no readings found (no run of lines with two or more numeric columns)",
            path=path, expected="a header row of column names followed by numeric rows",
        )
    _, sep, dec, start, n = best
    header_index = None
    for i in range(start - 1, -1, -1):
        line = lines[i]
        if is_comment(line):
            continue
        cells = _trim(split_cells(line, sep, header=True))
        if any(not _name_like(c, dec) for c in cells if c):
            continue  # a damaged reading above the block: part of the data
        if sum(1 for c in cells if c) >= 2:
            header_index = i
        break
    if header_index is None:
        raise LogFormatError(
            "no header row (a line of column names) above the readings",
            path=path, line=start + 1, expected="column names such as 'time_s,temperature_C'",
        )
    units_index = None
    header_cells = _trim(split_cells(lines[header_index], sep, header=True))
    prev = _previous_content(lines, header_index)
    if prev is not None:
        prev_cells = _trim(split_cells(lines[prev], sep, header=True))
        if (len(prev_cells) == len(header_cells) and all(prev_cells)
                and all(_name_like(c, dec) for c in prev_cells)
                and all(_looks_like_unit(c) for c in header_cells if c)):
            units_index, header_index = header_index, prev
            header_cells, units_cells = prev_cells, tuple(split_cells(
                lines[units_index], sep, header=True))
    units = units_cells if units_index is not None else None
    data_index = (units_index if units_index is not None else header_index) + 1
    return Layout(sep=sep, decimal=dec, header_index=header_index, units_index=units_index,
                  data_index=data_index, n_fields=n, header=tuple(header_cells), units=units)


_UNIT_WORDS = re.compile(
    r"\[?\(?\s*(s|sec|min|h|ms|°c|ºc|c|degc|k|ohm|ω|Ω|v|a|mm:ss|hh:mm:ss|iso|-)?\s*\)?\]?",
    re.IGNORECASE,
)


def _looks_like_unit(cell: str) -> bool:
    return bool(_UNIT_WORDS.fullmatch(cell.strip()))


def _previous_content(lines: list[str], index: int) -> int | None:
    for i in range(index - 1, -1, -1):
        if not is_comment(lines[i]):
            return i
    return None


def _trim(cells: list[str]) -> list[str]:
    while cells and not cells[-1]:
        cells.pop()
    return cells


_KV = re.compile(r"\s*([^:=;\t,]+?)\s*(?::|=|;|\t|,)\s*(.*?)\s*")


def parse_preamble(lines: list[str], start_line_no: int = 1) -> dict[str, str]:
    """Metadata from preamble lines: ``# key: value``, ``key=value``, ``key;value`` ...

    Lines that are not key/value pairs are kept as ``note_<line>`` entries.
    """
    meta: dict[str, str] = {}
    for k, raw in enumerate(lines):
        text = raw.strip()
        for mark in _COMMENT:
            if text.startswith(mark):
                text = text[len(mark):].strip()
                break
        if not text:
            continue
        m = _KV.fullmatch(text)
        if m and m.group(1):
            key = m.group(1).strip().strip('"')
            value = m.group(2).strip().strip('"').rstrip(";,\t").strip()
            meta[key if key not in meta else f"{key}_{start_line_no + k}"] = value
        else:
            meta[f"note_{start_line_no + k}"] = text
    return meta
