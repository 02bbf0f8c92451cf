"""Reaction runs: molar enthalpy of solution or reaction from ε, ΔT_c and corrections.

Energy balance of the calorimeter (docs/methods.md §2.4–2.5), all heats counted as *released into
the calorimeter* (calwork's sign for corrections, as in ``RunResult.corrections_J``):

    ε ΔT_c = q_reaction + Σ q_corr,      q_reaction = −n Δ_rH

so that

    Δ_rH = −(ε ΔT_c − Σ q_corr) / n

with ``q_break > 0`` (breaking an ampoule releases a little heat) and ``q_vap = −n_v Δ_vapH < 0``
(solvent evaporating into the ampoule's gas space absorbs heat). An endothermic dissolution
(ΔT_c < 0) gives Δ_solH > 0; an exothermic one gives Δ_solH < 0 (thermochemical convention).
docs/methods.md (2.5) writes the same balance with q_vap as the heat *absorbed*, i.e. with the
opposite sign of the vaporisation term; the physics is the same.

Which ε (docs/methods.md (2.2)): with calibrations before (ε_i, initial contents) and after (ε_f,
final contents) the reaction,

* after  → −ε_f ΔT_c = Δ_rH at the initial temperature T_i;
* before → −ε_i ΔT_c = Δ_rH at T_i + ΔT_c;
* mean   → −½(ε_i + ε_f) ΔT_c = Δ_rH at T_i + ΔT_c/2.

A calibration series of stand-alone electrical runs on the calorimeter is taken as ε of the
initial contents ("before").
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, fields

from calwork.core.errors import CalibrationError, RunError, UncertaintyError, check_choice
from calwork.core.results import jsonable
from calwork.core.uncertainty import root_sum_square
from calwork.data import load_data
from calwork.formula import molar_mass_g_per_mol

__all__ = [
    "CALIBRATION_BASES",
    "ReferredEnergyEquivalent",
    "SolutionEnthalpy",
    "amount_of_substance_mol",
    "combine_budgets",
    "dilution_ratio",
    "final_molality_mol_per_kg",
    "molar_enthalpy_J_per_mol",
    "refer_energy_equivalent",
    "reference_temperature_K",
    "solution_enthalpy",
]

#: How the energy equivalent of a reaction run is chosen (docs/methods.md (2.2)).
CALIBRATION_BASES = ("after", "auto", "before", "mean", "series")

#: Budget components that are common to every run sharing a calibration or instrument; they do
#: not average down over a series (docs/methods.md §4.5).
SHARED_COMPONENTS = frozenset({"power_calibration", "blank_mean", "calibration_series"})


def reference_temperature_K(T_initial_K: float, corrected_rise_K: float, basis: str) -> float:
    """Temperature a reaction enthalpy refers to (docs/methods.md (2.2)), K.

    Parameters
    ----------
    T_initial_K
        Temperature at the start of the reaction's main period, K.
    corrected_rise_K
        Corrected temperature rise of the reaction, K (negative when endothermic).
    basis
        ``'after'`` (ε of the final contents) → T_i; ``'before'`` or ``'series'`` (ε of the
        initial contents) → T_i + ΔT_c; ``'mean'`` → T_i + ΔT_c/2.

    Examples
    --------
    >>> reference_temperature_K(298.0, -0.1, "after"), reference_temperature_K(298.0, -0.1, "mean")
    (298.0, 297.95)
    """
    check_choice("basis", basis, ("after", "before", "mean", "series"))
    if basis == "after":
        return float(T_initial_K)
    if basis == "mean":
        return float(T_initial_K + 0.5 * corrected_rise_K)
    return float(T_initial_K + corrected_rise_K)


@dataclass(frozen=True, kw_only=True)
class ReferredEnergyEquivalent:
    """The energy equivalent used for one reaction and what it refers the result to."""

    energy_equivalent_J_per_K: float
    u_energy_equivalent_J_per_K: float
    basis: str
    reference_temperature_K: float
    #: Components of u(ε), J/K (keys: heater_rise, timing, power_noise, power_calibration,
    #: calibration_series).
    budget: Mapping[str, float] = field(default_factory=dict)

    def to_dict(self) -> dict[str, object]:
        return {f.name: jsonable(getattr(self, f.name)) for f in fields(self)}


def combine_budgets(a: Mapping[str, float], b: Mapping[str, float]) -> dict[str, float]:
    """Budget of the mean of two ε values: shared components average, others add in quadrature."""
    out = {}
    for key in set(a) | set(b):
        x, y = a.get(key, 0.0), b.get(key, 0.0)
        out[key] = 0.5 * (x + y) if key in SHARED_COMPONENTS else 0.5 * math.hypot(x, y)
    return out


def refer_energy_equivalent(
    *,
    T_initial_K: float,
    corrected_rise_K: float,
    before: tuple[float, Mapping[str, float]] | None = None,
    after: tuple[float, Mapping[str, float]] | None = None,
    series: tuple[float, Mapping[str, float]] | None = None,
    basis: str = "auto",
) -> ReferredEnergyEquivalent:
    """Choose ε for a reaction and the temperature the result refers to (docs/methods.md (2.2)).

    Parameters
    ----------
    T_initial_K
        Temperature at the start of the reaction's main period, K.
    corrected_rise_K
        Corrected rise of the reaction, K.
    before, after
        In-log calibrations ``(ε, budget)`` before and after the reaction (J/K; budget
        components J/K).
    series
        ε of the calorimeter's calibration series ``(ε, budget)``.
    basis
        One of :data:`CALIBRATION_BASES`. ``'auto'``: the mean when both in-log calibrations
        exist, else the one that exists, else the series.

    Raises
    ------
    CalibrationError
        When the requested calibration is not available.

    Examples
    --------
    >>> r = refer_energy_equivalent(T_initial_K=298.15, corrected_rise_K=-0.1,
    ...                             before=(300.0, {"heater_rise": 0.03}),
    ...                             after=(302.0, {"heater_rise": 0.04}))
    >>> r.energy_equivalent_J_per_K, r.basis, round(r.reference_temperature_K, 3)
    (301.0, 'mean', 298.1)
    """
    check_choice("calibration", basis, CALIBRATION_BASES)
    if basis == "auto":
        if before is not None and after is not None:
            basis = "mean"
        elif after is not None:
            basis = "after"
        elif before is not None:
            basis = "before"
        elif series is not None:
            basis = "series"
        else:
            raise CalibrationError("no energy equivalent: the log has no electrical "
                                   "calibration and the calorimeter no calibration series",
                                   column="calorimeter")
    chosen = {"before": before, "after": after, "series": series}
    if basis == "mean":
        if before is None or after is None:
            raise CalibrationError("the mean energy equivalent needs calibrations before and "
                                   "after the reaction in the same log", column="heater_V")
        eps = 0.5 * (before[0] + after[0])
        budget = combine_budgets(before[1], after[1])
    else:
        item = chosen[basis]
        if item is None:
            raise CalibrationError(f"no calibration {basis!r} the reaction is available",
                                   column="heater_V" if basis != "series" else "calorimeter")
        eps, budget = item[0], dict(item[1])
    u = root_sum_square(budget, name="the energy equivalent")
    if not math.isfinite(u) or u <= 0:
        raise UncertaintyError("the uncertainty of the energy equivalent could not be "
                               "propagated", column="calorimeter", found=u)
    return ReferredEnergyEquivalent(
        energy_equivalent_J_per_K=float(eps), u_energy_equivalent_J_per_K=u, basis=basis,
        reference_temperature_K=reference_temperature_K(T_initial_K, corrected_rise_K, basis),
        budget=budget,
    )


def amount_of_substance_mol(
    *,
    amount_mol: float | None = None,
    mass_g: float | None = None,
    formula: str | None = None,
    u_mass_g: float | None = None,
) -> tuple[float, float, str]:
    """Amount of the solute, its standard uncertainty and how it was obtained.

    ``amount_mol`` is used when given; otherwise ``mass_g / M(formula)`` with conventional
    atomic weights (:func:`calwork.formula.molar_mass_g_per_mol`).

    Returns
    -------
    (n_mol, u_n_mol, source)

    Raises
    ------
    RunError
        When neither ``amount_mol`` nor ``mass_g`` with ``formula`` is given (column
        ``amount_mol``), or a value is not positive.

    Examples
    --------
    >>> n, u, src = amount_of_substance_mol(mass_g=0.5, formula="KCl", u_mass_g=2e-5)
    >>> round(n * 1e3, 4), src
    (6.7071, 'mass_g/M(KCl)')
    """
    if amount_mol is not None:
        if not (math.isfinite(amount_mol) and amount_mol > 0):
            raise RunError("amount of substance must be positive", column="amount_mol",
                           found=amount_mol, expected="n > 0 mol")
        rel = 0.0
        if mass_g is not None and mass_g > 0:
            u_m = _default_u_mass() if u_mass_g is None else u_mass_g
            rel = u_m / mass_g
        return float(amount_mol), float(amount_mol) * rel, "amount_mol"
    if mass_g is None or not formula:
        missing = "mass_g" if formula else "formula"
        if mass_g is None and not formula:
            missing = "amount_mol"
        raise RunError("the amount of substance is not given", column=missing,
                       expected="amount_mol, or mass_g with formula")
    if not (math.isfinite(mass_g) and mass_g > 0):
        raise RunError("mass must be positive", column="mass_g", found=mass_g,
                       expected="a mass > 0 g")
    M = molar_mass_g_per_mol(formula)
    u_m = _default_u_mass() if u_mass_g is None else u_mass_g
    n = mass_g / M
    return float(n), float(n * u_m / mass_g), f"mass_g/M({formula})"


def _default_u_mass() -> float:
    return float(load_data("solution_properties.toml")["defaults"]["u_mass_g"])


def _water_molar_mass() -> float:
    return float(load_data("solution_properties.toml")["water"]["molar_mass_g_per_mol"])


def final_molality_mol_per_kg(amount_mol: float, solvent_mass_g: float) -> float:
    """Final molality m = n / w(solvent), mol/kg.

    Examples
    --------
    >>> round(final_molality_mol_per_kg(0.0111, 100.0), 4)
    0.111
    """
    if not (math.isfinite(solvent_mass_g) and solvent_mass_g > 0):
        raise RunError("solvent mass must be positive", column="solvent_mass_g",
                       found=solvent_mass_g, expected="a mass > 0 g")
    return float(amount_mol / (solvent_mass_g / 1000.0))


def dilution_ratio(amount_mol: float, solvent_mass_g: float,
                   solvent_molar_mass_g_per_mol: float | None = None) -> float:
    """Dilution ratio n(solvent)/n(solute) (water by default: M = 18.015 g/mol).

    Examples
    --------
    >>> round(dilution_ratio(0.0111, 100.0), 1)
    500.1
    """
    M = _water_molar_mass() if solvent_molar_mass_g_per_mol is None else (
        solvent_molar_mass_g_per_mol)
    if not (math.isfinite(solvent_mass_g) and solvent_mass_g > 0):
        raise RunError("solvent mass must be positive", column="solvent_mass_g",
                       found=solvent_mass_g, expected="a mass > 0 g")
    return float(solvent_mass_g / M / amount_mol)


def molar_enthalpy_J_per_mol(
    energy_equivalent_J_per_K: float,
    corrected_rise_K: float,
    amount_mol: float,
    corrections_J: float = 0.0,
) -> float:
    """Δ_rH = −(ε ΔT_c − Σ q_corr)/n, J/mol (corrections as heat released into the calorimeter).

    Examples
    --------
    >>> molar_enthalpy_J_per_mol(300.0, -0.1, 0.002)  # endothermic: ΔH > 0
    15000.0
    >>> molar_enthalpy_J_per_mol(300.0, 0.1, 0.002)   # exothermic: ΔH < 0
    -15000.0
    """
    return -(energy_equivalent_J_per_K * corrected_rise_K - corrections_J) / amount_mol


@dataclass(frozen=True, kw_only=True)
class SolutionEnthalpy:
    """Molar enthalpy of one reaction run with its uncertainty budget (kJ/mol components)."""

    molar_enthalpy_kJ_per_mol: float
    u_molar_enthalpy_kJ_per_mol: float
    measured_heat_J: float
    reaction_heat_J: float
    corrections_J: Mapping[str, float]
    amount_mol: float
    budget: Mapping[str, float]

    @property
    def u_independent_kJ_per_mol(self) -> float:
        """The part of u not shared with other runs of the same calorimeter, kJ/mol."""
        return root_sum_square({k: v for k, v in self.budget.items()
                                if k not in SHARED_COMPONENTS}, name="the independent part")

    def to_dict(self) -> dict[str, object]:
        return {f.name: jsonable(getattr(self, f.name)) for f in fields(self)}


def solution_enthalpy(
    *,
    energy_equivalent: ReferredEnergyEquivalent,
    corrected_rise_K: float,
    u_corrected_rise_K: float,
    amount_mol: float,
    u_amount_mol: float,
    corrections: Mapping[str, tuple[float, float]] | None = None,
    extra_uncertainties_J: Mapping[str, float] | None = None,
) -> SolutionEnthalpy:
    """Molar enthalpy of a reaction run and its GUM budget.

    Parameters
    ----------
    energy_equivalent
        The ε chosen (:func:`refer_energy_equivalent`), with its budget.
    corrected_rise_K, u_corrected_rise_K
        Corrected rise of the reaction and its standard uncertainty, K.
    amount_mol, u_amount_mol
        Amount of solute and its standard uncertainty, mol.
    corrections
        ``name -> (q_J, u_J)``, heats released into the calorimeter by side processes
        (``ampoule_breaking`` > 0, ``vaporisation`` < 0).
    extra_uncertainties_J
        Further uncertainty components of the measured heat, J, without a value of their
        own (e.g. ``blank_mean``, the uncertainty of the mean blank shared by a series).
        Components named in ``SHARED_COMPONENTS`` do not average down over a series.

    Returns
    -------
    SolutionEnthalpy
        Budget keys: ``corrected_rise``, each ε component, ``amount``, and each correction.
    """
    eps = energy_equivalent.energy_equivalent_J_per_K
    corrections = dict(corrections or {})
    q_total = math.fsum(q for q, _ in corrections.values())
    measured = eps * corrected_rise_K
    H = molar_enthalpy_J_per_mol(eps, corrected_rise_K, amount_mol, q_total)
    n = amount_mol
    budget: dict[str, float] = {"corrected_rise": abs(eps * u_corrected_rise_K / n) / 1000.0}
    for key, u_eps in energy_equivalent.budget.items():
        budget[key] = abs(corrected_rise_K * u_eps / n) / 1000.0
    budget["amount"] = abs(H * u_amount_mol / n) / 1000.0
    for key, (_, u_q) in corrections.items():
        budget[key] = abs(u_q / n) / 1000.0
    for key, u_q in (extra_uncertainties_J or {}).items():
        budget[key] = abs(u_q / n) / 1000.0
    u = root_sum_square(budget, name="the molar enthalpy")
    if not math.isfinite(u) or u <= 0:
        raise UncertaintyError("the uncertainty of the molar enthalpy could not be propagated",
                               column="amount_mol", found=u)
    return SolutionEnthalpy(
        molar_enthalpy_kJ_per_mol=H / 1000.0, u_molar_enthalpy_kJ_per_mol=u,
        measured_heat_J=measured, reaction_heat_J=measured - q_total,
        corrections_J={k: q for k, (q, _) in corrections.items()}, amount_mol=n, budget=budget,
    )
