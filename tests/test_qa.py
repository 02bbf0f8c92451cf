"""Control charts and run rules (calwork.qa)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from calwork.core.errors import CalibrationError, CalworkError, ChoiceError
from calwork.qa import (
    D4_N2,
    DEFAULT_RULES,
    control_chart,
    parse_rules,
    plot_control_chart,
)
from calwork.qa.chart import D2_N2
from calwork.report.views import describe


def test_d4_constant_matches_its_derivation_and_a_simulation():
    # Range of two standard normal values: mean d2 = 2/√π, sd d3 = √(2 − 4/π) (derived);
    # D4 = 1 + 3 d3/d2 = 3.2665, tabulated as 3.267 (SPC constants tables; recalled from memory).
    d2 = 2 / math.sqrt(math.pi)
    d3 = math.sqrt(2 - 4 / math.pi)
    assert D4_N2 == pytest.approx(1 + 3 * d3 / d2, abs=5e-4)
    assert pytest.approx(1.128, abs=5e-4) == D2_N2
    rng = np.random.default_rng(7)
    ranges = np.abs(np.diff(rng.standard_normal((200_000, 2)), axis=1)).ravel()
    se = d3 / math.sqrt(ranges.size)
    assert abs(ranges.mean() - d2) < 4 * se  # Monte Carlo, 4 standard errors
    assert ranges.std(ddof=1) == pytest.approx(d3, rel=0.01)


def _baseline(seed=3, n=12, mean=10000.0, sd=2.0):
    return list(mean + sd * np.random.default_rng(seed).standard_normal(n))


def test_planted_shift_triggers_the_seven_point_rule_at_the_right_point():
    base = _baseline()
    m, s = float(np.mean(base)), float(np.std(base, ddof=1))
    below = m - 0.5 * s  # index 12: breaks any run that started in the baseline
    shifted = [m + s * (1.0 + 0.4 * math.sin(k)) for k in range(10)]  # +1 s shift, index 13+
    values = [*base, below, *shifted]
    labels = [f"r{i + 1:02d}" for i in range(len(values))]
    chart = control_chart(values, labels, baseline_n=12)
    assert chart.mean == pytest.approx(m, rel=1e-15)
    assert chart.std == pytest.approx(s)
    runs = [v for v in chart.violations if v.rule == "run-one-side"]
    assert len(runs) == 1
    (run,) = runs
    # the 7th successive point above the mean is index 13 + 6 = 19 (independent count below)
    z = (np.asarray(values) - m) / s
    first = next(i for i in range(6, len(z)) if np.all(z[i - 6:i + 1] > 0))
    assert run.index == first == 19
    assert run.indices == tuple(range(13, 23))
    assert run.side == "above"
    assert run.label == "r20"
    assert not [v for v in chart.violations if v.severity == "recalibrate"]
    assert chart.recommendation.action == "investigate"
    assert chart.recommendation.reason.startswith("10 successive points above the mean since "
                                                  "run r14")


def test_point_beyond_three_s_triggers_the_action_rule():
    values = _baseline(seed=5, n=20)
    m, s = float(np.mean(values[:12])), float(np.std(values[:12], ddof=1))
    values[15] = m + 3.5 * s
    dates = [f"2025-04-{i + 1:02d}" for i in range(20)]
    labels = [f"cal-{i + 1}" for i in range(20)]
    chart = control_chart(values, labels, dates=dates, baseline_n=12)
    action = [v for v in chart.violations if v.rule == "beyond-action"]
    assert [(v.index, v.side) for v in action] == [(15, "above")]
    assert chart.action_limits == pytest.approx((m - 3 * s, m + 3 * s))
    assert chart.warning_limits == pytest.approx((m - 2 * s, m + 2 * s))
    assert chart.recommendation.action == "recalibrate"
    assert chart.recommendation.reason.startswith(
        "run cal-16 (2025-04-16) beyond the upper action limit")


def test_in_control_series_is_in_control():
    values = _baseline(seed=11, n=25)
    chart = control_chart(values)
    assert chart.violations == ()
    assert chart.recommendation.action == "in control"
    assert "in control" in describe(chart)


def test_action_rate_of_an_in_control_process_matches_the_normal_tail():
    # P(|z| > 3) = 2·Φ(−3) = 0.0027 (scipy.stats.norm); with a large baseline the chart's
    # limits are the true ones, so the count of action signals is Poisson with that mean.
    n = 40_000
    values = 50.0 + 0.1 * np.random.default_rng(2024).standard_normal(n)
    chart = control_chart(values, rules=parse_rules("beyond-action"))
    expected = n * 2 * stats.norm.sf(3.0)
    assert abs(len(chart.violations) - expected) < 4 * math.sqrt(expected)


def test_trend_rule_flags_the_sixth_point_of_a_rise():
    values = [10, 12] * 4 + [10.2, 10.5, 10.8, 11.1, 11.4, 11.7]
    chart = control_chart(values, baseline_n=8)
    (trend,) = [v for v in chart.violations if v.rule == "trend"]
    assert (trend.index, trend.side, trend.indices) == (13, "up", tuple(range(8, 14)))
    assert not [v for v in chart.violations if v.rule == "run-one-side"]


def test_two_of_three_beyond_warning():
    values = [10, 12] * 4
    m, s = 11.0, float(np.std(values, ddof=1))
    values += [m + 2.5 * s, m + 0.5 * s, m + 2.5 * s]
    chart = control_chart(values, baseline_n=8)
    hits = [v for v in chart.violations if v.rule == "two-of-three-warning"]
    assert [(v.index, v.indices, v.side) for v in hits] == [(10, (8, 10), "above")]
    assert chart.recommendation.action == "investigate"


def test_moving_range_rule():
    values = [10, 11, 10.5, 10.2, 10.9, 10.4, 10.6, 10.1, 12.4]
    chart = control_chart(values, baseline_n=8, rules=parse_rules("moving-range"))
    mr_mean = np.mean(np.abs(np.diff(values[:8])))
    assert chart.mr_mean == pytest.approx(mr_mean)
    assert chart.mr_upper_limit == pytest.approx(3.267 * mr_mean)
    assert [(v.index, v.indices) for v in chart.violations] == [(8, (7, 8))]


def test_named_baseline_series_and_notes():
    values = [5.0, 5.2, 4.9, 5.1, 5.3, 5.0, 5.1]
    labels = ["a", "b", "c", "d", "e", "f", "g"]
    chart = control_chart(values, labels, baseline_labels=["b", "d", "f"])
    assert chart.baseline_indices == (1, 3, 5)
    assert chart.mean == pytest.approx((5.2 + 5.1 + 5.0) / 3)
    assert any("at least 6" in n for n in chart.notes)
    assert any("no consecutive points" in n for n in chart.notes)  # MR̄ = d2 · s then
    assert chart.mr_mean == pytest.approx(D2_N2 * chart.std)


def test_bad_inputs_raise_calwork_errors():
    with pytest.raises(CalibrationError, match="at least 2"):
        control_chart([1.0])
    with pytest.raises(CalibrationError, match="all equal"):
        control_chart([1.0, 1.0, 1.0])
    with pytest.raises(CalibrationError, match="baseline"):
        control_chart([1.0, 2.0, 3.0], baseline_n=1)
    with pytest.raises(CalibrationError, match="match the values"):
        control_chart([1.0, 2.0], ["a"])


def test_rule_specifications():
    assert parse_rules(None) == DEFAULT_RULES == parse_rules("default")
    names = [r.name for r in DEFAULT_RULES]
    assert names == ["beyond-action", "two-of-three-warning", "run-one-side", "trend",
                     "moving-range"]
    assert {r.n for r in DEFAULT_RULES if r.name == "run-one-side"} == {7}
    assert all(r.origin.startswith("common SPC practice") for r in DEFAULT_RULES)
    custom = parse_rules("beyond-action, run-one-side=9, two-of-three-warning=3/4")
    assert [(r.name, r.n, r.m) for r in custom] == [
        ("beyond-action", 1, 1), ("run-one-side", 9, 1), ("two-of-three-warning", 3, 4)]
    assert custom[1].description == "9 successive points on one side of the mean"
    with pytest.raises(ChoiceError, match="rule must be one of"):
        parse_rules("nelson-rule-5")
    with pytest.raises(CalworkError, match="bad parameter"):
        parse_rules("trend=1")
    with pytest.raises(CalworkError, match="bad parameter"):
        parse_rules("two-of-three-warning=4/3")


def test_custom_run_length_changes_the_signal_point():
    values = [12, 10] * 4 + [11.5] * 9  # the baseline ends below the mean (11)
    seven = control_chart(values, baseline_n=8)
    nine = control_chart(values, baseline_n=8, rules=parse_rules("run-one-side=9"))
    assert [v.index for v in seven.violations if v.rule == "run-one-side"] == [14]
    assert [v.index for v in nine.violations] == [16]


def test_json_dictionary_has_values_limits_violations_and_defaults():
    values = [*_baseline(seed=9, n=10), 10030.0]
    d = control_chart(values, baseline_n=10).to_dict()
    assert len(d["points"]) == 11
    assert d["points"][0]["moving_range"] is None
    assert d["points"][10]["baseline"] is False
    assert d["baseline"]["n"] == 10
    assert d["recommendation"]["action"] == "recalibrate"
    assert d["violations"][0]["rule"] == "beyond-action"
    assert d["violations"][0]["index"] == 10
    assert d["moving_range"]["d4"] == 3.267
    assert len(d["warning_limits"]) == 2
    assert [r["name"] for r in d["rules"]] == [r.name for r in DEFAULT_RULES]
    assert "calwork's default run rules" in d["defaults"]


def test_plot_to_file_and_to_axes(tmp_path):
    values = [*_baseline(seed=4, n=12), 10012.0, 10001.0]
    chart = control_chart(values, baseline_n=12, title="simulated ε series")
    target = tmp_path / "chart.png"
    plot_control_chart(chart, target)
    assert target.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    from matplotlib.figure import Figure

    fig = Figure()
    axes = fig.subplots(2, 1)
    assert plot_control_chart(chart, tuple(axes)) is fig
    legend = [t.get_text() for t in axes[0].get_legend().get_texts()]
    assert "beyond action limit" in legend
    assert "action limits (± 3 s)" in legend
