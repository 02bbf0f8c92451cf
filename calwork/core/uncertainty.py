"""Uncertainty propagation: the GUM law of propagation and the Monte Carlo method.

* Linear propagation (JCGM 100:2008, GUM §5): ``u²(y) = cᵀ U_x c`` for one output and
  ``U_y = J U_x Jᵀ`` for several, with sensitivities from an analytic Jacobian or central
  differences (:func:`numeric_jacobian`).
* Monte Carlo (JCGM 101:2008, GUM Supplement 1): draw the inputs from their joint PDF
  (multivariate normal here), evaluate the model, summarise by mean, standard deviation,
  covariance and the probabilistically symmetric coverage interval.
* Coverage: ``U = k u``; ``k`` from Student's t for ν effective degrees of freedom
  (Welch–Satterthwaite, GUM G.4).

A propagation that cannot give a finite positive-semidefinite answer raises
:class:`~calwork.core.errors.UncertaintyError`; a zero is never reported instead.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np

from calwork.core.errors import UncertaintyError

__all__ = [
    "Budget",
    "Component",
    "MonteCarloResult",
    "correlation_from_covariance",
    "covariance_from_correlation",
    "coverage_factor_t",
    "expanded_uncertainty",
    "monte_carlo",
    "numeric_gradient",
    "numeric_jacobian",
    "propagate",
    "propagate_gradient",
    "propagate_linear",
    "root_sum_square",
    "standard_uncertainty",
    "variance_component",
    "welch_satterthwaite",
]


def _as_covariance(covariance: Sequence[Sequence[float]] | np.ndarray, n: int) -> np.ndarray:
    cov = np.atleast_2d(np.asarray(covariance, dtype=float))
    if cov.shape == (1, n) and n > 1:  # a vector of variances
        cov = np.diag(cov[0])
    if cov.shape != (n, n):
        raise UncertaintyError(f"covariance must be {n}×{n}", found=cov.shape)
    if not np.all(np.isfinite(cov)):
        raise UncertaintyError("covariance has non-finite entries")
    if not np.allclose(cov, cov.T, rtol=1e-10, atol=1e-300):
        raise UncertaintyError("covariance must be symmetric")
    return cov


def covariance_from_correlation(u: Sequence[float], correlation: np.ndarray) -> np.ndarray:
    """``U_ij = r_ij u_i u_j`` (GUM eq. 14)."""
    u = np.asarray(u, dtype=float)
    r = np.asarray(correlation, dtype=float)
    if r.shape != (u.size, u.size):
        raise UncertaintyError(f"correlation must be {u.size}×{u.size}", found=r.shape)
    if np.any(np.abs(r) > 1 + 1e-12) or not np.allclose(np.diag(r), 1):
        raise UncertaintyError("correlation coefficients must lie in [-1, 1] with 1 on the "
                               "diagonal")
    return r * np.outer(u, u)


def correlation_from_covariance(covariance: np.ndarray) -> np.ndarray:
    """``r_ij = U_ij / (u_i u_j)``; raises if a variance is not positive."""
    cov = np.asarray(covariance, dtype=float)
    d = np.sqrt(np.diag(cov))
    if np.any(~np.isfinite(d)) or np.any(d <= 0):
        raise UncertaintyError("correlation needs positive variances", found=np.diag(cov))
    return cov / np.outer(d, d)


def standard_uncertainty(variance: float, *, name: str = "result") -> float:
    """``√variance`` with checks: a negative, non-finite or zero variance raises."""
    v = float(variance)
    if not math.isfinite(v) or v < -1e-300:
        raise UncertaintyError(f"variance of {name} is negative or not finite", found=v)
    if v <= 0:
        raise UncertaintyError(f"propagated uncertainty of {name} is zero: an input "
                               "uncertainty is missing", found=v)
    return math.sqrt(v)


#: Relative size below which a negative computed variance is rounding error of a zero one.
ROUNDING_RTOL = 1e-10


def variance_component(variance: float, *, magnitude: float, name: str = "component") -> float:
    """A variance that may legitimately be zero (one component of a budget), checked.

    ``magnitude`` is the size of the terms whose sum gave ``variance`` (e.g. ``|g|ᵀ|Σ||g|``
    for a quadratic form, or the larger of two variances subtracted). A negative value within
    :data:`ROUNDING_RTOL` of it is the rounding error of a zero variance and returns 0; a
    clearly negative or non-finite variance raises — it is never clamped.
    """
    v = float(variance)
    if not math.isfinite(v):
        raise UncertaintyError(f"variance of {name} is not finite", found=v)
    if v < 0:
        if v < -ROUNDING_RTOL * abs(float(magnitude)):
            raise UncertaintyError(f"variance of {name} is negative", found=v,
                                   expected="a non-negative variance")
        return 0.0
    return v



def root_sum_square(components: Mapping[str, float] | Iterable[float], *,
                    name: str = "result", allow_zero: bool = True) -> float:
    """``√Σ c²`` of uncorrelated uncertainty contributions (GUM eq. 10 with the sensitivities
    already applied).

    Raises
    ------
    UncertaintyError
        A contribution is negative or not finite (it is never clamped or dropped), or, with
        ``allow_zero=False``, the total is zero (an uncertainty is never reported as zero).
    """
    items = components.items() if isinstance(components, Mapping) else enumerate(components)
    total = 0.0
    for key, value in items:
        v = float(value)
        if not (math.isfinite(v) and v >= 0.0):
            raise UncertaintyError(f"uncertainty component {key!r} of {name} could not be "
                                   "evaluated", found=v, expected="a finite, non-negative value")
        total += v * v
    if not allow_zero and total <= 0.0:
        raise UncertaintyError(f"the propagated uncertainty of {name} is zero",
                               found=dict(components) if isinstance(components, Mapping)
                               else list(components))
    return math.sqrt(total)


def propagate_gradient(gradient: Sequence[float] | np.ndarray, covariance: np.ndarray, *,
                       name: str = "result") -> float:
    """``√(gᵀ Σ g)`` for one output (GUM eq. 13), checked: a non-finite variance raises, a
    negative one beyond rounding raises (:func:`variance_component`).

    Examples
    --------
    >>> propagate_gradient([1.0, -1.0], np.array([[4.0, 0.0], [0.0, 9.0]]))
    3.605551275463989
    """
    g = np.asarray(gradient, dtype=float)
    cov = np.asarray(covariance, dtype=float)
    var = float(g @ cov @ g)
    if not math.isfinite(var):
        raise UncertaintyError(f"the covariance behind {name} is not available (not finite)",
                               found=var, expected="a finite variance")
    magnitude = float(np.abs(g) @ np.abs(cov) @ np.abs(g))
    return math.sqrt(variance_component(var, magnitude=magnitude, name=name))


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


@dataclass(frozen=True)
class Component:
    """One component of an uncertainty budget.

    Attributes
    ----------
    name
        What it is (``'scatter'``, ``'certificate'``, ``'fit'`` …).
    value
        Its contribution to the standard uncertainty of the budget's quantity (sensitivity
        applied), in ``unit``; finite and ≥ 0.
    unit
        Unit of ``value`` (that of the quantity, or ``'1'`` for a relative contribution).
    sensitivity
        ``∂y/∂x`` of the quantity with respect to the input, where one applies.
    correlation_key
        Components of different results with the same key are fully correlated (a shared
        calibration, a certificate, a key value); ``None``: independent.
    """

    name: str
    value: float
    unit: str
    sensitivity: float | None = None
    correlation_key: str | None = None

    def __post_init__(self) -> None:
        v = float(self.value)
        if not (math.isfinite(v) and v >= 0.0):
            raise UncertaintyError(f"budget component {self.name!r} is negative or not finite",
                                   found=v, expected="a finite, non-negative contribution")
        object.__setattr__(self, "value", v)

    def to_dict(self) -> dict[str, object]:
        return {"name": self.name, "value": self.value, "unit": self.unit,
                "sensitivity": self.sensitivity, "correlation_key": self.correlation_key}


@dataclass(frozen=True)
class Budget(Mapping[str, float]):
    """An uncertainty budget: the components of ``u(quantity)``, each with its unit.

    Read as a mapping it gives each component's contribution by name (what the JSON output
    and the older readers see); :meth:`total` combines them (uncorrelated, root sum of
    squares); :meth:`unit_of` says what unit a component is in, so that reports never guess
    it from a name.
    """

    quantity: str
    unit: str
    components: tuple[Component, ...] = field(default_factory=tuple)

    def __post_init__(self) -> None:
        comps = tuple(self.components)
        names = [c.name for c in comps]
        if len(set(names)) != len(names):
            raise UncertaintyError(f"budget of {self.quantity} names a component twice",
                                   found=names)
        object.__setattr__(self, "components", comps)

    @classmethod
    def of(cls, quantity: str, unit: str, values: Mapping[str, float], *,
           units: Mapping[str, str] | None = None,
           keys: Mapping[str, str] | None = None) -> Budget:
        """A budget from ``{name: contribution}`` in ``unit`` (``units`` for the exceptions,
        ``keys`` for the correlation keys)."""
        units, keys = units or {}, keys or {}
        return cls(quantity=quantity, unit=unit, components=tuple(
            Component(name=k, value=v, unit=units.get(k, unit), correlation_key=keys.get(k))
            for k, v in values.items()))

    def __getitem__(self, name: str) -> float:
        return self.component(name).value

    def __iter__(self) -> Iterator[str]:
        return (c.name for c in self.components)

    def __len__(self) -> int:
        return len(self.components)

    def component(self, name: str) -> Component:
        for c in self.components:
            if c.name == name:
                return c
        raise KeyError(name)

    def unit_of(self, name: str) -> str:
        """The unit of component ``name``."""
        return self.component(name).unit

    def total(self, *, allow_zero: bool = False) -> float:
        """Root sum of squares of the components in the budget's unit (components in another
        unit, e.g. relative ones, are reported but not summed here)."""
        return root_sum_square({c.name: c.value for c in self.components if c.unit == self.unit},
                               name=self.quantity, allow_zero=allow_zero)

    def with_component(self, name: str, value: float, *, unit: str | None = None,
                       correlation_key: str | None = None) -> Budget:
        """A copy with one more component."""
        extra = Component(name=name, value=value, unit=unit or self.unit,
                          correlation_key=correlation_key)
        return Budget(quantity=self.quantity, unit=self.unit,
                      components=(*self.components, extra))

    def to_dict(self) -> dict[str, object]:
        """The JSON form: quantity, unit and every component with its unit (read back by
        :meth:`from_dict`)."""
        return {"quantity": self.quantity, "unit": self.unit,
                "components": [c.to_dict() for c in self.components]}

    @classmethod
    def from_dict(cls, data: Mapping[str, object]) -> Budget:
        """The budget :meth:`to_dict` wrote. A flat ``{name: value}`` mapping (results
        stored before budgets carried units) is read with the unit ``'(not recorded)'``."""
        if "components" not in data:
            return cls.of("(not recorded)", "(not recorded)",
                          {str(k): float(v) for k, v in data.items()
                           if isinstance(v, int | float) and math.isfinite(v)})
        return cls(quantity=str(data["quantity"]), unit=str(data["unit"]), components=tuple(
            Component(**c) for c in data["components"]))

def propagate_linear(jacobian: np.ndarray, covariance: np.ndarray) -> np.ndarray:
    """Output covariance ``J U_x Jᵀ`` (GUM §5.2, JCGM 102 for vector outputs).

    Parameters
    ----------
    jacobian
        Sensitivities ∂y_i/∂x_j, shape (m, n) (a 1-D array is one output).
    covariance
        Input covariance, (n, n), in the inputs' units squared.

    Examples
    --------
    >>> propagate_linear(np.array([1.0, -1.0]), np.array([[4.0, 1.0], [1.0, 9.0]]))
    array([[11.]])
    """
    j = np.atleast_2d(np.asarray(jacobian, dtype=float))
    cov = _as_covariance(covariance, j.shape[1])
    out = j @ cov @ j.T
    out = 0.5 * (out + out.T)
    if not np.all(np.isfinite(out)) or np.any(np.diag(out) < -1e-12 * max(1.0, np.abs(
            out).max())):
        raise UncertaintyError("propagated covariance is not finite or has negative variances")
    return out


def numeric_jacobian(func: Callable[[np.ndarray], np.ndarray | float], x: Sequence[float],
                     steps: Sequence[float] | None = None) -> np.ndarray:
    """Central-difference Jacobian of ``func`` at ``x`` (steps default to 1e-6·max(|x|, 1))."""
    x = np.asarray(x, dtype=float)
    h = np.asarray(steps, dtype=float) if steps is not None else 1e-6 * np.maximum(
        np.abs(x), 1.0)
    cols = []
    for i in range(x.size):
        e = np.zeros_like(x)
        e[i] = h[i]
        cols.append((np.atleast_1d(func(x + e)) - np.atleast_1d(func(x - e))) / (2 * h[i]))
    return np.column_stack(cols)


def propagate(func: Callable[[np.ndarray], np.ndarray | float], x: Sequence[float],
              covariance: np.ndarray, *, jacobian: np.ndarray | None = None
              ) -> tuple[np.ndarray, np.ndarray]:
    """Value and covariance of ``func(x)`` by the law of propagation (first order)."""
    x = np.asarray(x, dtype=float)
    y = np.atleast_1d(np.asarray(func(x), dtype=float))
    j = numeric_jacobian(func, x) if jacobian is None else np.atleast_2d(jacobian)
    return y, propagate_linear(j, covariance)


def expanded_uncertainty(u: float, k: float = 2.0) -> float:
    """``U = k u`` (GUM §6); ``k = 2`` gives about 95 % coverage for a normal PDF."""
    if not (math.isfinite(u) and u > 0):
        raise UncertaintyError("standard uncertainty must be finite and > 0", found=u)
    if not k > 0:
        raise UncertaintyError("coverage factor must be > 0", found=k)
    return k * u


def welch_satterthwaite(contributions: Sequence[float], dof: Sequence[float]) -> float:
    """Effective degrees of freedom ``ν_eff = u⁴ / Σ (u_i⁴/ν_i)`` (GUM G.4.1).

    ``contributions`` are the |c_i| u(x_i); an infinite ν_i contributes nothing.
    """
    c = np.asarray(contributions, dtype=float)
    nu = np.asarray(dof, dtype=float)
    total = float(np.sum(c**2)) ** 2
    finite = np.isfinite(nu)
    if np.any(nu[finite] <= 0):
        raise UncertaintyError("degrees of freedom must be > 0", found=nu)
    denom = float(np.sum(c[finite] ** 4 / nu[finite]))
    return math.inf if denom == 0 else total / denom


def coverage_factor_t(dof: float, coverage: float = 0.95) -> float:
    """Two-sided Student-t coverage factor for ``dof`` degrees of freedom (GUM G.3)."""
    if not 0 < coverage < 1:
        raise UncertaintyError("coverage probability must be in (0, 1)", found=coverage)
    if math.isinf(dof):
        from scipy import stats  # imported on first use: core stays light

        return float(stats.norm.ppf(0.5 + coverage / 2))
    from scipy import stats

    return float(stats.t.ppf(0.5 + coverage / 2, dof))


@dataclass(frozen=True, kw_only=True)
class MonteCarloResult:
    """Summary of a Monte Carlo propagation (JCGM 101 §7)."""

    mean: np.ndarray
    std: np.ndarray
    covariance: np.ndarray
    low: np.ndarray
    high: np.ndarray
    coverage: float
    n: int
    seed: int | None

    def to_dict(self) -> dict[str, object]:
        return {
            "mean": self.mean.tolist(), "std": self.std.tolist(),
            "covariance": self.covariance.tolist(), "low": self.low.tolist(),
            "high": self.high.tolist(), "coverage": self.coverage, "n": self.n,
            "seed": self.seed,
        }

    def report(self) -> str:
        lines = [(f"Monte Carlo (JCGM 101), {self.n} draws, seed {self.seed}, "
                 f"{self.coverage:.0%} probabilistically symmetric interval:")]
        for i, (m, s, lo, hi) in enumerate(zip(self.mean, self.std, self.low, self.high,
                                               strict=True)):
            lines.append(f"  y{i}: {m:.6g} ± {s:.3g}  [{lo:.6g}, {hi:.6g}]")
        return "\n".join(lines)


def monte_carlo(func: Callable[[np.ndarray], np.ndarray], mean: Sequence[float],
                covariance: np.ndarray, *, n: int = 100_000, seed: int | None = None,
                coverage: float = 0.95, vectorized: bool = True,
                rng: np.random.Generator | None = None) -> MonteCarloResult:
    """Propagate a multivariate-normal input PDF through ``func`` by sampling.

    Parameters
    ----------
    func
        The model. With ``vectorized=True`` it takes an (n_draws, n_inputs) array and returns
        (n_draws,) or (n_draws, n_outputs); otherwise it is called once per draw.
    mean, covariance
        Input estimates and covariance.
    n
        Number of draws (JCGM 101 suggests 10⁶ for a 95 % interval; fewer for a check).
    seed
        Seed of ``np.random.default_rng`` (reproducible results).
    coverage
        Coverage probability of the reported interval.

    Examples
    --------
    >>> r = monte_carlo(lambda x: x[:, 0] - x[:, 1], [1.0, 0.0], np.eye(2), n=20000, seed=1)
    >>> round(float(r.std[0]), 1)
    1.4
    """
    if n < 2:
        raise UncertaintyError("Monte Carlo needs at least 2 draws", found=n)
    mu = np.asarray(mean, dtype=float)
    cov = _as_covariance(covariance, mu.size)
    gen = rng if rng is not None else np.random.default_rng(seed)
    draws = gen.multivariate_normal(mu, cov, size=n, method="eigh")
    if vectorized:
        y = np.asarray(func(draws), dtype=float)
    else:
        y = np.array([np.atleast_1d(func(row)) for row in draws], dtype=float)
    if y.ndim == 1:
        y = y[:, None]
    if y.shape[0] != n:
        raise UncertaintyError("model returned the wrong number of draws", found=y.shape)
    if not np.all(np.isfinite(y)):
        raise UncertaintyError("model returned non-finite values for some draws")
    alpha = (1 - coverage) / 2
    return MonteCarloResult(
        mean=y.mean(axis=0), std=y.std(axis=0, ddof=1),
        covariance=np.atleast_2d(np.cov(y, rowvar=False)),
        low=np.quantile(y, alpha, axis=0), high=np.quantile(y, 1 - alpha, axis=0),
        coverage=coverage, n=n, seed=seed,
    )
