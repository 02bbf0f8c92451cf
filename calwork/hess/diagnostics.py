"""Consistency diagnostics of a network fit (docs/methods.md §5.3–5.4).

* residual ``r_j = y_j − (A x̂)_j``; normalised residual ``r_j / u_j``;
* leverage ``h_j = (A cov(x̂) Aᵀ)_jj / u_j²`` and standardised residual
  ``z_j = r_j / √(u_j² − (A cov(x̂) Aᵀ)_jj)``; for uncorrelated rows ``z_j²`` is exactly
  the drop of χ² when row j is removed (leave-one-out identity), so the largest ``|z_j|``
  names the determination whose removal most improves consistency; ``h_j → 1`` means the
  row is the only source of something and cannot be tested (``z_j`` is then ``None``);
* χ² = ‖L⁻¹ r‖², ν = m − rank, p-value from χ²_ν, Birge ratio √(χ²/ν).

The worst-offender procedure follows the published iterative worst-offender analysis of
thermochemical networks (Ruscic et al., J. Phys. Chem. A 108 (2004) 9979; docs/methods.md §5.4):
candidates are ranked by the normalised residual |r/u|; the worst is removed (for the
report) or its u widened in small steps (for the adjusted solution) and the network
re-solved, until every determination agrees within its uncertainty. Key values and rows
marked as anchors are never candidates: a conflict with one of them is reported as such.
Where the data cannot tell two candidates apart (their standardised residuals tie: each is
the other's only check), the record says so instead of silently picking one.
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
    "Screening",
    "anchor_conflicts",
    "anchor_label",
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
class _Step:
    """What every worst-offender step records about the row it acted on."""

    step: int
    id: str
    #: |r/u| of the row when it was acted on
    score: float
    #: eligible rows the data cannot tell apart from this one (same |z|)
    indistinguishable_from: tuple[str, ...] = ()
    #: anchors (key values) that tie with this row: the conflict is with them
    conflicts_with: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, object]:
        d = dict(self.__dict__)
        d["indistinguishable_from"] = list(self.indistinguishable_from)
        d["conflicts_with"] = list(self.conflicts_with)
        return d


@dataclass(frozen=True, kw_only=True)
class Offender(_Step):
    """One step of the worst-offender ordering (the row removed)."""

    #: |z| (standardised residual) of the row when it was named
    z: float
    chi2_before: float
    chi2_after: float

    def describe(self) -> str:
        """One readable sentence for reports and terminal output."""
        text = (f"{self.id} (|r/u| {self.score:.2f}, "
                f"χ² {self.chi2_before:.3g} → {self.chi2_after:.3g})")
        if self.conflicts_with:
            text += " — conflicts with " + ", ".join(anchor_label(a)
                                                     for a in self.conflicts_with)
        if self.indistinguishable_from:
            text += " — the data cannot tell it apart from " + ", ".join(
                self.indistinguishable_from)
        return text


@dataclass(frozen=True, kw_only=True)
class Inflation(_Step):
    """One down-weighting step: ``id``'s standard uncertainty went from ``old_u`` to ``new_u``."""

    old_u_kJ_per_mol: float
    new_u_kJ_per_mol: float


def anchor_label(row_id: str) -> str:
    """How an anchor row is named in messages: a bundled key value or a user's anchor."""
    if row_id.startswith("key:"):
        return f"the key value of {row_id[4:]}"
    return f"the anchor {row_id}"


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


#: Standardised residuals equal within this relative tolerance cannot be told apart.
_TIE_RTOL = 1e-6


@dataclass(frozen=True, kw_only=True)
class _Pick:
    worst: Residual
    ties: tuple[str, ...]
    conflicts: tuple[str, ...]


def _testable(rec: Residual) -> bool:
    return rec.score is not None


def _pick_worst(records: Sequence[Residual], eligible: set[str]) -> _Pick | None:
    """The eligible row with the largest |r/u|, with the rows it cannot be told apart from.

    Rows not in ``eligible`` (key values, anchors) are never picked; if one ties with the
    pick (same |z|: the two are each other's only check), it is returned in ``conflicts``.
    """
    scored = [rec for rec in records if rec.id in eligible and _testable(rec)]
    if not scored:
        return None
    worst = max(scored, key=lambda rec: (abs(rec.normalised), rec.score))
    ties: list[str] = []
    conflicts: list[str] = []
    if worst.standardised is not None:
        z0 = abs(worst.standardised)
        for rec in records:
            if rec.id == worst.id or rec.standardised is None:
                continue
            if abs(abs(rec.standardised) - z0) <= _TIE_RTOL * max(z0, 1e-300):
                (ties if rec.id in eligible else conflicts).append(rec.id)
    return _Pick(worst=worst, ties=tuple(ties), conflicts=tuple(conflicts))


def _consistent(records: Sequence[Residual], eligible: set[str], threshold: float) -> bool:
    return all(rec.score <= threshold for rec in records
               if rec.id in eligible and _testable(rec))


def anchor_conflicts(records: Sequence[Residual], anchors: set[str],
                     threshold: float) -> list[str]:
    """Anchors (key values) whose |z| exceeds the threshold, as readable warnings."""
    return [f"{rec.id} (an anchor, never adjusted) disagrees with the rest of the network: "
            f"|z| = {rec.score:.2f} > {threshold:g}"
            for rec in records
            if rec.id in anchors and _testable(rec) and rec.score > threshold]


@dataclass(frozen=True, kw_only=True)
class Screening:
    """What the worst-offender procedures work on.

    ``solve(keep_mask, u)`` re-solves the network with the rows of ``keep_mask`` and the
    standard uncertainties ``u`` and returns the rows' residual records and the consistency;
    ``u`` and ``ids`` are the rows' uncertainties and ids; only ``eligible`` rows may be
    removed or widened (never key values or anchors).
    """

    solve: Callable[[np.ndarray, np.ndarray], tuple[list[Residual], Consistency]]
    u: np.ndarray
    ids: tuple[str, ...]
    eligible: frozenset[str]


def worst_offender_order(screen: Screening, *, threshold: float,
                         max_steps: int) -> tuple[list[Offender], list[Residual]]:
    """Remove the worst row (largest |r/u|) and re-solve, until every |z| ≤ ``threshold``.

    Returns the removal order and the residuals of the network without the removed rows.
    """
    solve, u, ids, eligible = screen.solve, screen.u, screen.ids, screen.eligible
    keep = np.ones(len(ids), dtype=bool)
    order: list[Offender] = []
    records, cons = solve(keep, u)
    for step in range(1, max_steps + 1):
        if _consistent(records, eligible, threshold):
            break
        pick = _pick_worst(records, eligible)
        if pick is None:
            break
        keep[ids.index(pick.worst.id)] = False
        if keep.sum() == 0:
            break
        new_records, new_cons = solve(keep, u)
        order.append(Offender(step=step, id=pick.worst.id,
                              score=float(abs(pick.worst.normalised)),
                              z=float(pick.worst.score), chi2_before=cons.chi2,
                              chi2_after=new_cons.chi2, indistinguishable_from=pick.ties,
                              conflicts_with=pick.conflicts))
        records, cons = new_records, new_cons
    return order, records


def inflate_until_consistent(screen: Screening, *, threshold: float, factor: float,
                             max_steps: int) -> tuple[np.ndarray, list[Inflation], bool]:
    """Multiply the worst row's u by ``factor`` and re-solve until every |z| ≤ threshold.

    Returns the adjusted uncertainties, the record of every change, and whether the
    procedure converged (every eligible row consistent) within ``max_steps``.
    """
    solve, ids, eligible = screen.solve, screen.ids, screen.eligible
    u = np.array(screen.u, dtype=float)
    keep = np.ones(len(ids), dtype=bool)
    log: list[Inflation] = []
    for step in range(1, max_steps + 2):
        records, _ = solve(keep, u)
        if _consistent(records, eligible, threshold):
            return u, log, True
        pick = _pick_worst(records, eligible)
        if pick is None or step > max_steps:
            return u, log, False
        j = ids.index(pick.worst.id)
        old = float(u[j])
        u[j] = old * factor
        log.append(Inflation(step=step, id=pick.worst.id, old_u_kJ_per_mol=old,
                             new_u_kJ_per_mol=float(u[j]),
                             score=float(abs(pick.worst.normalised)),
                             indistinguishable_from=pick.ties, conflicts_with=pick.conflicts))
    return u, log, False
