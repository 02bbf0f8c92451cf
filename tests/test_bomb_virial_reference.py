"""The bomb-gas virial model against an independent reference, and the Washburn correction of
benzoic acid against the value its published combustion enthalpy implies.

Reference for the gases: GERG-2008 (Kunz & Wagner, J. Chem. Eng. Data 57 (2012) 3032) as
implemented in CoolProp (a general-purpose property library from the package registry, used
here as a test-only dependency). GERG-2008's mixture B is not exactly quadratic in
composition, so its cross coefficient is taken at the composition of a bomb's final gas
(y_O2 = 0.85): B_12 = (B_mix − y1² B_11 − y2² B_22) / (2 y1 y2).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from calwork.bomb.gases import CROSS_MODELS, virial_B_m3_per_mol
from calwork.bomb.washburn import (
    Combustible,
    bomb_states,
    state_departure_J,
    washburn_correction,
)
from calwork.core.constants import R_J_per_mol_K, STANDARD_ATMOSPHERE_Pa
from calwork.formula import molar_mass_g_per_mol

CP = pytest.importorskip("CoolProp.CoolProp")
AbstractState = pytest.importorskip("CoolProp").AbstractState

FLUIDS = {"O2": "Oxygen", "CO2": "CarbonDioxide", "N2": "Nitrogen"}
TEMPERATURES = np.linspace(288.15, 308.15, 5)


def gerg_mixture_B(fluids: str, y1: float, T: float) -> tuple[float, float]:
    """(B, dB/dT) of a binary mixture in cm³/mol and cm³/(mol K), GERG-2008 via CoolProp."""
    state = AbstractState("HEOS", fluids)
    state.set_mole_fractions([y1, 1 - y1])
    state.specify_phase(CP.iphase_gas)
    state.update(CP.DmolarT_INPUTS, 1e-6, T)  # the zero-density limit
    return state.Bvirial() * 1e6, state.dBvirial_dT() * 1e6


def gerg_cross(a: str, b: str, T: float, y_a: float) -> tuple[float, float]:
    pair = f"{FLUIDS[a]}&{FLUIDS[b]}"
    b11, d11 = gerg_mixture_B(pair, 1.0, T)
    b22, d22 = gerg_mixture_B(pair, 0.0, T)
    bm, dm = gerg_mixture_B(pair, y_a, T)
    w = 2 * y_a * (1 - y_a)
    return ((bm - y_a**2 * b11 - (1 - y_a) ** 2 * b22) / w,
            (dm - y_a**2 * d11 - (1 - y_a) ** 2 * d22) / w)


@pytest.mark.parametrize(("gas", "u_B", "rel_dB"), [
    # tolerances: the Tsonopoulos correlation's known accuracy for simple gases, about
    # 1 cm³/mol in B and 1–2 % in dB/dT near room temperature (measured here: O2 0.33/1.2 %,
    # CO2 0.84/1.1 %, N2 0.54/2.3 %); the budget's pure-gas component assumes 1.5 %
    ("O2", 0.5, 0.015), ("CO2", 1.0, 0.015), ("N2", 0.7, 0.03)])
def test_pure_gas_virial_coefficients_against_gerg(gas, u_B, rel_dB):
    for T in TEMPERATURES:
        B_ref, dB_ref = _pure(gas, T)
        B, dB = (v * 1e6 for v in virial_B_m3_per_mol(gas, gas, T))
        assert B == pytest.approx(B_ref, abs=u_B)
        assert dB == pytest.approx(dB_ref, rel=rel_dB)


def _pure(gas: str, T: float) -> tuple[float, float]:
    state = AbstractState("HEOS", FLUIDS[gas])
    state.specify_phase(CP.iphase_gas)
    state.update(CP.DmolarT_INPUTS, 1e-6, T)
    return state.Bvirial() * 1e6, state.dBvirial_dT() * 1e6


def test_o2_co2_cross_coefficient_against_gerg():
    for T in TEMPERATURES:
        B_ref, dB_ref = gerg_cross("O2", "CO2", T, 0.85)
        B, dB = (v * 1e6 for v in virial_B_m3_per_mol("O2", "CO2", T))
        # dB/dT drives the gas energy: within 0.01 cm³/(mol K) (0.03 moves the benzoic-acid
        # correction by about 1 J/g); B itself (fugacities, pressure) within 3 cm³/mol
        assert dB == pytest.approx(dB_ref, abs=0.01)
        assert B == pytest.approx(B_ref, abs=3.0)
        # the alternative fit matches B instead
        B_alt, _ = (v * 1e6 for v in virial_B_m3_per_mol("O2", "CO2", T, "gerg-B"))
        assert B_alt == pytest.approx(B_ref, abs=0.5)
    # the old combining rule (k_ij = 0) was 0.416 at 298.15 K: the fit is well away from it
    assert virial_B_m3_per_mol("O2", "CO2", 298.15)[1] * 1e6 < 0.39


@pytest.mark.parametrize("pair", [("N2", "CO2"), ("N2", "O2")])
def test_nitrogen_cross_coefficients_against_gerg(pair):
    B_ref, dB_ref = gerg_cross(*pair, 298.15, 0.5)
    B, dB = (v * 1e6 for v in virial_B_m3_per_mol(*pair, 298.15))
    assert dB == pytest.approx(dB_ref, abs=0.01)
    assert B == pytest.approx(B_ref, abs=3.5)


def _benzoic_acid_correction_J_per_g():
    ba = Combustible.from_formula("sample", "C7H6O2", 3.0, density_g_per_cm3=1.320,
                                  heat_capacity_J_per_g_K=1.202)
    # standard bomb conditions of the benzoic-acid certificates: 1 L, 3 g sample, 3 g water,
    # 30 atm O2 at 25 °C
    r = washburn_correction([ba], bomb_volume_L=1.0, bomb_water_g=3.0,
                            o2_pressure_MPa=30 * STANDARD_ATMOSPHERE_Pa / 1e6)
    return r


def test_benzoic_acid_correction_matches_its_published_combustion_enthalpy():
    # Δ_cH°(C7H6O2, cr) = −3226.87 kJ/mol (Mosselman & Dekker 1969, NIST WebBook); with
    # Δn_gas = −1/2, Δ_cU° = Δ_cH° + RT/2 = −26 413.0 J/g; the certificate value under
    # standard bomb conditions is −26 434 J/g (NIST SRM 39j): the correction it implies is
    # +21.0 J/g.
    T = 298.15
    implied = (-3226.87e3 + 0.5 * R_J_per_mol_K * T) / molar_mass_g_per_mol("C7H6O2") + 26434
    assert implied == pytest.approx(21.0, abs=0.1)
    r = _benzoic_acid_correction_J_per_g()
    assert r.correction_J / 3.0 == pytest.approx(implied, abs=0.5)


def test_correction_uncertainty_covers_the_model_spread():
    r = _benzoic_acid_correction_J_per_g()
    parts = r.u_components_J
    assert set(parts) == {"cross_virial_model", "pure_gas_virial", "other_property_data"}
    assert all(v > 0 for v in parts.values())
    assert r.u_correction_J == pytest.approx(math.sqrt(sum(v * v for v in parts.values())))
    # the other GERG-2008 fit, recomputed here from the departures of the same states,
    # differs by √3 × the model component (rectangular half-width)
    assert set(CROSS_MODELS) == {"gerg-dBdT", "gerg-B"}
    alt = (sum(state_departure_J(r.initial, "gerg-B").values())
           - sum(state_departure_J(r.final, "gerg-B").values()))
    assert abs(alt - r.correction_J) == pytest.approx(math.sqrt(3) * parts["cross_virial_model"],
                                                      rel=1e-9)
    # with the states recomputed for the other fit the spread is within 10 % of that (measured
    # 3.32 J against 3.58 J, 7 %: the states change a little with the model), and
    # smaller: the same-state estimate errs on the safe side
    full = abs(_correction_with("gerg-B") - r.correction_J)
    same_states = abs(alt - r.correction_J)
    assert full == pytest.approx(same_states, rel=0.10)
    assert full <= same_states
    # the old combining rule (k_ij = 0, +23.2 J/g) lies outside 2u: it was the defect
    assert abs(23.2 * 3.0 - r.correction_J) > 2 * r.u_correction_J
    assert 0.3 < r.u_correction_J / 3.0 < 1.5


def _correction_with(model: str) -> float:
    ba = Combustible.from_formula("sample", "C7H6O2", 3.0, density_g_per_cm3=1.320,
                                  heat_capacity_J_per_g_K=1.202)
    ini, fin = bomb_states([ba], bomb_volume_L=1.0, bomb_water_g=3.0,
                           o2_pressure_MPa=30 * STANDARD_ATMOSPHERE_Pa / 1e6, cross_model=model)
    return (sum(state_departure_J(ini, model).values())
            - sum(state_departure_J(fin, model).values()))
