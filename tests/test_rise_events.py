"""Logs with several heat events: listed, never reduced as one, reduced one at a time on request.

Simulated with calwork's own simulator (one-body solution calorimeter: a heater calibration,
an endothermic dissolution and a second calibration; and a bomb fired twice). Truth: the
simulator's per-event adiabatic rise (energy / ε). Tolerances: a few standard uncertainties
of the reported rise (the rise engine's coverage is checked in test_rise_accuracy.py).
"""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import copy_sample_runs

from calwork.cli.main import main
from calwork.core.errors import ChoiceError, MultipleEventsError
from calwork.io import write_log, write_run_sheet
from calwork.reduce import reduce_sheet
from calwork.rise import corrected_rise, list_heat_events
from calwork.simulation import (
    CalorimeterParams,
    CombustionPulse,
    FirstOrderRelease,
    HeaterInterval,
    simulate_run,
)


@pytest.fixture(scope="module")
def three_events():
    p = CalorimeterParams.solution_preset()
    return simulate_run(p, [
        HeaterInterval(power_W=0.5, on_s=600.0, off_s=900.0, resistance_ohm=50.0),
        FirstOrderRelease(energy_J=-63.0, start_s=1800.0, time_constant_s=20.0),
        HeaterInterval(power_W=0.5, on_s=2700.0, off_s=3000.0, resistance_ohm=50.0),
    ], duration_s=3900.0, seed=11)


@pytest.fixture(scope="module")
def two_firings():
    p = CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None)
    return simulate_run(p, [CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
                            CombustionPulse(energy_J=20000.0, fire_time_s=2400.0)],
                        duration_s=4500.0, seed=5)


def test_events_are_listed_in_time_order(three_events):
    found = list_heat_events(three_events.thermogram)
    # the heater channel shows power during the calibrations
    assert [e.kind for e in found.events] == ["heater", "event", "heater"]
    starts = np.array([e.start_s for e in found.events])
    truth = np.array([e.start_s for e in three_events.truth.events])
    # a start is reported up to one slope-fit width (15 readings of 2 s) before the onset
    assert np.all((starts <= truth) & (starts >= truth - 35.0))


def test_several_events_are_refused_with_their_times(three_events):
    found = list_heat_events(three_events.thermogram)
    with pytest.raises(MultipleEventsError, match=r"3 heat events") as err:
        corrected_rise(three_events.thermogram)
    for i, e in enumerate(found.events, start=1):
        assert f"{i}: {e.kind} at {e.start_s:.0f}–{e.active_end_s:.0f} s" in str(err.value)
    assert err.value.column == "event"


@pytest.mark.parametrize("number", [1, 2, 3])
def test_a_chosen_event_is_reduced_alone(three_events, number):
    res = corrected_rise(three_events.thermogram, event=number)
    truth = three_events.truth.events[number - 1].adiabatic_rise_K
    assert res.event == number
    assert len(res.events) == 3
    assert res.corrected_rise_K == pytest.approx(truth, abs=4 * res.u_corrected_rise_K)
    # reduced as one, the three would be summed (≈ the net of all three): far from each
    assert abs(res.corrected_rise_K - sum(e.adiabatic_rise_K
                                          for e in three_events.truth.events)) > 0.05


def test_the_firing_time_says_which_event(two_firings):
    res = corrected_rise(two_firings.thermogram, fire_time_s=2400.0)
    assert res.event == 2
    assert res.corrected_rise_K == pytest.approx(two_firings.truth.events[1].adiabatic_rise_K,
                                                 rel=2e-4)
    with pytest.raises(ChoiceError, match="from 1 to 2"):
        corrected_rise(two_firings.thermogram, event=3)


def test_one_event_logs_are_unchanged():
    run = simulate_run(CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None),
                       CombustionPulse(energy_J=26434.0, fire_time_s=600.0), duration_s=2400.0,
                       seed=2)
    res = corrected_rise(run.thermogram)
    assert res.event is None
    assert res.events == ()
    assert "events" not in res.to_dict()
    assert corrected_rise(run.thermogram, event=1).corrected_rise_K == res.corrected_rise_K


def test_cli_refuses_in_one_line_and_reduces_a_chosen_event(three_events, tmp_path, capsys):
    log = tmp_path / "day.csv"
    write_log(three_events.thermogram, log, preamble={"simulated": "true"})
    assert main(["rise", str(log)]) == 2
    err = capsys.readouterr().err.strip()
    assert err.count("\n") == 0
    assert "--event" in err
    assert "2: event at 17" in err
    assert main(["rise", str(log), "--event", "2", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["event"] == 2
    assert [e["number"] for e in out["events"]] == [1, 2, 3]
    assert out["corrected_rise_K"] < 0  # the endothermic dissolution
    plot = tmp_path / "event2.png"
    assert main(["rise", str(log), "--event", "2", "--plot", str(plot)]) == 0
    assert plot.stat().st_size > 0


def test_a_double_firing_fails_alone_in_a_batch_unless_the_sheet_says_which(two_firings,
                                                                              tmp_path):
    one = simulate_run(CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None),
                       CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
                       duration_s=2400.0, seed=3)
    write_log(two_firings.thermogram, tmp_path / "twice.csv")
    write_log(one.thermogram, tmp_path / "once.csv")
    common = {"kind": "calibration", "calorimeter": "A", "mass_g": 1.0,
              "reference_material": "benzoic acid", "ignition_J": 1.0, "fuse_J": 10.0}
    rows = [dict(common, run="once", log="once.csv"), dict(common, run="twice", log="twice.csv")]
    write_run_sheet(rows, tmp_path / "runs.csv")
    red = reduce_sheet(tmp_path / "runs.csv")
    by = {r.run: r for r in red.runs}
    assert by["once"].error is None
    assert "2 heat events" in by["twice"].error
    assert "--event" in by["twice"].error
    rows[1]["event"] = 1
    write_run_sheet(rows, tmp_path / "runs.csv")
    red = reduce_sheet(tmp_path / "runs.csv")
    assert all(r.error is None for r in red.runs)


def test_reduce_plots_the_reaction_of_a_solution_log(tmp_path, monkeypatch):
    import csv

    from calwork.report import folder as report_folder
    from calwork.report import plots

    copy_sample_runs(tmp_path / "runs")
    sheet = tmp_path / "runs" / "runs.csv"
    with sheet.open(encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["kind"] in ("electrical", "solution")]
    write_run_sheet(rows, sheet)
    drawn = {}

    def capture(thermogram, result, label=None):
        drawn[id(result)] = result
        return b"png"

    monkeypatch.setattr(plots, "rise_png", capture)
    monkeypatch.setattr(plots, "draw_rise_pngs", lambda items, wait=True: None)
    red = reduce_sheet(sheet)
    report_folder._plots(red, tmp_path, None)
    k01 = next(r for r in red.runs if r.run == "K01")
    reaction = k01.rise[k01.details["reaction_event_index"]]
    assert drawn.get(id(reaction)) is reaction  # the plot of K01 is the reaction's
    assert (tmp_path / "K01.png").read_bytes() == b"png"
    drawn = {"K01": reaction}
    assert drawn["K01"].corrected_rise_K < 0  # the endothermic dissolution, not a heater


@pytest.mark.parametrize(("name", "params", "inputs", "duration_s", "n_events"), [
    ("two-body bomb", {"preset": "bomb"},
     [CombustionPulse(energy_J=26434.0, fire_time_s=600.0)], 2700.0, 1),
    ("bomb, 1 s readings", {"preset": "bomb", "sampling_interval_s": 1.0},
     [CombustionPulse(energy_J=26434.0, fire_time_s=600.0)], 3600.0, 1),
    ("small bomb run", {"preset": "bomb"},
     [CombustionPulse(energy_J=10000.0, fire_time_s=300.0)], 1500.0, 1),
    ("endothermic dissolution", {"preset": "solution"},
     [FirstOrderRelease(energy_J=-50.0, start_s=600.0, time_constant_s=20.0)], 1800.0, 1),
    ("heater calibration", {"preset": "solution"},
     [HeaterInterval(power_W=0.5, on_s=600.0, off_s=900.0, resistance_ohm=50.0)], 1800.0, 1),
    ("two firings, 1 s readings", {"preset": "bomb", "sampling_interval_s": 1.0},
     [CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
      CombustionPulse(energy_J=26434.0, fire_time_s=2400.0)], 4500.0, 2),
])
def test_event_count_over_many_seeds(name, params, inputs, duration_s, n_events):
    # a one-event log must never be refused (no false second event), a multi-event log
    # never reduced as one: 12 seeds each (200 more were checked while developing, all right)
    preset = params.pop("preset")
    p = getattr(CalorimeterParams, f"{preset}_preset")(**params)
    counts = [len(list_heat_events(simulate_run(p, inputs, duration_s=duration_s,
                                                seed=seed).thermogram).events)
              for seed in range(12)]
    assert counts == [n_events] * 12, name


def test_an_event_number_with_explicit_periods_is_an_error(three_events):
    from calwork.rise import detect_periods

    window = three_events.thermogram.window(1500.0, 2600.0)
    periods = detect_periods(window)
    with pytest.raises(ChoiceError, match="not both"):
        corrected_rise(window, periods=periods, event=1)
