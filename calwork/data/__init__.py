"""Cited reference data bundled with calwork.

Each ``*.toml`` file here starts with a ``[source]`` table (citation, edition, status: one of
``confirmed``, ``derived``, ``memory``) and holds values in SI or in the units their key names
say. :func:`load_data` parses a file by name and checks that it names its source.
"""

from __future__ import annotations

import tomllib
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

from calwork.core.errors import CalworkError, DataFileError

__all__ = ["data_path", "load_data", "load_toml"]


def data_path(name: str) -> Path:
    """Path of the bundled data file ``name`` (e.g. ``'key_values.toml'``)."""
    return Path(str(resources.files("calwork.data").joinpath(name)))


#: Largest TOML text calwork parses (a run sheet of thousands of runs is well below it).
MAX_TOML_CHARS = 32 * 2**20


def parse_toml_text(text: str, *, path: object = None,
                    error: type[CalworkError] = DataFileError) -> dict[str, Any]:
    """Parse TOML text from a file, with every failure as ``error`` naming the file.

    Beyond malformed TOML this catches what :mod:`tomllib` raises on hostile input: an
    integer of more than 4300 digits (Python's conversion limit), nesting deeper than the
    parser's recursion allows, and text larger than :data:`MAX_TOML_CHARS`.
    """
    if len(text) > MAX_TOML_CHARS:
        raise error("TOML file too large", path=path, found=f"{len(text)} characters",
                    expected=f"at most {MAX_TOML_CHARS} characters")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(f"not valid TOML: {exc}", path=path) from None
    except ValueError as exc:  # e.g. an integer beyond the int-conversion digit limit
        raise error(f"not valid TOML: {exc}", path=path) from None
    except RecursionError:
        raise error("not valid TOML: nested too deeply", path=path) from None


def load_toml(path: str | Path) -> dict[str, Any]:
    """Parse a TOML data file (bundled or the user's) and check it names its source."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise DataFileError("data file not found", path=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise DataFileError(f"cannot read the data file ({exc})", path=path) from None
    data = parse_toml_text(text, path=path)
    if "source" not in data:
        raise DataFileError("data file must have a [source] table naming its origin", path=path)
    return data


@cache
def load_data(name: str) -> dict[str, Any]:
    """Load the bundled data file ``name`` (cached; treat the result as read-only)."""
    return load_toml(data_path(name))
