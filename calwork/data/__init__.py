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

from calwork.errors import DataFileError

__all__ = ["data_path", "load_data", "load_toml"]


def data_path(name: str) -> Path:
    """Path of the bundled data file ``name`` (e.g. ``'key_values.toml'``)."""
    return Path(str(resources.files("calwork.data").joinpath(name)))


def load_toml(path: str | Path) -> dict[str, Any]:
    """Parse a TOML data file (bundled or the user's) and check it names its source."""
    path = Path(path)
    try:
        with path.open("rb") as fh:
            data = tomllib.load(fh)
    except FileNotFoundError:
        raise DataFileError("data file not found", path=path) from None
    except tomllib.TOMLDecodeError as exc:
        raise DataFileError(f"not valid TOML: {exc}", path=path) from None
    if "source" not in data:
        raise DataFileError("data file must have a [source] table naming its origin", path=path)
    return data


@cache
def load_data(name: str) -> dict[str, Any]:
    """Load the bundled data file ``name`` (cached; treat the result as read-only)."""
    return load_toml(data_path(name))
