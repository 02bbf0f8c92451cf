"""Result records: validated on construction, and read back from their JSON form unchanged
(property-based, and on the bundled simulated sample runs)."""

from __future__ import annotations

import json
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calwork.core.errors import UncertaintyError
from calwork.core.provenance import Provenance
from calwork.core.results import (
    BombRunResult,
    CalibrationResult,
    RunResult,
    SampleResult,
    SolutionRunResult,
    run_result,
)
from calwork.core.runinfo import BOMB_KINDS, RUN_KINDS
from calwork.core.uncertainty import Budget

finite = st.floats(min_value=-1e9, max_value=1e9, allow_nan=False, allow_infinity=False)
positive = st.floats(min_value=0.0, max_value=1e9, allow_nan=False, allow_infinity=False)
text = st.text(alphabet="abcdefghijklmnopqrstuvwxyz0123456789-_ ", min_size=1, max_size=12)
optional = st.none() | finite
optional_u = st.none() | positive


def _json(record):
    return json.loads(json.dumps(record.to_dict()))


_DETAIL_FIELDS = {
    "calibration": ("mass_vacuum_g", "nitric_acid_mol", "jessup_factor", "heat_released_J"),
    "combustion": ("mass_vacuum_g", "washburn_u_J", "heat_measured_J", "sulfur_mol"),
    "electrical": ("measured_heat_J",),
    "blank": ("measured_heat_J", "u_reaction_heat_J"),
    "solution": ("amount_mol", "u_amount_mol", "measured_heat_J"),
}


@st.composite
def _kind_and_details(draw):
    kind = draw(st.sampled_from(RUN_KINDS))
    return kind, draw(st.dictionaries(st.sampled_from(_DETAIL_FIELDS[kind]), finite,
                                      max_size=3))


@settings(max_examples=150, deadline=None)
@given(run=text, kind_details=_kind_and_details(), sample=st.none() | text,
       rise=optional, u_rise=optional_u, eps=optional, u_eps=optional_u, value=optional,
       u_value=optional_u, corrections=st.dictionaries(text, finite, max_size=4),
       warnings=st.lists(text, max_size=3), error=st.none() | text)
def test_run_result_round_trip(run, kind_details, sample, rise, u_rise, eps, u_eps, value,
                               u_value, corrections, warnings, error):
    kind, details = kind_details
    own = ({"massic_energy_J_per_g": value, "washburn_J": u_value} if kind in BOMB_KINDS else
           {"molar_enthalpy_kJ_per_mol": value, "u_molar_enthalpy_kJ_per_mol": u_value})
    r = run_result(kind, run=run, sample=sample, corrected_rise_K=rise,
                   u_corrected_rise_K=u_rise, energy_equivalent_J_per_K=eps,
                   u_energy_equivalent_J_per_K=u_eps, corrections_J=corrections,
                   details=details, warnings=warnings, error=error,
                   provenance=Provenance(source_path="log.csv", sha256="0" * 64,
                                         importer="test", calwork_version="x"), **own)
    assert isinstance(r, BombRunResult if kind in BOMB_KINDS else SolutionRunResult)
    again = RunResult.from_dict(_json(r))
    assert type(again) is type(r)
    assert again.to_dict() == r.to_dict()


@settings(max_examples=100, deadline=None)
@given(eps=positive, u=positive, parts=st.dictionaries(text, positive, min_size=1, max_size=4),
       values=st.lists(positive, min_size=1, max_size=6))
def test_calibration_and_sample_round_trip(eps, u, parts, values):
    cal = CalibrationResult(
        calorimeter="A", energy_equivalent_J_per_K=eps, u_energy_equivalent_J_per_K=u,
        n_runs=len(values), rsd_percent=0.01, std_dev_J_per_K=0.1, std_dev_of_mean_J_per_K=0.05,
        runs=[f"r{i}" for i in range(len(values))], values_J_per_K=values,
        budget=Budget.of("ε", "J/K", parts), certified_J_per_g=26434.0)
    assert CalibrationResult.from_dict(_json(cal)) == cal
    s = SampleResult(sample="s", formula="C7H6O2", n_runs=2, runs=["a", "b"],
                     massic_energy_J_per_g=-eps, u_massic_energy_J_per_g=u,
                     budget=Budget.of("Δu°", "J/g", parts),
                     derived_budgets={"delta_f_H": Budget.of("ΔfH°", "kJ/mol", parts)})
    assert SampleResult.from_dict(_json(s)) == s


@pytest.mark.parametrize("bad", [math.nan, -1e-9, math.inf])
def test_a_bad_uncertainty_is_refused(bad):
    with pytest.raises(UncertaintyError, match="u_corrected_rise_K"):
        BombRunResult(run="r", kind="calibration", corrected_rise_K=2.0,
                      u_corrected_rise_K=bad)
    with pytest.raises(UncertaintyError, match="u_molar_enthalpy_kJ_per_mol"):
        SolutionRunResult(run="r", kind="solution", u_molar_enthalpy_kJ_per_mol=bad)
    with pytest.raises(UncertaintyError, match="u_massic_energy_J_per_g"):
        SampleResult(sample="s", formula=None, n_runs=1, runs=["r"],
                     u_massic_energy_J_per_g=bad)


def test_an_unknown_kind_is_refused():
    with pytest.raises(ValueError, match="unknown run kind"):
        BombRunResult(run="r", kind="combustoin")
    with pytest.raises(ValueError, match="unknown run kind"):
        run_result("combustoin", run="r")
    with pytest.raises(ValueError, match="unknown run kind"):
        RunResult.from_dict({"run": "r", "kind": "combustoin"})


def test_each_run_kind_has_its_record():
    """A record serves its own kinds only and has no field of the other kinds; the shared
    part is not built on its own; the rise is a corrected-rise record."""
    with pytest.raises(ValueError, match="serves the run kinds"):
        BombRunResult(run="r", kind="solution")
    with pytest.raises(ValueError, match="serves the run kinds"):
        SolutionRunResult(run="r", kind="combustion")
    with pytest.raises(TypeError, match="shares"):
        RunResult(run="r", kind="combustion")
    with pytest.raises(TypeError):
        BombRunResult(run="r", kind="combustion", molar_enthalpy_kJ_per_mol=1.0)
    with pytest.raises(TypeError, match="corrected-rise records"):
        BombRunResult(run="r", kind="combustion", rise="2.1 K")
    from calwork.core.results import BombRunDetails

    with pytest.raises(TypeError, match="SolutionRunDetails"):
        SolutionRunResult(run="r", kind="solution", details=BombRunDetails())
    bomb = BombRunResult(run="r", kind="combustion", massic_energy_J_per_g=-26400.0)
    assert not hasattr(bomb, "molar_enthalpy_kJ_per_mol")
    assert bomb.to_dict()["molar_enthalpy_kJ_per_mol"] is None  # every run has every key
    with pytest.raises(ValueError, match="is a BombRunResult"):
        SolutionRunResult.from_dict(bomb.to_dict())
    assert BombRunResult.from_dict(bomb.to_dict()) == bomb
    with pytest.raises(ValueError, match="no field"):
        RunResult.from_dict({**bomb.to_dict(), "heater_energy_J": 10.0})


def test_details_are_typed_per_kind_and_unknown_keys_are_refused():
    from calwork.core.results import BombRunDetails, SolutionRunDetails

    r = BombRunResult(run="r", kind="combustion", details={"mass_vacuum_g": 0.5})
    assert isinstance(r.details, BombRunDetails)
    assert r.details.mass_vacuum_g == 0.5
    assert dict(r.details) == {"mass_vacuum_g": 0.5}
    s = SolutionRunResult(run="s", kind="solution", details={"amount_mol": 0.01})
    assert isinstance(s.details, SolutionRunDetails)
    with pytest.raises(ValueError, match="no field"):
        BombRunResult(run="r", kind="combustion", details={"mass_g_typo": 0.5})


def test_the_sample_runs_round_trip(tmp_path):
    from conftest import copy_sample_runs

    from calwork.reduce import reduce_sheet

    red = reduce_sheet(copy_sample_runs(tmp_path) / "runs.csv")
    for record in (*red.runs, *red.calibrations, *red.samples):
        again = type(record).from_dict(_json(record))
        assert _json(again) == _json(record)
