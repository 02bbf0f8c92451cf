"""Reaction runs: sign convention, the (2.2) referral rule, amounts, molality, blanks."""

from __future__ import annotations

import math

import pytest

from calwork.core.errors import CalibrationError, ChoiceError, RunError, UncertaintyError
from calwork.formula import molar_mass_g_per_mol
from calwork.solution.blanks import blank_correction
from calwork.solution.reaction import (
    amount_of_substance_mol,
    dilution_ratio,
    final_molality_mol_per_kg,
    molar_enthalpy_J_per_mol,
    refer_energy_equivalent,
    reference_temperature_K,
    solution_enthalpy,
)


def test_sign_convention_exothermic_negative_endothermic_positive():
    # thermochemical convention (docs/methods.md §0): heat released by the system -> ΔH < 0
    assert molar_enthalpy_J_per_mol(360.0, +0.2, 0.004) < 0  # temperature rises: exothermic
    assert molar_enthalpy_J_per_mol(360.0, -0.2, 0.004) > 0  # temperature falls: endothermic
    assert molar_enthalpy_J_per_mol(360.0, -0.2, 0.004) == pytest.approx(18000.0)


def test_corrections_enter_with_the_right_sign():
    # ε ΔT_c = q_reaction + q_break + q_vap with q_break > 0 (released), q_vap < 0 (absorbed)
    eps, dT, n = 360.0, -0.1, 0.002
    q_break, q_vap = 0.010, -0.056
    H = molar_enthalpy_J_per_mol(eps, dT, n, q_break + q_vap)
    q_reaction = eps * dT - q_break - q_vap  # heat the dissolution alone released
    assert H == pytest.approx(-q_reaction / n)
    # the vaporisation made the measured heat more negative, so correcting for it makes the
    # endothermic enthalpy *smaller*; the breaking heat made it less negative -> larger
    assert H < molar_enthalpy_J_per_mol(eps, dT, n, q_break)
    assert molar_enthalpy_J_per_mol(eps, dT, n, q_break) > molar_enthalpy_J_per_mol(eps, dT, n)


def _tris_adiabatic_run(mass_g: float, eps_initial: float, T_initial_K: float):
    """An ideal adiabatic TRIS-in-HCl run with a Kirchhoff-consistent final heat capacity.

    Prosen & Kilday 1973 (J. Res. NBS 77A 581; docs/references.md §3, confirmed): Δ_rH =
    −245.76 J/g at 298.15 K and ΔCp = 1.435 J/(g K). The final contents' heat capacity is
    ε_f = ε_i + m ΔCp. Path "react at T_i, then heat the products" gives
    0 = ΔH(T_i) + ε_f ΔT (docs/methods.md (2.2), derived).
    """
    dCp = 1.435 * mass_g
    H_Ti = (-245.76 + 1.435 * (T_initial_K - 298.15)) * mass_g
    eps_final = eps_initial + dCp
    dT = -H_Ti / eps_final
    return H_Ti, dCp, eps_final, dT


def test_referral_rule_with_different_initial_and_final_energy_equivalents():
    eps_i, Ti, m = 360.0, 298.0, 0.5
    H_Ti, dCp, eps_f, dT = _tris_adiabatic_run(m, eps_i, Ti)
    assert eps_f != eps_i
    budget = {"heater_rise": 0.05}
    kwargs = {"T_initial_K": Ti, "corrected_rise_K": dT, "before": (eps_i, budget),
                  "after": (eps_f, budget)}
    after = refer_energy_equivalent(basis="after", **kwargs)
    before = refer_energy_equivalent(basis="before", **kwargs)
    mean = refer_energy_equivalent(basis="mean", **kwargs)
    # calibrate after -> ΔH at T_i
    assert after.reference_temperature_K == pytest.approx(Ti)
    assert -after.energy_equivalent_J_per_K * dT == pytest.approx(H_Ti, rel=1e-12)
    # calibrate before -> ΔH at T_i + ΔT (Kirchhoff: ΔH(T_f) = ΔH(T_i) + ΔCp ΔT)
    assert before.reference_temperature_K == pytest.approx(Ti + dT)
    assert -before.energy_equivalent_J_per_K * dT == pytest.approx(H_Ti + dCp * dT, rel=1e-12)
    # mean -> ΔH at the mean temperature (exact for a constant ΔCp)
    assert mean.reference_temperature_K == pytest.approx(Ti + dT / 2)
    assert -mean.energy_equivalent_J_per_K * dT == pytest.approx(H_Ti + dCp * dT / 2, rel=1e-12)
    # and at 298.15 K each referred value lands on the certified −245.76 J/g via ΔCp
    for r in (after, before, mean):
        H = -r.energy_equivalent_J_per_K * dT / m
        assert H - 1.435 * (r.reference_temperature_K - 298.15) == pytest.approx(-245.76,
                                                                              abs=1e-9)


def test_auto_basis_and_missing_calibrations():
    b = {"heater_rise": 0.05}
    r = refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=0.1, after=(300.0, b))
    assert r.basis == "after"
    r = refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=0.1,
                                series=(300.0, {"calibration_series": 0.1}))
    assert r.basis == "series"
    assert r.reference_temperature_K == pytest.approx(298.25)
    with pytest.raises(CalibrationError, match="calorimeter"):
        refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=0.1)
    with pytest.raises(CalibrationError, match="heater_V"):
        refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=0.1, basis="mean",
                                before=(300.0, b))
    with pytest.raises(ChoiceError, match="calibration"):
        refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=0.1, basis="middle")
    with pytest.raises(ChoiceError, match="basis"):
        reference_temperature_K(298.15, 0.1, "auto")


def test_mean_of_two_calibrations_keeps_shared_components_whole():
    a = {"heater_rise": 0.06, "power_calibration": 0.036}
    b = {"heater_rise": 0.08, "power_calibration": 0.036}
    r = refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=-0.1, before=(360.0, a),
                                after=(360.2, b), basis="mean")
    # independent: ½√(u1² + u2²); shared (same instruments): not reduced (docs/methods.md §4.5)
    assert r.budget["heater_rise"] == pytest.approx(0.5 * math.hypot(0.06, 0.08))
    assert r.budget["power_calibration"] == pytest.approx(0.036)


def test_amount_of_substance():
    # TRIS C4H11NO3: M = 121.136 g/mol (Prosen & Kilday 1973 use 121.136; conventional weights)
    assert molar_mass_g_per_mol("C4H11NO3") == pytest.approx(121.136, abs=0.002)
    n, u, src = amount_of_substance_mol(mass_g=0.5, formula="C4H11NO3", u_mass_g=2e-5)
    assert n == pytest.approx(0.5 / molar_mass_g_per_mol("C4H11NO3"))
    assert u == pytest.approx(n * 2e-5 / 0.5)
    assert src == "mass_g/M(C4H11NO3)"
    n, u, src = amount_of_substance_mol(amount_mol=0.003)
    assert (n, u, src) == (0.003, 0.0, "amount_mol")
    with pytest.raises(RunError, match="amount_mol"):
        amount_of_substance_mol()
    with pytest.raises(RunError, match="formula"):
        amount_of_substance_mol(mass_g=0.5)
    with pytest.raises(RunError, match="mass_g"):
        amount_of_substance_mol(formula="KCl")
    with pytest.raises(RunError, match="amount_mol"):
        amount_of_substance_mol(amount_mol=-1.0)


def test_molality_and_dilution_ratio_for_srm1655_conditions():
    # n(H2O)/n(KCl) = 500 ⇔ m = 1000/(500 × 18.015) = 0.1110 mol/kg (docs/references.md §3:
    # SRM 1655 certified at 0.111 mol/kg, i.e. 1:500; water M = 18.015 g/mol)
    n_kcl = 0.5 / molar_mass_g_per_mol("KCl")
    water_g = 500 * 18.015 * n_kcl
    assert dilution_ratio(n_kcl, water_g) == pytest.approx(500.0)
    assert final_molality_mol_per_kg(n_kcl, water_g) == pytest.approx(0.1110, abs=5e-5)
    with pytest.raises(RunError, match="solvent_mass_g"):
        final_molality_mol_per_kg(n_kcl, 0.0)


def test_solution_enthalpy_budget_by_hand():
    ref = refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=-0.1,
                                  before=(360.0, {"heater_rise": 0.3}), basis="before")
    se = solution_enthalpy(energy_equivalent=ref, corrected_rise_K=-0.1,
                           u_corrected_rise_K=2e-5, amount_mol=0.002, u_amount_mol=1e-7,
                           corrections={"ampoule_breaking": (0.01, 0.004)},
                           extra_uncertainties_J={"blank_mean": 0.002})
    H = -(360.0 * -0.1 - 0.01) / 0.002 / 1000.0
    assert se.molar_enthalpy_kJ_per_mol == pytest.approx(H)
    assert se.reaction_heat_J == pytest.approx(-36.01)
    expected = math.sqrt((360 * 2e-5 / 0.002) ** 2 + (0.1 * 0.3 / 0.002) ** 2
                         + (H * 1000 * 1e-7 / 0.002) ** 2 + (0.004 / 0.002) ** 2
                         + (0.002 / 0.002) ** 2) / 1000.0
    assert se.u_molar_enthalpy_kJ_per_mol == pytest.approx(expected)
    assert se.u_independent_kJ_per_mol < se.u_molar_enthalpy_kJ_per_mol  # blank_mean shared


def test_blank_correction_statistics():
    b = blank_correction([0.010, 0.014, 0.009, 0.011], runs=["b1", "b2", "b3", "b4"],
                         calorimeter="cell-1")
    assert b.mean_J == pytest.approx(0.011)
    s = math.sqrt(((0.010 - 0.011) ** 2 + 0.003**2 + 0.002**2 + 0.0) / 3)
    assert b.std_dev_J == pytest.approx(s)
    assert b.u_mean_J == pytest.approx(s / 2)
    assert b.u_J == pytest.approx(s * math.sqrt(1 + 1 / 4))
    assert "mJ" in b.report()
    one = blank_correction([0.012], runs=["b1"], u_values_J=[0.003])
    assert one.u_spread_J == 0.003
    assert one.warnings
    with pytest.raises(UncertaintyError, match="single blank"):
        blank_correction([0.012], runs=["b1"])
    with pytest.raises(UncertaintyError, match="identical"):
        blank_correction([0.01, 0.01], runs=["b1", "b2"])
