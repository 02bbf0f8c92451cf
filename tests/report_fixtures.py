"""A small Reduction for the report and workbook tests, built without fitting.

Calibration (benzoic acid) and combustion runs with simulated thermograms
(``calwork.simulate``; invented data, labelled ``simulated``). The corrected rise of each run is
taken from the simulator's truth (plus a small seeded error) instead of being fitted, so that
the fixture is quick; everything after the rise goes through the real bomb chain
(``calwork.bomb.chain``, ``calwork.bomb.series``) exactly as ``calwork.reduce`` does, so the
numbers follow the chain's definitions:

* calibration run: ε = (m·q_cert·f + Σ corrections + contents referral) / ΔT_c;
* combustion run: Δu = −(ε̄·ΔT_c − referral − Σ corrections) / m, Δu° = Δu + ΔU_Σ / m;
* ΔcU° = M·Δu°/1000, ΔcH° = ΔcU° + Δn_g·R·T/1000, ΔfH° = a·ΔfH°(CO2) + b/2·ΔfH°(H2O) − ΔcH°.

The massic energy the simulated sample releases is invented; the certified value 26 434 J/g
is NIST SRM 39j (REFERENCES.md §2).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np

from calwork.bomb.chain import reduce_calibration_run, reduce_combustion_run, run_error
from calwork.bomb.series import calibration_series, formation_enthalpies, sample_series
from calwork.errors import CalworkError
from calwork.provenance import Provenance, sha256_bytes
from calwork.results import Reduction
from calwork.runinfo import RunInfo
from calwork.simulate import CalorimeterParams, CombustionPulse, simulate_run

CERTIFIED_J_PER_G = 26434.0  # NIST SRM 39j, mass in vacuum (REFERENCES.md §2, confirmed)
SAMPLE_J_PER_G = 40_230.0  # invented massic energy of the simulated sample, J/g


@dataclass(frozen=True, kw_only=True)
class FixtureRise:
    """The RiseResult fields the chain and the reports use (Newtonian drift either side)."""

    corrected_rise_K: float
    u_corrected_rise_K: float
    method: str
    fire_time_s: float
    main_end_s: float
    fore_period_s: tuple[float, float]
    after_period_s: tuple[float, float]
    k_per_s: float
    T_inf_K: float
    T_initial_K: float
    T_final_K: float
    warnings: tuple[str, ...] = ()
    extra: dict[str, Any] = field(default_factory=dict)

    def fore_curve(self, t_s):
        t = np.asarray(t_s, dtype=float)
        return self.T_inf_K + (self.T_initial_K - self.T_inf_K) * np.exp(
            -self.k_per_s * (t - self.fire_time_s))

    def after_curve(self, t_s):
        t = np.asarray(t_s, dtype=float)
        return self.T_inf_K + (self.T_final_K - self.T_inf_K) * np.exp(
            -self.k_per_s * (t - self.main_end_s))


def _rise(sim, fire_s: float, main_end_s: float, rng, method: str) -> FixtureRise:
    th, truth = sim.thermogram, sim.truth
    t_i = float(np.interp(fire_s, th.time_s, th.temperature_K))
    t_f = float(np.interp(main_end_s, th.time_s, th.temperature_K))
    return FixtureRise(
        corrected_rise_K=float(truth.adiabatic_rise_K * (1.0 + 2e-5 * rng.standard_normal())),
        u_corrected_rise_K=1.5e-4, method=method, fire_time_s=fire_s, main_end_s=main_end_s,
        fore_period_s=(float(th.time_s[0]), fire_s),
        after_period_s=(main_end_s, float(th.time_s[-1])), k_per_s=truth.drift_rate_per_s,
        T_inf_K=float(truth.convergence_temperature_K), T_initial_K=t_i, T_final_K=t_f,
    )


def _log(sim, rid: str):
    th = sim.thermogram
    data = th.time_s.tobytes() + th.temperature_K.tobytes()
    prov = Provenance(source_path=f"{rid}.csv", sha256=sha256_bytes(data),
                      importer="calwork.simulate (in memory)", first_row=2,
                      last_row=1 + th.n_points)
    return replace(th, provenance=prov)


def demo_reduction(*, sample: str = "naphthalene", formula: str = "C10H8",
                   notes: str | None = "weighed twice", duration_s: float = 1200.0,
                   sampling_interval_s: float = 5.0, n_calibrations: int = 3,
                   n_samples: int = 1, runs_per_sample: int = 3, seed: int = 20240611,
                   method: str = "newton-fit", failed_run: bool = False) -> Reduction:
    """A Reduction of ``n_calibrations`` benzoic-acid runs and ``n_samples`` series of
    ``runs_per_sample`` combustion runs (simulated logs, the real bomb chain).

    The first series is named ``sample``; further ones ``f"{sample} {k}"``. With
    ``failed_run`` one more combustion run is added whose mass is missing (it comes back
    with ``error`` set, as the chain reports it).
    """
    rng = np.random.default_rng(seed)
    params = CalorimeterParams.bomb_preset(sampling_interval_s=sampling_interval_s)
    fire_s, main_end_s = 300.0, 700.0
    common = {"calorimeter": "bomb-A", "ignition_J": 1.0, "fuse_burnt_cm": 8.0,
              "fuse_J_per_cm": 9.6, "o2_pressure_MPa": 3.04, "bomb_volume_L": 0.342,
              "bomb_water_g": 1.0, "acid_titrant_mol_per_L": 0.1, "operator": "A. N. Other",
              "notes": notes}
    infos: list[RunInfo] = []
    rises: dict[str, FixtureRise] = {}
    thermograms: dict[str, Any] = {}

    def simulate(info: RunInfo, massic_J_per_g: float, k: int) -> None:
        heat = info.mass_g * massic_J_per_g + 1.0 + 76.8 + 6.0 * info.acid_titre_mL
        sim = simulate_run(params, CombustionPulse(energy_J=heat, fire_time_s=fire_s),
                           duration_s=duration_s, seed=seed + k)
        rises[info.run] = _rise(sim, fire_s, main_end_s, rng, method)
        thermograms[info.run] = _log(sim, info.run)
        infos.append(info)

    for i in range(n_calibrations):
        info = RunInfo(run=f"C{i + 1}", kind="calibration", log=f"C{i + 1}.csv",
                       sample="benzoic acid", formula="C7H6O2", phase="cr",
                       reference_material="benzoic acid", certified_J_per_g=CERTIFIED_J_PER_G,
                       mass_g=round(1.0 + 0.02 * rng.standard_normal(), 5),
                       acid_titre_mL=round(5.0 + 0.5 * rng.standard_normal(), 2),
                       date=f"2024-06-{i % 28 + 1:02d}", **common)
        simulate(info, CERTIFIED_J_PER_G, i)
    for k in range(n_samples):
        name = sample if k == 0 else f"{sample} {k + 1}"
        for i in range(runs_per_sample):
            rid = f"S{k * runs_per_sample + i + 1}"
            info = RunInfo(run=rid, kind="combustion", log=f"{rid}.csv", sample=name,
                           formula=formula, phase="cr",
                           mass_g=round(0.65 + 0.01 * rng.standard_normal(), 5),
                           acid_titre_mL=round(4.0 + 0.5 * rng.standard_normal(), 2),
                           date="2024-07-01", **common)
            simulate(info, SAMPLE_J_PER_G, 1000 + k * runs_per_sample + i)
    if failed_run:
        info = RunInfo(run="S-bad", kind="combustion", log="S-bad.csv", sample=sample,
                       formula=formula, phase="cr", mass_g=0.65, acid_titre_mL=4.0,
                       date="2024-07-02", **common)
        simulate(info, SAMPLE_J_PER_G, 5000)
        infos[-1] = replace(info, mass_g=None)

    # the chain, as calwork.reduce.reduce_runs runs it
    results, cal_runs = {}, []
    for info in infos:
        if info.kind == "calibration":
            results[info.run] = reduce_calibration_run(info, rises[info.run])
            cal_runs.append(results[info.run])
    cal = calibration_series("bomb-A", cal_runs)
    series: dict[str, list] = {}
    for info in infos:
        if info.kind == "combustion":
            try:
                res = reduce_combustion_run(info, rises[info.run], cal)
            except CalworkError as exc:
                res = run_error(info, exc, rise=rises[info.run])
            results[info.run] = res
            if res.error is None:
                series.setdefault(info.sample, []).append((res, info))
    samples, terms, conventions = [], [], []
    for name, members in series.items():
        s, t = sample_series(name, [m[0] for m in members], [m[1] for m in members],
                             {"bomb-A": cal})
        samples.append(s)
        terms.append(t)
        conventions.append(members[0][0].details["sulfur_convention"])
    samples, covariance = formation_enthalpies(samples, terms, conventions)
    prov = Provenance(importer="calwork.reduce.reduce_runs (test fixture)", method=method,
                      parents=tuple(th.provenance for th in thermograms.values()))
    return Reduction(
        calibrations=(cal,), runs=tuple(results[i.run] for i in infos), samples=samples,
        covariance=covariance, method=method, sheet_path="runs.csv", provenance=prov,
        warnings=("fixture: simulated runs, rises from the simulator's truth",),
        run_infos=tuple(infos), thermograms=thermograms,
    )
