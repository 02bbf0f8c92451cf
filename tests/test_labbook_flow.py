"""Lab book end to end on simulated sheets: add, list, show, history, void, recompute, verify,
export-raw, export, backup, and tamper evidence — through the command line."""

from __future__ import annotations

import hashlib
import json
import shutil
import sqlite3

import pytest

from calwork.cli.main import main
from calwork.labbook import Filters, open_labbook
from calwork.reduce import reduce_sheet
from calwork.simulation import simulate_scenario


@pytest.fixture(scope="module")
def bomb_dir(tmp_path_factory):
    """Simulated bomb sheet (calwork's simulator): 3 calibrations + 3 combustions."""
    out = tmp_path_factory.mktemp("bomb")
    simulate_scenario("bomb", out, runs=3, seed=11)
    return out


def _copy(src, dst):
    shutil.copytree(src, dst)
    return dst


def run_cli(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _json(capsys, *argv):
    code, out, err = run_cli(capsys, *argv, "--json")
    assert code == 0, err
    return json.loads(out)


@pytest.fixture(scope="module")
def shared_book(bomb_dir, tmp_path_factory):
    """One lab book with the simulated sheet, for the read-only tests."""
    path = tmp_path_factory.mktemp("book") / "book.sqlite"
    with open_labbook(path, create=True, user="tester") as book:
        book.add_sheet(bomb_dir / "runs.csv")
    return path


def test_round_trip_recompute_after_originals_deleted(bomb_dir, tmp_path, capsys):
    data = _copy(bomb_dir, tmp_path / "data")
    book = tmp_path / "book.sqlite"
    code, out, err = run_cli(capsys, "labbook", "add", data / "runs.csv", "--labbook", book,
                             "--user", "ana")
    assert code == 0, err
    assert "recorded sheet #1 runs.csv: 6 runs (6 reduced, 0 failed)" in out
    direct = reduce_sheet(data / "runs.csv").to_dict()
    shutil.rmtree(data)  # the lab book holds the bytes; the originals are gone
    report = _json(capsys, "labbook", "recompute", "--labbook", book)
    assert report["agree"] is True
    assert report["differences"] == []
    assert report["runs"] == 6
    assert report["numbers"] > 100
    # the stored numbers are the numbers of a direct reduction, bit for bit
    with open_labbook(book) as lb:
        stored = {r["run"]: r for r in lb.runs()}
        cal = lb.calibrations()[0]
    for rec in direct["runs"]:
        assert stored[rec["run"]]["corrected_rise_K"] == rec["corrected_rise_K"]
    assert cal["energy_equivalent_J_per_K"] == direct["calibrations"][0][
        "energy_equivalent_J_per_K"]
    code, out, _ = run_cli(capsys, "labbook", "recompute", "--labbook", book)
    assert code == 0
    assert "all agree within 1e-12 relative" in out


def test_recompute_reports_a_changed_number(bomb_dir, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    with open_labbook(book, create=True) as lb:
        lb.add_sheet(bomb_dir / "runs.csv")
    conn = sqlite3.connect(book)
    conn.execute("DROP TRIGGER results_no_update")
    text = conn.execute("SELECT json FROM results WHERE key = 'cal-02'").fetchone()[0]
    rec = json.loads(text)
    rec["corrected_rise_K"] *= 1 + 1e-9
    conn.execute("UPDATE results SET json = ? WHERE key = 'cal-02'", (json.dumps(rec),))
    conn.commit()
    conn.close()
    code, out, _ = run_cli(capsys, "labbook", "recompute", "--labbook", book)
    assert code == 1
    assert "run cal-02" in out
    assert "corrected_rise_K" in out
    assert "1e-09" in out.splitlines()[-1]  # the relative difference, last column
    # a looser tolerance accepts it
    code, _, _ = run_cli(capsys, "labbook", "recompute", "--labbook", book, "--tolerance", 1e-6)
    assert code == 0


def test_add_again_is_already_recorded_and_conflicts_are_refused(bomb_dir, tmp_path, capsys):
    data = _copy(bomb_dir, tmp_path / "data")
    book = tmp_path / "book.sqlite"
    assert run_cli(capsys, "labbook", "add", data / "runs.csv", "--labbook", book)[0] == 0
    code, out, _ = run_cli(capsys, "labbook", "add", data / "runs.csv", "--labbook", book)
    assert code == 0
    assert "already recorded: runs.csv is sheet #1" in out
    # an identical copy elsewhere is the same record
    other = _copy(data, tmp_path / "copy")
    code, out, _ = run_cli(capsys, "labbook", "add", other / "runs.csv", "--labbook", book)
    assert code == 0
    assert "already recorded" in out
    with open_labbook(book) as lb:
        before = lb.counts()
    # same run ids, different bytes: refused, naming the run and the row
    log = data / "cal-02.csv"
    log.write_bytes(log.read_bytes() + b"\n")
    code, _, err = run_cli(capsys, "labbook", "add", data / "runs.csv", "--labbook", book)
    assert code == 2
    assert err.count("\n") == 1
    assert "run 'cal-01'" in err
    assert "already recorded from sheet #1" in err
    with open_labbook(book) as lb:
        assert lb.counts() == before


def test_failed_run_is_recorded_with_its_error(bomb_dir, tmp_path, capsys):
    data = _copy(bomb_dir, tmp_path / "data")
    (data / "broken.csv").write_text("this is not a temperature log\n")
    sheet = data / "runs.csv"
    lines = sheet.read_text().splitlines()
    fields = lines[4].split(",")  # a combustion row
    fields[0], fields[2] = "sample-bad", "broken.csv"
    sheet.write_text("\n".join([*lines, ",".join(fields)]) + "\n")
    book = tmp_path / "book.sqlite"
    code, out, err = run_cli(capsys, "labbook", "add", sheet, "--labbook", book)
    assert code == 0, err
    assert "7 runs (6 reduced, 1 failed)" in out
    assert "failed sample-bad:" in out
    shown = _json(capsys, "labbook", "show", "sample-bad", "--labbook", book)
    assert shown["result"]["error"]
    assert shown["result"]["corrected_rise_K"] is None
    assert shown["log"]["sha256"] == hashlib.sha256(b"this is not a temperature log\n").hexdigest()
    assert _json(capsys, "labbook", "recompute", "--labbook", book)["agree"]


def test_list_with_filters(shared_book, capsys):
    listing = _json(capsys, "labbook", "list", "--labbook", shared_book)
    assert [r["run"] for r in listing["runs"]] == [
        "cal-01", "cal-02", "cal-03", "sample-01", "sample-02", "sample-03"]  # by date
    (cal,) = listing["calibrations"]
    assert cal["calorimeter"] == "sim-bomb-1"
    assert cal["n_runs"] == 3
    assert cal["valid_from"] == listing["runs"][0]["date"]
    assert cal["valid_until"] is None
    assert [s["sample"] for s in listing["samples"]] == ["simulated-sample-A"]
    only = _json(capsys, "labbook", "list", "--labbook", shared_book, "--kind", "combustion")
    assert {r["kind"] for r in only["runs"]} == {"combustion"}
    dates = [r["date"] for r in listing["runs"]]
    window = _json(capsys, "labbook", "list", "--labbook", shared_book,
                   "--since", dates[1], "--until", dates[3])
    assert [r["date"] for r in window["runs"]] == dates[1:4]
    one = _json(capsys, "labbook", "list", "--labbook", shared_book, "--sample", "benzoic acid")
    assert [r["run"] for r in one["runs"]] == ["cal-01", "cal-02", "cal-03"]
    assert one["samples"] == []
    code, _, err = run_cli(capsys, "labbook", "list", "--labbook", shared_book, "--kind", "x")
    assert code == 2
    assert "kind must be one of" in err
    none = _json(capsys, "labbook", "list", "--labbook", shared_book, "--calorimeter", "nope")
    assert none["runs"] == []
    assert none["calibrations"] == []
    code, out, _ = run_cli(capsys, "labbook", "list", "--labbook", shared_book)
    assert code == 0
    assert "calibrations (1)" in out
    assert "sim-bomb-1" in out
    code, _, err = run_cli(capsys, "labbook", "list", "--labbook", shared_book,
                           "--since", "March")
    assert code == 2
    assert "--since must be an ISO 8601 date" in err


def test_show_gives_provenance_to_the_raw_bytes(shared_book, bomb_dir, capsys):
    shown = _json(capsys, "labbook", "show", "cal-01", "--labbook", shared_book)
    log_bytes = (bomb_dir / "cal-01.csv").read_bytes()
    assert shown["log"]["sha256"] == hashlib.sha256(log_bytes).hexdigest()
    assert shown["log"]["size_bytes"] == len(log_bytes)
    assert shown["log"]["original_path"] == str((bomb_dir / "cal-01.csv").resolve())
    assert shown["log"]["stored_bytes"] < len(log_bytes)  # compressed
    sheet = shown["sheet"]
    assert sheet["sha256"] == hashlib.sha256((bomb_dir / "runs.csv").read_bytes()).hexdigest()
    assert sheet["line"] == 2
    assert sheet["row"]["run"] == "cal-01"
    assert sheet["added_by"] == "tester"
    prov = shown["result_provenance"]
    assert prov["method"] == "newton-fit"
    assert prov["current"]
    assert prov["calwork_version"]
    assert shown["result"]["energy_equivalent_J_per_K"] > 0
    code, out, _ = run_cli(capsys, "labbook", "show", "cal-01", "--labbook", shared_book)
    assert code == 0
    assert shown["log"]["sha256"] in out
    code, _, err = run_cli(capsys, "labbook", "show", "nope", "--labbook", shared_book)
    assert code == 2
    assert "run 'nope': run is not in the lab book" in err


def test_export_raw_is_byte_identical(shared_book, bomb_dir, tmp_path, capsys):
    out_dir = tmp_path / "raw"
    code, _out, _ = run_cli(capsys, "labbook", "export-raw", "sample-02", out_dir,
                           "--labbook", shared_book)
    assert code == 0
    assert (out_dir / "runs.csv").read_bytes() == (bomb_dir / "runs.csv").read_bytes()
    assert (out_dir / "sample-02.csv").read_bytes() == (bomb_dir / "sample-02.csv").read_bytes()
    assert sorted(p.name for p in out_dir.iterdir()) == ["runs.csv", "sample-02.csv"]
    # again into the same folder: identical files are fine; a different one is never replaced
    assert run_cli(capsys, "labbook", "export-raw", "sample-02", out_dir,
                   "--labbook", shared_book)[0] == 0
    (out_dir / "runs.csv").write_text("mine")
    code, _, err = run_cli(capsys, "labbook", "export-raw", "sample-02", out_dir,
                           "--labbook", shared_book)
    assert code == 2
    assert "not overwritten" in err
    assert (out_dir / "runs.csv").read_text() == "mine"


def test_export_xlsx_from_the_store(shared_book, tmp_path, capsys):
    target = tmp_path / "book.xlsx"
    code, out, err = run_cli(capsys, "labbook", "export", "--xlsx", target,
                             "--labbook", shared_book)
    assert code == 0, err
    assert target.read_bytes()[:2] == b"PK"
    assert "6 runs, 1 calibrations, 1 samples" in out
    with open_labbook(shared_book) as lb:
        red = lb.reduction(Filters(kind="calibration"))
    assert [r.run for r in red.runs] == ["cal-01", "cal-02", "cal-03"]
    assert set(red.thermograms) == {"cal-01", "cal-02", "cal-03"}
    assert [i.run for i in red.run_infos] == ["cal-01", "cal-02", "cal-03"]


def test_void_is_audited_and_excluded_from_later_series(bomb_dir, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    with open_labbook(book, create=True, user="ana") as lb:
        lb.add_sheet(bomb_dir / "runs.csv")
        before = lb.calibrations()[0]
    code, out, err = run_cli(capsys, "labbook", "void", "cal-02", "--reason",
                             "soot in the crucible", "--labbook", book, "--user", "ben")
    assert code == 0, err
    history = _json(capsys, "labbook", "history", "cal-02", "--labbook", book)["entries"]
    assert [(e["action"], e["user"]) for e in history] == [("add", "ana"), ("void", "ben")]
    assert history[-1]["reason"] == "soot in the crucible"
    code, out, _ = run_cli(capsys, "labbook", "history", "cal-02", "--labbook", book)
    last = out.rstrip().splitlines()[-1]
    assert last.split()[2:5] == ["ben", "void", "run:cal-02"]
    assert last.endswith("soot in the crucible")
    listing = _json(capsys, "labbook", "list", "--labbook", book)
    status = {r["run"]: r["status"] for r in listing["runs"]}
    assert status["cal-02"] == "void"
    assert status["cal-01"] == "active"
    (after,) = listing["calibrations"]
    assert after["n_runs"] == before["n_runs"] - 1
    assert "cal-02" not in after["runs"]
    # the recomputed calibration is the mean of the remaining runs
    eps = {r["run"]: r["energy_equivalent_J_per_K"] for r in listing["runs"]}
    assert after["energy_equivalent_J_per_K"] == pytest.approx(
        (eps["cal-01"] + eps["cal-03"]) / 2, rel=1e-12)
    shown = _json(capsys, "labbook", "show", "cal-02", "--labbook", book)
    assert shown["status"] == "void"
    assert shown["void"]["voided_by"] == "ben"
    assert len(shown["result_versions"]) == 1  # its last result stays on record
    with open_labbook(book) as lb:
        points, notes = lb.calibration_series("sim-bomb-1")
        assert [p["run"] for p in points] == ["cal-01", "cal-03"]
        assert any("cal-02 is void" in n for n in notes)
        assert lb.verify().ok
    report = _json(capsys, "labbook", "recompute", "--labbook", book)
    assert report["agree"]
    assert report["reductions"] == 2
    code, _, err = run_cli(capsys, "labbook", "void", "cal-02", "--reason", "again",
                           "--labbook", book)
    assert code == 2
    assert "already void" in err
    code, _, err = run_cli(capsys, "labbook", "void", "cal-01", "--reason", "  ",
                           "--labbook", book)
    assert code == 2
    assert "needs a reason" in err
    assert run_cli(capsys, "labbook", "void", "cal-01", "--labbook", book)[0] == 2


def test_verify_names_an_edited_audit_row(shared_book, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    shutil.copy(shared_book, book)
    assert run_cli(capsys, "labbook", "verify", "--labbook", book)[0] == 0
    conn = sqlite3.connect(book)
    conn.execute("DROP TRIGGER audit_no_update")
    conn.execute("UPDATE audit SET user = 'mallory' WHERE id = 2")
    conn.execute("CREATE TRIGGER audit_no_update BEFORE UPDATE ON audit BEGIN "
                 "SELECT RAISE(ABORT, 'calwork lab book: the audit log is append-only'); END")
    conn.commit()
    conn.close()
    code, out, _ = run_cli(capsys, "labbook", "verify", "--labbook", book)
    assert code == 1
    assert "audit row 2: entry hash does not match its contents" in out


def test_verify_names_an_edited_blob(shared_book, bomb_dir, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    shutil.copy(shared_book, book)
    digest = hashlib.sha256((bomb_dir / "cal-03.csv").read_bytes()).hexdigest()
    conn = sqlite3.connect(book)
    conn.execute("DROP TRIGGER blobs_no_update")
    conn.execute("UPDATE blobs SET codec = 'raw', data = ? WHERE sha256 = ?",
                 (b"time_s,temperature_C\n0,25\n", digest))
    conn.commit()
    conn.close()
    result = _verify_json(capsys, book)
    assert any(p.startswith(f"blob {digest}") and "cal-03.csv" in p for p in result["problems"])
    assert any("trigger blobs_no_update is missing" in p for p in result["problems"])
    code, _, err = run_cli(capsys, "labbook", "export-raw", "cal-03", tmp_path / "x",
                           "--labbook", book)
    assert code == 2
    assert "does not match its SHA-256" in err


def _verify_json(capsys, book):
    code, out, _ = run_cli(capsys, "labbook", "verify", "--labbook", book, "--json")
    assert code == 1
    return json.loads(out)


def test_verify_catches_a_result_edited_with_its_hash(shared_book, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    shutil.copy(shared_book, book)
    conn = sqlite3.connect(book)
    conn.execute("DROP TRIGGER results_no_update")
    res_id, text = conn.execute("SELECT id, json FROM results WHERE key = 'sample-01'"
                                ).fetchone()
    rec = json.loads(text)
    rec["massic_energy_J_per_g"] += 1.0
    new = json.dumps(rec, sort_keys=True, separators=(",", ":"))
    conn.execute("UPDATE results SET json = ?, json_sha256 = ? WHERE id = ?",
                 (new, hashlib.sha256(new.encode()).hexdigest(), res_id))
    conn.commit()
    conn.close()
    problems = _verify_json(capsys, book)["problems"]
    assert any("reductions row 1" in p and "differ from those recorded by audit row" in p
               for p in problems)


def test_verify_catches_an_edited_run_row(shared_book, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    shutil.copy(shared_book, book)
    conn = sqlite3.connect(book)
    conn.execute("DROP TRIGGER runs_no_update")
    conn.execute("UPDATE runs SET calorimeter = 'other' WHERE run = 'cal-01'")
    conn.commit()
    conn.close()
    problems = _verify_json(capsys, book)["problems"]
    assert any(p.startswith("runs of sheet #1: rows differ") for p in problems)


def test_paths_in_sheets_cannot_escape(bomb_dir, tmp_path, capsys):
    data = _copy(bomb_dir, tmp_path / "data")
    (tmp_path / "outside.csv").write_bytes((data / "cal-01.csv").read_bytes())
    sheet = data / "runs.csv"
    sheet.write_text(sheet.read_text().replace("cal-01.csv", "../outside.csv"))
    book = tmp_path / "book.sqlite"
    code, _, err = run_cli(capsys, "labbook", "add", sheet, "--labbook", book)
    assert code == 2
    assert "escapes the sheet's folder" in err
    with open_labbook(book) as lb:  # created, but nothing recorded
        assert lb.counts()["runs"] == 0
        assert lb.verify().ok


def test_tampered_stored_path_is_refused_when_materialising(shared_book, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    shutil.copy(shared_book, book)
    conn = sqlite3.connect(book)
    conn.execute("DROP TRIGGER files_no_update")
    conn.execute("UPDATE files SET rel_path = '../../escaped.csv' WHERE rel_path = 'cal-01.csv'")
    conn.commit()
    conn.close()
    code, out, _ = run_cli(capsys, "labbook", "recompute", "--labbook", book)
    assert code == 1  # reported as a failed recomputation of that sheet
    assert "not a plain relative path" in out
    assert "'../../escaped.csv'" in out
    assert not list(tmp_path.parent.glob("escaped.csv"))
    assert not list(tmp_path.parent.parent.glob("escaped.csv"))
    code, _, err = run_cli(capsys, "labbook", "export-raw", "cal-01", tmp_path / "raw",
                           "--labbook", book)
    assert code == 2
    assert "not a plain relative path" in err


def test_backup_while_another_writer_is_active(shared_book, tmp_path, capsys):
    book = tmp_path / "book.sqlite"
    with open_labbook(shared_book) as src:
        src.backup(book)  # a private copy to write to
    writer = sqlite3.connect(book, isolation_level=None)
    writer.execute("BEGIN IMMEDIATE")
    writer.execute("INSERT INTO meta (key, value) VALUES ('uncommitted', 'x')")
    dest = tmp_path / "copy.sqlite"
    code, out, err = run_cli(capsys, "labbook", "backup", dest, "--labbook", book)
    writer.execute("ROLLBACK")
    writer.close()
    assert code == 0, err
    assert "verified" in out
    with open_labbook(dest) as lb:
        assert lb.verify().ok
        assert lb.counts()["runs"] == 6
        assert lb.connection.execute(
            "SELECT COUNT(*) FROM meta WHERE key = 'uncommitted'").fetchone()[0] == 0
    code, _, err = run_cli(capsys, "labbook", "backup", dest, "--labbook", book)
    assert code == 2
    assert "exists; not overwritten" in err


def test_environment_names_the_labbook(shared_book, monkeypatch, capsys):
    monkeypatch.setenv("CALWORK_LABBOOK", str(shared_book))
    listing = _json(capsys, "labbook", "list")
    assert len(listing["runs"]) == 6
    assert listing["labbook"] == str(shared_book)


def test_foreign_file_refused_on_the_command_line(tmp_path, capsys):
    path = tmp_path / "notes.sqlite"
    path.write_text("hello")
    code, _, err = run_cli(capsys, "labbook", "verify", "--labbook", path)
    assert code == 2
    assert err.count("\n") == 1
    assert "not a calwork lab book: not an SQLite database" in err
    assert path.read_text() == "hello"


def test_labbook_help_lists_subcommands(capsys):
    code, out, _ = run_cli(capsys, "labbook", "--help")
    assert code == 0
    for name in ("add", "list", "show", "history", "void", "recompute", "verify",
                 "export-raw", "export", "backup"):
        assert name in out
    assert run_cli(capsys, "labbook")[0] == 2


def test_toml_sheet_round_trip_and_parallel_recompute(bomb_dir, tmp_path, capsys):
    from calwork.io import read_run_sheet, write_run_sheet

    data = _copy(bomb_dir, tmp_path / "data")
    rows = [info.given() for info in read_run_sheet(data / "runs.csv")]
    write_run_sheet(rows, data / "runs.toml")
    book = tmp_path / "book.sqlite"
    code, out, err = run_cli(capsys, "labbook", "add", data / "runs.toml", "--labbook", book)
    assert code == 0, err
    assert "recorded sheet #1 runs.toml: 6 runs" in out
    shutil.rmtree(data)
    assert run_cli(capsys, "labbook", "void", "sample-03", "--reason", "leak", "--labbook",
                   book)[0] == 0  # a second reduction (version 2), from the stored bytes
    one = _json(capsys, "labbook", "recompute", "--labbook", book)
    assert one["reductions"] == 2
    two = _json(capsys, "labbook", "recompute", "--labbook", book, "--jobs", "2")
    assert one["agree"]
    assert one == two


def test_export_without_the_report_module_is_a_clear_error(shared_book, tmp_path, capsys,
                                                           monkeypatch):
    import sys

    monkeypatch.setitem(sys.modules, "calwork.report", None)  # as if not installed
    code, _, err = run_cli(capsys, "labbook", "export", "--xlsx", tmp_path / "x.xlsx",
                           "--labbook", shared_book)
    assert code == 2
    assert "workbook writer (calwork.report.write_workbook) is not available" in err
    assert not (tmp_path / "x.xlsx").exists()


def test_a_file_changed_during_the_add_is_not_recorded(bomb_dir, tmp_path, monkeypatch):
    from calwork.core.errors import LabbookError
    from calwork.labbook import ingest

    data = _copy(bomb_dir, tmp_path / "data")
    original = ingest.reduce_from_path

    def reduce_while_someone_edits(sheet, **kwargs):
        with (data / "sample-01.csv").open("ab") as fh:
            fh.write(b"\n")
        return original(sheet, **kwargs)

    monkeypatch.setattr(ingest, "reduce_from_path", reduce_while_someone_edits)
    with open_labbook(tmp_path / "book.sqlite", create=True) as lb:
        with pytest.raises(LabbookError, match="file changed while it was being recorded"):
            lb.add_sheet(data / "runs.csv")
        assert lb.counts()["runs"] == 0
