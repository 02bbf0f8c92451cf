"""Review of the user's path through importers and CLI: defects found by a first-time analyst.

Each test failed before its fix. Expected values are exact round trips of the numbers written
(the readers must give back what the file says), or the unit conversions 1 min = 60 s and the
IEC 60751 Callendar–Van Dusen relation (through calwork's own ``cvd_resistance_ohm``).
"""

from __future__ import annotations

import csv
import json

import numpy as np
import pytest

from calwork.cli.main import main
from calwork.core.errors import SheetError, UnitError
from calwork.io import cvd_resistance_ohm, read_log, read_run_sheet

# a plain log: 5 s sampling over 2400 s, a smooth rise of 2.7 K from 23.5 °C (invented)
T_S = np.arange(0.0, 2400.0 + 1e-9, 5.0)
T_C = 23.5 + 2.7 / (1.0 + np.exp(-(T_S - 700.0) / 40.0))


def _write(path, header, rows, sep=",", decimal=".", encoding="utf-8"):
    with path.open("w", encoding=encoding, newline="") as fh:
        fh.write(sep.join(header) + "\n")
        for row in rows:
            cells = [f"{v:.6f}" if isinstance(v, float) else str(v) for v in row]
            if decimal == ",":
                cells = [c.replace(".", ",") for c in cells]
            fh.write(sep.join(cells) + "\n")
    return path


# --- a column named by the user keeps the unit its header states --------------------------

def test_named_time_column_in_minutes_is_not_read_as_seconds(tmp_path):
    # before: 'Zeit [min]' named with time_column was "assumed" s — a 40 s log, 60× too short
    path = _write(tmp_path / "zeit.csv", ["Zeit [min]", "Temperatur [K]"],
                  zip((T_S / 60.0).tolist(), (T_C + 273.15).tolist(), strict=True), sep=";", decimal=",")
    tg = read_log(path, time_column="Zeit [min]", temperature_column="Temperatur [K]")
    assert tg.time_s[-1] == pytest.approx(2400.0, abs=1e-3)  # 40 min × 60 s/min
    assert tg.metadata["time_unit"] == "min"
    assert tg.metadata["time_unit_source"] == "header"
    assert tg.metadata["temperature_unit_source"] == "header"
    np.testing.assert_allclose(tg.temperature_K, T_C + 273.15, atol=1e-6)


def test_named_time_column_with_unit_suffix(tmp_path):
    path = _write(tmp_path / "suffix.csv", ["Zeit_min", "temperature_C"],
                  zip((T_S / 60.0).tolist(), T_C.tolist(), strict=True))
    tg = read_log(path, time_column="Zeit_min")
    assert tg.time_s[-1] == pytest.approx(2400.0, abs=1e-3)


def test_named_column_with_unreadable_unit_is_an_error(tmp_path):
    path = _write(tmp_path / "bad.csv", ["Zeit [Stunden?]", "temperature_C"],
                  zip(T_S.tolist(), T_C.tolist(), strict=True))
    with pytest.raises(UnitError) as err:
        read_log(path, time_column="Zeit [Stunden?]")
    assert "Zeit [Stunden?]" in str(err.value)
    assert "Stunden?" in str(err.value)


def test_named_resistance_column_is_not_read_as_celsius(tmp_path):
    # before: 'Widerstand [Ω]' named as the temperature column became 109 °C
    R = cvd_resistance_ohm(T_C)  # IEC 60751 Pt100
    path = _write(tmp_path / "pt.csv", ["Zeit [s]", "Widerstand [Ω]"],
                  zip(T_S.tolist(), np.asarray(R).tolist(), strict=True))
    with pytest.raises(UnitError, match="sensor model is needed"):
        read_log(path, time_column="Zeit [s]", temperature_column="Widerstand [Ω]")
    tg = read_log(path, time_column="Zeit [s]", temperature_column="Widerstand [Ω]",
                  sensor="pt100")
    # 6 decimals of an ohm ≈ 3 µK on a Pt100 (dR/dT ≈ 0.39 Ω/K)
    np.testing.assert_allclose(tg.temperature_K - 273.15, T_C, atol=1e-5)


def test_inspect_says_when_a_unit_is_assumed(tmp_path, capsys):
    path = _write(tmp_path / "plain.csv", ["Zeit", "temperature_C"],
                  zip(T_S.tolist(), T_C.tolist(), strict=True))
    assert main(["inspect", str(path), "--time-column", "Zeit"]) == 0
    out = capsys.readouterr().out
    assert "from assumed" not in out
    assert "assumed: no unit in the header" in out
    assert "--time-unit" in out


# --- whitespace-separated logs with a decimal comma -----------------------------------------

def test_whitespace_log_with_decimal_comma(tmp_path):
    # before: "0,0000   23,50000" was taken as three comma-separated cells and the header
    # line was refused ("no header row")
    path = tmp_path / "ws.txt"
    with path.open("w", encoding="utf-8") as fh:
        fh.write("time_min   temperature_C\n")
        for t, T in zip(T_S, T_C, strict=True):
            fh.write(f"{t / 60:8.4f}   {T:.5f}\n".replace(".", ","))
    tg = read_log(path)
    assert tg.metadata["detected_separator"] == "whitespace"
    assert tg.metadata["detected_decimal"] == ","
    np.testing.assert_allclose(tg.time_s, T_S, atol=0.003)  # 4 decimals of a minute
    np.testing.assert_allclose(tg.temperature_K - 273.15, T_C, atol=6e-6)


def test_comma_log_with_spaced_iso_timestamps_still_reads(tmp_path):
    path = tmp_path / "iso.csv"
    with path.open("w", encoding="utf-8") as fh:
        fh.write("timestamp,temperature_C\n")
        for i in range(30):
            fh.write(f"2025-03-01 09:{i // 60:02d}:{i % 60:02d},{23.5 + 0.001 * i:.4f}\n")
    tg = read_log(path)
    assert tg.metadata["detected_separator"] == "comma"
    np.testing.assert_allclose(tg.time_s, np.arange(30.0))


# --- run sheets as spreadsheets make them ---------------------------------------------------

_HEAD = ["run", "kind", "log", "mass_g", "certified_J_per_g", "date"]


def _logs(folder):
    _write(folder / "a.csv", ["time_s", "temperature_C"], zip(T_S.tolist(), T_C.tolist(), strict=True))


def test_sheet_with_a_title_row_above_the_header(tmp_path):
    from openpyxl import Workbook

    _logs(tmp_path)
    wb = Workbook()
    ws = wb.active
    ws.append(["Run sheet March 2025 (simulated)"])
    ws.append([])
    ws.append(_HEAD)
    ws.append(["c1", "calibration", "a.csv", 1.0, 26434.0, "2025-03-03"])
    wb.save(tmp_path / "runs.xlsx")
    runs = read_run_sheet(tmp_path / "runs.xlsx")
    assert [r.run for r in runs] == ["c1"]
    assert runs[0].line == 4


def test_sheet_units_row_that_agrees_is_skipped(tmp_path):
    _logs(tmp_path)
    with (tmp_path / "runs.csv").open("w", newline="", encoding="utf-8-sig") as fh:
        w = csv.writer(fh)
        w.writerow(_HEAD)
        w.writerow(["", "", "", "[g]", "J/g", ""])
        w.writerow(["c1", "calibration", "a.csv", "1,0", "26434", "2025-03-03"])
    runs = read_run_sheet(tmp_path / "runs.csv")
    assert len(runs) == 1
    assert runs[0].mass_g == 1.0
    assert runs[0].line == 3


def test_sheet_units_row_that_disagrees_is_refused(tmp_path):
    _logs(tmp_path)
    with (tmp_path / "runs.csv").open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(_HEAD)
        w.writerow(["", "", "", "mg", "J/g", ""])  # 1000 mg would be read as 1000 g
        w.writerow(["c1", "calibration", "a.csv", "1000", "26434", "2025-03-03"])
    with pytest.raises(SheetError) as err:
        read_run_sheet(tmp_path / "runs.csv")
    assert err.value.line == 2
    assert err.value.column == "mass_g"
    assert "mg" in str(err.value)


@pytest.mark.parametrize(("cell", "iso"), [
    ("2025-03-03", "2025-03-03"),
    ("2025-03-03T10:00:00", "2025-03-03T10:00:00"),
    ("03.04.2025", "2025-04-03"),  # day.month.year, as spreadsheets show it
    ("3.4.2025 9:05", "2025-04-03T09:05:00"),
])
def test_sheet_dates_become_iso(tmp_path, cell, iso):
    _logs(tmp_path)
    (tmp_path / "runs.csv").write_text(
        ";".join(_HEAD) + f"\nc1;calibration;a.csv;1,0;26434;{cell}\n", encoding="utf-8")
    assert read_run_sheet(tmp_path / "runs.csv")[0].date == iso


@pytest.mark.parametrize("cell", ["3/4/2025", "31.02.2025", "March 3"])
def test_sheet_unreadable_dates_are_refused(tmp_path, cell):
    # before: kept as text, so the lab book's date order and --since/--until lost the run
    _logs(tmp_path)
    (tmp_path / "runs.csv").write_text(
        ";".join(_HEAD) + f"\nc1;calibration;a.csv;1,0;26434;{cell}\n", encoding="utf-8")
    with pytest.raises(SheetError) as err:
        read_run_sheet(tmp_path / "runs.csv")
    assert err.value.column == "date"
    assert err.value.line == 2
    runs = read_run_sheet(tmp_path / "runs.csv", strict=False)
    assert runs[0].problems
    assert runs[0].problems[0].column == "date"


# --- simulate does not replace a laboratory's files ------------------------------------------

def test_simulate_refuses_a_folder_with_files(tmp_path, capsys):
    (tmp_path / "runs.csv").write_text("run,kind\nreal-1,combustion\n", encoding="utf-8")
    assert main(["simulate", "--out", str(tmp_path), "--runs", "1"]) == 2
    assert "--overwrite" in capsys.readouterr().err
    assert (tmp_path / "runs.csv").read_text(encoding="utf-8").startswith("run,kind\nreal-1")
    assert not (tmp_path / "cal-01.csv").exists()
    assert main(["simulate", "--out", str(tmp_path), "--runs", "1", "--overwrite",
                 "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["simulated"] is True
    assert "simulated by calwork" in (tmp_path / "runs.csv").read_text(encoding="utf-8")


# --- the notation the network/cycle help promises is the notation that parses ---------------

def test_network_help_notation_parses(capsys):
    from calwork.hess.reactions import Reaction
    from calwork.hess.species import parse_species

    assert main(["network", "--help"]) == 0
    text = capsys.readouterr().out
    for piece in ("Cu^2+(aq)", "1/2 O2(g)", "CuSO4·5H2O(cr)", "[[species]] name"):
        assert piece in " ".join(text.split())
    # the help's examples balance as written (elements and charge)
    for eq in ("CuSO4·5H2O(cr) = Cu^2+(aq) + SO4^2-(aq) + 5 H2O(l)",
               "H2(g) + 1/2 O2(g) → H2O(l)", "KCl(cr) = KCl(aq,inf)",
               "Fe^3+(aq) + 3 Cl-(aq) = FeCl3(cr)", "Na+(aq) + SO4-2(aq) = NaSO4-(aq)"):
        Reaction.from_equation(eq)
    # the three hydrate joins name one species
    assert len({parse_species(t) for t in ("CuSO4·5H2O(cr)", "CuSO4*5H2O(cr)",
                                           "CuSO4.5H2O(cr)")}) == 1


def test_demo_help_lists_the_methods(capsys):
    assert main(["demo", "--help"]) == 0
    out = capsys.readouterr().out
    assert "{dickinson,newton-fit,regnault-pfaundler}" in out
