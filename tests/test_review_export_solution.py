"""Review: one solution run of the bundled, SIMULATED ``sample_runs`` (K01, KCl) reduced by
hand, step by step, against calwork's chain and the simulator's truth
(``sample_runs/simulated_truth.json``).

Independent references: water's saturation pressure from IAPWS-95 and its enthalpy of
vaporisation from the Clapeyron equation with the IAPWS-92 saturated densities and dp/dT
(``chemicals.iapws``, a general-purpose reference library); the molar mass of KCl from the
CIAAW conventional atomic weights (K 39.0983, Cl 35.45); Pitzer's ΦL equation written out
here (Pitzer, Thermodynamics 3rd ed. 1995, eq. for ΦL of a 1:1 electrolyte; recalled from
memory) with the bundled KCl parameters.
"""

from __future__ import annotations

import csv
import json
import math
import shutil
from pathlib import Path

import numpy as np
import pytest

from calwork.core.constants import R_J_per_mol_K
from calwork.data import load_data
from calwork.reduce import reduce_sheet

SAMPLE_RUNS = Path(__file__).resolve().parents[1] / "sample_runs"
RUNS = {"E01", "E02", "B01", "B02", "B03", "K01", "K03"}


def _sheet(root: Path, *, blank_volumes: bool = True) -> Path:
    shutil.copytree(SAMPLE_RUNS / "logs", root / "logs")
    with open(SAMPLE_RUNS / "runs.csv", encoding="utf-8") as fh:
        rows = [r for r in csv.DictReader(fh) if r["run"] in RUNS]
    if not blank_volumes:
        for r in rows:
            if r["kind"] == "blank":
                r["ampoule_gas_volume_mL"] = ""
    with open(root / "runs.csv", "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    return root / "runs.csv"


@pytest.fixture(scope="module")
def reduction(tmp_path_factory):
    return reduce_sheet(_sheet(tmp_path_factory.mktemp("sol")))


@pytest.fixture(scope="module")
def truth():
    return json.loads((SAMPLE_RUNS / "simulated_truth.json").read_text(encoding="utf-8"))


def _q_vap_J(volume_mL: float, T_K: float) -> float:
    """Heat absorbed saturating ``volume_mL`` of gas with water vapour (ideal gas), J."""
    from chemicals.iapws import (
        iapws92_dPsat_dT,
        iapws92_rhog_sat,
        iapws92_rhol_sat,
        iapws95_Psat,
    )

    M = 18.015268e-3  # kg/mol, IAPWS-95
    p = iapws95_Psat(T_K)
    dp_dT = iapws92_dPsat_dT(T_K)[0]
    dH = T_K * (1.0 / iapws92_rhog_sat(T_K) - 1.0 / iapws92_rhol_sat(T_K)) * dp_dT * M
    return p * volume_mL * 1e-6 / (R_J_per_mol_K * T_K) * dH


def _A_H_by_hand(T_K: float) -> float:
    """A_H = 4RT² dA_φ/dT with A_φ = (1/3)(2πN_Aρ)^½ (e²/4πε0 ε_r kT)^{3/2} (Pitzer 1991),
    ρ from IAPWS-95 and ε_r from the IAPWS 1997 release (both via chemicals)."""
    from chemicals.iapws import iapws95_properties
    from chemicals.permittivity import permittivity_IAPWS

    def a_phi(T):
        rho = iapws95_properties(T, 101325.0)[0]
        eps = permittivity_IAPWS(T, rho)
        e, eps0, k, n_a = 1.602176634e-19, 8.8541878128e-12, 1.380649e-23, 6.02214076e23
        return math.sqrt(2 * math.pi * n_a * rho) / 3 * (
            e * e / (4 * math.pi * eps0 * eps * k * T)) ** 1.5

    h = 0.05
    return 4 * R_J_per_mol_K * T_K**2 * (a_phi(T_K + h) - a_phi(T_K - h)) / (2 * h)


def _phi_L_kcl_J_per_mol(m: float, T_K: float) -> float:
    d = load_data("solution_properties.toml")
    A_H = _A_H_by_hand(T_K)
    b, alpha = d["debye_huckel"]["b_kg05_per_mol05"], d["debye_huckel"]["alpha_kg05_per_mol05"]
    k = d["pitzer"]["KCl"]
    x = alpha * math.sqrt(m)
    B_L = k["beta0_L_kg_per_mol_K"] + k["beta1_L_kg_per_mol_K"] * 2 * (
        1 - (1 + x) * math.exp(-x)) / x**2
    C_L = k["Cphi_L_kg2_per_mol2_K"] / 2
    return 2 * A_H / (2 * b) * math.log(1 + b * math.sqrt(m)) - 2 * R_J_per_mol_K * T_K**2 * (
        m * B_L + m * m * C_L)


def test_k01_by_hand(reduction, truth):
    runs = {r.run: r for r in reduction.runs}
    k01 = runs["K01"]
    assert k01.error is None
    d = k01.details
    # 1. ε: the mean of the in-log calibrations before and after, ε = Q_heater / ΔT_heater
    cal = {c["position"]: c for c in d["calibrations"]}
    eps_i = cal["before"]["heater_energy_J"] / cal["before"]["corrected_rise_K"]
    eps_f = cal["after"]["heater_energy_J"] / cal["after"]["corrected_rise_K"]
    assert d["calibration_basis"] == "mean"
    assert k01.energy_equivalent_J_per_K == pytest.approx((eps_i + eps_f) / 2, rel=1e-12)
    assert k01.energy_equivalent_J_per_K == pytest.approx(
        truth["energy_equivalent_J_per_K"], rel=1e-3)
    # 2. referral: the mean ε refers the result to T_i + ΔT_c/2 (docs/methods.md (2.2))
    reaction = d["events"][d["reaction_event_index"]]
    T_i, dT = reaction["T_initial_K"], k01.corrected_rise_K
    assert dT < 0  # KCl dissolves endothermically
    assert k01.reference_temperature_K == pytest.approx(T_i + dT / 2, abs=1e-9)
    # 3. vaporisation into the ampoule's 0.5 mL: a heat absorbed, i.e. a negative correction
    q_vap = _q_vap_J(0.5, T_i)
    assert k01.corrections_J["vaporisation"] == pytest.approx(-q_vap, rel=1e-3)
    # the simulator set its truth at the nominal 298.15 K (sample_runs/solution_day.py)
    assert -_q_vap_J(0.5, 298.15) == pytest.approx(truth["runs"]["K01"]["vaporisation_J"],
                                                   rel=1e-3)
    # 4. blank: each empty-ampoule run's heat minus its own (1.0 mL) vaporisation, averaged
    eps_series = reduction.calibrations[0].energy_equivalent_J_per_K
    blanks = []
    for rid in ("B01", "B02", "B03"):
        b = runs[rid]
        T_b = b.details["events"][-1]["T_initial_K"]
        blanks.append(eps_series * b.corrected_rise_K + _q_vap_J(1.0, T_b))
    assert k01.corrections_J["ampoule_breaking"] == pytest.approx(np.mean(blanks), abs=3e-5)
    true_break = np.mean([truth["runs"][r]["ampoule_breaking_J"] for r in ("B01", "B02",
                                                                           "B03")])
    assert np.mean(blanks) == pytest.approx(true_break, abs=3 * np.std(blanks, ddof=1))
    # 5. ΔH = −(ε ΔT_c − q_break − q_vap,released) / n,  n = m / M(KCl)
    n = 0.10779 / (39.0983 + 35.45)  # sheet mass; CIAAW conventional atomic weights
    q = k01.energy_equivalent_J_per_K * dT - sum(k01.corrections_J.values())
    assert k01.reaction_heat_J == pytest.approx(q, rel=1e-12)
    H = -q / n / 1000.0
    assert H > 0  # thermochemical sign: endothermic → ΔH > 0
    assert k01.molar_enthalpy_kJ_per_mol == pytest.approx(H, rel=1e-6)
    true_H = truth["runs"]["K01"]["molar_enthalpy_kJ_per_mol"]
    assert abs(k01.molar_enthalpy_kJ_per_mol - true_H) < 3 * k01.u_molar_enthalpy_kJ_per_mol
    assert k01.final_molality_mol_per_kg == pytest.approx(n / 0.072, rel=1e-6)


def test_infinite_dilution_by_hand(reduction, truth):
    (s,) = [x for x in reduction.samples if x.kind == "solution"]
    items = [r for r in reduction.runs if r.run in s.runs]
    T = np.mean([r.reference_temperature_K for r in items])
    shared = {"power_calibration", "blank_mean", "calibration_series"}
    y, w = [], []
    for r in items:
        b = r.details["budget_kJ_per_mol"]
        u_ind = math.sqrt(sum(v * v for k, v in b.items() if k not in shared))
        y.append(r.molar_enthalpy_kJ_per_mol
                 - _phi_L_kcl_J_per_mol(r.final_molality_mol_per_kg, T) / 1000.0)
        w.append(1.0 / u_ind**2)
    # Pitzer describes the m-dependence: Δ_solH∞ is the weighted mean of Δ_solH(m) − ΦL(m)
    assert s.infinite_dilution_enthalpy_kJ_per_mol == pytest.approx(
        np.average(y, weights=w), rel=1e-9)
    # the simulator's truth: Δ_solH∞ = 17.584 − ΦL(0.111) (sample_runs/solution_day.py)
    true_inf = 17.584 - _phi_L_kcl_J_per_mol(0.111, 298.15) / 1000.0
    assert abs(s.infinite_dilution_enthalpy_kJ_per_mol - true_inf) < (
        3 * s.u_infinite_dilution_enthalpy_kJ_per_mol)


def test_blanks_without_gas_volume_warn_of_double_counting(reduction, tmp_path):
    assert not any("counted twice" in w for r in reduction.runs for w in r.warnings)
    red = reduce_sheet(_sheet(tmp_path, blank_volumes=False))
    k01 = next(r for r in red.runs if r.run == "K01")
    assert "vaporisation" in k01.corrections_J
    assert any("counted twice" in w and "B01" in w for w in k01.warnings)
