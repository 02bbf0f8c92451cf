"""Species and equation parsing of the Hess back-solver."""

from __future__ import annotations

from fractions import Fraction

import pytest

from calwork.core.errors import BalanceError, EquationError, FormulaError
from calwork.hess.equations import parse_coefficient, parse_equation
from calwork.hess.species import parse_species


@pytest.mark.parametrize(
    ("text", "name", "charge", "state"),
    [
        ("H2O(l)", "H2O(l)", 0, "l"),
        ("H2O(g)", "H2O(g)", 0, "g"),
        ("C(cr,graphite)", "C(cr,graphite)", 0, "cr,graphite"),
        ("C(cr, diamond)", "C(cr,diamond)", 0, "cr,diamond"),
        ("NaCl(cr)", "NaCl(cr)", 0, "cr"),
        ("Na+(aq)", "Na+(aq)", 1, "aq"),
        ("Cl-(aq)", "Cl-(aq)", -1, "aq"),
        ("SO4-2(aq)", "SO4^2-(aq)", -2, "aq"),
        ("SO4^2-(aq)", "SO4^2-(aq)", -2, "aq"),
        ("SO4 2-(aq)", "SO4^2-(aq)", -2, "aq"),
        ("SO4--(aq)", "SO4^2-(aq)", -2, "aq"),
        ("SO4²⁻(aq)", "SO4^2-(aq)", -2, "aq"),
        ("Fe+3(aq)", "Fe^3+(aq)", 3, "aq"),
        ("Fe^3+(aq)", "Fe^3+(aq)", 3, "aq"),
        ("NH4+(aq)", "NH4+(aq)", 1, "aq"),
        ("HCl(aq,1:50)", "HCl(aq,1:50)", 0, "aq,1:50"),
        ("H2SO4·115H2O(l)", "H2SO4·115H2O(l)", 0, "l"),
        ("Ca(OH)2(cr)", "Ca(OH)2(cr)", 0, "cr"),
    ],
)
def test_species_notation(text, name, charge, state):
    sp = parse_species(text)
    assert (sp.name, sp.charge, sp.state) == (name, charge, state)


def test_hydrate_joins_are_one_species_and_counts_are_exact():
    a = parse_species("MgSO4·7H2O(cr)")
    assert a == parse_species("MgSO4*7H2O(cr)") == parse_species("MgSO4.7H2O(cr)")
    # MgSO4·7H2O: Mg 1, S 1, O 4 + 7, H 14 (formula arithmetic)
    assert dict(a.elements) == {"Mg": 1, "S": 1, "O": 11, "H": 14}
    assert parse_species("H2SO4·115H2O(l)").elements["H"] == Fraction(232)


def test_states_are_never_merged():
    assert parse_species("H2O(l)") != parse_species("H2O(g)")
    assert parse_species("HCl(aq,1:50)") != parse_species("HCl(aq)")
    assert parse_species("C(cr,graphite)") != parse_species("C(cr,diamond)")
    eq = parse_equation("H2O(l) = H2O(g)")
    assert len(eq.stoichiometry) == 2


@pytest.mark.parametrize("bad", ["H2O", "H2O(liquid)", "Xx(g)", "H2O(l", "", "H2$O(l)"])
def test_bad_species_raise_formula_error(bad):
    with pytest.raises(FormulaError):
        parse_species(bad)


def test_coefficients_exact():
    eq = parse_equation("C7H6O2(cr) + 15/2 O2(g) -> 7 CO2(g) + 3 H2O(l)")
    assert eq.stoichiometry[parse_species("O2(g)")] == Fraction(-15, 2)
    eq2 = parse_equation("H2(g) + 0.5 O2(g) = H2O(l)")
    assert eq2.stoichiometry[parse_species("O2(g)")] == Fraction(-1, 2)
    eq3 = parse_equation("H2(g) + ½O2(g) → H2O(l)")
    assert eq3.stoichiometry == eq2.stoichiometry
    assert parse_coefficient("0.1") == Fraction(1, 10)
    assert parse_coefficient(0.1) == Fraction(1, 10)


def test_charge_plus_is_not_a_separator():
    eq = parse_equation("NaCl(cr) = Na+(aq) + Cl-(aq)")
    assert {s.name for s in eq.stoichiometry} == {"NaCl(cr)", "Na+(aq)", "Cl-(aq)"}
    eq = parse_equation("H2SO4(l) = 2 H+(aq) + SO4 2-(aq)")
    assert eq.stoichiometry[parse_species("SO4^2-(aq)")] == 1


def test_unbalanced_reaction_names_element_and_amount():
    with pytest.raises(BalanceError, match=r"O off by 1 \(excess on the reactants\)") as info:
        parse_equation("C(cr,graphite) + O2(g) = CO(g)")
    assert info.value.imbalance == {"O": Fraction(-1)}
    with pytest.raises(BalanceError, match=r"O off by 1/2") as info:
        parse_equation("H2(g) + O2(g) = H2O(l) + 1/4 O2(g)")
    assert info.value.imbalance == {"O": Fraction(-1, 2)}
    with pytest.raises(BalanceError, match="H off by 2") as info:
        parse_equation("CH4(g) + 2 O2(g) = CO2(g) + H2O(l)")
    assert info.value.imbalance == {"H": Fraction(-2), "O": Fraction(-1)}


def test_charge_balance_checked():
    with pytest.raises(BalanceError, match="charge off by 1") as info:
        parse_equation("NaCl(cr) = Na+(aq) + Cl(g)")
    assert info.value.imbalance["charge"] == 1
    # 'SO42-' is a singly charged SO42 by the documented rule: the balance catches it
    with pytest.raises(BalanceError, match="O off by 38"):
        parse_equation("H2SO4(l) = 2 H+(aq) + SO42-(aq)")


def test_equation_errors_carry_position():
    with pytest.raises(EquationError, match="at character") as info:
        parse_equation("C(cr,graphite) + O2(g) CO2(g)")
    assert info.value.position >= 0
    with pytest.raises(EquationError, match="no state"):
        parse_equation("C(cr,graphite) + O2 = CO2(g)")
    with pytest.raises(EquationError):
        parse_equation("A(g) = = B(g)")
