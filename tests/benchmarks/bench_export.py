"""Benchmark: workbook export of 200 runs with all readings (3 600 per run) and charts.

Usage: ``python tests/benchmarks/bench_export.py [--quick]`` (``--quick``: 17 runs).
Prints the export time (s) and the file size (MB); goal < 15 s for 200 runs.
The reduction is hand-built from simulated logs (``tests/report_fixtures.py``).
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from report_fixtures import demo_reduction

from calwork.report import write_workbook


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="17 runs instead of 200")
    args = parser.parse_args(argv)
    n_runs = 20 if args.quick else 200
    n_cal = 20
    runs_per_sample = 6
    n_samples = (n_runs - n_cal) // runs_per_sample
    t0 = time.perf_counter()
    red = demo_reduction(n_calibrations=n_cal, n_samples=n_samples,
                         runs_per_sample=runs_per_sample, sampling_interval_s=1.0,
                         duration_s=3599.0) if not args.quick else demo_reduction(
        n_calibrations=5, n_samples=2, runs_per_sample=6, sampling_interval_s=1.0,
        duration_s=3599.0)
    t_build = time.perf_counter() - t0
    readings = sum(th.n_points for th in red.thermograms.values())
    with tempfile.TemporaryDirectory() as tmp:
        out = Path(tmp) / "bench.xlsx"
        t0 = time.perf_counter()
        write_workbook(red, out, include_readings=True, charts=True)
        t_export = time.perf_counter() - t0
        size_mb = out.stat().st_size / 1e6
        t0 = time.perf_counter()
        write_workbook(red, out, include_readings=False, charts=False)
        t_results = time.perf_counter() - t0
    print(f"runs: {len(red.runs)}  readings: {readings}  (reduction built in {t_build:.1f} s)")
    print(f"workbook with readings and charts: {t_export:.2f} s, {size_mb:.1f} MB")
    print(f"workbook without readings:         {t_results:.2f} s")
    print(f"goal < 15 s for 200 runs: {'met' if t_export < 15 or args.quick else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
