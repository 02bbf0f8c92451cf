"""One solution-calorimetry log: its events, their corrected rises and in-log calibrations.

:func:`analyse_log` finds the heater intervals and the reaction (:mod:`.events`), runs the
temperature-rise engine (:func:`calwork.rise.corrected_rise`) on each event's window with
``fire_time_s`` = heater on / reaction onset, and turns every heater event into an energy
equivalent ``ε = Q_el / ΔT_c,el`` (:mod:`.electrical`). Heater events before the reaction are
calibrations of the initial contents, those after it of the final contents (docs/methods.md (2.2)).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calwork.core.errors import PeriodDetectionError, RunError, check_choice
from calwork.core.numeric import median
from calwork.core.thermogram import Thermogram
from calwork.core.uncertainty import root_sum_square
from calwork.rise import Periods, corrected_rise
from calwork.rise.events import LogEvent, LogEvents, find_events
from calwork.solution.electrical import (
    POTENTIAL_LEADS,
    ElectricalEnergy,
    default_u_relative_power,
    electrical_energy_J,
    energy_equivalent_J_per_K,
    find_heater_intervals,
    heater_power_W,
)
from calwork.solution.reaction import CALIBRATION_BASES

__all__ = ["HeaterCalibration", "LogAnalysis", "SolutionOptions", "analyse_log", "event_periods"]

_PHI_L_CHOICES = ("auto", "extended", "limiting", "none", "pitzer")


@dataclass(frozen=True, kw_only=True)
class SolutionOptions:
    """Options of the solution-calorimetry chain (all keyword-only, with documented defaults).

    Attributes
    ----------
    calibration
        Which ε a reaction run uses: ``'auto'`` (mean of the in-log calibrations before and
        after; else the one there is; else the calorimeter's electrical series), ``'mean'``,
        ``'before'``, ``'after'`` or ``'series'`` (docs/methods.md (2.2)).
    phi_L_model
        ΦL model for the extrapolation to infinite dilution: ``'auto'`` (Pitzer where its
        parameters are bundled, the extended Debye–Hückel term for other known electrolytes,
        linear in m for non-electrolytes), or one of ``'pitzer'``, ``'extended'``,
        ``'limiting'``, ``'none'``.
    lead_resistance_ohm, lead_fraction, potential_leads
        Lead-power convention of the electrical calibration (see :mod:`.electrical`);
        default no lead correction (potential leads at the heater).
    heater_timing_u_s
        Standard uncertainty of each heater switching time, s. Default: a rectangular
        distribution one sampling interval wide (Δt/√12) for edges found in the channels,
        0 for times given in the sheet.
    u_relative_power
        Relative standard uncertainty of the power measurement; default the bundled value.
    u_mass_g
        Standard uncertainty of a weighing, g; default the bundled value.
    half_width_s, n_sigma
        Event-detection settings (:func:`calwork.rise.events.find_events`).
    periods
        ``'events'`` (default): the periods of each event are set from the event detection —
        fore period from the window start to the reading before heater-on / onset, main
        period to the end of the event's active stretch plus a margin (the larger of 30 s,
        the stretch's own tail, five readings), after period to the window end (ΔT_c does not
        depend on t_f once the event is over, docs/methods.md §1.1). ``'rise'``: the
        temperature-rise engine's own detection (:func:`calwork.rise.detect_periods`) on the
        window, with the heater-on / onset time given.
    undetected_main_period_s
        Length of the main period of an event whose start is given (sheet ``fire_time_s``)
        but whose heat is too small to be seen (an empty-ampoule blank), s.
    """

    calibration: str = "auto"
    phi_L_model: str = "auto"
    lead_resistance_ohm: float = 0.0
    lead_fraction: float = 0.5
    potential_leads: str = "heater"
    heater_timing_u_s: float | None = None
    u_relative_power: float | None = None
    u_mass_g: float | None = None
    half_width_s: float = 15.0
    n_sigma: float = 8.0
    periods: str = "events"
    undetected_main_period_s: float = 120.0

    def __post_init__(self) -> None:
        check_choice("periods", self.periods, ("events", "rise"))
        check_choice("calibration", self.calibration, CALIBRATION_BASES)
        check_choice("phi_L_model", self.phi_L_model, _PHI_L_CHOICES)
        check_choice("potential_leads", self.potential_leads, POTENTIAL_LEADS)


@dataclass(frozen=True, kw_only=True)
class HeaterCalibration:
    """One electrical calibration inside a log."""

    event_index: int
    #: ``'before'`` / ``'after'`` the reaction, or ``'only'`` in a log without a reaction.
    position: str
    energy: ElectricalEnergy
    rise: Any
    energy_equivalent_J_per_K: float
    u_energy_equivalent_J_per_K: float
    #: Components of u(ε), J/K: heater_rise, timing, power_noise, power_calibration.
    budget: Mapping[str, float]
    T_initial_K: float

    def to_dict(self) -> dict[str, Any]:
        return {
            "event_index": self.event_index, "position": self.position,
            "heater_energy_J": self.energy.energy_J, "u_heater_energy_J": self.energy.u_energy_J,
            "heater_on_s": self.energy.on_s, "heater_off_s": self.energy.off_s,
            "mean_power_W": self.energy.mean_power_W, "energy_source": self.energy.source,
            "corrected_rise_K": self.rise.corrected_rise_K,
            "u_corrected_rise_K": self.rise.u_corrected_rise_K,
            "energy_equivalent_J_per_K": self.energy_equivalent_J_per_K,
            "u_energy_equivalent_J_per_K": self.u_energy_equivalent_J_per_K,
            "budget_J_per_K": dict(self.budget), "T_initial_K": self.T_initial_K,
        }


@dataclass(frozen=True, kw_only=True)
class LogAnalysis:
    """Events, rises and in-log calibrations of one log."""

    events: LogEvents
    rises: tuple[Any, ...]
    calibrations: tuple[HeaterCalibration, ...]
    reaction_index: int | None
    warnings: tuple[str, ...] = field(default=())

    @property
    def reaction_rise(self) -> Any:
        """RiseResult of the reaction, or ``None``."""
        return None if self.reaction_index is None else self.rises[self.reaction_index]

    def calibration(self, position: str) -> HeaterCalibration | None:
        """The calibration nearest the reaction on the given side (``'before'``/``'after'``)."""
        found = [c for c in self.calibrations if c.position == position]
        if not found:
            return None
        return found[-1] if position == "before" else found[0]


def _sheet_interval(heater_on_s, heater_off_s, heater_power):
    if heater_on_s is None and heater_off_s is None:
        if heater_power is not None:
            raise RunError("heater power is given without the heater on/off times",
                           column="heater_on_s", expected="heater_on_s and heater_off_s, s")
        return None
    if heater_on_s is None or heater_off_s is None:
        missing = "heater_on_s" if heater_on_s is None else "heater_off_s"
        raise RunError("heater on and off times must be given together", column=missing)
    if not heater_off_s > heater_on_s:
        raise RunError("the heater must be switched off after it is switched on",
                       column="heater_off_s", found=heater_off_s,
                       expected=f"a time after heater_on_s = {heater_on_s!r} s")
    return float(heater_on_s), float(heater_off_s)


def analyse_log(
    thermogram: Thermogram,
    *,
    method: str = "newton-fit",
    heater_power_W_sheet: float | None = None,
    heater_on_s: float | None = None,
    heater_off_s: float | None = None,
    standard_resistor_ohm: float | None = None,
    fire_time_s: float | None = None,
    main_end_s: float | None = None,
    expect_reaction: bool = True,
    options: SolutionOptions | None = None,
    rises: Sequence[Any] | None = None,
) -> LogAnalysis:
    """Find the events of a log, reduce each, and make the in-log electrical calibrations.

    Parameters
    ----------
    thermogram
        The log.
    method
        Temperature-rise method (``calwork.rise``).
    heater_power_W_sheet, heater_on_s, heater_off_s
        Sheet columns ``heater_power_W``, ``heater_on_s``, ``heater_off_s`` (W, s).
    standard_resistor_ohm
        Sheet column ``standard_resistor_ohm`` (Ω) for a ``standard_resistor_V`` channel.
    fire_time_s, main_end_s
        Sheet overrides of the reaction's start and of its main-period end (s).
    expect_reaction
        False for a stand-alone electrical calibration.
    options
        :class:`SolutionOptions`.
    rises
        Precomputed RiseResults, one per event in time order (e.g. from a lab book); when
        ``None`` (the default) each event's rise is computed here.

    Raises
    ------
    RunError
        Inconsistent heater columns; no heater data where one is needed.
    PeriodDetectionError
        No reaction found (give ``fire_time_s``), or overlapping events.
    """
    opts = options or SolutionOptions()
    tg = thermogram
    t = tg.time_s
    ch = tg.channels
    sheet = _sheet_interval(heater_on_s, heater_off_s, heater_power_W_sheet)
    power = None
    if "heater_V" in ch and ("heater_A" in ch or "standard_resistor_V" in ch):
        power = heater_power_W(
            ch["heater_V"], ch.get("heater_A"),
            standard_resistor_V=None if "heater_A" in ch else ch["standard_resistor_V"],
            standard_resistor_ohm=standard_resistor_ohm,
            lead_resistance_ohm=opts.lead_resistance_ohm, lead_fraction=opts.lead_fraction,
            potential_leads=opts.potential_leads)
    elif "heater_V" in ch:
        raise RunError("the log has a heater voltage but no current", column="heater_A",
                       expected="a heater_A or standard_resistor_V channel")
    intervals: list[dict[str, Any]] = []
    if power is not None:
        for e in find_heater_intervals(t, power):
            u_on = e.u_on_s if opts.heater_timing_u_s is None else opts.heater_timing_u_s
            u_off = e.u_off_s if opts.heater_timing_u_s is None else opts.heater_timing_u_s
            intervals.append({"on": e.on_s, "off": e.off_s, "u_on": u_on, "u_off": u_off,
                              "source": "channels"})
    if sheet is not None:
        u_sheet = opts.heater_timing_u_s or 0.0
        for item in intervals:
            if item["on"] < sheet[1] and item["off"] > sheet[0]:
                item.update(on=sheet[0], off=sheet[1], u_on=u_sheet, u_off=u_sheet,
                            source="sheet times, channel power")
                break
        else:
            if power is None and heater_power_W_sheet is None:
                raise RunError("heater times are given but neither heater channels nor "
                               "heater_power_W", column="heater_power_W",
                               expected="a heater power, W")
            intervals.append({"on": sheet[0], "off": sheet[1], "u_on": u_sheet,
                              "u_off": u_sheet, "source": "sheet"})
    events = find_events(
        t, tg.temperature_K,
        [(i["on"], i["off"], i["u_on"], i["u_off"], i["source"]) for i in intervals],
        fire_time_s=fire_time_s, expect_reaction=expect_reaction,
        half_width_s=opts.half_width_s, n_sigma=opts.n_sigma,
    )
    if rises is not None and len(rises) != len(events.events):
        raise RunError("precomputed rises do not match the events of the log",
                       column="log", found=len(rises), expected=f"{len(events.events)} rises")
    out_rises = []
    for k, ev in enumerate(events.events):
        if rises is not None:
            out_rises.append(rises[k])
            continue
        window = tg.window(ev.window_start_s, ev.window_end_s)
        end = main_end_s if (ev.kind == "reaction" and main_end_s is not None) else None
        if opts.periods == "rise":
            out_rises.append(corrected_rise(window, method, fire_time_s=ev.start_s,
                                            main_end_s=end))
        else:
            periods = event_periods(ev, window.time_s, main_end_s=end,
                                    undetected_main_period_s=opts.undetected_main_period_s)
            out_rises.append(corrected_rise(window, method, periods))
    reaction_index = next((k for k, e in enumerate(events.events) if e.kind == "reaction"),
                          None)
    calibrations = []
    for k, ev in enumerate(events.events):
        if ev.kind != "heater":
            continue
        src = ev.source
        if power is not None and src != "sheet":
            energy = electrical_energy_J(t, power, ev.start_s, ev.end_s, u_on_s=ev.u_start_s,
                                         u_off_s=ev.u_end_s,
                                         u_relative_power=opts.u_relative_power, source=src)
        else:
            if heater_power_W_sheet is None:
                raise RunError("no heater power: neither heater channels nor heater_power_W",
                               column="heater_power_W", expected="a heater power, W")
            energy = _sheet_energy(heater_power_W_sheet, ev.start_s, ev.end_s,
                                   ev.u_start_s, ev.u_end_s, opts.u_relative_power)
        rise = out_rises[k]
        eps, u_eps = energy_equivalent_J_per_K(energy.energy_J, energy.u_energy_J,
                                               rise.corrected_rise_K, rise.u_corrected_rise_K)
        budget = {"heater_rise": eps * rise.u_corrected_rise_K / rise.corrected_rise_K}
        for name, value in energy.budget.items():
            budget[name] = eps * value / energy.energy_J
        if reaction_index is None:
            position = "only"
        else:
            position = "before" if k < reaction_index else "after"
        calibrations.append(HeaterCalibration(
            event_index=k, position=position, energy=energy, rise=rise,
            energy_equivalent_J_per_K=eps, u_energy_equivalent_J_per_K=u_eps, budget=budget,
            T_initial_K=float(rise.T_initial_K)))
    warnings = list(events.warnings)
    for r in out_rises:
        warnings.extend(getattr(r, "warnings", ()) or ())
    return LogAnalysis(events=events, rises=tuple(out_rises), calibrations=tuple(calibrations),
                       reaction_index=reaction_index, warnings=tuple(warnings))


def event_periods(event: LogEvent, time_s, *, main_end_s: float | None = None,
                  undetected_main_period_s: float = 120.0, min_after_s: float = 60.0):
    """Fore, main and after periods of one event from the event detection (see
    :class:`SolutionOptions` ``periods='events'``), as a :class:`calwork.rise.Periods`.

    Raises
    ------
    PeriodDetectionError
        When the window leaves fewer than four readings for a drift period.
    """
    t = np.asarray(time_s, dtype=float)
    dt = median(np.diff(t))
    w0, w1 = float(t[0]), float(t[-1])
    fire = float(event.start_s)
    if main_end_s is not None:
        t_f, source = float(main_end_s), "given"
    elif event.kind == "reaction" and event.source == "given" and (
            event.active_end_s <= fire + 2.5 * dt + 30.0):
        t_f, source = fire + undetected_main_period_s, "given-length"
    else:
        tail_from = event.end_s if event.kind == "heater" else fire
        tail = max(event.active_end_s - tail_from, 0.0)
        margin = max(30.0, tail if event.kind == "heater" else 0.5 * tail, 5 * dt)
        t_f, source = event.active_end_s + margin, "events"
        cap = w1 - max(min_after_s, 0.3 * (w1 - event.active_end_s))
        t_f = max(min(t_f, cap), event.active_end_s)
    fore_end = float(t[max(int(np.searchsorted(t, fire, side="left")) - 1, 0)])
    if np.count_nonzero(t <= fore_end) < 4 or np.count_nonzero(t >= t_f) < 4:
        raise PeriodDetectionError(
            f"too few readings for the drift periods of the {event.kind} at {fire:.0f} s",
            column="fire_time_s", found=(w0, fire, t_f, w1),
            expected="at least 4 readings before the event and after its main period")
    return Periods(fore_period_s=(w0, fore_end), fire_time_s=fire, main_end_s=t_f,
                   after_period_s=(t_f, w1), fire_source=event.source,
                   main_end_source=source,
                   heater_off_s=event.end_s if event.kind == "heater" else None)


def _sheet_energy(power_W: float, on_s: float, off_s: float, u_on_s: float, u_off_s: float,
                  u_relative_power: float | None) -> ElectricalEnergy:
    if not (math.isfinite(power_W) and power_W > 0):
        raise RunError("heater power must be positive", column="heater_power_W",
                       found=power_W, expected="P > 0 W")
    rel = default_u_relative_power() if u_relative_power is None else float(u_relative_power)
    energy = power_W * (off_s - on_s)
    budget = {"timing": power_W * math.hypot(u_on_s, u_off_s), "power_noise": 0.0,
              "power_calibration": energy * rel}
    u = root_sum_square(budget, name="the heater energy")
    return ElectricalEnergy(energy_J=energy, u_energy_J=u, on_s=on_s, off_s=off_s,
                            mean_power_W=power_W, source="sheet", n_points=0, budget=budget)
