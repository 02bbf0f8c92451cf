"""Plausible unit slips give a clear error naming the likely unit, never a silent number.

Ranges: calwork/data/plausibility.toml (ISO 1928 / ASTM D240 charging pressure 3.0 MPa,
NIST SRM 39j 30 atm; calorimeter temperatures near room temperature — common practice).
Conversions: 1 bar = 0.1 MPa, 1 atm = 101 325 Pa (definitions), 77 °F = 25 °C.
"""

from __future__ import annotations

import csv
import re

import pytest
from conftest import copy_sample_runs

from calwork.core.errors import SensorRangeError, SheetError, UnitError
from calwork.io import read_log, read_run_sheet
from calwork.plausibility import check_plausible
from calwork.reduce import reduce_sheet


def _log(tmp_path, header: str, values: list[float], name: str = "log.csv"):
    path = tmp_path / name
    lines = [header] + [f"{5.0 * i:.1f},{v:.4f}" for i, v in enumerate(values)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _ramp(T0: float, n: int = 40, step: float = 0.001) -> list[float]:
    return [T0 + step * i for i in range(n)]


def test_fahrenheit_log_without_a_unit_is_refused_with_the_slip_named(tmp_path):
    path = _log(tmp_path, "time_s,temperature", _ramp(77.0))
    with pytest.raises(SensorRangeError, match=r"look like °F.*give the unit \(F\)"):
        read_log(path)
    th = read_log(path, temperature_unit="F")
    # (77 − 32) × 5/9 + 273.15 = 298.15 K; a step of 0.001 °F is 0.000 555… K
    assert th.temperature_K[0] == pytest.approx(298.15, abs=1e-9)
    assert th.temperature_K[1] - th.temperature_K[0] == pytest.approx(0.001 * 5 / 9, rel=1e-6)


def test_kelvin_values_under_a_celsius_header_are_refused(tmp_path):
    path = _log(tmp_path, "time_s,temperature_C", _ramp(297.0))
    with pytest.raises(SensorRangeError, match=r"read as °C.*look like kelvin") as err:
        read_log(path)
    assert err.value.column == "temperature_C"
    assert err.value.line is not None


@pytest.mark.parametrize(("value", "slip"), [
    (30.4, "bar"), (3040.0, "kPa"), (3.04e6, "Pa"), (441.0, "psi")])
def test_oxygen_pressure_slips(value, slip):
    with pytest.raises(UnitError, match=rf"looks like {slip}; o2_pressure_MPa expects MPa"):
        check_plausible("o2_pressure_MPa", value)


@pytest.mark.parametrize(("column", "value", "slip"), [
    ("mass_g", 980.0, "mg"), ("bomb_volume_L", 342.0, "mL"), ("fuse_burnt_cm", 81.0, "mm"),
    ("certified_J_per_g", 26.434, "kJ/g"), ("certified_J_per_g", 6318.0, "cal/g"),
    ("acid_titrant_mol_per_L", 86.6, "mmol/L"), ("solvent_mass_g", 0.072, "kg")])
def test_other_slips_name_their_column(column, value, slip):
    with pytest.raises(UnitError, match=rf"looks like {re.escape(slip)}[^;]*; {column} expects"):
        check_plausible(column, value)


def test_values_in_range_pass():
    for column, value in (("o2_pressure_MPa", 3.04), ("mass_g", 0.98), ("bomb_volume_L", 0.342),
                          ("certified_J_per_g", 26434.0), ("acid_titre_mL", 150.0)):
        check_plausible(column, value)


@pytest.fixture
def sheet(tmp_path):
    copy_sample_runs(tmp_path / "runs")
    path = tmp_path / "runs" / "runs.csv"
    with path.open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    return path, rows


def _write(path, rows):
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)


def test_a_slip_in_the_sheet_fails_its_run_alone_naming_the_cell(sheet):
    path, rows = sheet
    bomb = [r for r in rows if r["kind"] in ("calibration", "combustion")]
    bomb[3]["o2_pressure_MPa"] = "30.4"
    bomb[5]["mass_g"] = str(float(bomb[5]["mass_g"]) * 1000)
    _write(path, bomb)
    with pytest.raises(SheetError, match=r"o2_pressure_MPa.*looks like bar"):
        read_run_sheet(path)
    red = reduce_sheet(path)
    failed = {r.run: r.error for r in red.runs if r.error}
    assert set(failed) == {bomb[3]["run"], bomb[5]["run"]}
    assert "looks like bar" in failed[bomb[3]["run"]]
    assert "looks like mg" in failed[bomb[5]["run"]]
    assert "mass_g" in failed[bomb[5]["run"]]  # not blamed on bomb_volume_L
    assert len(red.runs) == len(bomb)  # nothing dropped
