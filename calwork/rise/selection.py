"""The readings a method works on (periods applied, spikes removed) and the method output.

Internal to :mod:`calwork.rise`: every method receives a :class:`Selection` and returns a
:class:`MethodOutput`; :func:`calwork.rise.corrected_rise` turns that into a
:class:`~calwork.rise.result.RiseResult`.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calwork.core.errors import PeriodDetectionError
from calwork.core.numeric import mean
from calwork.core.thermogram import Thermogram
from calwork.rise.drift import trapezoid_K_s, trapezoid_weights_s
from calwork.rise.periods import MIN_DRIFT_READINGS, Periods
from calwork.rise.result import NewtonianTerms

__all__ = ["LineFit", "MethodOutput", "Selection", "fit_line", "select"]


@dataclass(frozen=True, eq=False)
class Selection:
    """Readings of one thermogram split into fore, main and after periods."""

    t: np.ndarray
    T: np.ndarray
    fore: np.ndarray     # boolean masks over t
    after: np.ndarray
    t_i: float
    t_f: float
    periods: Periods
    source_path: str | None

    def integral(self, y: np.ndarray, a: float | None = None, b: float | None = None) -> float:
        """``∫_a^b y dt`` over the readings (trapezoid on raw timestamps; linear interpolation
        at the ends), by default over the main period ``[t_i, t_f]``."""
        a = self.t_i if a is None else a
        b = self.t_f if b is None else b
        t = self.t
        lo = int(np.searchsorted(t, a, side="right"))
        hi = int(np.searchsorted(t, b, side="left"))
        tt = np.concatenate(([a], t[lo:hi], [b]))
        yy = np.concatenate(([np.interp(a, t, y)], y[lo:hi], [np.interp(b, t, y)]))
        return trapezoid_K_s(tt, yy)

    def main_weights_sq_s2(self) -> float:
        """``Σ w_j²`` of the trapezoid weights over the main period, s²."""
        lo = int(np.searchsorted(self.t, self.t_i, side="right"))
        hi = int(np.searchsorted(self.t, self.t_f, side="left"))
        w = trapezoid_weights_s(np.concatenate(([self.t_i], self.t[lo:hi], [self.t_f])))
        return float(w @ w)

    def previous_reading_s(self, steps: int = 1) -> float:
        """The reading ``steps`` readings before ``t_i`` (for the boundary component)."""
        i = int(np.searchsorted(self.t, self.t_i, side="left")) - steps
        return float(self.t[max(i, 0)])


def select(thermogram: Thermogram, periods: Periods) -> Selection:
    """Apply ``periods`` to ``thermogram`` (spike readings left out)."""
    t, T = thermogram.time_s, thermogram.temperature_K
    if periods.spikes_s:
        keep = ~np.isin(t, np.asarray(periods.spikes_s))
        t, T = t[keep], T[keep]
    fore = (t >= periods.fore_period_s[0]) & (t <= periods.fore_period_s[1])
    after = (t >= periods.after_period_s[0]) & (t <= periods.after_period_s[1])
    where = {"path": thermogram.provenance.source_path}
    for name, mask in (("fore", fore), ("after", after)):
        if int(mask.sum()) < MIN_DRIFT_READINGS:
            raise PeriodDetectionError(f"{name} period has too few readings for a drift fit",
                                       found=int(mask.sum()),
                                       expected=f"at least {MIN_DRIFT_READINGS}", **where)
    if periods.fire_time_s < t[0] or periods.main_end_s > t[-1]:
        raise PeriodDetectionError("main period outside the record",
                                   found=(periods.fire_time_s, periods.main_end_s),
                                   expected=f"within {t[0]:.6g}–{t[-1]:.6g} s", **where)
    return Selection(t=t, T=T, fore=fore, after=after, t_i=periods.fire_time_s,
                     t_f=periods.main_end_s, periods=periods,
                     source_path=thermogram.provenance.source_path)


@dataclass(frozen=True, eq=False)
class LineFit:
    """Ordinary least-squares drift line ``T = T̄ + g (t − t̄)``."""

    t_mean_s: float
    T_mean_K: float
    slope_K_per_s: float
    var_T_mean_K2: float     # per unit residual variance: 1/n
    var_slope: float         # per unit residual variance: 1/Σ(t − t̄)²
    rss_K2: float            # residuals of a quadratic (see fit_line)
    lag1_K2: float           # Σ r_j r_{j+1}
    dsq_K2: float            # Σ (r_{j+1} − r_j)²
    n: int

    def __call__(self, t_s):
        return self.T_mean_K + self.slope_K_per_s * (np.asarray(t_s, dtype=float) - self.t_mean_s)


def fit_line(t: np.ndarray, T: np.ndarray) -> LineFit:
    """OLS line through the readings (mean time, mean temperature, slope).

    The residual statistics (scatter, lag-1 products, squared differences) are those of a
    quadratic fitted to the same readings: over a long period the Newtonian drift curves, and
    a straight line would count that smooth curvature as noise. The line's slope is the drift
    at mid-period to second order either way (exactly so for a parabola).
    """
    tm = mean(t)
    Tm = mean(T)
    dt = t - tm
    stt = float(dt @ dt)
    g = float(dt @ (T - Tm)) / stt
    x = dt / (np.max(np.abs(dt)) or 1.0)
    q = x * x - float(np.mean(x * x))
    q = q - x * float(q @ x) / float(x @ x)     # orthogonal to 1 and x
    r = T - Tm - g * dt
    qq = float(q @ q)
    if qq > 0 and t.size > 3:
        r = r - q * (float(q @ r) / qq)
    return LineFit(t_mean_s=tm, T_mean_K=Tm, slope_K_per_s=g, var_T_mean_K2=1.0 / t.size,
                   var_slope=1.0 / stt, rss_K2=float(r @ r), lag1_K2=float(r[1:] @ r[:-1]),
                   dsq_K2=float(np.sum(np.diff(r) ** 2)), n=int(t.size))


@dataclass(frozen=True, eq=False, kw_only=True)
class MethodOutput(NewtonianTerms):
    """What a method returns (before diagnostics are added)."""

    rise_K: float
    budget: dict[str, float]
    exchange_K: float
    sigma_K: float
    rho1: float
    durbin_watson: float
    t_x_s: float | None
    #: re-evaluates the rise for other boundaries with the same drift fits
    rise_at: Callable[[float, float], float]
    warnings: list[str] = field(default_factory=list)
    #: the fitted model (e.g. the NewtonFit), for warm starts of refits
    model: Any = None
    #: degrees of freedom of the residual scatter ``sigma_K``
    dof: int = 0
    #: the fit component per unit reading error (K per K): what independent errors of 1 K in
    #: every drift-period reading would give (for the reading-resolution component)
    fit_u_per_sigma_K: float = 0.0
