"""The oxygen-bomb chain for the rows of a run sheet: :func:`reduce_bomb_runs`.

Reads each run's log (:func:`calwork.io.load_run_log`) and computes its corrected rise
(:func:`calwork.rise.corrected_rise`, with the row's ``event``, ``fire_time_s`` and
``main_end_s``); calibrates each calorimeter from its reference-material runs
(:func:`calwork.bomb.chain.reduce_calibration_run`, :func:`calwork.bomb.series.calibration_series`);
reduces the combustion runs with their calorimeter's calibration; averages each sample's series
with its uncertainty budget and solves the formation enthalpies with the samples' covariance
(:func:`calwork.bomb.series.formation_enthalpies`). The counterpart of
:func:`calwork.solution.chain.reduce_solution_runs`; :func:`calwork.reduce.reduce_runs`
dispatches the rows of a sheet to the two.

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any

from calwork.bomb.chain import reduce_calibration_run, reduce_combustion_run
from calwork.bomb.series import calibration_series, formation_enthalpies, sample_series
from calwork.core.errors import CalworkError, RunError
from calwork.core.logtime import on_axis_s
from calwork.core.results import (
    BombRunResult,
    CalibrationResult,
    ChainResult,
    SampleResult,
    failed_run,
)
from calwork.core.runinfo import BOMB_KINDS, RunInfo, within_limits
from calwork.core.statistics import DEFAULT_RSD_LIMIT_PERCENT
from calwork.io import load_run_log
from calwork.rise import corrected_rise

__all__ = ["reduce_bomb_runs"]


def _read_and_rise(info: RunInfo, method: str) -> tuple[Any, Any]:
    """The run's thermogram and RiseResult (either may be a CalworkError)."""
    try:
        tg = load_run_log(info)
    except CalworkError as exc:
        return exc, None
    try:
        limited = within_limits(info, tg)
        rise = corrected_rise(limited, info.rise_method or method, event=info.event,
                              fire_time_s=on_axis_s(info.fire_time_s, tg, column="fire_time_s"),
                              main_end_s=on_axis_s(info.main_end_s, tg, column="main_end_s"))
    except CalworkError as exc:
        return tg, exc
    return tg, rise


def reduce_bomb_runs(
    runs: Sequence[RunInfo],
    *,
    method: str = "newton-fit",
    rsd_limit_percent: float | None = DEFAULT_RSD_LIMIT_PERCENT,
    on_run: Callable[[str], None] | None = None,
) -> ChainResult:
    """Reduce the oxygen-bomb rows (kinds ``calibration`` and ``combustion``) of a run sheet.

    Parameters
    ----------
    runs
        The rows, each with its calorimeter named.
    method
        Temperature-rise method (one of :data:`calwork.rise.METHODS`).
    rsd_limit_percent
        Acceptance limit on the RSD of a calibration series, % (``None``: no check).
    on_run
        Called with each run id once its log is read and its rise computed (a progress bar).

    Returns
    -------
    ChainResult
        One BombRunResult per row (same order; failures carry ``error``), the calibration of each
        calorimeter, the samples with their covariance, warnings of the series, and the
        thermograms read.
    """
    results: dict[str, BombRunResult] = {}
    rises: dict[str, Any] = {}
    thermograms: dict[str, Any] = {}
    for info in runs:
        if info.kind not in BOMB_KINDS:
            results[info.run] = failed_run(info, RunError(
                "not an oxygen-bomb run", column="kind", found=info.kind,
                expected=f"one of {list(BOMB_KINDS)}"))
        else:
            tg, rise = _read_and_rise(info, method)
            if isinstance(tg, CalworkError):
                results[info.run] = failed_run(info, tg)
            else:
                thermograms[info.run] = tg
                if isinstance(rise, CalworkError):
                    results[info.run] = failed_run(info, rise)
                else:
                    rises[info.run] = rise
        if on_run is not None:
            on_run(info.run)

    warnings: list[str] = []
    calibrations = _calibrations(runs, rises, results, rsd_limit_percent, warnings)
    samples, covariance = _samples(runs, rises, results, calibrations, warnings)
    return ChainResult(runs=[results[info.run] for info in runs],
                       calibrations=list(calibrations.values()), samples=samples,
                       covariance=covariance, warnings=warnings, thermograms=thermograms)


def _calibrations(runs: Sequence[RunInfo], rises: dict[str, Any],
                  results: dict[str, BombRunResult], rsd_limit_percent: float | None,
                  warnings: list[str]) -> dict[str, CalibrationResult]:
    """Reduce the calibration runs; one series per calorimeter."""
    by_cal: dict[str, list[BombRunResult]] = {}
    for info in runs:
        if info.kind == "calibration" and info.run in rises:
            try:
                res = reduce_calibration_run(info, rises[info.run])
            except CalworkError as exc:
                res = failed_run(info, exc, rise=rises[info.run])
            results[info.run] = res
            if res.error is None:
                by_cal.setdefault(info.calorimeter, []).append(res)
    calibrations: dict[str, CalibrationResult] = {}
    for cal, members in by_cal.items():
        try:
            calibrations[cal] = calibration_series(cal, members,
                                                   rsd_limit_percent=rsd_limit_percent)
        except CalworkError as exc:
            warnings.append(f"calorimeter {cal!r}: {exc}")
    return calibrations


def _samples(runs: Sequence[RunInfo], rises: dict[str, Any], results: dict[str, BombRunResult],
             calibrations: dict[str, CalibrationResult], warnings: list[str]
             ) -> tuple[list[SampleResult], dict[str, Any]]:
    """Reduce the combustion runs; one series per sample, then the formation enthalpies."""
    series: dict[str, list[tuple[BombRunResult, RunInfo]]] = {}
    for info in runs:
        if info.kind == "combustion" and info.run in rises:
            try:
                res = reduce_combustion_run(info, rises[info.run],
                                            calibrations.get(info.calorimeter))
            except CalworkError as exc:
                res = failed_run(info, exc, rise=rises[info.run])
            results[info.run] = res
            if res.error is None:
                series.setdefault(info.sample or info.formula or info.run, []).append(
                    (res, info))
    samples: list[SampleResult] = []
    terms = []
    conventions = []
    for name, members in series.items():
        try:
            s, t = sample_series(name, [m[0] for m in members], [m[1] for m in members],
                                 calibrations)
        except CalworkError as exc:
            warnings.append(f"sample {name!r}: {exc}")
            continue
        samples.append(s)
        terms.append(t)
        conventions.append(members[0][0].details.sulfur_convention)
    if not samples:
        return samples, {}
    return formation_enthalpies(samples, terms, conventions)
