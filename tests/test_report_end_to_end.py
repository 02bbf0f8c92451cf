"""End to end: simulated run sheets → ``calwork reduce --json --xlsx --report`` → checks.

The workbook written by the command line from the real chain (``calwork.reduce.reduce_sheet``)
passes the independent formula-engine check, and its summary equals the command's JSON output.
"""

from __future__ import annotations

import json
import re
import sys
from pathlib import Path

import openpyxl
import pytest

sys.path.insert(0, str(Path(__file__).parent))
from report_fixtures import REL, check_with_engine, table

from calwork.cli.main import main
from calwork.simulation.scenarios import simulate_scenario


@pytest.fixture(scope="module")
def bomb_run(tmp_path_factory):
    folder = tmp_path_factory.mktemp("bomb")
    simulate_scenario("bomb", folder, runs=3, seed=11)
    xlsx, html = folder / "out.xlsx", folder / "out.html"
    return folder, xlsx, html


def test_cli_reduce_workbook_matches_json_and_formulas(bomb_run, capsys):
    folder, xlsx, html = bomb_run
    code = main(["reduce", str(folder / "runs.csv"), "--json", "--xlsx", str(xlsx),
                 "--report", str(html)])
    out = capsys.readouterr().out
    assert code == 0
    data = json.loads(out)
    n, worst = check_with_engine(xlsx)
    assert n >= 50
    assert worst < REL
    wv = openpyxl.load_workbook(xlsx, data_only=True)
    cols, rows = table(wv["Summary"], header_row=3)
    for sample, row in zip(data["samples"], rows, strict=False):
        assert row[cols["sample"]] == sample["sample"]
        for header, key in (("mean massic energy Δu (J/g)", "massic_energy_J_per_g"),
                            ("mean standard massic energy Δu° (J/g)",
                             "standard_massic_energy_J_per_g"),
                            ("ΔfH° (kJ/mol)", "delta_f_H_kJ_per_mol"),
                            ("u(ΔfH°) (kJ/mol)", "u_delta_f_H_kJ_per_mol")):
            assert row[cols[header]] == pytest.approx(sample[key], rel=1e-12), header
    cols, rows = table(wv["Calibration runs"])
    eps = next(i for h, i in cols.items() if h.startswith("energy equivalent"))
    by_run = {r["run"]: r for r in data["runs"]}
    for row in rows:
        assert row[eps] == pytest.approx(by_run[row[0]]["energy_equivalent_J_per_K"],
                                         rel=1e-12)
    # no formula had to be replaced by calwork's value
    notes = [r[0] for r in openpyxl.load_workbook(xlsx)["Provenance"].iter_rows(values_only=True)
             if r[0] and str(r[0]).startswith("workbook note")]
    assert notes == []
    text = html.read_text(encoding="utf-8")
    assert "http" not in text
    assert all(s.startswith("data:") for s in re.findall(r'src="([^"]*)"', text))


def test_solution_runs_export(tmp_path):
    from calwork.reduce import reduce_sheet
    from calwork.report import write_report, write_workbook

    simulate_scenario("solution", tmp_path, runs=2, seed=5)
    red = reduce_sheet(tmp_path / "runs.csv")
    path = write_workbook(red, tmp_path / "sol.xlsx")
    wb = openpyxl.load_workbook(path, data_only=True)
    cols, rows = table(wb["Solution runs"])
    h = cols["molar enthalpy (kJ/mol)"]
    for row in rows:
        run = next(r for r in red.runs if r.run == row[0])
        assert row[h] == pytest.approx(run.molar_enthalpy_kJ_per_mol, rel=1e-12)
    check_with_engine(path)
    page = write_report(red, tmp_path / "sol.html").read_text(encoding="utf-8")
    assert page.count("<figure>") == len(red.runs) + len(red.calibrations)
    assert "Solution series" in page
