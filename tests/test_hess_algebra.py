"""Reaction algebra: reverse, scale, add, and exact Hess combinations."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

from calwork.core.errors import CombinationError, EquationError
from calwork.hess.algebra import combine, nullspace, solve_exact
from calwork.hess.reactions import Reaction
from calwork.hess.species import parse_species

R = Reaction.from_equation

# docs/references.md §1d: C(gr) + ½O2 → CO −110.53 (CODATA, memory) and CO + ½O2 → CO2 −282.98
# (derived: −393.51 − (−110.53)); their sum is ΔfH°(CO2, g) = −393.51 (CODATA, confirmed).
CO = R("C(cr,graphite) + 1/2 O2(g) = CO(g)", -110.53, 0.085, id="CO")
CO2 = R("CO(g) + 1/2 O2(g) = CO2(g)", -282.98, 0.11, id="CO->CO2")


def test_worked_example_co_co2():
    comb = combine("C(cr,graphite) + O2(g) = CO2(g)", [CO, CO2])
    assert comb.multipliers == {"CO": 1, "CO->CO2": 1}
    assert comb.delta_r_H_kJ_per_mol == pytest.approx(-393.51, abs=1e-9)
    assert comb.u_delta_r_H_kJ_per_mol == pytest.approx(math.hypot(0.085, 0.11), rel=1e-12)
    text = comb.report()
    assert "cancels: CO(g)" in text
    assert "-393.51" in text
    # the same with the + operator
    total = CO + CO2
    assert total.equation == "C(cr,graphite) + O2(g) = CO2(g)"
    assert total.delta_r_H_kJ_per_mol == pytest.approx(-393.51)


def test_combine_with_reverse_and_fraction_multipliers():
    # CO from CO2 and the CO combustion: target = CO2 formation − CO combustion
    co2_f = R("C(cr,graphite) + O2(g) = CO2(g)", -393.51, 0.065, id="f")
    comb = combine("2 C(cr,graphite) + O2(g) = 2 CO(g)", [co2_f, CO2])
    assert comb.multipliers == {"f": 2, "CO->CO2": -2}
    assert comb.delta_r_H_kJ_per_mol == pytest.approx(2 * -110.53)
    comb = combine("1/3 C(cr,graphite) + 1/6 O2(g) = 1/3 CO(g)", [CO])
    assert comb.multipliers["CO"] == Fraction(1, 3)


def test_combine_with_covariance():
    cov = {("CO", "CO->CO2"): 0.5 * 0.085 * 0.11}
    comb = combine("C(cr,graphite) + O2(g) = CO2(g)", [CO, CO2], covariance=cov)
    expected = math.sqrt(0.085**2 + 0.11**2 + 2 * 0.5 * 0.085 * 0.11)  # JCGM 100 eq. 13
    assert comb.u_delta_r_H_kJ_per_mol == pytest.approx(expected, rel=1e-12)
    full = np.array([[0.085**2, cov[("CO", "CO->CO2")]], [cov[("CO", "CO->CO2")], 0.11**2]])
    assert combine("C(cr,graphite) + O2(g) = CO2(g)", [CO, CO2],
                   covariance=full).u_delta_r_H_kJ_per_mol == pytest.approx(expected)


def test_combine_impossible_and_non_unique_raise():
    with pytest.raises(CombinationError, match="not a combination"):
        combine("H2(g) + 1/2 O2(g) = H2O(l)", [CO, CO2])
    dup = R("C(cr,graphite) + 1/2 O2(g) = CO(g)", -110.5, 0.2, id="CO-bis")
    with pytest.raises(CombinationError, match="not a unique one") as info:
        combine("C(cr,graphite) + O2(g) = CO2(g)", [CO, dup, CO2])
    assert info.value.directions == ["[CO] - [CO-bis] = 0"] or \
        info.value.directions == ["- [CO] + [CO-bis] = 0"]


def test_reverse_scale_and_uncertainty():
    r = CO.reversed()
    assert r.delta_r_H_kJ_per_mol == 110.53
    assert r.u_delta_r_H_kJ_per_mol == 0.085
    assert r.stoichiometry[parse_species("CO(g)")] == -1
    s = CO.scaled("2")
    assert s.delta_r_H_kJ_per_mol == pytest.approx(-221.06)
    assert s.u_delta_r_H_kJ_per_mol == pytest.approx(0.17)
    assert CO.scaled(-1).stoichiometry == r.stoichiometry
    with pytest.raises(EquationError):
        CO.scaled(0)
    with pytest.raises(EquationError, match="cancel completely"):
        CO + CO.reversed()


def test_pretty_in_trade_notation():
    text = CO.pretty()
    assert text == "C(cr,graphite) + 1/2 O2(g) = CO(g)   ΔrH = -110.53 ± 0.085 kJ/mol"
    assert R("2 H2(g) + O2(g) = 2 H2O(l)").delta_n_gas() == -3


def test_exact_solver_helpers():
    m = [[Fraction(1), Fraction(2)], [Fraction(2), Fraction(4)]]
    assert nullspace(m, 2) == [[Fraction(-2), Fraction(1)]]
    x, null = solve_exact([[Fraction(1), Fraction(1)], [Fraction(1), Fraction(-1)]],
                          [Fraction(3), Fraction(1)])
    assert x == [2, 1]
    assert null == []
    x, _ = solve_exact(m, [Fraction(1), Fraction(3)])
    assert x is None
