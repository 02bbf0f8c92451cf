"""Crash safety and concurrency of the lab book, on real processes.

A ``calwork labbook add`` is stopped inside its transaction (the ``CALWORK_TEST_CRASH_AFTER``
hook makes the process ``os._exit`` at a named step) or killed with SIGKILL at seeded random
moments; afterwards the lab book must verify and hold exactly what it held before (or, once
the commit happened, exactly the complete sheet). Two processes adding at the same time both
succeed, and a writer that cannot get the lock within its busy timeout fails with a clear
"busy, retry" error and changes nothing.
"""

from __future__ import annotations

import os
import shutil
import signal
import sqlite3
import subprocess
import sys
import time

import numpy as np
import pytest

from calwork.labbook import open_labbook
from calwork.simulation import simulate_scenario

pytestmark = pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="needs POSIX signals")


@pytest.fixture(scope="module")
def sheets(tmp_path_factory):
    """Three small simulated sheets (calibration + combustion each) with distinct run ids."""
    root = tmp_path_factory.mktemp("sheets")
    out = {}
    for name, seed in (("A", 1), ("B", 2), ("C", 3)):
        folder = root / name
        simulate_scenario("bomb", folder, runs=1, seed=seed)
        sheet = folder / "runs.csv"
        text = sheet.read_text()
        sheet.write_text(text.replace("cal-01,", f"cal-{name},")
                         .replace("sample-01,", f"sample-{name},"))
        out[name] = sheet
    return out


@pytest.fixture(scope="module")
def base_book(sheets, tmp_path_factory):
    """A lab book holding sheet A (closed, so it is a single checkpointed file)."""
    path = tmp_path_factory.mktemp("base") / "book.sqlite"
    with open_labbook(path, create=True, user="setup") as book:
        book.add_sheet(sheets["A"])
    return path


def _state(path):
    with open_labbook(path) as book:
        report = book.verify()
        counts = book.counts()
        head = book.audit_log()[-1].hash
        blobs = {h for (h,) in book.connection.execute("SELECT sha256 FROM blobs")}
    assert report.ok, report.problems
    return counts, head, blobs


def _add(sheet, book, **env):
    full = {**os.environ, "CALWORK_USER": "crash-test", **env}
    return subprocess.Popen(
        [sys.executable, "-m", "calwork.cli.main", "labbook", "add", str(sheet),
         "--labbook", str(book)],
        env=full, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _copy(base, folder, name):
    path = folder / f"{name}.sqlite"
    shutil.copy(base, path)
    return path


@pytest.fixture(scope="module")
def reference(base_book, sheets, tmp_path_factory):
    """State before adding sheet B, state after a complete add, and the add's wall time."""
    folder = tmp_path_factory.mktemp("ref")
    before = _state(base_book)
    path = _copy(base_book, folder, "complete")
    start = time.perf_counter()
    proc = _add(sheets["B"], path)
    _out, err = proc.communicate(timeout=120)
    elapsed = time.perf_counter() - start
    assert proc.returncode == 0, err
    return before, _state(path), elapsed


#: Hook steps inside the transaction (after the blobs, the runs, the audit entry; just before
#: COMMIT); "committed" is just after it.
STEPS = ("blobs", "runs", "audit", "commit")


def test_crash_inside_the_transaction_leaves_the_labbook_as_before(
        base_book, sheets, reference, tmp_path):
    before, after, _ = reference
    books = {step: _copy(base_book, tmp_path, step) for step in (*STEPS, "committed")}
    procs = {step: _add(sheets["B"], books[step], CALWORK_TEST_CRASH_AFTER=step)
             for step in books}
    for step, proc in procs.items():
        _, err = proc.communicate(timeout=120)
        assert proc.returncode == 86, (step, err)  # stopped by the hook, not by an error
    for step in STEPS:
        assert _state(books[step]) == before, step
    # a crash just after COMMIT keeps the whole sheet
    counts, _, blobs = _state(books["committed"])
    assert counts == after[0]
    assert blobs == after[2]


def test_sigkill_at_random_moments_never_half_writes(base_book, sheets, reference, tmp_path):
    before, after, elapsed = reference
    rng = np.random.default_rng(20240501)
    for i, fraction in enumerate(rng.uniform(0.4, 1.05, size=3)):
        path = _copy(base_book, tmp_path, f"kill{i}")
        proc = _add(sheets["B"], path)
        time.sleep(fraction * elapsed)
        proc.send_signal(signal.SIGKILL)
        proc.communicate(timeout=60)
        counts, head, blobs = _state(path)  # verifies
        if (counts, head, blobs) != before:  # the add committed before the kill: all of it
            assert counts == after[0], (i, counts)
            assert blobs == after[2]


def test_two_processes_adding_at_once_both_succeed(base_book, sheets, tmp_path):
    path = _copy(base_book, tmp_path, "concurrent")
    procs = [_add(sheets[name], path) for name in ("B", "C")]
    results = [p.communicate(timeout=120) for p in procs]
    for proc, (out, err) in zip(procs, results, strict=True):
        assert proc.returncode == 0, err
        assert "recorded sheet #" in out
    with open_labbook(path) as book:
        assert book.verify().ok
        assert {r["run"] for r in book.runs()} == {
            "cal-A", "sample-A", "cal-B", "sample-B", "cal-C", "sample-C"}
        assert [e.action for e in book.audit_log()] == ["create", "add", "add", "add"]


def test_a_writer_that_cannot_get_the_lock_gets_busy_and_changes_nothing(
        base_book, sheets, tmp_path):
    path = _copy(base_book, tmp_path, "busy")
    before = _state(path)
    holder = sqlite3.connect(path, isolation_level=None)
    holder.execute("BEGIN IMMEDIATE")  # another writer holds the lock
    try:
        proc = _add(sheets["B"], path, CALWORK_LABBOOK_TIMEOUT="0.5")
        _out, err = proc.communicate(timeout=120)
    finally:
        holder.execute("ROLLBACK")
        holder.close()
    assert proc.returncode == 2
    assert err.count("\n") == 1
    assert "busy" in err
    assert "retry" in err
    assert _state(path) == before
