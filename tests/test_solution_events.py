"""Finding heater intervals and the reaction in one log, and the windows they are reduced on."""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest

from calwork.core.errors import PeriodDetectionError
from calwork.rise.events import find_events, local_slopes_K_per_s
from calwork.simulation import CalorimeterParams, FirstOrderRelease, HeaterInterval, simulate_run
from calwork.solution.analysis import analyse_log, event_periods

P = CalorimeterParams.solution_preset()


def _sim(energy_J, start_s=1200.0, *, seed=1, T0=298.15, heaters=((300, 600), (1800, 2100))):
    inputs = [FirstOrderRelease(energy_J=energy_J, start_s=start_s, time_constant_s=20.0)]
    inputs += [HeaterInterval(power_W=0.05, on_s=a, off_s=b) for a, b in heaters]
    return simulate_run(replace(P, initial_temperature_K=T0), inputs, duration_s=2700.0,
                        seed=seed)


def test_local_slopes_are_exact_for_a_straight_line_and_shrink_at_the_ends():
    t = np.arange(0.0, 100.0, 2.0)
    T = 298.0 + 3e-4 * t
    np.testing.assert_allclose(local_slopes_K_per_s(t, T, 5), 3e-4, rtol=1e-9)
    # a parabola: the centred fit gives the derivative at the centre exactly
    T2 = 1e-6 * t**2
    s = local_slopes_K_per_s(t, T2, 5)
    np.testing.assert_allclose(s[5:-5], 2e-6 * t[5:-5], rtol=1e-9)


@pytest.mark.parametrize("energy_J", [-40.0, 40.0])  # endothermic and exothermic
def test_events_found_in_a_calibration_reaction_calibration_log(energy_J):
    run = _sim(energy_J)
    heaters = [(299.0, 599.0, 0.6, 0.6), (1799.0, 2099.0, 0.6, 0.6)]
    ev = find_events(run.thermogram.time_s, run.thermogram.temperature_K, heaters)
    kinds = [e.kind for e in ev.events]
    assert kinds == ["heater", "reaction", "heater"]
    r = ev.reaction
    # the onset is put a little before the true start (any t_i before the onset is exact
    # for Newtonian methods, docs/methods.md §1.4) and not more than a minute early
    assert 1140.0 <= r.start_s <= 1200.0
    assert r.source == "detected"
    # windows: each ends before the next event starts; fore and after periods exist
    for a, b in zip(ev.events, ev.events[1:], strict=False):
        assert a.window_end_s < b.start_s
        assert b.window_start_s > a.active_end_s
    assert ev.events[0].window_start_s == 0.0
    assert ev.events[-1].window_end_s == 2700.0
    assert ev.warnings == ()


def test_detection_with_a_large_offset_from_the_jacket():
    # the calorimeter starts 0.3 K above the jacket: the drift is curved (Newtonian) and
    # steep, which a drift line in T absorbs
    run = _sim(-100.0, seed=4, T0=298.45)
    ev = find_events(run.thermogram.time_s, run.thermogram.temperature_K,
                     [(299.0, 599.0, 0.6, 0.6), (1799.0, 2099.0, 0.6, 0.6)])
    assert 1140.0 <= ev.reaction.start_s <= 1200.0


def test_given_start_and_no_reaction():
    run = _sim(-0.01, seed=2)  # 10 mJ: far below the noise of the slopes
    t, T = run.thermogram.time_s, run.thermogram.temperature_K
    heaters = [(299.0, 599.0, 0.6, 0.6), (1799.0, 2099.0, 0.6, 0.6)]
    with pytest.raises(PeriodDetectionError, match="fire_time_s"):
        find_events(t, T, heaters)
    ev = find_events(t, T, heaters, fire_time_s=1200.0)
    assert ev.reaction.source == "given"
    assert ev.reaction.start_s == 1200.0
    periods = event_periods(ev.reaction, t[(t >= ev.reaction.window_start_s)
                                            & (t <= ev.reaction.window_end_s)])
    assert periods.main_end_s == pytest.approx(1200.0 + 120.0)  # undetected: fixed length
    ev = find_events(t, T, heaters, expect_reaction=False)
    assert [e.kind for e in ev.events] == ["heater", "heater"]


def test_short_drift_periods_are_warned_about():
    run = _sim(-40.0, start_s=660.0, seed=3)
    ev = find_events(run.thermogram.time_s, run.thermogram.temperature_K,
                     [(299.0, 599.0, 0.6, 0.6), (1799.0, 2099.0, 0.6, 0.6)])
    assert any("drift period" in w for w in ev.warnings)


def test_analyse_log_gives_calibrations_on_both_sides():
    run = _sim(-40.0, seed=5)
    a = analyse_log(run.thermogram)
    assert [c.position for c in a.calibrations] == ["before", "after"]
    assert a.calibration("before").event_index == 0
    assert a.reaction_rise.corrected_rise_K == pytest.approx(
        run.truth.events[1].adiabatic_rise_K, rel=5e-4)
    for c in a.calibrations:
        assert c.energy_equivalent_J_per_K == pytest.approx(360.0, rel=5e-4)
        assert set(c.budget) == {"heater_rise", "timing", "power_noise", "power_calibration"}
