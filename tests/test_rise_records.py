"""Analytic Newtonian test records for the temperature-rise tests (and a check of them).

``newtonian_record`` is the exact solution of docs/methods.md (1.1),
``dT/dt = k (T_∞ − T) + w(t)``, for a first-order heat release
``w = (ΔT/τ) e^{−(t−t₀)/τ}`` (t ≥ t₀): with ``s = t − t₀``,

    T(t) = T_∞ + (T₀ − T_∞) e^{−k t} + ΔT (e^{−k s} − e^{−s/τ}) / (1 − k τ)     [derived here]

so the true adiabatic rise is exactly ``ΔT``. Optionally a heater interval (constant ``w``
from ``t_on`` to ``t_off``) instead of the release, and Gaussian reading noise from a seeded
generator. These records are invented test data (simulated), not measurements.
"""

from __future__ import annotations

import numpy as np

from calwork.core.thermogram import Thermogram

__all__ = ["heater_record", "newtonian_record"]


def _lag_response(s, k, tau):
    """``∫₀ˢ e^{−k(s−u)} e^{−u/τ} du / τ`` = ``(e^{−ks} − e^{−s/τ})/(1 − kτ)``."""
    return (np.exp(-k * s) - np.exp(-s / tau)) / (1.0 - k * tau)


def newtonian_record(*, rise_K=2.5, k_per_s=1e-4, T_inf_K=298.5, T0_K=297.0, fire_s=600.0,
                     tau_s=30.0, tau2_s=0.0, duration_s=2400.0, dt_s=5.0, noise_K=0.0,
                     seed=None, jacket_K=None, t_start_s=0.0):
    """A single-body Newtonian thermogram with a heat release (exact).

    The release is first order (time constant ``tau_s``) or, with ``tau2_s > 0``, an impulse
    seen through two first-order lags, ``w ∝ (e^{−s/τ₁} − e^{−s/τ₂})/(τ₁ − τ₂)`` (the kernel
    of docs/methods.md (1.10); smooth at the start).
    """
    t = t_start_s + dt_s * np.arange(round(duration_s / dt_s) + 1)
    T = T_inf_K + (T0_K - T_inf_K) * np.exp(-k_per_s * (t - t_start_s))
    s = t - fire_s
    on = s > 0
    k, s = k_per_s, s[on]
    if tau2_s:
        T[on] += rise_K * (tau_s * _lag_response(s, k, tau_s)
                           - tau2_s * _lag_response(s, k, tau2_s)) / (tau_s - tau2_s)
    else:
        T[on] += rise_K * _lag_response(s, k, tau_s)
    if noise_K:
        T = T + np.random.default_rng(seed).normal(0.0, noise_K, t.size)
    channels = {} if jacket_K is None else {"jacket_K": np.full(t.size, jacket_K)}
    return Thermogram(time_s=t, temperature_K=T, channels=channels)


def heater_record(*, rate_K_per_s=2e-4, on_s=600.0, off_s=900.0, k_per_s=1e-3, T_inf_K=298.2,
                  T0_K=298.15, duration_s=2400.0, dt_s=2.0, noise_K=0.0, seed=None):
    """A Newtonian thermogram with a constant heating rate ``w`` from ``on_s`` to ``off_s``.

    Exact: after the start the response to a step ``w`` is ``(w/k)(1 − e^{−k(t−t_on)})``, minus
    the same step delayed to ``t_off``. True adiabatic rise ``w (t_off − t_on)``.
    """
    t = dt_s * np.arange(round(duration_s / dt_s) + 1)
    T = T_inf_K + (T0_K - T_inf_K) * np.exp(-k_per_s * t)
    for start, sign in ((on_s, 1.0), (off_s, -1.0)):
        s = np.clip(t - start, 0.0, None)
        T += sign * rate_K_per_s / k_per_s * (-np.expm1(-k_per_s * s))
    if noise_K:
        T = T + np.random.default_rng(seed).normal(0.0, noise_K, t.size)
    return Thermogram(time_s=t, temperature_K=T)


def test_newtonian_record_solves_the_heat_balance():
    # Independent check of the closed form: integrate (1.1) numerically with scipy's
    # solve_ivp (general-purpose reference library) and compare.
    from scipy.integrate import solve_ivp

    k, T_inf, rise, fire = 1e-3, 298.5, 2.5, 600.0
    for tau, tau2 in ((30.0, 0.0), (40.0, 15.0)):

        def rhs(t, T, tau=tau, tau2=tau2):
            s = t - fire
            if s <= 0:
                w = 0.0
            elif tau2:
                w = rise * (np.exp(-s / tau) - np.exp(-s / tau2)) / (tau - tau2)
            else:
                w = rise / tau * np.exp(-s / tau)
            return k * (T_inf - T) + w

        rec = newtonian_record(rise_K=rise, k_per_s=k, T_inf_K=T_inf, tau_s=tau, tau2_s=tau2,
                               fire_s=fire, duration_s=1800.0)
        # integrate before and after the start of the release separately (w has a kink there)
        before = rec.time_s <= fire
        sol1 = solve_ivp(rhs, (0.0, fire), [297.0], t_eval=rec.time_s[before], rtol=1e-12,
                         atol=1e-13)
        sol2 = solve_ivp(rhs, (fire, 1800.0), [float(sol1.y[0, -1])],
                         t_eval=rec.time_s[~before], rtol=1e-12, atol=1e-13, max_step=2.0)
        got = np.concatenate([sol1.y[0], sol2.y[0]])
        # 50 nK = 0.02 ppm of the rise: the integrator's own error at the step in w (τ₂ = 0)
        assert np.max(np.abs(got - rec.temperature_K)) < 5e-8


def test_heater_record_solves_the_heat_balance():
    from scipy.integrate import solve_ivp

    k, T_inf, w = 1e-3, 298.2, 2e-4

    def rhs_on(t, T):
        return k * (T_inf - T) + w

    def rhs_off(t, T):
        return k * (T_inf - T)

    rec = heater_record(rate_K_per_s=w, k_per_s=k, T_inf_K=T_inf, duration_s=1800.0)
    # integrate piecewise so the switching instants are not stepped over
    T_start, got = 298.15, []
    for a, b in ((0.0, 600.0), (600.0, 900.0), (900.0, 1800.0)):
        sel = (rec.time_s >= a) & (rec.time_s < b) if b < 1800.0 else rec.time_s >= a
        rhs = rhs_on if a == 600.0 else rhs_off
        sol = solve_ivp(rhs, (a, b), [T_start], t_eval=rec.time_s[sel], rtol=1e-12,
                        atol=1e-13, dense_output=True)
        got.append(sol.y[0])
        T_start = float(sol.sol(b)[0])
    assert np.max(np.abs(np.concatenate(got) - rec.temperature_K)) < 1e-8
