"""Benchmark of ``calwork.reduce``: a run sheet of simulated bomb runs across 5 calorimeters.

    python tests/benchmarks/bench_reduce.py [--quick]

Writes the simulated logs once to a temporary folder (calwork's own simulator; invented,
simulated data), then times ``reduce_sheet`` without plots and the output folder with plots
(``calwork reduce --out``), and the run plots alone, one by one and on every core. Goals: 500
runs in under 10 s without plots on one core; run plots at least 20 per second on two cores.
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
from pathlib import Path


def build(folder: Path, n_runs: int, n_calorimeters: int = 5) -> Path:
    from calwork.io import write_log, write_run_sheet
    from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run

    rows = []
    per = n_runs // n_calorimeters
    for c in range(n_calorimeters):
        params = CalorimeterParams.bomb_preset(water_heat_capacity_J_per_K=8400.0 + 50 * c)
        n_cal = max(per // 5, 3)
        for i in range(per):
            calib = i < n_cal
            mass = 1.0 if calib else 0.5 + 0.01 * (i % 10)
            energy = mass * (26434.0 if calib else 40120.0) + 50.0
            run = simulate_run(params, CombustionPulse(energy_J=energy, fire_time_s=600.0,
                                                       burn_time_s=20.0),
                               duration_s=2400.0, seed=1000 * c + i)
            name = f"c{c}r{i:03d}"
            write_log(run.thermogram, folder / f"{name}.csv", preamble={"simulated": "true"})
            row = {"run": name, "log": f"{name}.csv", "calorimeter": f"cal{c}",
                   "mass_g": mass, "ignition_J": 1.0, "fuse_J": 12.0, "acid_titre_mL": 8.0,
                   "acid_titrant_mol_per_L": 0.0866, "o2_pressure_MPa": 3.04,
                   "bomb_volume_L": 0.342, "bomb_water_g": 1.0}
            if calib:
                row.update(kind="calibration", sample="benzoic acid",
                           reference_material="benzoic acid")
            else:
                row.update(kind="combustion", sample=f"sample{i % 4}", formula="C10H8",
                           phase="cr", sample_density_g_per_cm3=1.16)
            rows.append(row)
    sheet = folder / "runs.csv"
    write_run_sheet(rows, sheet)
    return sheet


def _plots_alone(sheet: Path, n_plot: int) -> tuple[float, float, int]:
    """Seconds to draw ``n_plot`` run plots one by one, and on every core (fresh records, so
    that nothing comes from the plot cache); and the cores used."""
    import os

    from calwork.reduce import reduce_sheet
    from calwork.report import plots
    from calwork.report.texts import primary_rise

    def items() -> list[tuple]:
        red = reduce_sheet(sheet)
        return [(red.thermograms[r.run], primary_rise(r), r.run) for r in red.runs[:n_plot]
                if r.run in red.thermograms]

    one = items()
    t0 = time.perf_counter()
    for th, rise, label in one:
        plots._png_of(th, rise, label)
    t_one = time.perf_counter() - t0
    every = items()
    t0 = time.perf_counter()
    plots.draw_rise_pngs(every)
    t_all = time.perf_counter() - t0
    return t_one, t_all, min(os.cpu_count() or 1, 4)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="50 runs instead of 500")
    args = parser.parse_args(argv)
    n = 50 if args.quick else 500
    from calwork.reduce import reduce_sheet
    from calwork.report.folder import write_outputs

    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        t0 = time.perf_counter()
        sheet = build(folder, n)
        t_build = time.perf_counter() - t0
        t0 = time.perf_counter()
        red = reduce_sheet(sheet)
        t_reduce = time.perf_counter() - t0
        failed = [r.run for r in red.runs if r.error]
        t0 = time.perf_counter()
        n_plot = min(n, 50)
        write_outputs(red, folder / "out_noplots", plots=False)
        t_out = time.perf_counter() - t0
        sub = reduce_sheet(sheet) if n_plot == n else None
        t0 = time.perf_counter()
        if sub is None:
            from dataclasses import replace

            sub = replace(red, runs=red.runs[:n_plot])
        write_outputs(sub, folder / "out_plots", plots=True)
        t_plots = time.perf_counter() - t0
        plot_one, plot_all, cores = _plots_alone(sheet, n_plot)
    print(f"bench_reduce: {n} runs, 5 calorimeters (simulated logs written in {t_build:.1f} s)")
    print(f"  reduce_sheet, no plots : {t_reduce:.2f} s  ({n / t_reduce:.1f} runs/s)")
    print(f"  summary CSV + report   : {t_out:.2f} s")
    print(f"  with plots ({n_plot} runs)  : {t_plots:.2f} s  ({n_plot / t_plots:.1f} runs/s); "
          f"estimated for {n}: {(t_reduce + t_out) + t_plots * n / n_plot:.1f} s")
    print(f"  run plots alone ({n_plot}): {n_plot / plot_one:.1f} plots/s one by one, "
          f"{n_plot / plot_all:.1f} plots/s on {cores} core(s) (goal: ≥ 20/s on two cores)")
    print(f"  failed runs: {len(failed)}; samples: {len(red.samples)}; "
          f"calibrations: {len(red.calibrations)}")
    goal = 10.0 * n / 500
    print(f"  goal (< {goal:.1f} s without plots): {'met' if t_reduce < goal else 'NOT met'}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
