"""The standards' manual procedures, step by step — so that a lab following one reproduces its
hand calculation exactly and sees calwork's best estimate beside it.

Two procedures, each a variant of a calwork method (docs/methods.md §1.13; the texts are
recalled from memory, not quoted):

``iso-1928`` — Regnault–Pfaundler as the manual form of ISO 1928 writes it
    Readings each minute; the fore-period rate ``v₀`` and mean ``t̄₀`` from the readings of the
    5 min before firing, the after-period rate ``vₙ`` and mean ``t̄ₙ`` from the 5 min after the
    end of the main period (rates from the first and last reading of each period, °C/min), and

    ``θ = tₙ − t₀ − [n·v₀ + (vₙ − v₀)/(t̄ₙ − t̄₀) · (Σᵢ₌₁ⁿ⁻¹ tᵢ + (t₀ + tₙ)/2 − n·t̄₀)]``

    with ``t₀`` the reading at firing, ``tₙ`` at the end of the main period, ``tᵢ`` the readings
    between (each minute; a trapezoid in minutes when the record is read more often) and ``n``
    the main period in minutes.
``astm-60-percent`` — the 60 %-point method of the ASTM bomb-calorimetry standards
    ``a`` the firing time, ``c`` the start of the after period (the rate has become constant),
    ``b`` the time the temperature reaches ``tₐ + 0.6 (t_c − tₐ)`` (linear interpolation
    between readings, rounded to 0.1 min), ``r₁`` and ``r₂`` the rates over the 5 min before
    ``a`` and after ``c`` (°C/min), and

    ``t = t_c − tₐ − r₁ (b − a) − r₂ (c − b)``.

Times are minutes from the firing in the worked lines, temperatures °C (a difference in °C is
one in K). No other rounding is applied: the hand calculation carries the digits the record has.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

import numpy as np

from calwork.core.errors import PeriodDetectionError, check_choice
from calwork.core.results import jsonable
from calwork.core.thermogram import Thermogram

__all__ = ["MANUAL_PROCEDURES", "ManualRise", "ManualStep", "manual_rise"]

#: Procedure → (title, the calwork method it is a variant of).
MANUAL_PROCEDURES = {
    "iso-1928": ("Regnault–Pfaundler, manual form of ISO 1928", "regnault-pfaundler"),
    "astm-60-percent": ("60 % point with 5-min rates, as in the ASTM bomb methods", "dickinson"),
}
#: Drift periods of the manual procedures, min.
_RATE_PERIOD_MIN = 5.0
_TIME_TOL_S = 1e-6


@dataclass(frozen=True)
class ManualStep:
    """One line of the worked calculation."""

    label: str
    expression: str
    value: float
    unit: str

    def to_dict(self) -> dict[str, Any]:
        return {"label": self.label, "expression": self.expression, "value": self.value,
                "unit": self.unit}


@dataclass(frozen=True)
class ManualRise:
    """The corrected rise by a manual procedure, its worked lines, and calwork's estimate."""

    procedure: str
    title: str
    corrected_rise_K: float
    steps: tuple[ManualStep, ...]
    fire_time_s: float
    main_end_s: float
    #: calwork's best estimate of the same record with the same periods (the newton-fit
    #: RiseResult, with its uncertainty), for comparison
    best_estimate: Any = None
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        best = self.best_estimate
        return jsonable({
            "procedure": self.procedure, "title": self.title,
            "corrected_rise_K": self.corrected_rise_K, "fire_time_s": self.fire_time_s,
            "main_end_s": self.main_end_s, "steps": [s.to_dict() for s in self.steps],
            "best_estimate": None if best is None else {
                "method": best.method, "corrected_rise_K": best.corrected_rise_K,
                "u_corrected_rise_K": best.u_corrected_rise_K,
                "difference_K": self.corrected_rise_K - best.corrected_rise_K},
            "notes": list(self.notes)})


def manual_rise(thermogram: Thermogram, procedure: str, *, fire_time_s: float,
                main_end_s: float, best_estimate: bool = True) -> ManualRise:
    """The corrected rise of ``thermogram`` by the manual ``procedure`` (see the module).

    Parameters
    ----------
    thermogram
        The record; readings each minute at least over the 5 min before firing and after the
        end of the main period.
    procedure
        ``'iso-1928'`` or ``'astm-60-percent'`` (:data:`MANUAL_PROCEDURES`).
    fire_time_s, main_end_s
        The firing time (``a``) and the end of the main period (``c``), s on the record's axis
        — the procedures take them from the operator, as the standards do.
    best_estimate
        Also reduce the record with calwork's newton-fit for comparison.

    Raises
    ------
    PeriodDetectionError
        A reading the procedure needs is not in the record (the message names its time).
    """
    check_choice("procedure", procedure, MANUAL_PROCEDURES)
    t = np.asarray(thermogram.time_s, dtype=float)
    T = np.asarray(thermogram.temperature_K, dtype=float) - 273.15  # °C, as read
    where = {"path": thermogram.provenance.source_path}
    a, c = float(fire_time_s), float(main_end_s)
    if not t[0] <= a < c <= t[-1]:
        raise PeriodDetectionError("the firing time and the end of the main period must lie "
                                   "in the record, in that order", found=(a, c), **where)
    reading = _Readings(t, T, where)
    if procedure == "iso-1928":
        value, steps = _iso_1928(reading, a, c)
    else:
        value, steps = _astm_60_percent(reading, a, c)
    best = None
    if best_estimate:
        from calwork.rise.engine import corrected_rise

        best = corrected_rise(thermogram, "newton-fit", fire_time_s=a, main_end_s=c)
    return ManualRise(procedure=procedure, title=MANUAL_PROCEDURES[procedure][0],
                      corrected_rise_K=value, steps=tuple(steps), fire_time_s=a, main_end_s=c,
                      best_estimate=best)


class _Readings:
    def __init__(self, t: np.ndarray, T: np.ndarray, where: dict) -> None:
        self.t, self.T, self.where = t, T, where

    def at(self, time_s: float, what: str) -> float:
        """The reading taken at ``time_s`` (the procedures read at whole minutes)."""
        j = int(np.argmin(np.abs(self.t - time_s)))
        if abs(self.t[j] - time_s) > _TIME_TOL_S:
            raise PeriodDetectionError(
                f"the manual procedure needs a reading at {time_s:.6g} s ({what})",
                found=f"nearest reading at {self.t[j]:.6g} s",
                expected="readings each minute over the 5 min before firing and after the "
                "end of the main period", **self.where)
        return float(self.T[j])

    def between(self, lo: float, hi: float) -> tuple[np.ndarray, np.ndarray]:
        keep = (self.t >= lo - _TIME_TOL_S) & (self.t <= hi + _TIME_TOL_S)
        return self.t[keep], self.T[keep]


def _iso_1928(r: _Readings, a: float, c: float) -> tuple[float, list[ManualStep]]:
    span = 60.0 * _RATE_PERIOD_MIN
    t0, tn = r.at(a, "the firing"), r.at(c, "the end of the main period")
    first, last = r.at(a - span, "the start of the fore period"), r.at(
        c + span, "the end of the after period")
    _, fore = r.between(a - span, a)
    _, after = r.between(c, c + span)
    v0 = (t0 - first) / _RATE_PERIOD_MIN
    vn = (last - tn) / _RATE_PERIOD_MIN
    m0, mn = float(np.mean(fore)), float(np.mean(after))
    n = (c - a) / 60.0
    tm, Tm = r.between(a, c)
    interior = float(np.sum(Tm[1:-1]))
    if np.allclose(np.diff(tm), 60.0):
        integral = interior + (t0 + tn) / 2.0
        expression = "Σᵢ₌₁ⁿ⁻¹ tᵢ + (t₀ + tₙ)/2"
    else:  # read more often than each minute: the same trapezoid, in minutes
        integral = float(np.sum(np.diff(tm) / 60.0 * (Tm[1:] + Tm[:-1]) / 2.0))
        expression = "trapezoid of the main-period readings, in minutes"
    correction = n * v0 + (vn - v0) / (mn - m0) * (integral - n * m0)
    value = tn - t0 - correction
    steps = [
        ManualStep("v₀, fore-period rate", f"(t₀ − t₋₅)/5 = ({t0:.6g} − {first:.6g})/5", v0,
                   "°C/min"),
        ManualStep("t̄₀, fore-period mean", f"mean of {fore.size} readings", m0, "°C"),
        ManualStep("vₙ, after-period rate", f"(tₙ₊₅ − tₙ)/5 = ({last:.6g} − {tn:.6g})/5", vn,
                   "°C/min"),
        ManualStep("t̄ₙ, after-period mean", f"mean of {after.size} readings", mn, "°C"),
        ManualStep("n, main period", f"({c:.6g} − {a:.6g}) s / 60", n, "min"),
        ManualStep("∫t dt over the main period", expression, integral, "°C·min"),
        ManualStep("exchange correction", "n·v₀ + (vₙ − v₀)/(t̄ₙ − t̄₀)·(∫t dt − n·t̄₀)",
                   correction, "°C"),
        ManualStep("θ, corrected rise", f"tₙ − t₀ − correction = {tn:.6g} − {t0:.6g} − "
                   f"({correction:.6g})", value, "°C"),
    ]
    return value, steps


def _astm_60_percent(r: _Readings, a: float, c: float) -> tuple[float, list[ManualStep]]:
    span = 60.0 * _RATE_PERIOD_MIN
    ta, tc = r.at(a, "the firing (a)"), r.at(c, "the start of the after period (c)")
    before, after = r.at(a - span, "5 min before firing"), r.at(c + span, "5 min after c")
    r1 = (ta - before) / _RATE_PERIOD_MIN
    r2 = (after - tc) / _RATE_PERIOD_MIN
    target = ta + 0.6 * (tc - ta)
    tm, Tm = r.between(a, c)
    sign = 1.0 if tc >= ta else -1.0
    j = int(np.argmax(sign * (Tm - target) >= 0))
    if j == 0 or sign * (Tm[j] - target) < 0:
        raise PeriodDetectionError("the 60 % point of the rise is not between two readings of "
                                   "the main period", found=target, **r.where)
    b_s = tm[j - 1] + (target - Tm[j - 1]) * (tm[j] - tm[j - 1]) / (Tm[j] - Tm[j - 1])
    b_min = math.floor((b_s - a) / 60.0 * 10.0 + 0.5) / 10.0  # to the nearest 0.1 min
    c_min = (c - a) / 60.0
    value = tc - ta - r1 * b_min - r2 * (c_min - b_min)
    steps = [
        ManualStep("r₁, rate before firing", f"(tₐ − t₋₅)/5 = ({ta:.6g} − {before:.6g})/5", r1,
                   "°C/min"),
        ManualStep("r₂, rate after c", f"(t_c₊₅ − t_c)/5 = ({after:.6g} − {tc:.6g})/5", r2,
                   "°C/min"),
        ManualStep("60 % temperature", f"tₐ + 0.6(t_c − tₐ) = {ta:.6g} + 0.6·({tc:.6g} − "
                   f"{ta:.6g})", target, "°C"),
        ManualStep("b − a", f"interpolated {(b_s - a) / 60.0:.4f} min, to the nearest 0.1 min",
                   b_min, "min"),
        ManualStep("c − a", f"({c:.6g} − {a:.6g}) s / 60", c_min, "min"),
        ManualStep("t, corrected rise", f"t_c − tₐ − r₁(b − a) − r₂(c − b) = {tc:.6g} − "
                   f"{ta:.6g} − ({r1:.6g})·{b_min:g} − ({r2:.6g})·{c_min - b_min:g}", value,
                   "°C"),
    ]
    return value, steps
