"""Property: mangled logs and run sheets raise only calwork's errors.

Random byte edits, truncations, deleted / duplicated / swapped lines, random text in cells
and re-encodings of valid files must give either a Thermogram (list of RunInfo) or a
:class:`~calwork.core.errors.CalworkError`, never a bare ValueError / KeyError / IndexError /
UnicodeError escaping from pandas, numpy, csv, openpyxl or tomllib.
"""

from __future__ import annotations

from datetime import datetime

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from calwork.core.errors import CalworkError
from calwork.core.thermogram import Thermogram
from calwork.io import read_log, read_run_sheet, write_log, write_run_sheet

SETTINGS = settings(max_examples=150, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.too_slow])


def _thermogram() -> Thermogram:
    rng = np.random.default_rng(3)
    t = np.arange(30) * 2.0
    T = 298.0 + 0.5 * (1 + np.tanh((t - 30.0) / 8.0)) / 2 + rng.normal(0, 1e-4, t.size)
    return Thermogram(time_s=t, temperature_K=T, channels={"jacket_K": np.full(t.size, 298.5),
                                                           "heater_V": np.zeros(t.size)})


LOG_VARIANTS = [
    ("comma.csv", {}),
    ("semi.csv", {"sep": ";", "decimal": ",", "preamble": {"operator": "A. Analyst"}}),
    ("tab.tsv", {"sep": "\t", "encoding": "utf-16", "time_format": "mm:ss"}),
    ("space.txt", {"sep": " ", "encoding": "latin-1", "time_format": "hh:mm:ss"}),
    ("iso.csv", {"time_format": "iso", "encoding": "utf-8-sig"}),
    ("ohm.csv", {"temperature_unit": "ohm", "sensor": "pt100", "time_format": "min"}),
    ("book.xlsx", {"fmt": "xlsx"}),
]


@pytest.fixture(scope="module")
def bases(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fuzz")
    th = _thermogram()
    out = {}
    for name, options in LOG_VARIANTS:
        path = write_log(th, folder / name, start=datetime(2024, 5, 1, 9), **options)
        out[name] = path.read_bytes()
    logs = folder / "logs"
    logs.mkdir()
    write_log(th, logs / "a.csv")
    rows = [{"run": "a", "kind": "calibration", "log": "logs/a.csv", "mass_g": 1.0,
             "notes": "x", "operator": "B"},
            {"run": "b", "kind": "blank", "bomb_volume_L": 0.3, "sulfur_mass_fraction": 0.01}]
    for suffix in (".csv", ".toml", ".xlsx"):
        out[f"runs{suffix}"] = write_run_sheet(rows, folder / f"runs{suffix}").read_bytes()
    return folder, out


_EDIT = st.one_of(
    st.tuples(st.just("flip"), st.floats(0, 1), st.integers(0, 255)),
    st.tuples(st.just("truncate"), st.floats(0, 1)),
    st.tuples(st.just("insert"), st.floats(0, 1), st.binary(min_size=1, max_size=6)),
    st.tuples(st.just("delete_line"), st.floats(0, 1)),
    st.tuples(st.just("dup_line"), st.floats(0, 1)),
    st.tuples(st.just("swap_lines"), st.floats(0, 1), st.floats(0, 1)),
    st.tuples(st.just("cell"), st.floats(0, 1), st.integers(0, 6),
              st.text(max_size=6, alphabet=st.characters(codec="utf-8"))),
    st.tuples(st.just("reencode"), st.sampled_from(["utf-8", "utf-16", "latin-1", "utf-32",
                                                   "cp1252", "utf-8-sig"])),
)


def _mangle(data: bytes, edits) -> bytes:
    for edit in edits:
        kind = edit[0]
        n = len(data)
        if kind == "flip" and n:
            i = min(int(edit[1] * n), n - 1)
            data = data[:i] + bytes([edit[2]]) + data[i + 1:]
        elif kind == "truncate":
            data = data[: int(edit[1] * n)]
        elif kind == "insert":
            i = int(edit[1] * n)
            data = data[:i] + edit[2] + data[i:]
        elif kind in ("delete_line", "dup_line", "swap_lines", "cell") and n:
            lines = data.split(b"\n")
            i = min(int(edit[1] * len(lines)), len(lines) - 1)
            if kind == "delete_line":
                del lines[i]
            elif kind == "dup_line":
                lines.insert(i, lines[i])
            elif kind == "swap_lines":
                j = min(int(edit[2] * len(lines)), len(lines) - 1)
                lines[i], lines[j] = lines[j], lines[i]
            else:
                for sep in (b",", b";", b"\t", b" "):
                    cells = lines[i].split(sep)
                    if len(cells) > 1:
                        cells[edit[2] % len(cells)] = edit[3].encode("utf-8")
                        lines[i] = sep.join(cells)
                        break
            data = b"\n".join(lines)
        elif kind == "reencode":
            text = data.decode("utf-8", errors="replace")
            data = text.encode(edit[1], errors="replace")
    return data


def _only_calwork_errors(fn, *args, **kwargs):
    try:
        return fn(*args, **kwargs)
    except CalworkError as err:
        message = str(err)
    assert "\n" not in message  # the CLI prints errors on one line
    return None


@SETTINGS
@given(name=st.sampled_from([name for name, _ in LOG_VARIANTS]),
       edits=st.lists(_EDIT, min_size=1, max_size=4))
def test_mangled_logs_raise_only_calwork_errors(bases, name, edits):
    folder, data = bases
    path = folder / f"mangled-{name}"
    path.write_bytes(_mangle(data[name], edits))
    _only_calwork_errors(read_log, path)
    if name == "ohm.csv":
        _only_calwork_errors(read_log, path, sensor="pt100")


@settings(max_examples=100, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow])
@given(suffix=st.sampled_from([".csv", ".toml", ".xlsx"]),
       edits=st.lists(_EDIT, min_size=1, max_size=4))
def test_mangled_sheets_raise_only_calwork_errors(bases, suffix, edits):
    folder, data = bases
    path = folder / f"mangled-runs{suffix}"
    path.write_bytes(_mangle(data[f"runs{suffix}"], edits))
    _only_calwork_errors(read_run_sheet, path)


def test_unmangled_bases_read(bases):
    # the property above is not vacuous: every base file reads cleanly
    folder = bases[0]
    for name, _ in LOG_VARIANTS:
        path = folder / name
        kwargs = {"sensor": "pt100"} if name == "ohm.csv" else {}
        assert read_log(path, **kwargs).n_points == 30
    for suffix in (".csv", ".toml", ".xlsx"):
        assert [r.run for r in read_run_sheet(folder / f"runs{suffix}")] == ["a", "b"]
