"""The bundled demonstration data: a simulated day's work of a fictional laboratory.

Everything here is **simulated** with calwork's own calorimeter simulator (``calwork.simulation``)
for invented laboratories (the bomb runs for the "Fenwick Row thermochemistry laboratory",
the solution runs for the "Lindqvist Solution Thermochemistry Laboratory"), and is labelled as
such in every log (a ``simulated: true`` preamble line) and run-sheet row (``notes``):

* bomb calorimeter ``bomb-1``: eight benzoic-acid calibrations over four days, five
  combustions of succinic acid and four of acetanilide;
* solution calorimeter ``sol-1``: electrical calibrations, a dissolution series of potassium
  chloride at several molalities and blank (empty-ampoule) runs, written by
  :func:`calwork.sample_runs.solution_day.simulate_solution_day`.

The true heats are computed consistently with the reduction chain (certificate value × Jessup
factor for the run's bomb conditions, the bomb contents' energy equivalents, nitric acid), so
reducing the sheet returns the invented truth within its uncertainty. The samples' invented
"true" standard massic energies are set from literature formation enthalpies (see
:data:`DEMO_SAMPLES`) so that the demo's ΔfH° can be compared with published values.

``python -m calwork.sample_runs.build OUT_DIR`` rebuilds the folder (the bundled
``sample_runs/`` was made with the default seed; its logs name the simulator by the module
path it had then, ``calwork.simulate``).
"""

from __future__ import annotations

import math
import sys
from datetime import date, timedelta
from pathlib import Path
from typing import Any

import numpy as np

from calwork.core.constants import T_REF_K, R_J_per_mol_K
from calwork.formula import element_counts, molar_mass_g_per_mol

__all__ = ["DEMO_SAMPLES", "build_sample_runs"]

#: Invented truth of the demo samples: ΔfH°(cr) in kJ/mol taken from the literature values
#: listed in docs/references.md §4 (succinic acid −940.5, Vanderzee et al. 1972, recalled
#: from memory; acetanilide −209.4, CRC via the ``chemicals`` library), with density g/cm³
#: and massic heat capacity J/(g K) (typical values, common practice) for the bomb contents.
DEMO_SAMPLES = {
    "succinic acid": {"formula": "C4H6O4", "delta_f_H_kJ_per_mol": -940.5,
                      "density_g_per_cm3": 1.56, "cp_J_per_g_K": 1.15, "mass_g": (0.95, 1.15),
                      "n_runs": 5},
    "acetanilide": {"formula": "C8H9NO", "delta_f_H_kJ_per_mol": -209.4,
                    "density_g_per_cm3": 1.22, "cp_J_per_g_K": 1.35, "mass_g": (0.55, 0.75),
                    "n_runs": 4},
}

_LAB = "Fenwick Row thermochemistry laboratory (fictional)"
_NOTE = "simulated by calwork; invented data for a fictional laboratory"
_BOMB = {"o2_pressure_MPa": 3.04, "bomb_volume_L": 0.342, "bomb_water_g": 1.0}
_FIRE_S, _DURATION_S = 600.0, 2700.0
_CO2, _H2O = -393.51, -285.830          # CODATA 1989 key values, kJ/mol (calwork/data/key_values)


def _standard_massic_energy_J_per_g(formula: str, delta_f_H_kJ_per_mol: float) -> float:
    """Δcu° (J/g) of a CHON compound from its ΔfH° with the CODATA CO2 and H2O key values."""
    n = element_counts(formula)
    a, b, c, d = (n.get(e, 0.0) for e in ("C", "H", "O", "N"))
    delta_c_H = a * _CO2 + b / 2 * _H2O - delta_f_H_kJ_per_mol          # kJ/mol, eq. (3.9)
    dn_gas = c / 2 + d / 2 - b / 4                                       # eq. (3.6)
    delta_c_U = delta_c_H - dn_gas * R_J_per_mol_K * T_REF_K / 1000.0    # eq. (3.8)
    return delta_c_U * 1000.0 / molar_mass_g_per_mol(formula)


def _contents(formula, mass_g, rho, cp, titre_mL, conc):
    from calwork.bomb.contents import contents_energy_equivalents_J_per_K
    from calwork.bomb.corrections import nitric_acid_energy_J, nitric_acid_mol
    from calwork.bomb.washburn import Combustible, bomb_states, washburn_correction

    comb = Combustible.from_formula("sample", formula, mass_g, density_g_per_cm3=rho,
                                    heat_capacity_J_per_g_K=cp)
    n_hno3 = nitric_acid_mol(titre_mL, conc)
    ini, fin = bomb_states([comb], nitric_acid_mol=n_hno3, **_BOMB)
    eps = contents_energy_equivalents_J_per_K(ini, fin, [comb])
    wb = washburn_correction([comb], nitric_acid_mol=n_hno3, states=(ini, fin), **_BOMB)
    return eps, nitric_acid_energy_J(n_hno3)[0], wb.correction_J


def _bomb_day(out: Path, rng: np.random.Generator) -> list[dict[str, Any]]:
    from calwork.bomb.certificate import jessup_factor
    from calwork.io.writers import write_log
    from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run

    base = CalorimeterParams.bomb_preset()
    plan: list[tuple[str, str | None, int]] = [("calibration", None, i) for i in range(8)]
    for name, spec in DEMO_SAMPLES.items():
        plan += [("combustion", name, i) for i in range(spec["n_runs"])]
    rows = []
    day0 = date(2026, 3, 2)
    for k, (kind, name, i) in enumerate(plan):
        titre = round(float(rng.uniform(6.0, 10.0)), 2)
        fuse_cm = round(float(rng.uniform(7.0, 9.0)), 1)
        ignition, fuse_per_cm, conc = 1.0, 9.6, 0.0866
        if kind == "calibration":
            mass = round(float(rng.uniform(0.95, 1.05)), 5)
            formula, rho, cp = "C7H6O2", 1.320, 1.21
            (eps_i, eps_f), e_hno3, _ = _contents(formula, mass, rho, cp, titre, conc)
            f = jessup_factor(_BOMB["o2_pressure_MPa"], mass / _BOMB["bomb_volume_L"],
                              _BOMB["bomb_water_g"] / _BOMB["bomb_volume_L"], T_REF_K)
            heat = mass * 26434.0 * f
            run_id, sample = f"BA-{i + 1:02d}", "benzoic acid"
            when = day0 + timedelta(days=i // 2)
        else:
            spec = DEMO_SAMPLES[name]
            formula, rho, cp = spec["formula"], spec["density_g_per_cm3"], spec["cp_J_per_g_K"]
            mass = round(float(rng.uniform(*spec["mass_g"])), 5)
            (eps_i, eps_f), e_hno3, washburn_J = _contents(formula, mass, rho, cp, titre, conc)
            standard = _standard_massic_energy_J_per_g(formula, spec["delta_f_H_kJ_per_mol"])
            # bomb process = standard state − Washburn correction (ΔU_Σ, docs/methods.md §3.5)
            heat = -(standard * mass - washburn_J)
            run_id = f"{'SA' if name == 'succinic acid' else 'AC'}-{i + 1:02d}"
            sample = name
            when = day0 + timedelta(days=4 + i // 3)
        heat += ignition + fuse_cm * fuse_per_cm + e_hno3
        # the contents sit in the bomb: their final-state energy equivalent adds to it, and the
        # referral of the initial state to 298.15 K (eq. 3.1) is part of the heat the water sees
        params = CalorimeterParams.bomb_preset(
            bomb_heat_capacity_J_per_K=base.bomb_heat_capacity_J_per_K + eps_f,
            initial_temperature_K=base.initial_temperature_K + float(rng.uniform(-0.2, 0.2)))
        k_rate, T_inf = params.exchange_rate_per_s, params.convergence_temperature_K
        T_i = T_inf - (T_inf - params.initial_temperature_K) * math.exp(-k_rate * _FIRE_S)
        energy = heat + (eps_i - eps_f) * (T_i - T_REF_K)
        sim = simulate_run(params, CombustionPulse(energy_J=energy, fire_time_s=_FIRE_S,
                                                   burn_time_s=20.0),
                           duration_s=_DURATION_S, seed=int(rng.integers(2**32)))
        log = out / "logs" / "bomb" / f"{run_id}.csv"
        log.parent.mkdir(parents=True, exist_ok=True)
        write_log(sim.thermogram, log, preamble={
            "simulated": "true", "laboratory": _LAB, "run": run_id, "calorimeter": "bomb-1",
            "note": "SIMULATED DATA invented by calwork's calorimeter simulator"}, digits=6)
        row = {"run": run_id, "kind": kind, "log": f"logs/bomb/{run_id}.csv",
               "calorimeter": "bomb-1", "sample": sample, "formula": formula, "phase": "cr",
               "mass_g": mass, "ignition_J": ignition, "fuse_burnt_cm": fuse_cm,
               "fuse_J_per_cm": fuse_per_cm, "acid_titre_mL": titre,
               "acid_titrant_mol_per_L": conc, **_BOMB, "sample_density_g_per_cm3": rho,
               "date": f"{when.isoformat()}T{9 + k % 8:02d}:00", "operator": "J. Analyst",
               "notes": _NOTE}
        if kind == "calibration":
            row["reference_material"] = "benzoic-acid"
        rows.append(row)
    return rows


#: "True" ΔfH° (kJ/mol) behind the simulated network file: CODATA key values (CO2, CO, H2O) and
#: literature values for methane and methanol (NIST WebBook, recalled from memory).
_NETWORK_TRUTH = {"CO2(g)": -393.51, "CO(g)": -110.53, "H2O(l)": -285.830,
                  "H2O(g)": -241.826, "CH4(g)": -74.87, "CH3OH(l)": -239.2,
                  "CH3OH(g)": -201.0}
#: Determinations of the simulated network: (id, equation, standard uncertainty kJ/mol).
_NETWORK_ROWS = (
    ("comb-graphite", "C(cr,graphite) + O2(g) = CO2(g)", 0.13),
    ("comb-CO", "CO(g) + 1/2 O2(g) = CO2(g)", 0.15),
    ("form-H2O", "H2(g) + 1/2 O2(g) = H2O(l)", 0.04),
    ("vap-H2O", "H2O(l) = H2O(g)", 0.02),
    ("comb-CH4", "CH4(g) + 2 O2(g) = CO2(g) + 2 H2O(l)", 0.30),
    ("comb-CH3OH", "CH3OH(l) + 3/2 O2(g) = CO2(g) + 2 H2O(l)", 0.25),
    ("vap-CH3OH", "CH3OH(l) = CH3OH(g)", 0.15),
    ("synth-CH3OH", "CO(g) + 2 H2(g) = CH3OH(g)", 0.40),
    ("steam-reform", "CH4(g) + H2O(g) = CO(g) + 3 H2(g)", 0.50),
    ("partial-ox", "C(cr,graphite) + 1/2 O2(g) = CO(g)", 0.30),
)
#: The determination given a planted error (kJ/mol) so the worst-offender analysis has a case.
_NETWORK_PLANTED = ("partial-ox", 4.0)


def write_network_file(path: str | Path, *, seed: int = 20260302) -> Path:
    """Write a simulated network CSV: determinations = truth + seeded noise, one planted error.

    The species and equations are real, the numbers are simulated from :data:`_NETWORK_TRUTH`
    with Gaussian noise of each row's stated uncertainty; row ``partial-ox`` carries a planted
    error of +4 kJ/mol for the worst-offender walk-through. Labelled as simulated.
    """
    import csv

    from calwork.hess import parse_equation

    rng = np.random.default_rng(seed)
    path = Path(path)
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["id", "equation", "delta_r_H_kJ_per_mol", "u_delta_r_H_kJ_per_mol",
                    "source"])
        for rid, equation, u in _NETWORK_ROWS:
            reaction = parse_equation(equation)
            true = sum(float(nu) * _NETWORK_TRUTH.get(str(sp), 0.0)
                       for sp, nu in reaction.stoichiometry.items())
            value = true + u * float(rng.standard_normal())
            if rid == _NETWORK_PLANTED[0]:
                value += _NETWORK_PLANTED[1]
            w.writerow([rid, equation, f"{value:.3f}", f"{u:.3f}",
                        "simulated by calwork (truth + noise); not a measurement"])
    return path


def build_sample_runs(out_dir: str | Path, *, seed: int = 20260302) -> Path:
    """Write the demo folder (logs and ``runs.csv``) into ``out_dir``; returns the sheet path."""
    from calwork.sample_runs.solution_day import simulate_solution_day

    from calwork.io.writers import write_run_sheet

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    rows = _bomb_day(out, rng)
    # the solution day writes logs/*.csv, its own sheet and its truth file into ``out``
    rows += [dict(row) for row in simulate_solution_day(out, seed=seed + 1)]
    (out / "solution_runs.csv").unlink(missing_ok=True)   # merged into the one sheet below
    sheet = out / "runs.csv"
    write_run_sheet(rows, sheet)
    write_network_file(out / "network.csv", seed=seed + 2)
    _write_kcl_cycle(sheet, out / "kcl_cycle.toml")
    write_hand_read_example(out / "hand_read_BA-09.csv", seed=seed + 3)
    return sheet


def write_hand_read_example(path: str | Path, *, seed: int = 20260305) -> Path:
    """A benzoic-acid calibration read by hand (simulated): each minute before firing and
    after the main period, each 30 s in it, to 0.001 °C, in the hand-read record format."""
    from calwork.io.handread import write_hand_record
    from calwork.simulation import CalorimeterParams, CombustionPulse
    from calwork.simulation.handread import hand_read_record, reading_times_s

    params = CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None)
    fire, length = 300.0, 480.0
    times = reading_times_s(fire_time_s=fire, fore_readings=6, main_length_s=length,
                            after_readings=6, drift_interval_s=60.0, main_interval_s=30.0)
    run = hand_read_record(params, CombustionPulse(energy_J=26434.0 * 0.9981, fire_time_s=fire),
                           times, resolution_K=0.001, reading_noise_K=0.0003, seed=seed)
    return write_hand_record(
        run.thermogram, path, clock_start_s=9 * 3600 + 40 * 60, fire_time_s=fire,
        main_end_s=fire + length, resolution_C=0.001,
        preamble={"lab": _LAB, "calorimeter": "bomb-1", "sample": "benzoic acid, 0.9981 g",
                  "operator": "R. Quist (fictional)", "data": "SIMULATED by calwork's simulator "
                  "(invented data, not a measurement)",
                  "true_adiabatic_rise_K": f"{run.truth.adiabatic_rise_K:.6f}"},
        remarks={fire + length + 180.0: "stirrer checked"})


def _write_kcl_cycle(sheet: Path, path: Path) -> Path:
    """A cycle file: ΔfH°(KCl, cr) from the simulated series' ΔsolH∞ and the ion key values."""
    from calwork.io import read_run_sheet
    from calwork.reduce import reduce_runs

    rows = [r for r in read_run_sheet(sheet) if r.kind in ("electrical", "solution", "blank")]
    (kcl,) = [s for s in reduce_runs(rows).samples if s.infinite_dilution_enthalpy_kJ_per_mol]
    text = f"""\
# A thermochemical cycle for `calwork cycle` (calwork's own cycle-file format).
# The dissolution enthalpy below was obtained by reducing the SIMULATED solution-calorimetry
# runs of sample_runs/runs.csv (series {kcl.sample!r}); it is not a measurement.

[cycle]
name = "KCl(cr) from its enthalpy of solution at infinite dilution"
target = "KCl(cr)"
key_values = true
omit_key_values = ["KCl(cr)"]   # the unknown: do not use the bundled value

[[dissolution]]
id = "KCl-dissolution"
solute = "KCl(cr)"
infinite_dilution = true
delta_sol_H_kJ_per_mol = {kcl.infinite_dilution_enthalpy_kJ_per_mol:.4f}
u_delta_sol_H_kJ_per_mol = {kcl.u_infinite_dilution_enthalpy_kJ_per_mol:.4f}
source = "simulated series reduced by calwork ({kcl.n_runs} runs, extrapolated to m = 0)"
"""
    path.write_text(text, encoding="utf-8")
    return path


if __name__ == "__main__":  # pragma: no cover - maintenance entry point
    print(build_sample_runs(sys.argv[1] if len(sys.argv) > 1 else "sample_runs"))
