"""Shared plot styles of the reports: readable in greyscale and for colour-blind readers.

Colours are the Okabe–Ito palette (Okabe & Ito, "Color Universal Design", 2002/2008; the
palette recommended for colour-vision deficiencies); every series also differs by line style,
marker or hatching, so that nothing depends on colour alone. The thermogram figures are
:func:`calwork.rise.plot_rise`'s and the control charts :func:`calwork.qa.plot_control_chart`'s
(same conventions); these styles serve the report's own figures and the workbook's charts.
"""

from __future__ import annotations

from contextlib import contextmanager
from typing import Any

__all__ = [
    "CYCLE",
    "HATCHES",
    "LINESTYLES",
    "MARKERS",
    "OKABE_ITO",
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
