"""``corrected_rise``: periods → method → uncertainty → diagnostics → :class:`RiseResult`.

Uncertainty of the corrected rise: propagation helpers (GUM, JCGM 100:2008 §5.1).

The standard uncertainty of ``ΔT_c`` combines, in quadrature,

* ``fit`` — the drift-fit parameters (end-point temperatures, ``k``, ``T_∞`` or the drift
  rates) through the sensitivities of docs/methods.md §1.4 (``∂ΔT_c/∂k = ∫(T − T_∞)dt``,
  ``∂ΔT_c/∂T_∞ = −k(t_f − t_i)``, end points), with the covariance scaled by the AR(1)
  variance-inflation factor of the residuals;
* ``main-period-readings`` — reading noise entering through the exchange integral
  (``k σ √Σw²``, trapezoid weights ``w``);
* ``boundary`` — the spread of ``ΔT_c`` over plausible boundary choices when the periods were
  detected automatically;
* ``shortcut`` — for the 60 % Dickinson rule, its known deviation from the exact rule.
* ``transient-tail`` — the one-sided bias of a slow transient (two-body calorimeter) still
  decaying after ``t_f``, fitted on the late main period and propagated through the method
  (:mod:`calwork.rise.tail`); present only when that tail is significant.

The components are combined by :func:`calwork.core.uncertainty.root_sum_square` into a
:class:`calwork.core.uncertainty.Budget` in kelvin (``RiseResult.uncertainty_budget``).
"""

from __future__ import annotations

import math
from dataclasses import replace
from functools import cache

import numpy as np

from calwork.core.errors import (
    CalworkError,
    ChoiceError,
    MultipleEventsError,
    PeriodDetectionError,
    check_choice,
)
from calwork.core.provenance import Provenance, calwork_version
from calwork.core.thermogram import Thermogram
from calwork.core.uncertainty import Budget, root_sum_square
from calwork.rise.diagnostics import (
    MIN_PERIOD_READINGS,
    MIN_PERIOD_S,
    format_times,
    sampling_gaps,
    warning,
)
from calwork.rise.events import LogEvent, LogEvents, list_heat_events
from calwork.rise.periods import Periods, detect_periods
from calwork.rise.registry import DICKINSON_RULES, METHODS, RiseMethod, rise_method
from calwork.rise.result import RiseResult
from calwork.rise.selection import MethodOutput, Selection, select
from calwork.rise.sparse import (
    interpolation_component_K,
    record_resolution_K,
    resolution_component_K,
    student_factor,
)
from calwork.rise.tail import tail_correction, tail_model

__all__ = ["corrected_rise"]

#: Band around the jacket temperature inside which T_∞ is plausible, K: T_∞ − T_j = u/k is the
#: stirring and thermometer heat over the conductance, normally well below 1 K (common practice).
JACKET_BAND_K = 1.0
#: Durbin–Watson below this flags serially correlated drift residuals (ρ₁ ≳ 0.25).
DW_LIMIT = 1.5
#: Relative noise (σ/|ΔT_c|) above which the noise level is flagged.
NOISE_RELATIVE_LIMIT = 1e-3


#: Readings by which the after period is shortened to measure the boundary-choice spread.
BOUNDARY_SHIFT_READINGS = 16
#: A detected end of the main period is moved to where a slow transient has fallen to this
#: fraction of the rise (1 ppm: far below the uncertainty of any rise; derived).
END_TAIL_FRACTION = 1e-6
#: The budget components computed from the drift fits' residual scatter (Student's t).
_SCATTER_COMPONENTS = ("fit", "main-period-readings")
#: Student factor above which the widening is named in a warning (about ν < 20).
_STUDENT_NOTE = 1.05


@cache
def _version() -> str:
    return calwork_version()


def _apply_overrides(thermogram: Thermogram, periods: Periods | None, fire_time_s,
                     main_end_s) -> Periods:
    if periods is None:
        return detect_periods(thermogram, fire_time_s=fire_time_s, main_end_s=main_end_s)
    if not isinstance(periods, Periods):
        raise CalworkError("periods must be a calwork.rise.Periods record",
                           found=type(periods).__name__)
    changes = {}
    if fire_time_s is not None:
        changes["fire_time_s"] = float(fire_time_s)
        changes["fire_source"] = "given"
    if main_end_s is not None:
        changes["main_end_s"] = float(main_end_s)
        changes["main_end_source"] = "given"
        changes["after_period_s"] = (float(main_end_s), periods.after_period_s[1])
    return replace(periods, **changes) if changes else periods


def _boundary_component(thermogram: Thermogram, sel: Selection, out: MethodOutput,
                        periods: Periods, rerun, warns: list[str]) -> float | None:
    """Spread of ΔT_c over plausible boundaries when they were detected automatically.

    End of the main period: the method is repeated with the after period starting
    :data:`BOUNDARY_SHIFT_READINGS` readings later (at most a quarter of it); a transient not
    yet died out at ``t_f`` sits in exactly those readings, while the noise of the two nested
    estimates mostly cancels. Start: the rise re-evaluated with ``t_i`` one reading earlier.
    """
    parts = []
    if periods.main_end_source == "detected":
        after_t = sel.t[sel.after]
        shift = min(BOUNDARY_SHIFT_READINGS, after_t.size // 4)
        if shift >= 1:
            t_alt = float(after_t[shift])
            alt = replace(periods, main_end_s=t_alt,
                          after_period_s=(t_alt, periods.after_period_s[1]))
            try:
                sub = select(thermogram, alt)
                again = rerun(sub, out)
                parts.append(abs(again - out.rise_K))
            except CalworkError as exc:
                warns.append(warning(
                    "boundary-component-incomplete", "the rise with the end of the main "
                    f"period moved {shift} reading(s) later could not be computed ({exc}); "
                    "the boundary uncertainty lacks that part: give main_end_s"))
    if periods.fire_source != "given":
        earlier = sel.previous_reading_s(1)
        if earlier < sel.t_i and earlier > periods.fore_period_s[0]:
            try:
                parts.append(abs(out.rise_at(earlier, sel.t_f) - out.rise_K))
            except (ValueError, CalworkError) as exc:
                warns.append(warning(
                    "boundary-component-incomplete", "the rise with the start of the main "
                    f"period one reading earlier could not be computed ({exc}); the "
                    "boundary uncertainty lacks that part: give fire_time_s"))
    if not parts:
        return None
    return root_sum_square(parts, name="the boundary component")


def _tail_component(sel: Selection, out: MethodOutput, periods: Periods,
                    rerun, tail: tuple[float, float, float] | None = None) -> float | None:
    """One-sided bias of ``ΔT_c`` from a slow transient still decaying after ``t_f``.

    The tail is fitted on the late main period (:func:`calwork.rise.tail.tail_model`), removed
    from the after-period readings, and the method repeated; the magnitude of the change is
    the component (``None`` when no significant tail is found). It is not a correction: the
    model is an extrapolation, and the component makes the stated uncertainty cover the bias
    (two-body bomb calorimeter, t_f ≈ 14 τ after firing: bias ≈ 1 u; derived from simulation,
    tests/test_review_rise_twobody_tail.py).
    """
    if tail is None:  # (the tail found when the end was placed is the record's own)
        tail = tail_model(sel, out.k_per_s, out.T_inf_K, periods.event_sign, out.sigma_K)
    if tail is None:
        return None
    sub = tail_correction(sel, *tail)
    try:
        again = rerun(sub, out)
    except CalworkError:
        return None
    b = abs(again - out.rise_K)
    return b if math.isfinite(b) and b > 0.0 else None


def _end_past_the_tail(thermogram: Thermogram, sel: Selection, out: MethodOutput,
                       periods: Periods, reduce, tail: tuple[float, float, float] | None,
                       warns: list[str]) -> tuple[Periods, Selection, MethodOutput] | None:
    """A detected end of the main period moved to where a slow transient has died away.

    The plateau test ends the main period once the record no longer departs from the
    Newtonian drift beyond the noise; a slow transient (two-body calorimeter) may still be
    decaying there, below the noise of single readings but not of the after-period fit. When
    the tail model (:func:`calwork.rise.tail.tail_model`) finds one, the end is moved to where
    it has fallen to :data:`END_TAIL_FRACTION` of the rise — if the record leaves an after
    period of :data:`~calwork.rise.diagnostics.MIN_PERIOD_S` beyond it; otherwise to the
    latest end that does, with a warning naming the time to check.
    """
    if tail is None:
        return None
    amplitude, tau, t_a = tail
    target = t_a + tau * math.log(abs(amplitude) / (END_TAIL_FRACTION * abs(out.rise_K)))
    if target <= sel.t_f:
        return None
    t = sel.t
    latest_i = int(np.searchsorted(t, t[-1] - MIN_PERIOD_S, side="right")) - 1
    latest_i = min(latest_i, t.size - MIN_PERIOD_READINGS)
    if latest_i < 0 or t[latest_i] <= sel.t_f:
        latest_i = int(np.searchsorted(t, sel.t_f))
    i = int(np.searchsorted(t, target))
    if i > latest_i:
        left = abs(amplitude) * math.exp(-(float(t[latest_i]) - t_a) / tau) / abs(out.rise_K)
        warns.append(warning(
            "main-end-unconfirmed", "a slow transient (τ ≈ "
            f"{tau:.3g} s) is still {left * 1e6:.3g} ppm of the rise at {t[latest_i]:.6g} s, "
            "the latest end that leaves an after period; check the end of the main period "
            f"near {target:.6g} s or record a longer after period"))
        i = latest_i
    new_end = float(t[i])
    if new_end <= sel.t_f:
        return None
    moved = replace(periods, main_end_s=new_end,
                    after_period_s=(new_end, periods.after_period_s[1]))
    try:
        sub = select(thermogram, moved)
        return moved, sub, reduce(sub, out)
    except CalworkError:
        return None


def _from_record(thermogram: Thermogram, key: str, given: float | None) -> float | None:
    """A boundary the record itself marks (a hand-read record's remark), unless given."""
    if given is not None or key not in thermogram.metadata:
        return given
    return float(thermogram.metadata[key])


def _small_sample_parts(thermogram: Thermogram, sel: Selection, out: MethodOutput,
                        budget: dict[str, float], warns: list[str]) -> float | None:
    """Student's t on the scatter-based components, the reading resolution and the
    interpolation of the main period (:mod:`calwork.rise.sparse`); returns the resolution."""
    if out.dof < 1:
        raise PeriodDetectionError(
            "too few drift-period readings to estimate their scatter",
            path=thermogram.provenance.source_path,
            found=f"{int(sel.fore.sum())} fore and {int(sel.after.sum())} after readings",
            expected="at least 3 in each drift period (more for the straight-line methods)")
    factor = student_factor(out.dof)
    for name in _SCATTER_COMPONENTS:
        if name in budget:
            budget[name] *= factor
    if factor > _STUDENT_NOTE:
        warns.append(warning("few-degrees-of-freedom", f"the drift fits rest on {out.dof} "
                             "degrees of freedom: their scatter-based uncertainty is stated "
                             f"{factor:.3g} times wider (Student's t)"))
    resolution = record_resolution_K(thermogram)
    if resolution is not None and resolution / math.sqrt(12.0) > out.sigma_K:
        budget["reading-resolution"] = resolution_component_K(
            resolution, out.fit_u_per_sigma_K, out.k_per_s, sel.main_weights_sq_s2())
    interpolation = interpolation_component_K(sel, out.k_per_s)
    if interpolation > 0.0:
        budget["main-period-interpolation"] = interpolation
    return resolution


def _diagnostics(thermogram: Thermogram, sel: Selection, out: MethodOutput,
                 u_rise: float, spec: RiseMethod) -> tuple[list[str], dict[str, float]]:
    warns: list[str] = []
    cross: dict[str, float] = {}
    gaps = sampling_gaps(sel.t)
    if gaps:
        text = ", ".join(f"{a:.6g}–{b:.6g} s" for a, b in gaps[:5])
        warns.append(warning("sampling-gap", f"{len(gaps)} gap(s) in the sampling: {text}"))
    if out.k_per_s <= 0:
        warns.append(warning("drift-implausible", f"k = {out.k_per_s:.3g} 1/s is not positive "
                             "(the drift periods do not show Newtonian exchange with a jacket)"))
    jacket = thermogram.channels.get("jacket_K")
    if jacket is not None and math.isfinite(out.T_inf_K):
        T_j = float(np.mean(jacket))
        band = max(JACKET_BAND_K, 3.0 * out.u_T_inf_K if math.isfinite(out.u_T_inf_K) else 0.0)
        if abs(out.T_inf_K - T_j) > band:
            warns.append(warning("drift-implausible", f"T_inf = {out.T_inf_K:.4f} K is "
                                 f"{out.T_inf_K - T_j:+.3g} K from the jacket ({T_j:.4f} K)"))
    if out.durbin_watson < DW_LIMIT:
        warns.append(warning("autocorrelated-residuals", f"Durbin–Watson {out.durbin_watson:.2f}"
                             f" (lag-1 ρ = {out.rho1:.2f}); fit covariance inflated "
                             f"×{(1 + max(out.rho1, 0)) / (1 - min(max(out.rho1, 0), 0.95)):.2f}"))
    rise = out.rise_K
    if rise != 0 and out.sigma_K / abs(rise) > NOISE_RELATIVE_LIMIT:
        warns.append(warning("noise-high", f"reading noise {out.sigma_K * 1e3:.3g} mK is "
                             f"{out.sigma_K / abs(rise):.2g} of the rise"))
    for name in spec.cross_checks:
        check = METHODS[name]
        try:
            other, u_other = check.check_function()(sel)
        except CalworkError as exc:
            warns.append(warning("cross-check-failed", f"the {check.title} cross-check could "
                                 f"not be computed ({exc.message})"))
            continue
        cross[name] = other
        lim = 2.0 * math.hypot(u_rise, u_other)
        if abs(other - rise) > lim:
            warns.append(warning("methods-disagree", f"{spec.title} {rise:.6f} K and "
                                 f"{check.title} {other:.6f} K differ by "
                                 f"{(other - rise) * 1e6:+.3g} µK (> {lim * 1e6:.3g} µK,"
                                 " twice the combined uncertainty)"))
    return warns, cross


def corrected_rise(thermogram: Thermogram, method: str = "newton-fit",
                   periods: Periods | None = None, *, fire_time_s: float | None = None,
                   main_end_s: float | None = None, dickinson_rule: str = "equal-area",
                   event: int | None = None) -> RiseResult:
    """The corrected (adiabatic) temperature rise of a thermogram.

    Parameters
    ----------
    thermogram
        The temperature record (:class:`~calwork.core.thermogram.Thermogram`).
    method
        ``'newton-fit'`` (joint Newtonian fit, default), ``'regnault-pfaundler'`` or
        ``'dickinson'`` (see :data:`calwork.rise.METHODS`).
    periods
        Explicit :class:`~calwork.rise.Periods`; detected with :func:`detect_periods` if
        ``None``.
    fire_time_s
        Known start of the main period, s (overrides detection or ``periods``).
    main_end_s
        Known end of the main period, s (overrides detection or ``periods``).
    dickinson_rule
        For ``method='dickinson'``: ``'equal-area'`` (exact ``t_x`` (1.7), default) or
        ``'60-percent'`` (the fuel standards' shortcut (1.8); for routine fuel work only).
    event
        For a log with several heat events (:func:`calwork.rise.events.list_heat_events`):
        which one to reduce, 1-based. Without it such a log is refused (a given
        ``fire_time_s`` also says which: the event it falls in). Explicit ``periods`` say
        which readings to use already; giving both is an error.

    Returns
    -------
    RiseResult
        ``corrected_rise_K`` with its standard uncertainty, the fitted drift model, periods
        and machine-readable warnings.

    Raises
    ------
    ChoiceError
        Unknown ``method`` or ``dickinson_rule`` (the message lists the valid ones).
    PeriodDetectionError
        No event, or too short fore/after periods.
    MultipleEventsError
        Several heat events and nothing says which (the message lists them).
    UncertaintyError
        The uncertainty cannot be propagated (never reported as zero instead).

    Examples
    --------
    >>> from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run
    >>> run = simulate_run(CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None),
    ...                    CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
    ...                    duration_s=2400.0, seed=1)
    >>> res = corrected_rise(run.thermogram)
    >>> abs(res.corrected_rise_K / run.truth.adiabatic_rise_K - 1) < 1e-4
    True
    """
    spec = rise_method(method)
    check_choice("dickinson_rule", dickinson_rule, DICKINSON_RULES)
    whole = thermogram
    events: tuple = ()
    chosen = None
    if periods is not None and event is not None:
        raise ChoiceError("give either explicit periods or an event number, not both",
                          column="event", found=event, expected="no event with periods")
    if periods is None:
        found = list_heat_events(thermogram)
        if len(found.events) > 1 or (event is not None and event != 1):
            chosen = choose_event(found, event, fire_time_s,
                                  path=thermogram.provenance.source_path)
            ev = found.events[chosen - 1]
            thermogram = thermogram.window(ev.window_start_s, ev.window_end_s)
            events = tuple(_event_summary(e) for e in found.events)
    if periods is None:  # a hand-read record's remarks ('fired', 'end of main period')
        fire_time_s = _from_record(thermogram, "record_fire_time_s", fire_time_s)
        main_end_s = _from_record(thermogram, "record_main_end_s", main_end_s)
    periods = _apply_overrides(thermogram, periods, fire_time_s, main_end_s)
    sel = select(thermogram, periods)
    options = {"dickinson_rule": dickinson_rule} if "dickinson_rule" in spec.options else {}
    reduce = spec.reduce_function(**options)
    out = reduce(sel)
    component_warnings: list[str] = []
    tail = None
    if periods.main_end_source == "detected":
        tail = tail_model(sel, out.k_per_s, out.T_inf_K, periods.event_sign, out.sigma_K)
        moved = _end_past_the_tail(thermogram, sel, out, periods, reduce, tail,
                                   component_warnings)
        if moved is not None:
            periods, sel, out = moved
    rerun = spec.rerun_function(**options)
    budget = dict(out.budget)
    boundary = _boundary_component(thermogram, sel, out, periods, rerun, component_warnings)
    if boundary is not None:
        budget["boundary"] = boundary
    tail_u = _tail_component(sel, out, periods, rerun, tail)
    if tail_u is not None:
        budget["transient-tail"] = tail_u
    resolution = _small_sample_parts(thermogram, sel, out, budget, component_warnings)
    try:
        u = root_sum_square(budget, name="the corrected rise", allow_zero=False)
    except CalworkError as exc:
        raise exc.with_context(path=thermogram.provenance.source_path) from None
    warns, cross = _diagnostics(thermogram, sel, out, u, spec)
    warns.extend(component_warnings)
    if thermogram.metadata.get("time_unit_source") == "assumed":
        column = thermogram.metadata.get("time_column", "")
        warns.append(warning("time-unit-assumed", f"time column {column!r} names no unit, so "
                             "seconds were assumed; give the time unit if it is not s"))
    all_warnings = [*periods.warnings, *out.warnings, *warns]
    if periods.spikes_s and not any(w.startswith("spikes-removed") for w in all_warnings):
        all_warnings.append(warning("spikes-removed", f"{len(periods.spikes_s)} reading(s) "
                                    f"left out at t = {format_times(periods.spikes_s)}"))
    return RiseResult(
        corrected_rise_K=out.rise_K, u_corrected_rise_K=u, method=method, periods=periods,
        fire_time_s=periods.fire_time_s, main_end_s=periods.main_end_s,
        fore_period_s=periods.fore_period_s, after_period_s=periods.after_period_s,
        k_per_s=out.k_per_s, u_k_per_s=out.u_k_per_s, T_inf_K=out.T_inf_K,
        u_T_inf_K=out.u_T_inf_K, T_initial_K=out.T_initial_K, T_final_K=out.T_final_K,
        exchange_correction_K=out.exchange_K, fore_drift=out.fore_drift,
        after_drift=out.after_drift, t_x_s=out.t_x_s,
        dickinson_rule=options.get("dickinson_rule"),
        noise_K=out.sigma_K, durbin_watson=out.durbin_watson, rho1=out.rho1,
        reading_resolution_K=resolution, dof=out.dof,
        uncertainty_budget=Budget.of("corrected temperature rise", "K", budget),
        cross_check=cross, warnings=tuple(all_warnings),
        provenance=Provenance(method=spec.label(**options),
                              importer="calwork.rise.corrected_rise",
                              parents=(whole.provenance,), calwork_version=_version()),
        events=events, event=chosen,
    )


def _event_summary(ev: LogEvent) -> dict[str, object]:
    return {"kind": ev.kind, "start_s": ev.start_s, "end_s": ev.active_end_s,
            "window_start_s": ev.window_start_s, "window_end_s": ev.window_end_s}


def describe_events(found: LogEvents) -> str:
    """``'1: event at 600–720 s; 2: heater at 1500–1805 s'``."""
    return "; ".join(f"{i}: {e.kind} at {e.start_s:.0f}–{e.active_end_s:.0f} s"
                     for i, e in enumerate(found.events, start=1))


def choose_event(found: LogEvents, event: int | None, fire_time_s: float | None, *,
                 path: object = None) -> int:
    """The 1-based event to reduce: ``event`` if given, else the one ``fire_time_s`` falls
    in; otherwise :class:`MultipleEventsError` naming the events."""
    n = len(found.events)
    if event is not None:
        if not 1 <= int(event) <= n:
            raise ChoiceError(f"the log holds {n} heat event(s): {describe_events(found)}",
                              path=path, column="event", found=event,
                              expected=f"a number from 1 to {n}")
        return int(event)
    if fire_time_s is not None:
        for i, e in enumerate(found.events, start=1):
            if e.window_start_s <= fire_time_s <= e.window_end_s:
                return i
        raise PeriodDetectionError(
            f"the given firing time is in none of the log's heat events "
            f"({describe_events(found)})", path=path, column="fire_time_s",
            found=fire_time_s, expected="a time inside one event's window, or the event")
    raise MultipleEventsError(
        f"the log holds {n} heat events ({describe_events(found)}); reducing them as one "
        "would sum them: say which with --event N (the sheet column event)", path=path,
        column="event", expected="the number of the event to reduce")
