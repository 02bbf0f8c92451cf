"""Exact reaction algebra: which multiples of given reactions make a target (Hess's law).

:func:`combine` solves ``Σ λ_i r_i = target`` over the species exactly, with rational
Gaussian elimination (no floating point), so a multiplier of 1/3 stays 1/3. It refuses to
guess: if the target is not a combination, or the multipliers are not unique, it raises
:class:`~calwork.core.errors.CombinationError` naming what is missing or the free directions.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from types import MappingProxyType

import numpy as np

from calwork.core.errors import CombinationError, UncertaintyError
from calwork.hess.equations import format_coefficient
from calwork.hess.reactions import Reaction, stoichiometry_text
from calwork.hess.species import Species

__all__ = ["Combination", "combine", "nullspace", "rref", "solve_exact"]


def rref(matrix: list[list[Fraction]]) -> tuple[list[list[Fraction]], list[int]]:
    """Reduced row-echelon form of a rational matrix and its pivot columns."""
    a = [list(row) for row in matrix]
    rows = len(a)
    cols = len(a[0]) if rows else 0
    pivots: list[int] = []
    r = 0
    for c in range(cols):
        pivot = next((i for i in range(r, rows) if a[i][c] != 0), None)
        if pivot is None:
            continue
        a[r], a[pivot] = a[pivot], a[r]
        inv = 1 / a[r][c]
        a[r] = [v * inv for v in a[r]]
        for i in range(rows):
            if i != r and a[i][c] != 0:
                f = a[i][c]
                a[i] = [vi - f * vr for vi, vr in zip(a[i], a[r], strict=True)]
        pivots.append(c)
        r += 1
        if r == rows:
            break
    return a, pivots


def nullspace(matrix: list[list[Fraction]], ncols: int) -> list[list[Fraction]]:
    """Basis of the right null space of a rational matrix (each vector with ``ncols`` entries)."""
    if not matrix:
        return [[Fraction(int(i == j)) for i in range(ncols)] for j in range(ncols)]
    reduced, pivots = rref(matrix)
    free = [c for c in range(ncols) if c not in pivots]
    basis = []
    for f in free:
        v = [Fraction(0)] * ncols
        v[f] = Fraction(1)
        for row, p in enumerate(pivots):
            v[p] = -reduced[row][f]
        basis.append(v)
    return basis


def solve_exact(
    matrix: list[list[Fraction]], rhs: list[Fraction]
) -> tuple[list[Fraction] | None, list[list[Fraction]]]:
    """Solve ``M x = b`` exactly: a particular solution (``None`` if inconsistent) and the
    null-space basis of ``M`` (empty when the solution is unique)."""
    ncols = len(matrix[0]) if matrix else 0
    augmented = [[*row, b] for row, b in zip(matrix, rhs, strict=True)]
    reduced, pivots = rref(augmented)
    if ncols in pivots:
        return None, nullspace(matrix, ncols)
    x = [Fraction(0)] * ncols
    for row, p in enumerate(pivots):
        x[p] = reduced[row][ncols]
    return x, nullspace(matrix, ncols)


@dataclass(frozen=True, kw_only=True)
class Combination:
    """The result of :func:`combine`.

    Attributes
    ----------
    target
        The target equation (canonical text).
    multipliers
        Reaction id → exact multiplier (zero multipliers omitted).
    reaction
        The summed reaction, with Δ_rH and its propagated standard uncertainty.
    delta_r_H_kJ_per_mol, u_delta_r_H_kJ_per_mol
        The same numbers, for convenience.
    steps
        The worked record: each scaled reaction, the running sum with the species that
        cancelled, and the result (lines of text to paste into a report).
    """

    target: str
    multipliers: Mapping[str, Fraction]
    reaction: Reaction
    delta_r_H_kJ_per_mol: float | None
    u_delta_r_H_kJ_per_mol: float | None
    steps: tuple[str, ...] = ()
    covariance_used: bool = False
    budget: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "multipliers", MappingProxyType(dict(self.multipliers)))
        object.__setattr__(self, "budget", MappingProxyType(dict(self.budget)))
        object.__setattr__(self, "steps", tuple(self.steps))

    def to_dict(self) -> dict[str, object]:
        return {
            "target": self.target,
            "multipliers": {k: format_coefficient(v) for k, v in self.multipliers.items()},
            "delta_r_H_kJ_per_mol": self.delta_r_H_kJ_per_mol,
            "u_delta_r_H_kJ_per_mol": self.u_delta_r_H_kJ_per_mol,
            "steps": list(self.steps),
            "covariance_used": self.covariance_used,
            "budget": dict(self.budget),
        }

    def report(self) -> str:
        return "\n".join(self.steps)


def _as_reaction(value: Reaction | str, default_id: str) -> Reaction:
    if isinstance(value, Reaction):
        return value
    return Reaction.from_equation(value, id=default_id)


def _direction_text(vector: list[Fraction], ids: Sequence[str]) -> str:
    terms = []
    for c, rid in zip(vector, ids, strict=True):
        if c == 0:
            continue
        mag = abs(c)
        coef = "" if mag == 1 else f"{format_coefficient(mag)}×"
        terms.append(("- " if c < 0 else "+ ") + f"{coef}[{rid}]")
    text = " ".join(terms)
    return (text[2:] if text.startswith("+ ") else text) + " = 0"


def _covariance_matrix(
    reactions: Sequence[Reaction], covariance: Mapping[tuple[str, str], float] | np.ndarray | None
) -> np.ndarray:
    n = len(reactions)
    if isinstance(covariance, np.ndarray):
        cov = np.asarray(covariance, dtype=float)
        if cov.shape != (n, n):
            raise CombinationError(f"covariance must be {n}×{n}", found=cov.shape)
        return cov
    cov = np.zeros((n, n))
    for i, r in enumerate(reactions):
        cov[i, i] = (r.u_delta_r_H_kJ_per_mol or 0.0) ** 2
    if covariance:
        index = {r.id: i for i, r in enumerate(reactions)}
        for (a, b), value in covariance.items():
            if a not in index or b not in index:
                raise CombinationError("covariance names an unknown reaction id", found=(a, b))
            cov[index[a], index[b]] = cov[index[b], index[a]] = float(value)
    return cov


def combine(
    target: Reaction | str,
    reactions: Sequence[Reaction | str],
    *,
    covariance: Mapping[tuple[str, str], float] | np.ndarray | None = None,
) -> Combination:
    """Find the multipliers λ with ``Σ λ_i r_i = target`` and sum the enthalpies.

    Parameters
    ----------
    target
        The wanted reaction (a :class:`Reaction` or an equation).
    reactions
        The known reactions (ids should be distinct; equations get ``r1``, ``r2``, …).
    covariance
        Covariance of the reactions' Δ_rH in (kJ/mol)²: a full matrix in the order of
        ``reactions``, or off-diagonal entries ``{(id_a, id_b): cov}`` (the diagonal comes
        from each reaction's standard uncertainty).

    Returns
    -------
    Combination
        ``u²(Δ_rH) = λᵀ V λ`` (JCGM 100 law of propagation for a linear model).

    Raises
    ------
    CombinationError
        If the target is not a combination (names the species that cannot be matched) or
        the multipliers are not unique (names the free directions ``Σ μ_i r_i = 0``).
    """
    tgt = _as_reaction(target, "target")
    rs = [_as_reaction(r, f"r{i + 1}") for i, r in enumerate(reactions)]
    if not rs:
        raise CombinationError("no reactions to combine")
    ids = [r.id or f"r{i + 1}" for i, r in enumerate(rs)]
    if len(set(ids)) != len(ids):
        raise CombinationError("reaction ids must be distinct", found=ids)
    species: list[Species] = []
    for r in [tgt, *rs]:
        species.extend(sp for sp in r.stoichiometry if sp not in species)
    matrix = [[r.stoichiometry.get(sp, Fraction(0)) for r in rs] for sp in species]
    rhs = [tgt.stoichiometry.get(sp, Fraction(0)) for sp in species]
    x, null = solve_exact(matrix, rhs)
    if x is None:
        # which species are left over by the best the span can do: report those the
        # reactions never mention, or otherwise say the span is missing the target
        unmatched = [sp.name for sp in tgt.stoichiometry if all(row == 0 for row in
                     matrix[species.index(sp)])]
        detail = (f"; species in no given reaction: {unmatched}" if unmatched else "")
        raise CombinationError(
            f"target {tgt.equation!r} is not a combination of the given reactions{detail}",
            found=ids,
        )
    if null:
        directions = [_direction_text(v, ids) for v in null]
        raise CombinationError(
            f"target {tgt.equation!r} is a combination, but not a unique one; "
            f"free directions: {'; '.join(directions)}",
            found=ids, directions=directions,
        )
    multipliers = {rid: lam for rid, lam in zip(ids, x, strict=True) if lam != 0}
    lam = np.array([float(v) for v in x])
    known = all(r.delta_r_H_kJ_per_mol is not None for r, v in zip(rs, x, strict=True) if v)
    dh = float(sum(float(v) * r.delta_r_H_kJ_per_mol for r, v in zip(rs, x, strict=True) if v)) \
        if known else None
    cov = _covariance_matrix(rs, covariance)
    have_u = all(r.u_delta_r_H_kJ_per_mol is not None for r, v in zip(rs, x, strict=True) if v)
    u = None
    budget: dict[str, float] = {}
    if have_u:
        var = float(lam @ cov @ lam)
        if not math.isfinite(var) or var < 0:
            raise UncertaintyError("propagated variance is negative or not finite "
                                   "(covariance not positive semidefinite?)", found=var)
        u = math.sqrt(var)
        budget = {rid: abs(float(v)) * math.sqrt(cov[i, i])
                  for i, (rid, v) in enumerate(zip(ids, x, strict=True)) if v}
    summed = Reaction(stoichiometry=tgt.stoichiometry, delta_r_H_kJ_per_mol=dh,
                      u_delta_r_H_kJ_per_mol=u, id=tgt.id or "target",
                      source="Hess combination of " + ", ".join(multipliers),
                      temperature_K=rs[0].temperature_K)
    steps = _worked_steps(rs, ids, x, summed, covariance is not None)
    return Combination(
        target=tgt.equation, multipliers=multipliers, reaction=summed,
        delta_r_H_kJ_per_mol=dh, u_delta_r_H_kJ_per_mol=u, steps=steps,
        covariance_used=covariance is not None, budget=budget,
    )


def _worked_steps(rs: Sequence[Reaction], ids: Sequence[str], x: Sequence[Fraction],
                  summed: Reaction, correlated: bool) -> list[str]:
    lines = ["Hess combination (multiplier × reaction, ΔrH in kJ/mol):"]
    running: dict[Species, Fraction] = {}
    first = True
    for r, rid, lam in zip(rs, ids, x, strict=True):
        if lam == 0:
            continue
        scaled = r.scaled(lam)
        dh = ""
        if scaled.delta_r_H_kJ_per_mol is not None:
            dh = (f"   ΔrH = {format_coefficient(lam)} × ({_fmt(r.delta_r_H_kJ_per_mol)}) = "
                  f"{_fmt(scaled.delta_r_H_kJ_per_mol)}")
        lines.append(f"  {'  ' if first else '+ '}{format_coefficient(lam)} × [{rid}] "
                     f"{scaled.equation}{dh}")
        before = dict(running)
        for sp, c in scaled.stoichiometry.items():
            running[sp] = running.get(sp, Fraction(0)) + c
        cancelled = [sp.name for sp in scaled.stoichiometry
                     if sp in before and running[sp] == 0]
        running = {sp: c for sp, c in running.items() if c != 0}
        if not first:
            note = f"   (cancels: {', '.join(cancelled)})" if cancelled else ""
            lines.append(f"      sum: {stoichiometry_text(running) if running else '0'}{note}")
        first = False
    unc = "" if summed.u_delta_r_H_kJ_per_mol is None else \
        f" ± {_fmt(summed.u_delta_r_H_kJ_per_mol)} (standard uncertainty, " + \
        ("with the given covariance)" if correlated else "uncorrelated inputs)")
    value = "unknown" if summed.delta_r_H_kJ_per_mol is None else \
        _fmt(summed.delta_r_H_kJ_per_mol)
    lines.append(f"  = {summed.equation}   ΔrH = {value}{unc}")
    return lines


def _fmt(value: float | None) -> str:
    if value is None:
        return "?"
    text = f"{value:.6f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text
