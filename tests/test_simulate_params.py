"""Parameters, presets, validation and TOML reading of the simulator."""

from __future__ import annotations

import math
import pickle
from dataclasses import fields, replace

import pytest

from calwork.core.errors import InputFileError, SimulationError
from calwork.data import load_data
from calwork.simulation import (
    CalorimeterParams,
    CombustionPulse,
    FirstOrderRelease,
    HeaterInterval,
    simulate_run,
)


# --- presets ------------------------------------------------------------------------------------
def test_bomb_preset_is_a_macro_bomb_calorimeter():
    # docs/methods.md §1.1 typical magnitudes: ε ≈ 10 kJ/K, 2–3 kg water, k ≈ 2–8e-5 1/s
    p = CalorimeterParams.bomb_preset()
    assert p.energy_equivalent_J_per_K == pytest.approx(10_000.0)
    assert 2e-5 <= p.exchange_rate_per_s <= 8e-5
    assert p.two_body
    # 2.0 kg of water at 4.18 J/(g K) (common practice value of c_p of water near 25 °C)
    assert 2000 * 4.18 <= p.water_heat_capacity_J_per_K <= 3000 * 4.18
    # internal time constant C_b C_w /(G_bw ε) (docs/methods.md §1.9) of order a minute or two
    assert p.internal_time_constant_s == pytest.approx(1600 * 8400 / (15 * 10_000))
    # T_inf − T_j = P_stir/G (docs/methods.md §1.1)
    assert p.convergence_temperature_K == pytest.approx(298.15 + 0.04 / 0.4)


def test_solution_preset_is_a_small_solution_calorimeter():
    # docs/methods.md §1.1: solution cells ε ≈ 200–450 J/K, k from 6e-5 to 6.5e-3 1/s (≈ 1e-3)
    p = CalorimeterParams.solution_preset()
    assert 200 <= p.energy_equivalent_J_per_K <= 450
    assert p.exchange_rate_per_s == pytest.approx(1e-3)
    assert not p.two_body
    assert p.internal_time_constant_s is None


def test_class_defaults_are_the_bomb_preset_with_an_ideal_thermometer():
    preset = CalorimeterParams.bomb_preset()
    default = CalorimeterParams()
    assert replace(preset, thermometer_lag_s=0.0, quantisation_K=0.0) == default
    table = load_data("simulator_defaults.toml")["bomb"]
    assert set(table) == {f.name for f in fields(CalorimeterParams)} - {
        "electrical_noise_relative", "initial_state"}


def test_preset_overrides_and_noise_free():
    p = CalorimeterParams.solution_preset(noise_K=1e-3)
    assert p.noise_K == 1e-3
    q = p.noise_free()
    assert (q.noise_K, q.quantisation_K, q.electrical_noise_relative) == (0.0, 0.0, 0.0)
    assert q.energy_equivalent_J_per_K == p.energy_equivalent_J_per_K
    with pytest.raises(SimulationError, match="preset"):
        CalorimeterParams.preset("micro")
    assert "ε = 10000 J/K" in CalorimeterParams.bomb_preset().report()


def test_adiabatic_params_have_no_convergence_temperature():
    p = CalorimeterParams(exchange_conductance_W_per_K=0.0)
    assert p.exchange_rate_per_s == 0.0
    assert p.convergence_temperature_K is None
    assert CalorimeterParams(bomb_water_conductance_W_per_K=0.0).internal_time_constant_s == math.inf


# --- validation ---------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("field", "value"),
    [
        ("bomb_heat_capacity_J_per_K", 0.0),
        ("water_heat_capacity_J_per_K", -1.0),
        ("bomb_water_conductance_W_per_K", -0.1),
        ("exchange_conductance_W_per_K", -0.1),
        ("exchange_conductance_W_per_K", math.nan),
        ("jacket_temperature_K", 0.0),
        ("stirring_power_W", -0.01),
        ("thermometer_lag_s", -1.0),
        ("thermometer_lag_s", 5e-324),   # 1/τ overflows: rejected, not NaN readings
        ("bomb_water_conductance_W_per_K", 1e300),
        ("sampling_interval_s", 0.0),
        ("noise_K", -1e-4),
        ("quantisation_K", -1e-5),
        ("initial_temperature_K", math.inf),
        ("jacket_drift_K_per_s", "fast"),
        ("initial_state", "hot"),
    ],
)
def test_invalid_parameters_name_the_field(field, value):
    with pytest.raises(SimulationError, match=field) as info:
        CalorimeterParams(**{field: value})
    assert info.value.column == field
    assert isinstance(info.value, ValueError)


@pytest.mark.parametrize(
    ("factory", "field"),
    [
        (lambda: CombustionPulse(energy_J=-1.0, fire_time_s=10.0), "energy_J"),
        (lambda: CombustionPulse(energy_J=1.0, fire_time_s=10.0, burn_time_s=0.0), "burn_time_s"),
        (lambda: CombustionPulse(energy_J=1.0, fire_time_s=10.0, into="jacket"), "into"),
        (lambda: HeaterInterval(power_W=1.0, on_s=10.0, off_s=10.0), "off_s"),
        (lambda: HeaterInterval(power_W=0.0, on_s=10.0, off_s=20.0), "power_W"),
        (lambda: HeaterInterval(power_W=1.0, on_s=1.0, off_s=2.0, resistance_ohm=0), "resistance_ohm"),
        (lambda: FirstOrderRelease(energy_J=0.0, start_s=1.0, time_constant_s=1.0), "energy_J"),
        (lambda: FirstOrderRelease(energy_J=1.0, start_s=1.0, time_constant_s=-1.0), "time_constant_s"),
    ],
)
def test_invalid_heat_inputs_name_the_field(factory, field):
    with pytest.raises(SimulationError, match=field):
        factory()


def test_run_window_checks():
    p = CalorimeterParams.bomb_preset()
    with pytest.raises(SimulationError, match="duration_s"):
        simulate_run(p, (), duration_s=5.0)  # one sampling interval
    with pytest.raises(SimulationError, match="duration_s"):
        simulate_run(p, CombustionPulse(energy_J=1e4, fire_time_s=595.0), duration_s=600.0)
    with pytest.raises(SimulationError, match="fire_time_s"):
        simulate_run(p, CombustionPulse(energy_J=1e4, fire_time_s=-5.0), duration_s=600.0)
    with pytest.raises(SimulationError, match="duration_s"):
        simulate_run(p, FirstOrderRelease(energy_J=1.0, start_s=700.0, time_constant_s=5.0),
                     duration_s=600.0)
    with pytest.raises(SimulationError, match="on_s"):
        simulate_run(p, HeaterInterval(power_W=1.0, on_s=100.0, off_s=200.0),
                     duration_s=600.0, start_time_s=150.0)
    with pytest.raises(SimulationError, match="overlap"):
        simulate_run(p, [HeaterInterval(power_W=1.0, on_s=100.0, off_s=300.0),
                         HeaterInterval(power_W=1.0, on_s=200.0, off_s=400.0)], duration_s=600.0)
    with pytest.raises(SimulationError, match="heat_inputs"):
        simulate_run(p, ["combustion"], duration_s=600.0)
    with pytest.raises(SimulationError, match="params"):
        simulate_run({"noise_K": 0.0}, (), duration_s=600.0)


def test_steady_start_needs_a_coupled_inner_body():
    p = CalorimeterParams(bomb_water_conductance_W_per_K=0.0)
    with pytest.raises(SimulationError, match="initial_state"):
        simulate_run(p, (), duration_s=600.0)
    run = simulate_run(replace(p, initial_state="uniform"), (), duration_s=600.0, seed=1)
    # an isolated inner body stays at its initial temperature (no coupling, no input)
    assert run.inner_temperature_K[-1] == pytest.approx(p.initial_temperature_K, abs=1e-12)


def test_errors_pickle_with_their_fields():
    with pytest.raises(SimulationError) as info:
        CalorimeterParams(noise_K=-1.0)
    again = pickle.loads(pickle.dumps(info.value))
    assert again.column == "noise_K"
    assert str(again) == str(info.value)


# --- TOML ---------------------------------------------------------------------------------------
def test_from_toml_full_table_round_trip(tmp_path):
    p = CalorimeterParams.bomb_preset(noise_K=5e-5, jacket_drift_K_per_s=1e-7)
    lines = ["[calorimeter]"]
    for key, value in p.to_dict().items():
        lines.append(f'{key} = "{value}"' if isinstance(value, str) else f"{key} = {value!r}")
    path = tmp_path / "cal.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    assert CalorimeterParams.from_toml(path) == p


def test_from_toml_preset_and_single_body(tmp_path):
    path = tmp_path / "cal.toml"
    path.write_text('[calorimeter]\npreset = "bomb"\nexchange_conductance_W_per_K = 0.55\n'
                    'bomb_water_conductance_W_per_K = "none"\n', encoding="utf-8")
    p = CalorimeterParams.from_toml(path)
    assert p.exchange_conductance_W_per_K == 0.55
    assert not p.two_body
    assert p.water_heat_capacity_J_per_K == 8400.0


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("[calorimeter]\nnoise = 1e-4\n", "noise"),                       # misspelt field
        ("[calorimeter]\nnoise_K = -1e-4\n", "noise_K"),
        ("[calorimeter]\npreset = \"micro\"\n", "preset"),
        ("[calibration]\nnoise_K = 1e-4\n", r"\[calorimeter\]"),
        ("[calorimeter\n", "TOML"),
        ("[calorimeter]\nexchange_conductance_W_per_K = \"0.4\"\n", "exchange_conductance"),
    ],
)
def test_from_toml_errors_name_file_and_field(tmp_path, text, match):
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(SimulationError, match=match) as info:
        CalorimeterParams.from_toml(path)
    assert "bad.toml" in str(info.value)


def test_from_toml_missing_file(tmp_path):
    with pytest.raises(InputFileError, match="not found"):
        CalorimeterParams.from_toml(tmp_path / "nope.toml")


def test_truth_rates_for_vanishing_exchange():
    # G → 0: the slow rate tends to G/ε and the effective energy equivalent to ε (first law);
    # the closed form must not lose λ to cancellation (found by hypothesis at G = 1e-142)
    p = CalorimeterParams(exchange_conductance_W_per_K=1e-142, noise_K=0.0)
    run = simulate_run(p, (), duration_s=100.0)
    assert run.truth.drift_rate_per_s == pytest.approx(1e-142 / 10_000.0, rel=1e-9)
    assert run.truth.effective_energy_equivalent_J_per_K == pytest.approx(10_000.0, rel=1e-12)
    zero = simulate_run(replace(p, exchange_conductance_W_per_K=0.0), (), duration_s=100.0)
    assert zero.truth.drift_rate_per_s == 0.0
    assert zero.truth.effective_energy_equivalent_J_per_K == pytest.approx(10_000.0, rel=1e-15)
    assert zero.truth.convergence_temperature_K is None
