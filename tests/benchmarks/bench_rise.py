"""Benchmark: corrected temperature rise (newton-fit with automatic period detection).

Usage::

    python tests/benchmarks/bench_rise.py [--quick] [--n N]

Simulates N thermograms of 3,600 readings each (the bundled bomb calorimeter, 1 s sampling,
a combustion at 600 s; invented data), writes them as CSV with
:func:`calwork.io.writers.write_log`, then times (on one core, in this process)

* reading all files with :func:`calwork.io.read_log`, and
* reducing every thermogram with :func:`calwork.rise.corrected_rise` (``newton-fit``,
  automatic detection of fore, main and after periods, full uncertainty and diagnostics),

and prints thermograms per second for both and their ratio. Goal: ≥ 200 thermograms/s for the
reduction. Then the sparse case: N simulated hand-read records (a reading each minute, 30 s
in the main period, 0.01 °C; 25 readings) reduced with their periods given — records per
second. ``--quick`` uses 100 thermograms. The figure depends on the machine and on what
else runs on it; the load average is printed with the result.
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import time
from pathlib import Path


def _simulate(n: int, folder: Path) -> list[Path]:
    from calwork.io.writers import write_log
    from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run

    params = CalorimeterParams.bomb_preset(sampling_interval_s=1.0)
    paths = []
    for i in range(n):
        energy = 24_000.0 + 4_000.0 * (i % 7) / 6.0
        run = simulate_run(params, CombustionPulse(energy_J=energy, fire_time_s=600.0),
                           duration_s=3599.0, seed=i)
        path = folder / f"run_{i:04d}.csv"
        write_log(run.thermogram, path, digits=7)
        paths.append(path)
    return paths


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="100 thermograms instead of 1,000")
    ap.add_argument("--n", type=int, default=None, help="number of thermograms")
    args = ap.parse_args(argv)
    n = args.n or (100 if args.quick else 1000)

    from calwork.io import read_log
    from calwork.rise import corrected_rise

    with tempfile.TemporaryDirectory(prefix="calwork-bench-rise-") as tmp:
        t0 = time.perf_counter()
        paths = _simulate(n, Path(tmp))
        t_sim = time.perf_counter() - t0

        t0 = time.perf_counter()
        thermograms = [read_log(p) for p in paths]
        t_read = time.perf_counter() - t0
    points = thermograms[0].n_points

    corrected_rise(thermograms[0])  # warm-up (imports, caches)
    t0 = time.perf_counter()
    results = [corrected_rise(th) for th in thermograms]
    t_rise = time.perf_counter() - t0

    warned = sum(1 for r in results if r.warnings)
    rate_rise = n / t_rise
    rate_read = n / t_read
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"thermograms: {n} of {points} readings (simulated in {t_sim:.1f} s)")
    print(f"read_log:        {rate_read:8.1f} thermograms/s ({1e3 * t_read / n:.2f} ms each)")
    print(f"corrected_rise:  {rate_rise:8.1f} thermograms/s ({1e3 * t_rise / n:.2f} ms each) "
          "[newton-fit, automatic periods]")
    print(f"reduce/read time ratio: {t_rise / t_read:.2f}")
    print(f"results with warnings: {warned}/{n}")
    print(f"goal >= 200 thermograms/s: {'met' if rate_rise >= 200 else 'NOT met'} "
          f"(load average {load:.2f} on {os.cpu_count()} CPUs)")
    _sparse(n)
    return 0


def _sparse(n: int) -> None:
    """Hand-read records with given periods (the sparse path)."""
    from calwork.rise import corrected_rise
    from calwork.simulation import CalorimeterParams, CombustionPulse
    from calwork.simulation.handread import hand_read_record, reading_times_s

    params = CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None)
    fire = 300.0
    times = reading_times_s(fire_time_s=fire, fore_readings=6, main_length_s=360.0,
                            after_readings=7, drift_interval_s=60.0, main_interval_s=30.0)
    records = [hand_read_record(params, CombustionPulse(energy_J=26434.0, fire_time_s=fire),
                                times, resolution_K=0.01, reading_noise_K=0.003,
                                seed=i).thermogram for i in range(n)]
    corrected_rise(records[0], fire_time_s=fire, main_end_s=fire + 360.0)  # warm-up
    t0 = time.perf_counter()
    for record in records:
        corrected_rise(record, fire_time_s=fire, main_end_s=fire + 360.0)
    t = time.perf_counter() - t0
    print(f"sparse records:  {n / t:8.1f} records/s ({1e3 * t / n:.2f} ms each) "
          f"[{times.size} hand-read readings, periods given]")


if __name__ == "__main__":
    sys.exit(main())
