"""``calwork inspect``: what the importer sees, as a table, as JSON, as a plot."""

from __future__ import annotations

import json

import numpy as np
import pytest

from calwork.cli.main import main
from calwork.core.provenance import sha256_file
from calwork.core.thermogram import Thermogram
from calwork.io import write_log

SH = (1.129148e-3, 2.34125e-4, 8.76741e-8)  # docs/references.md §6 datasheet set


@pytest.fixture
def thermogram():
    t = np.arange(60) * 6.0
    T = 298.15 + 0.9 * (1 + np.tanh((t - 180.0) / 40.0)) / 2
    return Thermogram(time_s=t, temperature_K=T,
                      channels={"jacket_K": np.full(t.size, 299.15), "heater_V": np.zeros(60)})


def test_table_output(tmp_path, thermogram, capsys):
    path = write_log(thermogram, tmp_path / "log.csv", sep=";", decimal=",",
                     preamble={"operator": "A. Analyst"})
    assert main(["inspect", str(path)]) == 0
    out = capsys.readouterr().out
    assert "separator: semicolon" in out
    assert "decimal: ," in out
    assert "encoding: utf-8" in out
    assert "readings: 60 (lines 3–62)" in out
    assert "sampling interval 6 s" in out
    assert "time span: 354.000 s" in out
    assert "channel jacket_K" in out
    assert "time (unit s, from header)" in out
    assert "A. Analyst" in out


def test_json_output(tmp_path, thermogram, capsys):
    path = write_log(thermogram, tmp_path / "log.csv", preamble={"calorimeter": "C-1"})
    assert main(["inspect", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    for key in ("points", "time_span_s", "sampling_interval_s", "temperature_min_C",
                "temperature_max_C", "columns", "metadata"):
        assert key in data
    assert data["points"] == 60
    assert data["time_span_s"] == pytest.approx(354.0)
    assert data["sampling_interval_s"] == pytest.approx(6.0)
    assert data["temperature_min_C"] == pytest.approx(thermogram.temperature_C.min(), abs=1e-6)
    assert data["temperature_max_C"] == pytest.approx(thermogram.temperature_C.max(), abs=1e-6)
    assert data["columns"] == ["time_s", "temperature_C", "jacket_C", "heater_V"]
    assert data["preamble"] == {"calorimeter": "C-1"}
    # metadata: the thermogram's metadata, preamble and what was detected
    assert data["metadata"]["calorimeter"] == "C-1"
    assert data["metadata"]["time_unit"] == "s"
    assert data["metadata"]["detected_encoding"] == "utf-8"
    assert data["channels"]["jacket_K"]["column"] == "jacket_C"
    assert data["channels"]["jacket_K"]["min"] == pytest.approx(299.15)
    assert data["sha256"] == sha256_file(path)
    assert data["detected"]["detected_separator"] == "comma"


def test_sensor_options(tmp_path, thermogram, capsys):
    pt = write_log(thermogram, tmp_path / "pt.csv", temperature_unit="ohm", sensor="pt1000",
                   sensor_coefficients={"R0_ohm": 1000.5})
    assert main(["inspect", str(pt), "--sensor", "pt1000", "--r0", "1000.5", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    # 6 decimals of a Pt1000 ohm ≈ 0.13 µK (dR/dT ≈ 3.9 Ω/K, IEC 60751 coefficients)
    assert data["temperature_min_C"] == pytest.approx(thermogram.temperature_C.min(), abs=1e-6)
    assert "R0_ohm=1000.5" in data["detected"]["sensor_model"]
    nt = write_log(thermogram, tmp_path / "nt.csv", temperature_unit="ohm",
                   sensor="steinhart-hart", sensor_coefficients=dict(zip("abc", SH, strict=True)))
    args = ["inspect", str(nt), "--sh-coefficients", *map(str, SH), "--json"]
    assert main(args) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["temperature_max_C"] == pytest.approx(thermogram.temperature_C.max(), abs=1e-8)


def test_column_and_unit_options(tmp_path, capsys):
    text = "a,b\n" + "\n".join(f"{k},{298 + 0.01 * k}" for k in range(12))
    path = tmp_path / "odd.txt"
    path.write_text(text)
    assert main(["inspect", str(path), "--time-column", "a", "--temperature-column", "b",
                 "--time-unit", "min", "--temperature-unit", "K", "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["time_span_s"] == pytest.approx(660.0)
    assert data["temperature_min_C"] == pytest.approx(24.85)


def test_xlsx_sheet_option(tmp_path, thermogram, capsys):
    path = write_log(thermogram, tmp_path / "log.xlsx", fmt="xlsx")
    assert main(["inspect", str(path), "--sheet", "log", "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["detected"]["sheet"] == "log"


def test_plot(tmp_path, thermogram, capsys):
    path = write_log(thermogram, tmp_path / "log.csv")
    png = tmp_path / "raw.png"
    assert main(["inspect", str(path), "--plot", str(png)]) == 0
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert png.stat().st_size > 5000
    assert "plot written to" in capsys.readouterr().out


@pytest.mark.parametrize(
    ("content", "args", "message"),
    [
        (None, [], "file not found"),
        ("time_s,temperature_C\n0,25\n1,25\n", [], "too few readings"),
        ("x\n", [], "no readings found"),
        ("time_s,R_ohm\n" + "\n".join(f"{k},110" for k in range(12)), [],
         "a sensor model is needed"),
        ("time_s,T_C\n" + "\n".join(f"{k},25" for k in range(12)), ["--r0", "100"],
         "--r0 goes with --sensor"),
    ],
)
def test_bad_input_exits_2_with_one_line(tmp_path, capsys, content, args, message):
    path = tmp_path / "bad.csv"
    if content is not None:
        path.write_text(content)
    assert main(["inspect", str(path), *args]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    lines = captured.err.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith("calwork inspect: error: ")
    assert message in lines[0]


def test_help(capsys):
    assert main(["inspect", "--help"]) == 0
    assert "--sh-coefficients" in capsys.readouterr().out
