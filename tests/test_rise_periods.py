"""Period detection (docs/methods.md §1.2, §1.7) on exact analytic records with seeded noise.

Truths: the release starts at 600 s, the rise is set in the record (tests/test_rise_records.py,
exact solutions of (1.1)). Tolerances are stated in the measurement's terms (readings, σ).
"""

from __future__ import annotations

import numpy as np
import pytest
from test_rise_records import heater_record, newtonian_record

from calwork.core.errors import PeriodDetectionError
from calwork.core.thermogram import Thermogram
from calwork.rise import Periods, corrected_rise, detect_periods

SIGMA = 1e-4


def _codes(warnings):
    return {w.split(":", 1)[0] for w in warnings}


@pytest.fixture(scope="module")
def exo():
    return newtonian_record(k_per_s=5e-5, tau_s=30.0, tau2_s=5.0, noise_K=SIGMA, seed=3)


def test_exothermic_boundaries(exo):
    p = detect_periods(exo)
    # firing: the last reading before the onset, one reading (5 s) at most from the release
    assert 595.0 <= p.fire_time_s <= 605.0
    assert p.fire_source == "detected"
    assert 600.0 < p.onset_s <= 620.0
    assert p.fire_confidence > 0.5
    # fore period: the whole record before firing, minus the two-reading guard
    assert p.fore_period_s == (0.0, p.fire_time_s - 10.0)
    # end: after the lagged release has decayed below ~5σ (τ₁ = 30 s: 2.5 K e^{-s/30} < 5σ
    # for s > 255 s) and long before the end of the record
    assert 850.0 <= p.main_end_s <= 1400.0
    assert p.after_period_s == (p.main_end_s, 2400.0)
    # the noise comes from the median absolute second difference of ~480 readings: a median
    # estimator (efficiency 37 %) of correlated differences has a relative s.e. near 7 %
    # (derived: 1.67/√(2n) × 1.3 for the correlation); 0.15 is about two of them
    assert p.noise_K == pytest.approx(SIGMA, rel=0.15)
    assert p.event_sign == 1
    assert p.warnings == ()
    assert 0.0 <= p.main_end_confidence <= 1.0


def test_endothermic_event_in_a_fast_leaking_vessel():
    # semi-adiabatic solution cell: k = 1e-3 /s, a dissolution absorbing heat (−40 mK)
    rec = newtonian_record(rise_K=-0.04, k_per_s=1e-3, T_inf_K=298.16, T0_K=298.13,
                           tau_s=25.0, dt_s=2.0, noise_K=2e-5, seed=4)
    p = detect_periods(rec)
    assert p.event_sign == -1
    assert 596.0 <= p.fire_time_s <= 602.0
    res = corrected_rise(rec, periods=p)
    # |error| within 3 stated standard uncertainties, and u below 0.2 % of the rise
    # (20 µK noise on a 40 mK rise)
    assert abs(res.corrected_rise_K + 0.04) <= 3 * res.u_corrected_rise_K
    assert res.u_corrected_rise_K < 0.002 * 0.04
    # k of the simulated vessel within three of the fit's standard uncertainties
    assert abs(res.k_per_s - 1e-3) <= 3 * res.u_k_per_s


def test_heater_interval_without_and_with_channels():
    rec = heater_record(rate_K_per_s=2e-4, on_s=600.0, off_s=900.0, noise_K=2e-5, seed=5)
    p = detect_periods(rec)
    assert 590.0 <= p.fire_time_s <= 600.0
    assert p.main_end_s >= 900.0          # the main period runs past heater-off
    res = corrected_rise(rec, periods=p)
    assert abs(res.corrected_rise_K - 0.06) <= 3 * res.u_corrected_rise_K  # w·Δt = 60 mK
    volts = np.where((rec.time_s >= 600.0) & (rec.time_s < 900.0), 2.0, 0.0)
    rec2 = Thermogram(time_s=rec.time_s, temperature_K=rec.temperature_K,
                      channels={"heater_V": volts})
    p2 = detect_periods(rec2)
    assert p2.fire_source == "heater-channel"
    assert p2.fire_time_s == 598.0        # the last reading before switch-on
    assert p2.heater_off_s == 900.0
    assert p2.main_end_s >= 900.0


def test_spikes_are_removed_and_reported(exo):
    T = exo.temperature_K.copy()
    idx = [40, 300, 410]                  # fore, after, after; up and down
    T[idx] += [0.02, -0.015, 0.01]
    spiky = Thermogram(time_s=exo.time_s, temperature_K=T)
    p = detect_periods(spiky)
    assert p.spikes_s == tuple(float(exo.time_s[i]) for i in idx)
    res = corrected_rise(spiky)
    spike_warnings = [w for w in res.warnings if w.startswith("spikes-removed:")]
    assert len(spike_warnings) == 1
    assert "3 single-reading" in spike_warnings[0]
    assert "200, 1500, 2050 s" in spike_warnings[0]
    clean = corrected_rise(exo)
    assert res.corrected_rise_K == pytest.approx(clean.corrected_rise_K,
                                                 abs=clean.u_corrected_rise_K)
    assert 595.0 <= p.fire_time_s <= 605.0  # a fore-period spike does not fake an onset


def test_overrides_and_their_warnings(exo):
    p = detect_periods(exo, fire_time_s=590.0, main_end_s=1500.0)
    assert (p.fire_source, p.main_end_source) == ("given", "given")
    assert p.fire_time_s == 590.0
    assert p.after_period_s == (1500.0, 2400.0)
    late = detect_periods(exo, fire_time_s=700.0)
    assert "fire-time-late" in _codes(late.warnings)
    early = detect_periods(exo, main_end_s=640.0)
    assert "main-end-early" in _codes(early.warnings)
    # explicit Periods plus an override keyword
    res = corrected_rise(exo, periods=p, main_end_s=1600.0)
    assert res.main_end_s == 1600.0
    assert res.after_period_s == (1600.0, 2400.0)
    assert "boundary" not in res.uncertainty_budget   # nothing was detected


def test_explicit_periods_are_checked():
    with pytest.raises(PeriodDetectionError, match="out of order"):
        Periods(fore_period_s=(0.0, 700.0), fire_time_s=600.0, main_end_s=900.0,
                after_period_s=(900.0, 2000.0))
    with pytest.raises(PeriodDetectionError, match=r"\(start, end\)"):
        Periods(fore_period_s=(0.0,), fire_time_s=600.0, main_end_s=900.0,
                after_period_s=(900.0, 2000.0))


def test_no_event_and_too_short_records_raise():
    rng = np.random.default_rng(6)
    t = 5.0 * np.arange(400)
    drift = Thermogram(time_s=t, temperature_K=298.0 + 2e-5 * t + rng.normal(0, SIGMA, t.size))
    with pytest.raises(PeriodDetectionError, match=r"no (heat event|onset)"):
        detect_periods(drift)
    early = newtonian_record(fire_s=10.0, noise_K=SIGMA, seed=7)
    with pytest.raises(PeriodDetectionError, match="fore period too short"):
        detect_periods(early)
    cut = newtonian_record(noise_K=SIGMA, seed=8, duration_s=640.0)
    with pytest.raises(PeriodDetectionError, match=r"after period too short|too few"):
        corrected_rise(cut)
    with pytest.raises(PeriodDetectionError, match="too few readings"):
        detect_periods(Thermogram(time_s=t[:11], temperature_K=298.0 + 0 * t[:11]))
    # from 12 readings the sparse rules look for an event, and a flat record has none
    with pytest.raises(PeriodDetectionError, match="no heat event"):
        detect_periods(Thermogram(time_s=t[:12], temperature_K=298.0 + 0 * t[:12]))


def test_short_periods_and_gaps_are_flagged():
    rec = newtonian_record(fire_s=200.0, duration_s=1300.0, noise_K=SIGMA, seed=9,
                           t_start_s=0.0)
    res = corrected_rise(rec)
    assert "fore-short" in _codes(res.warnings)
    keep = np.ones(rec.n_points, dtype=bool)
    keep[150:160] = False                 # 50 s missing in the after period
    gappy = Thermogram(time_s=rec.time_s[keep], temperature_K=rec.temperature_K[keep])
    assert "sampling-gap" in _codes(corrected_rise(gappy).warnings)


def test_unsteady_start_is_trimmed_from_the_fore_period():
    rec = newtonian_record(k_per_s=5e-5, noise_K=SIGMA, seed=10)
    T = rec.temperature_K + 4e-3 * np.exp(-rec.time_s / 40.0)   # settling after stirring on
    res = corrected_rise(Thermogram(time_s=rec.time_s, temperature_K=T))
    assert "fore-not-newtonian" in _codes(res.warnings)
    assert 60.0 <= res.fore_period_s[0] <= 400.0
    assert abs(res.corrected_rise_K - 2.5) <= 3 * res.u_corrected_rise_K


def test_autocorrelated_noise_is_flagged_and_inflates_u():
    rec = newtonian_record(k_per_s=5e-5, noise_K=0.0)
    rng = np.random.default_rng(12)
    e = rng.normal(0.0, SIGMA, rec.n_points)
    ar = np.empty_like(e)
    ar[0] = e[0]
    for i in range(1, e.size):            # AR(1), ρ = 0.7
        ar[i] = 0.7 * ar[i - 1] + np.sqrt(1 - 0.49) * e[i]
    noisy = Thermogram(time_s=rec.time_s, temperature_K=rec.temperature_K + ar)
    white = Thermogram(time_s=rec.time_s, temperature_K=rec.temperature_K + e)
    r_ar, r_w = corrected_rise(noisy), corrected_rise(white)
    assert "autocorrelated-residuals" in _codes(r_ar.warnings)
    assert r_ar.rho1 == pytest.approx(0.7, abs=0.1)
    # AR(1) inflation (1 + ρ)/(1 − ρ) ≈ 5.7 of the variance: u at least doubles
    assert r_ar.uncertainty_budget["fit"] > 2.0 * r_w.uncertainty_budget["fit"]


def test_jacket_plausibility_and_negative_k():
    near = newtonian_record(noise_K=SIGMA, seed=13, jacket_K=298.45)   # T_inf = 298.5 K
    assert "drift-implausible" not in _codes(corrected_rise(near).warnings)
    far = newtonian_record(noise_K=SIGMA, seed=13, jacket_K=296.0)
    assert "drift-implausible" in _codes(corrected_rise(far).warnings)
    # a record whose after drift is steeper upwards than the fore drift: k < 0
    t = 5.0 * np.arange(481)
    rng = np.random.default_rng(14)
    s = np.clip(t - 600.0, 0.0, None)
    T = 298.0 + 1e-5 * t + 4e-5 * s + 1.0 * (1 - np.exp(-s / 20.0)) + rng.normal(0, SIGMA,
                                                                               t.size)
    res = corrected_rise(Thermogram(time_s=t, temperature_K=T))
    assert res.k_per_s < 0
    assert any(w.startswith("drift-implausible: k =") for w in res.warnings)


def test_quantised_readings_and_an_offset_time_axis():
    rec = newtonian_record(noise_K=2e-6, seed=15, t_start_s=1.0e5, fire_s=1.0e5 + 600.0)
    T = np.round(rec.temperature_K / 1e-5) * 1e-5           # 10 µK resolution
    res = corrected_rise(Thermogram(time_s=rec.time_s, temperature_K=T))
    assert 1.0e5 + 595.0 <= res.fire_time_s <= 1.0e5 + 605.0
    # quantisation noise q/√12 ≈ 3 µK: the rise to a few ppm
    assert res.corrected_rise_K == pytest.approx(2.5, abs=2e-5)
    assert res.u_corrected_rise_K > 0
