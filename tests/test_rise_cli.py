"""``calwork rise`` and ``calwork validate`` (called through ``calwork.cli.main.main``)."""

from __future__ import annotations

import json

import pytest
from test_rise_records import newtonian_record

from calwork.cli.main import main
from calwork.io.writers import write_log

# DESIGN.md, "JSON keys (contract)" for calwork rise --json
CONTRACT_KEYS = {"corrected_rise_K", "u_corrected_rise_K", "method", "fire_time_s",
                 "main_end_s", "fore_period_s", "after_period_s", "k_per_s", "T_inf_K",
                 "warnings"}


@pytest.fixture(scope="module")
def log_file(tmp_path_factory):
    path = tmp_path_factory.mktemp("rise") / "run.csv"
    rec = newtonian_record(k_per_s=5e-5, tau_s=30.0, tau2_s=5.0, noise_K=1e-4, seed=31)
    write_log(rec, path, digits=7)
    return path


def _json(capsys):
    return json.loads(capsys.readouterr().out)


def test_rise_json_has_the_contract_keys(log_file, capsys):
    assert main(["rise", str(log_file), "--json"]) == 0
    out = _json(capsys)
    assert CONTRACT_KEYS <= set(out)
    assert out["method"] == "newton-fit"
    # the log is written in °C with 7 decimals (0.1 µK): the rise to the 60 ppm target
    assert out["corrected_rise_K"] == pytest.approx(2.5, rel=60e-6)
    assert len(out["fore_period_s"]) == 2
    assert isinstance(out["warnings"], list)


@pytest.mark.parametrize(("args", "method"), [
    (["--method", "regnault-pfaundler"], "regnault-pfaundler"),
    (["--method", "dickinson", "--dickinson-rule", "60-percent"], "dickinson"),
])
def test_rise_methods_and_overrides(log_file, capsys, args, method):
    assert main(["rise", str(log_file), *args, "--fire-time", "595", "--main-end", "1400",
                 "--json"]) == 0
    out = _json(capsys)
    assert out["method"] == method
    assert out["fire_time_s"] == 595.0
    assert out["main_end_s"] == 1400.0
    assert out["after_period_s"][0] == 1400.0


def test_rise_table_and_plot(log_file, tmp_path, capsys):
    png = tmp_path / "rise.png"
    assert main(["rise", str(log_file), "--plot", str(png)]) == 0
    text = capsys.readouterr().out
    assert "corrected rise" in text
    assert "fire time" in text
    assert png.read_bytes()[:4] == b"\x89PNG"


def test_rise_errors_are_one_line_exit_2(tmp_path, capsys):
    assert main(["rise", str(tmp_path / "missing.csv")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("calwork rise: error:")
    assert err.count("\n") == 1
    flat = tmp_path / "flat.csv"
    rec = newtonian_record(rise_K=0.0, noise_K=1e-4, seed=32, duration_s=1200.0)
    write_log(rec, flat)
    assert main(["rise", str(flat)]) == 2
    err = capsys.readouterr().err
    assert "flat.csv: no heat event found" in err
    assert main(["rise", str(flat), "--method", "newton"]) == 2   # argparse choice
    capsys.readouterr()


def test_validate_command(tmp_path, capsys):
    toml = tmp_path / "cal.toml"
    toml.write_text('[calorimeter]\npreset = "bomb"\nbomb_water_conductance_W_per_K = "none"\n',
                    encoding="utf-8")
    assert main(["validate", "--calorimeter", str(toml), "--runs", "2", "--seed", "3",
                 "--json"]) == 0
    out = _json(capsys)
    assert out["runs"] == 2
    assert out["methods"][0]["method"] == "newton-fit"
    assert abs(out["methods"][0]["bias_ppm"]) < 60.0
    assert main(["validate", "--runs", "1"]) == 0
    assert "newton-fit" in capsys.readouterr().out
