"""The result of a network solve: values, covariance, diagnostics, derived reactions."""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from types import MappingProxyType
from typing import Any

import numpy as np

from calwork.core.errors import NetworkError, UncertaintyError
from calwork.core.results import jsonable
from calwork.hess.algebra import nullspace
from calwork.hess.diagnostics import Inflation, Offender, Residual
from calwork.hess.equations import format_coefficient
from calwork.hess.reactions import Reaction
from calwork.hess.species import Species, reference_states, spelling_hint
from calwork.hess.wls import LinearSolution, solve_many_rhs

__all__ = ["DerivedEnthalpy", "NetworkResult", "free_directions", "monte_carlo_check"]

_EXACT_MAX_COLUMNS = 80


def _direction(coeffs: Sequence[tuple[str, Fraction | float]]) -> str:
    parts = []
    for name, c in coeffs:
        if isinstance(c, Fraction):
            text = format_coefficient(abs(c))
        else:
            text = f"{abs(c):.4g}"
        sign = "-" if c < 0 else "+"
        parts.append(f"{sign} {'' if text == '1' else text + ' '}{name}")
    out = " ".join(parts)
    return out[2:] if out.startswith("+ ") else out


def free_directions(sol: LinearSolution, unknowns: Sequence[Species],
                    rows: Sequence[Reaction]) -> list[str]:
    """The combinations of Δ_fH° the data leave free (null-space basis, exact when small).

    Each text ``'X(g) + Y(g)'`` means Δ_fH°(X) and Δ_fH°(Y) can move together (with these
    coefficients) without changing any fitted value.
    """
    out = []
    for comp in sol.components:
        if not comp.null_basis.size:
            continue
        names = [unknowns[c].name for c in comp.columns]
        if comp.columns.size <= _EXACT_MAX_COLUMNS:
            col_species = [unknowns[c] for c in comp.columns]
            matrix = [[rows[r].stoichiometry.get(s, Fraction(0)) for s in col_species]
                      for r in comp.rows]
            out.extend(_direction([(nm, c) for nm, c in zip(names, vec, strict=True) if c != 0])
                       for vec in nullspace(matrix, len(col_species)))
        else:
            for vec in comp.null_basis.T:
                vec = vec / np.abs(vec).max()
                out.append(_direction([(nm, float(c)) for nm, c in zip(names, vec, strict=True)
                                       if abs(c) > 1e-6]))
    return out


def monte_carlo_check(sol: LinearSolution, names: Sequence[str], variances: Mapping[str, float],
                      n_draws: int, seed: int | None, coverage_factor: float) -> dict[str, Any]:
    """Re-solve the network for draws of the inputs from N(y, V) (JCGM 101).

    Draws are made in the whitened space (``yw + ε``, ε ~ N(0, I)), which is the same as
    drawing y from N(y, V). Returns per species the mean, the standard deviation, the
    probabilistically symmetric interval of the coverage of ``k = coverage_factor`` for a
    normal PDF, and the ratio of the Monte Carlo u to the linear one.
    """
    from scipy import stats

    if n_draws < 100:
        raise UncertaintyError("Monte Carlo needs at least 100 draws", found=n_draws)
    cols = [names.index(s) for s in variances]
    if not cols:
        raise UncertaintyError("no determined species for the Monte Carlo check")
    rng = np.random.default_rng(seed)
    m = sol.whitened_y.size
    samples = np.empty((len(cols), n_draws))
    chunk = max(1, min(n_draws, 4_000_000 // max(m, 1)))
    done = 0
    while done < n_draws:
        k = min(chunk, n_draws - done)
        draws = sol.whitened_y[:, None] + rng.standard_normal((m, k))
        samples[:, done:done + k] = solve_many_rhs(sol, draws)[cols]
        done += k
    p = 2 * stats.norm.cdf(coverage_factor) - 1
    lo, hi = np.quantile(samples, [(1 - p) / 2, (1 + p) / 2], axis=1)
    out: dict[str, Any] = {"n": n_draws, "seed": seed, "coverage_probability": p,
                           "species": {}}
    worst = 0.0
    for k, name in enumerate(variances):
        u_lin = math.sqrt(variances[name])
        u_mc = float(np.std(samples[k], ddof=1))
        ratio = u_mc / u_lin if u_lin > 0 else math.nan
        worst = max(worst, abs(ratio - 1))
        out["species"][name] = {
            "mean_kJ_per_mol": float(np.mean(samples[k])), "u_kJ_per_mol": u_mc,
            "low_kJ_per_mol": float(lo[k]), "high_kJ_per_mol": float(hi[k]),
            "u_ratio_mc_to_linear": ratio,
        }
    out["max_relative_difference_u"] = worst
    return out


@dataclass(frozen=True, kw_only=True)
class DerivedEnthalpy:
    """Δ_rH of a reaction computed from the network's Δ_fH° (with propagated uncertainty)."""

    equation: str
    delta_r_H_kJ_per_mol: float
    u_delta_r_H_kJ_per_mol: float
    coverage_factor: float

    @property
    def U_delta_r_H_kJ_per_mol(self) -> float:
        return self.coverage_factor * self.u_delta_r_H_kJ_per_mol

    def to_dict(self) -> dict[str, Any]:
        return {"equation": self.equation, "delta_r_H_kJ_per_mol": self.delta_r_H_kJ_per_mol,
                "u_delta_r_H_kJ_per_mol": self.u_delta_r_H_kJ_per_mol,
                "U_delta_r_H_kJ_per_mol": self.U_delta_r_H_kJ_per_mol,
                "coverage_factor": self.coverage_factor}


@dataclass(frozen=True, kw_only=True, eq=False)
class NetworkResult:
    """Δ_fH° (kJ/mol, 298.15 K) of the network's species with covariance and diagnostics.

    ``values``/``uncertainties`` are ``None`` for species the data do not determine
    (listed in ``undetermined``; ``free_directions`` says how they can move).
    """

    species: tuple[str, ...]
    values: Mapping[str, float | None]
    uncertainties: Mapping[str, float | None]
    covariance_names: tuple[str, ...]
    covariance: np.ndarray
    undetermined: tuple[str, ...]
    free_directions: tuple[str, ...]
    chi2: float
    dof: int
    p_value: float | None
    birge_ratio: float | None
    residuals: tuple[Residual, ...]
    worst_offenders: tuple[Offender, ...]
    inflations: tuple[Inflation, ...]
    monte_carlo: Mapping[str, Any] | None
    coverage_factor: float
    method: str
    key_values_used: tuple[Mapping[str, Any], ...]
    temperature_adjustments: Mapping[str, float] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    solution: LinearSolution | None = field(default=None, repr=False, compare=False)
    unknowns: tuple[Species, ...] = field(default=(), repr=False, compare=False)
    #: (ids, equations, reactions, design matrix, values, u, covariances) of the rows solved,
    #: for :meth:`derivation`
    rows_used: tuple | None = field(default=None, repr=False, compare=False)

    def __post_init__(self) -> None:
        for name in ("values", "uncertainties", "temperature_adjustments"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))

    # --- lookups ----------------------------------------------------------------------------
    def value(self, species: Species | str) -> tuple[float, float]:
        """(Δ_fH°, u) of one species; raises if it is not determined."""
        name = species.name if isinstance(species, Species) else _canonical(species)
        if name not in self.values:
            raise NetworkError(f"{name} is not in the network", found=name)
        v, u = self.values[name], self.uncertainties.get(name)
        if v is None:
            raise NetworkError(f"Δ_fH° of {name} is not determined by the data",
                               found=name,
                               expected=f"free directions: {list(self.free_directions)}")
        if u is None:
            raise NetworkError(f"covariance of {name} was not computed (large network): "
                               "ask for it with covariance_species", found=name)
        return v, u

    def expanded(self, species: Species | str) -> float:
        """Expanded uncertainty U = k u of one species."""
        return self.coverage_factor * self.value(species)[1]

    def reaction_enthalpy(self, equation: str | Reaction) -> DerivedEnthalpy:
        """Δ_rH of any balanced reaction from the fitted Δ_fH°, with its uncertainty.

        Works also when individual species are undetermined, as long as the reaction's
        coefficient vector is orthogonal to the free directions; otherwise raises
        :class:`NetworkError`.
        """
        r = equation if isinstance(equation, Reaction) else Reaction.from_equation(equation)
        sol = self.solution
        if sol is None:
            raise NetworkError("result has no solution attached")
        index = {s: i for i, s in enumerate(self.unknowns)}
        c = np.zeros(len(self.unknowns))
        zero = reference_states()
        for s, coef in r.stoichiometry.items():
            if s in index:
                c[index[s]] += float(coef)
            elif s not in zero:
                hint = spelling_hint(s, [*self.unknowns, *zero])
                raise NetworkError(f"{s.name} is not in the network"
                                   + (f" ({hint})" if hint else ""), found=r.equation)
        if sol.null_projection(c) > 1e-7 * max(1.0, float(np.linalg.norm(c))):
            raise NetworkError(
                f"Δ_rH of {r.equation!r} is not determined by the data",
                expected=f"a reaction orthogonal to the free directions "
                         f"{list(self.free_directions)}")
        value = float(c @ sol.x)
        var = float(sol.covariance_of(c[None, :])[0, 0])
        if not math.isfinite(var) or var <= 0:
            raise UncertaintyError("propagated variance of the reaction is not positive",
                                   found=var)
        return DerivedEnthalpy(equation=r.equation, delta_r_H_kJ_per_mol=value,
                               u_delta_r_H_kJ_per_mol=math.sqrt(var),
                               coverage_factor=self.coverage_factor)

    def derivation(self, equation: str | Reaction) -> Any:
        """How ``equation`` is built from the determinations by Hess's law
        (:class:`calwork.hess.derivation.Derivation`: factors, contributions, what cancels,
        the total with its uncertainty)."""
        from calwork.hess.derivation import derive

        return derive(self, equation)

    # --- output -----------------------------------------------------------------------------
    def to_dict(self) -> dict[str, Any]:
        k = self.coverage_factor
        species = {}
        for name in self.species:
            v, u = self.values[name], self.uncertainties.get(name)
            species[name] = {"delta_f_H_kJ_per_mol": v, "u_delta_f_H_kJ_per_mol": u,
                             "U_delta_f_H_kJ_per_mol": None if u is None else k * u}
        return jsonable({
            "species": species,
            "covariance": {"names": list(self.covariance_names),
                           "matrix": self.covariance.tolist(),
                           "unit": "(kJ/mol)^2"},
            "chi2": self.chi2, "dof": self.dof, "p_value": self.p_value,
            "birge_ratio": self.birge_ratio,
            "residuals": {r.id: r.normalised for r in self.residuals},
            "standardised_residuals": {r.id: r.standardised for r in self.residuals},
            "residual_details": [r.to_dict() for r in self.residuals],
            "worst_offenders": [o.id for o in self.worst_offenders],
            "worst_offender_steps": [o.to_dict() for o in self.worst_offenders],
            "inflations": [i.to_dict() for i in self.inflations],
            "undetermined": list(self.undetermined),
            "free_directions": list(self.free_directions),
            "monte_carlo": self.monte_carlo,
            "coverage_factor": k, "method": self.method,
            "solver": {"method": self.method, "converged": True,
                       "iterations": self.solution.iterations if self.solution else 0},
            "key_values_used": [dict(kv) for kv in self.key_values_used],
            "temperature_adjustments_kJ_per_mol": dict(self.temperature_adjustments),
            "warnings": list(self.warnings),
        })


def _canonical(text: str) -> str:
    from calwork.hess.species import parse_species

    return parse_species(text).name
