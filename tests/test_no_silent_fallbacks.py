"""No silent fallbacks: every assumption is a warning code on the result, every failure an error.

Each test here shows one place where calwork used to substitute something without saying so
(another reference material's data, a formula, a zero uncertainty, a clamped variance, an
iteration that stopped without converging, an uncertainty component dropped).
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
import scipy.sparse as sp

from calwork.bomb import washburn
from calwork.bomb.chain import reduce_calibration_run
from calwork.bomb.washburn import Combustible, bomb_states
from calwork.core.errors import ConvergenceError, RunError, UncertaintyError
from calwork.core.runinfo import RunInfo
from calwork.core.uncertainty import propagate_gradient as propagate
from calwork.core.uncertainty import variance_component
from calwork.hess import wls
from calwork.rise import engine
from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run

V_L, P_MPa, W_G, MASS = 0.342, 3.04, 1.0, 1.0012
RISE = SimpleNamespace(corrected_rise_K=2.0, u_corrected_rise_K=2e-4, T_initial_K=298.15,
                       warnings=())


def calibration(**fields) -> RunInfo:
    base = {"run": "c1", "kind": "calibration", "calorimeter": "A", "mass_g": MASS,
            "ignition_J": 1.0, "fuse_J": 12.0, "o2_pressure_MPa": P_MPa, "bomb_volume_L": V_L,
            "bomb_water_g": W_G, "sample_density_g_per_cm3": 1.320}
    base.update(fields)
    return RunInfo(**base)


def jessup_by_hand(p_MPa: float, s_g_per_L: float, w_g_per_L: float) -> float:
    # Jessup, J. Res. NBS 29 (1942) 247 (coefficients recalled): ppm per atm above 30 atm,
    # per g/L of sample and of water above 3 g/L; the run is referred to 25 °C
    p_atm = p_MPa * 1e6 / 101325.0
    return 1 + 1e-6 * (20 * (p_atm - 30) + 42 * (s_g_per_L - 3) + 30 * (w_g_per_L - 3))


def test_unknown_reference_material_is_reduced_as_given_never_as_benzoic_acid():
    known = reduce_calibration_run(calibration(reference_material="benzoic acid"), RISE)
    other = reduce_calibration_run(calibration(
        reference_material="house benzoic lot 7", certified_J_per_g=26434.0,
        u_certified_J_per_g=2.0, formula="C7H6O2"), RISE)
    assert other.details["reference_material"] == "house benzoic lot 7"
    assert other.details["jessup_factor"] == 1.0
    assert other.details["certificate_condition_factor"] is False
    assert other.details["reference_material_energy_J"] == MASS * 26434.0
    assert other.details["u_certificate_relative"] == pytest.approx(2.0 / 26434.0)
    assert any(w.startswith("reference-material-not-bundled") for w in other.warnings)
    # the same contents and corrections: the two ε differ exactly by Jessup's factor on m·q
    f = jessup_by_hand(P_MPa, MASS / V_L, W_G / V_L)
    assert known.details["jessup_factor"] == pytest.approx(f, rel=1e-12)
    rest = known.energy_equivalent_J_per_K * 2.0 - MASS * 26434.0 * f
    assert other.energy_equivalent_J_per_K * 2.0 == pytest.approx(MASS * 26434.0 + rest,
                                                                   rel=1e-12)


@pytest.mark.parametrize(("fields", "column"), [
    ({"reference_material": "house lot", "certified_J_per_g": 26400.0, "formula": "C7H6O2"},
     "u_certified_J_per_g"),
    ({"reference_material": "house lot", "certified_J_per_g": 26400.0,
      "u_certified_J_per_g": 2.0}, "formula"),
    ({"reference_material": "house lot", "certified_J_per_g": 26400.0,
      "u_certified_J_per_g": 0.0, "formula": "C7H6O2"}, "u_certified_J_per_g"),
])
def test_unknown_material_without_what_it_needs_is_an_error(fields, column):
    with pytest.raises(Exception, match=column):
        reduce_calibration_run(calibration(**fields), RISE)


def test_sheet_value_for_a_bundled_material_says_which_u_it_assumed():
    run = reduce_calibration_run(calibration(reference_material="benzoic acid",
                                             certified_J_per_g=26440.0), RISE)
    assert any(w.startswith("certificate-u-assumed") for w in run.warnings)
    given = reduce_calibration_run(calibration(reference_material="benzoic acid",
                                               certified_J_per_g=26440.0,
                                               u_certified_J_per_g=3.0), RISE)
    assert not any(w.startswith("certificate-u-assumed") for w in given.warnings)
    assert given.details["u_certificate_relative"] == pytest.approx(3.0 / 26440.0)


def test_sample_without_formula_warns_and_gives_no_formation_values():
    from calwork.bomb.chain import reduce_combustion_run
    from calwork.bomb.series import calibration_series

    cal = calibration_series("A", [reduce_calibration_run(
        calibration(run=f"c{i}", reference_material="benzoic acid",
                    mass_g=MASS + 0.001 * i), RISE) for i in range(3)])
    run = reduce_combustion_run(RunInfo(run="s1", kind="combustion", calorimeter="A",
                                    sample="mystery oil", mass_g=0.8, o2_pressure_MPa=P_MPa,
                                    bomb_volume_L=V_L, bomb_water_g=W_G), RISE, cal)
    assert any(w.startswith("formula-assumed") and "(CH2)n" in w for w in run.warnings)
    assert run.standard_massic_energy_J_per_g is None


def test_negative_variance_raises_rounding_does_not():
    with pytest.raises(UncertaintyError, match="negative"):
        variance_component(-1e-6, magnitude=1.0)
    assert variance_component(-1e-14, magnitude=1.0) == 0.0
    # an indefinite "covariance" gives a clearly negative variance: never clamped
    with pytest.raises(UncertaintyError, match="negative"):
        propagate([1.0, 1.0], np.array([[1.0, -2.0], [-2.0, 1.0]]))


def test_conjugate_gradients_report_non_convergence():
    rng = np.random.default_rng(3)
    a = sp.random(200, 200, density=0.05, random_state=rng) + sp.eye(200)
    n = sp.csr_matrix(a.T @ a)
    b = rng.standard_normal((200, 1))
    x, it = wls._block_pcg(n, b, n.diagonal())
    assert np.allclose(n @ x, b, atol=1e-8)
    assert it > 1
    with pytest.raises(ConvergenceError, match="did not converge"):
        wls._block_pcg(n, b, n.diagonal(), maxiter=2)


def test_washburn_iterations_report_non_convergence(monkeypatch):
    ba = Combustible.from_formula("sample", "C7H6O2", 1.0, density_g_per_cm3=1.32)
    bomb_states([ba], bomb_volume_L=V_L, o2_pressure_MPa=P_MPa, bomb_water_g=W_G)
    monkeypatch.setattr(washburn, "_MAX_ITERATIONS", 1)
    with pytest.raises(ConvergenceError, match="did not converge"):
        bomb_states([ba], bomb_volume_L=V_L, o2_pressure_MPa=P_MPa, bomb_water_g=W_G)


def test_pressure_far_outside_the_model_is_an_error_not_an_overflow():
    ba = Combustible.from_formula("sample", "C7H6O2", 1.0, density_g_per_cm3=1.32)
    with pytest.raises(RunError, match="o2_pressure_MPa"):
        bomb_states([ba], bomb_volume_L=V_L, o2_pressure_MPa=3.04e6, bomb_water_g=W_G)


def test_a_failed_boundary_component_is_reported_not_dropped(monkeypatch):
    p = CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None)
    run = simulate_run(p, CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
                       duration_s=2400.0, seed=4)
    clean = engine.corrected_rise(run.thermogram)
    assert not any(w.startswith("boundary-component-incomplete") for w in clean.warnings)

    def broken(*_args, **_kwargs):
        raise ConvergenceError("forced failure for the test")

    from calwork.rise import methods

    monkeypatch.setattr(methods, "newton_rise_only", broken)  # the registry's warm re-run
    res = engine.corrected_rise(run.thermogram)
    assert any(w.startswith("boundary-component-incomplete") for w in res.warnings)


def test_u_of_epsilon_carries_the_correction_constants():
    import math

    from calwork.bomb.series import calibration_series
    from calwork.data import load_data

    def rise(mass):  # a calorimeter of constant ε: the rise follows the mass
        return SimpleNamespace(corrected_rise_K=2.0 * mass / MASS, u_corrected_rise_K=2e-4,
                               T_initial_K=298.15, warnings=())

    runs = [reduce_calibration_run(calibration(run=f"c{i}", reference_material="benzoic acid",
                                               mass_g=MASS + 0.002 * i, fuse_J=12.0 + i,
                                               acid_titre_mL=8.0,
                                               acid_titrant_mol_per_L=0.0866),
                                   rise(MASS + 0.002 * i))
            for i in range(4)]
    cal = calibration_series("A", runs)
    # relative u of each correction constant: the lab's assumptions in bomb_corrections.toml
    rel = load_data("bomb_corrections.toml")["uncertainty_relative"]
    names = {k for r in runs for k in r.corrections_J}
    assert {"fuse", "nitric_acid", "ignition"} <= names
    u_corr = math.sqrt(sum(
        (rel[k] * sum(r.corrections_J[k] / r.corrected_rise_K for r in runs) / len(runs)) ** 2
        for k in names))
    b = cal.budget
    assert b["corrections_J_per_K"] == pytest.approx(u_corr, rel=1e-12)
    assert cal.u_energy_equivalent_J_per_K == pytest.approx(math.sqrt(
        b["std_dev_of_mean_J_per_K"] ** 2 + b["certificate_J_per_K"] ** 2 + u_corr**2),
        rel=1e-12)
    assert u_corr > 0.2 * cal.u_energy_equivalent_J_per_K  # not negligible here
