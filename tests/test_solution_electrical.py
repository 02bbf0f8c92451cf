"""Electrical calibration: heater power, intervals from the channels, ∫V·I dt, ε = Q/ΔT."""

from __future__ import annotations

import math

import numpy as np
import pytest

from calwork.core.errors import ChoiceError, RunError
from calwork.simulation import CalorimeterParams, HeaterInterval, simulate_run
from calwork.solution.electrical import (
    electrical_energy_J,
    energy_equivalent_J_per_K,
    find_heater_intervals,
    heater_power_W,
)


def _channels(on_s=300.0, off_s=600.0, power_W=0.05, seed=3, dt=2.0):
    p = CalorimeterParams.solution_preset(sampling_interval_s=dt)
    run = simulate_run(p, HeaterInterval(power_W=power_W, on_s=on_s, off_s=off_s,
                                         resistance_ohm=50.0), duration_s=1200.0, seed=seed)
    return run.thermogram


def test_integral_of_V_I_matches_P_times_duration_from_simulated_channels():
    # Q = ∫ V I dt over the interval = P Δt for a stable supply (docs/methods.md (2.1))
    tg = _channels()
    P = heater_power_W(tg.channels["heater_V"], tg.channels["heater_A"])
    (edges,) = find_heater_intervals(tg.time_s, P)
    e = electrical_energy_J(tg.time_s, P, edges.on_s, edges.off_s)
    # switching on the sampling grid: the midpoint edges are both Δt/2 early, so the duration
    # (and Q) is exact up to the simulated 1e-5 relative channel noise
    assert edges.off_s - edges.on_s == pytest.approx(300.0, abs=1e-9)
    assert e.energy_J == pytest.approx(0.05 * 300.0, rel=2e-6)
    assert e.mean_power_W == pytest.approx(0.05, rel=2e-6)


def test_integral_with_known_switching_times_is_exact_off_grid():
    # heater switched between readings; with the true times (sheet heater_on_s/off_s) the
    # held-out end segments make the integral exact for a constant power
    t = np.arange(0.0, 100.0, 2.0)
    on, off, P0 = 10.7, 71.3, 0.04
    P = np.where((t >= on) & (t < off), P0, 0.0)
    e = electrical_energy_J(t, P, on, off, u_relative_power=0.0, u_on_s=0.01, u_off_s=0.01)
    assert e.energy_J == pytest.approx(P0 * (off - on), rel=1e-13)
    assert e.budget["timing"] == pytest.approx(P0 * math.hypot(0.01, 0.01))


def test_detected_edges_and_their_uncertainty():
    t = np.arange(0.0, 40.0, 2.0)
    P = np.where((t >= 9.0) & (t < 25.0), 1.0, 0.0)  # on between 8 and 10, off between 24, 26
    (e,) = find_heater_intervals(t, P)
    assert (e.on_s, e.off_s) == (9.0, 25.0)
    # rectangular distribution one sampling interval wide: u = Δt/√12 (GUM 4.3.7)
    assert e.u_on_s == pytest.approx(2.0 / math.sqrt(12.0))
    # spikes shorter than min_points are not heater intervals
    P[2] = 1.0
    assert len(find_heater_intervals(t, P)) == 1
    assert find_heater_intervals(t, np.zeros_like(t)) == []


def test_standard_resistor_form_gives_the_same_power():
    # I = V_s / R_s (docs/methods.md (2.1)): 10 Ω standard resistor in series with the heater
    tg = _channels()
    V, A = tg.channels["heater_V"], tg.channels["heater_A"]
    R_s = 10.0
    direct = heater_power_W(V, A)
    via_resistor = heater_power_W(V, standard_resistor_V=A * R_s, standard_resistor_ohm=R_s)
    np.testing.assert_allclose(via_resistor, direct, rtol=1e-14)
    # by hand: 50 Ω heater at 50 mW -> V = 1.5811 V, I = 31.62 mA, V_s = 0.3162 V
    assert heater_power_W([math.sqrt(2.5)], standard_resistor_V=[math.sqrt(1e-3) * 10],
                          standard_resistor_ohm=10.0)[0] == pytest.approx(0.05, rel=1e-12)


def test_lead_conventions():
    # P = V_h I + f I² R_L with potential leads at the heater; V I − (1 − f) I² R_L when the
    # voltage includes the leads (docs/methods.md §2.3; convention is a configuration item)
    V, current, R_L = np.array([2.0]), np.array([0.02]), 0.5
    lead = current**2 * R_L
    heater = heater_power_W(V, current, lead_resistance_ohm=R_L, lead_fraction=0.5)
    jacket = heater_power_W(V, current, lead_resistance_ohm=R_L, lead_fraction=0.5,
                            potential_leads="jacket")
    assert heater[0] == pytest.approx(0.04 + 0.5 * lead[0])
    assert jacket[0] == pytest.approx(0.04 - 0.5 * lead[0])
    # default: no lead correction
    assert heater_power_W(V, current)[0] == pytest.approx(0.04)
    # the two conventions describe the same circuit: with V_jacket = V_h + I R_L they agree
    same = heater_power_W(V + current * R_L, current, lead_resistance_ohm=R_L,
                          lead_fraction=0.3, potential_leads="jacket")
    assert same[0] == pytest.approx(heater_power_W(V, current, lead_resistance_ohm=R_L,
                                                   lead_fraction=0.3)[0], rel=1e-14)


def test_energy_equivalent_and_its_uncertainty_by_hand():
    # ε = Q/ΔT; u_r(ε)² = u_r(Q)² + u_r(ΔT)² (GUM law of propagation for a quotient)
    eps, u = energy_equivalent_J_per_K(15.0, 0.003, 0.05, 1e-5)
    assert eps == pytest.approx(300.0)
    assert u == pytest.approx(300.0 * math.hypot(0.003 / 15.0, 1e-5 / 0.05))
    # finite-difference check of the sensitivities
    d = 1e-7
    dQ = (energy_equivalent_J_per_K(15.0 + d, 0.003, 0.05, 1e-5)[0] - eps) / d
    dT = (energy_equivalent_J_per_K(15.0, 0.003, 0.05 + d, 1e-5)[0] - eps) / d
    assert u == pytest.approx(math.hypot(dQ * 0.003, dT * 1e-5), rel=1e-5)


def test_errors_name_the_column():
    with pytest.raises(RunError, match="standard_resistor_ohm"):
        heater_power_W([1.0], standard_resistor_V=[0.1])
    with pytest.raises(RunError, match="heater_A"):
        heater_power_W([1.0])
    with pytest.raises(RunError, match="lead_fraction"):
        heater_power_W([1.0], [0.1], lead_fraction=1.5)
    with pytest.raises(ChoiceError, match="potential_leads"):
        heater_power_W([1.0], [0.1], potential_leads="both")
    with pytest.raises(RunError, match="heater_off_s"):
        electrical_energy_J([0.0, 1.0], [0.0, 0.0], 5.0, 4.0)
    with pytest.raises(RunError, match="heater_V"):
        electrical_energy_J([0.0, 1.0, 2.0], [0.0, 0.0, 0.0], 1.2, 1.8)
    with pytest.raises(RunError, match="heater_V"):
        energy_equivalent_J_per_K(15.0, 0.003, -0.05, 1e-5)
