"""The whole reduction of a run sheet: logs → corrected rises → calibrations → samples → ΔfH°.

:func:`reduce_runs` reads every run's log (:func:`calwork.io.load_run_log`), computes its
corrected temperature rise (:func:`calwork.rise.corrected_rise`, with the row's
``fire_time_s`` / ``main_end_s`` overrides), calibrates each calorimeter from its
reference-material runs, reduces the combustion runs with the calibration of their
calorimeter, averages each sample's series with its uncertainty budget and solves the
formation enthalpies through :func:`calwork.hess.combustion_link_many` with the covariance of
the samples. Rows of kind ``electrical``, ``solution`` and ``blank`` go to
:func:`calwork.solution.chain.reduce_solution_runs`.

A failing run never disappears: it comes back as a :class:`~calwork.core.results.RunResult` with
``error`` set (naming the run and the column), and the rest of the sheet is reduced.

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from __future__ import annotations

import sys
from collections.abc import Mapping, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

from calwork.bomb.calibration import DEFAULT_RSD_LIMIT_PERCENT
from calwork.bomb.chain import reduce_calibration_run, reduce_combustion_run, run_error
from calwork.bomb.series import calibration_series, formation_enthalpies, sample_series
from calwork.core.errors import CalworkError, DuplicateRunError, RunError
from calwork.core.provenance import Provenance
from calwork.core.results import CalibrationResult, Reduction, RunResult, SampleResult
from calwork.core.runinfo import RunInfo

__all__ = ["BOMB_KINDS", "SOLUTION_KINDS", "reduce_runs", "reduce_sheet"]

#: Run kinds reduced by the bomb chain.
BOMB_KINDS = ("calibration", "combustion")
#: Run kinds handed to the solution chain.
SOLUTION_KINDS = ("electrical", "solution", "blank")
_DEFAULT_CALORIMETER = "default"


class _Progress:
    """A plain progress bar on stderr, drawn only when stderr is a terminal."""

    def __init__(self, total: int, enabled: bool) -> None:
        self.total = max(total, 1)
        self.done = 0
        self.enabled = bool(enabled) and hasattr(sys.stderr, "isatty") and sys.stderr.isatty()

    def step(self, label: str) -> None:
        self.done += 1
        if not self.enabled:
            return
        width = 30
        filled = int(width * self.done / self.total)
        sys.stderr.write(f"\r[{'#' * filled}{'.' * (width - filled)}] "
                         f"{self.done}/{self.total} {label[:30]:<30}")
        sys.stderr.flush()

    def close(self) -> None:
        if self.enabled:
            sys.stderr.write("\n")
            sys.stderr.flush()


def _methods() -> Sequence[str]:
    from calwork.rise import METHODS

    return tuple(METHODS)


def _read_and_rise(info: RunInfo, method: str) -> tuple[Any, Any]:
    """The run's thermogram and RiseResult (either may be a CalworkError)."""
    from calwork.io import load_run_log
    from calwork.rise import corrected_rise

    try:
        tg = load_run_log(info)
    except CalworkError as exc:
        return exc, None
    try:
        rise = corrected_rise(tg, method, event=info.event, fire_time_s=info.fire_time_s,
                              main_end_s=info.main_end_s)
    except CalworkError as exc:
        return tg, exc
    return tg, rise


def _solution(rows: list[RunInfo], method: str, thermograms: Mapping[str, Any]
              ) -> tuple[list[RunResult], list[CalibrationResult], list[SampleResult]]:
    try:
        from calwork.solution.chain import reduce_solution_runs
    except ModuleNotFoundError as exc:
        if not (exc.name or "").startswith("calwork.solution"):
            raise
        err = RunError("this run kind is not supported yet (calwork.solution.chain is missing)",
                       column="kind")
        return [run_error(info, err.with_context(found=info.kind)) for info in rows], [], []
    runs, cals, samples = reduce_solution_runs(rows, method=method, thermograms=thermograms,
                                               rises=None)
    return list(runs), list(cals), list(samples)


def reduce_runs(
    runs: Sequence[RunInfo],
    *,
    method: str = "newton-fit",
    progress: bool = False,
    rsd_limit_percent: float | None = DEFAULT_RSD_LIMIT_PERCENT,
) -> Reduction:
    """Reduce the rows of a run sheet.

    Parameters
    ----------
    runs
        The rows (:func:`calwork.io.read_run_sheet`), any kinds.
    method
        Temperature-rise method (one of :data:`calwork.rise.METHODS`).
    progress
        Draw a progress bar on stderr (only when stderr is a terminal).
    rsd_limit_percent
        Acceptance limit on the RSD of a calibration series, % (default 0.1 %, common
        practice); ``None`` switches the check off. Exceeding it gives a warning.

    Returns
    -------
    Reduction
        Calibrations, every run (failures with ``error``), samples, the covariance of the
        samples, and the rows and thermograms read.
    """
    from calwork.core.errors import check_choice

    check_choice("method", method, _methods())
    seen: set[str] = set()
    for r in runs:
        if r.run in seen:
            raise DuplicateRunError("run id used twice", run=r.run, column="run",
                                    found=r.run, expected="unique run ids")
        seen.add(r.run)
    rows = [r if r.calorimeter else replace(r, calorimeter=_DEFAULT_CALORIMETER) for r in runs]
    warnings: list[str] = []
    unnamed = [r.run for r in runs if not r.calorimeter]
    if unnamed:
        warnings.append(f"no calorimeter given for runs {unnamed}: treated as calorimeter "
                        f"{_DEFAULT_CALORIMETER!r}")
    unknown = sorted({k for r in runs for k in r.extra})
    try:
        from calwork.io import unknown_columns

        unknown = unknown_columns(runs)
    except ImportError:
        pass
    if unknown:
        warnings.append(f"unknown columns kept but not used: {unknown}")

    bar = _Progress(len(rows), progress)
    thermograms: dict[str, Any] = {}
    results: dict[str, RunResult] = {}
    rises: dict[str, Any] = {}
    solution_rows: list[RunInfo] = []
    for info in rows:
        if info.problems:  # found while reading the sheet leniently: report, don't drop
            results[info.run] = run_error(info, info.problems[0])
        elif info.kind in SOLUTION_KINDS:
            from calwork.io import load_run_log

            try:
                thermograms[info.run] = load_run_log(info)
            except CalworkError as exc:
                thermograms[info.run] = exc
            solution_rows.append(info)
        elif info.kind in BOMB_KINDS:
            tg, rise = _read_and_rise(info, method)
            thermograms[info.run] = tg
            if isinstance(tg, CalworkError):
                results[info.run] = run_error(info, tg)
            elif isinstance(rise, CalworkError):
                results[info.run] = run_error(info, rise)
            else:
                rises[info.run] = rise
        else:
            results[info.run] = run_error(info, RunError(
                "unknown run kind", column="kind", found=info.kind,
                expected=f"one of {list(BOMB_KINDS + SOLUTION_KINDS)}"))
        bar.step(info.run)
    bar.close()

    # calibrations, per calorimeter
    by_cal: dict[str, list[RunResult]] = {}
    for info in rows:
        if info.kind == "calibration" and info.run in rises:
            try:
                res = reduce_calibration_run(info, rises[info.run])
            except CalworkError as exc:
                res = run_error(info, exc, rise=rises[info.run])
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

    # combustion runs and sample series
    series: dict[str, list[tuple[RunResult, RunInfo]]] = {}
    for info in rows:
        if info.kind == "combustion" and info.run in rises:
            try:
                res = reduce_combustion_run(info, rises[info.run],
                                            calibrations.get(info.calorimeter))
            except CalworkError as exc:
                res = run_error(info, exc, rise=rises[info.run])
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
        conventions.append(members[0][0].details["sulfur_convention"])
    covariance: dict[str, Any] = {}
    if samples:
        samples, covariance = formation_enthalpies(samples, terms, conventions)

    cal_list = list(calibrations.values())
    if solution_rows:
        s_runs, s_cals, s_samples = _solution(solution_rows, method, thermograms)
        for res in s_runs:
            results[res.run] = res
        cal_list += s_cals
        samples += s_samples
    ordered = [results[info.run] for info in rows if info.run in results]
    good = {k: v for k, v in thermograms.items() if not isinstance(v, CalworkError)}
    prov = Provenance(importer="calwork.reduce.reduce_runs", method=method,
                      constants=_constants_used(),
                      parents=tuple(tg.provenance for tg in good.values()
                                    if getattr(tg, "provenance", None) is not None))
    return Reduction(calibrations=cal_list, runs=ordered, samples=samples,
                     covariance=covariance, method=method, provenance=prov,
                     warnings=warnings, run_infos=runs, thermograms=good)


def _constants_used() -> dict[str, str]:
    from calwork.data import load_data

    out = {}
    for name in ("benzoic_acid.toml", "bomb_corrections.toml", "washburn_properties.toml",
                 "fuel_relations.toml"):
        out[name] = load_data(name)["source"]["citation"]
    return out


def reduce_sheet(
    path: str | Path,
    *,
    method: str = "newton-fit",
    progress: bool = False,
    rsd_limit_percent: float | None = DEFAULT_RSD_LIMIT_PERCENT,
) -> Reduction:
    """Read a run sheet (:func:`calwork.io.read_run_sheet`) and reduce it (:func:`reduce_runs`).

    Raises
    ------
    CalworkError
        If the sheet itself cannot be read (single runs that fail are reported in the result).
    """
    from calwork.io import read_run_sheet

    runs = read_run_sheet(path, strict=False)
    red = reduce_runs(runs, method=method, progress=progress,
                      rsd_limit_percent=rsd_limit_percent)
    return replace(red, sheet_path=str(path))
