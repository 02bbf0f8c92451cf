"""Calorific values of a fuel sample reach every output: the terminal summary, the HTML
report and the workbook (live formulas, checked by the independent formula engine) show the
numbers of ``--json``; the gross → net conversion follows ISO 1928's relations by hand.

The sheet is simulated (calwork's simulator, a fictional lab): its combustion runs are
declared a solid fuel with a moisture, ash and elemental analysis of our own choosing.
"""

from __future__ import annotations

import csv
import json

import openpyxl
import pytest
from report_fixtures import check_with_engine

from calwork.reduce import reduce_sheet
from calwork.report import write_report, write_workbook
from calwork.report.plain import render_text
from calwork.report.summary import summary_document
from calwork.simulation import simulate_scenario

#: Invented analysis of the fuel (mass fractions, as analysed).
ANALYSIS = {"moisture_mass_fraction": "0.052", "ash_mass_fraction": "0.081",
            "hydrogen_mass_fraction": "0.043", "oxygen_mass_fraction": "0.071",
            "nitrogen_mass_fraction": "0.014"}


@pytest.fixture(scope="module")
def reduction(tmp_path_factory):
    folder = tmp_path_factory.mktemp("fuel")
    simulate_scenario("bomb", folder, runs=3, seed=61)
    sheet = folder / "runs.csv"
    with sheet.open(newline="") as fh:
        rows = list(csv.DictReader(fh))
    fields = list(rows[0]) + list(ANALYSIS)
    for row in rows:
        extra = ANALYSIS if row["kind"] == "combustion" else dict.fromkeys(ANALYSIS, "")
        row.update(extra)
        if row["kind"] == "combustion":
            row["formula"] = ""  # a fuel, not a compound
            row["sample"] = "simulated coal C-7"
    with sheet.open("w", newline="") as fh:
        writer = csv.DictWriter(fh, fieldnames=fields)
        writer.writeheader()
        writer.writerows(rows)
    return reduce_sheet(sheet)


@pytest.fixture(scope="module")
def fuel(reduction):
    (sample,) = [s for s in reduction.samples if s.fuel]
    return json.loads(json.dumps(reduction.to_dict()))["samples"][
        [s.sample for s in reduction.samples].index(sample.sample)]["fuel"]


def test_gross_to_net_by_hand(fuel):
    # ISO 1928 (constants recalled, docs/references.md §8a): q_p,net = [q_d − 212.2 H_d −
    # 0.8 (O_d + N_d)] (1 − M) − 24.43 M, with H, O, N in % on the dry basis, M in %
    M, H, Ox, N = 5.2, 4.3, 7.1, 1.4
    q = fuel["gross_v_as_analysed_J_per_g"]
    assert q > 0  # a calorific value is positive
    q_d = q / (1 - M / 100)
    dry = 100 / (100 - M)
    net_p = (q_d - 212.2 * H * dry - 0.8 * (Ox + N) * dry) * (1 - M / 100) - 24.43 * M
    net_v = (q_d - 206.0 * H * dry) * (1 - M / 100) - 23.05 * M
    assert fuel["gross_v_dry_J_per_g"] == pytest.approx(q_d, rel=1e-12)
    assert fuel["gross_v_dry_ash_free_J_per_g"] == pytest.approx(q / (1 - 0.052 - 0.081),
                                                                 rel=1e-12)
    assert fuel["net_p_as_analysed_J_per_g"] == pytest.approx(net_p, rel=1e-12)
    assert fuel["net_v_as_analysed_J_per_g"] == pytest.approx(net_v, rel=1e-12)
    # units by their definitions: 1 cal_IT = 4.1868 J; 1 Btu_IT/lb = 2.326 J/g
    assert fuel["gross_v_as_analysed_cal_IT_per_g"] == pytest.approx(q / 4.1868, rel=1e-12)
    assert fuel["gross_v_as_analysed_Btu_IT_per_lb"] == pytest.approx(q / 2.326, rel=1e-12)
    assert fuel["gross_v_as_analysed_MJ_per_kg"] == pytest.approx(q / 1000, rel=1e-12)


def test_the_workbook_has_them_as_live_formulas(reduction, fuel, tmp_path):
    path = write_workbook(reduction, tmp_path / "fuel.xlsx", include_readings=False)
    n, worst = check_with_engine(path)
    assert n > 0
    assert worst < 1e-9
    formulas = openpyxl.load_workbook(path)["Calorific values"]
    values = openpyxl.load_workbook(path, data_only=True)["Calorific values"]
    found = {}
    for row in formulas.iter_rows(min_col=1, max_col=5):
        label = row[0].value
        if isinstance(label, str) and label.startswith(("gross,", "net,")):
            assert str(row[1].value).startswith("=")  # a formula, not a pasted number
            found[label] = values[row[1].coordinate].value
    assert found["net, constant pressure, as analysed"] == pytest.approx(
        fuel["net_p_as_analysed_J_per_g"], rel=1e-9)
    assert found["gross, constant volume, dry ash-free"] == pytest.approx(
        fuel["gross_v_dry_ash_free_J_per_g"], rel=1e-9)
    assert len(found) == 7


def test_terminal_and_html_show_the_json_values(reduction, fuel, tmp_path):
    text = render_text(summary_document(reduction))
    html = write_report(reduction, tmp_path / "r.html").read_text()
    for key in ("gross_v_as_analysed_J_per_g", "net_p_as_analysed_J_per_g",
                "gross_v_dry_ash_free_J_per_g"):
        shown = f"{fuel[key]:.1f}"
        assert shown in text, key
        assert shown in html, key
