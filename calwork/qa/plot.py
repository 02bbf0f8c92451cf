"""Drawing a control chart: individuals above, moving ranges below.

Readable in greyscale and by colour-blind readers: the limits differ by line style (centre
solid, warning dashed, action dash-dot), the zone between warning and action limits is
hatched, and signals differ by marker shape (action: filled cross; run rule: open square),
not by colour alone.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import Any

from calwork.core.errors import ExportError
from calwork.qa.chart import ControlChart

__all__ = ["plot_control_chart"]


def plot_control_chart(chart: ControlChart, path_or_axes: Any,
                       void: Sequence[tuple[str, str | None, float]] = ()) -> Any:
    """Draw ``chart`` to a PNG/PDF/SVG file, or onto a pair of matplotlib axes.

    The x axis shows the runs' dates when every point has one (else the run order); the
    legends sit beside the axes, so they never hide a point.

    Parameters
    ----------
    chart
        The chart from :func:`calwork.qa.control_chart`.
    path_or_axes
        A file path (the format follows the suffix) or ``(ax_individuals, ax_moving_range)``.
    void
        Void calibration runs as ``(run, ISO date or None, value)``: drawn as hollow markers
        (not part of the chart's limits) when they and the chart have dates.

    Returns
    -------
    The matplotlib figure (saved first when drawing to a file).
    """
    from matplotlib.figure import Figure  # no pyplot: no global figure state, no GUI

    if isinstance(path_or_axes, str | Path):
        fig = Figure(figsize=(10.5, 6.0))
        ax, ax_mr = fig.subplots(2, 1, sharex=True, gridspec_kw={"height_ratios": [2, 1]})
    else:
        ax, ax_mr = path_or_axes
        fig = ax.figure
    dated = all(chart.dates) and bool(chart.dates)
    x: list[Any] = ([_date(d) for d in chart.dates] if dated
                    else list(range(len(chart.values))))
    lo_w, hi_w = chart.warning_limits
    lo_a, hi_a = chart.action_limits
    ax.axhspan(hi_w, hi_a, facecolor="none", edgecolor="0.55", hatch="///", linewidth=0,
               label="warning zone (2 s to 3 s)")
    ax.axhspan(lo_a, lo_w, facecolor="none", edgecolor="0.55", hatch="///", linewidth=0)
    ax.axhline(chart.mean, color="black", linestyle="-", linewidth=1.0, label="mean")
    for y in (lo_w, hi_w):
        ax.axhline(y, color="0.3", linestyle="--", linewidth=1.0)
    for y in (lo_a, hi_a):
        ax.axhline(y, color="0.1", linestyle="-.", linewidth=1.2)
    ax.plot([], [], color="0.3", linestyle="--", label="warning limits (± 2 s)")
    ax.plot([], [], color="0.1", linestyle="-.", label="action limits (± 3 s)")
    ax.plot(x, chart.values, color="tab:blue", marker="o", markersize=4, linewidth=0.8,
            label=_label(chart.quantity))
    drawn_void = [(run, _date(d), v) for run, d, v in void if dated and d]
    if drawn_void:
        ax.plot([p[1] for p in drawn_void], [p[2] for p in drawn_void], linestyle="none",
                marker="o", markersize=7, markerfacecolor="none", markeredgecolor="0.2",
                label="void run (not in the limits)")
    if chart.baseline_indices and len(chart.baseline_indices) < len(x):
        last = max(chart.baseline_indices)
        ax.axvline(x[last] if dated else last + 0.5, color="0.5", linestyle=":",
                   linewidth=1.0, label="end of baseline")
    action = sorted({v.index for v in chart.violations if v.severity == "recalibrate"})
    other = sorted({v.index for v in chart.violations
                    if v.severity != "recalibrate" and v.rule != "moving-range"} - set(action))
    mr_hits = sorted({v.index for v in chart.violations if v.rule == "moving-range"})
    if action:
        ax.plot([x[i] for i in action], [chart.values[i] for i in action], linestyle="none",
                marker="X",
                markersize=10, color="tab:red", markeredgecolor="black",
                label="beyond action limit")
    if other:
        ax.plot([x[i] for i in other], [chart.values[i] for i in other], linestyle="none",
                marker="s",
                markersize=9, markerfacecolor="none", markeredgecolor="tab:orange",
                markeredgewidth=1.6, label="run-rule signal")
    ax.set_ylabel(f"{_label(chart.quantity)} ({chart.unit})")
    ax.ticklabel_format(axis="y", useOffset=False, style="plain")
    ax.set_title(chart.title or "individuals chart")
    ax.legend(fontsize="small", loc="upper left", bbox_to_anchor=(1.01, 1.0),
              borderaxespad=0.0)
    mr_i = [i for i, v in enumerate(chart.moving_ranges) if v is not None]
    ax_mr.plot([x[i] for i in mr_i], [chart.moving_ranges[i] for i in mr_i], color="tab:blue",
               marker="^",
               markersize=4, linewidth=0.8, label="moving range")
    ax_mr.axhline(chart.mr_mean, color="black", linestyle="-", linewidth=1.0,
                  label="mean moving range")
    ax_mr.axhline(chart.mr_upper_limit, color="0.1", linestyle="-.", linewidth=1.2,
                  label=f"upper limit (D4 = {chart.d4})")
    if mr_hits:
        ax_mr.plot([x[i] for i in mr_hits], [chart.moving_ranges[i] for i in mr_hits],
                   linestyle="none",
                   marker="s", markersize=9, markerfacecolor="none",
                   markeredgecolor="tab:orange", markeredgewidth=1.6,
                   label="above upper limit")
    ax_mr.set_ylabel(f"moving range ({chart.unit})")
    ax_mr.set_ylim(bottom=0)
    ax_mr.legend(fontsize="small", loc="upper left", bbox_to_anchor=(1.01, 1.0),
                 borderaxespad=0.0)
    if dated:
        fig.autofmt_xdate()
        ax_mr.set_xlabel("date of the run")
    else:
        if len(x) <= 40:
            ax_mr.set_xticks(x)
            ax_mr.set_xticklabels(chart.labels, rotation=90, fontsize="x-small")
        ax_mr.set_xlabel("run (in date order)")
    fig.text(0.01, 0.005, f"{chart.recommendation.action}: {chart.recommendation.reason}",
             fontsize="small", ha="left", va="bottom")
    if isinstance(path_or_axes, str | Path):
        fig.tight_layout(rect=(0, 0.03, 1, 1))
        try:
            fig.savefig(path_or_axes, dpi=120)
        except OSError as exc:
            raise ExportError(f"cannot write the plot ({exc.strerror})",
                              path=path_or_axes) from None
    return fig


def _date(text: str | None) -> Any:
    from datetime import date, datetime

    value = str(text)
    return datetime.fromisoformat(value) if ("T" in value or " " in value) \
        else datetime.combine(date.fromisoformat(value[:10]), datetime.min.time())


def _label(quantity: str) -> str:
    """A reader's label for a quantity name (``energy_equivalent_J_per_K`` → words)."""
    names = {"energy_equivalent_J_per_K": "energy equivalent ε"}
    return names.get(quantity, quantity.replace("_", " "))
