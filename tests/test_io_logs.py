"""read_log / write_log: round trips of every variant, detection, columns and units."""

from __future__ import annotations

import json
from datetime import datetime

import numpy as np
import pytest

from calwork.core.provenance import sha256_file
from calwork.core.thermogram import Thermogram
from calwork.io import read_log, write_log
from calwork.io.sensors import cvd_resistance_ohm

SH = {"a": 1.129148e-3, "b": 2.34125e-4, "c": 8.76741e-8}  # docs/references.md §6 datasheet set


def make_thermogram(n: int = 120, seed: int = 7, t0: float = 0.0) -> Thermogram:
    """A smooth rise (tanh step, like a combustion main period) plus seeded noise and channels.

    Times are whole milliseconds so clock formats with 3 decimals represent them exactly.
    """
    rng = np.random.default_rng(seed)
    t = t0 + np.arange(n) * 6.0 + np.round(rng.uniform(0.0, 0.5, n), 3)
    T = 297.0 + 1.2 * (1.0 + np.tanh((t - t[n // 2]) / 90.0)) / 2 + rng.normal(0.0, 2e-4, n)
    heater_on = (t > t[n // 4]) & (t < t[n // 3])
    return Thermogram(
        time_s=t, temperature_K=T,
        channels={
            "jacket_K": 298.0 + 1e-4 * rng.standard_normal(n),
            "heater_V": np.where(heater_on, 12.0 + 1e-3 * rng.standard_normal(n), 0.0),
            "heater_A": np.where(heater_on, 0.5, 0.0),
            "standard_resistor_V": np.where(heater_on, 0.05, 0.0),
        },
    )


THERMO = make_thermogram()
# temperature tolerance: 6 written decimals → ±0.5e-6 (plus binary rounding)
TOL_T = 6e-7


def _check_round_trip(back: Thermogram, orig: Thermogram, *, tol_t: float, tol_T: float,
                      channels=True) -> None:
    np.testing.assert_allclose(back.time_s, orig.time_s - orig.time_s[0] * 0, atol=tol_t, rtol=0)
    np.testing.assert_allclose(back.temperature_K, orig.temperature_K, atol=tol_T, rtol=0)
    if channels:
        for name in ("jacket_K", "heater_V", "heater_A", "standard_resistor_V"):
            np.testing.assert_allclose(back.channels[name], orig.channels[name], atol=TOL_T,
                                       rtol=0, err_msg=name)


@pytest.mark.parametrize(
    ("options", "detected"),
    [
        ({}, {"detected_separator": "comma", "detected_decimal": "."}),
        ({"sep": ";"}, {"detected_separator": "semicolon"}),
        ({"sep": "\t"}, {"detected_separator": "tab"}),
        ({"sep": " "}, {"detected_separator": "whitespace"}),
        ({"sep": ";", "decimal": ","}, {"detected_separator": "semicolon",
                                         "detected_decimal": ","}),
        ({"sep": "\t", "decimal": ","}, {"detected_separator": "tab", "detected_decimal": ","}),
        ({"sep": " ", "decimal": ","}, {"detected_separator": "whitespace",
                                         "detected_decimal": ","}),
        ({"encoding": "utf-8-sig"}, {"detected_encoding": "utf-8-sig"}),
        ({"encoding": "utf-16"}, {"detected_encoding": "utf-16"}),
        ({"encoding": "latin-1", "preamble": {"operator": "Jürgen Ølund", "bath": "25 °C"}},
         {"detected_encoding": "latin-1", "operator": "Jürgen Ølund", "bath": "25 °C"}),
        ({"encoding": "utf-8", "preamble": {"thermometer": "Pt100, 100 Ω"}},
         {"detected_encoding": "utf-8", "thermometer": "Pt100, 100 Ω"}),
        ({"temperature_unit": "K"}, {"temperature_unit": "K", "temperature_column": "temperature_K"}),
        ({"temperature_unit": "C"}, {"temperature_unit": "C", "temperature_column": "temperature_C"}),
    ],
)
def test_text_round_trip(tmp_path, options, detected):
    path = write_log(THERMO, tmp_path / "log.csv", **options)
    back = read_log(path)
    _check_round_trip(back, THERMO, tol_t=6e-7, tol_T=TOL_T)
    for key, value in detected.items():
        assert back.metadata[key] == value, key


@pytest.mark.parametrize(
    ("time_format", "tol_t", "unit"),
    [
        ("s", 6e-7, "s"),
        ("min", 6e-7, "min"),       # 8 decimals of a minute = 0.6 µs
        ("mm:ss", 1e-9, "clock"),   # whole milliseconds are written exactly
        ("hh:mm:ss", 1e-9, "clock"),
        ("iso", 1e-9, "iso"),
    ],
)
@pytest.mark.parametrize("fmt", ["csv", "xlsx"])
def test_time_formats_round_trip(tmp_path, time_format, tol_t, unit, fmt):
    start = datetime(2024, 5, 1, 9, 30, 0)
    orig = make_thermogram(t0=0.0)
    # ISO times come back as seconds from the first reading
    shift = orig.time_s[0] if time_format == "iso" else 0.0
    path = write_log(orig, tmp_path / f"log.{fmt}", fmt=fmt, time_format=time_format,
                     start=start)
    back = read_log(path)
    np.testing.assert_allclose(back.time_s, orig.time_s - shift, atol=tol_t, rtol=0)
    np.testing.assert_allclose(back.temperature_K, orig.temperature_K, atol=TOL_T, rtol=0)
    assert back.metadata["time_unit"] == unit
    if time_format == "iso":
        assert back.metadata["start"].startswith("2024-05-01T09:30:00")


def test_hours_clock_beyond_an_hour(tmp_path):
    long = make_thermogram(n=800)  # 80 min
    path = write_log(long, tmp_path / "log.csv", time_format="hh:mm:ss")
    assert "01:" in path.read_text().splitlines()[-1][:3]
    np.testing.assert_allclose(read_log(path).time_s, long.time_s, atol=1e-9, rtol=0)


def test_xlsx_round_trip_channels_and_rows(tmp_path):
    path = write_log(THERMO, tmp_path / "log.xlsx", fmt="xlsx", preamble={"operator": "B"})
    back = read_log(path)
    _check_round_trip(back, THERMO, tol_t=6e-7, tol_T=TOL_T)
    assert back.metadata["format"] == "xlsx"
    assert back.metadata["operator"] == "B"
    assert back.metadata["header_row"] == "2"
    assert back.rows[0] == 3  # spreadsheet row of the first reading
    assert back.provenance.first_row == 3
    assert back.provenance.last_row == 3 + THERMO.n_points - 1


def test_xlsx_named_sheet(tmp_path):
    from openpyxl import Workbook

    wb = Workbook()
    wb.active.title = "notes"
    wb.active.append(["nothing to see"])
    ws = wb.create_sheet("run 7")
    ws.append(["t [s]", "T [K]"])
    for k in range(12):
        ws.append([k * 2.0, 298.0 + 0.001 * k])
    path = tmp_path / "book.xlsx"
    wb.save(path)
    back = read_log(path, sheet="run 7")
    assert back.n_points == 12
    assert back.metadata["sheet"] == "run 7"
    assert back.temperature_K[-1] == pytest.approx(298.011)


def test_pt100_resistance_round_trip(tmp_path):
    path = write_log(THERMO, tmp_path / "pt.csv", temperature_unit="ohm", sensor="pt100")
    back = read_log(path, sensor="pt100")
    # 6 decimals of an ohm = 0.5 µΩ ≈ 1.3 µK at dR/dT ≈ 0.385 Ω/K (IEC 60751 coefficients)
    _check_round_trip(back, THERMO, tol_t=6e-7, tol_T=1.5e-6)
    R = cvd_resistance_ohm(THERMO.temperature_C)
    np.testing.assert_allclose(back.channels["resistance_ohm"], R, atol=6e-7, rtol=0)
    assert back.metadata["temperature_unit"] == "ohm"
    assert back.metadata["temperature_column"] == "resistance_ohm"
    assert "IEC 60751" in back.metadata["sensor_model"]


def test_pt1000_with_r0_override(tmp_path):
    coeffs = {"R0_ohm": 1000.3}
    path = write_log(THERMO, tmp_path / "pt.csv", temperature_unit="ohm", sensor="pt1000",
                     sensor_coefficients=coeffs)
    back = read_log(path, sensor="pt1000", sensor_coefficients=coeffs)
    _check_round_trip(back, THERMO, tol_t=6e-7, tol_T=2e-7)
    # read with the default R0 = 1000 Ω, each reading is off by R·(0.3/1000.3) ohm divided by
    # the local slope dR/dt = R0 (A + 2 B t) (first-order error propagation, IEC 60751 form)
    plain = read_log(path, sensor="pt1000")
    t_C = THERMO.temperature_C
    R = cvd_resistance_ohm(t_C, R0_ohm=1000.3)
    expected = R * (0.3 / 1000.3) / (1000.0 * (3.9083e-3 - 2 * 5.775e-7 * t_C))
    np.testing.assert_allclose(plain.temperature_K - THERMO.temperature_K, expected, rtol=1e-3)


def test_steinhart_hart_resistance_round_trip(tmp_path):
    path = write_log(THERMO, tmp_path / "nt.csv", temperature_unit="ohm",
                     sensor="steinhart-hart", sensor_coefficients=SH, sep=";", decimal=",")
    back = read_log(path, sensor="steinhart-hart", sensor_coefficients=SH)
    # 10 kΩ thermistor: dR/dT ≈ −440 Ω/K near 25 °C, so 6 decimals of an ohm are negligible
    _check_round_trip(back, THERMO, tol_t=6e-7, tol_T=1e-8)


def test_resistance_column_with_preamble_sensor(tmp_path):
    path = write_log(THERMO, tmp_path / "pt.csv", temperature_unit="ohm", sensor="pt100")
    assert "# sensor: pt100" in path.read_text()
    back = read_log(path)  # no sensor argument: the preamble names it
    assert back.metadata["sensor_source"] == "preamble"
    np.testing.assert_allclose(back.temperature_K, THERMO.temperature_K, atol=1.5e-6, rtol=0)


def test_provenance_rows_and_metadata(tmp_path):
    pre = {"operator": "A. Analyst", "calorimeter": "C-2"}
    path = write_log(THERMO, tmp_path / "log.csv", preamble=pre)
    back = read_log(path)
    assert back.provenance.source_path == str(path)
    assert back.provenance.sha256 == sha256_file(path)
    assert back.provenance.importer == "calwork.io.read_log"
    # two preamble lines, header on line 3, readings from line 4
    assert back.metadata["header_line"] == "3"
    assert back.rows.tolist() == list(range(4, 4 + THERMO.n_points))
    assert (back.provenance.first_row, back.provenance.last_row) == (4, 3 + THERMO.n_points)
    assert back.metadata["operator"] == "A. Analyst"
    assert json.loads(back.metadata["columns"]) == [
        "time_s", "temperature_C", "jacket_C", "heater_V", "heater_A", "standard_resistor_V"]
    assert json.loads(back.metadata["channels"])["jacket_K"] == "jacket_C"
    assert back.metadata["time_column"] == "time_s"
    assert back.metadata["time_unit"] == "s"


def _write_text(tmp_path, text: str, name: str = "log.txt", encoding: str = "utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def _rows(n: int = 12, fmt: str = "{t},{T}", t_step: float = 1.0, T0: float = 25.0) -> str:
    return "\n".join(fmt.format(t=k * t_step, T=round(T0 + 0.01 * k, 4)) for k in range(n))


@pytest.mark.parametrize(
    ("header", "time_factor", "T_offset", "time_col", "temp_col"),
    [
        ("time_s,temperature_C", 1.0, 273.15, "time_s", "temperature_C"),
        ("time_min,temperature_K", 60.0, 0.0, "time_min", "temperature_K"),
        ("t [s],T [°C]", 1.0, 273.15, "t [s]", "T [°C]"),
        ("time (min),T (K)", 60.0, 0.0, "time (min)", "T (K)"),
        ("elapsed,temp_C", 1.0, 273.15, "elapsed", "temp_C"),
        ("t,T_K", 1.0, 0.0, "t", "T_K"),
        ("Time / s,Temperature / °C", 1.0, 273.15, "Time / s", "Temperature / °C"),
        ("time_ms,Temperature (degC)", 1e-3, 273.15, "time_ms", "Temperature (degC)"),
        ("Time,Temp", 1.0, 273.15, "Time", "Temp"),  # no units: seconds, °C from the values
    ],
)
def test_column_names_and_units(tmp_path, header, time_factor, T_offset, time_col, temp_col):
    T0 = 25.0 if T_offset else 298.15
    path = _write_text(tmp_path, header + "\n" + _rows(T0=T0) + "\n")
    back = read_log(path)
    assert back.metadata["time_column"] == time_col
    assert back.metadata["temperature_column"] == temp_col
    assert back.time_s[-1] == pytest.approx(11.0 * time_factor)
    assert back.temperature_K[0] == pytest.approx(T0 + T_offset)


def test_units_row_under_header(tmp_path):
    text = "time;temperature;jacket\ns;°C;°C\n" + _rows(fmt="{t};{T};25,5").replace(".", ",")
    back = read_log(_write_text(tmp_path, text))
    assert back.metadata["units_line"] == "2"
    assert back.temperature_K[0] == pytest.approx(298.15)
    assert back.channels["jacket_K"][0] == pytest.approx(298.65)
    assert back.rows[0] == 3


def test_preamble_forms_and_comment_lines(tmp_path):
    first = "\n".join(f"{k}\t25.0" for k in range(12))
    second = "\n".join(f"{100 + k}\t25.5" for k in range(3))
    text = ("Calorimeter log\noperator: A. Analyst\nbath=25 C\nsample;benzoic acid\n"
            "# vessel: 2\ntime_s\ttemperature_C\n" + first + "\n# fired here\n\n" + second
            + "\n")
    back = read_log(_write_text(tmp_path, text))
    meta = back.metadata
    assert meta["operator"] == "A. Analyst"
    assert meta["bath"] == "25 C"
    assert meta["sample"] == "benzoic acid"
    assert meta["vessel"] == "2"
    assert meta["note_1"] == "Calorimeter log"
    assert back.n_points == 15
    # comment and blank lines are skipped, but line numbers stay those of the file:
    # header on line 6, readings 7–18, comment 19, blank 20, readings from line 21
    assert back.rows[11] == 18
    assert back.rows[12] == 21


def test_explicit_columns_and_units(tmp_path):
    text = "probe1,clock_a,probe2\n" + "\n".join(
        f"{298.0 + 0.001 * k},{k * 0.5},{299.0}" for k in range(12))
    path = _write_text(tmp_path, text)
    back = read_log(path, time_column="clock_a", temperature_column="probe1", time_unit="min",
                    temperature_unit="K")
    assert back.time_s[1] == pytest.approx(30.0)
    assert back.temperature_K[1] == pytest.approx(298.001)
    assert back.metadata["time_unit_source"] == "argument"
    assert json.loads(back.metadata["ignored_columns"]) == ["probe2"]


def test_explicit_unit_overrides_header(tmp_path):
    path = _write_text(tmp_path, "time_s,temperature_C\n" + _rows(T0=298.0))
    back = read_log(path, temperature_unit="K")
    assert back.temperature_K[0] == pytest.approx(298.0)


def test_crlf_and_cr_line_ends(tmp_path):
    body = "time_s,temperature_C\n" + _rows() + "\n"
    for eol in ("\r\n", "\r"):
        path = _write_text(tmp_path, body.replace("\n", eol), name=f"log{len(eol)}.csv")
        back = read_log(path)
        assert back.n_points == 12
        assert back.rows[0] == 2


def test_quoted_cells_and_trailing_separator(tmp_path):
    text = '"time_s","temperature_C",\n' + "\n".join(
        f'"{k}","{25 + 0.01 * k:.2f}",' for k in range(12))
    back = read_log(_write_text(tmp_path, text))
    assert back.n_points == 12
    assert back.temperature_K[-1] == pytest.approx(298.26)


def test_utf16_without_bom(tmp_path):
    text = "time_s\ttemperature_C\n" + _rows(fmt="{t}\t{T}")
    back = read_log(_write_text(tmp_path, text, encoding="utf-16-le"))
    assert back.metadata["detected_encoding"] == "utf-16"
    assert back.n_points == 12


def test_clock_times_of_day_past_midnight(tmp_path):
    text = "time,T [°C]\n" + "\n".join(
        f"23:59:{50 + k:02d},25.0" if k < 10 else f"00:00:{k - 10:02d},25.0" for k in range(14))
    back = read_log(_write_text(tmp_path, text))
    assert np.allclose(np.diff(back.time_s), 1.0)
    assert "midnight" in back.metadata["clock_rollover"]


def test_iso_with_offsets(tmp_path):
    text = "timestamp;temperature_K\n" + "\n".join(
        f"2024-05-01T09:30:{k:02d}.500+02:00;298.{k:02d}" for k in range(12))
    back = read_log(_write_text(tmp_path, text))
    assert back.time_s[-1] == pytest.approx(11.0)
    assert back.metadata["start"] == "2024-05-01T09:30:00.500000+02:00"


def test_channels_from_alternative_names(tmp_path):
    text = "t_s,T_K,jacket [K],heater_voltage,heater [A],std_resistor [V],R [ohm]\n" + "\n".join(
        f"{k},{298 + 0.01 * k},298.5,10.0,0.5,0.1,{109.7 + k * 0.001}" for k in range(12))
    back = read_log(_write_text(tmp_path, text))
    assert sorted(back.channels) == ["heater_A", "heater_V", "jacket_K", "resistance_ohm",
                                     "standard_resistor_V"]
    assert back.channels["jacket_K"][0] == pytest.approx(298.5)
    # with the sensor option the resistance column becomes the temperature source
    via_r = read_log(back.provenance.source_path, sensor="pt100")
    assert via_r.metadata["temperature_column"] == "R [ohm]"
    assert via_r.temperature_K[0] == pytest.approx(cvd_temp_K(109.7), abs=1e-9)


def cvd_temp_K(R: float) -> float:
    from calwork.io.sensors import cvd_temperature_C

    return cvd_temperature_C(R) + 273.15


def test_openpyxl_reads_through_defusedxml():
    import openpyxl
    from openpyxl.xml import functions

    from calwork.io._xlsx import xml_is_defused

    assert openpyxl.DEFUSEDXML is True
    assert xml_is_defused()
    closure = [c.cell_contents for c in (functions.iterparse.__closure__ or ())]
    assert any(getattr(c, "__module__", "").startswith("defusedxml") for c in closure)


def test_whitespace_aligned_with_units_in_brackets(tmp_path):
    text = "# instrument: X\n  time [s]    T [°C]   jacket [°C]\n" + "\n".join(
        f"  {k:6.1f}   {25 + 0.001 * k:8.4f}   {25.5:6.2f}" for k in range(15))
    back = read_log(_write_text(tmp_path, text))
    assert json.loads(back.metadata["columns"]) == ["time [s]", "T [°C]", "jacket [°C]"]
    assert back.metadata["detected_separator"] == "whitespace"
    assert back.temperature_K[1] == pytest.approx(298.151)
    assert back.channels["jacket_K"][0] == pytest.approx(298.65)


def test_text_column_beside_the_readings(tmp_path):
    text = "time_s,temperature_C,event\n" + "\n".join(
        f"{k},{25 + k / 100},{'fire' if k == 5 else ''}" for k in range(15))
    back = read_log(_write_text(tmp_path, text))
    assert back.n_points == 15
    assert json.loads(back.metadata["ignored_columns"]) == ["event"]


def test_decimal_comma_found_past_whole_number_readings(tmp_path):
    # the first readings are whole numbers (either mark fits); later ones settle it
    rows = [f"{k};25" for k in range(14)] + [f"{k};25,{k}" for k in range(14, 20)]
    back = read_log(_write_text(tmp_path, "time_s;temperature_C\n" + "\n".join(rows)))
    assert back.metadata["detected_decimal"] == ","
    assert back.temperature_K[-1] == pytest.approx(298.15 + 0.19)
