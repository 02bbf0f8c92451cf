"""The log-reader protocol: an importer registered for an invented fixed-width format reads
its files through ``read_log``, with full provenance; a broken importer fails alone with one
clear error. (The format below is made up for the test; it is no instrument's.)"""

from __future__ import annotations

import hashlib

import numpy as np
import pytest

from calwork.core.errors import CalworkError, LogFormatError
from calwork.core.provenance import Provenance
from calwork.core.thermogram import Thermogram
from calwork.io import read_log
from calwork.io.readers import (
    log_readers,
    register_log_reader,
    unregister_log_reader,
)

MAGIC = b"FIXED-WIDTH DEMO LOG v1"


class FixedWidthReader:
    """Lines ``MMMM.mm TTTTTT`` after a magic first line: minutes and millikelvin above
    273.15 K (an invented format)."""

    name = "fixed-width demo"

    def sniff(self, path, head):
        return head.startswith(MAGIC)

    def read(self, path, data, options, sha256):
        rows, t, T = [], [], []
        for number, line in enumerate(data.decode("ascii").splitlines()[1:], start=2):
            minutes, millikelvin = line.split()
            rows.append(number)
            t.append(float(minutes) * 60.0)
            T.append(273.15 + float(millikelvin) / 1000.0)
        return Thermogram(time_s=np.array(t), temperature_K=np.array(T), rows=np.array(rows),
                          metadata={"format": self.name}, provenance=Provenance())


@pytest.fixture
def fixed_width(tmp_path):
    register_log_reader(FixedWidthReader())
    lines = [MAGIC.decode()] + [f"{i * 0.5:7.2f} {25000 + 3 * i:6d}" for i in range(40)]
    path = tmp_path / "run.fw"
    path.write_text("\n".join(lines) + "\n", encoding="ascii")
    yield path
    unregister_log_reader(FixedWidthReader.name)


def test_a_registered_reader_reads_through_read_log(fixed_width):
    tg = read_log(fixed_width)
    assert tg.time_s[1] == pytest.approx(30.0)          # 0.5 min
    assert tg.temperature_K[0] == pytest.approx(298.15)  # 273.15 K + 25 000 mK
    assert list(tg.rows[:2]) == [2, 3]
    prov = tg.provenance
    assert prov.sha256 == hashlib.sha256(fixed_width.read_bytes()).hexdigest()
    assert prov.source_path == str(fixed_width)
    assert prov.importer == "calwork.io.read_log (fixed-width demo)"
    assert prov.calwork_version
    assert log_readers()[0].name == "fixed-width demo"


def test_files_it_does_not_claim_go_to_the_built_in_readers(fixed_width, tmp_path):
    other = tmp_path / "plain.csv"
    other.write_text("time_s,temperature_C\n" + "".join(f"{i},{25 + 0.001 * i}\n"
                                                         for i in range(20)))
    tg = read_log(other)
    assert tg.provenance.importer == "calwork.io.read_log"
    assert [r.name for r in log_readers()][-3:] == ["xlsx workbook", "hand-read record",
                                                    "delimited text"]


def test_registration_is_checked():
    with pytest.raises(TypeError, match="name"):
        register_log_reader(object())
    with pytest.raises(TypeError, match="already registered"):
        register_log_reader(type("Clash", (FixedWidthReader,), {"name": "delimited text"})())


class _Broken(FixedWidthReader):
    name = "broken demo"

    def read(self, path, data, options, sha256):
        raise ValueError("column 3 is missing")


class _NotAThermogram(FixedWidthReader):
    name = "wrong type demo"

    def read(self, path, data, options, sha256):
        return [1, 2, 3]


@pytest.mark.parametrize(("reader", "text"), [(_Broken(), "failed: column 3 is missing"),
                                              (_NotAThermogram(), "not a Thermogram")])
def test_a_failing_reader_gives_one_clear_error(tmp_path, reader, text):
    path = tmp_path / "run.fw"
    path.write_bytes(MAGIC + b"\n  0.00  25000\n")
    register_log_reader(reader)
    try:
        with pytest.raises(LogFormatError) as info:
            read_log(path)
    finally:
        unregister_log_reader(reader.name)
    assert isinstance(info.value, CalworkError)
    assert text in str(info.value)
    assert reader.name in str(info.value)
    assert str(path) in str(info.value)
