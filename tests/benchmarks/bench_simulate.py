"""Speed and accuracy of the calorimeter simulator.

Usage::

    python tests/benchmarks/bench_simulate.py [--quick]

Prints the time per simulated run for the two presets and a long log, and the largest
difference from scipy's DOP853 (rtol = atol = 1e-12, steps ≤ 1 s) for a two-body burn with exchange.
"""

from __future__ import annotations

import math
import sys
import time
from dataclasses import replace

import numpy as np
from scipy.integrate import solve_ivp

from calwork.simulation import (
    CalorimeterParams,
    CombustionPulse,
    FirstOrderRelease,
    HeaterInterval,
    simulate_run,
)


def _time(fn, repeat: int) -> float:
    best = math.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - t0)
    return best


def _accuracy() -> float:
    p = replace(CalorimeterParams.bomb_preset().noise_free(), thermometer_lag_s=3.0,
                initial_state="uniform")
    run = simulate_run(p, CombustionPulse(energy_J=26434.0, fire_time_s=300.0, burn_time_s=8.0),
                       duration_s=1800.0)
    cb, cw = p.bomb_heat_capacity_J_per_K, p.water_heat_capacity_J_per_K
    gbw, G = p.bomb_water_conductance_W_per_K, p.exchange_conductance_W_per_K

    def rhs(t, y):
        x = (t - 300.0) / 8.0
        P = 26434.0 / 8.0 * (1 - math.cos(2 * math.pi * x)) if 0 <= x < 1 else 0.0
        return [(gbw * (y[1] - y[0]) + P) / cb,
                (gbw * (y[0] - y[1]) + G * (p.jacket_temperature_K - y[1])
                 + p.stirring_power_W) / cw,
                (y[1] - y[2]) / 3.0]

    sol = solve_ivp(rhs, (0.0, 1800.0), [p.initial_temperature_K] * 3, method="DOP853",
                    rtol=1e-12, atol=1e-12, t_eval=run.thermogram.time_s, max_step=1.0)
    return float(np.max(np.abs(run.thermogram.temperature_K - sol.y[2])))


def main(argv: list[str]) -> int:
    repeat = 3 if "--quick" in argv else 20
    bomb, soln = CalorimeterParams.bomb_preset(), CalorimeterParams.solution_preset()
    cases = {
        "bomb preset, 2400 s, 481 readings": lambda: simulate_run(
            bomb, CombustionPulse(energy_J=26434.0, fire_time_s=600.0), duration_s=2400.0,
            seed=1),
        "solution preset, 2700 s, 1351 readings, 3 inputs": lambda: simulate_run(
            soln, [HeaterInterval(power_W=0.05, on_s=300.0, off_s=600.0),
                   FirstOrderRelease(energy_J=-40.0, start_s=1200.0, time_constant_s=20.0),
                   HeaterInterval(power_W=0.05, on_s=1800.0, off_s=2100.0)],
            duration_s=2700.0, seed=1),
        "bomb preset, 1 s readings, 20 000 readings": lambda: simulate_run(
            replace(bomb, sampling_interval_s=1.0),
            CombustionPulse(energy_J=26434.0, fire_time_s=600.0), duration_s=20000.0, seed=1),
    }
    for name, fn in cases.items():
        print(f"{name}: {_time(fn, repeat) * 1e3:.2f} ms per run (best of {repeat})")
    print(f"max |simulator − solve_ivp(DOP853, 1e-12)| on a two-body burn: "
          f"{_accuracy() * 1e6:.4f} µK")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
