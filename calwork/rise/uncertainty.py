"""Uncertainty of the corrected rise: propagation helpers (GUM, JCGM 100:2008 §5.1).

The standard uncertainty of ``ΔT_c`` combines, in quadrature,

* ``fit`` — the drift-fit parameters (end-point temperatures, ``k``, ``T_∞`` or the drift
  rates) through the sensitivities of docs/methods.md §1.4 (``∂ΔT_c/∂k = ∫(T − T_∞)dt``,
  ``∂ΔT_c/∂T_∞ = −k(t_f − t_i)``, end points), with the covariance scaled by the AR(1)
  variance-inflation factor of the residuals;
* ``main-period-readings`` — reading noise entering through the exchange integral
  (``k σ √Σw²``, trapezoid weights ``w``);
* ``boundary`` — the spread of ``ΔT_c`` over plausible boundary choices when the periods were
  detected automatically;
* ``shortcut`` — for the 60 % Dickinson rule, its known deviation from the exact rule.
* ``transient-tail`` — the one-sided bias of a slow transient (two-body calorimeter) still
  decaying after ``t_f``, fitted on the late main period and propagated through the method
  (:mod:`calwork.rise.tail`); present only when that tail is significant.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence

import numpy as np

from calwork.core.errors import UncertaintyError
from calwork.uncertainty import variance_component

__all__ = ["combine", "numeric_gradient", "propagate"]


def propagate(gradient: Sequence[float] | np.ndarray, covariance: np.ndarray) -> float:
    """``sqrt(gᵀ Σ g)``; raises :class:`UncertaintyError` if not finite.

    Examples
    --------
    >>> propagate([1.0, -1.0], np.array([[4.0, 0.0], [0.0, 9.0]]))
    3.605551275463989
    """
    g = np.asarray(gradient, dtype=float)
    cov = np.asarray(covariance, dtype=float)
    var = float(g @ cov @ g)
    if not math.isfinite(var):
        raise UncertaintyError("the fit covariance is not available (not finite)",
                               found=var, expected="a finite variance")
    magnitude = float(np.abs(g) @ np.abs(cov) @ np.abs(g))
    return math.sqrt(variance_component(var, magnitude=magnitude, name="drift-fit component"))


def numeric_gradient(f: Callable[[np.ndarray], float], x: Sequence[float],
                     steps: Sequence[float]) -> np.ndarray:
    """Central-difference gradient of a scalar function ``f`` at ``x`` with ``steps``."""
    x = np.asarray(x, dtype=float)
    out = np.empty(x.size)
    for i, h in enumerate(steps):
        e = np.zeros_like(x)
        e[i] = h
        out[i] = (f(x + e) - f(x - e)) / (2.0 * h)
    return out


def combine(components: Mapping[str, float]) -> float:
    """Root-sum-square of the budget components, K.

    Raises
    ------
    UncertaintyError
        A component is not finite or negative, or the total is zero (an uncertainty is never
        reported as zero because a propagation failed).
    """
    total = 0.0
    for name, value in components.items():
        if not (math.isfinite(value) and value >= 0.0):
            raise UncertaintyError(f"uncertainty component {name!r} could not be evaluated",
                                   found=value, expected="a finite, non-negative value")
        total += value * value
    if total <= 0.0:
        raise UncertaintyError("the propagated uncertainty of the corrected rise is zero "
                               "(no residual scatter to estimate the reading noise from)",
                               found=dict(components))
    return math.sqrt(total)
