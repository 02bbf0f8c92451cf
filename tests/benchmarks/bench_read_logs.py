"""Benchmark: ``calwork.io.read_log`` against a bare ``pandas.read_csv`` of the same files.

Writes N logs of R rows (``time_s``, ``temperature_C`` with 6 decimals) into a temporary
folder, reads them all with ``read_log`` (sniffing, hashing, checks, Thermogram) and then with
``pandas.read_csv`` (the floor: parsing only), and prints files per second for both and their
ratio. Goal: ``read_log`` within 3x of the floor.

    python tests/benchmarks/bench_read_logs.py [--files N] [--rows R] [--quick]
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from calwork.core.thermogram import Thermogram
from calwork.io import read_log, write_log


def _make_logs(folder: Path, files: int, rows: int) -> list[Path]:
    rng = np.random.default_rng(20240501)
    t = np.arange(rows, dtype=float) * 1.0
    paths = []
    for k in range(files):
        # a smooth rise with seeded noise: fore period, exponential approach, after period
        T = 298.15 + 1.5 * (1.0 - np.exp(-np.clip(t - rows / 3, 0.0, None) / 120.0))
        T = T + 1e-5 * t / rows + rng.normal(0.0, 1e-4, rows)
        thermogram = Thermogram(time_s=t, temperature_K=T)
        path = folder / f"log_{k:04d}.csv"
        write_log(thermogram, path, digits=6, channels=False)
        paths.append(path)
    return paths


def _time(fn, paths: list[Path], repeats: int) -> float:
    best = float("inf")
    for _ in range(repeats):
        start = time.perf_counter()
        for p in paths:
            fn(p)
        best = min(best, time.perf_counter() - start)
    return best


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=1000, help="number of logs (default 1000)")
    parser.add_argument("--rows", type=int, default=3600, help="rows per log (default 3600)")
    parser.add_argument("--repeats", type=int, default=3, help="best of this many passes")
    parser.add_argument("--quick", action="store_true", help="100 files, 1 pass")
    args = parser.parse_args(argv)
    if args.quick:
        args.files, args.repeats = 100, 1
    with tempfile.TemporaryDirectory() as tmp:
        paths = _make_logs(Path(tmp), args.files, args.rows)
        # warm up imports and caches once
        read_log(paths[0])
        pd.read_csv(paths[0])
        t_floor = _time(pd.read_csv, paths, args.repeats)
        t_calwork = _time(read_log, paths, args.repeats)
    n = args.files
    print(f"logs: {n} files x {args.rows} rows (time_s, temperature_C, 6 decimals); "
          f"best of {args.repeats}")
    print(f"pandas.read_csv (floor): {n / t_floor:8.1f} files/s  ({1e3 * t_floor / n:.2f} ms/file)")
    print(f"calwork read_log:        {n / t_calwork:8.1f} files/s  "
          f"({1e3 * t_calwork / n:.2f} ms/file)")
    ratio = t_calwork / t_floor
    print(f"ratio read_log / floor:  {ratio:.2f}x  (goal <= 3x: {'met' if ratio <= 3 else 'NOT met'})")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
