"""``calwork qa`` on a lab book of simulated calibration runs."""

from __future__ import annotations

import json

import pytest

from calwork.cli.main import main
from calwork.labbook import open_labbook
from calwork.simulation import simulate_scenario


@pytest.fixture(scope="module")
def book(tmp_path_factory):
    """A lab book with two simulated sheets: 4 + 3 calibrations of one calorimeter."""
    root = tmp_path_factory.mktemp("qa")
    path = root / "book.sqlite"
    first, second = root / "first", root / "second"
    simulate_scenario("bomb", first, runs=4, seed=21)
    simulate_scenario("bomb", second, runs=3, seed=22)
    sheet = second / "runs.csv"  # later runs: new run ids (first column) and dates
    lines = sheet.read_text().splitlines()
    lines[1:] = [line.replace("-0", "-1", 1) for line in lines[1:]]
    sheet.write_text("\n".join(lines).replace("2025-03-", "2025-05-") + "\n")
    with open_labbook(path, create=True, user="qa") as lb:
        lb.add_sheet(first / "runs.csv")
        lb.add_sheet(sheet)
    return path


def _qa(capsys, *argv):
    code = main(["qa", *map(str, argv)])
    out, err = capsys.readouterr()
    return code, out, err


def test_qa_json_reads_calibration_runs_in_date_order(book, capsys):
    code, out, err = _qa(capsys, "sim-bomb-1", "--labbook", book, "--json")
    assert code == 0, err
    d = json.loads(out)
    assert [p["run"] for p in d["points"]] == [
        "cal-01", "cal-02", "cal-03", "cal-04", "cal-11", "cal-12", "cal-13"]
    # default baseline: the first calibration series recorded for the calorimeter
    assert d["baseline"]["runs"] == ["cal-01", "cal-02", "cal-03", "cal-04"]
    assert "first calibration series" in d["baseline"]["source"]
    with open_labbook(book) as lb:
        eps = {r["run"]: r["energy_equivalent_J_per_K"] for r in lb.runs()}
    assert d["points"][4]["value"] == eps["cal-11"]
    # a baseline of 4 runs sets no limits worth judging by (at least 5; common SPC practice)
    assert d["recommendation"]["action"] == "too few for control limits"
    assert "4 points" in d["recommendation"]["reason"]
    assert d["rules"][0]["origin"].startswith("common SPC practice")


def test_void_run_is_excluded_from_qa(book, tmp_path, capsys):
    copy = tmp_path / "book.sqlite"
    with open_labbook(book) as lb:
        lb.backup(copy)
    assert main(["labbook", "void", "cal-12", "--reason", "misfire", "--labbook",
                 str(copy)]) == 0
    capsys.readouterr()
    code, out, _ = _qa(capsys, "sim-bomb-1", "--labbook", copy, "--json", "--baseline", "3")
    assert code == 0
    d = json.loads(out)
    assert "cal-12" not in [p["run"] for p in d["points"]]
    assert len(d["points"]) == 6
    assert any("cal-12 is void (misfire)" in n for n in d["notes"])
    assert d["baseline"]["source"] == "first 3 points"


def test_qa_text_plot_and_rules(book, tmp_path, capsys):
    png = tmp_path / "qa.png"
    code, out, err = _qa(capsys, "sim-bomb-1", "--labbook", book, "--plot", png,
                         "--rules", "beyond-action,run-one-side=5")
    assert code == 0, err
    assert "energy equivalent of calorimeter sim-bomb-1" in out
    assert f"plot: {png}" in out
    assert png.read_bytes()[:4] == b"\x89PNG"


def test_qa_errors(book, capsys):
    code, _, err = _qa(capsys, "no-such-calorimeter", "--labbook", book)
    assert code == 2
    assert "no runs of calorimeter 'no-such-calorimeter'" in err
    assert "sim-bomb-1" in err  # the known calorimeters are listed
    code, _, err = _qa(capsys, "SIM-BOMB-1", "--labbook", book)
    assert code == 2
    assert "did you mean 'sim-bomb-1'?" in err
    code, _, err = _qa(capsys, "sim-bomb-1", "--labbook", book, "--rules", "bogus")
    assert code == 2
    assert "rule must be one of" in err
    code, out, _ = _qa(capsys, "--help")
    assert code == 0
    assert "pressure" in out
    assert "common SPC practice" in out


def test_solution_runs_with_in_run_electrical_calibrations_are_points(tmp_path, capsys):
    simulate_scenario("solution", tmp_path / "sol", runs=3, seed=2)
    path = tmp_path / "book.sqlite"
    with open_labbook(path, create=True) as lb:
        lb.add_sheet(tmp_path / "sol" / "runs.csv")
        eps = [r["energy_equivalent_J_per_K"] for r in lb.runs()]
    code, out, err = _qa(capsys, "sim-solution-1", "--labbook", path, "--json")
    assert code == 0, err
    d = json.loads(out)
    assert [p["value"] for p in d["points"]] == eps
    assert any("no calibration series is recorded" in n for n in d["notes"])
