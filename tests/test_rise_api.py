"""The public surface of calwork.rise: records, JSON keys, errors, curves, plot, validation."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from test_rise_records import newtonian_record

import calwork
import calwork.rise as rise
from calwork.core.errors import ChoiceError, PeriodDetectionError
from calwork.core.results import jsonable
from calwork.report.views import describe
from calwork.rise import METHODS, Periods, RiseResult, corrected_rise, detect_periods
from calwork.rise.result import JSON_KEYS

# DESIGN.md, "JSON keys (contract)": calwork rise --json
CONTRACT_KEYS = ["corrected_rise_K", "u_corrected_rise_K", "method", "fire_time_s",
                 "main_end_s", "fore_period_s", "after_period_s", "k_per_s", "T_inf_K",
                 "warnings"]


@pytest.fixture(scope="module")
def record():
    return newtonian_record(k_per_s=5e-5, tau_s=30.0, tau2_s=5.0, noise_K=1e-4, seed=21)


@pytest.fixture(scope="module")
def result(record):
    return corrected_rise(record)


def test_registry_and_unknown_choices(record):
    assert sorted(METHODS) == ["dickinson", "newton-fit", "regnault-pfaundler"]
    with pytest.raises(ChoiceError, match=r"\['dickinson', 'newton-fit', 'regnault-pfaundler'\]"):
        corrected_rise(record, "newton")
    with pytest.raises(ChoiceError, match="dickinson_rule"):
        corrected_rise(record, "dickinson", dickinson_rule="63-percent")


def test_result_record_and_json(result):
    assert isinstance(result, RiseResult)
    d = result.to_dict()
    assert list(d)[: len(CONTRACT_KEYS)] == CONTRACT_KEYS == list(JSON_KEYS)
    json.dumps(jsonable(d), allow_nan=False)
    assert d["fore_period_s"] == list(result.fore_period_s)
    assert isinstance(d["warnings"], list)
    assert d["periods"]["fire_source"] == "detected"
    assert result.provenance.method == "newton-fit"
    text = describe(result)
    assert "Corrected temperature rise" in text
    assert "newton-fit" in text
    assert result.u_corrected_rise_K > 0
    assert set(result.uncertainty_budget) >= {"fit", "main-period-readings", "boundary"}
    total = math.sqrt(sum(v * v for v in result.uncertainty_budget.values()))
    assert result.u_corrected_rise_K == pytest.approx(total)
    with pytest.raises(AttributeError):
        result.corrected_rise_K = 1.0  # frozen


def test_end_points_come_from_the_fitted_curves(record, result):
    # T_i and T_f are the fitted curves at t_i and t_f (not single readings), and
    # ΔT_c = T_f − T_i − δT_ex (1.2)
    assert result.T_initial_K == pytest.approx(result.fore_curve(result.fire_time_s), abs=1e-12)
    assert result.T_final_K == pytest.approx(result.after_curve(result.main_end_s), abs=1e-12)
    assert result.corrected_rise_K == pytest.approx(
        result.T_final_K - result.T_initial_K - result.exchange_correction_K, abs=1e-12)
    # the curves follow the readings in their periods to the noise level
    t, T = record.time_s, record.temperature_K
    fore = (t >= result.fore_period_s[0]) & (t <= result.fore_period_s[1])
    # (n fore readings: a sample s.d. has relative s.e. 1/√(2(n−1)); three of them)
    n = int(np.count_nonzero(fore))
    assert np.std(T[fore] - result.fore_curve(t[fore])) == pytest.approx(
        1e-4, rel=3 / np.sqrt(2 * (n - 1)))
    # and they share k and T_inf: both relax towards T_inf
    assert result.fore_curve(1e7) == pytest.approx(result.T_inf_K, abs=1e-6)
    assert result.after_curve(1e7) == pytest.approx(result.T_inf_K, abs=1e-6)
    assert result.fore_drift.k_per_s == result.after_drift.k_per_s == result.k_per_s
    # the drift model is the record's (k = 5e-5 1/s, T_inf = 298.5 K)
    assert result.k_per_s == pytest.approx(5e-5, abs=3 * result.u_k_per_s)
    assert result.T_inf_K == pytest.approx(298.5, abs=3 * result.u_T_inf_K)


def test_cross_check_and_method_agreement(record, result):
    rp = corrected_rise(record, "regnault-pfaundler")
    assert result.cross_check["regnault-pfaundler"] == pytest.approx(rp.corrected_rise_K)
    assert abs(rp.corrected_rise_K - result.corrected_rise_K) < 2 * result.u_corrected_rise_K
    assert not any(w.startswith("methods-disagree") for w in result.warnings)


def test_methods_disagree_is_flagged(record, monkeypatch):
    # The cross-check rarely fires on real records (both methods read the same drifts); the
    # plumbing is checked by offsetting the RP value by 10 combined uncertainties.
    import calwork.rise.methods as methods

    real = methods.regnault_pfaundler_check
    base = corrected_rise(record)

    def shifted(sel):
        rise, u = real(sel)
        return rise + 10 * base.u_corrected_rise_K, u

    monkeypatch.setattr(methods, "regnault_pfaundler_check", shifted)  # the registry's check
    res = corrected_rise(record)
    flagged = [w for w in res.warnings if w.startswith("methods-disagree:")]
    assert len(flagged) == 1
    assert "Regnault–Pfaundler" in flagged[0]


def test_explicit_periods_skip_detection_and_boundary_component(record):
    p = Periods(fore_period_s=(0.0, 590.0), fire_time_s=600.0, main_end_s=1300.0,
                after_period_s=(1300.0, 2400.0))
    res = corrected_rise(record, "regnault-pfaundler", p)
    assert res.periods is p
    assert "boundary" not in res.uncertainty_budget
    assert res.corrected_rise_K == pytest.approx(2.5, abs=4 * res.u_corrected_rise_K)


def test_too_short_explicit_period_raises(record):
    # two readings (0 and 5 s): a drift line needs at least three
    p = Periods(fore_period_s=(0.0, 5.0), fire_time_s=600.0, main_end_s=1300.0,
                after_period_s=(1300.0, 2400.0))
    with pytest.raises(PeriodDetectionError, match="fore period has too few readings"):
        corrected_rise(record, periods=p)


def test_periods_record_round_trip(record):
    p = detect_periods(record)
    d = p.to_dict()
    assert d["fore_period_s"] == list(p.fore_period_s)
    assert "fore period" in describe(p)
    json.dumps(d, allow_nan=False)


def test_plot_rise_writes_a_png_and_draws_into_axes(tmp_path, record, result):
    out = rise.plot_rise(record, result, tmp_path / "rise.png")
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    from matplotlib.figure import Figure

    ax = Figure().subplots()
    assert rise.plot_rise(record, result, ax) is ax
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert {"fore period", "main period", "after period", "readings"} <= set(labels)
    dk = corrected_rise(record, "dickinson", dickinson_rule="60-percent")
    assert rise.plot_rise(record, dk, tmp_path / "dk.png").exists()
    # the plot names what it is of, and draws °C as inspect and the workbench do
    ax = Figure().subplots()
    rise.plot_rise(record, result, ax, label="BA-07")
    assert ax.get_title().startswith("BA-07: ")
    assert ax.get_ylabel() == "temperature / °C"
    T_C = [v for line in ax.get_lines() if line.get_label() == "readings"
           for v in line.get_ydata()]
    # 0 °C = 273.15 K by definition of the Celsius scale
    assert min(T_C) == pytest.approx(float(record.temperature_K.min()) - 273.15, abs=1e-9)


def test_a_plot_is_the_same_image_on_a_reused_figure(record, result):
    """Run plots share one figure per process; each image is byte for byte the one a new
    figure gives, whatever was drawn before it (a rise, a fall, another record length)."""
    import io

    from calwork.rise import plot as plot_module
    from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run

    other = simulate_run(CalorimeterParams.bomb_preset(sampling_interval_s=5.0),
                         CombustionPulse(energy_J=9000.0, fire_time_s=400.0),
                         duration_s=3000.0, seed=4).thermogram
    items = [(record, result), (other, corrected_rise(other)), (record, result)]

    def png(th, res):
        buffer = io.BytesIO()
        rise.plot_rise(th, res, buffer, label="R1")
        return buffer.getvalue()

    reused = [png(*item) for item in items]
    fresh = []
    for item in items:
        plot_module._FIGURE.clear()
        fresh.append(png(*item))
    assert reused == fresh
    assert reused[0] == reused[2] != reused[1]


def test_validate_methods_small_run():
    from calwork.simulation import CalorimeterParams

    params = CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None)
    res = calwork.validate_methods(params, runs=3, seed=5)
    names = [m.method for m in res.methods]
    assert names == ["newton-fit", "regnault-pfaundler", "dickinson", "dickinson (60-percent)"]
    newton = res.methods[0]
    assert newton.n_failed == 0
    assert abs(newton.bias_ppm) < 60.0
    assert res.newtonian_rise_K == pytest.approx(res.adiabatic_rise_K)  # one body
    assert "bias ppm" in describe(res)
    json.dumps(jsonable(res.to_dict()), allow_nan=False)


def test_mangled_records_raise_only_calwork_errors():
    # Property check (seeded random records of every shape: flat, steps, ramps, spikes,
    # heavy quantisation, few readings, uneven sampling): corrected_rise either returns a
    # result with a positive finite uncertainty or raises a CalworkError — never another
    # exception, and no numpy warning (pytest turns warnings into errors).
    from calwork.core.errors import CalworkError
    from calwork.core.thermogram import Thermogram

    rng = np.random.default_rng(99)
    ok = 0
    for _ in range(120):
        n = int(rng.integers(20, 600))
        t = np.cumsum(rng.uniform(0.5, 1.5, n) if rng.random() < 0.3 else np.full(n, 5.0))
        T = 298.0 + rng.normal(0, 10 ** rng.uniform(-7, -2), n)
        if rng.random() < 0.7:
            at = rng.uniform(t[0], t[-1])
            T += rng.normal(0, 2) * (1 - np.exp(-np.clip(t - at, 0, None) / rng.uniform(1, 200)))
        if rng.random() < 0.5:
            T += rng.normal(0, 1e-4) * (t - t[0])
        if rng.random() < 0.3:
            T[rng.integers(0, n, 3)] += rng.normal(0, 0.05, 3)
        if rng.random() < 0.2:
            T = np.round(T / 1e-3) * 1e-3
        method = ["newton-fit", "regnault-pfaundler", "dickinson"][int(rng.integers(0, 3))]
        try:
            res = corrected_rise(Thermogram(time_s=t, temperature_K=T), method)
        except CalworkError:
            continue
        assert math.isfinite(res.corrected_rise_K)
        assert res.u_corrected_rise_K > 0
        assert math.isfinite(res.u_corrected_rise_K)
        json.dumps(jsonable(res.to_dict()), allow_nan=False)
        ok += 1
    assert ok > 20   # most records with a clear step are reduced
