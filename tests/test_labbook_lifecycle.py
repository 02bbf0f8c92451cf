"""The run life cycle in the lab book: amend (new versions with overridden sheet cells),
approve (four-eyes, version checks, lapsing), void and restore — each re-reducing its sheet
from the stored bytes, each audited and covered by verify and recompute.

Sheets are simulated with calwork's own simulator (invented data, a fictional lab).
"""

from __future__ import annotations

import json
import shutil
import sqlite3

import openpyxl
import pytest

from calwork.cli.main import main
from calwork.core.errors import LabbookError, SheetError
from calwork.labbook import Filters, open_labbook
from calwork.labbook import schema as schema_mod
from calwork.labbook.ingest import add_sheet, insert_reduction, results_meta_digest
from calwork.labbook.reducing import reduce_stored
from calwork.simulation import simulate_scenario


@pytest.fixture(scope="module")
def sheets(tmp_path_factory):
    """Two simulated bomb sheets (3 calibrations + 3 combustions each), distinct run ids."""
    root = tmp_path_factory.mktemp("sheets")
    out = {}
    for name, seed in (("A", 21), ("B", 22)):
        folder = root / name
        simulate_scenario("bomb", folder, runs=3, seed=seed)
        sheet = folder / "runs.csv"
        text = sheet.read_text()
        for k in (1, 2, 3):
            text = text.replace(f"cal-0{k},", f"cal-{name}{k},").replace(
                f"sample-0{k},", f"sample-{name}{k},")
        sheet.write_text(text)
        out[name] = sheet
    return out


@pytest.fixture(scope="module")
def base(sheets, tmp_path_factory):
    path = tmp_path_factory.mktemp("base") / "book.sqlite"
    with open_labbook(path, create=True, user="ana") as book:
        book.add_sheet(sheets["A"])
        book.add_sheet(sheets["B"])
    return path


@pytest.fixture
def book_path(base, tmp_path):
    path = tmp_path / "book.sqlite"
    shutil.copy(base, path)
    return path


def run_cli(capsys, *argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def _results(path):
    """(type, key) → stored JSON of every current result."""
    with open_labbook(path) as book:
        rows = book.connection.execute(
            "SELECT res.type, res.key, res.json FROM results res JOIN current_reductions red"
            " ON red.id = res.reduction_id").fetchall()
    return {(t, k): json.loads(j) for t, k, j in rows}


def test_amend_records_a_version_with_history_and_diff(book_path, capsys):
    code, out, err = run_cli(capsys, "labbook", "amend", "sample-A2", "--set", "mass_g=0.9",
                             "--set", "fuse_burnt_cm=7.0", "--reason", "balance slip",
                             "--labbook", book_path, "--user", "ben")
    assert code == 0, err
    assert "version 2" in out
    assert "mass_g" in out
    code, out, err = run_cli(capsys, "labbook", "history", "sample-A2", "--labbook", book_path,
                             "--json")
    assert code == 0, err
    hist = json.loads(out)
    v1, v2 = hist["versions"]
    assert (v1["version"], v1["created_by"]) == (1, "ana")
    assert (v2["version"], v2["created_by"], v2["reason"]) == (2, "ben", "balance slip")
    assert v2["changes"]["mass_g"][1] == "0.9"
    assert v2["changes"]["fuse_burnt_cm"] == ["8.0", "7.0"]
    # both versions' results stay readable; the massic energy follows the mass (J/g ∝ 1/m
    # for the sample energy, ε ΔT − corrections, which barely moves with 1 cm of fuse)
    m1 = v1["result"]["massic_energy_J_per_g"]
    m2 = v2["result"]["massic_energy_J_per_g"]
    mass_1 = float(v2["changes"]["mass_g"][0])
    assert m2 / m1 == pytest.approx(mass_1 / 0.9, rel=2e-3)
    assert [e["action"] for e in hist["entries"]][-1] == "amend"
    code, out, _ = run_cli(capsys, "labbook", "history", "sample-A2", "--labbook", book_path)
    assert "version 1 → 2:" in out
    assert "fuse_burnt_cm: 8.0 → 7.0" in out
    with open_labbook(book_path) as book:
        (run,) = [r for r in book.runs() if r["run"] == "sample-A2"]
        assert (run["state"], run["version"]) == ("recorded", 2)
        assert book.verify().ok
        report = book.recompute()
    assert report.agree, report.differences[:3]
    assert report.reductions == 3  # sheet A v1 and v2, sheet B v1: every version recomputed


def test_amending_a_calibration_changes_epsilon_and_its_samples_and_nothing_else(
        book_path):
    before = _results(book_path)
    cal = before[("run", "cal-A1")]
    mass = cal["details"]["mass_vacuum_g"]
    with open_labbook(book_path, user="ben") as book:
        res = book.amend("cal-A1", {"mass_g": f"{mass + 0.0010:.4f}"},
                         reason="mass re-weighed")
    after = _results(book_path)
    assert set(res.also_changed) == {"sample-A1", "sample-A2", "sample-A3"}
    new_cal = after[("run", "cal-A1")]
    # the rise is a property of the log, not of the mass
    assert new_cal["corrected_rise_K"] == cal["corrected_rise_K"]
    # ε of the run: certified energy m·Δu_cert·f over ΔT_c; 1 mg more benzoic acid adds
    # 1e-3 g × 26434 J/g (certificate value, common practice) × f / ΔT_c
    det = cal["details"]
    expected = 0.0010 * det["certified_J_per_g"] * det["certificate_condition_factor"] / \
        cal["corrected_rise_K"]
    assert new_cal["energy_equivalent_J_per_K"] - cal["energy_equivalent_J_per_K"] == \
        pytest.approx(expected, rel=2e-3)
    # the series mean and every sample of sheet A follow; ε enters linearly
    eps0 = before[("calibration", cal["calorimeter"])]
    eps1 = after[("calibration", cal["calorimeter"])]
    assert eps1["energy_equivalent_J_per_K"] > eps0["energy_equivalent_J_per_K"]
    for k in (1, 2, 3):
        old, new = before[("run", f"sample-A{k}")], after[("run", f"sample-A{k}")]
        assert old["corrected_rise_K"] == new["corrected_rise_K"]
        assert new["massic_energy_J_per_g"] < old["massic_energy_J_per_g"]  # more negative
    # nothing of sheet B changed, nor the other calibration runs of sheet A
    for key, value in before.items():
        if key[1].startswith(("cal-B", "sample-B")) or key in (("run", "cal-A2"),
                                                                 ("run", "cal-A3")):
            assert after[key] == value, key


def test_a_moved_period_boundary_is_used_and_reported_as_amended(book_path, tmp_path):
    before = _results(book_path)[("run", "sample-B1")]
    end = before["periods"]["main_end_s"]
    assert before["periods"]["main_end_source"] == "detected"
    with open_labbook(book_path, user="ben") as book:
        book.amend("sample-B1", {"main_end_s": f"{end + 60:g}"}, reason="end judged later")
        reduction = book.reduction(Filters(sample=before["sample"]))
        book.reduction()
    after = _results(book_path)[("run", "sample-B1")]
    assert after["periods"]["main_end_s"] == pytest.approx(end + 60, abs=1e-9)
    assert after["periods"]["main_end_source"] == "given"
    # a dense log's rise hardly depends on where the after period starts (a few ppm)
    assert after["corrected_rise_K"] == pytest.approx(before["corrected_rise_K"], rel=1e-4)
    assert reduction.review["sample-B1"]["version"] == 2
    from calwork.report import write_workbook

    path = write_workbook(reduction, tmp_path / "review.xlsx", include_readings=False)
    rows = list(openpyxl.load_workbook(path)["Review"].iter_rows(values_only=True))
    (row,) = [r for r in rows if r and r[0] == "sample-B1"]
    assert row[1:3] == ("recorded", 2)
    assert row[5] == "detected"
    assert row[6] == "amended (v2)"


def test_approval_rules(book_path):
    with open_labbook(book_path, user="ana") as ana, open_labbook(book_path,
                                                                  user="ben") as ben:
        ana.set_setting("four_eyes", "on", reason="accreditation")
        with pytest.raises(LabbookError, match="four-eyes"):
            ana.approve("cal-B1")  # ana recorded it
        ben.approve("cal-B1", note="periods checked", expect_version=1)
        assert ana.states(["cal-B1"])["cal-B1"].state == "approved"
        with pytest.raises(LabbookError, match="already approved"):
            ben.approve("cal-B1")
        # an amendment sends it back, and its author cannot approve the new version
        ben.amend("cal-B1", {"ignition_J": "1.5"}, reason="ignition energy per the manual")
        state = ana.states(["cal-B1"])["cal-B1"]
        assert (state.state, state.version) == ("recorded", 2)
        with pytest.raises(LabbookError, match="four-eyes"):
            ben.approve("cal-B1")
        with pytest.raises(LabbookError, match="not the current version"):
            ana.approve("cal-B1", expect_version=1)
        ana.approve("cal-B1", expect_version=2)
        # approving a sample, then amending a calibration of its sheet: the approval lapses
        ben.approve("sample-B3")
        ana.amend("cal-B2", {"fuse_burnt_cm": "7.5"}, reason="fuse remnant re-measured")
        lapsed = ana.states(["sample-B3"])["sample-B3"]
        assert lapsed.state == "recorded"
        assert "changed since" in lapsed.approval_lapsed
        # a void run is neither approved nor approvable
        ana.void("sample-B2", reason="incomplete combustion")
        with pytest.raises(LabbookError, match="void"):
            ben.approve("sample-B2")
        listed = {r["run"]: r for r in ana.runs(Filters(state="approved"))}
        assert set(listed) == {"cal-B1"}
        assert listed["cal-B1"]["approved_by"] == "ana"
        assert ana.verify().ok
        assert ana.recompute().agree


def test_failed_run_cannot_be_approved_but_amended_back(book_path):
    with open_labbook(book_path, user="ben") as book:
        res = book.amend("sample-A3", {"fire_time_s": "1"}, reason="try an early firing")
        assert res.error  # one second into the record leaves no fore period
        with pytest.raises(LabbookError, match="failed run"):
            book.approve("sample-A3")
        book.amend("sample-A3", {"fire_time_s": ""}, reason="back to detection")
        versions = book.versions("sample-A3")
        assert [v["version"] for v in versions] == [1, 2, 3]
        assert versions[2]["result"]["massic_energy_J_per_g"] == pytest.approx(
            versions[0]["result"]["massic_energy_J_per_g"], rel=1e-12)


def test_void_and_restore(book_path, capsys):
    with open_labbook(book_path, user="ana") as book:
        n0 = book.calibrations()[0]["n_runs"]
        book.void("cal-A3", reason="misfire")
        assert [c["n_runs"] for c in book.calibrations() if c["first_run"] == "cal-A1"] == \
            [n0 - 1]
        with pytest.raises(LabbookError, match="restore it"):
            book.amend("cal-A3", {"mass_g": "1.0"}, reason="x")
    code, _out, err = run_cli(capsys, "labbook", "restore", "cal-A3", "--reason",
                             "misfire was in another run", "--labbook", book_path)
    assert code == 0, err
    with open_labbook(book_path) as book:
        assert book.states(["cal-A3"])["cal-A3"].state == "recorded"
        assert [c["n_runs"] for c in book.calibrations() if c["first_run"] == "cal-A1"] == [n0]
        with pytest.raises(LabbookError, match="not void"):
            book.restore("cal-A3", reason="again")
        assert book.verify().ok
    code, _, err = run_cli(capsys, "labbook", "restore", "cal-A3", "--reason", "again",
                           "--labbook", book_path)
    assert code == 2
    assert err.count("\n") == 1
    assert "not void" in err


@pytest.mark.parametrize(("cell", "message"), [
    ("mass_g=981", "looks like mg"),
    ("o2_pressure_MPa=30.4", "bar"),
    ("colour=blue", "not a run-sheet column"),
    ("run=other", "cannot be amended"),
    ("rise_method=guess", "unknown rise method"),
    ("fire_time_s=ten", "fire_time_s"),
    ("mass_g", "COLUMN=VALUE"),
])
def test_bad_amendments_get_one_line_and_change_nothing(book_path, capsys, cell, message):
    with open_labbook(book_path) as book:
        head = book.audit_log()[-1].hash
    code, _, err = run_cli(capsys, "labbook", "amend", "sample-A1", "--set", cell, "--reason",
                           "r", "--labbook", book_path)
    assert code == 2
    assert err.count("\n") == 1, err
    assert message in err, err
    with open_labbook(book_path) as book:
        assert book.audit_log()[-1].hash == head


def test_amend_needs_a_reason_and_a_change(book_path):
    with open_labbook(book_path) as book:
        with pytest.raises(LabbookError, match="reason"):
            book.amend("sample-A1", {"mass_g": "0.9"}, reason="  ")
        mass = book.show("sample-A1")["sheet"]["row"]["mass_g"]
        with pytest.raises(LabbookError, match="changes nothing"):
            book.amend("sample-A1", {"mass_g": str(mass)}, reason="same")
        with pytest.raises(SheetError):
            book.amend("sample-A1", {"kind": "calibration"}, reason="x")


def test_add_amend_records_each_changed_row(book_path, sheets, tmp_path, capsys):
    folder = tmp_path / "corrected"
    shutil.copytree(sheets["A"].parent, folder)
    sheet = folder / "runs.csv"
    lines = sheet.read_text().splitlines()
    header = lines[0].split(",")
    col = header.index("mass_g")
    for i, line in enumerate(lines):
        cells = line.split(",")
        if cells[0] == "sample-A1":
            cells[col] = "0.8765"
            lines[i] = ",".join(cells)
    sheet.write_text("\n".join(lines) + "\n")
    code, _, err = run_cli(capsys, "labbook", "add", sheet, "--labbook", book_path)
    assert code == 2
    assert "--amend" in err
    code, out, err = run_cli(capsys, "labbook", "add", sheet, "--amend", "--reason",
                             "balance print-out", "--labbook", book_path, "--json")
    assert code == 0, err
    (amended,) = json.loads(out)["amended"]
    assert amended["run"] == "sample-A1"
    assert amended["version"] == 2
    assert amended["changes"]["mass_g"]["to"] == "0.8765"
    code, out, _ = run_cli(capsys, "labbook", "add", sheet, "--amend", "--reason", "again",
                           "--labbook", book_path)
    assert code == 0
    assert "Nothing amended" in out
    # a new run id, or a different log, is not an amendment
    (folder / "runs.csv").write_text(sheet.read_text().replace("sample-A2,", "sample-A9,"))
    code, _, err = run_cli(capsys, "labbook", "add", sheet, "--amend", "--reason", "x",
                           "--labbook", book_path)
    assert code == 2
    assert "not on record" in err
    log = folder / "sample-03.csv"  # the log of run sample-A3
    log.write_bytes(log.read_bytes() + b"\n")
    sheet.write_text(sheet.read_text().replace("sample-A9,", "sample-A2,"))
    code, _, err = run_cli(capsys, "labbook", "add", sheet, "--amend", "--reason", "x",
                           "--labbook", book_path)
    assert code == 2
    assert "new log is a new run" in err


def _tampered(src, dst, table, statement):
    shutil.copy(src, dst)
    conn = sqlite3.connect(dst)
    for (name,) in conn.execute("SELECT name FROM sqlite_master WHERE type = 'trigger' AND"
                                " tbl_name = ?", (table,)).fetchall():
        conn.execute(f"DROP TRIGGER {name}")
    conn.execute(statement)
    conn.commit()
    conn.close()
    with open_labbook(dst) as book:
        return book.verify().problems


@pytest.mark.parametrize(("table", "statement", "named"), [
    ("run_events", ("UPDATE run_events SET fields_json = replace(fields_json, '0.9', '0.8')"
     " WHERE action = 'amend'"), "amend of run 'sample-A1'"),
    ("run_events", "UPDATE run_events SET version = 5 WHERE action = 'amend'",
     "amend of run 'sample-A1'"),
    ("run_events", "UPDATE run_events SET result_sha256 = 'x' WHERE action = 'approve'",
     "approve of run 'cal-A1'"),
    ("run_events", "UPDATE run_events SET user = 'eve' WHERE action = 'approve'",
     "approve of run 'cal-A1'"),
    ("run_events", "DELETE FROM run_events WHERE action = 'approve'",
     "no run event row holds it"),
    ("settings", "UPDATE settings SET value = 'off'", "settings row"),
    ("reductions", "DELETE FROM reductions WHERE id = (SELECT MAX(id) FROM reductions)",
     "amend run:sample-A1): the reduction it recorded"),
])
def test_editing_any_version_approval_or_setting_is_named_by_verify(
        book_path, tmp_path, table, statement, named):
    with open_labbook(book_path, user="ana") as ana, open_labbook(book_path,
                                                                  user="ben") as ben:
        ana.set_setting("four_eyes", "on")
        ben.approve("cal-A1")
        ana.amend("sample-A1", {"mass_g": "0.9"}, reason="typo")
        assert ana.verify().ok
    problems = _tampered(book_path, tmp_path / "t.sqlite", table, statement)
    assert any(named in p for p in problems), problems


def _v2_labbook(path, sheet):
    """A schema-2 lab book (as calwork wrote them before the run life cycle) with a sheet and
    one void run, built with the version-2 schema and the version-2 way of voiding."""
    from calwork.labbook import audit

    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA journal_mode = WAL")
    conn.execute("BEGIN IMMEDIATE")
    conn.execute(f"PRAGMA application_id = {schema_mod.APPLICATION_ID}")
    schema_mod.migrate(conn, 0, 2)
    conn.execute("INSERT INTO meta VALUES ('magic', ?)", (schema_mod.MAGIC,))
    audit.append(conn, user="old", action="create", obj="labbook",
                 details={"schema_version": 2})
    conn.execute("COMMIT")
    add_sheet(conn, path, sheet, method="newton-fit", user="old")
    sheet_id = 1
    active = [r for (r,) in conn.execute("SELECT run FROM runs WHERE run != 'sample-A2'"
                                         " ORDER BY id")]
    reduced = reduce_stored(conn, sheet_id, active, method="newton-fit", full_sheet=False)
    conn.execute("BEGIN IMMEDIATE")
    run_ids = dict(conn.execute("SELECT run, id FROM runs"))
    now = audit.utc_now()
    red_id, digest = insert_reduction(conn, sheet_id, 2, reduced, run_ids, now, "old")
    entry = audit.append(conn, user="old", action="void", obj="run:sample-A2",
                         reason="leak", ts_utc=now,
                         details={"run": "sample-A2", "sheet": sheet_id, "reduction": red_id,
                                  "version": 2, "active_runs": active,
                                  "results_sha256": digest,
                                  "results_meta_sha256": results_meta_digest(conn, red_id)})
    conn.execute("INSERT INTO run_voids VALUES (?, 'leak', ?, 'old', ?)",
                 (run_ids["sample-A2"], now, entry.id))
    conn.execute("PRAGMA user_version = 2")
    conn.execute("COMMIT")
    conn.close()


def test_a_schema_2_labbook_migrates_and_verifies(sheets, tmp_path):
    path = tmp_path / "v2.sqlite"
    _v2_labbook(path, sheets["A"])
    with open_labbook(path, user="migrator") as book:
        conn = book.connection
        assert conn.execute("PRAGMA user_version").fetchone()[0] == 3
        assert book.audit_log()[-1].action == "migrate"
        report = book.verify()
        assert report.ok, report.problems
        state = book.states(["sample-A2"])["sample-A2"]
        assert (state.state, state.void_reason, state.voided_by) == ("void", "leak", "old")
        assert not conn.execute("SELECT 1 FROM sqlite_master WHERE name = 'run_voids'"
                                ).fetchone()
        book.restore("sample-A2", reason="the leak was in the next run")
        book.amend("sample-A2", {"fuse_burnt_cm": "7"}, reason="remnant")
        assert book.verify().ok
        assert book.recompute().agree


# --- crash safety on real processes ---------------------------------------------------------
def _cli(book, *argv, **env):
    import os
    import subprocess
    import sys

    full = {**os.environ, "CALWORK_USER": "crash-test", **env}
    return subprocess.Popen([sys.executable, "-m", "calwork.cli.main", "labbook", *argv,
                             "--labbook", str(book)], env=full, stdout=subprocess.PIPE,
                            stderr=subprocess.PIPE, text=True)


def _snapshot(path):
    with open_labbook(path) as book:
        report = book.verify()
        assert report.ok, report.problems
        return (book.counts(), book.audit_log()[-1].hash,
                {r: s.to_dict() for r, s in book.states().items()})


_AMEND = ("amend", "sample-A1", "--set", "mass_g=0.9", "--reason", "typo")
_APPROVE = ("approve", "cal-A1", "--user", "ben")


@pytest.mark.parametrize(("argv", "steps", "done"), [
    (_AMEND, ("amend-results", "amend-audit", "amend-commit"), "amend-committed"),
    (_APPROVE, ("approve-audit", "approve-commit"), "approve-committed"),
])
def test_a_crash_inside_amend_or_approve_leaves_the_labbook_as_before(
        base, tmp_path, argv, steps, done):
    before = _snapshot(base)
    books = {}
    for step in (*steps, done):
        books[step] = tmp_path / f"{step}.sqlite"
        shutil.copy(base, books[step])
    procs = {step: _cli(books[step], *argv, CALWORK_TEST_CRASH_AFTER=step) for step in books}
    for step, proc in procs.items():
        _, err = proc.communicate(timeout=120)
        assert proc.returncode == 86, (step, err)  # stopped by the hook, not by an error
    for step in steps:
        assert _snapshot(books[step]) == before, step
    counts, _head, states = _snapshot(books[done])  # just after COMMIT: all of it
    assert counts["run_events"] == before[0]["run_events"] + 1
    run = argv[1]
    assert states[run] != before[2][run]


@pytest.mark.parametrize("argv", [_AMEND, _APPROVE], ids=["amend", "approve"])
def test_sigkill_during_amend_or_approve_never_half_writes(base, tmp_path, argv):
    import signal
    import time

    import numpy as np

    before = _snapshot(base)
    ref = tmp_path / "ref.sqlite"
    shutil.copy(base, ref)
    start = time.perf_counter()
    proc = _cli(ref, *argv)
    _, err = proc.communicate(timeout=120)
    elapsed = time.perf_counter() - start
    assert proc.returncode == 0, err
    after = _snapshot(ref)
    rng = np.random.default_rng(20261204)
    for i, fraction in enumerate(rng.uniform(0.3, 1.05, size=3)):
        path = tmp_path / f"kill{i}.sqlite"
        shutil.copy(base, path)
        proc = _cli(path, *argv)
        time.sleep(fraction * elapsed)
        proc.send_signal(signal.SIGKILL)
        proc.communicate(timeout=60)
        counts, _head, states = _snapshot(path)  # verifies
        if (counts, states) != (before[0], before[2]):  # committed before the kill: all of it
            assert counts == after[0], (i, counts)
            same = ("state", "version", "overrides", "approved_by")
            assert [states[argv[1]][k] for k in same] == \
                [after[2][argv[1]][k] for k in same]


def test_two_users_amending_one_sheet_at_once_equal_doing_it_in_sequence(base, tmp_path):
    a, b = ("amend", "cal-A1", "--set", "fuse_burnt_cm=7.2", "--reason", "remnant"), \
        ("amend", "cal-A2", "--set", "ignition_J=1.4", "--reason", "per the manual")
    seq = tmp_path / "seq.sqlite"
    shutil.copy(base, seq)
    for argv in (a, b):
        proc = _cli(seq, *argv)
        _, err = proc.communicate(timeout=120)
        assert proc.returncode == 0, err
    for attempt in range(2):
        both = tmp_path / f"both{attempt}.sqlite"
        shutil.copy(base, both)
        procs = [_cli(both, *a), _cli(both, *b)]
        codes = [(p.wait(timeout=180), p.communicate()[1]) for p in procs]
        for code, err in codes:
            assert code == 0 or (code == 2 and "busy" in err), err
        if all(code == 0 for code, _ in codes):
            break
    assert all(code == 0 for code, _ in codes), codes
    with open_labbook(both) as book:
        assert book.verify().ok
    strip = {"provenance"}
    got, want = _results(both), _results(seq)
    assert got.keys() == want.keys()
    for key in want:
        assert {k: v for k, v in got[key].items() if k not in strip} == \
            {k: v for k, v in want[key].items() if k not in strip}, key


@pytest.mark.parametrize("argv", [
    ("amend", "no-such-run", "--set", "mass_g=1", "--reason", "r"),
    ("approve", "no-such-run"),
    ("restore", "no-such-run", "--reason", "r"),
    ("approve", "cal-A1"),  # the second approval of the same version
    ("amend", "sample-A2", "--set", "mass_g=0.9", "--reason", "r"),  # a void run
    ("approve", "cal-A1", "--version", "0"),
])
def test_bad_lifecycle_commands_get_one_line_and_write_nothing(book_path, capsys, argv):
    with open_labbook(book_path, user="ben") as book:
        book.approve("cal-A1")
        book.void("sample-A2", reason="leak")
        head = book.audit_log()[-1].hash
    code, out, err = run_cli(capsys, "labbook", *argv, "--labbook", book_path)
    assert code == 2, out
    assert err.count("\n") == 1, err
    assert "Traceback" not in err
    with open_labbook(book_path) as book:
        assert book.audit_log()[-1].hash == head
