"""Budget records: components with units, checked on construction, combined by the one
propagation module, and read back from their JSON form unchanged (property-based)."""

from __future__ import annotations

import json
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calwork.core.errors import UncertaintyError
from calwork.core.uncertainty import Budget, Component, root_sum_square

values = st.floats(min_value=0.0, max_value=1e6, allow_nan=False, allow_infinity=False)
names = st.text(alphabet="abcdefghijklmnopqrstuvwxyz_", min_size=1, max_size=12)


@settings(max_examples=200, deadline=None)
@given(st.dictionaries(names, values, min_size=1, max_size=8),
       st.sampled_from(["J/K", "J/g", "kJ/mol", "K"]))
def test_json_round_trip(parts, unit):
    b = Budget.of("quantity", unit, parts, units={next(iter(parts)): "1"},
                  keys={next(iter(parts)): "shared"})
    again = Budget.from_dict(json.loads(json.dumps(b.to_dict())))
    assert again == b
    assert dict(again) == parts


def test_total_is_the_root_sum_of_squares_of_its_own_unit():
    b = Budget.of("ε", "J/K", {"scatter": 0.3, "certificate": 0.4, "relative": 5e-5},
                  units={"relative": "1"})
    assert b.total() == pytest.approx(0.5)  # 3-4-5, the relative one reported, not summed
    assert b.unit_of("relative") == "1"
    assert b["certificate"] == 0.4


@pytest.mark.parametrize("bad", [-1e-9, math.nan, math.inf])
def test_a_bad_component_is_refused_not_clamped(bad):
    with pytest.raises(UncertaintyError, match="negative or not finite"):
        Component(name="x", value=bad, unit="K")
    with pytest.raises(UncertaintyError, match="could not be evaluated"):
        root_sum_square({"x": bad})


def test_a_zero_total_is_refused_where_it_must_not_be():
    with pytest.raises(UncertaintyError, match="zero"):
        Budget.of("ΔT", "K", {"fit": 0.0}).total()
    assert root_sum_square([0.0, 0.0]) == 0.0  # a component may be zero


def test_names_are_unique():
    with pytest.raises(UncertaintyError, match="twice"):
        Budget(quantity="q", unit="K", components=(Component(name="a", value=1.0, unit="K"),
                                                  Component(name="a", value=2.0, unit="K")))


def test_results_take_only_budgets():
    from calwork.core.results import CalibrationResult

    with pytest.raises(TypeError, match="Budget"):
        CalibrationResult(calorimeter="A", energy_equivalent_J_per_K=1.0,
                          u_energy_equivalent_J_per_K=0.1, n_runs=1, rsd_percent=0.0,
                          std_dev_J_per_K=0.0, std_dev_of_mean_J_per_K=0.1, runs=("r",),
                          budget={"scatter": 0.1})
