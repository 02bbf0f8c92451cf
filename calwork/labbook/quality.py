"""The control chart of a calorimeter's energy equivalent from the lab book (``calwork qa``
and the workbench's Calibrations page use this one function)."""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from calwork.core.errors import CalibrationError

__all__ = ["calibration_chart", "void_calibration_points"]


def void_calibration_points(book: Any, calorimeter: str) -> list[tuple[str, str | None, float]]:
    """The void calibration runs of ``calorimeter`` as ``(run, date, ε)`` (for drawing them
    hollow beside the chart; they are not part of it)."""
    return [(r["run"], r["date"], r["energy_equivalent_J_per_K"])
            for r in book.runs(include_void=True)
            if r["calorimeter"] == calorimeter and r["state"] == "void"
            and r["epsilon_is_calibration"] and r["energy_equivalent_J_per_K"] is not None]


def calibration_chart(book: Any, calorimeter: str, filters: Any = None, *,
                      baseline_n: int | None = None, rules: Any = None) -> Any:
    """The individuals/moving-range chart of the active calibration runs of
    ``calorimeter`` (:func:`calwork.qa.control_chart`), with the first calibration series
    recorded for it as the standardisation series (or the first ``baseline_n`` points).

    Raises
    ------
    CalibrationError
        An unknown calorimeter (the known ones are listed; a case-insensitive match is
        offered), or fewer than two usable calibration runs.
    """
    from calwork.qa import control_chart, parse_rules

    rules = parse_rules(None) if rules is None else rules
    known = sorted({r["calorimeter"] for r in book.runs() if r.get("calorimeter")})
    if calorimeter not in known:
        same = [k for k in known if k.lower() == calorimeter.lower()]
        hint = f"; did you mean {same[0]!r}?" if same else ""
        raise CalibrationError(
            f"no runs of calorimeter {calorimeter!r} in the lab book{hint}",
            found=calorimeter, expected=f"one of {known}" if known else
            "a lab book with calibration runs")
    points, notes = book.calibration_series(calorimeter, filters)
    first_series = book.first_series_runs(calorimeter)
    if len(points) < 2:
        raise CalibrationError(
            f"calorimeter {calorimeter!r} has {len(points)} usable calibration run(s) "
            "in the lab book", expected="at least 2 active calibration runs")
    labels = [p["run"] for p in points]
    kwargs: dict = {}
    if baseline_n is not None:
        kwargs["baseline_n"] = baseline_n
    else:
        in_first = [lab for lab in labels if lab in set(first_series)]
        if len(in_first) >= 2:
            kwargs["baseline_labels"] = in_first
        elif first_series:
            notes.append("the first calibration series has fewer than 2 active runs here; "
                         "all points form the baseline")
        else:
            notes.append("no calibration series is recorded for this calorimeter; all points "
                         "form the baseline")
    chart = control_chart(
        [p["energy_equivalent_J_per_K"] for p in points], labels,
        dates=[p["date"] for p in points], rules=rules,
        title=f"energy equivalent of calorimeter {calorimeter}", **kwargs)
    if kwargs.get("baseline_labels"):
        chart = replace(chart,
                        baseline_source="first calibration series recorded for the calorimeter")
    if notes:
        chart = replace(chart, notes=(*chart.notes, *notes))
    return chart
