"""The :class:`RiseResult` record and the :class:`DriftCurve` of a drift period."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from calwork.core.provenance import Provenance
from calwork.core.results import jsonable
from calwork.core.uncertainty import Budget
from calwork.rise.drift import drift_curve_K
from calwork.rise.periods import Periods

__all__ = ["JSON_KEYS", "DriftCurve", "RiseResult"]

#: Keys of ``calwork rise --json`` guaranteed by the contract (DESIGN.md), in order.
JSON_KEYS = ("corrected_rise_K", "u_corrected_rise_K", "method", "fire_time_s", "main_end_s",
             "fore_period_s", "after_period_s", "k_per_s", "T_inf_K", "warnings")


@dataclass(frozen=True, kw_only=True)
class DriftCurve:
    """A fitted drift curve ``T(t) = T_0 + g_0 φ(t − t_0, k)`` (docs/methods.md (1.9)).

    ``k = 0`` is the straight drift line of Regnault–Pfaundler and Dickinson.

    Attributes
    ----------
    t0_s, T0_K
        A point on the curve: time, s; temperature, K.
    drift0_K_per_s
        Drift rate at that point, K/s.
    k_per_s
        Rate constant, 1/s.
    """

    t0_s: float
    T0_K: float
    drift0_K_per_s: float
    k_per_s: float

    def __call__(self, t_s):
        """Temperature on the curve at ``t_s`` (scalar or array), K."""
        value = drift_curve_K(t_s, self.t0_s, self.T0_K, self.drift0_K_per_s, self.k_per_s)
        return float(value) if np.ndim(value) == 0 else value

    def drift_K_per_s(self, t_s):
        """Drift rate on the curve at ``t_s``, K/s."""
        value = self.drift0_K_per_s * np.exp(-self.k_per_s * np.subtract(t_s, self.t0_s))
        return float(value) if np.ndim(value) == 0 else value

    def to_dict(self) -> dict[str, float]:
        return {"t0_s": self.t0_s, "T0_K": self.T0_K, "drift0_K_per_s": self.drift0_K_per_s,
                "k_per_s": self.k_per_s}


@dataclass(frozen=True, kw_only=True)
class NewtonianTerms:
    """The Newtonian model of a reduction and its end-point temperatures (what a method
    returns and the result reports alike).

    Attributes
    ----------
    k_per_s, u_k_per_s
        Exchange rate constant ``k`` and its standard uncertainty, 1/s.
    T_inf_K, u_T_inf_K
        Convergence temperature ``T_∞`` and its standard uncertainty, K.
    T_initial_K, T_final_K
        Temperatures at ``t_i`` (fitted fore curve) and ``t_f`` (fitted after curve), K.
    fore_drift, after_drift
        The fitted drift curves.
    """

    k_per_s: float
    u_k_per_s: float
    T_inf_K: float
    u_T_inf_K: float
    T_initial_K: float
    T_final_K: float
    fore_drift: DriftCurve
    after_drift: DriftCurve


@dataclass(frozen=True, kw_only=True)
class RiseResult(NewtonianTerms):
    """The corrected temperature rise of one thermogram.

    Attributes
    ----------
    corrected_rise_K
        ``ΔT_c`` (docs/methods.md (1.2)), K; negative for an endothermic event.
    u_corrected_rise_K
        Its standard uncertainty (k = 1), K; never zero.
    method
        ``'newton-fit'``, ``'regnault-pfaundler'`` or ``'dickinson'``.
    periods
        The :class:`~calwork.rise.periods.Periods` used.
    fire_time_s, main_end_s
        Start ``t_i`` and end ``t_f`` of the main period, s.
    fore_period_s, after_period_s
        ``(start, end)`` of the fitted drift periods, s.
    k_per_s, u_k_per_s
        Exchange rate constant and its standard uncertainty, 1/s.
    T_inf_K, u_T_inf_K
        Convergence temperature and its standard uncertainty, K.
    T_initial_K
        Temperature at ``t_i`` from the fitted fore curve, K.
    T_final_K
        Temperature at ``t_f`` from the fitted after curve, K.
    exchange_correction_K
        ``δT_ex = ∫ g dt`` over the main period, K (``ΔT_c = T_f − T_i − δT_ex``).
    t_x_s
        Dickinson time ``t_x`` (exact (1.7), or the 60 % time), s; ``None`` for other methods.
    dickinson_rule
        ``'equal-area'`` or ``'60-percent'`` for ``method='dickinson'``, else ``None``.
    noise_K
        Residual standard deviation of the drift fits, K.
    durbin_watson, rho1
        Durbin–Watson statistic and lag-1 autocorrelation of the drift-period residuals.
    uncertainty_budget
        Components of ``u_corrected_rise_K`` (K, combined in quadrature), e.g. ``'fit'``,
        ``'main-period-readings'``, ``'boundary'``, ``'shortcut'``, ``'transient-tail'``.
    fore_drift, after_drift
        The fitted drift curves (:class:`DriftCurve`).
    cross_check
        Other methods' rises computed as checks, K (e.g. ``{'regnault-pfaundler': …}``).
    warnings
        Machine-readable warnings (``"code: text"``, see
        :data:`calwork.rise.diagnostics.WARNING_CODES`).
    provenance
        Method and the thermogram's provenance.
    events, event
        For a log with several heat events: all of them and the (1-based) one this result is
        about (reduced on that event's window of the log).
    """

    corrected_rise_K: float
    u_corrected_rise_K: float
    method: str
    periods: Periods
    fire_time_s: float
    main_end_s: float
    fore_period_s: tuple[float, float]
    after_period_s: tuple[float, float]
    exchange_correction_K: float
    t_x_s: float | None = None
    dickinson_rule: str | None = None
    noise_K: float | None = None
    durbin_watson: float | None = None
    rho1: float | None = None
    #: The step the readings are written to (0.01 K for a record read to 0.01 °C), K, or
    #: ``None`` when finer than 10 µK or not on a grid.
    reading_resolution_K: float | None = None
    #: Degrees of freedom of the drift fits' residual scatter.
    dof: int | None = None
    uncertainty_budget: Budget = field(
        default_factory=lambda: Budget(quantity="corrected temperature rise", unit="K"))
    cross_check: Mapping[str, float] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    provenance: Provenance = field(default_factory=Provenance)
    #: every heat event of a log with several (``kind``, ``start_s``, ``end_s``,
    #: ``window_start_s``, ``window_end_s``), in time order; empty for a one-event log
    events: tuple[Mapping[str, Any], ...] = ()
    #: which of ``events`` this result is about (1-based), or ``None``
    event: int | None = None

    def __post_init__(self) -> None:
        if not isinstance(self.uncertainty_budget, Budget):
            object.__setattr__(self, "uncertainty_budget", Budget.of(
                "corrected temperature rise", "K", self.uncertainty_budget))
        object.__setattr__(self, "cross_check", MappingProxyType(dict(self.cross_check)))
        object.__setattr__(self, "warnings", tuple(self.warnings))
        object.__setattr__(self, "fore_period_s", tuple(self.fore_period_s))
        object.__setattr__(self, "after_period_s", tuple(self.after_period_s))
        object.__setattr__(self, "events", tuple(MappingProxyType(dict(e))
                                                 for e in self.events))

    def fore_curve(self, t_s):
        """The fitted fore-period drift curve at ``t_s``, K."""
        return self.fore_drift(t_s)

    def after_curve(self, t_s):
        """The fitted after-period drift curve at ``t_s``, K."""
        return self.after_drift(t_s)

    @property
    def relative_u(self) -> float:
        """``u/|ΔT_c|``."""
        return self.u_corrected_rise_K / abs(self.corrected_rise_K)

    def to_dict(self) -> dict[str, Any]:
        """The ``calwork rise --json`` object (contract keys first, then the details)."""
        out: dict[str, Any] = {
            "corrected_rise_K": self.corrected_rise_K,
            "u_corrected_rise_K": self.u_corrected_rise_K,
            "method": self.method,
            "fire_time_s": self.fire_time_s,
            "main_end_s": self.main_end_s,
            "fore_period_s": list(self.fore_period_s),
            "after_period_s": list(self.after_period_s),
            "k_per_s": self.k_per_s,
            "T_inf_K": self.T_inf_K,
            "warnings": list(self.warnings),
            "u_k_per_s": self.u_k_per_s,
            "u_T_inf_K": self.u_T_inf_K,
            "T_initial_K": self.T_initial_K,
            "T_final_K": self.T_final_K,
            "exchange_correction_K": self.exchange_correction_K,
            "t_x_s": self.t_x_s,
            "dickinson_rule": self.dickinson_rule,
            "noise_K": self.noise_K,
            "durbin_watson": self.durbin_watson,
            "rho1": self.rho1,
            "reading_resolution_K": self.reading_resolution_K,
            "dof": self.dof,
            "uncertainty_budget": dict(self.uncertainty_budget),
            "cross_check": dict(self.cross_check),
            "fore_drift": self.fore_drift.to_dict(),
            "after_drift": self.after_drift.to_dict(),
            "periods": self.periods.to_dict(),
            "provenance": self.provenance.to_dict(),
        }
        if self.events:
            out["event"] = self.event
            out["events"] = [dict(e, number=i) for i, e in enumerate(self.events, start=1)]
        return jsonable(out)

