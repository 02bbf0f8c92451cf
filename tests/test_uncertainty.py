"""GUM propagation helpers and Monte Carlo (JCGM 100 / JCGM 101)."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from calwork.core.errors import UncertaintyError
from calwork.core.uncertainty import (
    correlation_from_covariance,
    covariance_from_correlation,
    coverage_factor_t,
    expanded_uncertainty,
    monte_carlo,
    numeric_jacobian,
    propagate,
    propagate_linear,
    standard_uncertainty,
    welch_satterthwaite,
)


def test_linear_propagation_with_correlation():
    # JCGM 100 eq. 13 for y = x1 − x2: u² = u1² + u2² − 2 r u1 u2
    u = np.array([0.3, 0.4])
    cov = covariance_from_correlation(u, np.array([[1.0, 0.5], [0.5, 1.0]]))
    out = propagate_linear([1.0, -1.0], cov)
    assert out[0, 0] == pytest.approx(0.09 + 0.16 - 2 * 0.5 * 0.12)
    assert correlation_from_covariance(cov)[0, 1] == pytest.approx(0.5)


def test_numeric_jacobian_matches_analytic_and_propagate():
    # y = a·b (GUM H.1-like product): relative variances add for uncorrelated inputs
    x = np.array([3.0, 5.0])
    cov = np.diag([0.01, 0.04])
    jac = numeric_jacobian(lambda v: v[0] * v[1], x)
    assert jac == pytest.approx(np.array([[5.0, 3.0]]), rel=1e-8)
    y, uy = propagate(lambda v: v[0] * v[1], x, cov)
    assert y[0] == 15.0
    assert math.sqrt(uy[0, 0]) == pytest.approx(15 * math.sqrt(0.01 / 9 + 0.04 / 25), rel=1e-8)


def test_monte_carlo_agrees_with_linear_for_a_linear_model():
    cov = np.array([[4.0, 1.0], [1.0, 9.0]])
    r = monte_carlo(lambda d: d[:, 0] - 2 * d[:, 1], [1.0, 2.0], cov, n=50_000, seed=11)
    lin = propagate_linear([1.0, -2.0], cov)[0, 0]
    # sd of a sample sd ≈ σ/√(2N): 0.3 % here; 1.5 % is 5σ
    assert r.std[0] == pytest.approx(math.sqrt(lin), rel=0.015)
    assert r.mean[0] == pytest.approx(-3.0, abs=5 * math.sqrt(lin / 50_000))
    # 95 % probabilistically symmetric interval of a normal: mean ± 1.96 σ
    assert r.high[0] - r.low[0] == pytest.approx(2 * 1.959964 * math.sqrt(lin), rel=0.03)
    again = monte_carlo(lambda d: d[:, 0] - 2 * d[:, 1], [1.0, 2.0], cov, n=50_000, seed=11)
    assert again.std[0] == r.std[0]  # seeded: reproducible


def test_monte_carlo_shows_nonlinearity():
    # y = x² at x = 0 ± 1: linear propagation says u = 0; the true sd is √2 (chi-square, 1 dof)
    r = monte_carlo(lambda d: d[:, 0] ** 2, [0.0], [[1.0]], n=40_000, seed=2)
    # s.e. of the sample variance of y = x² (chi-square, 1 dof: μ4 = 60, σ² = 2) over n draws
    # is √((μ4 − σ⁴)/n) = 0.037, i.e. 0.94 % relative on σ; three of them
    assert r.std[0] == pytest.approx(math.sqrt(2), rel=3 * 0.5 * math.sqrt(56 / 40_000) / 2)
    with pytest.raises(UncertaintyError, match="zero"):
        standard_uncertainty(propagate_linear([0.0], [[1.0]])[0, 0])


def test_coverage_factors_and_welch_satterthwaite():
    assert expanded_uncertainty(0.5) == 1.0
    assert coverage_factor_t(math.inf) == pytest.approx(1.959964, abs=1e-6)
    assert coverage_factor_t(5) == pytest.approx(stats.t.ppf(0.975, 5))  # 2.571 (GUM table G.2)
    assert coverage_factor_t(5) == pytest.approx(2.571, abs=1e-3)
    # GUM G.4.1 with one contribution: ν_eff = ν
    assert welch_satterthwaite([0.3], [7]) == pytest.approx(7)
    # two equal contributions with ν = 5 each: ν_eff = (2u²)²/(2u⁴/5) = 10
    assert welch_satterthwaite([1.0, 1.0], [5, 5]) == pytest.approx(10)
    assert welch_satterthwaite([1.0, 1.0], [math.inf, math.inf]) == math.inf


def test_bad_inputs_raise_uncertainty_error():
    with pytest.raises(UncertaintyError):
        propagate_linear([1.0, 1.0], [[1.0, 2.0], [0.0, 1.0]])  # not symmetric
    with pytest.raises(UncertaintyError):
        expanded_uncertainty(0.0)
    with pytest.raises(UncertaintyError):
        covariance_from_correlation([1.0, 1.0], np.array([[1.0, 1.5], [1.5, 1.0]]))
    with pytest.raises(UncertaintyError):
        standard_uncertainty(float("nan"))
