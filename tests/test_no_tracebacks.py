"""Each input that once reached the user as a traceback is now one clear line, exit 2 (or a
failed check, exit 1, for `labbook verify`), and in a batch an error of its run only."""

from __future__ import annotations

import sqlite3

import pytest
from conftest import copy_sample_runs

from calwork.cli.main import main
from calwork.core.errors import InputFileError
from calwork.io import read_log


def _log(tmp_path, name="a.csv", step=5.0):
    lines = ["time_s,temperature_C,jacket_C"]
    lines += [f"{i * step!r},{25 + 0.001 * i:.4f},25.0" for i in range(40)]
    path = tmp_path / name
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def _one_line_error(capsys, status: int, expected_status: int = 2) -> str:
    err = capsys.readouterr().err
    assert status == expected_status, err
    assert "Traceback" not in err
    assert len(err.strip().splitlines()) == 1, err
    return err


def test_a_temperature_column_named_as_the_time_column(tmp_path, capsys):
    err = _one_line_error(capsys, main(["rise", str(_log(tmp_path)), "--time-column",
                                        "jacket_C"]))
    assert "jacket_C" in err
    assert "not time" in err


def test_readings_closer_than_any_logger_samples(tmp_path, capsys):
    err = _one_line_error(capsys, main(["rise", str(_log(tmp_path, step=1e-19))]))
    assert "check the time unit" in err


def test_hostile_paths(tmp_path):
    with pytest.raises(InputFileError, match="NUL"):
        read_log("a\x00b.csv")
    with pytest.raises(InputFileError, match="cannot read the file"):
        read_log(tmp_path / ("x" * 300 + ".csv"))


@pytest.mark.parametrize(("text", "message"), [
    ("[[run]]\nrun = \"a\"\nkind = \"calibration\"\nmass_g = " + "9" * 5000 + "\n",
     "4300 digits"),
    ("a = " + "[" * 100_000 + "]" * 100_000 + "\n", "nested too deeply"),
])
def test_hostile_toml(tmp_path, capsys, text, message):
    path = tmp_path / "runs.toml"
    path.write_text(text, encoding="utf-8")
    assert message in _one_line_error(capsys, main(["reduce", str(path)]))
    net = tmp_path / "net.toml"
    net.write_text(text.replace("[[run]]", "[[determination]]"), encoding="utf-8")
    assert message in _one_line_error(capsys, main(["network", str(net)]))


def test_a_400_digit_coefficient(tmp_path, capsys):
    path = tmp_path / "net.csv"
    path.write_text("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
                    f"r,{'1' * 400} CO(g) + 1/2 O2(g) = CO2(g),-283,0.1\n", encoding="utf-8")
    assert "equation" in _one_line_error(capsys, main(["network", str(path)]))


def test_oxygen_pressure_in_pascal_fails_its_run_only(tmp_path, capsys):
    copy_sample_runs(tmp_path / "runs")
    sheet = tmp_path / "runs" / "runs.csv"
    text = sheet.read_text(encoding="utf-8").splitlines()
    header = text[0].split(",")
    col = header.index("o2_pressure_MPa")
    cells = text[2].split(",")
    cells[col] = "3040000"
    text[2] = ",".join(cells)
    sheet.write_text("\n".join(text) + "\n", encoding="utf-8")
    status = main(["reduce", str(sheet), "--json"])
    out = capsys.readouterr()
    assert status == 1
    assert "Traceback" not in out.err
    assert "looks like Pa" in out.out


def test_verify_names_a_damaged_row(tmp_path, capsys):
    copy_sample_runs(tmp_path / "runs")
    book = tmp_path / "lab.sqlite"
    assert main(["labbook", "add", str(tmp_path / "runs" / "runs.csv"),
                 "--labbook", str(book)]) == 0
    con = sqlite3.connect(book)
    for (trigger,) in con.execute("SELECT name FROM sqlite_master WHERE type = 'trigger'"
                                  " AND name LIKE 'audit%'").fetchall():
        con.execute(f"DROP TRIGGER {trigger}")
    con.execute("UPDATE audit SET details = '{not json' WHERE id = 2")
    con.commit()
    con.close()
    capsys.readouterr()
    status = main(["labbook", "verify", "--labbook", str(book)])
    out = capsys.readouterr()
    assert status == 1
    assert "Traceback" not in out.err + out.out
    assert "audit entry #2" in out.out + out.err
