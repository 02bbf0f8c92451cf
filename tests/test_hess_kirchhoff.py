"""Heat-capacity models and Kirchhoff's law."""

from __future__ import annotations

import pytest
from scipy.integrate import quad

from calwork.core.errors import NetworkError
from calwork.hess.kirchhoff import (
    ConstantCp,
    Nasa7,
    Piecewise,
    Shomate,
    adjust_reaction_enthalpy,
    cp_model_from_dict,
)
from calwork.hess.reactions import Reaction

# NIST WebBook Shomate sets (recalled from memory): liquid water 298-500 K and N2(g) 100-500 K
WATER_L = Shomate(A=-203.6060, B=1523.290, C=-3196.413, D=2474.455, E=3.855326, F=-256.5478,
                  H=-285.8304, T_min_K=298.0, T_max_K=500.0, name="H2O(l)")
N2_SHOMATE = Shomate(A=28.98641, B=1.853978, C=-9.647459, D=16.63537, E=0.000117,
                     F=-8.671914, H=0.0, T_min_K=100.0, T_max_K=500.0, name="N2(g)")
# NASA 7-coefficient N2 set, 300-1000 K range (GRI-Mech 3.0 thermo data, recalled from memory)
N2_NASA = Nasa7(a=(3.298677, 1.4082404e-3, -3.963222e-6, 5.641515e-9, -2.444854e-12,
                   -1020.8999, 3.950372), T_min_K=300.0, T_max_K=1000.0, name="N2(g)")


@pytest.mark.parametrize("model", [WATER_L, N2_SHOMATE, N2_NASA])
def test_analytic_integral_matches_quadrature(model):
    lo, hi = max(model.T_min_K, 300.0), 480.0
    numeric, _ = quad(model.cp_J_per_mol_K_at, lo, hi)
    assert model.integral_J_per_mol(lo, hi) == pytest.approx(numeric, rel=1e-10)
    assert model.integral_J_per_mol(hi, lo) == pytest.approx(-numeric, rel=1e-10)


def test_shomate_sets_are_self_consistent():
    # the WebBook H − H(298.15) formula gives 0 at 298.15 K (to the sets' rounding)
    assert WATER_L.enthalpy_above_298_kJ_per_mol(298.15) == pytest.approx(0, abs=0.002)
    assert N2_SHOMATE.enthalpy_above_298_kJ_per_mol(298.15) == pytest.approx(0, abs=0.001)
    # Cp(298.15 K): water 75.3, N2 29.12 J/(mol K) (CODATA/JANAF, recalled from memory)
    assert WATER_L.cp_J_per_mol_K_at(298.15) == pytest.approx(75.3, abs=0.1)
    assert N2_SHOMATE.cp_J_per_mol_K_at(298.15) == pytest.approx(29.12, abs=0.02)
    # H(500 K) − H(298.15 K) of N2 = 5.912 kJ/mol (JANAF, recalled from memory)
    assert N2_SHOMATE.enthalpy_above_298_kJ_per_mol(500.0) == pytest.approx(5.912, abs=0.005)
    assert N2_SHOMATE.integral_J_per_mol(298.15, 500.0) / 1000 == pytest.approx(5.912, abs=0.005)


def test_shomate_and_nasa_agree_for_nitrogen():
    # two independent fits of the same data: within 0.2 % over 300-500 K
    a = N2_SHOMATE.integral_J_per_mol(300.0, 500.0)
    b = N2_NASA.integral_J_per_mol(300.0, 500.0)
    assert a == pytest.approx(b, rel=2e-3)


def test_piecewise_and_ranges():
    low = ConstantCp(cp_J_per_mol_K=30.0, T_min_K=200.0, T_max_K=300.0)
    high = ConstantCp(cp_J_per_mol_K=40.0, T_min_K=300.0, T_max_K=400.0)
    pw = Piecewise(pieces=(high, low), name="X")
    assert pw.integral_J_per_mol(250.0, 350.0) == pytest.approx(50 * 30 + 50 * 40)
    assert pw.integral_J_per_mol(350.0, 250.0) == pytest.approx(-(50 * 30 + 50 * 40))
    with pytest.raises(NetworkError, match="valid for"):
        pw.integral_J_per_mol(250.0, 450.0)
    with pytest.raises(NetworkError, match="do not join"):
        Piecewise(pieces=(low, ConstantCp(cp_J_per_mol_K=1.0, T_min_K=310.0, T_max_K=400.0)))


def test_kirchhoff_reaction_adjustment_and_missing_species():
    r = Reaction.from_equation("H2O(l) = H2O(g)")
    cps = {"H2O(l)": WATER_L, "H2O(g)": ConstantCp(cp_J_per_mol_K=33.6)}
    value, corr = adjust_reaction_enthalpy(r.stoichiometry, 43.0, 330.0, cps)
    expected = (33.6 * (298.15 - 330.0) - WATER_L.integral_J_per_mol(330.0, 298.15)) / 1000
    assert corr == pytest.approx(expected)
    assert value == pytest.approx(43.0 + expected)
    with pytest.raises(NetworkError, match=r"missing for \['H2O\(g\)'\]"):
        adjust_reaction_enthalpy(r.stoichiometry, 43.0, 330.0, {"H2O(l)": WATER_L})


def test_models_from_file_entries():
    m = cp_model_from_dict({"model": "nasa7", "coefficients": list(N2_NASA.a),
                            "T_min_K": 300, "T_max_K": 1000})
    assert m.integral_J_per_mol(300, 400) == pytest.approx(N2_NASA.integral_J_per_mol(300, 400))
    s = cp_model_from_dict({"model": "shomate", "A": 1, "B": 0, "C": 0, "D": 0, "E": 0,
                            "T_min_K": 100, "T_max_K": 500})
    assert s.integral_J_per_mol(300, 400) == pytest.approx(100.0)
    with pytest.raises(NetworkError, match="missing field"):
        cp_model_from_dict({"model": "constant"})
