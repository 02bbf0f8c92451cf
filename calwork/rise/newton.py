"""Joint Newtonian fit of the fore and after periods (docs/methods.md §1.6b) and its rise.

Both drift periods are fitted together to solutions of (1.1) with ``w = 0`` that share the
rate constant ``k`` and the convergence temperature, with a separate integration constant for
each period. About the reference temperature ``T_r`` (mean of the fore period) and with
``θ = T − T_r``, each period follows

    θ(t) = θ₀ e^{−k(t − c)} + g_r φ(t − c, k),      φ(τ, k) = (1 − e^{−kτ})/k

with ``c`` the period's mean time, ``θ₀`` its temperature there and ``g_r`` the drift rate at
``T_r`` (so ``T_∞ = T_r + g_r/k``). For fixed ``k`` the model is linear in ``(θ₀_f, θ₀_a,
g_r)``; the fit starts from the straight-line solution (1.3) and takes Gauss–Newton steps with
the analytic Jacobian, which converge in two or three steps because the model is nearly
linear. This is far faster than a general optimiser and gives the covariance directly.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from calwork.core.errors import FitError
from calwork.core.numeric import mean
from calwork.core.uncertainty import standard_uncertainty
from calwork.rise.drift import (
    convergence_temperature_K,
    corrected_rise_K,
    exchange_from_drift_K,
    relaxation_terms,
)

__all__ = ["NewtonFit", "fit_newton", "newton_rise"]

#: Parameter order of :attr:`NewtonFit.params` and its covariance.
PARAMETERS = ("theta_fore_K", "theta_after_K", "drift_ref_K_per_s", "k_per_s")


def _line(t: np.ndarray, y: np.ndarray) -> tuple[float, float, float]:
    """Mean time, mean value and OLS slope."""
    tm = mean(t)
    ym = mean(y)
    dt = t - tm
    stt = float(dt @ dt)
    slope = float(dt @ (y - ym)) / stt if stt > 0 else 0.0
    return tm, ym, slope


@dataclass(frozen=True, eq=False)
class NewtonFit:
    """Result of :func:`fit_newton` (parameters about ``reference_temperature_K``).

    Attributes
    ----------
    reference_temperature_K
        ``T_r``, K (mean of the fore-period readings).
    fore_t0_s, after_t0_s
        Mean times ``c`` of the fore and after periods, s.
    params
        ``(θ₀_f, θ₀_a, g_r, k)`` in K, K, K/s, 1/s.
    covariance
        Their covariance from the residual scatter (not yet inflated for autocorrelation).
    sigma_K
        Residual standard deviation, K.
    rho1
        Lag-1 autocorrelation of the residuals (pooled over both periods).
    durbin_watson
        Durbin–Watson statistic of the residuals (pooled).
    residuals_fore_K, residuals_after_K
        Residuals (reading − model), K.
    iterations
        Gauss–Newton steps taken.
    """

    reference_temperature_K: float
    fore_t0_s: float
    after_t0_s: float
    params: np.ndarray
    covariance: np.ndarray
    sigma_K: float
    #: The covariance per unit reading variance, (JᵀJ)⁻¹ (K² … per K²).
    unit_covariance: np.ndarray
    #: Degrees of freedom of the residual scatter (readings − 4).
    dof: int
    rho1: float
    durbin_watson: float
    residuals_fore_K: np.ndarray
    residuals_after_K: np.ndarray
    iterations: int

    @property
    def k_per_s(self) -> float:
        return float(self.params[3])

    @property
    def drift_ref_K_per_s(self) -> float:
        return float(self.params[2])

    @property
    def T_inf_K(self) -> float:
        """Convergence temperature ``T_r + g_r/k``, K."""
        return convergence_temperature_K(self.reference_temperature_K, self.drift_ref_K_per_s,
                                         self.k_per_s)

    @property
    def u_T_inf_K(self) -> float:
        """Standard uncertainty of ``T_∞`` from the covariance of ``g_r`` and ``k``, K."""
        g, k = self.drift_ref_K_per_s, self.k_per_s
        if k == 0.0:
            return float("inf")
        grad = np.array([1.0 / k, -g / (k * k)])
        return standard_uncertainty(grad @ self.covariance[2:, 2:] @ grad, name="T_inf_K")

    def theta(self, t_s, which: str) -> tuple[np.ndarray, np.ndarray]:
        """``θ`` of the fore (``'fore'``) or after (``'after'``) curve at ``t_s`` and its
        gradient with respect to :attr:`params` (shape ``(4,) + shape(t_s)``)."""
        after = which == "after"
        c = self.after_t0_s if after else self.fore_t0_s
        th0 = float(self.params[1] if after else self.params[0])
        g, k = self.drift_ref_K_per_s, self.k_per_s
        if isinstance(t_s, float | int):  # one time: scalar arithmetic (called often)
            tau = float(t_s) - c
            e, phi, dphi = relaxation_terms(tau, k)
            grad = np.array([0.0 if after else e, e if after else 0.0, phi,
                             -th0 * tau * e + g * dphi])
            return th0 * e + g * phi, grad
        tau = np.asarray(t_s, dtype=float) - c
        e, phi, dphi = relaxation_terms(tau, k)
        zero = np.zeros_like(e)
        grad = np.stack([zero if after else e, e if after else zero, phi,
                         -th0 * tau * e + g * dphi])
        return th0 * e + g * phi, grad

    def temperature_K(self, t_s, which: str) -> np.ndarray:
        """Temperature of the fitted fore or after curve at ``t_s``, K."""
        return self.reference_temperature_K + self.theta(t_s, which)[0]


def fit_newton(t_fore: np.ndarray, T_fore: np.ndarray, t_after: np.ndarray,
               T_after: np.ndarray, *, max_iterations: int = 30,
               start: NewtonFit | None = None, converge: bool = False) -> NewtonFit:
    """Fit fore and after readings jointly to Newton's law (shared ``k`` and ``T_∞``).

    Parameters
    ----------
    t_fore, T_fore
        Fore-period times (s) and temperatures (K), at least 2 readings.
    t_after, T_after
        After-period times (s) and temperatures (K), at least 2 readings.
    max_iterations
        Gauss–Newton step limit.
    start
        A fit of nearly the same readings (same reference temperature and period means
        within a few readings) to start from: one Gauss–Newton step is then taken, which is
        converged to far below the parameters' uncertainty for a model this close to linear.
    converge
        With ``start``: iterate to the same convergence test as a fit from scratch (for a
        result that is reported, not only compared), usually in one or two steps.

    Returns
    -------
    NewtonFit

    Raises
    ------
    FitError
        Too few readings, a singular design (e.g. both periods at one temperature), or no
        convergence.
    """
    t_fore = np.asarray(t_fore, dtype=float)
    t_after = np.asarray(t_after, dtype=float)
    T_fore = np.asarray(T_fore, dtype=float)
    T_after = np.asarray(T_after, dtype=float)
    nf, na = t_fore.size, t_after.size
    if nf < 2 or na < 2 or nf + na < 5:
        raise FitError("the Newtonian fit needs at least 2 fore and 2 after readings and 5 in all",
                       found=(nf, na))
    n = nf + na
    if start is None:
        T_r = float(np.mean(T_fore))
        c_f, y_f, g_f = _line(t_fore, T_fore - T_r)
        c_a, y_a, g_a = _line(t_after, T_after - T_r)
        # Start: straight lines through the period means, (1.3) for k; g_r = drift at θ = 0.
        k = (g_f - g_a) / (y_a - y_f) if abs(y_a - y_f) > 1e-12 else 0.0
        p = np.array([y_f, y_a, g_f + k * y_f, k])
    else:
        T_r = start.reference_temperature_K
        c_f, c_a = mean(t_fore), mean(t_after)
        p = start.params.copy()
        # move the integration constants to the new period means along the fitted curves
        p[0] = float(start.theta(c_f, "fore")[0])
        p[1] = float(start.theta(c_a, "after")[0])
        if not converge:
            max_iterations = 1
    tau = np.concatenate([t_fore - c_f, t_after - c_a])
    y = np.concatenate([T_fore, T_after]) - T_r
    f, a = slice(0, nf), slice(nf, n)
    converged = False
    it = 0
    for it in range(1, max_iterations + 1):  # noqa: B007 - iteration count is reported
        e, phi, dphi = relaxation_terms(tau, p[3])
        # Jacobian columns: e on the fore rows (∂/∂θ_f), e on the after rows (∂/∂θ_a), φ
        # (∂/∂g_r) and d (∂/∂k); the normal equations from their dot products (the two θ
        # columns have disjoint rows), with no n × 4 matrix built
        e_th = e.copy()
        e_th[f] *= p[0]
        e_th[a] *= p[1]
        r = y - (e_th + p[2] * phi)
        d = p[2] * dphi - tau * e_th
        ef, ea = e[f], e[a]
        G = np.empty((4, 4))
        G[0, 0], G[1, 1], G[0, 1] = ef @ ef, ea @ ea, 0.0
        G[0, 2], G[1, 2] = ef @ phi[f], ea @ phi[a]
        G[0, 3], G[1, 3] = ef @ d[f], ea @ d[a]
        G[2, 2], G[2, 3], G[3, 3] = phi @ phi, phi @ d, d @ d
        G[1, 0], G[2, 0], G[2, 1] = G[0, 1], G[0, 2], G[1, 2]
        G[3, 0], G[3, 1], G[3, 2] = G[0, 3], G[1, 3], G[2, 3]
        b = np.array([ef @ r[f], ea @ r[a], phi @ r, d @ r])
        diag_G = np.diag(G)
        if not np.all(diag_G > 0):
            raise FitError("the Newtonian fit has a degenerate design (no time spread)")
        scale = np.sqrt(diag_G)
        try:
            inv = np.linalg.inv(G / np.outer(scale, scale))
        except np.linalg.LinAlgError:
            raise FitError("the Newtonian fit is singular (fore and after periods give no "
                           "independent information on k)") from None
        step = (inv @ (b / scale)) / scale
        p = p + step
        # converged when every step is far below the parameter's own standard deviation
        rss = float(r @ r)
        diag = np.diag(inv)
        if np.any(~(diag > 0)):
            raise FitError("the Newtonian fit is numerically singular (a parameter variance is "
                           "not positive)")
        sd = np.sqrt(diag * rss / max(n - 4, 1)) / scale
        if (start is not None and not converge) or rss == 0.0 or np.all(
                np.abs(step) <= 1e-3 * sd):
            converged = True
            break
    if not converged or not np.all(np.isfinite(p)):
        raise FitError("the Newtonian fit did not converge", found=it,
                       expected=f"convergence within {max_iterations} steps")
    # residuals at the new parameters to first order; the Jacobian of the last step (the step
    # is far below the parameter uncertainties, so the covariance is unchanged)
    r = r - (step[2] * phi + step[3] * d)
    r[f] -= step[0] * ef
    r[a] -= step[1] * ea
    rss = float(r @ r)
    dof = n - 4
    s2 = rss / dof if dof > 0 else float("nan")
    rf, ra = r[:nf], r[nf:]
    lag = float(rf[1:] @ rf[:-1] + ra[1:] @ ra[:-1])
    df, da = np.diff(rf), np.diff(ra)
    dsq = float(df @ df + da @ da)
    rho = lag / rss if rss > 0 else 0.0
    dw = dsq / rss if rss > 0 else 2.0
    return NewtonFit(
        reference_temperature_K=T_r, fore_t0_s=c_f, after_t0_s=c_a, params=p,
        covariance=inv / np.outer(scale, scale) * s2, sigma_K=float(np.sqrt(s2)),
        unit_covariance=inv / np.outer(scale, scale), dof=dof, rho1=rho,
        durbin_watson=dw, residuals_fore_K=rf, residuals_after_K=ra, iterations=it,
    )


def newton_rise(fit: NewtonFit, t_i_s: float, t_f_s: float,
                theta_integral_K_s: float) -> tuple[float, np.ndarray, dict[str, float]]:
    """Corrected rise (1.2) from a joint fit and the main-period integral of ``θ``.

    ``ΔT_c = θ_a(t_f) − θ_f(t_i) − g_r (t_f − t_i) + k ∫_{t_i}^{t_f} θ dt`` — the drift
    ``g = g_r − k θ`` integrated over the main-period readings.

    Parameters
    ----------
    fit
        The joint Newtonian fit.
    t_i_s, t_f_s
        Start and end of the main period, s.
    theta_integral_K_s
        ``∫ (T − T_r) dt`` over the main-period readings (trapezoid), K·s.

    Returns
    -------
    (float, ndarray, dict)
        ``ΔT_c`` (K), its gradient with respect to ``fit.params``, and the parts
        (``T_initial_K``, ``T_final_K``, ``exchange_correction_K``).
    """
    th_i, gr_i = fit.theta(t_i_s, "fore")
    th_f, gr_f = fit.theta(t_f_s, "after")
    g, k = fit.drift_ref_K_per_s, fit.k_per_s
    span = t_f_s - t_i_s
    exchange = exchange_from_drift_K(span, g, k, theta_integral_K_s)
    rise = corrected_rise_K(float(th_i), float(th_f), exchange)
    grad = gr_f - gr_i
    grad = grad + np.array([0.0, 0.0, -span, theta_integral_K_s])
    parts = {
        "T_initial_K": fit.reference_temperature_K + float(th_i),
        "T_final_K": fit.reference_temperature_K + float(th_f),
        "exchange_correction_K": float(exchange),
    }
    return rise, grad, parts
