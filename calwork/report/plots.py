"""Shared plot styles of the reports: readable in greyscale and for colour-blind readers.

Colours are the Okabe–Ito palette (Okabe & Ito, "Color Universal Design", 2002/2008; the
palette recommended for colour-vision deficiencies); every series also differs by line style,
marker or hatching, so that nothing depends on colour alone. The thermogram figures are
:func:`calwork.rise.plot_rise`'s and the control charts :func:`calwork.qa.plot_control_chart`'s
(same conventions); these styles serve the report's own figures and the workbook's charts.
"""

from __future__ import annotations

from collections.abc import Callable
from contextlib import contextmanager
from typing import Any

__all__ = [
    "CYCLE",
    "HATCHES",
    "LINESTYLES",
    "MARKERS",
    "OKABE_ITO",
    "plot_style",
    "rise_png",
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


#: PNG images of run plots already drawn, by the rise record (kept with it, so that its id
#: is not reused): the --out folder and the report of one reduction draw each plot once.
_RISE_PNGS: dict[int, tuple[Any, bytes]] = {}
_RISE_PNG_CACHE = 256


def rise_png(thermogram: Any, rise: Any, label: str | None = None) -> bytes:
    """The run plot (:func:`calwork.rise.plot_rise`) of ``rise`` as PNG bytes, titled with
    ``label`` (the run id), drawn once per rise record."""
    found = _RISE_PNGS.get(id(rise))
    if found is not None and found[0] is rise:
        return found[1]
    data = _png_of(thermogram, rise, label)
    _remember(rise, data)
    return data


def _png_of(thermogram: Any, rise: Any, label: str | None = None) -> bytes:
    import io

    from calwork.rise import plot_rise

    buffer = io.BytesIO()
    plot_rise(thermogram, rise, buffer, label=label)
    return buffer.getvalue()


def _remember(rise: Any, data: bytes) -> None:
    if len(_RISE_PNGS) >= _RISE_PNG_CACHE:
        _RISE_PNGS.pop(next(iter(_RISE_PNGS)))
    _RISE_PNGS[id(rise)] = (rise, data)


#: The (thermogram, rise, label) items a forked worker draws (inherited by fork; only
#: indices and the PNG bytes cross between the processes).
_PENDING: list[tuple[Any, ...]] = []


def _draw_one(index: int) -> bytes:
    return _png_of(*_PENDING[index])


def draw_rise_pngs(items: list[tuple[Any, ...]], *, wait: bool = True) -> Callable[[], None]:
    """Draw the run plots of ``(thermogram, rise, label)`` items into the cache of
    :func:`rise_png` on every core of the machine (forked workers; the images are the same
    as drawn one by one). Where no worker can be started, :func:`rise_png` draws each plot
    when asked.

    With ``wait=False`` the workers draw while the caller goes on (writing a workbook, say);
    the returned function waits for them and fills the cache (call it before the plots are
    needed; calling it again does nothing).
    """
    import multiprocessing
    import os
    from concurrent.futures import ProcessPoolExecutor

    todo = [item for item in items if id(item[1]) not in _RISE_PNGS]
    workers = min(os.cpu_count() or 1, 4, len(todo))
    if workers < 2 or "fork" not in multiprocessing.get_all_start_methods():
        return lambda: None
    _PENDING[:] = todo
    try:
        pool = ProcessPoolExecutor(workers, mp_context=multiprocessing.get_context("fork"))
        images = pool.map(_draw_one, range(len(todo)),
                          chunksize=max(1, len(todo) // (4 * workers)))
    except Exception:
        _PENDING.clear()
        return lambda: None
    done = []

    def finish() -> None:
        if done:
            return
        done.append(True)
        try:
            for item, data in zip(todo, images, strict=True):
                _remember(item[1], data)
        except Exception:  # a plot a worker could not draw is drawn when asked
            pass
        finally:
            pool.shutdown(wait=True, cancel_futures=True)
            _PENDING.clear()

    if wait:
        finish()
    return finish
