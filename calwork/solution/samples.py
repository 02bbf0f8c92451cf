"""Solution series: the mean of a sample's runs and its extrapolation to infinite dilution.

Uncertainty of the series mean (docs/methods.md §4.5): the components that differ from run to run
(corrected rises, in-log calibrations, weighings, the ampoule-to-ampoule spread) average
down; those shared by every run (a calibration series' ε, the mean blank, the calibration of
the electrical instruments) do not. The random part is the larger of the standard deviation
of the mean, s/√n, and the propagated independent parts, √(Σu_i²)/n; the shared parts are
added in quadrature, each taken at its mean over the runs.

The enthalpy at infinite dilution is fitted to the runs' independent uncertainties (weighted
least squares, :func:`~calwork.solution.dilution.extrapolate_to_infinite_dilution`) and the
shared parts are then added to the intercept's uncertainty.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence

import numpy as np

from calwork.core.constants import T_REF_K
from calwork.core.errors import CalworkError
from calwork.core.results import SampleResult, SolutionRunResult
from calwork.core.runinfo import RunInfo
from calwork.core.uncertainty import Budget, root_sum_square
from calwork.solution.dilution import (
    electrolyte_by_name,
    extrapolate_to_infinite_dilution,
)

__all__ = ["phi_L_model_for", "solution_samples"]


def phi_L_model_for(formula: str | None, requested: str = "auto") -> tuple[str, str | None]:
    """ΦL model and electrolyte name for a solute formula.

    ``'auto'``: ``'pitzer'`` where Pitzer enthalpy parameters are bundled (KCl, NaCl), the
    extended Debye–Hückel term for other bundled electrolytes, ``'none'`` (linear in m)
    otherwise.

    Examples
    --------
    >>> phi_L_model_for("KCl"), phi_L_model_for("C4H11NO3")
    (('pitzer', 'KCl'), ('none', None))
    """
    e = None
    if formula:
        try:
            e = electrolyte_by_name(formula)
        except CalworkError:
            e = None
    if requested != "auto":
        return requested, None if e is None else e.name
    if e is None:
        return "none", None
    return ("pitzer" if e.has_pitzer else "extended"), e.name


def _key(info: RunInfo | None, r: SolutionRunResult) -> str:
    if info is not None:
        return info.sample or info.formula or r.run
    return r.sample or r.run


def solution_samples(
    results: Iterable[SolutionRunResult],
    infos: Mapping[str, RunInfo],
    *,
    phi_L_model: str = "auto",
    shared_components: Iterable[str] = (),
) -> list[SampleResult]:
    """One SampleResult per sample (sheet ``sample``, else ``formula``) of solution runs.

    Failed runs are left out of the means (they are still in the run list).
    """
    shared = frozenset(shared_components)
    groups: dict[str, list[SolutionRunResult]] = {}
    for r in results:
        if r.error is None and r.molar_enthalpy_kJ_per_mol is not None:
            groups.setdefault(_key(infos.get(r.run), r), []).append(r)
    out = []
    for name, items in groups.items():
        info = infos.get(items[0].run)
        formula = None if info is None else info.formula
        out.append(_sample(name, formula, items, phi_L_model, shared))
    return out


def _sample(name: str, formula: str | None, items: Sequence[SolutionRunResult], phi_L_model: str,
            shared: frozenset[str]) -> SampleResult:
    H = np.array([r.molar_enthalpy_kJ_per_mol for r in items], dtype=float)
    n = H.size
    budgets = [dict(r.details.budget_kJ_per_mol or {}) for r in items]
    u_ind = np.array([root_sum_square({k: v for k, v in b.items() if k not in shared},
                                      name=f"run {r.run}")
                      for b, r in zip(budgets, items, strict=True)])
    no_independent = [r.run for r, u in zip(items, u_ind, strict=True) if not u > 0]
    u_ind = np.where(u_ind > 0, u_ind, [r.u_molar_enthalpy_kJ_per_mol for r in items])
    propagated = math.sqrt(float(np.sum(u_ind**2))) / n
    sdm = float(H.std(ddof=1)) / math.sqrt(n) if n >= 2 else 0.0
    random = max(sdm, propagated)
    shared_parts = {k: float(np.mean([b.get(k, 0.0) for b in budgets]))
                    for k in sorted(shared) if any(k in b for b in budgets)}
    u_mean = root_sum_square({"random": random, **shared_parts}, name=f"sample {name!r}")
    budget = {"random": random, **shared_parts}
    derived: dict[str, Budget] = {}
    warnings: list[str] = []
    if no_independent:
        warnings.append(f"independent-u-assumed: run(s) {', '.join(no_independent)} carry no "
                        "independent uncertainty component; their whole u is used as the "
                        "independent part (conservative)")
    if n == 1:
        warnings.append("a single run: no repeatability estimate")
    calorimeters = {r.calorimeter for r in items}
    molal = [r.final_molality_mol_per_kg for r in items]
    have_m = all(m is not None for m in molal)
    mean_m = float(np.mean(molal)) if have_m else None
    inf = u_inf = None
    temps = [r.reference_temperature_K for r in items if r.reference_temperature_K is not None]
    T_mean = float(np.mean(temps)) if temps else T_REF_K
    if abs(T_mean - 298.15) > 1.0:
        warnings.append(f"results refer to {T_mean:.2f} K, not 298.15 K (no Kirchhoff "
                        "correction applied)")
    if have_m:
        model, electrolyte = phi_L_model_for(formula, phi_L_model)
        n_mol = len({round(m, 12) for m in molal})
        if model != "none" or n_mol >= 2:
            try:
                ext = extrapolate_to_infinite_dilution(
                    molal, H, u_ind, model=model, electrolyte=electrolyte,
                    temperature_K=T_mean)
            except CalworkError as exc:
                warnings.append(f"no extrapolation to infinite dilution: {exc}")
            else:
                inf = ext.infinite_dilution_enthalpy_kJ_per_mol
                derived["infinite_dilution"] = Budget.of(
                    "ΔH at infinite dilution", "kJ/mol",
                    {"infinite_dilution_fit": ext.u_infinite_dilution_enthalpy_kJ_per_mol,
                     **shared_parts}, keys={k: k for k in shared_parts})
                u_inf = derived["infinite_dilution"].total()
                warnings.append(f"infinite dilution: {ext.method}, ΦL model {model!r}"
                                + (f" ({electrolyte})" if electrolyte else ""))
                warnings.extend(ext.warnings)
    else:
        warnings.append("final molality unknown for some runs: no extrapolation to infinite "
                        "dilution")
    return SampleResult(
        sample=name, formula=formula, n_runs=n, runs=tuple(r.run for r in items),
        kind="solution", calorimeter=calorimeters.pop() if len(calorimeters) == 1 else None,
        molar_enthalpy_kJ_per_mol=float(H.mean()), u_molar_enthalpy_kJ_per_mol=u_mean,
        final_molality_mol_per_kg=mean_m, infinite_dilution_enthalpy_kJ_per_mol=inf,
        u_infinite_dilution_enthalpy_kJ_per_mol=u_inf,
        budget=Budget.of("molar enthalpy ΔH", "kJ/mol", budget,
                         keys={k: k for k in shared_parts}),
        derived_budgets=derived,
        warnings=tuple(warnings),
    )
