"""Core records: errors, units, formula, thermogram."""

from __future__ import annotations

import pickle

import numpy as np
import pytest

from calwork.core.errors import ChoiceError, SheetError, TimeAxisError, check_choice
from calwork.core.thermogram import Thermogram
from calwork.core.units import BTU_IT_J, CAL_IT_J, CAL_TH_J, energy_per_mass_from_J_per_g
from calwork.formula import element_counts, molar_mass_g_per_mol


def test_error_template_and_pickle():
    err = SheetError(
        "must be a positive number", path="runs.csv", line=14, column="mass_g",
        found="0,98 g", expected="a number > 0",
    )
    assert str(err) == (
        "runs.csv:14: column 'mass_g': must be a positive number "
        "(expected a number > 0; got '0,98 g')"
    )
    again = pickle.loads(pickle.dumps(err))
    assert type(again) is SheetError
    assert str(again) == str(err)
    assert again.line == 14
    assert isinstance(again, ValueError)


def test_choice_lists_valid_options():
    with pytest.raises(ChoiceError, match=r"\['dickinson', 'newton-fit'\] \(got 'newton'\)"):
        check_choice("method", "newton", ["newton-fit", "dickinson"])


def test_exact_unit_factors():
    # Definitions of the calories (exact; pint international_calorie / thermochemical_calorie).
    assert CAL_IT_J == 4.1868
    assert CAL_TH_J == 4.184
    # Btu_IT = 1055.05585262 J exactly (scipy.constants.Btu_IT); 1 Btu_IT/lb = 2.326 J/g.
    assert BTU_IT_J == pytest.approx(1055.05585262, abs=1e-8)
    assert energy_per_mass_from_J_per_g(2.326, "Btu_IT/lb") == pytest.approx(1.0, rel=1e-14)
    # Benzoic-acid certificate in other units: 26454 J/g = 6318 cal_IT/g = 11373 Btu/lb.
    assert energy_per_mass_from_J_per_g(26454.0, "cal_IT/g") == pytest.approx(6318.4, abs=0.05)
    assert energy_per_mass_from_J_per_g(26454.0, "Btu_IT/lb") == pytest.approx(11373.2, abs=0.05)


def test_formula_counts_and_molar_mass():
    # Conventional atomic weights (CIAAW via periodictable): benzoic acid 122.123 g/mol.
    assert molar_mass_g_per_mol("C7H6O2") == pytest.approx(122.123, abs=5e-4)
    assert element_counts("MgSO4·7H2O") == {"Mg": 1, "S": 1, "O": 11, "H": 14}
    assert element_counts("CuSO4.5H2O")["H"] == 10
    assert element_counts("CH1.686O0.843") == {"C": 1, "H": 1.686, "O": 0.843}


def test_thermogram_rejects_time_going_back():
    with pytest.raises(TimeAxisError, match="strictly increasing"):
        Thermogram(time_s=[0, 1, 1], temperature_K=[298, 298, 298], rows=[2, 3, 4])


def test_thermogram_is_read_only_and_windows():
    tg = Thermogram(time_s=np.arange(10.0), temperature_K=np.full(10, 298.0))
    with pytest.raises(ValueError):
        tg.time_s[0] = 5.0
    assert tg.window(2, 5).n_points == 4


def test_run_info_checks_its_column_rules_once_however_it_is_made():
    # a record made through the API (or an amendment) gets the sheet's rules: the broken value
    # becomes a problem of the run (reported, never used), not a number the chain divides by
    from dataclasses import replace

    from calwork.core.runinfo import RunInfo, column_problem

    good = RunInfo(run="r1", kind="combustion", mass_g=0.5, ignition_J=1.0)
    assert good.problems == ()
    for field_name, value in (("mass_g", 0.0), ("mass_g", -0.5), ("ignition_J", -1.0),
                              ("o2_pressure_MPa", float("nan"))):
        bad = replace(good, **{field_name: value})
        (problem,) = bad.problems
        assert problem.column == field_name
        assert "run 'r1'" in str(problem)
    assert column_problem("sulfur_mass_fraction", 1.5)[0].startswith("a mass fraction")
