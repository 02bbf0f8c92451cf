"""The Regnault–Pfaundler correction (docs/methods.md §1.4), as pure functions.

The drift law is taken linear in temperature between the fore and after periods,
``g(T) = g_i + s (T − T̄_i)`` with ``s = (g_f − g_i)/(T̄_f − T̄_i) = −k``, and integrated over
the main-period readings:

    δT_ex = g_i (t_f − t_i) + s ∫_{t_i}^{t_f} (T − T̄_i) dt                       (1.4)
    ΔT_c  = (T_f − T_i) − δT_ex

The integral is the trapezoid rule on raw timestamps (the classical Pfaundler sum (1.5) for
equal intervals).
"""

from __future__ import annotations

from calwork.rise.drift import (
    corrected_rise_K,
    exchange_from_drift_K,
    newton_constants_from_drifts,
)

__all__ = ["regnault_pfaundler_exchange_K", "regnault_pfaundler_rise_K"]


def regnault_pfaundler_exchange_K(t_i_s: float, t_f_s: float, g_i_K_per_s: float,
                                  g_f_K_per_s: float, T_mean_i_K: float, T_mean_f_K: float,
                                  integral_T_K_s: float) -> float:
    """Heat-exchange correction ``δT_ex`` of (1.4), K.

    Parameters
    ----------
    t_i_s, t_f_s
        Start and end of the main period, s.
    g_i_K_per_s, g_f_K_per_s
        Drift rates of the fore and after periods, K/s.
    T_mean_i_K, T_mean_f_K
        Mean temperatures of the fore and after periods, K.
    integral_T_K_s
        ``∫_{t_i}^{t_f} T dt`` over the main-period readings, K·s.

    Examples
    --------
    >>> round(regnault_pfaundler_exchange_K(0.0, 100.0, 1e-4, -1e-4, 297.0, 299.0,
    ...                                     29800.0), 9)
    0.0
    """
    span = t_f_s - t_i_s
    k, _ = newton_constants_from_drifts(g_i_K_per_s, g_f_K_per_s, T_mean_i_K, T_mean_f_K)
    return exchange_from_drift_K(span, g_i_K_per_s, k, integral_T_K_s - T_mean_i_K * span)


def regnault_pfaundler_rise_K(t_i_s: float, t_f_s: float, T_i_K: float, T_f_K: float,
                              g_i_K_per_s: float, g_f_K_per_s: float, T_mean_i_K: float,
                              T_mean_f_K: float, integral_T_K_s: float) -> float:
    """Corrected rise by Regnault–Pfaundler (1.4), K: ``(T_f − T_i) − δT_ex``.

    ``T_i_K`` and ``T_f_K`` are the temperatures at ``t_i`` and ``t_f``, K (calwork uses the
    fitted drift lines there); the other parameters are those of
    :func:`regnault_pfaundler_exchange_K`.

    Examples
    --------
    A rise of 2 K with drifts that cancel over the main period:

    >>> round(regnault_pfaundler_rise_K(0.0, 100.0, 297.0, 299.0, 1e-4, -1e-4, 297.0,
    ...                                 299.0, 29800.0), 9)
    2.0
    """
    return corrected_rise_K(T_i_K, T_f_K, regnault_pfaundler_exchange_K(
        t_i_s, t_f_s, g_i_K_per_s, g_f_K_per_s, T_mean_i_K, T_mean_f_K, integral_T_K_s))
