"""Hess's law shown: how a target reaction is built from the network's determinations.

The network's value of a target reaction ``c`` (its coefficients over the unknown species) is
``cᵀβ̂`` with ``β̂ = (AᵀWA)⁺AᵀWy`` the weighted least-squares formation enthalpies (``A`` the
rows' coefficients, ``W = Σ⁻¹`` the inverse covariance of the determinations). So

    ΔrH(target) = Σⱼ xⱼ yⱼ   with   x = W A (AᵀWA)⁺ c,

and ``Aᵀx = c``: the factors ``xⱼ`` combine the determinations into the target — Hess's law.
A factor of −1 reverses a reaction (the sign of its ΔrH changes), ½ halves it; species of the
used rows that are not in the target cancel (states kept apart: H2O(l) is not H2O(g)). When
the network determines the target exactly once, the factors are the textbook ones (−1, 2,
½); when it over-determines it, they are the least-squares weights of the routes (docs/
methods.md §5.6). The uncertainty is the network's, from the full covariance.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np

from calwork.core.errors import NetworkError
from calwork.core.results import jsonable

__all__ = ["DERIVATION_MAX_ROWS", "Derivation", "DerivationStep", "derive", "format_factor"]

#: The derivation is formed densely; networks with more determinations than this are refused
#: with a message (their target values are still computed).
DERIVATION_MAX_ROWS = 3000
_TINY = 1e-10


@dataclass(frozen=True)
class DerivationStep:
    """One determination used: ``factor × ΔrH`` is its contribution."""

    id: str
    equation: str
    factor: float
    delta_r_H_kJ_per_mol: float
    contribution_kJ_per_mol: float

    def to_dict(self) -> dict[str, Any]:
        return {"id": self.id, "equation": self.equation, "factor": self.factor,
                "delta_r_H_kJ_per_mol": self.delta_r_H_kJ_per_mol,
                "contribution_kJ_per_mol": self.contribution_kJ_per_mol}


@dataclass(frozen=True)
class Derivation:
    """A target reaction built from the determinations, with its value and uncertainty."""

    equation: str
    steps: tuple[DerivationStep, ...]
    cancelled: tuple[str, ...]
    delta_r_H_kJ_per_mol: float
    u_delta_r_H_kJ_per_mol: float
    #: True when more determinations than needed enter (the factors are least-squares
    #: weights of several routes, not a single chain)
    over_determined: bool
    #: each single route when over-determined: ({row id: factor}, ΔrH by that route alone)
    routes: tuple[tuple[dict[str, float], float], ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return jsonable({
            "equation": self.equation, "derivation": [s.to_dict() for s in self.steps],
            "cancelled": list(self.cancelled),
            "delta_r_H_kJ_per_mol": self.delta_r_H_kJ_per_mol,
            "u_delta_r_H_kJ_per_mol": self.u_delta_r_H_kJ_per_mol,
            "over_determined": self.over_determined,
            "routes": [{"rows": rows, "delta_r_H_kJ_per_mol": value}
                       for rows, value in self.routes]})

    def worked_lines(self) -> list[str]:
        """The sum written out: ``−1 × c: −1 × (−890.3) = 890.3`` …, then the total."""
        lines = [f"{format_factor(s.factor)} × {s.id}: {format_factor(s.factor)} × "
                 f"({s.delta_r_H_kJ_per_mol:.3f}) = {s.contribution_kJ_per_mol:+.3f} kJ/mol"
                 + (" (reversed)" if s.factor < 0 else "") for s in self.steps]
        total = " ".join(f"{s.contribution_kJ_per_mol:+.3f}" for s in self.steps)
        lines.append(f"ΔrH = {total} = {self.delta_r_H_kJ_per_mol:.3f} ± "
                     f"{self.u_delta_r_H_kJ_per_mol:.3f} kJ/mol (u, k = 1)")
        if self.cancelled:
            lines.append("cancelled: " + ", ".join(self.cancelled))
        for rows, value in self.routes:
            terms = " + ".join(f"{format_factor(f)} × {rid}" for rid, f in rows.items())
            lines.append(f"single route {terms}: ΔrH = {value:.3f} kJ/mol")
        return lines


_FRACTIONS = {Fraction(1, 2): "½", Fraction(1, 3): "⅓", Fraction(2, 3): "⅔",
              Fraction(1, 4): "¼", Fraction(3, 4): "¾"}


def format_factor(factor: float) -> str:
    """``−1``, ``2``, ``½``, ``−3/2`` for simple fractions; the decimal otherwise.

    Examples
    --------
    >>> format_factor(-1.0), format_factor(0.5), format_factor(-1.5), format_factor(0.3127)
    ('−1', '½', '−3/2', '0.3127')
    """
    frac = Fraction(factor).limit_denominator(12)
    if abs(float(frac) - factor) > 1e-9 * max(1.0, abs(factor)):
        return f"{factor:.4g}".replace("-", "−")
    sign = "−" if frac < 0 else ""
    frac = abs(frac)
    if frac.denominator == 1:
        return f"{sign}{frac.numerator}"
    return sign + _FRACTIONS.get(frac, f"{frac.numerator}/{frac.denominator}")


def _snap(factor: float) -> float:
    """A factor that is a simple fraction up to rounding (a single route) as that fraction."""
    frac = Fraction(factor).limit_denominator(12)
    return float(frac) if abs(float(frac) - factor) <= 1e-9 * max(1.0, abs(factor)) else factor


def derive(result: Any, target: Any) -> Derivation:
    """The Hess's-law derivation of ``target`` (a :class:`~calwork.hess.reactions.Reaction`
    or an equation) from the network ``result`` was solved from.

    Raises
    ------
    NetworkError
        The target is not determined by the data (the message names the free directions),
        or the network is too large for a dense derivation.
    """
    from calwork.hess.reactions import Reaction
    from calwork.hess.species import reference_states

    data = getattr(result, "rows_used", None)
    if data is None:
        raise NetworkError("this result keeps no rows to derive a target from")
    reaction = target if isinstance(target, Reaction) else Reaction.from_equation(target)
    derived = result.reaction_enthalpy(reaction)  # raises when not determined
    ids, equations, rows, a, y, u, offdiag = data
    m = len(ids)
    if m > DERIVATION_MAX_ROWS:
        raise NetworkError("the network is too large to write out a derivation",
                           found=f"{m} determinations",
                           expected=f"at most {DERIVATION_MAX_ROWS}")
    index = {s: i for i, s in enumerate(result.unknowns)}
    c = np.zeros(len(result.unknowns))
    for s, coef in reaction.stoichiometry.items():
        if s in index:
            c[index[s]] += float(coef)
    A = a.toarray() if hasattr(a, "toarray") else np.asarray(a, dtype=float)
    cov = np.diag(np.asarray(u, dtype=float) ** 2)
    for (i, j), v in offdiag.items():
        cov[i, j] = cov[j, i] = v
    W = np.linalg.inv(cov)
    M = A.T @ W @ A
    x = W @ A @ (np.linalg.pinv(M, rcond=1e-12, hermitian=True) @ c)
    scale = float(np.max(np.abs(x))) if x.size else 0.0
    used = [j for j in range(m) if abs(x[j]) > _TINY * max(scale, 1.0)]
    factors = {j: _snap(float(x[j])) for j in used}
    steps = tuple(DerivationStep(id=ids[j], equation=equations[j], factor=factors[j],
                                 delta_r_H_kJ_per_mol=float(y[j]),
                                 contribution_kJ_per_mol=factors[j] * float(y[j]))
                  for j in used)
    value = math.fsum(s.contribution_kJ_per_mol for s in steps)
    if not math.isclose(value, derived.delta_r_H_kJ_per_mol, rel_tol=1e-8, abs_tol=1e-6):
        raise NetworkError("the derivation does not reproduce the network's value",
                           found=value, expected=derived.delta_r_H_kJ_per_mol)
    # species of the used rows (with the elements) whose net coefficient is zero
    net: dict[Any, float] = {}
    for j in used:
        for s, coef in rows[j].stoichiometry.items():
            net[s] = net.get(s, 0.0) + factors[j] * float(coef)
    for s, coef in reaction.stoichiometry.items():
        net[s] = net.get(s, 0.0) - float(coef)
    zero = reference_states()
    cancelled = tuple(sorted((s.name for s, v in net.items()
                              if abs(v) < 1e-9 and s not in reaction.stoichiometry),
                             key=lambda n: (n in {z.name for z in zero}, n)))
    rank = int(np.linalg.matrix_rank(A[used])) if used else 0
    over = len(used) > rank
    routes = _routes(A, c, used, rank, ids, y) if over else ()
    return Derivation(equation=reaction.equation, steps=steps, cancelled=cancelled,
                      delta_r_H_kJ_per_mol=derived.delta_r_H_kJ_per_mol,
                      u_delta_r_H_kJ_per_mol=derived.u_delta_r_H_kJ_per_mol,
                      over_determined=over, routes=routes)


#: Routes are listed when at most this many determinations enter (the search tries every
#: choice of rank-many rows).
ROUTE_MAX_ROWS = 12


def _routes(A: np.ndarray, c: np.ndarray, used: list[int], rank: int, ids: list[str],
            y: np.ndarray) -> tuple[tuple[dict[str, float], float], ...]:
    """Every single route: a smallest set of the used rows that alone gives the target,
    with its factors and value (when few rows enter)."""
    from itertools import combinations

    if len(used) > ROUTE_MAX_ROWS:
        return ()
    found: dict[frozenset, tuple[dict[str, float], float]] = {}
    for size in range(1, rank + 1):
        for subset in combinations(used, size):
            if any(set(key) <= set(subset) for key in found):
                continue  # a smaller route inside: not a single route
            B = A[list(subset)].T
            x, *_ = np.linalg.lstsq(B, c, rcond=None)
            if np.linalg.norm(B @ x - c) > 1e-9 * max(1.0, float(np.linalg.norm(c))):
                continue
            if np.any(np.abs(x) < _TINY):
                continue
            factors = {ids[j]: _snap(float(f)) for j, f in zip(subset, x, strict=True)}
            value = math.fsum(factors[ids[j]] * float(y[j]) for j in subset)
            found[frozenset(subset)] = (factors, value)
    return tuple(found.values())
