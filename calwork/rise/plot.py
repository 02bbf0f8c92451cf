"""``plot_rise``: readings, periods, drift model, corrected rise and residuals.

Readable in greyscale and for colour-blind readers: the Okabe–Ito palette (a colour-blind-safe
set, common practice), distinct line styles and markers, and hatching as well as tint for the
periods.
"""

from __future__ import annotations

import os
import threading
from pathlib import Path
from typing import Any

import numpy as np

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import ExportError
from calwork.core.thermogram import Thermogram
from calwork.rise.result import RiseResult

__all__ = ["plot_rise"]

#: Okabe–Ito colours (Okabe & Ito 2008, "Color Universal Design"; recalled from memory).
_BLACK, _ORANGE, _SKY, _GREEN, _BLUE, _VERMILION = (
    "#000000", "#E69F00", "#56B4E9", "#009E73", "#0072B2", "#D55E00")


def plot_rise(thermogram: Thermogram, result: RiseResult, path_or_ax: Any, *,
              label: str | None = None) -> Any:
    """Draw a thermogram with its periods, drift model and corrected rise.

    Parameters
    ----------
    thermogram
        The record the result was computed from.
    result
        Its :class:`~calwork.rise.result.RiseResult`.
    path_or_ax
        A file name (``.png``, ``.pdf``, ``.svg``; the figure is written and closed), a binary
        file object (PNG is written to it), or a matplotlib ``Axes`` to draw the thermogram
        panel into (no residual panel then).
    label
        What the plot is of, first in its title (a run id); default: the log's file name.

    Returns
    -------
    pathlib.Path or matplotlib.axes.Axes
        The file written, or the axes drawn into.

    Raises
    ------
    ExportError
        The file cannot be written.

    A result about one event of a log with several (``result.event``) is drawn on that
    event's window of the record.
    """
    import matplotlib

    if result.event is not None and result.events:
        window = result.events[result.event - 1]
        thermogram = thermogram.window(window["window_start_s"], window["window_end_s"])

    if isinstance(path_or_ax, (str, Path)) or hasattr(path_or_ax, "write"):
        matplotlib.use("Agg", force=False)
        # one plot at a time in a process: the figure is shared, and the text setting is
        # matplotlib's global one, restored when the plot is written
        with _LOCK, matplotlib.rc_context(_TEXT):
            return _to_file(thermogram, result, path_or_ax, label)
    _draw(thermogram, result, path_or_ax, None, label)
    return path_or_ax


#: Text without FreeType's forced auto-hinting: glyph drawing was half of a run plot's time,
#: and at 100–120 dpi unhinted anti-aliased text reads as well.
_TEXT = {"text.hinting": "none"}


def _to_file(thermogram: Thermogram, result: RiseResult, path_or_file: Any,
             label: str | None) -> Any:
    """Draw on this thread's reused figure and write it (PNG to a file object)."""
    fig, ax, axr = _figure()
    try:
        _draw(thermogram, result, ax, axr, label)
        if hasattr(path_or_file, "write"):
            # for reports and output folders: 100 dpi (800 × 600 px) and light PNG
            # compression draw a day's plots in a third less time
            fig.savefig(path_or_file, dpi=100, format="png", pil_kwargs={"compress_level": 1})
            return path_or_file
        path = Path(path_or_file)
        try:
            fig.savefig(path, dpi=120)
        except (OSError, ValueError) as exc:
            raise ExportError(f"cannot write the plot: {exc}", path=path) from None
        return path
    finally:
        _clear(ax, axr)


#: One figure, reused from plot to plot (under :data:`_LOCK`): building a figure and its
#: tick marks was a third of a run plot's drawing time. Kept with the matplotlib settings it
#: was made under (a figure made under other settings is not reused).
_FIGURE: list[tuple[Any, tuple[Any, Any, Any]]] = []
_LOCK = threading.Lock()


def _after_fork_in_child() -> None:
    """A forked worker starts with a free lock and no figure (another thread of the parent
    may have held both, half drawn, when it forked)."""
    global _LOCK
    _LOCK = threading.Lock()
    _FIGURE.clear()


if hasattr(os, "register_at_fork"):
    os.register_at_fork(after_in_child=_after_fork_in_child)


def _figure() -> tuple[Any, Any, Any]:
    import matplotlib as mpl
    from matplotlib.figure import Figure

    settings = tuple(sorted((k, repr(v)) for k, v in mpl.rcParams.items()))
    if _FIGURE and _FIGURE[0][0] == settings:
        return _FIGURE[0][1]
    # fixed margins (the labels have fixed sizes): a constrained layout cost a third of the
    # drawing time of a run plot
    fig = Figure(figsize=(8.0, 6.0))
    fig.subplots_adjust(left=0.1, right=0.97, top=0.94, bottom=0.08, hspace=0.08)
    ax, axr = fig.subplots(2, 1, sharex=True, height_ratios=(3, 1))
    _FIGURE[:] = [(settings, (fig, ax, axr))]
    return fig, ax, axr


def _clear(*axes: Any) -> None:
    """Take one plot's artists off the reused axes (the axes, ticks and figure stay) and put
    their limits back as a new figure's are, so that the next plot is drawn exactly as on a
    new figure (autoscaling follows the same arithmetic, to the last bit)."""
    for a in axes:
        for artist in [*a.lines, *a.patches, *a.collections, *a.texts]:
            artist.remove()
        if a.legend_ is not None:
            a.legend_.remove()
        a.set_title("")
        a.dataLim.set_points(np.array([[np.inf, np.inf], [-np.inf, -np.inf]]))
        a.ignore_existing_data_limits = True
        a.viewLim.set_points(np.array([[0.0, 0.0], [1.0, 1.0]]))


def _draw(th: Thermogram, res: RiseResult, ax, axr, label: str | None = None) -> None:
    t = th.time_s
    T = th.temperature_K - CELSIUS_ZERO_K  # drawn in °C, as inspect and the workbench draw
    t0 = float(t[0])

    def fore_c(tt):
        return res.fore_curve(tt) - CELSIUS_ZERO_K

    def after_c(tt):
        return res.after_curve(tt) - CELSIUS_ZERO_K
    x = (t - t0) / 60.0

    def xm(v: float) -> float:
        return (v - t0) / 60.0

    spikes = np.isin(t, np.asarray(res.periods.spikes_s))
    for (a, b), period, colour, hatch in (
        (res.fore_period_s, "fore period", _SKY, "//"),
        ((res.fire_time_s, res.main_end_s), "main period", _ORANGE, ".."),
        (res.after_period_s, "after period", _GREEN, "\\\\"),
    ):
        ax.axvspan(xm(a), xm(b), facecolor=colour, alpha=0.18, hatch=hatch, edgecolor=colour,
                   linewidth=0.0, label=period)
    ax.plot(x[~spikes], T[~spikes], linestyle="none", marker="o", markersize=2.5,
            color=_BLACK, label="readings")
    if spikes.any():
        ax.plot(x[spikes], T[spikes], linestyle="none", marker="x", markersize=7,
                color=_VERMILION, label="spikes (left out)")
    tt = np.linspace(res.fore_period_s[0], res.main_end_s, 200)
    ta = np.linspace(res.fire_time_s, res.after_period_s[1], 200)
    ax.plot(xm(tt), fore_c(tt), linestyle="--", color=_BLUE, linewidth=1.4,
            label="fore drift (extended)")
    ax.plot(xm(ta), after_c(ta), linestyle="-.", color=_VERMILION, linewidth=1.4,
            label="after drift (extended)")
    if res.t_x_s is not None:
        lo, hi = fore_c(res.t_x_s), after_c(res.t_x_s)
        ax.plot([xm(res.t_x_s)] * 2, [lo, hi], color=_BLACK, linewidth=2.5, linestyle="-",
                marker="_", markersize=12,
                label=f"ΔT_c = {res.corrected_rise_K:.5f} K at t_x")
    rule = f", {res.dickinson_rule}" if res.dickinson_rule else ""
    source = th.provenance.source_path
    name = label or (Path(source).stem if source else "")
    # y given: nothing is drawn above the axes, so the title needs no search of the tick
    # labels' extents for its place (that search was a third of the drawing time)
    ax.set_title((f"{name}: " if name else "") + f"ΔT_c ({res.method}{rule}) = "
                 f"{res.corrected_rise_K:.6f} K, u = {res.u_corrected_rise_K * 1e3:.2g} mK",
                 y=1.0)
    ax.set_ylabel("temperature / °C")
    # the corner the drift periods leave free: above the fore period for a rise, below it
    # for a fall (a 'best' search over thousands of readings is slow)
    ax.legend(loc="upper left" if res.corrected_rise_K >= 0 else "lower left", fontsize=7,
              framealpha=0.85)
    ax.grid(True, linewidth=0.3, color="0.8")
    if axr is None:
        ax.set_xlabel("time / min (from the first reading)")
        return
    keep = ~spikes
    fore = keep & (t >= res.fore_period_s[0]) & (t <= res.fore_period_s[1])
    after = keep & (t >= res.after_period_s[0]) & (t <= res.after_period_s[1])
    axr.axhline(0.0, color="0.5", linewidth=0.8)
    axr.plot(x[fore], (T[fore] - fore_c(t[fore])) * 1e3, linestyle="none",
             marker="o", markersize=2.5, color=_BLUE, label="fore residuals")
    axr.plot(x[after], (T[after] - after_c(t[after])) * 1e3, linestyle="none",
             marker="^", markersize=2.5, color=_VERMILION, label="after residuals")
    axr.set_ylabel("residual / mK")
    axr.set_xlabel("time / min (from the first reading)")
    axr.legend(loc="upper right", fontsize=7, framealpha=0.85)
    axr.grid(True, linewidth=0.3, color="0.8")
