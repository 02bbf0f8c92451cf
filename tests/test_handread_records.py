"""Hand-read records typed from a notebook (``calwork.io.handread``): read, reduced, and a
typist's slips refused with the line."""

from __future__ import annotations

from importlib import resources

import pytest

from calwork.core.errors import LogFormatError, TimeAxisError, ValueCellError
from calwork.io import read_log
from calwork.rise import corrected_rise

HEAD = "# calwork hand-read record\n# temperature_unit: °C\ntime,temperature,remark\n"
GOOD = ["10:00,22.512,", "10:01,22.515,", "10:02,22.518,", "10:03,22.521,fired",
        "10:03:30,23.930,", "10:04,24.601,", "10:04:30,24.718,", "10:05,24.741,",
        "10:06,24.744,end of main period", "10:07,24.742,", "10:08,24.740,stirrer checked",
        "10:09,24.738,"]


def _write(tmp_path, lines, head=HEAD):
    path = tmp_path / "record.csv"
    path.write_text(head + "\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_the_bundled_example_reduces_to_its_simulated_truth():
    with resources.as_file(resources.files("calwork.sample_runs") / "hand_read_BA-09.csv") as p:
        thermogram = read_log(p)
        text = p.read_text(encoding="utf-8")
    truth = float(text.split("true_adiabatic_rise_K:")[1].split()[0])  # the simulator's
    assert thermogram.metadata["reading_resolution"] == "0.001"
    assert thermogram.provenance.importer.endswith("(hand-read record)")
    result = corrected_rise(thermogram)
    # the remarks 'fired' and 'end of main period' gave the periods (09:45 and 09:53)
    assert result.fire_time_s == 9 * 3600 + 45 * 60
    assert result.main_end_s == 9 * 3600 + 53 * 60
    assert result.reading_resolution_K == 0.001
    assert abs(result.corrected_rise_K - truth) <= 2 * result.u_corrected_rise_K


def test_a_typed_record_is_read_as_written(tmp_path):
    th = read_log(_write(tmp_path, GOOD))
    assert th.time_s[0] == 36000.0
    assert th.time_s[4] == 36210.0  # 10:03:30
    assert th.temperature_K[0] == pytest.approx(295.662, abs=1e-9)  # 22.512 °C
    assert th.rows.tolist() == list(range(4, 16))  # the file's lines
    assert float(th.metadata["record_fire_time_s"]) == 36180.0
    assert float(th.metadata["record_main_end_s"]) == 36360.0
    assert "10:08 stirrer checked" in th.metadata["remarks"]
    # the options win over the remarks
    r = corrected_rise(th, fire_time_s=36180.0, main_end_s=36420.0)
    assert r.main_end_s == 36420.0


@pytest.mark.parametrize(("edit", "error", "line", "words"), [
    # the slip is on line 6; the first time out of order is line 7 (the message names both)
    (("10:02,22.518,", "10:04,22.518,"), TimeAxisError, 7, "after 10:04 .line 6."),
    (("10:02,22.518,", "10:01,22.518,"), TimeAxisError, 6, "out of order"),
    (("10:05,24.741,", "10:05,—,"), ValueCellError, 11, "not a number"),
    (("10:05,24.741,", "10:05,,"), ValueCellError, 11, "not a number"),
    (("10:01,22.515,", "10:01,2254,"), ValueCellError, 5, "22.54 without its decimal point"),
    (("10:07,24.742,", "10:07,24742,"), ValueCellError, 13, "24.742 without its decimal point"),
    (("10:06,24.744,end of main period", "10:6,24.744,"), ValueCellError, 12, "not a time"),
])
def test_slips_are_refused_with_their_line(tmp_path, edit, error, line, words):
    lines = [edit[1] if row == edit[0] else row for row in GOOD]
    with pytest.raises(error, match=words) as err:
        read_log(_write(tmp_path, lines))
    assert err.value.line == line
    assert err.value.path is not None


def test_the_unit_is_never_guessed(tmp_path):
    with pytest.raises(LogFormatError, match="temperature unit"):
        read_log(_write(tmp_path, GOOD, head="# calwork hand-read record\n"
                        "time,temperature\n"))
    numbers = ["0,22.512", "1,22.515", "2,22.518"]
    with pytest.raises(ValueCellError, match="needs its unit"):
        read_log(_write(tmp_path, numbers, head=HEAD))
    th = read_log(_write(tmp_path, numbers, head=HEAD.replace(
        "time,temperature", "# time_unit: min\ntime,temperature")))
    assert th.time_s.tolist() == [0.0, 60.0, 120.0]


def test_a_record_passing_midnight_continues(tmp_path):
    lines = ["23:58,22.512,", "23:59,22.515,", "00:00,22.518,", "00:01,22.521,"]
    th = read_log(_write(tmp_path, lines))
    assert th.time_s.tolist() == [86280.0, 86340.0, 86400.0, 86460.0]
