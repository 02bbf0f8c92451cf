"""Control-chart judgement of a short baseline (common SPC practice: limits from fewer than
five points of the chart's own judge nothing)."""

from __future__ import annotations

from calwork.qa import control_chart


def test_a_short_baseline_is_labelled_too_few_not_in_control():
    chart = control_chart([10001.0, 10003.0, 9999.0, 10002.0])
    assert chart.recommendation.action == "too few for control limits"
    five = control_chart([10001.0, 10003.0, 9999.0, 10002.0, 10000.0])
    assert five.recommendation.action == "in control"


def test_the_plot_uses_dates_draws_void_runs_hollow_and_keeps_legends_off_the_points(
        tmp_path):
    from calwork.qa import plot_control_chart

    values = [10001.0, 10003.0, 9999.0, 10002.0, 10000.0, 10001.5]
    dates = [f"2025-03-0{k}" for k in range(1, 7)]
    chart = control_chart(values, [f"c{k}" for k in range(6)], dates=dates)
    fig = plot_control_chart(chart, tmp_path / "qa.png", void=[("v1", "2025-03-07", 10004.0)])
    assert (tmp_path / "qa.png").stat().st_size > 1000
    ax = fig.axes[0]
    hollow = [line for line in ax.lines if line.get_label().startswith("void run")]
    assert len(hollow) == 1
    assert hollow[0].get_markerfacecolor() == "none"
    assert "date" in fig.axes[1].get_xlabel()
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    renderer = FigureCanvasAgg(fig).get_renderer()
    legend_box = ax.get_legend().get_window_extent(renderer)
    axes_box = ax.get_window_extent(renderer)
    assert legend_box.x0 >= axes_box.x1  # beside the axes: it cannot cover a point
