"""Transient tail at the end of the main period: a slow exponential approach to the plateau.

In a calorimeter of two bodies (bomb and water coupled with an internal time constant of
~1–2 min) the water approaches the Newtonian drift curve as ``e^{−t/τ}``. When ``t_f`` is
put where that tail has sunk to about the reading noise, the after-period fit still sees it
— always on the side of "heat still to come" — and the rise is biased one way by tens of µK;
the boundary component (a nested refit) does not see a bias of that kind.

The tail is measured where it is far above the noise, in the late main period, on the
invariant ``H(t) = T(t) + k ∫ (T − T_∞) dt`` (constant wherever the record is Newtonian,
docs/methods.md §1.1): a model ``H = c₀ + c₁ (t − t̄) + A e^{−(t − t_a)/τ}`` is fitted from
``t_a`` (where the departure has fallen below :data:`TAIL_START_FRACTION` of the rise, past
the fast modes: thermometer lag, burning) to the end of the record — linear in
``c₀, c₁, A``, ``τ`` by a grid search. The tail extrapolated into the after period,
``δ(t) = A e^{−(t − t_a)/τ}``, is removed from the after-period readings and the method
repeated; the change of the rise is the tail's bias (derived: first-order perturbation of
the fit, exact for a linear method). It enters the budget as ``transient-tail`` when the
exponential is significant (``|A|`` more than :data:`TAIL_Z` standard errors).
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from calwork.core.numeric import median
from calwork.rise.selection import Selection

__all__ = ["TAIL_CHI2_Z", "TAIL_START_FRACTION", "TAIL_Z", "tail_correction", "tail_model"]

#: The tail fit starts where the departure from the plateau is below this fraction of the
#: rise: late enough that the fast modes (thermometer lag, burning, ~seconds) are gone,
#: early enough that the slow one is still far above the noise (derived; common practice).
TAIL_START_FRACTION = 0.02
#: Coverage factor of the significance test of the tail amplitude.
TAIL_Z = 4.0
#: The tail model is rejected when its residual variance exceeds the reading noise variance
#: by more than this many standard deviations of a variance estimate (``√(2/ν)``).
TAIL_CHI2_Z = 5.0
#: Readings the tail fit needs at least.
_MIN_READINGS = 20
#: Most points of the tail fit (block means beyond that).
_MAX_POINTS = 240
#: τ grid: log-spaced from 2 points to half the fitted span.
_TAU_POINTS = 48


def tail_model(sel: Selection, k_per_s: float, T_inf_K: float, sign: int,
               sigma_K: float) -> tuple[float, float, float] | None:
    """Fit the slow tail of the main period.

    Parameters
    ----------
    sel
        The readings and periods.
    k_per_s
        Cooling constant of the fitted drift model, 1/s.
    T_inf_K
        Convergence temperature of the fitted drift model, K.
    sign
        Direction of the event (+1 rise, −1 endothermic).
    sigma_K
        Reading noise of the drift fit, K: the tail model must fit the readings to it.

    Returns
    -------
    tuple or None
        ``(A_K, tau_s, t_a_s)`` of ``δ(t) = A e^{−(t − t_a)/τ}`` (K, s, s), or ``None`` when
        no significant slow tail is found, or the model does not describe the readings: its
        best ``τ`` at the short end of the grid (a transient faster than the sampling, e.g.
        the thermometer lag of one body, is not resolved and must not be extrapolated) or a
        residual variance above the reading noise (:data:`TAIL_CHI2_Z`).
    """
    if not (math.isfinite(k_per_s) and math.isfinite(T_inf_K) and math.isfinite(sigma_K)
            and sigma_K > 0):
        return None
    t, T = sel.t, sel.T
    i0 = int(np.searchsorted(t, sel.t_i, side="left"))
    i1 = int(np.searchsorted(t, sel.t_f, side="left"))
    if t.size - i0 < 2 * _MIN_READINGS or i1 <= i0:
        return None
    tt = t[i0:]
    theta = T[i0:] - T_inf_K
    C = np.empty(tt.size)
    C[0] = 0.0
    np.cumsum(np.diff(tt) * (theta[1:] + theta[:-1]) * 0.5, out=C[1:])
    H = T[i0:] + k_per_s * C
    after = sel.after[i0:]
    plateau = median(H[after])
    rise = plateau - float(H[0])
    if rise == 0 or not math.isfinite(rise):
        return None
    dep = sign * (plateau - H[: i1 - i0 + 1])
    above = np.flatnonzero(dep > TAIL_START_FRACTION * abs(rise))
    if above.size == 0:
        return None
    a = int(above[-1]) + 1
    if tt.size - a < _MIN_READINGS:
        return None
    # block means of b readings (at most _MAX_POINTS): an exponential averaged over a block
    # of width w keeps its τ, its amplitude changes by (w/τ)²/24 (derived), and the fit is fast
    b = max(1, (tt.size - a) // _MAX_POINTS)
    m = (tt.size - a) // b
    x = tt[a:a + m * b].reshape(m, b).mean(axis=1) - tt[a]
    y = H[a:a + m * b].reshape(m, b).mean(axis=1)
    n = x.size
    span = float(x[-1])
    dt = median(np.diff(x))
    if span <= 8.0 * dt:
        return None
    taus = np.geomspace(2.0 * dt, 0.5 * span, _TAU_POINTS)
    xc = x - x.mean()
    yc = y - y.mean()
    sxx = float(xc @ xc)
    yp = yc - xc * float(xc @ yc) / sxx
    gain, ey, ee = _scan(x, xc, yp, sxx, taus)
    j = int(np.argmax(gain))
    if j < 2 or not math.isfinite(float(gain[j])):
        return None
    # refine τ between the neighbours of the best grid point (the amplitude is tens of mK:
    # a coarse τ leaves a misfit well above the noise)
    for _ in range(2):
        fine = np.geomspace(taus[max(j - 1, 0)], taus[min(j + 1, taus.size - 1)], 33)
        taus, (gain, ey, ee) = fine, _scan(x, xc, yp, sxx, fine)
        j = int(np.argmax(gain))
    A = float(ey[j] / ee[j])
    rss = float(yp @ yp) - float(gain[j])
    if n <= 4 or rss <= 0:
        return None
    s2 = rss / (n - 4)
    if s2 > sigma_K**2 / b * (1.0 + TAIL_CHI2_Z * math.sqrt(2.0 / (n - 4))):
        return None
    se_A = math.sqrt(s2 / float(ee[j]))
    # heat still to come: H below its plateau for a rise (A < 0), above for an endotherm
    if not (sign * A < 0 and abs(A) > TAIL_Z * se_A):
        return None
    return A, float(taus[j]), float(tt[a])


def _scan(x: np.ndarray, xc: np.ndarray, yp: np.ndarray, sxx: float,
          taus: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """For each τ: the reduction of the residual sum of squares of ``y`` about a line when
    ``e^{−x/τ}`` (made orthogonal to the line) is added; its projections ``ey``, ``ee``.

    ``yp`` is already orthogonal to the constant and to ``xc``, so ``ey = E·yp``; the squared
    norm of the orthogonalised exponential is ``ΣE² − (ΣE)²/n − (E·xc)²/Sxx`` (derived; no
    matrix of the orthogonalised columns is built)."""
    E = np.exp(np.multiply.outer(-1.0 / taus, x))
    s1 = E.sum(axis=1)
    ee = np.einsum("ij,ij->i", E, E) - s1 * s1 / x.size - (E @ xc) ** 2 / sxx
    ok = ee > 0
    ey = E @ yp
    gain = np.where(ok, ey * ey / np.where(ok, ee, 1.0), -np.inf)
    return gain, ey, ee


def tail_correction(sel: Selection, A_K: float, tau_s: float, t_a_s: float) -> Selection:
    """The selection with the tail ``δ(t)`` removed from the after-period readings."""
    delta = np.where(sel.after, A_K * np.exp(-np.maximum(sel.t - t_a_s, 0.0) / tau_s), 0.0)
    return replace(sel, T=sel.T - delta)
