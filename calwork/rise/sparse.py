"""What a few readings can and cannot tell: the small-sample parts of a rise's uncertainty.

Hand-read and other sparse records (a reading each minute before and after the main period,
each 15 or 30 s during it, read to 0.01 °C or 0.001 °C) carry three effects that a dense
logger record hides (docs/methods.md §1.12):

* **few degrees of freedom** — the scatter of a drift fit from a handful of readings is
  itself uncertain: the scatter-based components are multiplied by
  ``t_{0.97725}(ν) / z_{0.97725}``, so that ``±2u`` keeps its 95.45 % coverage for them
  (Student's t; :func:`student_factor`);
* **reading resolution** — a reading written to ``q`` is off by up to ``q/2``
  (rectangular, ``u = q/√12`` per reading, GUM 4.3.7); when that exceeds the scatter the
  drift fits saw, it is propagated through the same fits as its own component
  (:func:`resolution_component_K`);
* **interpolation** — the trapezoid over a few main-period readings misses the shape of the
  rise: the interval holding the firing (a corner) within its monotone bounds (U-shaped),
  the rest by Richardson's estimate of the trapezoid's error, times the cooling constant
  (:func:`interpolation_component_K`).
"""

from __future__ import annotations

import math
from functools import cache
from typing import Any

import numpy as np

__all__ = [
    "RESOLUTION_STEPS_K",
    "interpolation_component_K",
    "reading_resolution_K",
    "record_resolution_K",
    "resolution_component_K",
    "student_factor",
]

#: Resolutions recognised in a record, coarsest first (in the record's own temperature unit:
#: °C and K steps are the same size).
RESOLUTION_STEPS_K = (1.0, 0.5, 0.2, 0.1, 0.05, 0.02, 0.01, 0.005, 0.002, 0.001, 0.0005,
                      0.0002, 0.0001, 0.00005, 0.00002, 0.00001)

#: Two-sided coverage of ±2 standard deviations of a normal distribution.
_P_2SIGMA = 0.9772498680518208


def reading_resolution_K(temperature_K: np.ndarray, unit: str | None) -> float | None:
    """The step every reading is a multiple of, in the record's unit (``'C'`` — also written
    ``'°C'`` — or ``'K'``; the log's ``temperature_unit``), K — or ``None`` when the readings
    are finer than 10 µK, not on a grid, or in another unit (converted from a resistance, or
    °F, whose steps are not kelvin-sized).

    Examples
    --------
    >>> reading_resolution_K(np.array([295.15, 295.16, 295.19]), "°C")
    0.01
    >>> reading_resolution_K(np.array([295.1512, 295.1533]), "K")
    0.0001
    """
    T = np.asarray(temperature_K, dtype=float)
    if unit in ("C", "°C"):
        x = T - 273.15
    elif unit == "K":
        x = T
    else:
        return None
    if x.size < 2 or not np.all(np.isfinite(x)):
        return None
    head = x[:16]  # most records fail every step on their first readings already
    for q in RESOLUTION_STEPS_K:
        # readings written with d decimals and converted through binary floating point sit
        # within ~1e-9 of a multiple (relative to the step)
        if _on_grid(head, q) and _on_grid(x, q):
            return q
    return None


def record_resolution_K(thermogram: Any) -> float | None:
    """The resolution of a record, K: as a hand-read record writes it (its decimals), else
    detected from the values (:func:`reading_resolution_K`)."""
    written = thermogram.metadata.get("reading_resolution")
    if written:
        return float(written)
    return reading_resolution_K(thermogram.temperature_K,
                                thermogram.metadata.get("temperature_unit"))


def _on_grid(x: np.ndarray, q: float) -> bool:
    steps = x / q
    return bool(np.all(np.abs(steps - np.round(steps)) < 1e-6))


@cache
def student_factor(dof: int) -> float:
    """``t_{0.97725}(ν) / z_{0.97725}``: how much wider a scatter-based standard uncertainty
    is stated when its scatter comes from ``ν`` degrees of freedom (→ 1 for large ν).

    Examples
    --------
    >>> round(student_factor(2), 3), round(student_factor(10), 3), round(student_factor(400), 4)
    (2.263, 1.142, 1.0031)
    """
    from scipy.stats import norm, t

    if dof < 1:
        raise ValueError("a scatter needs at least one degree of freedom")
    return float(t.ppf(_P_2SIGMA, dof) / norm.ppf(_P_2SIGMA))


def resolution_component_K(resolution_K: float, fit_u_per_sigma_K: float, k_per_s: float,
                           main_weights_sq_s2: float) -> float:
    """Standard uncertainty of ``ΔT_c`` from the reading resolution ``q``: independent
    rectangular errors ``q/√12`` on every reading, through the drift fits (``fit_u_per_sigma``:
    their effect per unit reading error) and the main-period integral (``k √Σw²``), K."""
    u_reading = resolution_K / math.sqrt(12.0)
    return u_reading * math.hypot(fit_u_per_sigma_K, k_per_s * math.sqrt(main_weights_sq_s2))


def interpolation_component_K(sel: Any, k_per_s: float) -> float:
    """Standard uncertainty of ``ΔT_c`` from drawing the rise between its readings, K:
    ``|k|`` times that of the main-period integral.

    The reading interval that holds the firing holds a corner of the curve (flat before,
    steep after), where no smooth interpolation is trustworthy: the integral over a
    monotone interval lies within ``±b = ±|ΔT|·Δt/2`` of the trapezoid, and nearer its ends
    than its middle (the rise is concentrated early or late in the interval): a U-shaped
    (arcsine) distribution, ``u = b/√2`` (GUM 4.3.9, common practice). Over the rest of the
    main period the curve is smooth, and the trapezoid's error is estimated the classical way
    (Richardson): a third of the difference between the trapezoid on all readings and on every
    other reading.
    """
    t, T = sel.t, sel.T
    lo = max(int(np.searchsorted(t, sel.t_i, side="right")) - 1, 0)
    hi = min(int(np.searchsorted(t, sel.t_f, side="left")) + 1, t.size)
    if hi - lo < 2:
        return 0.0
    # the interval from the firing to the first reading after it
    t1 = float(t[lo + 1])
    T_i, T_1 = float(np.interp(sel.t_i, t, T)), float(T[lo + 1])
    corner = abs(T_1 - T_i) * (t1 - sel.t_i) / 2.0 / math.sqrt(2.0)
    smooth = 0.0
    tt, TT = t[lo + 1:hi], T[lo + 1:hi]
    m = int(np.count_nonzero(tt <= sel.t_f))
    if m >= 5:
        x, y = tt[:m], TT[:m] - float(TT[0])
        if (m - 1) % 2:  # every other reading needs an even number of intervals
            x, y = x[:-1], y[:-1]
        full = float(np.sum(np.diff(x) * (y[1:] + y[:-1])) * 0.5)
        xs, ys = x[::2], y[::2]
        half = float(np.sum(np.diff(xs) * (ys[1:] + ys[:-1])) * 0.5)
        smooth = abs(full - half) / 3.0
    return abs(k_per_s) * math.hypot(corner, smooth)
