"""The whole reduction of a run sheet: logs → corrected rises → calibrations → samples → ΔfH°.

:func:`reduce_runs` reads every run's log (:func:`calwork.io.load_run_log`), computes its
corrected temperature rise (:func:`calwork.rise.corrected_rise`, with the row's
``fire_time_s`` / ``main_end_s`` overrides), calibrates each calorimeter from its
reference-material runs, reduces the combustion runs with the calibration of their
calorimeter, averages each sample's series with its uncertainty budget and solves the
formation enthalpies through :func:`calwork.hess.combustion_link_many` with the covariance of
the samples.

A failing run never disappears: it comes back as a :class:`~calwork.core.results.RunResult` with
``error`` set (naming the run and the column), and the rest of the sheet is reduced.

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from __future__ import annotations

import sys
from collections.abc import Callable, Sequence
from dataclasses import replace
from pathlib import Path
from typing import Any

from calwork.bomb.pipeline import reduce_bomb_runs
from calwork.core.errors import DuplicateRunError, RunError, check_choice
from calwork.core.provenance import Provenance
from calwork.core.results import ChainResult, Reduction, RunResult, failed_run
from calwork.core.runinfo import BOMB_KINDS, RUN_KINDS, SOLUTION_KINDS, RunInfo
from calwork.core.statistics import DEFAULT_RSD_LIMIT_PERCENT
from calwork.io import read_run_sheet, unknown_columns
from calwork.rise import METHODS
from calwork.solution.chain import reduce_solution_runs

__all__ = ["CHAINS", "reduce_runs", "reduce_sheet"]

_DEFAULT_CALORIMETER = "default"

#: The energy chains, keyed on the run kinds each reduces (the kinds are defined once, in
#: :mod:`calwork.core.runinfo`). Each takes its rows and keyword options and returns a
#: :class:`~calwork.core.results.ChainResult`.
CHAINS: tuple[tuple[tuple[str, ...], Callable[..., ChainResult]], ...] = (
    (BOMB_KINDS, reduce_bomb_runs),
    (SOLUTION_KINDS, reduce_solution_runs),
)


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


def reduce_runs(
    runs: Sequence[RunInfo],
    *,
    method: str = "newton-fit",
    progress: bool = False,
    rsd_limit_percent: float | None = DEFAULT_RSD_LIMIT_PERCENT,
) -> Reduction:
    """Reduce the rows of a run sheet: each row goes to the energy chain of its kind
    (:data:`CHAINS`).

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
    check_choice("method", method, METHODS)
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
    unknown = unknown_columns(runs)
    if unknown:
        warnings.append(f"unknown columns kept but not used: {unknown}")

    results: dict[str, RunResult] = {}
    for info in rows:
        if info.problems:  # found while reading the sheet leniently: report, don't drop
            results[info.run] = failed_run(info, info.problems[0])
        elif info.kind not in RUN_KINDS:
            results[info.run] = failed_run(info, RunError(
                "unknown run kind", column="kind", found=info.kind,
                expected=f"one of {list(RUN_KINDS)}"))
    bar = _Progress(len(rows), progress)
    for info in rows:
        if info.run in results:
            bar.step(info.run)
    options = {reduce_bomb_runs: {"rsd_limit_percent": rsd_limit_percent}}
    parts: list[ChainResult] = []
    for kinds, chain in CHAINS:
        mine = [info for info in rows if info.kind in kinds and info.run not in results]
        if mine:
            parts.append(chain(mine, method=method, on_run=bar.step, **options.get(chain, {})))
    bar.close()

    read: dict[str, Any] = {}
    for part in parts:
        results.update((r.run, r) for r in part.runs)
        read.update(part.thermograms)
        warnings.extend(part.warnings)
    covariance = next((p.covariance for p in parts if p.covariance), {})
    thermograms = {info.run: read[info.run] for info in rows if info.run in read}
    prov = Provenance(importer="calwork.reduce.reduce_runs", method=method,
                      constants=_constants_used(),
                      parents=tuple(tg.provenance for tg in thermograms.values()
                                    if getattr(tg, "provenance", None) is not None))
    return Reduction(calibrations=[c for p in parts for c in p.calibrations],
                     runs=[results[info.run] for info in rows],
                     samples=[s for p in parts for s in p.samples],
                     covariance=covariance, method=method, provenance=prov,
                     warnings=warnings, run_infos=runs, thermograms=thermograms)


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
    runs = read_run_sheet(path, strict=False)
    red = reduce_runs(runs, method=method, progress=progress,
                      rsd_limit_percent=rsd_limit_percent)
    return replace(red, sheet_path=str(path))
