"""An invented solution-calorimetry day, made with calwork's own simulator (demo data).

:func:`simulate_solution_day` writes the logs and the run sheet of one simulated day in a
fictional laboratory: stand-alone electrical calibrations of the calorimeter, empty-ampoule
blanks, and a series of KCl dissolutions at several final molalities, each log with an
electrical calibration before and after the ampoule break. Every file says it is simulated.

The true heats are set so that a correct reduction recovers them:

* KCl: Δ_solH(m) = Δ_solH^∞ + ΦL(m), with ΦL from the bundled Pitzer parameters and
  Δ_solH^∞ = 17.584 − ΦL(0.111) kJ/mol, i.e. the recalled SRM 1655 value (Kilday 1980, from
  memory) at its certified molality 0.111 mol/kg. The heat capacity of reaction is ignored (the
  truth does not vary with temperature); each break happens near 298.15 K.
* Ampoule breaking: each ampoule releases a heat drawn from N(8 mJ, 2 mJ) (invented);
  solvent vaporisation into the ampoule's gas volume absorbs n_v Δ_vapH (docs/methods.md §2.4).
* The electrical heater: 50 mW for 300 s in a 50 Ω heater; the current is logged as the
  voltage across a 10 Ω standard resistor in the stand-alone calibrations.

Caution for real work: calorimeter heaters are electrical circuits in liquids — use isolated
low-voltage supplies; glass ampoules break into sharp fragments — handle with care.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np

from calwork.core.thermogram import Thermogram
from calwork.data import load_data
from calwork.formula import molar_mass_g_per_mol
from calwork.io.writers import write_log, write_run_sheet
from calwork.simulation import CalorimeterParams, FirstOrderRelease, HeaterInterval, simulate_run
from calwork.solution.dilution import apparent_molar_enthalpy_pitzer
from calwork.solution.vaporisation import vaporisation_correction_J

__all__ = ["DEMO_LABORATORY", "kcl_true_molar_enthalpy_kJ_per_mol", "simulate_solution_day"]

#: The fictional laboratory of the demonstration day.
DEMO_LABORATORY = "Lindqvist Solution Thermochemistry Laboratory (fictional, simulated data)"
_CALORIMETER = "SC-1 (simulated)"
_HEATER_POWER_W = 0.05
_HEATER_S = 300.0
_HEATER_OHM = 50.0
_STANDARD_RESISTOR_OHM = 10.0
_SOLVENT_G = 72.0
_BREAK_MEAN_J = 0.008
_BREAK_SD_J = 0.002


def kcl_true_molar_enthalpy_kJ_per_mol(molality_mol_per_kg: float) -> float:
    """The simulated truth Δ_solH(KCl, m) = Δ_solH^∞ + ΦL_Pitzer(m), kJ/mol (see module doc).

    Examples
    --------
    >>> round(kcl_true_molar_enthalpy_kJ_per_mol(0.111), 3)
    17.584
    """
    ref = load_data("solution_properties.toml")["reference"]["kcl_srm1655"]
    m_ref = float(ref["final_molality_mol_per_kg"])
    h_inf = float(ref["molar_enthalpy_kJ_per_mol"]) - apparent_molar_enthalpy_pitzer(
        m_ref, electrolyte="KCl") / 1000.0
    return h_inf + apparent_molar_enthalpy_pitzer(molality_mol_per_kg, electrolyte="KCl") / 1000.0


def _preamble(run: str, kind: str, seed: int, truth: dict[str, Any]) -> dict[str, str]:
    out = {"simulated": "true", "laboratory": DEMO_LABORATORY, "calorimeter": _CALORIMETER,
           "run": run, "kind": kind, "simulator": "calwork.simulation", "seed": str(seed)}
    out.update({f"true_{k}": repr(v) for k, v in truth.items()})
    return out


def _with_standard_resistor(tg: Thermogram) -> Thermogram:
    ch = dict(tg.channels)
    ch["standard_resistor_V"] = ch.pop("heater_A") * _STANDARD_RESISTOR_OHM
    return Thermogram(time_s=tg.time_s, temperature_K=tg.temperature_K, channels=ch,
                      metadata=tg.metadata, provenance=tg.provenance)


def simulate_solution_day(
    out_dir: str | Path,
    *,
    seed: int = 20240611,
    molalities_mol_per_kg: tuple[float, ...] = (0.02, 0.05, 0.08, 0.111, 0.15),
    n_electrical: int = 3,
    n_blanks: int = 3,
    sheet_name: str = "solution_runs.csv",
) -> list[dict[str, Any]]:
    """Write an invented solution-calorimetry day (logs, run sheet, truth) into ``out_dir``.

    Parameters
    ----------
    out_dir
        Folder to write into (created): ``logs/*.csv``, the run sheet ``sheet_name`` and
        ``simulated_truth.json``.
    seed
        Seed of everything random (noise, masses, ampoule heats).
    molalities_mol_per_kg
        Nominal final molalities of the KCl series.
    n_electrical, n_blanks
        Number of stand-alone electrical calibrations and of empty-ampoule blanks.
    sheet_name
        File name of the run sheet (``.csv``, ``.xlsx`` or ``.toml``).

    Returns
    -------
    list of dict
        The run-sheet rows written (column name → value).
    """
    out = Path(out_dir)
    (out / "logs").mkdir(parents=True, exist_ok=True)
    rng = np.random.default_rng(seed)
    base = CalorimeterParams.solution_preset()
    eps = base.energy_equivalent_J_per_K
    heat_rise = _HEATER_POWER_W * _HEATER_S / eps
    M = molar_mass_g_per_mol("KCl")
    rows: list[dict[str, Any]] = []
    truth: dict[str, Any] = {"laboratory": DEMO_LABORATORY, "simulated": True, "seed": seed,
                             "energy_equivalent_J_per_K": eps, "runs": {}}
    common = {"calorimeter": _CALORIMETER, "date": "2024-06-11", "operator": "simulated"}

    def emit(run: str, kind: str, tg: Thermogram, run_truth: dict[str, Any], row: dict):
        path = out / "logs" / f"{run}.csv"
        write_log(tg, path, digits=7, preamble=_preamble(run, kind, seed, run_truth))
        rows.append({"run": run, "kind": kind, "log": f"logs/{run}.csv", **common, **row})
        truth["runs"][run] = run_truth

    for i in range(n_electrical):
        run = f"E{i + 1:02d}"
        p = CalorimeterParams.solution_preset(initial_temperature_K=298.15 - heat_rise / 2)
        heater = HeaterInterval(power_W=_HEATER_POWER_W, on_s=300.0, off_s=300.0 + _HEATER_S,
                                resistance_ohm=_HEATER_OHM)
        sim = simulate_run(p, heater, duration_s=1200.0, seed=int(rng.integers(2**31)))
        emit(run, "electrical", _with_standard_resistor(sim.thermogram),
             {"heater_energy_J": heater.energy_J, "energy_equivalent_J_per_K": eps},
             {"standard_resistor_ohm": _STANDARD_RESISTOR_OHM,
              "notes": "simulated stand-alone electrical calibration"})

    for i in range(n_blanks):
        run = f"B{i + 1:02d}"
        gas_mL = 1.0
        q_break = float(rng.normal(_BREAK_MEAN_J, _BREAK_SD_J))
        q_vap = vaporisation_correction_J(gas_mL, 298.15).correction_J
        p = CalorimeterParams.solution_preset()
        sim = simulate_run(p, FirstOrderRelease(energy_J=q_break + q_vap, start_s=600.0,
                                                time_constant_s=5.0),
                           duration_s=1500.0, seed=int(rng.integers(2**31)))
        emit(run, "blank", sim.thermogram,
             {"ampoule_breaking_J": q_break, "vaporisation_J": q_vap},
             {"sample": "empty ampoule", "ampoule_gas_volume_mL": gas_mL, "fire_time_s": 600.0,
              "notes": "simulated empty-ampoule blank"})

    for i, m_nominal in enumerate(molalities_mol_per_kg):
        run = f"K{i + 1:02d}"
        mass_g = round(m_nominal * _SOLVENT_G / 1000.0 * M * float(rng.uniform(0.98, 1.02)), 5)
        n = mass_g / M
        m = n / (_SOLVENT_G / 1000.0)
        H = kcl_true_molar_enthalpy_kJ_per_mol(m)
        gas_mL = 0.5
        q_break = float(rng.normal(_BREAK_MEAN_J, _BREAK_SD_J))
        q_vap = vaporisation_correction_J(gas_mL, 298.15).correction_J
        energy = -n * H * 1000.0 + q_break + q_vap
        # the jacket is set so that the mean temperature of the dissolution is 298.15 K (the
        # cell starts in its steady state; one correction for the first heating's remainder)
        target = 298.15 - energy / eps / 2.0
        offset = base.stirring_power_W / base.exchange_conductance_W_per_K  # T_inf − T_j
        jacket = target - offset
        inputs = [
            HeaterInterval(power_W=_HEATER_POWER_W, on_s=300.0, off_s=300.0 + _HEATER_S,
                           resistance_ohm=_HEATER_OHM),
            FirstOrderRelease(energy_J=energy, start_s=1200.0, time_constant_s=25.0),
            HeaterInterval(power_W=_HEATER_POWER_W, on_s=1800.0, off_s=1800.0 + _HEATER_S,
                           resistance_ohm=_HEATER_OHM),
        ]
        noise_seed = int(rng.integers(2**31))
        for _ in range(2):
            p = CalorimeterParams.solution_preset(jacket_temperature_K=jacket,
                                                  initial_temperature_K=jacket + offset)
            sim = simulate_run(p, inputs, duration_s=2700.0, seed=noise_seed)
            at_break = float(np.interp(1200.0, sim.thermogram.time_s, sim.water_temperature_K))
            jacket += target - at_break
        emit(run, "solution", sim.thermogram,
             {"molar_enthalpy_kJ_per_mol": H, "final_molality_mol_per_kg": m,
              "ampoule_breaking_J": q_break, "vaporisation_J": q_vap, "heat_released_J": energy},
             {"sample": "KCl (simulated series)", "formula": "KCl", "phase": "cr",
              "mass_g": mass_g, "solvent_mass_g": _SOLVENT_G, "ampoule_gas_volume_mL": gas_mL,
              "notes": f"simulated KCl dissolution; true Δ_solH = {H:.4f} kJ/mol"})

    write_run_sheet(rows, out / sheet_name)
    (out / "simulated_truth.json").write_text(json.dumps(truth, indent=2), encoding="utf-8")
    return rows
