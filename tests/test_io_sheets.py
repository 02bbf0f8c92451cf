"""Run sheets: CSV / XLSX / TOML reading, typing, checks, log paths and load_run_log."""

from __future__ import annotations

import os
import re
from datetime import datetime

import numpy as np
import pytest

from calwork.core.errors import (
    DuplicateRunError,
    InputFileError,
    LogFormatError,
    LogPathError,
    SheetError,
)
from calwork.core.runinfo import RUN_SHEET_COLUMNS
from calwork.core.thermogram import Thermogram
from calwork.io import load_run_log, read_run_sheet, unknown_columns, write_log, write_run_sheet


def _thermogram(n: int = 40) -> Thermogram:
    t = np.arange(n) * 5.0
    T = 298.15 + 0.8 * (1.0 + np.tanh((t - t[n // 2]) / 20.0)) / 2
    return Thermogram(time_s=t, temperature_K=T)


@pytest.fixture
def folder(tmp_path):
    logs = tmp_path / "logs"
    logs.mkdir()
    for name in ("cal-1.csv", "cal-2.csv", "s-1.csv"):
        write_log(_thermogram(), logs / name)
    return tmp_path


ROWS = [
    {"run": "cal-1", "kind": "calibration", "log": "logs/cal-1.csv", "calorimeter": "C1",
     "sample": "benzoic acid", "formula": "C7H6O2", "mass_g": 1.0012,
     "certified_J_per_g": 26434.0, "fuse_J": 50.0, "o2_pressure_MPa": 3.04, "notes": None,
     "operator": "A. Analyst", "lab_room": "B12"},
    {"run": "cal-2", "kind": "calibration", "log": "logs/cal-2.csv", "calorimeter": "C1",
     "mass_g": 0.9987, "acid_titre_mL": 0.0, "sulfur_mass_fraction": 0.0},
    {"run": "s-1", "kind": "combustion", "log": "logs/s-1.csv", "calorimeter": "C1",
     "sample": "unknown oil", "mass_g": 0.7512, "notes": 'said "ok", then left'},
]


@pytest.mark.parametrize("suffix", [".csv", ".xlsx", ".toml"])
def test_round_trip_through_writer(folder, suffix):
    path = write_run_sheet(ROWS, folder / f"runs{suffix}")
    runs = read_run_sheet(path)
    assert [r.run for r in runs] == ["cal-1", "cal-2", "s-1"]
    first = runs[0]
    assert first.kind == "calibration"
    assert first.mass_g == 1.0012
    assert first.certified_J_per_g == 26434.0
    assert first.notes is None
    assert first.operator == "A. Analyst"  # an extension column
    assert first.extra == {"lab_room": "B12"}
    assert first.log_path == (folder / "logs" / "cal-1.csv").resolve()
    assert first.sheet_path == path
    assert runs[1].acid_titre_mL == 0.0
    assert runs[1].sample is None
    assert runs[2].notes == 'said "ok", then left'
    assert unknown_columns(runs) == ["lab_room"]


def test_writer_column_order(folder):
    path = write_run_sheet(ROWS, folder / "runs.csv")
    header = path.read_text().splitlines()[0].split(",")
    contract = [c for c in header if c in RUN_SHEET_COLUMNS]
    assert contract == [c for c in RUN_SHEET_COLUMNS if c in contract]
    assert header[: len(contract)] == contract
    assert header[len(contract):] == ["operator", "lab_room"]  # others in first-seen order
    # blanks for None: cal-2 has no sample
    assert ",," in path.read_text().splitlines()[2]


def test_csv_line_numbers_semicolon_and_decimal_comma(folder):
    text = ("# a comment line\nrun;kind;log;mass_g;bomb_volume_L;Mass_Basis\n"
            "cal-1;calibration;logs/cal-1.csv;1,0012;0,342;vacuum\n\n"
            "cal-2;Calibration;logs/cal-2.csv;0.9987;;air\n")
    path = folder / "runs.csv"
    path.write_text(text, encoding="latin-1")
    runs = read_run_sheet(path)
    assert [r.line for r in runs] == [3, 5]
    assert runs[0].mass_g == pytest.approx(1.0012)
    assert runs[0].bomb_volume_L == pytest.approx(0.342)
    assert runs[1].kind == "calibration"
    assert runs[1].bomb_volume_L is None
    assert runs[1].mass_basis == "air"  # header matched case-insensitively


@pytest.mark.parametrize("encoding", ["utf-8-sig", "utf-16", "latin-1"])
def test_csv_encodings(folder, encoding):
    path = folder / "runs.csv"
    path.write_bytes("run\tkind\tlog\tsample\nr1\tblank\tlogs/s-1.csv\tNaCl in Wasser, 25 °C\n"
                     .encode(encoding))
    (run,) = read_run_sheet(path)
    assert run.sample == "NaCl in Wasser, 25 °C"


def test_toml_sheet_with_line_numbers(folder):
    path = folder / "runs.toml"
    path.write_text('# runs\n[[run]]\nrun = "a"\nkind = "electrical"\nlog = "logs/cal-1.csv"\n'
                    'heater_power_W = 1\n\n[[run]]\nrun = "b"\nkind = "solution"\n'
                    'mass_g = "0,5"\nlog = "logs/s-1.csv"\n')
    runs = read_run_sheet(path)
    assert [r.line for r in runs] == [2, 8]
    assert runs[0].heater_power_W == 1.0
    assert runs[1].mass_g == 0.5
    path.write_text('[[run]]\nrun = "a"\nkind = "blank"\n\n[[run]]\nrun = "b"\nkind = "blank"\n'
                    "mass_g = -1\n")
    with pytest.raises(SheetError, match=re.escape(f"{path}:5: column 'mass_g': must be a "
                                                   "positive number")):
        read_run_sheet(path)


def _sheet(folder, body: str, name: str = "runs.csv"):
    path = folder / name
    path.write_text(body)
    return path


def test_duplicate_run_ids_name_both_lines(folder):
    path = _sheet(folder, "run,kind\nr1,blank\nr2,blank\nr1,blank\n")
    with pytest.raises(DuplicateRunError, match=re.escape(
            f"{path}:4: column 'run': run id used twice (first on line 2, again on line 4)")
    ) as info:
        read_run_sheet(path)
    assert info.value.first_line == 2


@pytest.mark.parametrize(
    ("cell_header", "cell", "message"),
    [
        ("mass_g", "0", "must be a positive number"),
        ("mass_g", "0,98 g", "must be a number"),
        ("o2_pressure_MPa", "-3", "must be a positive number"),
        ("bomb_volume_L", "abc", "must be a number"),
        ("acid_titre_mL", "-0.1", "must not be negative"),
        ("sulfur_mass_fraction", "1.5", "a mass fraction must lie between 0 and 1"),
        ("kind", "bombs", "unknown run kind"),
        ("sensor", "pt25", "unknown sensor"),
        ("time_unit", "fortnight", "unknown time unit"),
        ("run", "", "required cell is blank"),
    ],
)
def test_cell_errors_name_line_and_column(folder, cell_header, cell, message):
    base = {"run": "r2", "kind": "blank", cell_header: cell}
    header = list(dict.fromkeys(["run", "kind", cell_header]))
    line = ",".join(f'"{base[h]}"' if "," in base[h] else base[h] for h in header)
    path = _sheet(folder, ",".join(header) + "\nr1,blank" + "," * (len(header) - 2) + "\n"
                  + line + "\n")
    with pytest.raises(SheetError, match=re.escape(f"{path}:3: column {cell_header!r}: {message}")):
        read_run_sheet(path)


def test_header_errors(folder):
    with pytest.raises(SheetError, match="lacks a required column"):
        read_run_sheet(_sheet(folder, "run,mass_g\nr1,1\n"))
    with pytest.raises(SheetError, match="column 'Mass_g': column appears twice"):
        read_run_sheet(_sheet(folder, "run,kind,mass_g,Mass_g\nr1,blank,1,2\n", "b.csv"))
    with pytest.raises(SheetError, match="no runs"):
        read_run_sheet(_sheet(folder, "run,kind\n", "c.csv"))
    with pytest.raises(SheetError, match="the row has 3 cells but the header names 2"):
        read_run_sheet(_sheet(folder, "run,kind\nr1,blank,x\n", "d.csv"))
    with pytest.raises(InputFileError, match="file not found"):
        read_run_sheet(folder / "none.csv")
    with pytest.raises(SheetError, match="needs \\[\\[run\\]\\] tables"):
        read_run_sheet(_sheet(folder, 'title = "x"\n', "e.toml"))
    with pytest.raises(SheetError, match="not valid TOML"):
        read_run_sheet(_sheet(folder, "[[run]\n", "f.toml"))


@pytest.mark.parametrize(
    ("log", "message"),
    [
        ("/etc/passwd", "log path must be relative to the sheet's folder"),
        ("C:\\logs\\a.csv", "log path must be relative to the sheet's folder"),
        ("../outside.csv", "log path escapes the sheet's folder"),
        ("logs/../../outside.csv", "log path escapes the sheet's folder"),
        ("logs/missing.csv", "log file not found"),
        ("logs", "log file not found"),
    ],
)
def test_log_path_checks(folder, log, message):
    (folder.parent / "outside.csv").write_text("x")
    path = _sheet(folder, f"run,kind,log\nr1,blank,{log}\n")
    with pytest.raises(LogPathError, match=re.escape(f"{path}:2: run 'r1': column 'log': "
                                                     f"{message}")):
        read_run_sheet(path)


def test_log_path_inside_with_dots_and_backslashes(folder):
    path = _sheet(folder, "run,kind,log\nr1,blank,logs/../logs/cal-1.csv\nr2,blank,logs\\s-1.csv\n")
    runs = read_run_sheet(path)
    assert runs[0].log_path == (folder / "logs" / "cal-1.csv").resolve()
    assert runs[1].log_path == (folder / "logs" / "s-1.csv").resolve()


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symlinks")
def test_symlink_escape_is_refused(folder, tmp_path_factory):
    outside = tmp_path_factory.mktemp("elsewhere") / "secret.csv"
    write_log(_thermogram(), outside)
    (folder / "logs" / "link.csv").symlink_to(outside)
    path = _sheet(folder, "run,kind,log\nr1,blank,logs/link.csv\n")
    with pytest.raises(LogPathError, match="escapes the sheet's folder"):
        read_run_sheet(path)


def test_load_run_log_applies_row_overrides(folder):
    th = _thermogram()
    text = "probe_K;zeit_min\n" + "\n".join(
        f"{T:.6f};{t / 60.0:.8f}".replace(".", ",") for t, T in zip(th.time_s, th.temperature_K,
                                                                     strict=True))
    (folder / "logs" / "odd.txt").write_text(text)
    path = _sheet(folder, "run,kind,log,time_column,temperature_column,time_unit,"
                  "temperature_unit\nr1,solution,logs/odd.txt,zeit_min,probe_K,min,K\n")
    (info,) = read_run_sheet(path)
    back = load_run_log(info)
    np.testing.assert_allclose(back.time_s, th.time_s, atol=1e-6)
    np.testing.assert_allclose(back.temperature_K, th.temperature_K, atol=6e-7)


def test_load_run_log_sensor_columns(folder):
    sh = {"a": 1.129148e-3, "b": 2.34125e-4, "c": 8.76741e-8}  # docs/references.md §6 set
    th = _thermogram()
    write_log(th, folder / "logs" / "nt.csv", temperature_unit="ohm", sensor="steinhart-hart",
              sensor_coefficients=sh)
    path = _sheet(folder, "run,kind,log,sensor,sensor_a,sensor_b,sensor_c\n"
                  f"r1,solution,logs/nt.csv,steinhart-hart,{sh['a']},{sh['b']},{sh['c']}\n")
    runs = read_run_sheet(path)
    assert unknown_columns(runs) == []  # sensor coefficient columns are known
    np.testing.assert_allclose(load_run_log(runs[0]).temperature_K, th.temperature_K, atol=1e-8)


def test_load_run_log_errors_carry_the_run_id(folder):
    (folder / "logs" / "short.csv").write_text("time_s,temperature_C\n0,25\n1,25\n")
    path = _sheet(folder, "run,kind,log\nrun-7,blank,logs/short.csv\nrun-8,blank,\n")
    bad, nolog = read_run_sheet(path)
    with pytest.raises(LogFormatError, match=r"short\.csv: run 'run-7': too few readings"):
        load_run_log(bad)
    with pytest.raises(LogPathError, match="run 'run-8': column 'log': the run has no log file"):
        load_run_log(nolog)


def test_xlsx_sheet_cells(folder):
    from openpyxl import Workbook

    wb = Workbook()
    ws = wb.active
    ws.append(["run", "kind", "mass_g", "date", "log"])
    ws.append([7, "combustion", 0.5, "2024-05-01", "logs/s-1.csv"])
    ws.append([None, None, None, None, None])
    ws.append(["8", "blank", "0,25", datetime(2024, 5, 2, 14, 30), None])
    path = folder / "runs.xlsx"
    wb.save(path)
    runs = read_run_sheet(path)
    assert [r.run for r in runs] == ["7", "8"]
    assert [r.line for r in runs] == [2, 4]
    assert runs[1].mass_g == 0.25
    assert runs[0].date == "2024-05-01"
    assert runs[1].date == "2024-05-02T14:30:00"  # a date cell becomes ISO 8601 text
