"""Safety of what leaves the lab: spreadsheet text, sheet titles and file names.

Text that comes from a run sheet or a log (sample names, notes, metadata) is data, never code:

* :func:`is_formula_like` flags text a spreadsheet program would take for a formula or a
  command (a leading ``=``, ``+``, ``-``, ``@``, tab or carriage return — the usual
  formula-injection triggers, OWASP "CSV injection"). The workbook writer stores every text
  cell explicitly as a string (never as a formula) and gives formula-like text the
  "quote prefix" style so that a spreadsheet program keeps it as text even when the cell is
  edited.
* :func:`cell_text` removes the control characters XML cannot carry and caps the length at the
  spreadsheet limit of 32 767 characters.
* :func:`safe_sheet_title` makes a unique, valid worksheet title from free text.
* :func:`safe_filename` makes a file name (never a path) from free text.
* :func:`csv_text` and :func:`markdown_text` do the same for the plain-text outputs: a CSV
  cell that a spreadsheet program would run gets a leading apostrophe (OWASP's advice for
  CSV injection), and markdown text is HTML-escaped with markdown's own markup characters
  escaped, so a sample name renders as the text it is.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Iterable

__all__ = [
    "FORMULA_TRIGGERS",
    "cell_text",
    "csv_text",
    "is_formula_like",
    "markdown_text",
    "safe_filename",
    "safe_sheet_title",
]

#: Leading characters that make a spreadsheet program read text as a formula or command.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")

#: Longest text a spreadsheet cell holds (Office Open XML / spreadsheet program limit).
MAX_CELL_TEXT = 32_767

# Characters XML 1.0 cannot carry (C0 controls other than tab, newline, carriage return).
_XML_ILLEGAL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")
# Path separators, characters reserved on common file systems, and all control characters.
_FILENAME_BAD = re.compile(r'[\x00-\x1f\x7f-\x9f/\\:*?"<>|]')
# Device names reserved on Windows file systems, with or without an extension.
_RESERVED = re.compile(r"^(con|prn|aux|nul|com[0-9]|lpt[0-9])(\..*)?$", re.IGNORECASE)
_SHEET_BAD = re.compile(r"[\\*?:/\[\]\x00-\x1f]")
_MAX_SHEET_TITLE = 31


def is_formula_like(text: str) -> bool:
    """True when a spreadsheet program would read ``text`` as a formula or command.

    Examples
    --------
    >>> is_formula_like('=HYPERLINK("http://example.invalid","x")'), is_formula_like("benzoic")
    (True, False)
    """
    return text.startswith(FORMULA_TRIGGERS)


def cell_text(value: object) -> str:
    """``value`` as text a spreadsheet cell can hold (XML-illegal characters become U+FFFD).

    Line ends become ``\n`` (XML turns a carriage return into a line feed when it is read
    back anyway); text longer than 32 767 characters is cut and marked with an ellipsis.
    """
    text = _XML_ILLEGAL.sub("\ufffd", str(value).replace("\r\n", "\n").replace("\r", "\n"))
    if len(text) > MAX_CELL_TEXT:
        text = text[: MAX_CELL_TEXT - 1] + "…"
    return text


def csv_text(value: object) -> object:
    """A CSV cell: numbers as they are, text with a leading apostrophe when formula-like.

    Examples
    --------
    >>> csv_text("=1+1"), csv_text(-26.4), csv_text("BA-1")
    ("'=1+1", -26.4, 'BA-1')
    """
    if isinstance(value, str) and is_formula_like(value):
        return "'" + value
    return value


# characters that make markup inside a line (a list or heading marker needs a line start,
# which a table cell or the text after "### " never is)
_MARKDOWN_SPECIAL = re.compile(r"([\\`*_\[\]|~])")


def markdown_text(value: object) -> str:
    r"""Free text for a markdown document: HTML-escaped, inline markup characters
    backslashed, one line.

    Examples
    --------
    >>> print(markdown_text("<script>alert(1)</script> | *x* BA-01"))
    &lt;script&gt;alert(1)&lt;/script&gt; \| \*x\* BA-01
    """
    import html

    text = " ".join(str(value).split())
    return _MARKDOWN_SPECIAL.sub(r"\\\1", html.escape(text, quote=True))


def safe_filename(text: str, *, default: str = "unnamed", max_length: int = 120) -> str:
    """A file name made from free text (a sample name, a run id): never a path.

    Path separators, characters reserved on common file systems (``: * ? " < > |``) and
    control characters become ``_``; leading dots and spaces, trailing dots and spaces are
    removed (no hidden files, no ``..``); device names reserved on Windows (``CON``,
    ``NUL``, ``COM1`` ...) get a leading ``_``; the result is NFC-normalised and at most
    ``max_length`` characters. Empty results become ``default``.

    Parameters
    ----------
    text
        Any text.
    default
        Name used when nothing usable is left.
    max_length
        Maximum length of the result, characters (keep well below the usual 255-byte limit).

    Examples
    --------
    >>> safe_filename("../../etc/passwd")
    '_.._etc_passwd'
    >>> safe_filename("benzoic acid (SRM 39j)")
    'benzoic acid (SRM 39j)'
    """
    name = unicodedata.normalize("NFC", str(text))
    name = _FILENAME_BAD.sub("_", name)
    name = name.strip(" .")
    if _RESERVED.match(name):
        name = "_" + name
    if len(name) > max_length:
        name = name[:max_length].rstrip(" .")
    return name or default


def safe_sheet_title(text: str, taken: Iterable[str] = ()) -> str:
    """A valid worksheet title from free text, unique (case-insensitively) among ``taken``.

    Characters a title may not hold (``\\ / * ? : [ ]`` and controls) become ``_``; leading
    and trailing apostrophes are removed; titles are at most 31 characters; a clash gets a
    `` (2)``, `` (3)`` ... suffix.
    """
    base = _SHEET_BAD.sub("_", str(text)).strip("'").strip() or "Sheet"
    if base.lower() == "history":  # reserved by spreadsheet programs
        base = "History_"
    used = {t.lower() for t in taken}
    title = base[:_MAX_SHEET_TITLE]
    n = 2
    while title.lower() in used:
        suffix = f" ({n})"
        title = base[: _MAX_SHEET_TITLE - len(suffix)] + suffix
        n += 1
    return title
