"""Pure functions of the temperature-rise engine: Newton's law, RP, Dickinson, the joint fit.

References: docs/methods.md §1.1–§1.6 (equations (1.1)–(1.9); the numerical check [D] of §1.5:
k = 0.003 min⁻¹, ΔT_c = 2 K, heat through lags of 40 s and 15 s, 2 s sampling → RP and
Dickinson-with-(1.7) 2.000 00 K, the 60 % shortcut about −6.5e-4 relative). The analytic
records are exact solutions of (1.1) (tests/test_rise_records.py, checked there against
scipy's ODE solver).
"""

from __future__ import annotations

import numpy as np
import pytest
from test_rise_records import newtonian_record

from calwork.core.errors import FitError, UncertaintyError
from calwork.core.uncertainty import propagate_gradient as propagate
from calwork.core.uncertainty import root_sum_square
from calwork.rise import (
    Periods,
    corrected_rise,
    dickinson_exact_tx_s,
    dickinson_rise_K,
    drift_rate_K_per_s,
    exchange_from_drift_K,
    newton_constants_from_drifts,
    regnault_pfaundler_rise_K,
    time_at_fraction_s,
)
from calwork.rise.drift import (
    cumulative_trapezoid_K_s,
    relaxation_factor_s,
    relaxation_terms,
    trapezoid_K_s,
    trapezoid_weights_s,
)
from calwork.rise.newton import fit_newton, newton_rise

K_METHODS = 0.003 / 60.0  # 0.003 min⁻¹ (docs/methods.md §1.5 numerical check)


def _periods(fore_end, fire, main_end, end, start=0.0):
    return Periods(fore_period_s=(start, fore_end), fire_time_s=fire, main_end_s=main_end,
                   after_period_s=(main_end, end))


def _newton_T(t, T0, k, T_inf):
    """Newton's law of cooling solved by hand: T(t) = T_∞ + (T_0 − T_∞) e^{−k t} (1.9)."""
    return T_inf + (T0 - T_inf) * np.exp(-k * np.asarray(t))


def test_newton_law_closed_forms():
    # (1.1): the drift of the closed-form solution is k (T_inf − T); check the kernel's drift
    # rate (written about T_r = T_inf with g_r = 0) by central differences.
    t = np.linspace(0.0, 3000.0, 301)
    T = _newton_T(t, 297.0, 2e-4, 298.5)
    dTdt = np.gradient(T, t, edge_order=2)
    assert dTdt[1:-1] == pytest.approx(drift_rate_K_per_s(T, 298.5, 0.0, 2e-4)[1:-1],
                                       rel=1e-5)
    # the curve the reports draw (drift_curve_K) is the same solution
    from calwork.rise.drift import drift_curve_K

    g0 = float(drift_rate_K_per_s(297.0, 298.5, 0.0, 2e-4))
    assert drift_curve_K(t, 0.0, 297.0, g0, 2e-4) == pytest.approx(T, abs=1e-12)
    # T_inf and k back from two drift periods (1.3), exact for Newtonian drifts
    g1, g2 = (float(drift_rate_K_per_s(T_m, 298.5, 0.0, 2e-4)) for T_m in (297.2, 299.4))
    k, T_inf = newton_constants_from_drifts(g1, g2, 297.2, 299.4)
    assert k == pytest.approx(2e-4, rel=1e-12)
    assert T_inf == pytest.approx(298.5, abs=1e-9)


def test_relaxation_factor_series_and_derivative():
    tau = np.linspace(-2000.0, 2000.0, 41)
    for k in (0.0, 1e-8, 3e-7, 5e-7, 1e-5, 1e-3):
        exact = tau if k == 0 else -np.expm1(-k * tau) / k
        assert relaxation_factor_s(tau, k) == pytest.approx(exact, rel=1e-12, abs=1e-12)
    # derivative vs central differences in k, on both sides of the series switch (|kτ| = 1e-3)
    for k in (2e-7, 4.9e-7, 5.1e-7, 1e-4):
        h = k * 1e-4
        num = (relaxation_factor_s(tau, k + h) - relaxation_factor_s(tau, k - h)) / (2 * h)
        assert relaxation_terms(tau, k)[2] == pytest.approx(num, rel=1e-6, abs=1e-3)
    assert relaxation_terms(tau, 0.0)[2] == pytest.approx(-tau**2 / 2)
    # the scalar path (single times, as the fit evaluates them) agrees with the array path
    for k in (0.0, 3e-7, 1e-4):
        for x in (-1500.0, 0.0, 700.0):
            e, phi, dphi = relaxation_terms(x, k)
            e_a, phi_a, dphi_a = (float(v[0]) for v in relaxation_terms(np.array([x]), k))
            assert (e, phi, dphi) == pytest.approx((e_a, phi_a, dphi_a), rel=1e-12, abs=1e-9)


def test_trapezoid_helpers_on_unequal_steps():
    t = np.array([0.0, 1.0, 3.0, 3.5, 7.0])
    y = 2.0 * t + 1.0  # trapezoid is exact for a straight line: ∫ = t² + t
    assert trapezoid_K_s(t, y) == pytest.approx(56.0)
    assert cumulative_trapezoid_K_s(t, y) == pytest.approx(t**2 + t)
    assert trapezoid_weights_s(t) @ y == pytest.approx(56.0)


def test_exchange_correction_of_a_pure_drift_equals_the_temperature_change():
    # With w = 0 the whole change is exchange: ΔT_c = 0 (1.2) up to trapezoid error.
    t = np.linspace(0.0, 600.0, 121)
    T = _newton_T(t, 297.0, 1e-4, 298.5)
    T_r = float(T[0])
    g_r = float(drift_rate_K_per_s(T_r, 298.5, 0.0, 1e-4))
    dex = exchange_from_drift_K(600.0, g_r, 1e-4, trapezoid_K_s(t, T - T_r))
    assert dex == pytest.approx(T[-1] - T[0], rel=1e-6)


def test_rp_and_exact_dickinson_are_one_correction():
    # docs/methods.md §1.5: Dickinson with t_x of (1.7) is algebraically RP (1.4) — any inputs.
    rng = np.random.default_rng(7)
    for _ in range(20):
        t_i, t_f = 600.0, 600.0 + rng.uniform(200, 900)
        T_i, T_f = 297.0 + rng.normal(0, 0.1), 299.5 + rng.normal(0, 0.1)
        g_i, g_f = rng.normal(1e-4, 3e-5), rng.normal(-1e-4, 3e-5)
        Tm_i, Tm_f = T_i - 0.02, T_f + 0.01
        integral = (T_i + 0.8 * (T_f - T_i)) * (t_f - t_i)
        rp = regnault_pfaundler_rise_K(t_i, t_f, T_i, T_f, g_i, g_f, Tm_i, Tm_f, integral)
        tx = dickinson_exact_tx_s(t_i, t_f, Tm_i, Tm_f, integral)
        assert dickinson_rise_K(t_i, t_f, tx, T_i, T_f, g_i, g_f) == pytest.approx(rp, abs=1e-12)


@pytest.fixture(scope="module")
def methods_record():
    # docs/methods.md §1.5 numerical check [D]: k = 0.003 /min, 2 K, lags 40 s and 15 s, 2 s.
    return newtonian_record(rise_K=2.0, k_per_s=K_METHODS, T_inf_K=298.5, T0_K=297.5,
                            tau_s=40.0, tau2_s=15.0, dt_s=2.0, duration_s=3000.0,
                            noise_K=1e-9, seed=1)


def test_methods_numerical_check_rp_and_dickinson(methods_record):
    # Boundaries well outside the transient (§1.1 invariance), classical period lengths
    # (fore ≈ 10 min, after 10 min; docs/methods.md §1.2): truth 2 K exactly.
    p = _periods(590.0, 600.0, 1500.0, 2100.0)
    rp = corrected_rise(methods_record, "regnault-pfaundler", p)
    dk = corrected_rise(methods_record, "dickinson", p)
    nf = corrected_rise(methods_record, "newton-fit", p)
    assert rp.corrected_rise_K == pytest.approx(dk.corrected_rise_K, abs=1e-6)  # §1.5 [D]
    # "2.000 00 K" in docs/methods.md: within 5 µK (half the last quoted digit)
    assert rp.corrected_rise_K == pytest.approx(2.0, abs=5e-6)
    assert nf.corrected_rise_K == pytest.approx(2.0, abs=2e-6)
    # the equal-area t_x (1.7) lies inside the rise
    assert 600.0 < dk.t_x_s < 700.0


def test_sixty_percent_shortcut_error_has_the_expected_sign_and_size(methods_record):
    # The ASTM form (1.8) evaluated by hand on the exact curve (r1, r2 = temperature change
    # over the 5 min before a and after c, t_a, t_c, b from the exact temperatures) gives the
    # shortcut's own error; calwork's 60 % rule (straight lines over those 5 min) must
    # reproduce it to 10 % (the lines' ends differ from the curve by ~20 µK), and it must be
    # negative (b comes before the equal-area time and the
    # calorimeter ends above T_inf, so g_f < g_i) and of the order of docs/methods.md's −6.5e-4
    # (setup details not given there [D]).
    p = _periods(590.0, 600.0, 1500.0, 2100.0)
    exact = corrected_rise(methods_record, "dickinson", p)
    short = corrected_rise(methods_record, "dickinson", p, dickinson_rule="60-percent")
    t, T = methods_record.time_s, methods_record.temperature_K
    a, c = 600.0, 1500.0
    T_a, T_c = float(np.interp(a, t, T)), float(np.interp(c, t, T))
    r1 = (T_a - float(np.interp(a - 300.0, t, T))) / 300.0
    r2 = (float(np.interp(c + 300.0, t, T)) - T_c) / 300.0
    b = time_at_fraction_s(t, T, a, T_a, T_c, 0.60)
    by_hand = dickinson_rise_K(a, c, b, T_a, T_c, r1, r2)
    assert short.corrected_rise_K == pytest.approx(by_hand, abs=0.1 * abs(by_hand - 2.0))
    delta = short.corrected_rise_K - exact.corrected_rise_K
    assert -2e-3 < delta / 2.0 < -3e-4
    # the stated uncertainty includes the shortcut's deviation
    # (against RP on the same 5-min lines, hence the 1 % tolerance)
    assert short.uncertainty_budget["shortcut"] == pytest.approx(abs(delta) / np.sqrt(3),
                                                                 rel=0.01)
    assert short.u_corrected_rise_K > abs(delta) / 2
    assert any(w.startswith("dickinson-60-percent:") for w in short.warnings)


def test_time_at_fraction_interpolates_and_handles_falling_records():
    t = np.array([0.0, 10.0, 20.0, 30.0])
    assert time_at_fraction_s(t, [1.0, 0.5, 0.1, 0.0], 0.0, 1.0, 0.0) == pytest.approx(12.5)
    with pytest.raises(ValueError, match="never reaches"):
        time_at_fraction_s(t, [0.0, 0.1, 0.2, 0.3], 0.0, 0.0, 1.0)


@pytest.mark.parametrize(("method", "tol_K"), [("newton-fit", 1e-6),
                                                ("regnault-pfaundler", 1e-5),
                                                ("dickinson", 1e-5)])
def test_rise_is_invariant_to_t_i_before_onset_and_t_f_after_the_transient(method, tol_K):
    # docs/methods.md §1.1 [D]: ΔT_c does not depend on where t_i (before the release) and t_f
    # (after the transient) are put. Periods of 10 min next to the main period; the straight
    # drift lines of RP/Dickinson are exact only to (kL)²/24 of the drift (a few µK here).
    rec = newtonian_record(rise_K=2.5, k_per_s=K_METHODS, tau_s=20.0, tau2_s=5.0,
                           noise_K=1e-9, seed=2, duration_s=3000.0)
    values = []
    for fire in (420.0, 580.0, 600.0):
        for end in (1000.0, 1300.0, 1800.0):
            p = Periods(fore_period_s=(fire - 610.0 if fire > 610 else 0.0, fire - 10.0),
                        fire_time_s=fire, main_end_s=end, after_period_s=(end, end + 600.0))
            values.append(corrected_rise(rec, method, p).corrected_rise_K)
    assert np.ptp(values) < tol_K
    assert np.mean(values) == pytest.approx(2.5, abs=tol_K)


def test_joint_fit_recovers_the_drift_model_and_its_covariance():
    # Noise-free: parameters exact. Noisy (seeded Monte Carlo, 300 records): the scatter of k
    # and of the rise matches the fit's stated standard deviations within 20 %.
    rec = newtonian_record(k_per_s=7e-5, T_inf_K=298.7, tau2_s=8.0, noise_K=0.0)
    t, T = rec.time_s, rec.temperature_K
    fm, am = t <= 590, t >= 1200
    fit = fit_newton(t[fm], T[fm], t[am], T[am])
    assert fit.k_per_s == pytest.approx(7e-5, rel=1e-8)
    assert fit.T_inf_K == pytest.approx(298.7, abs=1e-6)
    assert fit.iterations <= 6
    rng = np.random.default_rng(11)
    ks, rises, sd_k, sd_r = [], [], [], []
    for _ in range(300):
        Tn = T + rng.normal(0.0, 1e-4, T.size)
        f = fit_newton(t[fm], Tn[fm], t[am], Tn[am])
        mm = (t >= 600) & (t <= 1200)
        th = Tn[mm] - f.reference_temperature_K
        rise, grad, _ = newton_rise(f, 600.0, 1200.0, trapezoid_K_s(t[mm], th))
        ks.append(f.k_per_s)
        rises.append(rise)
        sd_k.append(np.sqrt(f.covariance[3, 3]))
        sd_r.append(propagate(grad, f.covariance))
    # 300 draws: the s.d. of the draws has relative s.e. 1/√(2·299) = 4.1 %; three of them
    tol = 3 / np.sqrt(2 * 299)
    assert np.std(ks) == pytest.approx(np.mean(sd_k), rel=tol)
    assert np.std(rises) == pytest.approx(np.mean(sd_r), rel=tol)
    assert np.mean(rises) == pytest.approx(2.5, abs=3 * np.mean(sd_r) / np.sqrt(300))


def test_rise_gradient_matches_finite_differences():
    rec = newtonian_record(k_per_s=7e-5, noise_K=1e-4, seed=5)
    t, T = rec.time_s, rec.temperature_K
    fm, am = t <= 590, t >= 1200
    fit = fit_newton(t[fm], T[fm], t[am], T[am])
    _, grad, _ = newton_rise(fit, 600.0, 1200.0, 1234.5)
    base = fit.params.copy()
    for j, h in enumerate((1e-6, 1e-6, 1e-10, 1e-10)):
        vals = []
        for sgn in (1, -1):
            p = base.copy()
            p[j] += sgn * h
            object.__setattr__(fit, "params", p)
            vals.append(newton_rise(fit, 600.0, 1200.0, 1234.5)[0])
        object.__setattr__(fit, "params", base)
        assert grad[j] == pytest.approx((vals[0] - vals[1]) / (2 * h), rel=1e-5, abs=1e-9)


def test_fit_errors_and_uncertainty_guards():
    t = np.arange(5.0)
    with pytest.raises(FitError, match="at least 2 fore"):
        fit_newton(t[:1], t[:1], t, t)
    with pytest.raises(UncertaintyError, match="zero"):
        root_sum_square({"fit": 0.0, "main-period-readings": 0.0}, allow_zero=False)
    with pytest.raises(UncertaintyError, match="'fit'"):
        root_sum_square({"fit": float("nan")})
    assert root_sum_square({"a": 3e-6, "b": 4e-6}) == pytest.approx(5e-6)


def test_joint_fit_agrees_with_lmfit():
    # Independent check with a general-purpose fitting library (lmfit, Levenberg–Marquardt on
    # the textbook form T = T_inf + (T_0 − T_inf) e^{−k (t − t_0)} of docs/methods.md (1.9), one
    # T_0 per period, shared k and T_inf).
    import lmfit

    rec = newtonian_record(k_per_s=2e-4, T_inf_K=298.6, tau2_s=8.0, noise_K=1e-4, seed=17)
    t, T = rec.time_s, rec.temperature_K
    fm, am = t <= 590, t >= 1300
    ours = fit_newton(t[fm], T[fm], t[am], T[am])

    def resid(params):
        v = params.valuesdict()
        fore = v["T_inf"] + (v["T0_f"] - v["T_inf"]) * np.exp(-v["k"] * 1e-4 * (t[fm] - 300.0))
        after = v["T_inf"] + (v["T0_a"] - v["T_inf"]) * np.exp(-v["k"] * 1e-4 * (t[am] - 1800.0))
        return np.concatenate([T[fm] - fore, T[am] - after])

    params = lmfit.Parameters()
    params.add("T_inf", value=298.0)
    params.add("k", value=1.0)          # in units of 1e-4 1/s (keeps the problem scaled)
    params.add("T0_f", value=297.2)
    params.add("T0_a", value=299.0)
    out = lmfit.minimize(resid, params)
    assert out.success
    assert ours.k_per_s == pytest.approx(out.params["k"].value * 1e-4, rel=1e-6)
    assert ours.T_inf_K == pytest.approx(out.params["T_inf"].value, abs=1e-6)
    assert np.sqrt(ours.covariance[3, 3]) == pytest.approx(out.params["k"].stderr * 1e-4,
                                                           rel=1e-3)
    assert ours.u_T_inf_K == pytest.approx(out.params["T_inf"].stderr, rel=1e-3)
