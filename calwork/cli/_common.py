"""Helpers shared by the subcommands: JSON printing and readable tables."""

from __future__ import annotations

import json
import sys
import textwrap
from typing import Any

from calwork.core.results import jsonable
from calwork.core.safety import SAFETY_NOTE

__all__ = ["print_json", "with_safety_note"]


def print_json(obj: Any) -> None:
    """Print one JSON object on stdout (records via ``to_dict``; NaN becomes null)."""
    json.dump(jsonable(obj), sys.stdout, indent=2, allow_nan=False)
    sys.stdout.write("\n")


def with_safety_note(description: str) -> str:
    """A command's help text followed by the safety note, wrapped for a terminal."""
    return f"{description.rstrip()}\n\n{textwrap.fill(SAFETY_NOTE, 92)}\n"
