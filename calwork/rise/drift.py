"""Newton's law of cooling and the heat-exchange correction, as small pure functions.

Notation of docs/methods.md §1.1: the calorimeter obeys ``dT/dt = k (T_∞ − T) + w(t)`` (1.1);
outside the main period ``w = 0`` and the drift rate is ``g(T) = k (T_∞ − T)``. The corrected
(adiabatic) temperature rise is ``ΔT_c = (T_f − T_i) − ∫ k (T_∞ − T) dt`` (1.2).

Numerically the drift is written about a reference temperature ``T_r`` as
``g(T) = g_r − k (T − T_r)``, which stays well conditioned when ``k → 0`` (``T_∞ = T_r + g_r/k``
then runs off to infinity while ``g_r`` and ``k`` remain finite). The solution of (1.1) with
``w = 0`` through ``T_0`` at ``t_0`` is then ``T(t) = T_0 + g_0 φ(t − t_0, k)`` with
``g_0 = g(T_0)`` and the relaxation factor ``φ(τ, k) = (1 − e^{−kτ})/k`` (→ τ as k → 0).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "convergence_temperature_K",
    "corrected_rise_K",
    "cumulative_trapezoid_K_s",
    "drift_curve_K",
    "drift_rate_K_per_s",
    "exchange_from_drift_K",
    "newton_constants_from_drifts",
    "relaxation_factor_s",
    "relaxation_terms",
    "trapezoid_K_s",
    "trapezoid_weights_s",
]

#: Below this |k τ| the relaxation factor is evaluated from its Taylor series (relative error
#: of the 4-term series ~ (kτ)^4 / 120 < 1e-14).
_SERIES_LIMIT = 1e-3


def drift_rate_K_per_s(temperature_K, reference_temperature_K: float, drift_ref_K_per_s: float,
                       rate_constant_per_s: float):
    """Newtonian drift rate about a reference temperature, ``g = g_r − k (T − T_r)``, K/s —
    the form every rise method evaluates (finite when ``k → 0``).

    Examples
    --------
    >>> float(drift_rate_K_per_s(298.0, 297.0, 2e-4, 1e-4))
    0.0001
    """
    return drift_ref_K_per_s - rate_constant_per_s * np.subtract(temperature_K,
                                                                 reference_temperature_K)


def relaxation_terms(tau_s, rate_constant_per_s: float):
    """``e^{−kτ}``, ``φ(τ, k)`` (s) and ``∂φ/∂k`` (s²) together — the kernel behind every
    Newtonian curve in calwork (the joint fit, its Jacobian, the drift curves).

    Below ``|k τ| = 10⁻³`` ``φ`` and ``∂φ/∂k`` come from their Taylor series (relative error
    below 1e-14), above it from ``−expm1(−kτ)/k`` (no cancellation of ``1 − e^{−kτ}``) and
    ``(τ e^{−kτ} − φ)/k``.

    Examples
    --------
    >>> e, phi, dphi = relaxation_terms(100.0, 0.0)
    >>> float(e), float(phi), float(dphi)
    (1.0, 100.0, -5000.0)
    """
    k = float(rate_constant_per_s)
    scalar = isinstance(tau_s, float | int)
    tau = float(tau_s) if scalar else np.asarray(tau_s, dtype=float)
    x = k * tau
    # a Python number takes the math functions (the joint fit evaluates its curves at single
    # times many times per run); arrays take numpy's — the same formulas either way
    exp, expm1 = (math.exp, math.expm1) if scalar else (np.exp, np.expm1)
    e = exp(-x)
    largest = abs(tau) if scalar else float(np.max(np.abs(tau), initial=0.0))
    if k == 0.0 or abs(k) * largest < _SERIES_LIMIT:
        phi = tau * (1.0 - x * (0.5 - x * (1.0 / 6.0 - x / 24.0)))
        dphi = tau * tau * (-0.5 + x * (1.0 / 3.0 - x * (0.125 - x / 30.0)))
        return e, phi, dphi
    phi = -expm1(-x) / k
    return e, phi, (tau * e - phi) / k


def relaxation_factor_s(tau_s, rate_constant_per_s: float):
    """``φ(τ, k) = (1 − e^{−kτ})/k``, s; equal to ``τ`` for ``k = 0`` (stable near 0).

    Parameters
    ----------
    tau_s
        Time(s) since the reference time, s.
    rate_constant_per_s
        ``k``, 1/s (any sign).

    Examples
    --------
    >>> float(relaxation_factor_s(100.0, 0.0))
    100.0
    >>> round(float(relaxation_factor_s(100.0, 1e-2)), 6)
    63.212056
    """
    return relaxation_terms(tau_s, rate_constant_per_s)[1]


def drift_curve_K(t_s, t0_s: float, T0_K: float, drift0_K_per_s: float, rate_constant_per_s):
    """Solution of (1.1) with ``w = 0``: ``T(t) = T_0 + g_0 φ(t − t_0, k)``, K.

    Parameters
    ----------
    t_s
        Time(s), s.
    t0_s, T0_K
        A point of the curve: time (s) and temperature (K).
    drift0_K_per_s
        Drift rate at ``T0_K``, K/s.
    rate_constant_per_s
        ``k``, 1/s (``0`` gives the straight drift line of the classical methods).

    Examples
    --------
    >>> round(float(drift_curve_K(60.0, 0.0, 298.0, 1e-4, 0.0)), 6)
    298.006
    """
    return T0_K + drift0_K_per_s * relaxation_factor_s(np.subtract(t_s, t0_s), rate_constant_per_s)


def convergence_temperature_K(reference_temperature_K: float, drift_K_per_s: float,
                              rate_constant_per_s: float) -> float:
    """``T_∞ = T_r + g_r / k``, K (``inf`` with the sign of ``g_r`` when ``k = 0``)."""
    if rate_constant_per_s == 0.0:
        if drift_K_per_s == 0.0:
            return reference_temperature_K
        return float(np.copysign(np.inf, drift_K_per_s))
    return reference_temperature_K + drift_K_per_s / rate_constant_per_s


def trapezoid_weights_s(time_s) -> np.ndarray:
    """Weights ``w_j`` (s) with ``∫ y dt ≈ Σ w_j y_j`` by the trapezoid rule on raw timestamps."""
    t = np.asarray(time_s, dtype=float)
    w = np.zeros_like(t)
    if t.size > 1:
        d = np.diff(t)
        w[:-1] += 0.5 * d
        w[1:] += 0.5 * d
    return w


def trapezoid_K_s(time_s, temperature_K) -> float:
    """``∫ T dt`` by the trapezoid rule on raw (possibly unequal) timestamps, K·s."""
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(temperature_K, dtype=float)
    return float(np.sum(np.diff(t) * (y[1:] + y[:-1])) * 0.5)


def cumulative_trapezoid_K_s(time_s, y) -> np.ndarray:
    """Running trapezoid integral ``C_j = ∫_{t_0}^{t_j} y dt`` (``C_0 = 0``), in units of y·s."""
    t = np.asarray(time_s, dtype=float)
    y = np.asarray(y, dtype=float)
    out = np.empty_like(y)
    out[0] = 0.0
    np.cumsum(np.diff(t) * (y[1:] + y[:-1]) * 0.5, out=out[1:])
    return out


def exchange_from_drift_K(span_s: float, drift_ref_K_per_s: float, rate_constant_per_s: float,
                          theta_integral_K_s: float) -> float:
    """Heat-exchange correction ``δT_ex = ∫ g dt`` (1.2) with the drift written about a
    reference temperature ``T_r``: ``g = g_r − k (T − T_r)``, so
    ``δT_ex = g_r (t_f − t_i) − k ∫ (T − T_r) dt``, K — the form every rise method uses
    (finite when ``k → 0``).

    Parameters
    ----------
    span_s
        ``t_f − t_i``, s.
    drift_ref_K_per_s
        ``g_r``, the drift rate at ``T_r``, K/s.
    rate_constant_per_s
        ``k``, 1/s.
    theta_integral_K_s
        ``∫_{t_i}^{t_f} (T − T_r) dt`` over the main-period readings, K·s.

    Examples
    --------
    >>> exchange_from_drift_K(100.0, 1e-4, 0.0, 50.0)
    0.01
    """
    return drift_ref_K_per_s * span_s - rate_constant_per_s * theta_integral_K_s


def corrected_rise_K(T_initial_K: float, T_final_K: float, exchange_correction_K: float) -> float:
    """``ΔT_c = (T_f − T_i) − δT_ex`` (docs/methods.md (1.2)), K.

    Examples
    --------
    >>> round(corrected_rise_K(298.0, 300.5, -0.01), 6)
    2.51
    """
    return (T_final_K - T_initial_K) - exchange_correction_K


def newton_constants_from_drifts(g_i_K_per_s: float, g_f_K_per_s: float, T_mean_i_K: float,
                                 T_mean_f_K: float) -> tuple[float, float]:
    """``k`` and ``T_∞`` from the fore and after drift rates and mean temperatures (1.3).

    ``k = (g_i − g_f)/(T̄_f − T̄_i)``, ``T_∞ = T̄_i + g_i/k``.

    Returns
    -------
    (float, float)
        ``k`` (1/s) and ``T_∞`` (K; infinite when ``g_i = g_f``).

    Examples
    --------
    >>> k, T_inf = newton_constants_from_drifts(1e-4, -1.5e-4, 297.0, 299.5)
    >>> round(k, 8), round(T_inf, 6)
    (0.0001, 298.0)
    """
    k = (g_i_K_per_s - g_f_K_per_s) / (T_mean_f_K - T_mean_i_K)
    return k, convergence_temperature_K(T_mean_i_K, g_i_K_per_s, k)
