"""Fixed wording shared by the workbook and the reports (safety note, labels)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

__all__ = [
    "SIMULATED_NOTE",
    "is_simulated",
    "primary_rise",
    "rise_method",
    "simulated_runs",
]

#: Label for anything that comes from simulated (invented) data.
SIMULATED_NOTE = (
    "SIMULATED DATA: some or all of these logs were made by calwork's simulator "
    "(invented data, not measurements)."
)


def is_simulated(thermogram: Any) -> bool:
    """True when a thermogram's metadata says it is simulated (``simulated: true``)."""
    meta: Mapping[str, str] = getattr(thermogram, "metadata", {}) or {}
    return str(meta.get("simulated", "")).strip().lower() in ("true", "yes", "1")


def simulated_runs(reduction: Any) -> list[str]:
    """Run ids whose thermogram is simulated, in the reduction's order."""
    thermograms = reduction.thermograms
    return [r.run for r in reduction.runs
            if r.run in thermograms and is_simulated(thermograms[r.run])]


def primary_rise(run: Any) -> Any:
    """The rise result to show for a run: its own, or for a multi-event log (solution runs)
    the reaction event's (``details['reaction_event_index']``, else the first)."""
    rise = run.rise
    if isinstance(rise, (tuple, list)):
        if not rise:
            return None
        index = getattr(run.details, "reaction_event_index", None)
        if isinstance(index, int) and 0 <= index < len(rise):
            return rise[index]
        return rise[0]
    return rise


def rise_method(run: Any, default: str | None = None) -> str | None:
    """The corrected-rise method behind a run's numbers (``default``: the reduction's)."""
    return getattr(primary_rise(run), "method", None) or default
