"""Physics checks of the calorimeter simulator (calwork.simulation).

The simulator is the ground truth of the test suite, so its numbers are checked against closed
forms of the model (docs/methods.md §1.1 heat balance, §1.9 thermometer lag and two bodies), against
conservation of energy, and against an independent general-purpose integrator (scipy's
``solve_ivp``).
"""

from __future__ import annotations

import json
import math
from dataclasses import replace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad, solve_ivp

from calwork.simulation import (
    CalorimeterParams,
    CombustionPulse,
    FirstOrderRelease,
    HeaterInterval,
    simulate_run,
)
from calwork.simulation.integrate import LinearModel

BOMB = CalorimeterParams.bomb_preset()
SOLUTION = CalorimeterParams.solution_preset()


def _adiabatic(p: CalorimeterParams) -> CalorimeterParams:
    """No exchange with the jacket, no stirring, ideal read-out."""
    return replace(p.noise_free(), exchange_conductance_W_per_K=0.0, stirring_power_W=0.0)


# --- energy conservation ---------------------------------------------------------------------
# With G = 0 and no stirring the calorimeter is a closed system: the final (equilibrated) rise
# is Q/(C_b + C_w) exactly (first law; the issue asks for 1e-6 relative).
@pytest.mark.parametrize("two_body", [True, False])
@pytest.mark.parametrize(
    "heat_input",
    [
        CombustionPulse(energy_J=26434.0, fire_time_s=600.0, burn_time_s=7.3),
        HeaterInterval(power_W=2.5, on_s=600.0, off_s=1003.7),
        FirstOrderRelease(energy_J=-420.0, start_s=600.0, time_constant_s=25.0),
        HeaterInterval(power_W=2.5, on_s=600.0, off_s=900.0, into="bomb"),
        CombustionPulse(energy_J=9000.0, fire_time_s=602.5, into="water"),
    ],
    ids=["combustion", "heater", "release", "heater-into-bomb", "combustion-into-water"],
)
def test_energy_conservation_adiabatic(heat_input, two_body):
    p = _adiabatic(BOMB)
    if not two_body:
        p = replace(p, bomb_water_conductance_W_per_K=None)
    # 5000 s: the release (τ = 25 s) is complete to e^-176 and the two bodies (τ₁ ≈ 90 s)
    # equilibrated to e^-48
    run = simulate_run(p, heat_input, duration_s=5000.0)
    Q = heat_input.energy_J
    eps = p.bomb_heat_capacity_J_per_K + p.water_heat_capacity_J_per_K
    rise = run.water_temperature_K[-1] - run.water_temperature_K[0]
    assert run.truth.heat_released_J == pytest.approx(Q, rel=1e-12)
    assert run.truth.adiabatic_rise_K == pytest.approx(Q / eps, rel=1e-12)
    assert rise == pytest.approx(Q / eps, rel=1e-6)
    # the inner body ends at the same temperature (equilibrated) and the energy
    # C_b ΔT_b + C_w ΔT_w is conserved
    energy = (p.bomb_heat_capacity_J_per_K * (run.inner_temperature_K[-1] - run.inner_temperature_K[0])
              + p.water_heat_capacity_J_per_K * rise)
    assert energy == pytest.approx(Q, rel=1e-6)
    assert run.inner_temperature_K[-1] == pytest.approx(run.water_temperature_K[-1], abs=1e-9)


def test_energy_content_during_the_burn():
    # first law at every instant: C_b (T_b − T0) + C_w (T_w − T0) = heat released so far
    # (closed form of the raised-cosine integral), while the bodies are far from equilibrium
    p = replace(_adiabatic(BOMB), sampling_interval_s=1.0)
    pulse = CombustionPulse(energy_J=20000.0, fire_time_s=100.0, burn_time_s=12.0)
    run = simulate_run(p, pulse, duration_s=400.0)
    t = run.thermogram.time_s
    content = (p.bomb_heat_capacity_J_per_K * (run.inner_temperature_K - p.initial_temperature_K)
               + p.water_heat_capacity_J_per_K * (run.water_temperature_K - p.initial_temperature_K))
    released = np.array([pulse.energy_between_J(0.0, ti) for ti in t])
    np.testing.assert_allclose(content, released, rtol=0, atol=20000.0 * 1e-9)
    # and the closed form of the released energy agrees with numerical quadrature of P(t)
    q, _ = quad(lambda x: float(pulse.power_at_W(x)), 100.0, 112.0, epsabs=1e-10)
    assert q == pytest.approx(20000.0, rel=1e-10)


# --- Newtonian drift ---------------------------------------------------------------------------
def test_newtonian_drift_one_body():
    # docs/methods.md §1.1: with w = 0, dT/dt = k (T_inf − T) ⇒ T = T_inf + (T0 − T_inf) e^{−k t},
    # k = G/(C_b + C_w), T_inf = T_j + P_stir/G
    p = replace(SOLUTION.noise_free(), thermometer_lag_s=0.0, initial_temperature_K=297.4)
    run = simulate_run(p, (), duration_s=3000.0)
    t = run.thermogram.time_s
    k = p.exchange_conductance_W_per_K / (p.bomb_heat_capacity_J_per_K + p.water_heat_capacity_J_per_K)
    T_inf = p.jacket_temperature_K + p.stirring_power_W / p.exchange_conductance_W_per_K
    expected = T_inf + (p.initial_temperature_K - T_inf) * np.exp(-k * t)
    np.testing.assert_allclose(run.water_temperature_K, expected, rtol=0, atol=1e-9)
    np.testing.assert_allclose(run.thermogram.temperature_K, expected, rtol=0, atol=1e-9)
    assert run.truth.exchange_rate_per_s == pytest.approx(k, rel=1e-15)
    assert run.truth.drift_rate_per_s == pytest.approx(k, rel=1e-12)
    assert run.truth.convergence_temperature_K == pytest.approx(T_inf, rel=1e-15)


def test_newtonian_drift_with_jacket_ramp():
    # jacket T_j(t) = T_j0 + d t: dT/dt = k (T_inf0 + d t − T) has the closed form
    # T = T_inf0 + d t − d/k + (T0 − T_inf0 + d/k) e^{−k t} (linear ODE, integrating factor)
    d = 2e-6
    p = replace(SOLUTION.noise_free(), thermometer_lag_s=0.0, jacket_drift_K_per_s=d)
    run = simulate_run(p, (), duration_s=3000.0, start_time_s=50.0)
    t = run.thermogram.time_s - 50.0
    k = p.exchange_rate_per_s
    T_inf0 = p.convergence_temperature_K
    expected = T_inf0 + d * t - d / k + (p.initial_temperature_K - T_inf0 + d / k) * np.exp(-k * t)
    np.testing.assert_allclose(run.water_temperature_K, expected, rtol=0, atol=1e-9)
    np.testing.assert_allclose(run.thermogram.channels["jacket_K"], p.jacket_temperature_K + d * t,
                               rtol=0, atol=1e-12)


def test_two_body_steady_start_is_a_single_exponential():
    # In the 'steady' start only the slow eigenmode of the 2×2 system is present, so the water
    # follows T_inf + (T0 − T_inf) e^{−λ t} with λ the smaller root of
    # λ² − (a + c) λ + (a c − g_b g_w) = 0, a = G_bw/C_b, c = (G_bw + G)/C_w, g_b = G_bw/C_b,
    # g_w = G_bw/C_w (characteristic polynomial, derived by hand from the equations)
    p = BOMB.noise_free()
    cb, cw = p.bomb_heat_capacity_J_per_K, p.water_heat_capacity_J_per_K
    gbw, G = p.bomb_water_conductance_W_per_K, p.exchange_conductance_W_per_K
    a, c = gbw / cb, (gbw + G) / cw
    disc = math.sqrt((a + c) ** 2 - 4 * (a * c - (gbw / cb) * (gbw / cw)))
    lam = ((a + c) - disc) / 2
    run = simulate_run(p, (), duration_s=6000.0)
    t = run.thermogram.time_s
    T_inf = p.convergence_temperature_K
    expected = T_inf + (p.initial_temperature_K - T_inf) * np.exp(-lam * t)
    np.testing.assert_allclose(run.water_temperature_K, expected, rtol=0, atol=1e-9)
    assert run.truth.drift_rate_per_s == pytest.approx(lam, rel=1e-9)
    # the slow rate is close to k = G/ε but not equal (G/ε = 4e-5; λ differs by ~0.3 %)
    assert lam == pytest.approx(p.exchange_rate_per_s, rel=1e-2)
    # the thermometer (lag τ = 2 s in the preset) driven by T_w = T_inf + D e^{−λt} reads, once
    # its own transient is gone, T_inf + D e^{−λt}/(1 − λτ) (particular solution of
    # τ dT_m/dt = T_w − T_m); the 'steady' start has no thermometer transient either
    q = BOMB.noise_free()
    lagged = simulate_run(q, (), duration_s=600.0)
    tau = q.thermometer_lag_s
    np.testing.assert_allclose(lagged.sensor_temperature_K,
                               T_inf + (lagged.water_temperature_K - T_inf) / (1 - lam * tau),
                               rtol=0, atol=1e-9)


# --- thermometer lag -----------------------------------------------------------------------------
def test_thermometer_lag_step_response():
    # docs/methods.md §1.9: τ dT_m/dt = T − T_m. A step of the water temperature (a 1 ms heat pulse
    # into one adiabatic body) is read as ΔT (1 − e^{−(t − t_c)/τ}), t_c the pulse's centroid;
    # the finite pulse width changes this by O((Δ/τ)²) = 1e-8
    tau = 10.0
    p = replace(_adiabatic(SOLUTION), thermometer_lag_s=tau, sampling_interval_s=0.5,
                bomb_water_conductance_W_per_K=None)
    pulse = CombustionPulse(energy_J=36.0, fire_time_s=20.0, burn_time_s=1e-3, into="water")
    run = simulate_run(p, pulse, duration_s=120.0)
    t = run.thermogram.time_s
    after = t > 20.001
    step = 36.0 / p.energy_equivalent_J_per_K
    response = (run.thermogram.temperature_K[after] - p.initial_temperature_K) / step
    np.testing.assert_allclose(response, -np.expm1(-(t[after] - 20.0005) / tau), rtol=0, atol=1e-7)
    assert np.all(run.thermogram.temperature_K[t < 20.0] == p.initial_temperature_K)


def test_thermometer_lag_ramp_response():
    # a heater ramps the adiabatic water at r = P/ε; the lagged reading of a ramp is
    # r (s − τ (1 − e^{−s/τ})), s = t − t_on (first-order system driven by a ramp, closed form)
    tau, P = 4.0, 0.36
    p = replace(_adiabatic(SOLUTION), thermometer_lag_s=tau, sampling_interval_s=1.0)
    run = simulate_run(p, HeaterInterval(power_W=P, on_s=10.0, off_s=200.0), duration_s=200.0)
    t = run.thermogram.time_s
    s = np.clip(t - 10.0, 0.0, None)
    r = P / p.energy_equivalent_J_per_K
    expected = p.initial_temperature_K + r * (s + tau * np.expm1(-s / tau))
    np.testing.assert_allclose(run.sensor_temperature_K, expected, rtol=0, atol=1e-12)


# --- independent integrator ----------------------------------------------------------------------
def test_against_solve_ivp_two_body_burn_exchange():
    # the same ODEs written out independently and integrated by scipy's DOP853 at tight
    # tolerances; agreement within a few µK (issue requirement)
    p = replace(BOMB.noise_free(), thermometer_lag_s=3.0, jacket_drift_K_per_s=1e-6,
                initial_state="uniform")
    pulse = CombustionPulse(energy_J=26434.0, fire_time_s=300.0, burn_time_s=8.0)
    run = simulate_run(p, pulse, duration_s=1800.0)
    cb, cw = p.bomb_heat_capacity_J_per_K, p.water_heat_capacity_J_per_K
    gbw, G, tau = p.bomb_water_conductance_W_per_K, p.exchange_conductance_W_per_K, 3.0

    def rhs(t, y):
        Tb, Tw, Tm = y
        Tj = p.jacket_temperature_K + p.jacket_drift_K_per_s * t
        x = (t - 300.0) / 8.0
        P = 26434.0 / 8.0 * (1 - math.cos(2 * math.pi * x)) if 0 <= x < 1 else 0.0
        return [(gbw * (Tw - Tb) + P) / cb,
                (gbw * (Tb - Tw) + G * (Tj - Tw) + p.stirring_power_W) / cw,
                (Tw - Tm) / tau]

    # one call with steps ≤ 1 s (the 8 s burn is resolved; long steps let DOP853's dense
    # output drift by µK at these tolerances)
    sol = solve_ivp(rhs, (0.0, 1800.0), [p.initial_temperature_K] * 3, method="DOP853",
                    rtol=1e-12, atol=1e-12, t_eval=run.thermogram.time_s, max_step=1.0)
    assert sol.success
    # issue: "within a few µK"; the exact integrator agrees to ~3e-10 K in the water and the
    # reading, ~1e-8 K in the inner body during its 12 K jump (solve_ivp's own step error)
    np.testing.assert_allclose(run.inner_temperature_K, sol.y[0], rtol=0, atol=1e-7)
    np.testing.assert_allclose(run.water_temperature_K, sol.y[1], rtol=0, atol=1e-8)
    np.testing.assert_allclose(run.thermogram.temperature_K, sol.y[2], rtol=0, atol=1e-8)


# --- corrected rise of the noise-free record -------------------------------------------------------
def test_exact_corrected_rise_of_noise_free_record():
    # docs/methods.md §1.1 (1.2): ΔT_c = (T_f − T_i) − ∫ k (T_inf − T) dt for one body; with the
    # exact k and T_inf the integral of the noise-free record recovers Q/ε (the definition of
    # the corrected rise that every rise method approximates)
    p = replace(SOLUTION.noise_free(), thermometer_lag_s=0.0, sampling_interval_s=0.25)
    inputs = [HeaterInterval(power_W=0.05, on_s=200.0, off_s=500.0),
              FirstOrderRelease(energy_J=-40.0, start_s=900.0, time_constant_s=20.0)]
    run = simulate_run(p, inputs, duration_s=1600.0)
    t, T = run.thermogram.time_s, run.water_temperature_K
    k, T_inf = run.truth.exchange_rate_per_s, run.truth.convergence_temperature_K
    from scipy.integrate import simpson

    leak = simpson(k * (T_inf - T), x=t)
    rise = (T[-1] - T[0]) - leak
    # the release (τ = 20 s over 700 s) is complete to e^-35; Simpson on 0.25 s steps
    assert rise == pytest.approx(run.truth.adiabatic_rise_K, rel=1e-6)
    assert run.truth.heat_released_J == pytest.approx(15.0 - 40.0, rel=1e-12)


def test_newtonian_rise_two_body_and_effective_energy_equivalent():
    # Two bodies: in the drift periods the inner body lags the water, so a perfect Newtonian
    # analysis of the reading (slow rate λ, exact T_inf) gives Q λ ∫h dt = Q λ/G, not Q/ε
    # (modal derivation in SimulationTruth's docstring; ∫h dt = 1/G because in steady state
    # each watt leaves through G). Checked here by direct quadrature of the noise-free record,
    # from two different starting temperatures and heats: ε_eff = Q/rise is the same
    # (an ideal calibration absorbs the effect; docs/methods.md §1.9)
    base = replace(BOMB.noise_free(), sampling_interval_s=0.5)
    from scipy.integrate import simpson

    eff = []
    for T0, Q in ((296.65, 26434.0), (297.4, 19000.0)):
        p = replace(base, initial_temperature_K=T0)
        run = simulate_run(p, CombustionPulse(energy_J=Q, fire_time_s=300.0), duration_s=3300.0)
        t, T = run.thermogram.time_s, run.thermogram.temperature_K
        lam, T_inf = run.truth.drift_rate_per_s, run.truth.convergence_temperature_K
        # window from before the firing to 3000 s after it (33 τ₁: fast modes gone to e^-33)
        rise = (T[-1] - T[0]) - simpson(lam * (T_inf - T), x=t)
        assert rise == pytest.approx(run.truth.newtonian_rise_K, rel=1e-8)
        assert run.truth.effective_energy_equivalent_J_per_K == pytest.approx(
            p.exchange_conductance_W_per_K / lam, rel=1e-12)
        eff.append(Q / rise)
    assert eff[0] == pytest.approx(eff[1], rel=1e-8)
    # for the bomb preset the effect is ≈ +6.8e-4 of ε (k τ₁ ≈ 3.6e-3 times C_b/ε-type factors)
    assert eff[0] / base.energy_equivalent_J_per_K - 1 == pytest.approx(6.85e-4, rel=0.01)
    # one body: the Newtonian rise is the adiabatic rise (docs/methods.md §1.9, lag included)
    one = simulate_run(SOLUTION, HeaterInterval(power_W=0.05, on_s=100.0, off_s=400.0),
                       duration_s=1500.0, seed=1)
    assert one.truth.newtonian_rise_K == one.truth.adiabatic_rise_K
    assert one.truth.effective_energy_equivalent_J_per_K == SOLUTION.energy_equivalent_J_per_K


# --- noise and seeds ----------------------------------------------------------------------------
def test_same_seed_same_thermogram():
    a = simulate_run(BOMB, CombustionPulse(energy_J=26000.0, fire_time_s=600.0),
                     duration_s=2400.0, seed=42)
    b = simulate_run(BOMB, CombustionPulse(energy_J=26000.0, fire_time_s=600.0),
                     duration_s=2400.0, seed=42)
    np.testing.assert_array_equal(a.thermogram.temperature_K, b.thermogram.temperature_K)
    np.testing.assert_array_equal(a.thermogram.time_s, b.thermogram.time_s)


def test_different_seed_noise_with_stated_deviation():
    p = replace(BOMB, quantisation_K=0.0, noise_K=1e-4)
    a = simulate_run(p, (), duration_s=20000.0, seed=1)
    b = simulate_run(p, (), duration_s=20000.0, seed=2)
    assert not np.array_equal(a.thermogram.temperature_K, b.thermogram.temperature_K)
    noise = a.thermogram.temperature_K - a.sensor_temperature_K
    # 4001 readings: the sample s.d. has a relative s.e. of 1/sqrt(2 n) ≈ 1.1 %; four of them
    assert np.std(noise) == pytest.approx(1e-4, rel=4 / math.sqrt(2 * noise.size))
    assert abs(np.mean(noise)) < 5 * 1e-4 / math.sqrt(noise.size)
    # independent draws: the two noise sequences are uncorrelated (|r| < 5/sqrt(n))
    other = b.thermogram.temperature_K - b.sensor_temperature_K
    assert abs(np.corrcoef(noise, other)[0, 1]) < 5 / math.sqrt(noise.size)


def test_quantisation_steps():
    p = replace(BOMB, quantisation_K=1e-4, noise_K=3e-5)
    run = simulate_run(p, (), duration_s=1000.0, seed=5)
    steps = run.thermogram.temperature_K / 1e-4
    np.testing.assert_allclose(steps, np.round(steps), rtol=0, atol=1e-6)


# --- heater channels ------------------------------------------------------------------------------
def test_heater_channels_energy_noise_free():
    # docs/methods.md §2.3: Q_el = ∫ V I dt; with V = √(P R), I = √(P/R) the sampled channels give
    # back P (t_off − t_on) (left Riemann sum over readings aligned with the switching times)
    p = SOLUTION.noise_free()
    heater = HeaterInterval(power_W=0.05, on_s=300.0, off_s=600.0, resistance_ohm=47.0)
    run = simulate_run(p, heater, duration_s=1200.0)
    t = run.thermogram.time_s
    V, A = run.thermogram.channels["heater_V"], run.thermogram.channels["heater_A"]
    dt = np.diff(t)
    energy = float(np.sum(V[:-1] * A[:-1] * dt))
    assert energy == pytest.approx(heater.energy_J, rel=1e-6)
    assert heater.energy_J == pytest.approx(15.0, rel=1e-15)
    on = V > 0
    assert np.allclose(V[on] / A[on], 47.0, rtol=1e-12)  # Ohm's law
    assert t[on][0] == 300.0
    assert t[on][-1] == 600.0 - p.sampling_interval_s


def test_heater_channels_noise_is_small_and_seeded():
    heater = HeaterInterval(power_W=0.05, on_s=300.0, off_s=600.0)
    a = simulate_run(SOLUTION, heater, duration_s=1200.0, seed=9)
    b = simulate_run(SOLUTION, heater, duration_s=1200.0, seed=9)
    V = a.thermogram.channels["heater_V"]
    np.testing.assert_array_equal(V, b.thermogram.channels["heater_V"])
    on = V > 0
    rel = V[on] / heater.voltage_V - 1
    assert 0 < np.std(rel) < 3e-5  # stated 1e-5 relative
    power = np.mean(V[on] * a.thermogram.channels["heater_A"][on])
    assert power == pytest.approx(0.05, rel=1e-5)


# --- records --------------------------------------------------------------------------------------
def test_thermogram_is_labelled_simulated_and_truth_is_jsonable():
    run = simulate_run(BOMB, CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
                       duration_s=2400.0, seed=7)
    th = run.thermogram
    assert th.metadata["simulated"] == "true"
    assert th.provenance.importer == "calwork.simulation"
    assert th.provenance.method == "simulated"
    assert th.provenance.constants["water_heat_capacity_J_per_K"] == 8400.0
    assert th.n_points == 481
    assert th.sampling_interval_s == pytest.approx(5.0)
    assert set(th.channels) == {"jacket_K"}
    d = json.loads(json.dumps(run.truth.to_dict()))
    assert d["heat_released_J"] == 26434.0
    assert d["events"][0]["kind"] == "combustion"
    assert d["adiabatic_rise_K"] == pytest.approx(2.6434, rel=1e-12)
    assert run.truth.internal_time_constant_s == pytest.approx(1600 * 8400 / (15 * 10000))
    assert "2.6434" in run.truth.report()


def test_model_matrix_structure():
    m = LinearModel.build(replace(BOMB, thermometer_lag_s=2.0))
    assert m.n == 3
    assert (m.inner, m.water, m.sensor) == (0, 1, 2)
    m1 = LinearModel.build(replace(SOLUTION, thermometer_lag_s=0.0))
    assert m1.n == 1
    assert m1.inner == m1.water == m1.sensor == 0


# --- linearity and time invariance (properties of the model, any parameters) ----------------
@settings(max_examples=15, deadline=None)
@given(
    cb=st.floats(50.0, 5000.0), cw=st.floats(100.0, 12000.0),
    gbw=st.one_of(st.none(), st.floats(0.5, 50.0)), G=st.floats(0.0, 2.0),
    lag=st.one_of(st.just(0.0), st.floats(0.01, 8.0)), e1=st.floats(10.0, 3e4), e2=st.floats(-500.0, -1.0),
)
def test_superposition_and_time_invariance(cb, cw, gbw, G, lag, e1, e2):
    # the model is linear and time-invariant: the response to two inputs is the sum of the
    # responses (relative to the run without input), and shifting the run shifts the response
    p = CalorimeterParams(bomb_heat_capacity_J_per_K=cb, water_heat_capacity_J_per_K=cw,
                          bomb_water_conductance_W_per_K=gbw, exchange_conductance_W_per_K=G,
                          thermometer_lag_s=lag, noise_K=0.0, initial_state="uniform")
    a = CombustionPulse(energy_J=e1, fire_time_s=100.0, burn_time_s=7.0)
    b = FirstOrderRelease(energy_J=e2, start_s=333.3, time_constant_s=15.0)
    base = simulate_run(p, (), duration_s=1000.0).sensor_temperature_K
    both = simulate_run(p, [a, b], duration_s=1000.0).sensor_temperature_K
    only_a = simulate_run(p, a, duration_s=1000.0).sensor_temperature_K
    only_b = simulate_run(p, b, duration_s=1000.0).sensor_temperature_K
    scale = max(1.0, e1 / (cb + cw))
    np.testing.assert_allclose(both - base, (only_a - base) + (only_b - base), rtol=0,
                               atol=1e-11 * scale)
    shifted = simulate_run(p, [replace(a, fire_time_s=1100.0), replace(b, start_s=1333.3)],
                           duration_s=1000.0, start_time_s=1000.0).sensor_temperature_K
    np.testing.assert_allclose(shifted, both, rtol=0, atol=1e-10 * scale)
