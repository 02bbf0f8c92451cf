"""The registered temperature-rise methods (``METHODS``): newton-fit, Regnault–Pfaundler,
Dickinson. Each takes a :class:`~calwork.rise.selection.Selection` and returns a
:class:`~calwork.rise.selection.MethodOutput` with the rise, its uncertainty budget and the
fitted drift model. The physics lives in the pure functions of ``drift``, ``newton``,
``regnault_pfaundler`` and ``dickinson``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from typing import Any

import numpy as np

from calwork.core.errors import FitError, PeriodDetectionError, UncertaintyError
from calwork.core.numeric import mean
from calwork.core.uncertainty import numeric_gradient, propagate_gradient
from calwork.rise.diagnostics import ar1_inflation, warning
from calwork.rise.dickinson import dickinson_exact_tx_s, dickinson_rise_K, time_at_fraction_s
from calwork.rise.drift import (
    convergence_temperature_K,
    cumulative_trapezoid_K_s,
    drift_rate_K_per_s,
    newton_constants_from_drifts,
)
from calwork.rise.newton import fit_newton, newton_rise
from calwork.rise.regnault_pfaundler import regnault_pfaundler_rise_K
from calwork.rise.result import DriftCurve
from calwork.rise.selection import LineFit, MethodOutput, Selection, fit_line

__all__ = [
    "newton_rise_only",
    "reduce_dickinson",
    "reduce_newton",
    "reduce_regnault_pfaundler",
    "regnault_pfaundler_check",
]

#: Longest straight drift line, in units of 1/k (the drift then changes by < 20 % along it).
MAX_KL = 0.2
#: ASTM rate windows for the 60 % rule: 5 min before firing and after c (recalled, §1.5).
RATE_WINDOW_S = 300.0


def _equivalent_tx(fore: DriftCurve, after: DriftCurve, rise: float, t_i: float,
                   t_f: float) -> float | None:
    """Time at which the after curve lies ``rise`` above the fore curve (Dickinson's t_x).

    Two solutions of the same linear law (1.1) differ by ``D(t) = D(t_i) e^{−k(t − t_i)}``
    [derived here], so ``t_x = t_i + ln(D(t_i)/ΔT_c)/k``; ``None`` outside the main period.
    """
    d_i = after(t_i) - fore(t_i)
    k = fore.k_per_s
    if rise == 0 or d_i / rise <= 0:
        return None
    t_x = t_i + (math.log(d_i / rise) / k if k != 0 else 0.0)
    return t_x if t_i <= t_x <= t_f else None


def reduce_newton(sel: Selection, start: Any = None) -> MethodOutput:
    """newton-fit: joint Newtonian fit of fore and after periods (§1.6b), exchange integral
    over the main-period readings, end points from the fitted curves. ``start``: the
    :class:`~calwork.rise.newton.NewtonFit` of nearly the same periods to start from (the fit
    is then iterated to convergence from there)."""
    t, T = sel.t, sel.T
    try:
        fit = fit_newton(t[sel.fore], T[sel.fore], t[sel.after], T[sel.after], start=start,
                         converge=True)
    except FitError as exc:
        raise exc.with_context(path=sel.source_path) from None
    f_ar = ar1_inflation(fit.rho1)
    cov = fit.covariance * f_ar
    if not np.all(np.isfinite(cov)):
        raise UncertaintyError("the Newtonian fit gave no usable covariance",
                               path=sel.source_path)
    theta = T - fit.reference_temperature_K

    def rise_at(t_i: float, t_f: float) -> float:
        return newton_rise(fit, t_i, t_f, sel.integral(theta, t_i, t_f))[0]

    rise, grad, parts = newton_rise(fit, sel.t_i, sel.t_f, sel.integral(theta))
    k = fit.k_per_s
    budget = {
        "fit": propagate_gradient(grad, cov),
        "main-period-readings": abs(k) * fit.sigma_K * math.sqrt(f_ar * sel.main_weights_sq_s2()),
    }
    T_r = fit.reference_temperature_K
    th_f, th_a, g_r = (float(v) for v in fit.params[:3])
    fore = DriftCurve(t0_s=fit.fore_t0_s, T0_K=T_r + th_f,
                      drift0_K_per_s=drift_rate_K_per_s(th_f, 0.0, g_r, k),  # θ about T_r
                      k_per_s=k)
    after = DriftCurve(t0_s=fit.after_t0_s, T0_K=T_r + th_a,
                       drift0_K_per_s=drift_rate_K_per_s(th_a, 0.0, g_r, k),
                       k_per_s=k)
    return MethodOutput(
        rise_K=rise, budget=budget, k_per_s=k, u_k_per_s=math.sqrt(cov[3, 3]),
        T_inf_K=fit.T_inf_K, u_T_inf_K=fit.u_T_inf_K * math.sqrt(f_ar),
        T_initial_K=parts["T_initial_K"], T_final_K=parts["T_final_K"],
        exchange_K=parts["exchange_correction_K"], fore_drift=fore, after_drift=after,
        sigma_K=fit.sigma_K, rho1=fit.rho1, durbin_watson=fit.durbin_watson,
        t_x_s=_equivalent_tx(fore, after, rise, sel.t_i, sel.t_f), rise_at=rise_at,
        dof=fit.dof, fit_u_per_sigma_K=propagate_gradient(grad, fit.unit_covariance),
        model=fit,
    )


def _narrow(sel: Selection, fore_window_s: float | None,
            after_window_s: float | None, minimum: int = 4) -> Selection:
    """The selection with the fore period cut to its last ``fore_window_s`` and the after
    period to its first ``after_window_s`` (kept whole if that leaves < ``minimum``)."""
    t = sel.t
    fm, am = sel.fore, sel.after
    if fore_window_s is not None:
        narrowed = fm & (t >= t[fm][-1] - fore_window_s)
        fm = narrowed if narrowed.sum() >= minimum else fm
    if after_window_s is not None:
        narrowed = am & (t <= t[am][0] + after_window_s)
        am = narrowed if narrowed.sum() >= minimum else am
    return replace(sel, fore=fm, after=am)


def _lines(sel: Selection) -> tuple[LineFit, LineFit]:
    t, T = sel.t, sel.T
    return fit_line(t[sel.fore], T[sel.fore]), fit_line(t[sel.after], T[sel.after])


def line_dof(fl: LineFit, al: LineFit) -> int:
    """Degrees of freedom of the pooled residual scatter of two period fits: a period of more
    than three readings loses three (the residuals are those of a quadratic, see
    :func:`~calwork.rise.selection.fit_line`), one of three readings loses two."""
    return sum(f.n - (3 if f.n > 3 else 2) for f in (fl, al))


def _pooled(fl: LineFit, al: LineFit) -> tuple[float, float, float]:
    """Pooled residual σ, lag-1 autocorrelation and Durbin–Watson of two period fits."""
    rss = fl.rss_K2 + al.rss_K2
    dof = line_dof(fl, al)
    sigma = math.sqrt(rss / dof) if dof > 0 else float("nan")
    rho = (fl.lag1_K2 + al.lag1_K2) / rss if rss > 0 else 0.0
    dw = (fl.dsq_K2 + al.dsq_K2) / rss if rss > 0 else 2.0
    return sigma, rho, dw


def _line_cov(fl: LineFit, al: LineFit, sigma: float, f_ar: float) -> np.ndarray:
    """Covariance of (T̄_i, g_i, T̄_f, g_f): independent, mean and slope uncorrelated."""
    return np.diag([fl.var_T_mean_K2, fl.var_slope, al.var_T_mean_K2, al.var_slope]) * (
        sigma * sigma * f_ar)


def _steps(fl: LineFit, al: LineFit, sigma: float) -> list[float]:
    s = max(sigma, 1e-9)
    return [s * math.sqrt(fl.var_T_mean_K2), s * math.sqrt(fl.var_slope),
            s * math.sqrt(al.var_T_mean_K2), s * math.sqrt(al.var_slope)]


def _linear_output(sel: Selection, fl: LineFit, al: LineFit, rise: float, grad: np.ndarray,
                   sigma: float, rho: float, dw: float, f_ar: float, cov: np.ndarray,
                   t_x: float | None, rise_at, T_i: float, T_f: float, newtonian: bool,
                   extra: dict[str, float] | None = None,
                   warnings: list[str] | None = None) -> MethodOutput:
    g_i, g_f = fl.slope_K_per_s, al.slope_K_per_s
    fit_u = propagate_gradient(grad, cov)
    dT = al.T_mean_K - fl.T_mean_K
    k, T_inf = newton_constants_from_drifts(g_i, g_f, fl.T_mean_K, al.T_mean_K)
    grad_k = np.array([(g_i - g_f) / dT**2, 1 / dT, -(g_i - g_f) / dT**2, -1 / dT])
    u_k = propagate_gradient(grad_k, cov)
    try:
        grad_T = numeric_gradient(
            lambda x: convergence_temperature_K(x[0], x[1], (x[1] - x[3]) / (x[2] - x[0])),
            [fl.T_mean_K, g_i, al.T_mean_K, g_f], _steps(fl, al, sigma))
        u_T_inf = propagate_gradient(grad_T, cov)
    except UncertaintyError:
        u_T_inf = float("inf")
    budget = {"fit": fit_u,
              "main-period-readings": abs(k) * sigma * math.sqrt(f_ar * sel.main_weights_sq_s2())}
    budget.update(extra or {})
    if newtonian:  # the linear drift law g_i + s (T − T̄_i) is Newton's law with k = −s
        def drift(T):
            return drift_rate_K_per_s(T, fl.T_mean_K, g_i, k)

        fore = DriftCurve(t0_s=sel.t_i, T0_K=T_i, drift0_K_per_s=drift(T_i), k_per_s=k)
        after = DriftCurve(t0_s=sel.t_f, T0_K=T_f, drift0_K_per_s=drift(T_f), k_per_s=k)
    else:
        fore = DriftCurve(t0_s=fl.t_mean_s, T0_K=fl.T_mean_K, drift0_K_per_s=g_i, k_per_s=0.0)
        after = DriftCurve(t0_s=al.t_mean_s, T0_K=al.T_mean_K, drift0_K_per_s=g_f, k_per_s=0.0)
    return MethodOutput(
        rise_K=rise, budget=budget, k_per_s=k, u_k_per_s=u_k, T_inf_K=T_inf, u_T_inf_K=u_T_inf,
        T_initial_K=T_i, T_final_K=T_f, exchange_K=(T_f - T_i) - rise, fore_drift=fore,
        after_drift=after, sigma_K=sigma, rho1=rho, durbin_watson=dw, t_x_s=t_x,
        rise_at=rise_at, warnings=list(warnings or []), dof=line_dof(fl, al),
        fit_u_per_sigma_K=propagate_gradient(grad, _line_cov(fl, al, 1.0, 1.0)),
    )


@dataclass(frozen=True, eq=False)
class _Areas:
    """Integrals of ``u = T − T̄_i`` (nominal T̄_i) for given boundaries, K·s."""

    main: float        # ∫_{t_i}^{t_f} u dt
    fore: float        # mean over fore readings j of ∫_{t_j}^{t_i} u dt
    after: float       # mean over after readings j of ∫_{t_f}^{t_j} u dt
    span: float        # t_f − t_i
    d_fore: float      # t_i − mean fore time
    d_after: float     # mean after time − t_f


def _areas(sel: Selection, u: np.ndarray, Cu: np.ndarray, t_i: float, t_f: float) -> _Areas:
    C_i = sel.integral(u, float(sel.t[0]), t_i)
    C_f = sel.integral(u, float(sel.t[0]), t_f)
    tf_mean = mean(sel.t[sel.fore])
    ta_mean = mean(sel.t[sel.after])
    return _Areas(main=C_f - C_i, fore=C_i - mean(Cu[sel.fore]),
                  after=mean(Cu[sel.after]) - C_f, span=t_f - t_i,
                  d_fore=t_i - tf_mean, d_after=ta_mean - t_f)


def _rp_parts(x: np.ndarray, T_ref: float, a: _Areas) -> tuple[float, float, float, float]:
    """Rise, T_i, T_f and ∫(T − T̄_i)dt over the main period for parameters
    ``x = (T̄_i, g_i, T̄_f, g_f)``; end points are the period readings carried to t_i / t_f
    along the drift law ``g_i + s (T − T̄_i)`` and averaged."""
    Tm_i, g_i, Tm_f, g_f = x
    s = (g_f - g_i) / (Tm_f - Tm_i)
    d = Tm_i - T_ref
    T_i = Tm_i + g_i * a.d_fore + s * (a.fore - d * a.d_fore)
    T_f = Tm_f - g_i * a.d_after - s * (a.after - d * a.d_after)
    main = a.main - d * a.span
    integral_T = main + Tm_i * a.span
    rise = regnault_pfaundler_rise_K(0.0, a.span, T_i, T_f, g_i, g_f, Tm_i, Tm_f, integral_T)
    return rise, T_i, T_f, main


def _prepare_lines(sel: Selection, window: float | None = None):
    """Straight-line fits of the drift periods (narrowed to ``window`` s, or — for the
    exact straight-line methods — to at most ``MAX_KL / k`` s next to the main period, where a
    Newtonian drift is still close to straight)."""
    if window is not None:
        sel = _narrow(sel, window, window)
    fl, al = _lines(sel)
    if al.T_mean_K == fl.T_mean_K:
        raise PeriodDetectionError("fore and after periods have the same mean temperature",
                                   path=sel.source_path)
    if window is None:
        k0 = (fl.slope_K_per_s - al.slope_K_per_s) / (al.T_mean_K - fl.T_mean_K)
        lengths = [np.ptp(sel.t[m]) for m in (sel.fore, sel.after)]
        if k0 > 0 and max(lengths) * k0 > MAX_KL:
            sel = _narrow(sel, MAX_KL / k0, MAX_KL / k0, minimum=10)
            fl, al = _lines(sel)
    sigma, rho, dw = _pooled(fl, al)
    f_ar = ar1_inflation(rho)
    cov = _line_cov(fl, al, sigma, f_ar)
    x0 = np.array([fl.T_mean_K, fl.slope_K_per_s, al.T_mean_K, al.slope_K_per_s])
    return sel, fl, al, sigma, rho, dw, f_ar, cov, x0


def _curvature_u(sel: Selection, fl: LineFit, al: LineFit, k: float, exchange: float) -> float:
    """Type B component for straight drift lines on a curved (Newtonian) drift, K.

    Over a period of length L the line's slope and the mean temperature are a (g, T) pair off
    the true drift law by about (kL)²/24 of the drift (the mean of a parabola lies T″L²/24
    from its mid value, with T″ = −k g) [derived here]; that relative error acts on the
    exchange correction and on carrying the readings to t_i and t_f. Rectangular, so /√3.
    """
    L_f, L_a = (float(np.ptp(sel.t[m])) for m in (sel.fore, sel.after))
    rel = (abs(k) * max(L_f, L_a)) ** 2 / 24.0
    scale = (abs(exchange) + abs(fl.slope_K_per_s) * L_f / 2
             + abs(al.slope_K_per_s) * L_a / 2)
    return rel * scale / math.sqrt(3.0)


def reduce_regnault_pfaundler(sel: Selection) -> MethodOutput:
    """Regnault–Pfaundler (1.4): drift rates and mean temperatures from straight-line fits of
    the fore and after periods, trapezoid integral over the main-period readings.

    ``ΔT_c`` is invariant to ``t_i`` (any fore reading) and ``t_f`` (any after reading),
    §1.1; calwork evaluates (1.4) for every such pair and averages — i.e. each end-point
    temperature is the mean of the period's readings carried to ``t_i`` / ``t_f`` along the
    method's own drift law. Same correction as with single readings, with their noise
    averaged out and without the bias that extrapolating a straight line has on long, curved
    drift periods.
    """
    c = _rp_core(sel)
    sel, fl, al = c["sel"], c["fl"], c["al"]
    x0, T_ref, u, Cu = c["x0"], c["T_ref"], c["u"], c["Cu"]

    def rise_at(t_i: float, t_f: float) -> float:
        return _rp_parts(x0, T_ref, _areas(sel, u, Cu, t_i, t_f))[0]

    t_x = sel.t_f - c["main"] / (al.T_mean_K - fl.T_mean_K)   # (1.7), for the figure
    return _linear_output(sel, fl, al, c["rise"], c["grad"], c["sigma"], c["rho"], c["dw"],
                          c["f_ar"], c["cov"], t_x, rise_at, c["T_i"], c["T_f"], True,
                          {"drift-curvature": c["curvature_u"]})


def _rp_core(sel: Selection) -> dict[str, Any]:
    sel, fl, al, sigma, rho, dw, f_ar, cov, x0 = _prepare_lines(sel)
    T_ref = fl.T_mean_K
    u = sel.T - T_ref
    Cu = cumulative_trapezoid_K_s(sel.t, u)
    a0 = _areas(sel, u, Cu, sel.t_i, sel.t_f)
    rise, T_i, T_f, main = _rp_parts(x0, T_ref, a0)
    grad = numeric_gradient(lambda x: _rp_parts(x, T_ref, a0)[0], x0, _steps(fl, al, sigma))
    k = -(al.slope_K_per_s - fl.slope_K_per_s) / (al.T_mean_K - fl.T_mean_K)
    return {"sel": sel, "fl": fl, "al": al, "sigma": sigma, "rho": rho, "dw": dw, "f_ar": f_ar,
            "cov": cov, "x0": x0, "T_ref": T_ref, "u": u, "Cu": Cu, "rise": rise, "T_i": T_i,
            "T_f": T_f, "main": main, "fit_u": propagate_gradient(grad, cov), "k": k,
            "grad": grad,
            "curvature_u": _curvature_u(sel, fl, al, k, (T_f - T_i) - rise)}


def regnault_pfaundler_check(sel: Selection) -> tuple[float, float]:
    """Regnault–Pfaundler rise and its standard uncertainty only (the newton-fit cross-check).
    """
    c = _rp_core(sel)
    reading = abs(c["k"]) * c["sigma"] * math.sqrt(c["f_ar"] * c["sel"].main_weights_sq_s2())
    return c["rise"], math.sqrt(c["fit_u"] ** 2 + c["curvature_u"] ** 2 + reading**2)


def newton_rise_only(sel: Selection, previous: MethodOutput) -> float:
    """The newton-fit rise for other periods, warm-started from the fit of ``previous`` (the
    output for nearly the same periods)."""
    t, T = sel.t, sel.T
    fit = fit_newton(t[sel.fore], T[sel.fore], t[sel.after], T[sel.after],
                     start=previous.model)
    theta = T - fit.reference_temperature_K
    return newton_rise(fit, sel.t_i, sel.t_f, sel.integral(theta))[0]


def _dickinson_parts(sel: Selection, x: np.ndarray, T_ref: float, a: _Areas, rule: str,
                     fl: LineFit, al: LineFit) -> tuple[float, float, float, float]:
    """Rise, t_x, T_i, T_f by (1.6) with the equal-area (1.7) or 60 % (1.8) t_x."""
    Tm_i, g_i, Tm_f, g_f = x
    t_i, t_f = sel.t_i, sel.t_f
    if rule == "equal-area":
        _, T_i, T_f, main = _rp_parts(x, T_ref, a)
        t_x = dickinson_exact_tx_s(t_i, t_f, Tm_i, Tm_f, main + Tm_i * a.span)
    else:  # ASTM: temperatures at a and c from the 5-min drift lines
        T_i = Tm_i + g_i * (t_i - fl.t_mean_s)
        T_f = Tm_f + g_f * (t_f - al.t_mean_s)
        t_x = time_at_fraction_s(sel.t, sel.T, t_i, T_i, T_f, 0.60)
    return dickinson_rise_K(t_i, t_f, t_x, T_i, T_f, g_i, g_f), t_x, T_i, T_f


def reduce_dickinson(sel: Selection, dickinson_rule: str = "equal-area") -> MethodOutput:
    """Dickinson (1.6): drift lines extrapolated to ``t_x`` — the exact equal-area time (1.7)
    (end points as in :func:`reduce_regnault_pfaundler`; the result is the RP correction) or
    the 60 % time of the fuel standards (1.8), with the rates over the 5 min before firing and
    after the end of the main period and the temperatures at ``a`` and ``c`` from those lines.
    """
    rule = dickinson_rule
    window = RATE_WINDOW_S if rule == "60-percent" else None
    sel, fl, al, sigma, rho, dw, f_ar, cov, x0 = _prepare_lines(sel, window)
    T_ref = fl.T_mean_K
    u = sel.T - T_ref
    Cu = cumulative_trapezoid_K_s(sel.t, u)
    a0 = _areas(sel, u, Cu, sel.t_i, sel.t_f)
    try:
        rise, t_x, T_i, T_f = _dickinson_parts(sel, x0, T_ref, a0, rule, fl, al)
        grad = numeric_gradient(lambda x: _dickinson_parts(sel, x, T_ref, a0, rule, fl, al)[0],
                                x0, _steps(fl, al, sigma))
    except ValueError:
        raise PeriodDetectionError("the 60 % point of the rise is not inside the main period",
                                   path=sel.source_path) from None

    def rise_at(t_i: float, t_f: float) -> float:
        sub = replace(sel, t_i=t_i, t_f=t_f)
        return _dickinson_parts(sub, x0, T_ref, _areas(sel, u, Cu, t_i, t_f), rule, fl, al)[0]

    k = -(al.slope_K_per_s - fl.slope_K_per_s) / (al.T_mean_K - fl.T_mean_K)
    extra = {"drift-curvature": _curvature_u(sel, fl, al, k, (T_f - T_i) - rise)}
    warns: list[str] = []
    if rule == "60-percent":
        # reading noise at the 60 % point moves b: ∂ΔT_c/∂b = g_f − g_i
        j = int(np.clip(np.searchsorted(sel.t, t_x), 1, sel.t.size - 1))
        slope_b = (sel.T[j] - sel.T[j - 1]) / (sel.t[j] - sel.t[j - 1])
        u_b = sigma / abs(slope_b) if slope_b else 0.0
        extra["60-percent-time"] = abs(al.slope_K_per_s - fl.slope_K_per_s) * u_b
        # the shortcut's known deviation from the exact rule (its own drift lines)
        exact = reduce_regnault_pfaundler(sel).rise_K
        extra["shortcut"] = abs(rise - exact) / math.sqrt(3.0)
        warns.append(warning("dickinson-60-percent", f"the 60 % time {t_x:.1f} s gives a rise "
                             f"{(rise - exact) * 1e3:+.4g} mK from the equal-area value "
                             "(the stated uncertainty includes it)"))
        conf = sel.periods.fire_confidence
        if sel.periods.fire_source == "detected" and conf is not None and conf < 0.5:
            warns.append(warning(
                "boundary-uncertain", f"gradual onset (score {conf:.2f}): the heat release may "
                f"start a reading or two before t_i = {sel.periods.fire_time_s:.6g} s, which "
                "moves the 60 % time; give the firing time"))
    return _linear_output(sel, fl, al, rise, grad, sigma, rho, dw, f_ar, cov, t_x, rise_at,
                          T_i, T_f, rule == "equal-area", extra, warns)
