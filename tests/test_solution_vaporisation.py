"""Vaporisation into the ampoule's gas space: water vapour pressure, Δ_vapH, n_v and q_vap."""

from __future__ import annotations

import pytest
from chemicals.iapws import Psat_IAPWS, iapws95_properties, iapws95_saturation

from calwork.core.constants import R_J_per_mol_K
from calwork.core.errors import ChoiceError, RunError
from calwork.solution.vaporisation import (
    vaporisation_correction_J,
    vapour_amount_mol,
    water_enthalpy_of_vaporisation_J_per_mol,
    water_vapour_pressure_Pa,
)


@pytest.mark.parametrize(("T_K", "p_MPa"), [
    (300.0, 0.353658941e-2),  # IAPWS-IF97 verification table for region 4 (recalled from memory)
    (500.0, 0.263889776e1),
    (600.0, 0.123443146e2),
])
def test_saturation_pressure_reproduces_if97_verification_values(T_K, p_MPa):
    assert water_vapour_pressure_Pa(T_K) == pytest.approx(p_MPa * 1e6, rel=1e-8)


@pytest.mark.parametrize("T_K", [278.15, 288.15, 298.15, 308.15, 318.15])
def test_saturation_pressure_matches_chemicals_library(T_K):
    # chemicals 1.5.2 Psat_IAPWS implements the same IF97 equation (general-purpose library)
    assert water_vapour_pressure_Pa(T_K) == pytest.approx(Psat_IAPWS(T_K), rel=1e-10)


def test_saturation_pressure_at_25C_against_iapws95():
    # IAPWS-95 (a different formulation) via chemicals: 3169.93 Pa; IF97 agrees to < 1e-4
    p95 = iapws95_saturation(298.15)[0]
    assert water_vapour_pressure_Pa(298.15) == pytest.approx(p95, rel=1e-4)


@pytest.mark.parametrize("T_K", [293.15, 298.15, 300.65, 305.0])
def test_enthalpy_of_vaporisation_against_iapws95(T_K):
    # h(vapour) − h(liquid) at saturation from IAPWS-95 (chemicals 1.5.2), M = 18.015268 g/mol;
    # the bundled table interpolates linearly between 5 K steps (good to about 1e-4 kJ/mol)
    p = iapws95_saturation(T_K)[0]
    h_l = iapws95_properties(T_K, p * 1.000001)[3]
    h_g = iapws95_properties(T_K, p * 0.999999)[3]
    expected = (h_g - h_l) * 18.015268e-3
    assert water_enthalpy_of_vaporisation_J_per_mol(T_K) == pytest.approx(expected, abs=0.5)


def test_enthalpy_of_vaporisation_near_the_standard_value():
    # Δ_vapH°(H2O, 298.15 K) = 44.004 kJ/mol from CODATA ΔfH (docs/references.md §1d, derived); the
    # saturation value differs from the standard one only by the vapour non-ideality (~16 J/mol)
    assert water_enthalpy_of_vaporisation_J_per_mol(298.15) == pytest.approx(44004.0, abs=30.0)


def test_worked_example_one_cubic_centimetre_at_25C():
    # docs/methods.md §2.4 (derived): water, V_a = 1 cm³, 298.15 K -> n_v ≈ 1.28 µmol -> ≈ 0.056 J
    c = vaporisation_correction_J(1.0, 298.15)
    assert c.vapour_amount_mol == pytest.approx(1.28e-6, abs=0.005e-6)
    assert c.heat_absorbed_J == pytest.approx(0.056, abs=0.0005)
    assert c.correction_J == -c.heat_absorbed_J  # absorbed heat: negative as heat released
    # by hand: p V/(R T) with p = 3169.7 Pa
    assert c.vapour_amount_mol == pytest.approx(3169.7468 * 1e-6 / (R_J_per_mol_K * 298.15),
                                                rel=1e-6)


def test_vaporisation_scales_with_volume_and_rises_with_temperature():
    a = vaporisation_correction_J(0.5, 298.15).heat_absorbed_J
    b = vaporisation_correction_J(2.0, 298.15).heat_absorbed_J
    assert b == pytest.approx(4.0 * a, rel=1e-12)
    assert vaporisation_correction_J(1.0, 303.15).heat_absorbed_J > (
        vaporisation_correction_J(1.0, 298.15).heat_absorbed_J)


def test_uncertainty_default_and_explicit():
    c = vaporisation_correction_J(1.0, 298.15)
    # bundled default: 20 % relative uncertainty of the gas volume (common practice estimate)
    assert c.u_heat_absorbed_J == pytest.approx(0.2 * c.heat_absorbed_J)
    d = vaporisation_correction_J(1.0, 298.15, u_gas_volume_mL=0.05)
    assert d.u_heat_absorbed_J == pytest.approx(0.05 * d.heat_absorbed_J)
    assert "µmol" in d.report()


def test_vapour_amount_ideal_gas_law():
    # pV = nRT: 101325 Pa in 22.711 L at 273.15 K is one mole (IUPAC molar volume at 1 bar is
    # 22.711 L at 100 kPa; here computed directly from R)
    V_mL = R_J_per_mol_K * 273.15 / 101325.0 * 1e6
    assert vapour_amount_mol(V_mL, 273.15, 101325.0) == pytest.approx(1.0, rel=1e-12)


def test_bad_inputs_raise_calwork_errors():
    with pytest.raises(RunError, match="ampoule_gas_volume_mL"):
        vaporisation_correction_J(-1.0, 298.15)
    with pytest.raises(RunError, match="temperature_K"):
        water_vapour_pressure_Pa(200.0)
    with pytest.raises(RunError, match="temperature_K"):
        water_enthalpy_of_vaporisation_J_per_mol(350.0)
    with pytest.raises(ChoiceError, match="solvent"):
        vaporisation_correction_J(1.0, 298.15, solvent="ethanol")
