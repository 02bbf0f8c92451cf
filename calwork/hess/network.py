"""Thermochemical networks: Δ_fH° of many species from many reactions at once (docs/methods.md §5).

Unknowns are the Δ_fH°(298.15 K) of every species in the network except the elements in
their reference states and ``H+(aq)`` (zero). Each determination is a reaction with a
measured Δ_rH and its standard uncertainty; a single-species row is a known Δ_fH° (a
prior); key values (CODATA) enter as rows too, so their uncertainties propagate with the
right correlations. The network is solved by weighted least squares (:mod:`.wls`), checked
for consistency (:mod:`.diagnostics`), and species the data do not determine are listed
instead of being given a value.


"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Any

import numpy as np
import scipy.sparse as sp

from calwork.core.constants import T_REF_K
from calwork.core.errors import NetworkError, check_choice
from calwork.core.uncertainty import standard_uncertainty
from calwork.hess.diagnostics import (
    Screening,
    anchor_conflicts,
    anchor_label,
    consistency,
    inflate_until_consistent,
    residuals,
    worst_offender_order,
)
from calwork.hess.key_values import KeyValues, load_key_values
from calwork.hess.kirchhoff import CpModel, adjust_reaction_enthalpy
from calwork.hess.network_result import NetworkResult, free_directions, monte_carlo_check
from calwork.hess.reactions import Reaction
from calwork.hess.species import Species, reference_states, species_or_parse
from calwork.hess.wls import solve_wls

__all__ = ["WORST_OFFENDER_MODES", "Network", "solve_network"]

WORST_OFFENDER_MODES = ("none", "report", "inflate")
#: Largest number of unknowns for which the full covariance matrix is returned.
FULL_COVARIANCE_MAX = 2000
_T_TOLERANCE_K = 0.005
#: Smallest standard uncertainty of a determination taken as plausible, kJ/mol (1 J/mol:
#: the best calorimetric and key values are ~10–40 J/mol; common practice).
_U_PLAUSIBLE_MIN_KJ_PER_MOL = 1e-3


@dataclass(frozen=True, kw_only=True)
class Network:
    """A set of determinations and known values.

    Attributes
    ----------
    determinations
        Reactions with measured Δ_rH (kJ/mol), standard uncertainty and optional
        temperature; a single-species row is a known Δ_fH° of that species.
    priors
        Known Δ_fH° as single-species reactions (``Reaction.formation``); a prior replaces the
        bundled key value of the same species.
    covariance
        Covariances between rows, ``{(id_a, id_b): cov}`` in (kJ/mol)² (e.g. determinations
        sharing a calibration).
    heat_capacities
        Species → heat-capacity model, for determinations at other temperatures.
    anchors
        Row ids that the worst-offender procedure never removes or widens (bundled key
        values are always anchors); a conflict with one is reported as such.
    """

    determinations: tuple[Reaction, ...]
    priors: tuple[Reaction, ...] = ()
    covariance: Mapping[tuple[str, str], float] = field(default_factory=dict)
    heat_capacities: Mapping[Species, CpModel] = field(default_factory=dict)
    anchors: frozenset[str] = frozenset()
    name: str = ""
    source_path: str | None = None

    def __post_init__(self) -> None:
        dets = tuple(self.determinations)
        named = []
        for i, r in enumerate(dets):
            named.append(r if r.id else replace(r, id=f"d{i + 1}"))
        priors = []
        for p in self.priors:
            if not p.is_single_species:
                raise NetworkError("a prior must be a single species with coefficient 1",
                                   found=p.equation)
            priors.append(p if p.id else replace(p, id=next(iter(p.stoichiometry)).name))
        object.__setattr__(self, "determinations", tuple(named))
        object.__setattr__(self, "priors", tuple(priors))
        object.__setattr__(self, "covariance", MappingProxyType(
            {(str(a), str(b)): float(v) for (a, b), v in dict(self.covariance).items()}))
        object.__setattr__(self, "heat_capacities", MappingProxyType(
            {species_or_parse(k): v for k, v in dict(self.heat_capacities).items()}))
        ids = [r.id for r in self.rows]
        dup = sorted(i for i, k in Counter(ids).items() if k > 1)  # linear: 10⁵ rows and more
        if dup:
            raise NetworkError("row ids must be unique", found=dup)
        object.__setattr__(self, "anchors", frozenset(str(a) for a in self.anchors))
        unknown = sorted(self.anchors - set(ids))
        if unknown:
            raise NetworkError("anchors name row ids that are not in the network",
                               found=unknown)
        for r in self.rows:
            if r.delta_r_H_kJ_per_mol is None or r.u_delta_r_H_kJ_per_mol is None:
                raise NetworkError("every row needs a value and a standard uncertainty",
                                   run=r.id)

    @property
    def rows(self) -> tuple[Reaction, ...]:
        return (*self.determinations, *self.priors)

    @property
    def species(self) -> tuple[Species, ...]:
        seen: dict[Species, None] = {}
        for r in self.rows:
            for s in r.stoichiometry:
                seen.setdefault(s, None)
        return tuple(seen)

    def with_prior(self, species: Species | str, value_kJ_per_mol: float,
                   u_kJ_per_mol: float, *, source: str = "") -> Network:
        """A copy with one more known Δ_fH°."""
        prior = Reaction.formation(species, value_kJ_per_mol, u_kJ_per_mol, source=source)
        return replace(self, priors=(*self.priors, prior))


@dataclass
class _Assembled:
    ids: list[str]
    kinds: list[str]
    equations: list[str]
    rows: list[Reaction]
    unknowns: list[Species]
    a: sp.csr_matrix
    y: np.ndarray
    u: np.ndarray
    offdiag: dict[tuple[int, int], float]
    key_values_used: list[dict[str, Any]]
    adjustments: dict[str, float]
    warnings: list[str]


def _key_table(key_values: bool | KeyValues | None) -> KeyValues | None:
    if key_values is True:
        return load_key_values()
    if key_values is None or key_values is False:
        return None
    if isinstance(key_values, KeyValues):
        return key_values
    raise NetworkError("key_values must be True, False or a KeyValues table",
                       found=type(key_values).__name__)


def _assemble(network: Network, key_values: bool | KeyValues | None,
              allow_unadjusted_temperature: bool, include: Sequence[Species] = ()
              ) -> _Assembled:
    warnings: list[str] = []
    rows: list[Reaction] = []
    kinds: list[str] = []
    adjustments: dict[str, float] = {}
    for r in network.rows:
        if abs(r.temperature_K - T_REF_K) > _T_TOLERANCE_K:
            try:
                value, corr = adjust_reaction_enthalpy(
                    r.stoichiometry, r.delta_r_H_kJ_per_mol, r.temperature_K,
                    network.heat_capacities, label=r.id)
            except NetworkError:
                if not allow_unadjusted_temperature:
                    raise
                warnings.append(f"{r.id}: Δ_rH measured at {r.temperature_K:g} K used as if "
                                f"at {T_REF_K} K (heat capacities missing; explicit opt-out)")
            else:
                adjustments[r.id] = corr
                r = replace(r, delta_r_H_kJ_per_mol=value, temperature_K=T_REF_K)
        rows.append(r)
        kinds.append("prior" if r.is_single_species else "determination")
    zero = reference_states()
    formed = _user_formations(rows, zero)
    table = _key_table(key_values)
    used: list[dict[str, Any]] = []
    if table is not None:
        species = {s for r in rows for s in r.stoichiometry} | set(include)
        warnings.extend(
            f"the bundled key value of {fs.name} is not used: the network's own row(s) "
            f"{', '.join(formed[fs])} give its formation"
            for fs in sorted(formed, key=lambda s: s.name) if fs in table)
        for kv in table.rows_for(sorted(species, key=lambda s: s.name), exclude=formed):
            rows.append(kv.row)
            kinds.append("key value")
            used.append(kv.to_dict())
    unknowns = sorted({s for r in rows for s in r.stoichiometry if s not in zero},
                      key=lambda s: s.name)
    index = {s: i for i, s in enumerate(unknowns)}
    ri, ci, vals = [], [], []
    for j, r in enumerate(rows):
        entries = [(index[s], float(c)) for s, c in r.stoichiometry.items() if s in index]
        if not entries:
            raise NetworkError("row involves only elements in their reference states "
                               "(nothing to determine)", run=r.id, found=r.equation)
        for col, c in entries:
            ri.append(j)
            ci.append(col)
            vals.append(c)
    a = sp.csr_matrix((vals, (ri, ci)), shape=(len(rows), len(unknowns)))
    warnings.extend(
        f"{r.id}: u = {r.u_delta_r_H_kJ_per_mol:.3g} kJ/mol is implausibly small (no "
        f"thermochemical measurement is better than {_U_PLAUSIBLE_MIN_KJ_PER_MOL * 1e3:g} "
        "J/mol); the row dominates the network" for r in rows
        if r.u_delta_r_H_kJ_per_mol is not None
        and 0 < r.u_delta_r_H_kJ_per_mol < _U_PLAUSIBLE_MIN_KJ_PER_MOL)
    ids = [r.id for r in rows]
    pos = {rid: j for j, rid in enumerate(ids)}
    offdiag: dict[tuple[int, int], float] = {}
    for (ia, ib), v in network.covariance.items():
        if ia not in pos or ib not in pos:
            raise NetworkError("covariance names an unknown row id", found=(ia, ib))
        if ia == ib:
            raise NetworkError("the covariance table is for pairs of different rows; a row's "
                               "variance is its u²", found=(ia, ib))
        i, k = sorted((pos[ia], pos[ib]))
        offdiag[(i, k)] = v
    return _Assembled(
        ids=ids, kinds=kinds, equations=[r.equation for r in rows], rows=rows,
        unknowns=unknowns, a=a, y=np.array([r.delta_r_H_kJ_per_mol for r in rows], float),
        u=np.array([r.u_delta_r_H_kJ_per_mol for r in rows], float), offdiag=offdiag,
        key_values_used=used, adjustments=adjustments, warnings=warnings,
    )


def _user_formations(rows: Sequence[Reaction], zero: frozenset[Species]
                     ) -> dict[Species, list[str]]:
    """Species whose formation the user's rows give, whatever the rows' ids.

    A single-species row, or a reaction whose only species not in a reference state is
    the one formed (``H2(g) + 1/2 O2(g) = H2O(l)``, at any scale), is a formation
    determination; it replaces the bundled key value so that one literature value is never
    counted twice.
    """
    out: dict[Species, list[str]] = {}
    for r in rows:
        compounds = [s for s in r.stoichiometry if s not in zero]
        if len(compounds) == 1 and r.stoichiometry[compounds[0]] > 0:
            out.setdefault(compounds[0], []).append(r.id)
    return out


def _subset_solver(asm: _Assembled, method: str, seed: int):
    def solve(keep: np.ndarray, u: np.ndarray):
        rows = np.flatnonzero(keep)
        remap = {int(old): new for new, old in enumerate(rows)}
        off = {(remap[i], remap[k]): v for (i, k), v in asm.offdiag.items()
               if i in remap and k in remap}
        a = asm.a[rows]
        cols = np.flatnonzero(np.asarray(abs(a).sum(axis=0)).ravel() > 0)
        sol = solve_wls(a[:, cols], asm.y[rows], u[rows], off, method=method, seed=seed)
        recs = residuals([asm.ids[i] for i in rows], [asm.kinds[i] for i in rows],
                         [asm.equations[i] for i in rows], asm.y[rows], u[rows], sol)
        return recs, consistency(sol, rows.size)
    return solve


def solve_network(
    network: Network,
    *,
    key_values: bool | KeyValues | None = True,
    worst_offender: str = "report",
    threshold: float = 2.0,
    inflation_factor: float = 1.25,
    max_steps: int = 100,
    max_offenders: int = 10,
    monte_carlo: int | None = None,
    seed: int | None = 1,
    coverage_factor: float = 2.0,
    covariance_species: Sequence[Species | str] | None = None,
    method: str = "auto",
    allow_unadjusted_temperature: bool = False,
    include_species: Sequence[Species | str] = (),
) -> NetworkResult:
    """Solve a network by weighted least squares.

    Parameters
    ----------
    network
        The determinations and priors.
    key_values
        ``True`` adds the bundled key values of the species present (a user prior replaces
        the bundled value); a :class:`KeyValues` table uses that table; ``False`` none.
    worst_offender
        ``'report'`` names, in order, the rows whose removal most improves consistency
        (the solution is not changed); ``'inflate'`` also down-weights: the worst row's u is
        multiplied by ``inflation_factor`` until every |z| ≤ ``threshold`` (each change is
        recorded) and the result is that of the adjusted network; ``'none'`` skips both.
    threshold
        |standardised residual| regarded as consistent (2 ≈ 95 % for normal errors).
    monte_carlo
        Number of Monte Carlo draws (JCGM 101) to check the linear propagation, or None.
    seed
        Seed of the Monte Carlo draws.
    coverage_factor
        k of the reported expanded uncertainties U = k u.
    covariance_species
        Species whose covariance is wanted (large networks give only these; small networks
        return the full matrix of the determined species).
    method
        ``'auto'``, ``'dense'`` (SVD) or ``'sparse'`` (conjugate gradients).
    allow_unadjusted_temperature
        Use Δ_rH measured away from 298.15 K without heat capacities (warned).
    include_species
        Species whose key values are added even if no row mentions them (e.g. the species
        of a target reaction to be derived with :meth:`NetworkResult.reaction_enthalpy`).

    Raises
    ------
    NetworkError
        Malformed networks, or temperatures that cannot be adjusted.
    """
    mode = check_choice("worst_offender", worst_offender, WORST_OFFENDER_MODES)
    check_choice("method", method, ("auto", "dense", "sparse"))
    if not coverage_factor > 0:
        raise NetworkError("coverage factor must be > 0", found=coverage_factor)
    if not inflation_factor > 1:
        raise NetworkError("inflation factor must be > 1", found=inflation_factor)
    include = [species_or_parse(s) for s in include_species]
    asm = _assemble(network, key_values, allow_unadjusted_temperature, include)
    probe_seed = 20240601
    solver = _subset_solver(asm, method, probe_seed)
    anchors = {rid for rid, kind in zip(asm.ids, asm.kinds, strict=True)
               if kind == "key value"} | set(network.anchors)
    eligible = set(asm.ids) - anchors
    warnings = list(asm.warnings)
    order: list = []
    remaining = []
    screen = Screening(solve=solver, u=asm.u, ids=tuple(asm.ids), eligible=frozenset(eligible))
    if mode != "none":
        order, remaining = worst_offender_order(screen, threshold=threshold,
                                                max_steps=max_offenders)
    u_final, inflations = asm.u, []
    if mode == "inflate":
        u_final, inflations, converged = inflate_until_consistent(
            screen, threshold=threshold, factor=inflation_factor, max_steps=max_steps)
        if not converged:
            warnings.append(f"worst-offender-not-converged: after {len(inflations)} widening "
                            f"steps some determination still has |z| > {threshold:g}")
    sol = solve_wls(asm.a, asm.y, u_final, asm.offdiag, method=method, seed=probe_seed)
    recs = residuals(asm.ids, asm.kinds, asm.equations, asm.y, u_final, sol)
    for step in (*order, *inflations):
        if step.conflicts_with:
            text = (f"determination {step.id} conflicts with "
                    + ", ".join(anchor_label(a) for a in step.conflicts_with)
                    + ": the data cannot say which is wrong, and anchors are never adjusted")
            if text not in warnings:
                warnings.append(text)
    if mode == "inflate":
        warnings.extend(anchor_conflicts(recs, anchors, threshold))
    elif mode == "report":
        # judged without the named offenders: an anchor still off then is a real conflict
        warnings.extend(anchor_conflicts(remaining, anchors, threshold))
    cons = consistency(sol, len(asm.ids))
    names = [s.name for s in asm.unknowns]
    n = len(names)
    cov_names: list[str] = []
    cov = np.zeros((0, 0))
    determined = [names[i] for i in range(n) if sol.determined[i]]
    small = n <= FULL_COVARIANCE_MAX and all(c.cov is not None for c in sol.components)
    if covariance_species is not None:
        wanted = [species_or_parse(s).name for s in covariance_species]
        missing = [w for w in wanted if w not in names]
        if missing:
            raise NetworkError("covariance asked for species not in the network",
                               found=missing)
        cov_names = [w for w in wanted if sol.determined[names.index(w)]]
    elif small:
        cov_names = determined
    if cov_names:
        sel = np.zeros((len(cov_names), n))
        for k, w in enumerate(cov_names):
            sel[k, names.index(w)] = 1.0
        cov = sol.covariance_of(sel)
    variances = {}
    reasons: list[str] = []
    if small:
        for comp in sol.components:
            for k, col in enumerate(comp.columns):
                if sol.determined[col]:
                    variances[names[col]] = float(comp.cov[k, k])
    else:
        every, reasons = sol.all_variances()
        variances = {names[i]: float(every[i]) for i in range(n)
                     if sol.determined[i] and np.isfinite(every[i])}
        variances.update({w: float(cov[k, k]) for k, w in enumerate(cov_names)})
    values = {names[i]: (float(sol.x[i]) if sol.determined[i] else None) for i in range(n)}
    missing_u = [w for w in determined if w not in variances]
    if missing_u:
        warnings.append(
            f"uncertainties-not-computed: {len(missing_u)} of {len(determined)} determined "
            "species have no uncertainty: " + "; ".join(reasons or ["not computed"])
            + "; ask for the species you need (covariance_species, or "
            "`calwork network --uncertainty-of SPECIES`: one sparse solve each)")
    mc = None
    if monte_carlo:
        mc = monte_carlo_check(sol, names, variances, int(monte_carlo), seed, coverage_factor)
    return NetworkResult(
        species=tuple(names), values=values,
        uncertainties={k: (standard_uncertainty(v, name=f"Δ_fH°({k})") if v is not None
                           else None) for k, v in variances.items()},
        covariance_names=tuple(cov_names), covariance=cov,
        undetermined=tuple(names[i] for i in range(n) if not sol.determined[i]),
        free_directions=tuple(free_directions(sol, asm.unknowns, asm.rows)),
        chi2=cons.chi2, dof=cons.dof, p_value=cons.p_value, birge_ratio=cons.birge_ratio,
        residuals=tuple(recs), worst_offenders=tuple(order), inflations=tuple(inflations),
        monte_carlo=mc, coverage_factor=coverage_factor, method=sol.method,
        key_values_used=tuple(asm.key_values_used),
        temperature_adjustments=asm.adjustments, warnings=tuple(warnings),
        solution=sol, unknowns=tuple(asm.unknowns),
        rows_used=(tuple(asm.ids), tuple(asm.equations), tuple(asm.rows), asm.a, asm.y,
                   u_final, dict(asm.offdiag)),
    )

