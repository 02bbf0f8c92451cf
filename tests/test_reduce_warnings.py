"""Warnings the reduction adds on top of the run's own: a time unit the log did not state."""

from __future__ import annotations

from calwork.io import write_log, write_run_sheet
from calwork.reduce import reduce_sheet
from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run


def test_a_log_without_a_time_unit_is_flagged(tmp_path):
    run = simulate_run(CalorimeterParams.bomb_preset(),
                       CombustionPulse(energy_J=26434.0, fire_time_s=600.0, burn_time_s=10.0),
                       duration_s=2400.0, seed=3)
    write_log(run.thermogram, tmp_path / "stated.csv")
    text = (tmp_path / "stated.csv").read_text(encoding="utf-8").replace("time_s,", "time,")
    (tmp_path / "bare.csv").write_text(text, encoding="utf-8")
    rows = [{"run": name, "kind": "calibration", "log": f"{name}.csv", "calorimeter": "A",
             "mass_g": 1.0, "reference_material": "benzoic-acid", "notes": "simulated"}
            for name in ("stated", "bare")]
    write_run_sheet(rows, tmp_path / "runs.csv")
    red = reduce_sheet(tmp_path / "runs.csv")
    by_run = {r.run: r for r in red.runs}
    assert any(w.startswith("time-unit-assumed") for w in by_run["bare"].warnings)
    assert not any(w.startswith("time-unit-assumed") for w in by_run["stated"].warnings)
    # same numbers: seconds was the right assumption here
    assert by_run["bare"].corrected_rise_K == by_run["stated"].corrected_rise_K


def test_rise_command_reports_the_assumed_unit(tmp_path, capsys):
    import json

    from calwork.cli.main import main

    run = simulate_run(CalorimeterParams.bomb_preset(),
                       CombustionPulse(energy_J=26434.0, fire_time_s=600.0, burn_time_s=10.0),
                       duration_s=2400.0, seed=4)
    write_log(run.thermogram, tmp_path / "stated.csv")
    text = (tmp_path / "stated.csv").read_text(encoding="utf-8").replace("time_s,", "time,")
    (tmp_path / "bare.csv").write_text(text, encoding="utf-8")
    assert main(["rise", str(tmp_path / "bare.csv"), "--json"]) == 0
    warnings = json.loads(capsys.readouterr().out)["warnings"]
    assert any(w.startswith("time-unit-assumed") for w in warnings)
    assert main(["rise", str(tmp_path / "bare.csv"), "--time-unit", "s", "--json"]) == 0
    warnings = json.loads(capsys.readouterr().out)["warnings"]
    assert not any(w.startswith("time-unit-assumed") for w in warnings)
