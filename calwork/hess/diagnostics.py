"""Consistency diagnostics of a network fit (METHODS §5.3–5.4).

* residual ``r_j = y_j − (A x̂)_j``; normalised residual ``r_j / u_j``;
* leverage ``h_j = (A cov(x̂) Aᵀ)_jj / u_j²`` and standardised residual
  ``z_j = r_j / √(u_j² − (A cov(x̂) Aᵀ)_jj)``; for uncorrelated rows ``z_j²`` is exactly
  the drop of χ² when row j is removed (leave-one-out identity), so the largest ``|z_j|``
  names the determination whose removal most improves consistency; ``h_j → 1`` means the
  row is the only source of something and cannot be tested (``z_j`` is then ``None``);
* χ² = ‖L⁻¹ r‖², ν = m − rank, p-value from χ²_ν, Birge ratio √(χ²/ν).

The worst-offender procedure is "in the spirit of" the published iterative worst-offender
analysis of thermochemical networks (Ruscic et al., J. Phys. Chem. A 108 (2004) 9979; the
details of the published algorithm were not available, so this is calwork's own variant):
rank by |z| (|r/u| where leverages are not computed), remove (for the report) or inflate
(for the adjusted solution) the worst, re-solve, repeat while it exceeds the threshold.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

from calwork.hess.wls import LinearSolution

__all__ = [
    "Consistency",
    "Inflation",
    "Offender",
    "Residual",
    "consistency",
    "inflate_until_consistent",
    "residuals",
    "worst_offender_order",
]


@dataclass(frozen=True, kw_only=True)
class Residual:
    """Diagnostics of one row of the network."""

    id: str
    kind: str
    equation: str
    measured_kJ_per_mol: float
    u_kJ_per_mol: float
    fitted_kJ_per_mol: float
    residual_kJ_per_mol: float
    normalised: float
    leverage: float | None
    standardised: float | None

    def to_dict(self) -> dict[str, object]:
        return dict(self.__dict__)

    @property
    def score(self) -> float | None:
        """|z| where it is testable; |r/u| when leverage is not available."""
        if self.leverage is None:
            return abs(self.normalised)
        return None if self.standardised is None else abs(self.standardised)


@dataclass(frozen=True, kw_only=True)
class Consistency:
    chi2: float
    dof: int
    p_value: float | None
    birge_ratio: float | None


@dataclass(frozen=True, kw_only=True)
class Offender:
    """One step of the worst-offender ordering."""

    step: int
    id: str
    score: float
    chi2_before: float
    chi2_after: float

    def to_dict(self) -> dict[str, object]:
        return dict(self.__dict__)


@dataclass(frozen=True, kw_only=True)
class Inflation:
    """One down-weighting step: ``id``'s standard uncertainty went from ``old_u`` to ``new_u``."""

    step: int
    id: str
    old_u_kJ_per_mol: float
    new_u_kJ_per_mol: float
    score: float

    def to_dict(self) -> dict[str, object]:
        return dict(self.__dict__)


def residuals(ids: Sequence[str], kinds: Sequence[str], equations: Sequence[str],
              y: np.ndarray, u: np.ndarray, sol: LinearSolution) -> list[Residual]:
    """Residual records of every row."""
    r = y - sol.fitted
    out = []
    for j, rid in enumerate(ids):
        lev = z = None
        if sol.fit_variance is not None:
            fv = float(sol.fit_variance[j])
            lev = fv / u[j] ** 2
            var = u[j] ** 2 - fv
            z = float(r[j] / math.sqrt(var)) if var > 1e-9 * u[j] ** 2 else None
        out.append(Residual(
            id=rid, kind=kinds[j], equation=equations[j], measured_kJ_per_mol=float(y[j]),
            u_kJ_per_mol=float(u[j]), fitted_kJ_per_mol=float(sol.fitted[j]),
            residual_kJ_per_mol=float(r[j]), normalised=float(r[j] / u[j]),
            leverage=lev, standardised=z,
        ))
    return out


def consistency(sol: LinearSolution, m: int) -> Consistency:
    """χ², degrees of freedom, p-value and Birge ratio."""
    chi2 = float(np.sum(sol.whitened_residual**2))
    dof = m - sol.rank
    if dof <= 0:
        return Consistency(chi2=chi2, dof=dof, p_value=None, birge_ratio=None)
    return Consistency(chi2=chi2, dof=dof, p_value=float(stats.chi2.sf(chi2, dof)),
                       birge_ratio=math.sqrt(chi2 / dof))


def _worst(records: Sequence[Residual], eligible: set[str]) -> Residual | None:
    scored = [rec for rec in records if rec.id in eligible and rec.score is not None]
    if not scored:
        return None
    # ties broken by id so the order does not depend on the order of the rows
    return max(scored, key=lambda rec: (round(rec.score, 9), rec.id))


def worst_offender_order(
    solve: Callable[[np.ndarray, np.ndarray], tuple[list[Residual], Consistency]],
    u: np.ndarray,
    ids: Sequence[str],
    eligible: set[str],
    *,
    threshold: float,
    max_steps: int,
) -> list[Offender]:
    """Remove the worst-scoring row and re-solve, until all scores ≤ ``threshold``.

    ``solve(keep_mask, u)`` re-solves with the rows of ``keep_mask`` and returns their
    residual records and the consistency.
    """
    keep = np.ones(len(ids), dtype=bool)
    order: list[Offender] = []
    records, cons = solve(keep, u)
    for step in range(1, max_steps + 1):
        worst = _worst(records, eligible)
        if worst is None or worst.score <= threshold:
            break
        keep[ids.index(worst.id)] = False
        if keep.sum() == 0:
            break
        new_records, new_cons = solve(keep, u)
        order.append(Offender(step=step, id=worst.id, score=float(worst.score),
                              chi2_before=cons.chi2, chi2_after=new_cons.chi2))
        records, cons = new_records, new_cons
    return order


def inflate_until_consistent(
    solve: Callable[[np.ndarray, np.ndarray], tuple[list[Residual], Consistency]],
    u: np.ndarray,
    ids: Sequence[str],
    eligible: set[str],
    *,
    threshold: float,
    factor: float,
    max_steps: int,
) -> tuple[np.ndarray, list[Inflation]]:
    """Multiply the worst row's u by ``factor`` and re-solve until every score ≤ threshold.

    Returns the adjusted uncertainties and the record of every change.
    """
    u = np.array(u, dtype=float)
    keep = np.ones(len(ids), dtype=bool)
    log: list[Inflation] = []
    for step in range(1, max_steps + 1):
        records, _ = solve(keep, u)
        worst = _worst(records, eligible)
        if worst is None or worst.score <= threshold:
            break
        j = ids.index(worst.id)
        old = float(u[j])
        u[j] = old * factor
        log.append(Inflation(step=step, id=worst.id, old_u_kJ_per_mol=old,
                             new_u_kJ_per_mol=float(u[j]), score=float(worst.score)))
    return u, log
