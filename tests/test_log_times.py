"""Times as the lab writes them: seconds, a unit, or a clock time in the log's own notation —
on the command line and in the run sheet; results keep seconds."""

from __future__ import annotations

import json
from dataclasses import replace

import pytest

from calwork.cli.main import main
from calwork.core.errors import SheetError, ValueCellError
from calwork.core.logtime import (
    LogTime,
    describe_time,
    log_time_s,
    parse_log_time,
    time_origin,
)
from calwork.core.runinfo import RunInfo
from calwork.io import write_log
from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run


@pytest.mark.parametrize(("text", "seconds"), [
    ("312", 312.0), ("312.5", 312.5), ("312 s", 312.0), ("5.2 min", 312.0), ("0.1 h", 360.0),
    ("5 min 12 s", 312.0), ("5,2 min", 312.0), (312, 312.0),
])
def test_seconds_and_times_with_a_unit(text, seconds):
    assert parse_log_time(text) == pytest.approx(seconds, rel=1e-15)


@pytest.mark.parametrize("text", ["10:65", "10:05:75", "ten past ten", "—", "5 minutes",
                                  "1e999", "10:5"])
def test_a_time_that_is_not_one_is_refused(text):
    with pytest.raises(ValueCellError, match="time") as err:
        parse_log_time(text, column="fire_time_s")
    assert err.value.column == "fire_time_s"
    assert "10:05:00" in err.value.expected  # the notations accepted are named


def test_clock_times_follow_the_log():
    clock = {"time_unit": "clock"}
    # a log of times of day: two parts are hh:mm, three hh:mm:ss
    assert log_time_s(parse_log_time("10:05"), clock, [36000.0, 36900.0]) == 36300.0
    assert log_time_s(parse_log_time("10:05:30"), clock, [36000.0, 36900.0]) == 36330.0
    # a record passing midnight (the importer added 24 h after it): 00:10 is the next day
    assert log_time_s(parse_log_time("00:10"), clock, [85800.0, 88800.0]) == 87000.0
    # a log of elapsed mm:ss, and a log in seconds: 05:12 is 312 s after time zero
    for unit in ("mm:ss", "s"):
        assert log_time_s(parse_log_time("05:12"), {"time_unit": unit}, [0.0, 900.0]) == 312.0
    # ISO date-times: a time of day on the start date, counted from the first reading
    iso = {"time_unit": "iso", "start": "2024-05-01T09:58:00"}
    assert log_time_s(parse_log_time("10:05:00"), iso, [0.0, 1800.0]) == 420.0
    with pytest.raises(ValueCellError, match="outside the record") as err:
        log_time_s(parse_log_time("11:05"), clock, [36000.0, 36900.0])
    assert "10:00:00 and 10:15:00" in err.value.expected  # the span in the log's notation


def test_the_time_axis_is_described_in_the_logs_notation():
    assert describe_time(36300.0, {"time_unit": "clock"}) == "10:05:00"
    assert describe_time(312.5, {"time_unit": "mm:ss"}) == "05:12.5"
    assert "midnight" in time_origin({"time_unit": "clock"}, [36000.0])
    assert "time zero" in time_origin({"time_unit": "s"}, [0.0])


def test_run_info_keeps_a_clock_time_and_the_sheet_checks_it(tmp_path):
    info = RunInfo(run="r", kind="combustion", log_path=None, fire_time_s="10:05:00")
    assert info.fire_time_s == LogTime("10:05:00", (10, 5, 0.0))
    assert RunInfo(run="r", kind="combustion", log_path=None, fire_time_s="312 s").fire_time_s == 312.0
    from calwork.io import read_run_sheet

    sheet = tmp_path / "runs.csv"
    sheet.write_text("run,kind,log,fire_time_s\nr1,combustion,r1.csv,ten past\n",
                     encoding="utf-8")
    with pytest.raises(SheetError, match="not a time") as err:
        read_run_sheet(sheet)
    assert err.value.column == "fire_time_s"
    assert err.value.line == 2


@pytest.fixture(scope="module")
def clock_log(tmp_path_factory):
    """A simulated bomb run written with times of day from 10:00:00 (fired at 10:10:00)."""
    run = simulate_run(CalorimeterParams.bomb_preset(),
                       CombustionPulse(energy_J=26434.0, fire_time_s=36600.0),
                       duration_s=2400.0, seed=4, start_time_s=36000.0)
    path = tmp_path_factory.mktemp("clock") / "clock.csv"
    write_log(run.thermogram, path, time_format="hh:mm:ss", channels=False)
    return path


def _json(capsys, *argv):
    assert main([*map(str, argv)]) == 0
    return json.loads(capsys.readouterr().out)


def test_a_clock_time_on_the_command_line_is_the_same_moment(clock_log, capsys):
    by_clock = _json(capsys, "rise", clock_log, "--fire-time", "10:10:00", "--main-end",
                     "10:30", "--json")
    by_seconds = _json(capsys, "rise", clock_log, "--fire-time", "36600", "--main-end",
                       "37800 s", "--json")
    assert by_clock["fire_time_s"] == 36600.0  # JSON keeps seconds
    assert by_clock["main_end_s"] == 37800.0
    assert by_clock["corrected_rise_K"] == by_seconds["corrected_rise_K"]
    assert by_clock["u_corrected_rise_K"] == by_seconds["u_corrected_rise_K"]
    summary = _json(capsys, "inspect", clock_log, "--json")
    assert "midnight" in summary["time_origin"]
    assert summary["first_reading"] == "10:00:00"


def test_a_bad_time_on_the_command_line_is_one_line(clock_log, capsys):
    assert main(["rise", str(clock_log), "--fire-time", "11:30"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1
    assert "outside the record" in err[0]
    assert "--fire-time" in err[0]


def test_a_clock_time_in_the_sheet_reduces_like_seconds(tmp_path):
    """The same run, its firing time written as 10:10:00 or as 36600 in the sheet."""
    from calwork.reduce import reduce_runs

    run = simulate_run(CalorimeterParams.bomb_preset(),
                       CombustionPulse(energy_J=26434.0, fire_time_s=36600.0),
                       duration_s=2400.0, seed=5, start_time_s=36000.0)
    log = write_log(run.thermogram, tmp_path / "c1.csv", time_format="hh:mm:ss",
                    channels=False)
    base = RunInfo(run="C1", kind="calibration", calorimeter="A", log_path=log, mass_g=1.0,
                   certified_J_per_g=26434.0, fire_time_s=36600.0)
    a = reduce_runs([base]).runs[0]
    b = reduce_runs([replace(base, fire_time_s=parse_log_time("10:10:00"))]).runs[0]
    assert a.error is None
    assert b.corrected_rise_K == a.corrected_rise_K
    assert b.rise.fire_time_s == 36600.0
