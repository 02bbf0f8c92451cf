"""Benchmark of the lab book: ``add`` and ``recompute`` rates, and size per run.

    python tests/benchmarks/bench_labbook.py            # 10,000 runs (100 sheets of 100)
    python tests/benchmarks/bench_labbook.py --quick    # 1,000 runs (10 sheets of 100)

One simulated sheet of 100 runs (50 benzoic-acid calibrations, 50 combustions; calwork's
simulator) is generated once; every benchmark sheet is a folder holding hard links to the same
logs and a run sheet with its own run ids and dates. Because blobs are content-addressed, the
shared logs are stored once: the size figures are therefore given both as measured and as
projected for a lab book in which every log is different (compressed log + per-run records).

Also: amending one calibration run (its sheet re-reduced, the series and samples follow)
and approving it, in the full lab book.

Goals: recompute >= 100 runs/s; lab book < 1.5x the raw log bytes.
"""

from __future__ import annotations

import argparse
import csv
import os
import shutil
import sys
import tempfile
import time
from datetime import date, timedelta
from pathlib import Path

from calwork.labbook import open_labbook
from calwork.report.views import describe
from calwork.simulation import simulate_scenario

RUNS_PER_SHEET = 100


def _make_sheets(root: Path, n_sheets: int) -> tuple[list[Path], int]:
    template = root / "template"
    simulate_scenario("bomb", template, runs=RUNS_PER_SHEET // 2, seed=1)
    with (template / "runs.csv").open(newline="") as fh:
        rows = list(csv.DictReader(fh))
    logs = sorted(p for p in template.iterdir() if p.name != "runs.csv")
    raw_per_sheet = sum(p.stat().st_size for p in logs)
    sheets = []
    for s in range(n_sheets):
        folder = root / f"sheet-{s:03d}"
        folder.mkdir()
        for log in logs:
            try:
                os.link(log, folder / log.name)
            except OSError:  # no hard links here: copy
                shutil.copy(log, folder / log.name)
        start = date(2025, 1, 1) + timedelta(days=3 * s)
        with (folder / "runs.csv").open("w", newline="") as fh:
            writer = csv.DictWriter(fh, fieldnames=list(rows[0]))
            writer.writeheader()
            for i, row in enumerate(rows):
                writer.writerow({**row, "run": f"s{s:03d}-{row['run']}",
                                 "date": (start + timedelta(days=i // 40)).isoformat()})
        sheets.append(folder / "runs.csv")
    return sheets, raw_per_sheet


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="1,000 runs instead of 10,000")
    parser.add_argument("--sheets", type=int, default=None, help="number of 100-run sheets")
    args = parser.parse_args(argv)
    n_sheets = args.sheets or (10 if args.quick else 100)
    n_runs = n_sheets * RUNS_PER_SHEET
    root = Path(tempfile.mkdtemp(prefix="bench-labbook-"))
    try:
        t0 = time.perf_counter()
        sheets, raw_per_sheet = _make_sheets(root, n_sheets)
        print(f"generated {RUNS_PER_SHEET} simulated logs once "
              f"({raw_per_sheet / RUNS_PER_SHEET / 1024:.1f} KiB each) and {n_sheets} sheets "
              f"in {time.perf_counter() - t0:.1f} s")
        path = root / "book.sqlite"
        with open_labbook(path, create=True, user="bench") as book:
            t0 = time.perf_counter()
            for i, sheet in enumerate(sheets, 1):
                result = book.add_sheet(sheet)
                assert not result.failed, result.failed
                if i % max(1, n_sheets // 10) == 0:
                    rate = i * RUNS_PER_SHEET / (time.perf_counter() - t0)
                    print(f"  added {i * RUNS_PER_SHEET} runs ({rate:.0f} runs/s)", flush=True)
            t_add = time.perf_counter() - t0
            t0 = time.perf_counter()
            report = book.recompute()
            t_rec = time.perf_counter() - t0
            assert report.agree, describe(report)
            t0 = time.perf_counter()
            ok = book.verify().ok
            t_ver = time.perf_counter() - t0
            t0 = time.perf_counter()
            n_listed = len(book.runs())
            points, _ = book.calibration_series("sim-bomb-1")
            t_list = time.perf_counter() - t0
            blob_raw, blob_stored, n_blobs = book.connection.execute(
                "SELECT SUM(size), SUM(length(data)), COUNT(*) FROM blobs").fetchone()
            n_logs = book.connection.execute(
                "SELECT COUNT(*) FROM blobs b WHERE EXISTS (SELECT 1 FROM files f"
                " WHERE f.sha256 = b.sha256 AND f.role = 'log')").fetchone()[0]
            log_stored = book.connection.execute(
                "SELECT SUM(length(b.data)) FROM blobs b WHERE EXISTS (SELECT 1 FROM files f"
                " WHERE f.sha256 = b.sha256 AND f.role = 'log')").fetchone()[0]
            run = f"s{n_sheets // 2:03d}-cal-01"
            mass = book.show(run)["sheet"]["row"]["mass_g"]
            t0 = time.perf_counter()
            amended = book.amend(run, {"mass_g": f"{mass + 0.0005:.4f}"}, reason="benchmark")
            t_amend = time.perf_counter() - t0
            n_sheet = book.connection.execute(
                "SELECT COUNT(*) FROM runs r JOIN runs q ON q.sheet_id = r.sheet_id"
                " WHERE r.run = ?", (run,)).fetchone()[0]
            t0 = time.perf_counter()
            book.approve(run, expect_version=2)
            t_approve = time.perf_counter() - t0
            book.connection.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        size = path.stat().st_size
        raw_logs = raw_per_sheet * n_sheets  # raw log bytes referenced by the runs
        per_run_other = (size - blob_stored) / n_runs
        log_per_run = log_stored / n_logs
        raw_per_run = raw_per_sheet / RUNS_PER_SHEET
        print(f"\nlabbook add: {n_runs} runs in {t_add:.1f} s = {n_runs / t_add:.0f} runs/s "
              "(import, reduce, store)")
        print(f"recompute:   {report.runs} runs in {t_rec:.1f} s = {report.runs / t_rec:.0f} "
              f"runs/s ({report.numbers} numbers compared; all agree)")
        print(f"verify:      {t_ver:.1f} s ({'ok' if ok else 'FAILED'}); list of {n_listed} "
              f"runs + QA series of {len(points)} calibrations: {t_list:.2f} s")
        print(f"amend:       one calibration run of a {n_runs}-run lab book in {t_amend:.2f} s "
              f"({n_sheet} runs of its sheet re-reduced, {1 + len(amended.also_changed)} "
              f"results changed); approve {t_approve * 1e3:.0f} ms")
        print(f"lab book:    {size / 1e6:.1f} MB = {size / n_runs / 1024:.2f} KiB per run; "
              f"raw log bytes {raw_logs / 1e6:.1f} MB = {raw_per_run / 1024:.2f} KiB per run "
              f"-> {size / raw_logs:.3f}x as measured (shared logs stored once: "
              f"{n_blobs} blobs, {blob_raw / 1e6:.2f} MB raw, {blob_stored / 1e6:.2f} MB stored)")
        print(f"projected, every log distinct: {log_per_run / 1024:.2f} KiB compressed log + "
              f"{per_run_other / 1024:.2f} KiB records per run = "
              f"{(log_per_run + per_run_other) / raw_per_run:.3f}x the raw log bytes")
    finally:
        shutil.rmtree(root, ignore_errors=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
