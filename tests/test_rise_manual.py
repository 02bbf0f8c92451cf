"""The standards' manual procedures reproduce a hand calculation written out here, step by
step (a made-up record with round numbers, typed in the hand-read format)."""

from __future__ import annotations

import json

import pytest

from calwork.cli.main import main
from calwork.core.errors import PeriodDetectionError
from calwork.io import read_log
from calwork.rise import manual_rise

#: minute → reading (°C): fore −5…0 (fired at 0), main 1…6, after 6…11
READINGS = {-5: 22.500, -4: 22.503, -3: 22.506, -2: 22.509, -1: 22.512, 0: 22.515,
            1: 23.800, 2: 24.400, 3: 24.550, 4: 24.580, 5: 24.586, 6: 24.585,
            7: 24.583, 8: 24.581, 9: 24.579, 10: 24.577, 11: 24.575}
FIRE_S, END_S = 10 * 3600 + 5 * 60, 10 * 3600 + 11 * 60  # 10:05 and 10:11


@pytest.fixture
def record(tmp_path):
    lines = ["# calwork hand-read record", "# temperature_unit: °C",
             "time,temperature,remark"]
    lines += [f"10:{5 + m:02d},{v:.3f}," for m, v in READINGS.items()]
    path = tmp_path / "hand.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return read_log(path), path


def test_iso_1928_form_by_hand(record):
    # the hand calculation (common practice: the Regnault–Pfaundler form with 1-min readings)
    v0 = (22.515 - 22.500) / 5                        # 0.003 °C/min
    m0 = (22.500 + 22.503 + 22.506 + 22.509 + 22.512 + 22.515) / 6   # 22.5075 °C
    vn = (24.575 - 24.585) / 5                        # −0.002 °C/min
    mn = (24.585 + 24.583 + 24.581 + 24.579 + 24.577 + 24.575) / 6   # 24.580 °C
    n = 6
    integral = (23.800 + 24.400 + 24.550 + 24.580 + 24.586) + (22.515 + 24.585) / 2  # 145.466
    correction = n * v0 + (vn - v0) / (mn - m0) * (integral - n * m0)
    theta = 24.585 - 22.515 - correction
    assert theta == pytest.approx(2.0771411, abs=1e-7)  # the same by a calculator
    result = manual_rise(record[0], "iso-1928", fire_time_s=FIRE_S, main_end_s=END_S)
    assert result.corrected_rise_K == pytest.approx(theta, rel=1e-12)
    steps = {s.label.split(",")[0]: s.value for s in result.steps}
    assert steps["v₀"] == pytest.approx(v0, rel=1e-9)
    assert steps["t̄ₙ"] == pytest.approx(mn, rel=1e-12)
    assert steps["∫t dt over the main period"] == pytest.approx(integral, rel=1e-12)
    assert steps["exchange correction"] == pytest.approx(correction, rel=1e-9)


def test_astm_60_percent_by_hand(record):
    r1 = (22.515 - 22.500) / 5                        # 0.003 °C/min over the 5 min before a
    r2 = (24.575 - 24.585) / 5                        # −0.002 °C/min over the 5 min after c
    target = 22.515 + 0.6 * (24.585 - 22.515)         # 23.757 °C
    b = (target - 22.515) / (23.800 - 22.515)         # 0.9665 min after a …
    b = round(b, 1)                                   # … to the nearest 0.1 min: 1.0
    t = 24.585 - 22.515 - r1 * b - r2 * (6 - b)       # 2.077 °C
    assert t == pytest.approx(2.077, abs=1e-12)
    result = manual_rise(record[0], "astm-60-percent", fire_time_s=FIRE_S, main_end_s=END_S)
    assert result.corrected_rise_K == pytest.approx(t, rel=1e-12)
    assert {s.label: s.value for s in result.steps}["b − a"] == 1.0


def test_beside_calworks_estimate_and_on_the_command_line(record, capsys):
    result = manual_rise(record[0], "iso-1928", fire_time_s=FIRE_S, main_end_s=END_S)
    best = result.best_estimate
    assert best.method == "newton-fit"
    assert best.fire_time_s == FIRE_S
    assert best.main_end_s == END_S
    assert main(["rise", str(record[1]), "--fire-time", "10:05", "--main-end", "10:11",
                 "--procedure", "astm-60-percent", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["manual"]["corrected_rise_K"] == pytest.approx(2.077, rel=1e-12)
    assert out["manual"]["best_estimate"]["corrected_rise_K"] == out["corrected_rise_K"]
    assert main(["rise", str(record[1]), "--fire-time", "10:05", "--main-end", "10:11",
                 "--procedure", "iso-1928"]) == 0
    text = capsys.readouterr().out
    assert "manual form of ISO 1928" in text
    assert "calwork's best estimate" in text


def test_a_missing_reading_is_named(record):
    with pytest.raises(PeriodDetectionError, match="needs a reading at") as err:
        manual_rise(record[0], "astm-60-percent", fire_time_s=FIRE_S + 30, main_end_s=END_S)
    assert "(the firing (a))" in str(err.value)
