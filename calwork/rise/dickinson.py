"""The Dickinson extrapolation (docs/methods.md §1.5), as pure functions.

The exchange over the main period is the fore drift acting from ``t_i`` to ``t_x`` plus the
after drift from ``t_x`` to ``t_f``:

    ΔT_c = (T_f − T_i) − g_i (t_x − t_i) − g_f (t_f − t_x)                       (1.6)

Two rules for ``t_x``:

* ``'equal-area'`` — the exact time (1.7) ``t_x = t_f − ∫(T − T̄_i)dt / (T̄_f − T̄_i)`` that
  balances the two areas; Dickinson with this ``t_x`` is algebraically the Regnault–Pfaundler
  correction.
* ``'60-percent'`` — the fuel-calorimetry shortcut (ASTM D240/D5865 form (1.8), recalled from
  memory): ``b`` = the time the temperature reaches ``t_a + 0.60 (t_c − t_a)``, interpolated
  between readings; ``t = t_c − t_a − r₁ (b − a) − r₂ (c − b)``. Not for thermochemistry: its
  error is about ``(g_f − g_i)(t_x − b)`` (docs/methods.md §1.5).
"""

from __future__ import annotations

import numpy as np

__all__ = ["dickinson_exact_tx_s", "dickinson_rise_K", "time_at_fraction_s"]


def dickinson_rise_K(t_i_s: float, t_f_s: float, t_x_s: float, T_i_K: float, T_f_K: float,
                     g_i_K_per_s: float, g_f_K_per_s: float) -> float:
    """Corrected rise (1.6) for a given ``t_x``, K (also the ASTM form (1.8) with
    ``a = t_i``, ``b = t_x``, ``c = t_f``, ``r₁ = g_i``, ``r₂ = g_f``).

    Examples
    --------
    >>> round(dickinson_rise_K(0.0, 600.0, 100.0, 297.0, 299.5, 1e-4, -2e-4), 9)
    2.59
    """
    return (T_f_K - T_i_K) - g_i_K_per_s * (t_x_s - t_i_s) - g_f_K_per_s * (t_f_s - t_x_s)


def dickinson_exact_tx_s(t_i_s: float, t_f_s: float, T_mean_i_K: float, T_mean_f_K: float,
                         integral_T_K_s: float) -> float:
    """The equal-area time ``t_x`` of (1.7), s (parameters as for
    :func:`calwork.rise.regnault_pfaundler.regnault_pfaundler_exchange_K`).

    Examples
    --------
    An instant rise of 2 K at 100 s: ``t_x`` is the step time.

    >>> dickinson_exact_tx_s(0.0, 600.0, 297.0, 299.0, 297.0 * 100.0 + 299.0 * 500.0)
    100.0
    """
    area = integral_T_K_s - T_mean_i_K * (t_f_s - t_i_s)
    return t_f_s - area / (T_mean_f_K - T_mean_i_K)


def time_at_fraction_s(time_s, temperature_K, t_a_s: float, T_a_K: float, T_c_K: float,
                       fraction: float = 0.60) -> float:
    """First time after ``t_a`` at which the rise reaches ``fraction`` of ``T_c − T_a``, s.

    Linear interpolation between the two readings that bracket the level (ASTM reads the 60 %
    point between readings; recalled from memory). Works for falling (endothermic) records.

    Raises
    ------
    ValueError
        The level is never reached after ``t_a``.

    Examples
    --------
    >>> time_at_fraction_s([0, 10, 20, 30], [0.0, 0.5, 0.9, 1.0], 0.0, 0.0, 1.0)
    12.5
    """
    t = np.asarray(time_s, dtype=float)
    T = np.asarray(temperature_K, dtype=float)
    level = T_a_K + fraction * (T_c_K - T_a_K)
    sign = 1.0 if T_c_K >= T_a_K else -1.0
    start = int(np.searchsorted(t, t_a_s, side="left"))
    above = np.flatnonzero(sign * (T[start:] - level) >= 0.0)
    if above.size == 0:
        raise ValueError("the temperature never reaches the fraction of the rise")
    j = start + int(above[0])
    if j == 0 or (j == start and t[j] <= t_a_s):
        return float(t[j])
    t0, t1, y0, y1 = t[j - 1], t[j], T[j - 1], T[j]
    return float(t0 + (level - y0) * (t1 - t0) / (y1 - y0))
