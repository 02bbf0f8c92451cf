"""`calwork simulate` and the scenario builder: files, labels, run-sheet columns, truth."""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from calwork.cli.main import main
from calwork.core.errors import SimulationError
from calwork.core.runinfo import EXTENSION_COLUMNS, RUN_SHEET_COLUMNS
from calwork.simulation import CalorimeterParams, build_scenario, simulate_scenario

BA_J_PER_G = 26434.0  # NIST SRM 39j certificate, standard bomb conditions (docs/references.md)


def _sheet(path):
    with (path / "runs.csv").open(newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def test_cli_bomb_scenario(tmp_path, capsys):
    assert main(["simulate", "--out", str(tmp_path), "--runs", "2", "--seed", "3"]) == 0
    out = capsys.readouterr().out
    assert "true heat J" in out
    assert "cal-01" in out
    assert "simulated" in out
    rows = _sheet(tmp_path)
    assert [r["kind"] for r in rows] == ["calibration"] * 2 + ["combustion"] * 2
    assert set(rows[0]) <= set(RUN_SHEET_COLUMNS) | set(EXTENSION_COLUMNS)
    for r in rows:
        assert r["notes"].startswith("simulated by calwork")
        log = tmp_path / r["log"]
        head = log.read_text(encoding="utf-8").splitlines()[:4]
        assert "# simulated: true" in head
    cal = rows[0]
    assert cal["reference_material"] == "benzoic-acid"
    assert float(cal["certified_J_per_g"]) == BA_J_PER_G
    assert 0.8 <= float(cal["mass_g"]) <= 1.2
    # the printed true heat is m × 26 434 J/g + ignition + fuse (scenario definition)
    heat = (float(cal["mass_g"]) * BA_J_PER_G + float(cal["ignition_J"])
            + float(cal["fuse_burnt_cm"]) * float(cal["fuse_J_per_cm"]))
    assert f"{heat:.4f}" in out


def test_cli_is_reproducible_from_the_seed(tmp_path):
    a, b, c = tmp_path / "a", tmp_path / "b", tmp_path / "c"
    for d, seed in ((a, "7"), (b, "7"), (c, "8")):
        assert main(["simulate", "--out", str(d), "--runs", "1", "--seed", seed]) == 0
    assert (a / "cal-01.csv").read_bytes() == (b / "cal-01.csv").read_bytes()
    assert (a / "runs.csv").read_bytes() == (b / "runs.csv").read_bytes()
    assert (a / "cal-01.csv").read_bytes() != (c / "cal-01.csv").read_bytes()


def test_cli_solution_scenario_json_xlsx(tmp_path, capsys):
    assert main(["simulate", "--out", str(tmp_path), "--scenario", "solution", "--runs", "1",
                 "--format", "xlsx", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["simulated"] is True
    (run,) = data["runs"]
    assert run["kind"] == "solution"
    assert (tmp_path / run["log"]).suffix == ".xlsx"
    assert (tmp_path / run["log"]).exists()
    # endothermic dissolution (−n × 15.5 kJ/mol, n in 2–3 mmol; scenario table) between two
    # 15 J calibrations (0.05 W × 300 s)
    rows = _sheet(tmp_path)
    assert run["true_heat_J"] == pytest.approx(-float(rows[0]["amount_mol"]) * 15500.0, rel=1e-12)
    assert -46.5 <= run["true_heat_J"] <= -31.0
    assert run["true_electrical_J"] == pytest.approx(30.0, rel=1e-12)
    assert run["true_rise_K"] == pytest.approx(run["true_heat_J"] / 360.0, rel=1e-12)
    kinds = [e["kind"] for e in run["truth"]["events"]]
    assert kinds == ["heater", "release", "heater"]


def test_cli_calorimeter_file_and_duration(tmp_path, capsys):
    params = tmp_path / "cal.toml"
    params.write_text('[calorimeter]\npreset = "bomb"\nbomb_heat_capacity_J_per_K = 2600.0\n',
                      encoding="utf-8")
    out = tmp_path / "out"
    assert main(["simulate", "--out", str(out), "--calorimeter", str(params), "--runs", "1",
                 "--duration", "1800", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["runs"][0]["truth"]["energy_equivalent_J_per_K"] == 11000.0
    lines = (out / "cal-01.csv").read_text(encoding="utf-8").splitlines()
    assert lines[-1].startswith("1800.")


def test_cli_errors_exit_2(tmp_path, capsys):
    bad = tmp_path / "bad.toml"
    bad.write_text("[calorimeter]\nnoise_K = -1\n", encoding="utf-8")
    assert main(["simulate", "--out", str(tmp_path / "o"), "--calorimeter", str(bad)]) == 2
    err = capsys.readouterr().err
    assert "noise_K" in err
    assert len(err.strip().splitlines()) == 1
    # a log too short for the firing at 600 s
    assert main(["simulate", "--out", str(tmp_path / "o"), "--duration", "300"]) == 2
    assert "duration_s" in capsys.readouterr().err
    assert main(["simulate", "--out", str(tmp_path / "o"), "--runs", "0"]) == 2


def test_cli_help(capsys):
    assert main(["simulate", "--help"]) == 0
    text = capsys.readouterr().out
    assert "--scenario" in text
    assert "pressure vessels" in text


def test_simulate_scenario_rows_and_truth(tmp_path):
    rows = simulate_scenario("bomb", tmp_path, runs=1, seed=11)
    assert [r["run"] for r in rows] == ["cal-01", "sample-01"]
    written = build_scenario("bomb", tmp_path / "again", runs=1, seed=11)
    assert [w.row for w in written] == rows
    cal = written[0]
    expected = rows[0]["mass_g"] * BA_J_PER_G + 1.0 + 8.0 * 9.6
    assert cal.reaction_heat_J == pytest.approx(expected, rel=1e-12)
    assert cal.reaction_rise_K == pytest.approx(expected / 10_000.0, rel=1e-12)
    assert cal.electrical_energy_J == 0.0
    with pytest.raises(SimulationError, match="scenario"):
        simulate_scenario("flame", tmp_path)


def test_scenario_logs_read_back(tmp_path):
    # written through calwork.io.writers.write_log and read by calwork.io.read_log: the readings
    # survive to the 1e-6 °C (bomb) / 1e-8 °C (solution) of the written decimals
    from calwork.io.readers import read_log

    params = CalorimeterParams.solution_preset()
    (w,) = build_scenario("solution", tmp_path, params=params, runs=1, seed=2)
    th = read_log(w.log_path)
    np.testing.assert_allclose(th.time_s, w.run.thermogram.time_s, rtol=0, atol=1e-8)
    np.testing.assert_allclose(th.temperature_K, w.run.thermogram.temperature_K, rtol=0,
                               atol=1e-8)
    for name in ("heater_V", "heater_A"):
        np.testing.assert_allclose(th.channels[name], w.run.thermogram.channels[name], rtol=0,
                                   atol=1e-8)
    assert th.metadata.get("simulated") == "true"
