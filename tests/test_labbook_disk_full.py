"""A full disk never locks users out of an intact lab book, and a write on a full disk fails
cleanly with nothing changed.

The disk is filled with a real process limit (RLIMIT_FSIZE: writes beyond the limit fail with
EFBIG, as on a full file system), so the test runs without mounting a small tmpfs.
"""

from __future__ import annotations

import csv
import os
import subprocess
import sys
import textwrap

import pytest
from conftest import copy_sample_runs

from calwork.cli.main import main

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="POSIX resource limits")


@pytest.fixture
def sheets(tmp_path):
    copy_sample_runs(tmp_path / "runs")
    with (tmp_path / "runs" / "runs.csv").open(encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    bomb = [r for r in rows if r["kind"] in ("calibration", "combustion")]
    first, second = bomb[:8], bomb[8:]
    out = []
    for name, part in (("first.csv", first), ("second.csv", second)):
        path = tmp_path / "runs" / name
        with path.open("w", newline="", encoding="utf-8") as fh:
            w = csv.DictWriter(fh, fieldnames=list(rows[0]))
            w.writeheader()
            w.writerows(part)
        out.append(path)
    return out


def _run_limited(args: list[str], limit_bytes: int, cwd) -> subprocess.CompletedProcess:
    code = textwrap.dedent(f"""
        import resource, signal, sys
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # EFBIG instead of a kill, as ENOSPC
        resource.setrlimit(resource.RLIMIT_FSIZE, ({limit_bytes}, {limit_bytes}))
        from calwork.cli.main import main
        sys.exit(main({args!r}))
    """)
    return subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          cwd=cwd, timeout=300, check=False)


def test_full_disk_during_checkpoint_does_not_lock_users_out(sheets, tmp_path, capsys):
    book = tmp_path / "lab.sqlite"
    assert main(["labbook", "add", str(sheets[0]), "--labbook", str(book)]) == 0
    size = book.stat().st_size
    # below the main file's size: the commit (appended to the WAL) succeeds, the checkpoint
    # that copies pages back into the main file stops part-way
    res = _run_limited(["labbook", "add", str(sheets[1]), "--labbook", str(book)],
                       size - 4096, tmp_path)
    assert "Traceback" not in res.stderr
    capsys.readouterr()
    # whatever the second add achieved, the lab book opens, verifies and lists its runs
    assert main(["labbook", "verify", "--labbook", str(book)]) == 0
    assert main(["labbook", "list", "--labbook", str(book), "--json"]) == 0
    listed = capsys.readouterr().out
    with sheets[0].open(encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            assert row["run"] in listed


def test_a_write_on_a_full_disk_fails_cleanly(sheets, tmp_path, capsys):
    book = tmp_path / "lab.sqlite"
    assert main(["labbook", "add", str(sheets[0]), "--labbook", str(book)]) == 0
    # checkpoint now, so the limit below leaves no room for the second sheet's WAL frames
    assert main(["labbook", "verify", "--labbook", str(book)]) == 0
    capsys.readouterr()
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.name.startswith("lab")}
    # room for SQLite's 32 KiB shared-memory file, not for the new sheet's pages
    res = _run_limited(["labbook", "add", str(sheets[1]), "--labbook", str(book)], 40960,
                       tmp_path)
    assert res.returncode == 2
    assert "Traceback" not in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1
    assert "disk full" in res.stderr
    assert main(["labbook", "verify", "--labbook", str(book)]) == 0
    after = {p.name: p.read_bytes() for p in tmp_path.iterdir() if p.name.startswith("lab")}
    assert after.get("lab.sqlite") == before["lab.sqlite"]


def test_a_read_only_folder_is_read_not_written(sheets, tmp_path, capsys):
    if os.geteuid() == 0:
        pytest.skip("root ignores file permissions")
    book = tmp_path / "ro" / "lab.sqlite"
    book.parent.mkdir()
    assert main(["labbook", "add", str(sheets[0]), "--labbook", str(book)]) == 0
    book.parent.chmod(0o555)
    try:
        capsys.readouterr()
        assert main(["labbook", "list", "--labbook", str(book)]) == 0
        assert main(["labbook", "add", str(sheets[1]), "--labbook", str(book)]) == 2
        assert "read-only" in capsys.readouterr().err
    finally:
        book.parent.chmod(0o755)
