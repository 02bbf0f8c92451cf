"""Shared plot styles of the reports: readable in greyscale and for colour-blind readers.

Colours are the Okabe–Ito palette (Okabe & Ito, "Color Universal Design", 2002/2008; the
palette recommended for colour-vision deficiencies); every series also differs by line style,
marker or hatching, so that nothing depends on colour alone.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from contextlib import contextmanager
from typing import Any

__all__ = [
    "HATCHES",
    "LINESTYLES",
    "MARKERS",
    "OKABE_ITO",
    "control_chart",
    "plot_style",
    "simulated_stamp",
]

#: Okabe–Ito colours (hex RGB, no '#'; as published by Okabe & Ito).
OKABE_ITO = {
    "black": "000000",
    "orange": "E69F00",
    "sky blue": "56B4E9",
    "bluish green": "009E73",
    "yellow": "F0E442",
    "blue": "0072B2",
    "vermillion": "D55E00",
    "reddish purple": "CC79A7",
}
#: Colour cycle for matplotlib (yellow last: weak contrast on white).
CYCLE = ["#" + OKABE_ITO[n] for n in ("blue", "vermillion", "bluish green", "orange",
                                       "sky blue", "reddish purple", "black", "yellow")]
LINESTYLES = ["-", "--", "-.", ":", (0, (5, 1, 1, 1)), (0, (1, 1))]
MARKERS = ["o", "s", "^", "D", "v", "P", "X", "*"]
HATCHES = ["//", "\\\\", "xx", "..", "++", "oo"]


@contextmanager
def plot_style():
    """matplotlib settings of the report figures (Okabe–Ito cycle, readable sizes)."""
    import matplotlib as mpl
    from cycler import cycler

    style = {
        "axes.prop_cycle": cycler(color=CYCLE[:6]) + cycler(linestyle=LINESTYLES[:6]),
        "figure.dpi": 100,
        "savefig.dpi": 100,
        "font.size": 9,
        "axes.titlesize": 10,
        "axes.labelsize": 9,
        "legend.fontsize": 8,
        "axes.grid": True,
        "grid.color": "#cccccc",
        "grid.linewidth": 0.5,
        "lines.linewidth": 1.2,
    }
    with mpl.rc_context(style):
        yield


def simulated_stamp(fig: Any) -> None:
    """Mark a figure as made from simulated data (large grey diagonal text)."""
    fig.text(0.5, 0.5, "SIMULATED DATA", fontsize=34, color="#999999", alpha=0.35,
             ha="center", va="center", rotation=25, zorder=0)


def control_chart(values: Sequence[float], labels: Sequence[str], ax: Any, *,
                  unit: str = "J/K", title: str | None = None) -> dict[str, float]:
    """Individuals control chart of calibration values with mean, ±2s and ±3s lines.

    Warning limits at ±2 s and action limits at ±3 s of the single-run standard deviation s
    (Shewhart individuals chart; METHODS.md §6.2). Points beyond the warning limits get a
    different marker. Returns the mean, s and the limits drawn.

    Parameters
    ----------
    values
        The values in run order (e.g. ε of each calibration run, J/K).
    labels
        A label per value (run ids).
    ax
        matplotlib axes to draw on.
    unit
        Unit of the values, for the axis label.
    """
    n = len(values)
    mean = math.fsum(values) / n
    s = math.sqrt(math.fsum((v - mean) ** 2 for v in values) / (n - 1)) if n > 1 else math.nan
    x = list(range(1, n + 1))
    ax.plot(x, values, color=CYCLE[0], linestyle="-", marker="o", label="runs", zorder=3)
    out = {"mean": mean, "s": s}
    ax.axhline(mean, color="#000000", linestyle="-", linewidth=1.0, label="mean")
    if math.isfinite(s) and s > 0:
        for k, style, name in ((2, "--", "±2s (warning)"), (3, ":", "±3s (action)")):
            lo, hi = mean - k * s, mean + k * s
            ax.axhline(hi, color=CYCLE[1] if k == 2 else CYCLE[2], linestyle=style,
                       linewidth=1.0, label=name)
            ax.axhline(lo, color=CYCLE[1] if k == 2 else CYCLE[2], linestyle=style,
                       linewidth=1.0)
            out[f"lower_{k}s"], out[f"upper_{k}s"] = lo, hi
        outside = [(xi, v) for xi, v in zip(x, values, strict=True) if abs(v - mean) > 2 * s]
        if outside:
            ax.plot(*zip(*outside, strict=True), linestyle="none", marker="X", markersize=9,
                    color=CYCLE[1], label="beyond ±2s", zorder=4)
    ax.set_xticks(x)
    ax.set_xticklabels(labels, rotation=45 if n > 8 else 0, ha="right" if n > 8 else "center")
    ax.set_xlabel("calibration run")
    ax.set_ylabel(f"energy equivalent ε ({unit})")
    ax.set_title(title or "Calibration control chart")
    ax.legend(loc="best")
    return out
