"""Benchmark: the solution chain on 1,000 simulated runs (calibration + reaction in one log).

Usage: ``python tests/benchmarks/bench_solution.py [--quick]`` (``--quick``: 100 runs).

Each log is 30 min at 2 s sampling (900 readings): an electrical calibration (50 mW,
300–600 s) and an endothermic first-order dissolution at 1000 s, made with calwork's
simulator (not timed). To keep the set-up short, 100 different logs are simulated and each
is reduced ten times under different run ids (the work per run does not depend on that). Timed: ``reduce_solution_runs`` on the in-memory
logs (event detection, per-event corrected rise, ε, molar enthalpy, series mean) — one core.
Goal: at least 100 runs per second. Also printed: the share of the time spent in the
temperature-rise engine and in the event detection.
"""

from __future__ import annotations

import argparse
import cProfile
import pstats
import time

import numpy as np

from calwork.core.runinfo import RunInfo
from calwork.simulation import CalorimeterParams, FirstOrderRelease, HeaterInterval, simulate_run
from calwork.solution.chain import reduce_solution_runs


def _runs(n: int, seed: int = 1, unique: int = 100):
    rng = np.random.default_rng(seed)
    base = CalorimeterParams.solution_preset()
    logs, infos = {}, []
    made: list[tuple] = []
    for i in range(n):
        run = f"R{i:04d}"
        if i >= unique:
            tg, amount = made[i % unique]
            logs[run] = tg
            infos.append(RunInfo(run=run, kind="solution", calorimeter="bench", sample="salt",
                                 amount_mol=amount, solvent_mass_g=72.0))
            continue
        amount = float(rng.uniform(0.0015, 0.0025))
        energy = -amount * 17500.0
        p = CalorimeterParams.solution_preset(
            initial_temperature_K=298.15 - 15.0 / base.energy_equivalent_J_per_K
            - energy / base.energy_equivalent_J_per_K / 2)
        sim = simulate_run(p, [HeaterInterval(power_W=0.05, on_s=300.0, off_s=600.0),
                               FirstOrderRelease(energy_J=energy, start_s=1000.0,
                                                 time_constant_s=20.0)],
                           duration_s=1800.0, seed=int(rng.integers(2**31)))
        logs[run] = sim.thermogram
        made.append((sim.thermogram, amount))
        infos.append(RunInfo(run=run, kind="solution", calorimeter="bench", sample="salt",
                             amount_mol=amount, solvent_mass_g=72.0))
    return infos, logs


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="100 runs instead of 1,000")
    parser.add_argument("--method", default="newton-fit", help="temperature-rise method")
    args = parser.parse_args(argv)
    n = 100 if args.quick else 1000
    t0 = time.perf_counter()
    infos, logs = _runs(n)
    t_sim = time.perf_counter() - t0
    reduce_solution_runs(infos[:2], thermograms=logs, method=args.method)  # warm up imports
    t0, c0 = time.perf_counter(), time.process_time()
    res = reduce_solution_runs(infos, thermograms=logs, method=args.method)
    runs, samples = res.runs, res.samples
    elapsed, cpu = time.perf_counter() - t0, time.process_time() - c0
    failed = sum(r.error is not None for r in runs)
    errors = np.array([r.molar_enthalpy_kJ_per_mol / 17.5 - 1 for r in runs if r.error is None])
    # where the time goes (a profiled pass over a tenth of the runs)
    k = max(n // 10, 10)
    prof = cProfile.Profile()
    prof.enable()
    reduce_solution_runs(infos[:k], thermograms=logs, method=args.method)
    prof.disable()
    stats = pstats.Stats(prof).stats
    total = sum(v[2] for v in stats.values())
    def cum(name: str) -> float:
        return max((v[3] for key, v in stats.items() if key[2] == name), default=0.0)
    profiled = cum("reduce_solution_runs")
    print(f"runs: {n} (30 min logs, 2 s sampling, calibration + reaction; simulated in "
          f"{t_sim:.1f} s, not timed); method {args.method}")
    print(f"reduce_solution_runs: {elapsed:.2f} s wall -> {n / elapsed:.0f} runs/s; "
          f"{cpu:.2f} s CPU -> {n / cpu:.0f} runs per CPU-second (goal >= 100 per second)")
    print(f"failed runs: {failed}; molar enthalpy error: mean {errors.mean() * 100:+.4f} %, "
          f"max |error| {np.abs(errors).max() * 100:.4f} %")
    if profiled > 0 and total > 0:
        print(f"time share (profiled pass): rise engine {cum('corrected_rise') / profiled:.0%}, "
              f"event detection {cum('find_events') / profiled:.0%}")
    print(f"series: {samples[0].n_runs} runs, mean {samples[0].molar_enthalpy_kJ_per_mol:.4f} "
          f"± {samples[0].u_molar_enthalpy_kJ_per_mol:.4f} kJ/mol")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
