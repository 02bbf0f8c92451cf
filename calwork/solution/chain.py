"""The solution-calorimetry chain: run-sheet rows of kind ``electrical``, ``solution``, ``blank``.

:func:`reduce_solution_runs` is what :func:`calwork.reduce.reduce_runs` calls for these rows.

Inputs (how the pipeline hands them over)
------------------------------------------
``runs``
    The :class:`~calwork.core.runinfo.RunInfo` rows (any order; other kinds come back as failed
    runs naming the ``kind`` column).
``thermograms``
    ``Mapping[run_id, Thermogram]`` of the logs already read by the caller. A value may
    also be a :class:`~calwork.core.errors.CalworkError` (the log could not be read: the run comes
    back with that error). Runs missing from the mapping (or ``thermograms=None``) are read
    here with :func:`calwork.io.load_run_log`.
``rises``
    ``None`` (the default, and what ``reduce`` passes): every event's corrected rise is
    computed here on that event's window of the log. Otherwise ``Mapping[run_id,
    Sequence[RiseResult]]`` with one RiseResult per event in time order (as stored in
    ``SolutionRunResult.rise`` of an earlier reduction), used instead of recomputing.
``method``
    The temperature-rise method name (``calwork.rise.METHODS``).
``options``
    :class:`~calwork.solution.analysis.SolutionOptions` (calibration basis, ΦL model, lead
    convention, Type B defaults).

Order of work: electrical runs → a calibration series (ε) per calorimeter; blank runs →
the ampoule-breaking correction per calorimeter; solution runs → molar enthalpies with the
in-log calibrations (or the series), the blank and the vaporisation corrections; then a
:class:`~calwork.core.results.SampleResult` per sample with the series mean and, where it can be
computed, the enthalpy at infinite dilution. A failing run comes back as a SolutionRunResult with
``error`` set (the calwork error's message, naming run and column); it is never dropped.

``SolutionRunResult.rise`` holds the tuple of RiseResults of the log's events in time order;
``details['events']`` says which is which.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import numpy as np

from calwork.core.errors import CalibrationError, CalworkError, RunError
from calwork.core.logtime import on_axis_s
from calwork.core.provenance import Provenance
from calwork.core.results import (
    CalibrationResult,
    ChainResult,
    SolutionRunResult,
    failed_run,
)
from calwork.core.runinfo import SOLUTION_KINDS, RunInfo, within_limits
from calwork.core.statistics import series_statistics
from calwork.core.thermogram import Thermogram
from calwork.core.uncertainty import Budget, root_sum_square
from calwork.io import load_run_log
from calwork.solution.analysis import LogAnalysis, SolutionOptions, analyse_log
from calwork.solution.blanks import BlankCorrection, blank_correction
from calwork.solution.reaction import (
    SHARED_COMPONENTS,
    amount_of_substance_mol,
    combine_budgets,
    dilution_ratio,
    final_molality_mol_per_kg,
    refer_energy_equivalent,
    solution_enthalpy,
)
from calwork.solution.samples import solution_samples
from calwork.solution.vaporisation import vaporisation_correction_J

__all__ = ["reduce_solution_runs"]


def _thermogram(info: RunInfo, thermograms: Mapping[str, Any] | None) -> Thermogram:
    if thermograms is not None and info.run in thermograms:
        value = thermograms[info.run]
        if isinstance(value, CalworkError):
            raise value
        return value
    if not info.log:
        raise RunError("the run has no log file", column="log", expected="a log path")
    return load_run_log(info)


def _provenance(tg: Thermogram, method: str) -> Provenance:
    p = tg.provenance
    return Provenance(source_path=p.source_path, sha256=p.sha256,
                      importer="calwork.solution.chain", method=method, parents=(p,))


def _events_detail(analysis: LogAnalysis) -> list[dict[str, Any]]:
    out = []
    for k, ev in enumerate(analysis.events.events):
        d = ev.to_dict()
        r = analysis.rises[k]
        d.update(corrected_rise_K=r.corrected_rise_K, u_corrected_rise_K=r.u_corrected_rise_K,
                 T_initial_K=r.T_initial_K)
        out.append(d)
    return out


def _calorimeter(info: RunInfo) -> str:
    return info.calorimeter or "(unnamed)"


# --- electrical calibrations ----------
def _electrical_run(info: RunInfo, analysis: LogAnalysis, tg: Thermogram, method: str):
    cals = analysis.calibrations
    if not cals:
        raise RunError("no heater interval found in the log", column="heater_V",
                       expected="heater channels, or heater_power_W with heater_on_s and "
                       "heater_off_s")
    budget: dict[str, float] = dict(cals[0].budget)
    eps_values = [c.energy_equivalent_J_per_K for c in cals]
    for c in cals[1:]:  # mean of several heatings in one log
        budget = combine_budgets(budget, c.budget)
    eps = float(np.mean(eps_values))
    u = root_sum_square(budget, name="ε of the run")
    first = cals[0]
    result = SolutionRunResult(
        run=info.run, kind=info.kind, sample=info.sample, calorimeter=info.calorimeter,
        corrected_rise_K=first.rise.corrected_rise_K,
        u_corrected_rise_K=first.rise.u_corrected_rise_K,
        energy_equivalent_J_per_K=eps, u_energy_equivalent_J_per_K=u,
        heater_energy_J=first.energy.energy_J,
        reference_temperature_K=first.T_initial_K + 0.5 * first.rise.corrected_rise_K,
        warnings=analysis.warnings, rise=analysis.rises,
        details={"calibrations": [c.to_dict() for c in cals],
                 "events": _events_detail(analysis), "budget_J_per_K": budget},
        provenance=_provenance(tg, method),
    )
    return result, budget


def _series(calorimeter: str, items: list[tuple[SolutionRunResult, dict[str, float]]]
            ) -> CalibrationResult:
    """The calorimeter's electrical calibration series, with the statistics every calibration
    series gets (:func:`calwork.core.statistics.series_statistics`: mean, s, s/√n, RSD and
    Grubbs' test, reported and never acted on)."""
    values = [float(r.energy_equivalent_J_per_K) for r, _ in items]
    names = [r.run for r, _ in items]
    st = series_statistics(values, names, rsd_limit_percent=None,
                           label=f"electrical calibration of {calorimeter!r}")
    shared = float(np.mean([b.get("power_calibration", 0.0) for _, b in items]))
    n = st.n
    warnings = [w for w in st.warnings if "a single run" not in w]
    if st.std_dev_of_mean is not None:
        s, sdm, rsd = st.std_dev, st.std_dev_of_mean, st.rsd_percent
        u = math.hypot(sdm, shared)
        if n < 3:
            warnings.append(f"only {n} electrical calibrations")
    else:
        s = sdm = rsd = float("nan")
        u = float(items[0][0].u_energy_equivalent_J_per_K)
        warnings.append("a single electrical calibration: its own uncertainty is used")
    return CalibrationResult(
        calorimeter=calorimeter, energy_equivalent_J_per_K=st.mean,
        u_energy_equivalent_J_per_K=u, n_runs=n, rsd_percent=rsd, std_dev_J_per_K=s,
        std_dev_of_mean_J_per_K=sdm, runs=tuple(names), values_J_per_K=tuple(values),
        method="electrical",
        budget=Budget.of("energy equivalent ε", "J/K",
                         {"std_dev_of_mean": 0.0 if n < 2 else sdm, "power_calibration": shared},
                         keys={"power_calibration": "heater power calibration"}),
        outlier_test=st.outlier_test, warnings=tuple(warnings),
    )


# --- energy equivalent of a run ----------
def _energy_equivalent(analysis: LogAnalysis, series: CalibrationResult | None,
                       basis: str, rise):
    before = analysis.calibration("before")
    after = analysis.calibration("after")
    referred = refer_energy_equivalent(
        T_initial_K=rise.T_initial_K, corrected_rise_K=rise.corrected_rise_K,
        before=None if before is None else (before.energy_equivalent_J_per_K, before.budget),
        after=None if after is None else (after.energy_equivalent_J_per_K, after.budget),
        series=None if series is None else (
            series.energy_equivalent_J_per_K,
            {"calibration_series": series.u_energy_equivalent_J_per_K}),
        basis=basis,
    )
    used = {"before": [before], "after": [after], "mean": [before, after]}.get(
        referred.basis, [])
    heater = [c.energy.energy_J for c in used if c is not None]
    return referred, (float(np.mean(heater)) if heater else None)


# --- blanks ----------
def _blank_run(info, analysis, tg, method, series):
    rise = analysis.reaction_rise
    referred, heater = _energy_equivalent(analysis, series, "auto", rise)
    eps = referred.energy_equivalent_J_per_K
    q_measured = eps * rise.corrected_rise_K
    u2 = (rise.corrected_rise_K * referred.u_energy_equivalent_J_per_K) ** 2 + (
        eps * rise.u_corrected_rise_K) ** 2
    corrections = {}
    q = q_measured
    if info.ampoule_gas_volume_mL is not None:
        vap = vaporisation_correction_J(info.ampoule_gas_volume_mL, rise.T_initial_K)
        corrections["vaporisation"] = vap.correction_J
        q = q_measured - vap.correction_J
        u2 += vap.u_heat_absorbed_J ** 2
    u = math.sqrt(u2)
    return SolutionRunResult(
        run=info.run, kind=info.kind, sample=info.sample, calorimeter=info.calorimeter,
        corrected_rise_K=rise.corrected_rise_K, u_corrected_rise_K=rise.u_corrected_rise_K,
        corrections_J=corrections, energy_equivalent_J_per_K=eps,
        u_energy_equivalent_J_per_K=referred.u_energy_equivalent_J_per_K,
        heater_energy_J=heater, reaction_heat_J=q,
        reference_temperature_K=referred.reference_temperature_K,
        warnings=analysis.warnings, rise=analysis.rises,
        details={"u_reaction_heat_J": u, "measured_heat_J": q_measured,
                 "calibration_basis": referred.basis,
                 "calibrations": [c.to_dict() for c in analysis.calibrations],
                 "events": _events_detail(analysis)},
        provenance=_provenance(tg, method),
    )


# --- solution runs ----------
def _solution_run(info, analysis, tg, method, series, blank: BlankCorrection | None,
                  opts: SolutionOptions, blanks_with_vapour: Sequence[str] = ()):
    rise = analysis.reaction_rise
    referred, heater = _energy_equivalent(analysis, series, opts.calibration, rise)
    n, u_n, n_source = amount_of_substance_mol(amount_mol=info.amount_mol, mass_g=info.mass_g,
                                               formula=info.formula, u_mass_g=opts.u_mass_g)
    warnings = list(analysis.warnings)
    corrections: dict[str, tuple[float, float]] = {}
    extra: dict[str, float] = {}
    details: dict[str, Any] = {}
    if blank is not None:
        corrections["ampoule_breaking"] = (blank.mean_J, blank.u_spread_J)
        extra["blank_mean"] = blank.u_mean_J
        details["blank"] = blank.to_dict()
    else:
        warnings.append(f"no blank runs on calorimeter {_calorimeter(info)!r}: no "
                        "ampoule-breaking correction")
    if info.ampoule_gas_volume_mL is not None:
        vap = vaporisation_correction_J(info.ampoule_gas_volume_mL, rise.T_initial_K)
        corrections["vaporisation"] = (vap.correction_J, vap.u_heat_absorbed_J)
        details["vaporisation"] = vap.to_dict()
        if blank is not None and blanks_with_vapour:
            # a blank without ampoule_gas_volume_mL keeps its own vaporisation in q_break
            # (calwork.solution.blanks): with this run's correction it would count twice
            warnings.append(
                f"blank run(s) {', '.join(blanks_with_vapour)} give no ampoule_gas_volume_mL: "
                "the ampoule-breaking mean still holds their solvent vaporisation, and this "
                "run's vaporisation correction is applied as well (counted twice if the "
                "ampoules are alike); give the blanks' gas volumes")
    se = solution_enthalpy(energy_equivalent=referred, corrected_rise_K=rise.corrected_rise_K,
                           u_corrected_rise_K=rise.u_corrected_rise_K, amount_mol=n,
                           u_amount_mol=u_n, corrections=corrections,
                           extra_uncertainties_J=extra)
    molality = ratio = None
    if info.solvent_mass_g is not None:
        molality = final_molality_mol_per_kg(n, info.solvent_mass_g)
        ratio = dilution_ratio(n, info.solvent_mass_g)
    else:
        warnings.append("solvent_mass_g not given: no final molality or dilution ratio")
    details.update(
        calibration_basis=referred.basis, measured_heat_J=se.measured_heat_J, amount_mol=n,
        u_amount_mol=u_n, amount_source=n_source, budget_kJ_per_mol=dict(se.budget),
        u_independent_kJ_per_mol=se.u_independent_kJ_per_mol,
        energy_equivalent_budget_J_per_K=dict(referred.budget),
        calibrations=[c.to_dict() for c in analysis.calibrations],
        events=_events_detail(analysis), reaction_event_index=analysis.reaction_index,
    )
    return SolutionRunResult(
        run=info.run, kind=info.kind, sample=info.sample, calorimeter=info.calorimeter,
        corrected_rise_K=rise.corrected_rise_K, u_corrected_rise_K=rise.u_corrected_rise_K,
        corrections_J=se.corrections_J, energy_equivalent_J_per_K=(
            referred.energy_equivalent_J_per_K),
        u_energy_equivalent_J_per_K=referred.u_energy_equivalent_J_per_K,
        heater_energy_J=heater, reaction_heat_J=se.reaction_heat_J,
        molar_enthalpy_kJ_per_mol=se.molar_enthalpy_kJ_per_mol,
        u_molar_enthalpy_kJ_per_mol=se.u_molar_enthalpy_kJ_per_mol,
        final_molality_mol_per_kg=molality, dilution_ratio=ratio,
        reference_temperature_K=referred.reference_temperature_K, warnings=tuple(warnings),
        rise=analysis.rises, details=details, provenance=_provenance(tg, method),
    )


def reduce_solution_runs(
    runs: Sequence[RunInfo],
    *,
    method: str = "newton-fit",
    thermograms: Mapping[str, Any] | None = None,
    rises: Mapping[str, Sequence[Any]] | None = None,
    options: SolutionOptions | None = None,
    on_run: Callable[[str], None] | None = None,
) -> ChainResult:
    """Reduce the solution-calorimetry rows of a run sheet.

    Parameters
    ----------
    runs
        Rows of kind ``electrical``, ``solution`` or ``blank``.
    method
        Temperature-rise method.
    thermograms
        Logs already read, by run id (values may be CalworkErrors); others are read here.
    rises
        ``None`` (compute each event's rise), or per run the RiseResults of its events.
    options
        :class:`SolutionOptions`.
    on_run
        Called with each run id once its log is read (a progress bar).

    Returns
    -------
    ChainResult
        One SolutionRunResult per input row (same order; failures carry ``error``), one
        CalibrationResult per calorimeter with electrical runs, one SampleResult per
        solution sample, and the thermograms read.
    """
    opts = options or SolutionOptions()
    results: dict[str, SolutionRunResult] = {}
    read: dict[str, Thermogram] = {}
    analyses: dict[str, tuple[LogAnalysis, Thermogram]] = {}
    for info in runs:
        if info.kind not in SOLUTION_KINDS:
            results[info.run] = failed_run(info, RunError(
                "not a solution-calorimetry run", column="kind", found=info.kind,
                expected=f"one of {list(SOLUTION_KINDS)}"))
            continue
        try:
            tg = _thermogram(info, thermograms)
        except CalworkError as exc:
            results[info.run] = failed_run(info, exc)
            continue
        finally:
            if on_run is not None:
                on_run(info.run)
        read[info.run] = tg
        try:
            analyses[info.run] = (analyse_log(
                within_limits(info, tg), method=info.rise_method or method,
                heater_power_W_sheet=info.heater_power_W,
                heater_on_s=info.heater_on_s, heater_off_s=info.heater_off_s,
                standard_resistor_ohm=info.standard_resistor_ohm,
                fire_time_s=on_axis_s(info.fire_time_s, tg, column="fire_time_s"),
                main_end_s=on_axis_s(info.main_end_s, tg, column="main_end_s"),
                expect_reaction=info.kind != "electrical", options=opts,
                rises=None if rises is None else rises.get(info.run)), tg)
        except CalworkError as exc:
            results[info.run] = failed_run(info, exc)

    pending = [info for info in runs if info.run in analyses]
    # 1. stand-alone electrical calibrations -> one series per calorimeter
    by_cal: dict[str, list[tuple[SolutionRunResult, dict[str, float]]]] = {}
    for info in (i for i in pending if i.kind == "electrical"):
        analysis, tg = analyses[info.run]
        try:
            result, budget = _electrical_run(info, analysis, tg, info.rise_method or method)
        except CalworkError as exc:
            results[info.run] = failed_run(info, exc)
            continue
        results[info.run] = result
        by_cal.setdefault(_calorimeter(info), []).append((result, budget))
    series = {name: _series(name, items) for name, items in by_cal.items()}
    # 2. ampoule blanks -> one correction per calorimeter
    blank_items: dict[str, list[SolutionRunResult]] = {}
    no_volume: dict[str, list[str]] = {}  # blanks whose vaporisation was not taken out
    for info in (i for i in pending if i.kind == "blank"):
        analysis, tg = analyses[info.run]
        try:
            result = _blank_run(info, analysis, tg, info.rise_method or method,
                                series.get(_calorimeter(info)))
        except CalworkError as exc:
            results[info.run] = failed_run(info, exc)
            continue
        results[info.run] = result
        blank_items.setdefault(_calorimeter(info), []).append(result)
        if info.ampoule_gas_volume_mL is None:
            no_volume.setdefault(_calorimeter(info), []).append(info.run)
    blanks: dict[str, BlankCorrection] = {}
    for name, items in blank_items.items():
        blanks[name] = blank_correction(
            [r.reaction_heat_J for r in items], runs=[r.run for r in items],
            u_values_J=[r.details.u_reaction_heat_J for r in items], calorimeter=name)
    # 3. reaction runs
    for info in (i for i in pending if i.kind == "solution"):
        analysis, tg = analyses[info.run]
        name = _calorimeter(info)
        try:
            if opts.calibration == "series" and name not in series:
                raise CalibrationError("no electrical calibration series for the calorimeter",
                                       column="calorimeter", found=info.calorimeter)
            results[info.run] = _solution_run(
                info, analysis, tg, info.rise_method or method, series.get(name),
                blanks.get(name), opts,
                blanks_with_vapour=no_volume.get(name, ()))
        except CalworkError as exc:
            results[info.run] = failed_run(info, exc)
    ordered = [results[info.run] for info in runs]
    infos = {info.run: info for info in runs}
    samples = solution_samples([r for r in ordered if r.kind == "solution"], infos,
                               phi_L_model=opts.phi_L_model,
                               shared_components=SHARED_COMPONENTS)
    return ChainResult(runs=ordered, calibrations=list(series.values()), samples=samples,
                       thermograms=read)
