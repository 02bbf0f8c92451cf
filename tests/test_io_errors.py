"""read_log errors: each names file, line, column, what was found and what was expected."""

from __future__ import annotations

import re
import zipfile

import numpy as np
import pytest

from calwork.core.errors import (
    AmbiguousColumnError,
    CalworkError,
    ChoiceError,
    ColumnError,
    ExportError,
    InputFileError,
    LogFormatError,
    SensorRangeError,
    TimeAxisError,
    UnitError,
    ValueCellError,
)
from calwork.core.thermogram import Thermogram
from calwork.io import read_log, write_log


def _log(tmp_path, lines: list[str], name: str = "bad.csv", encoding: str = "utf-8"):
    path = tmp_path / name
    path.write_bytes(("\n".join(lines) + "\n").encode(encoding))
    return path


def _readings(n: int = 12, sep: str = ",", T0: float = 25.0) -> list[str]:
    return [f"{k * 2.0:.1f}{sep}{T0 + 0.001 * k:.4f}" for k in range(n)]


def _where(path, line: int, column: str) -> str:
    return re.escape(f"{path}:{line}: column {column!r}: ")


def test_missing_file_and_directory(tmp_path):
    missing = tmp_path / "nope.csv"
    with pytest.raises(InputFileError, match=re.escape(f"{missing}: file not found")):
        read_log(missing)
    with pytest.raises(InputFileError, match="is a directory"):
        read_log(tmp_path)


def test_no_header(tmp_path):
    path = _log(tmp_path, _readings())
    with pytest.raises(LogFormatError, match=re.escape(f"{path}:1: no header row")):
        read_log(path)


def test_no_readings(tmp_path):
    path = _log(tmp_path, ["time_s,temperature_C", "a,b", "c,d"])
    with pytest.raises(LogFormatError, match="no readings found"):
        read_log(path)
    empty = _log(tmp_path, [], name="empty.csv")
    with pytest.raises(LogFormatError, match="no readings found"):
        read_log(empty)


def test_binary_file(tmp_path):
    path = tmp_path / "blob.csv"
    path.write_bytes(bytes(range(256)) * 20)
    with pytest.raises((InputFileError, LogFormatError), match=str(path)):
        read_log(path)


def test_unknown_columns(tmp_path):
    path = _log(tmp_path, ["time_s,pressure_bar", *_readings()])
    with pytest.raises(ColumnError, match="no temperature column found") as info:
        read_log(path)
    assert "time_s" in str(info.value)
    with pytest.raises(ColumnError, match=r"column 'probe': no temperature column of that name"):
        read_log(path, temperature_column="probe")
    nothing = _log(tmp_path, ["a,b", *_readings()], name="nothing.csv")
    with pytest.raises(ColumnError, match="no time column found"):
        read_log(nothing)


def test_ambiguous_columns(tmp_path):
    path = _log(tmp_path, ["time_s,temperature_C,temperature_K",
                           *[r + ",298.15" for r in _readings()]])
    with pytest.raises(AmbiguousColumnError, match="several columns could be the temperature"
                       ) as info:
        read_log(path)
    assert info.value.candidates == ["temperature_C", "temperature_K"]
    # naming one resolves it
    assert read_log(path, temperature_column="temperature_K").temperature_K[0] == 298.15


@pytest.mark.parametrize(
    ("cell", "message"),
    [
        ("abc", "not a number"),
        ("", "blank cell where a number is needed"),
        ("nan", "not a finite number"),
        ("NaN", "not a finite number"),
        ("inf", "not a finite number"),
        ("25.1.2", "not a number"),
        ("1e999", "not a finite number"),
    ],
)
def test_bad_numeric_cells(tmp_path, cell, message):
    rows = _readings()
    rows[6] = f"12.0,{cell}"
    path = _log(tmp_path, ["# operator: X", "time_s,temperature_C", *rows])
    # preamble line 1, header line 2, readings from line 3: the bad one is line 9
    with pytest.raises(ValueCellError, match=_where(path, 9, "temperature_C") + message) as info:
        read_log(path)
    assert info.value.line == 9
    assert info.value.column == "temperature_C"


def test_bad_cell_in_first_reading(tmp_path):
    # a damaged first reading must not be mistaken for the header
    rows = [r.replace(",", ";") for r in _readings()]
    rows[0] = "0.0;x"
    path = _log(tmp_path, ["time_s;temperature_C", *rows])
    with pytest.raises(ValueCellError, match=_where(path, 2, "temperature_C") + "not a number"):
        read_log(path)


def test_decimal_mark_mismatch(tmp_path):
    rows = [r.replace(",", ";").replace(".", ",") for r in _readings()]
    rows[4] = "8,0;25.5"
    path = _log(tmp_path, ["time_s;temperature_C", *rows])
    with pytest.raises(ValueCellError, match=r"not a number with decimal mark ','.*got '25\.5'"):
        read_log(path)


def test_missing_and_extra_fields(tmp_path):
    rows = _readings()
    rows[3] = "6.0"
    path = _log(tmp_path, ["time_s,temperature_C", *rows])
    with pytest.raises(ValueCellError, match=_where(path, 5, "temperature_C") + "blank cell"):
        read_log(path)
    rows = _readings()
    rows[3] = "6.0,25.003,7"
    path = _log(tmp_path, ["time_s,temperature_C", *rows], name="extra.csv")
    with pytest.raises(LogFormatError, match=re.escape(f"{path}:5: the line has 3 fields but "
                                                       "the header names 2")):
        read_log(path)


def test_non_monotonic_and_duplicated_times(tmp_path):
    rows = _readings()
    rows[5] = "4.0,25.005"  # goes back from 8.0
    path = _log(tmp_path, ["# a: b", "time_s,temperature_C", *rows])
    with pytest.raises(TimeAxisError, match=re.escape(f"{path}:8: column 'time_s': times must "
                                                      "be strictly increasing")) as info:
        read_log(path)
    assert info.value.line == 8
    rows = _readings()
    rows[7] = rows[6].split(",")[0] + ",25.007"  # same time twice
    path = _log(tmp_path, ["time_s,temperature_C", *rows], name="dup.csv")
    with pytest.raises(TimeAxisError, match=re.escape(f"{path}:9:")):
        read_log(path)


def test_too_few_points(tmp_path):
    path = _log(tmp_path, ["time_s,temperature_C", *_readings(9)])
    with pytest.raises(LogFormatError, match=r"too few readings.*at least 10 readings.*got 9"):
        read_log(path)
    assert read_log(_log(tmp_path, ["time_s,temperature_C", *_readings(10)], "ten.csv")
                    ).n_points == 10


@pytest.mark.parametrize(
    ("header", "message", "column"),
    [
        ("time_s,T [furlong]", "cannot parse the temperature unit", "T [furlong]"),
        ("time [fortnight],T [K]", "cannot parse the time unit", "time [fortnight]"),
    ],
)
def test_unit_errors_in_header(tmp_path, header, message, column):
    path = _log(tmp_path, [header, *_readings(T0=298.0)])
    with pytest.raises(UnitError, match=re.escape(f"column {column!r}: {message}")):
        read_log(path)


def test_a_fahrenheit_header_is_read_and_its_values_checked(tmp_path):
    # °F is a unit calwork reads; 298 "°F" is kelvin typed under the wrong unit
    path = _log(tmp_path, ["time_s,temperature_F", *_readings(T0=298.0)])
    with pytest.raises(SensorRangeError, match="look like kelvin"):
        read_log(path)
    path = _log(tmp_path, ["time_s,temperature_F", *_readings(T0=77.0)], "f.csv")
    # 77 °F = 25 °C exactly (definition of the scales)
    assert read_log(path).temperature_K[0] == pytest.approx(298.15, abs=1e-9)


def test_unit_errors_in_arguments(tmp_path):
    path = _log(tmp_path, ["time_s,temperature_C", *_readings()])
    with pytest.raises(UnitError, match=r"column 'time_unit': unknown time unit.*'fortnight'"):
        read_log(path, time_unit="fortnight")
    with pytest.raises(UnitError, match=r"unknown temperature unit.*'R'"):
        read_log(path, temperature_unit="R")
    # °F is known: 25 "°F" is °C given the wrong unit, and the message says so
    with pytest.raises(SensorRangeError, match=r"read as °F.*look like °C"):
        read_log(path, temperature_unit="F")
    with pytest.raises(ValueCellError, match=_where(path, 2, "time_s") + "not a clock time"):
        read_log(path, time_unit="mm:ss")


def test_temperature_outside_plausible_range(tmp_path):
    rows = _readings()
    rows[4] = "8.0,900.0"
    path = _log(tmp_path, ["time_s,temperature_C", *rows])
    with pytest.raises(SensorRangeError, match=_where(path, 6, "temperature_C")
                       + r"temperature outside the plausible range.*150 K to 700 K"):
        read_log(path)
    # °C values under a K header: 25 K is not a calorimeter temperature
    wrong_unit = _log(tmp_path, ["time_s,temperature_K", *_readings()], name="k.csv")
    with pytest.raises(SensorRangeError, match=r"read as kelvin.*look like °C.*got 25\.0"):
        read_log(wrong_unit)


def test_resistance_errors(tmp_path):
    rows = [f"{k},{109.7 + 0.01 * k:.3f}" for k in range(12)]
    path = _log(tmp_path, ["time_s,resistance_ohm", *rows])
    with pytest.raises(ColumnError, match="resistance only; a sensor model is needed"):
        read_log(path)
    with pytest.raises(UnitError, match="holds resistance in ohm; a sensor model is needed"):
        read_log(path, temperature_column="resistance_ohm", temperature_unit="ohm")
    rows[3] = "3,-1.0"
    neg = _log(tmp_path, ["time_s,resistance_ohm", *rows], name="neg.csv")
    with pytest.raises(SensorRangeError, match=_where(neg, 5, "resistance_ohm")
                       + "a thermometer resistance must be positive"):
        read_log(neg, sensor="pt100")
    rows[3] = "3,500.0"
    high = _log(tmp_path, ["time_s,resistance_ohm", *rows], name="high.csv")
    with pytest.raises(SensorRangeError, match=r"outside the range of the pt100 sensor.*"
                       r"18\.5201 to 390\.4811 ohm"):
        read_log(high, sensor="pt100")
    with pytest.raises(UnitError, match=re.escape(f"{path}: the steinhart-hart sensor needs")):
        read_log(path, sensor="steinhart-hart")
    with pytest.raises(ChoiceError, match="sensor must be one of"):
        read_log(path, sensor="pt10")


def test_clock_and_iso_errors(tmp_path):
    rows = [f"00:{k:02d}.000,25.0" for k in range(12)]
    rows[5] = "00:75,25.0"
    path = _log(tmp_path, ["time,T [°C]", *rows])
    with pytest.raises(ValueCellError, match=_where(path, 7, "time") + "seconds must be below 60"):
        read_log(path)
    rows = [f"2024-05-01T10:00:{k:02d},298.0" for k in range(12)]
    rows[2] = "2024-05-01T10:00:02+01:00,298.0"
    mixed = _log(tmp_path, ["timestamp,T_K", *rows], name="iso.csv")
    with pytest.raises(ValueCellError, match="offsets given for some timestamps but not others"):
        read_log(mixed)
    rows[2] = "2024-13-01T10:00:02,298.0"
    bad = _log(tmp_path, ["timestamp,T_K", *rows], name="iso2.csv")
    with pytest.raises(ValueCellError, match=_where(bad, 4, "timestamp") + "not an ISO 8601"):
        read_log(bad)


def test_xlsx_errors(tmp_path):
    junk = tmp_path / "junk.xlsx"
    junk.write_bytes(b"PK\x03\x04 not really a zip")
    with pytest.raises(LogFormatError, match=re.escape(f"{junk}: not a readable .xlsx")):
        read_log(junk)
    th = Thermogram(time_s=np.arange(12.0), temperature_K=np.full(12, 298.0) + np.arange(12))
    book = write_log(th, tmp_path / "ok.xlsx", fmt="xlsx")
    with pytest.raises(LogFormatError, match=r"no sheet of that name.*one of \['log'\]"):
        read_log(book, sheet="other")


def test_xlsx_entity_expansion_is_refused(tmp_path):
    # a "billion laughs" entity bomb inside the sheet XML: defusedxml must refuse it
    th = Thermogram(time_s=np.arange(12.0), temperature_K=np.full(12, 298.0))
    book = write_log(th, tmp_path / "ok.xlsx", fmt="xlsx")
    bomb = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(book) as src, zipfile.ZipFile(bomb, "w") as dst:
        for item in src.infolist():
            data = src.read(item.filename)
            if item.filename.startswith("xl/worksheets/sheet"):
                text = data.decode()
                entities = ('<!DOCTYPE lolz [<!ENTITY lol "lol">'
                            '<!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">]>')
                text = entities + text.replace("<t>time_s</t>", "<t>&lol2;</t>", 1)
                data = text.encode()
            dst.writestr(item, data)
    with pytest.raises(LogFormatError, match=r"(not a readable \.xlsx|cannot be read).*Entit"):
        read_log(bomb)


def test_every_error_is_a_calwork_error_and_a_builtin(tmp_path):
    path = _log(tmp_path, ["time_s,temperature_C", *_readings(3)])
    with pytest.raises(CalworkError) as info:
        read_log(path)
    assert isinstance(info.value, ValueError)
    with pytest.raises(OSError, match="file not found"):
        read_log(tmp_path / "none.csv")


def test_writer_errors(tmp_path):
    th = Thermogram(time_s=np.arange(12.0), temperature_K=np.full(12, 298.0))
    with pytest.raises(ChoiceError, match="decimal ',' needs another separator"):
        write_log(th, tmp_path / "a.csv", decimal=",")
    with pytest.raises(LogFormatError, match="needs a start date-time"):
        write_log(th, tmp_path / "a.csv", time_format="iso")
    with pytest.raises(LogFormatError, match="needs a sensor"):
        write_log(th, tmp_path / "a.csv", temperature_unit="ohm")
    with pytest.raises(ExportError, match="cannot be written in latin-1"):
        write_log(th, tmp_path / "a.csv", encoding="latin-1", preamble={"R0": "100 Ω"})
    with pytest.raises(ChoiceError, match="time_format must be one of"):
        write_log(th, tmp_path / "a.csv", time_format="hours")
