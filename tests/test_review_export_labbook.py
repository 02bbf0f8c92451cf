"""Review: `labbook verify` names hand-edited rows that the earlier checks let through.

Each edit below is made the way a person with the sqlite3 shell would make it: drop the
insert-only trigger, change the row, put the trigger back (so the "trigger missing" check no
longer fires). Before the fix, edits of the ``calibrations`` table (the energy equivalents
that ``labbook list`` shows and QA's baseline reads), of a void's reason and of a ``runs``
row (named only as "runs of sheet #1") were not caught or not named.
"""

from __future__ import annotations

import json
import shutil
import sqlite3

import pytest

from calwork.cli.main import main
from calwork.labbook import open_labbook
from calwork.simulation import simulate_scenario


@pytest.fixture(scope="module")
def book(tmp_path_factory):
    """A lab book of a simulated bomb sheet (calwork's simulator) with one void run."""
    data = tmp_path_factory.mktemp("bomb")
    simulate_scenario("bomb", data, runs=3, seed=11)
    path = tmp_path_factory.mktemp("book") / "book.sqlite"
    with open_labbook(path, create=True, user="tester") as lb:
        lb.add_sheet(data / "runs.csv")
        lb.void("sample-02", reason="soot in the crucible")
    return path


def _tampered(book, tmp_path, table, statement, *params):
    path = tmp_path / "t.sqlite"
    shutil.copy(book, path)
    conn = sqlite3.connect(path)
    triggers = dict(conn.execute(
        "SELECT name, sql FROM sqlite_master WHERE type = 'trigger' AND tbl_name = ?", (table,)))
    for name in triggers:
        conn.execute(f"DROP TRIGGER {name}")
    conn.execute(statement, params)
    for sql in triggers.values():
        conn.execute(sql)
    conn.commit()
    conn.close()
    return path


def _verify(capsys, path):
    code = main(["labbook", "verify", "--labbook", str(path), "--json"])
    out, _ = capsys.readouterr()
    return code, json.loads(out)["problems"]


def test_untouched_book_verifies(book, capsys):
    assert _verify(capsys, book) == (0, [])


def test_edited_energy_equivalent_of_the_calibrations_table_is_named(book, tmp_path, capsys):
    path = _tampered(book, tmp_path, "calibrations",
                     "UPDATE calibrations SET energy_equivalent_J_per_K ="
                     " energy_equivalent_J_per_K + 5 WHERE id = 1")
    code, problems = _verify(capsys, path)
    assert code == 1
    assert any(p.startswith("calibrations row 1 ") and "energy_equivalent_J_per_K" in p
               for p in problems), problems


def test_edited_validity_start_is_named(book, tmp_path, capsys):
    path = _tampered(book, tmp_path, "calibrations",
                     "UPDATE calibrations SET valid_from = '1999-01-01'")
    code, problems = _verify(capsys, path)
    assert code == 1
    assert any("calibrations row 1 " in p and "valid_from" in p for p in problems), problems


def test_deleted_calibrations_row_is_named(book, tmp_path, capsys):
    path = _tampered(book, tmp_path, "calibrations", "DELETE FROM calibrations WHERE id = 1")
    code, problems = _verify(capsys, path)
    assert code == 1
    assert any("its calibrations row is missing" in p for p in problems), problems


def test_edited_void_reason_is_named(book, tmp_path, capsys):
    path = _tampered(book, tmp_path, "run_events",
                     "UPDATE run_events SET reason = 'typo' WHERE action = 'void'")
    code, problems = _verify(capsys, path)
    assert code == 1
    assert any("void of run 'sample-02'" in p and "reason" in p
               for p in problems), problems


@pytest.mark.parametrize(("column", "value"), [("sample", "other"), ("kind", "calibration"),
                                               ("date_key", "1999-01-01T00:00:00")])
def test_edited_run_row_is_named(book, tmp_path, capsys, column, value):
    path = _tampered(book, tmp_path, "runs",
                     f"UPDATE runs SET {column} = ? WHERE run = 'sample-01'", value)
    code, problems = _verify(capsys, path)
    assert code == 1
    assert any("runs of sheet #1" in p for p in problems)  # the earlier, sheet-level finding
    assert any(p.startswith("runs row ") and "(run 'sample-01')" in p and column in p
               for p in problems), problems


def test_list_shows_the_results_of_a_solution_sample(tmp_path, capsys):
    """Before the fix a solution sample's row in `labbook list` was blank after n (its
    results are molar enthalpies, not massic energies). Data: the bundled, SIMULATED
    sample_runs (E01, B01, K01, K03)."""
    import csv
    from pathlib import Path

    src = Path(__file__).resolve().parents[1] / "sample_runs"
    shutil.copytree(src / "logs", tmp_path / "logs")
    with open(src / "runs.csv", encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["run"] in {"E01", "B01", "K01", "K03"}]
    with open(tmp_path / "runs.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    path = tmp_path / "book.sqlite"
    assert main(["labbook", "add", str(tmp_path / "runs.csv"), "--labbook", str(path)]) == 0
    capsys.readouterr()
    assert main(["labbook", "list", "--labbook", str(path)]) == 0
    out = capsys.readouterr().out
    with open_labbook(path) as lb:
        (s,) = lb.samples()
    assert "solution samples (1)" in out
    line = next(x for x in out.splitlines()[out.splitlines().index("solution samples (1)"):]
                if x.strip().startswith("KCl"))
    assert f"{s['molar_enthalpy_kJ_per_mol']:.6g}" in line
    assert f"{s['infinite_dilution_enthalpy_kJ_per_mol']:.6g}" in line
