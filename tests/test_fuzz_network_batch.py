"""Property tests (seeded, bounded): mangled network files raise only calwork's errors, and a
mangled cell of a run sheet never makes a run disappear from a batch."""

from __future__ import annotations

import csv
import io
import warnings

import pytest
from conftest import copy_sample_runs
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from calwork.core.errors import CalworkError
from calwork.hess import solve_network
from calwork.hess.files import read_network_file
from calwork.reduce import reduce_sheet

SETTINGS = settings(max_examples=120, deadline=None, derandomize=True, database=None,
                    suppress_health_check=[HealthCheck.too_slow,
                                           HealthCheck.function_scoped_fixture])

NETWORK_CSV = """id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol,anchor
a,"C(cr,graphite) + O2(g) = CO2(g)",-393.5,0.13,
b,CO(g) + 1/2 O2(g) = CO2(g),-282.98,0.15,no
c,CH4(g) + 2 O2(g) = CO2(g) + 2 H2O(l),-890.6,0.3,yes
d,H2O(l),-285.83,0.04,
"""
NETWORK_TOML = """[[determination]]
id = "a"
equation = "C(cr,graphite) + O2(g) = CO2(g)"
delta_r_H_kJ_per_mol = -393.5
u_delta_r_H_kJ_per_mol = 0.13

[[determination]]
id = "b"
equation = "CO(g) + 1/2 O2(g) = CO2(g)"
delta_r_H_kJ_per_mol = -282.98
u_delta_r_H_kJ_per_mol = 0.15

[[species]]
name = "H2O(l)"
delta_f_H_kJ_per_mol = -285.83
u_delta_f_H_kJ_per_mol = 0.04

[[correlation]]
a = "a"
b = "b"
correlation = 0.3
"""


def _mangle(text: str, data) -> str:
    ops = data.draw(st.lists(st.sampled_from(["edit", "cut", "dup", "drop", "junk"]),
                             min_size=1, max_size=3))
    for op in ops:
        if not text:
            break
        i = data.draw(st.integers(0, len(text) - 1))
        if op == "edit":
            text = text[:i] + data.draw(st.sampled_from(list("=,;\"[]()/.-+e0159 \n\t#"))) \
                + text[i + 1:]
        elif op == "cut":
            text = text[:i]
        elif op == "dup":
            lines = text.splitlines()
            k = data.draw(st.integers(0, len(lines) - 1))
            text = "\n".join(lines[:k + 1] + lines[k:])
        elif op == "drop":
            lines = text.splitlines()
            k = data.draw(st.integers(0, len(lines) - 1))
            text = "\n".join(lines[:k] + lines[k + 1:])
        else:
            text = text[:i] + data.draw(st.text(max_size=12)) + text[i:]
    return text


@pytest.mark.parametrize(("name", "base"), [("net.csv", NETWORK_CSV), ("net.toml", NETWORK_TOML)])
@SETTINGS
@given(data=st.data())
def test_mangled_network_files_raise_only_calwork_errors(tmp_path, name, base, data):
    path = tmp_path / name
    path.write_text(_mangle(base, data), encoding="utf-8")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            solve_network(read_network_file(path), worst_offender="inflate")
    except CalworkError:
        pass


@pytest.fixture(scope="module")
def sheet_rows(tmp_path_factory):
    folder = tmp_path_factory.mktemp("batch")
    copy_sample_runs(folder / "runs")
    with (folder / "runs" / "runs.csv").open(encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["kind"] == "calibration"][:5]
    return folder / "runs", rows


@settings(max_examples=25, deadline=None, derandomize=True, database=None,
          suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture])
@given(data=st.data())
def test_a_mangled_cell_never_drops_a_run(sheet_rows, data):
    folder, rows = sheet_rows
    rows = [dict(r) for r in rows]
    k = data.draw(st.integers(0, len(rows) - 1))
    column = data.draw(st.sampled_from([c for c in rows[0] if c not in ("run", "kind")]))
    rows[k][column] = data.draw(st.sampled_from(
        ["", "-1", "0", "1e308", "nan", "x", "3,5", "=1+1", "30.4", "1e-30", "9" * 50,
         "../../etc/passwd", "logs/missing.csv"]))
    buf = io.StringIO()
    w = csv.DictWriter(buf, fieldnames=list(rows[0]))
    w.writeheader()
    w.writerows(rows)
    sheet = folder / "fuzz.csv"
    sheet.write_text(buf.getvalue(), encoding="utf-8")
    try:
        red = reduce_sheet(sheet)
    except CalworkError:
        return  # a problem of the sheet as a whole: reported, nothing half-done
    assert sorted(r.run for r in red.runs) == sorted(r["run"] for r in rows)
