"""The bomb-calorimetry energy chain for one run: RunInfo + RiseResult → BombRunResult.

Calibration run (reference material, docs/methods.md (3.2)):

    ε(calor) ΔT_c = m Δu_cert f_Jessup + Σ corrections
                    + ε^i (T_i − T_ref) + ε^f (T_ref − T_i − ΔT_c)

Combustion run ((3.1), (3.4)): the heat at T_ref is ``ε ΔT_c − [ε^i(T_i − T_ref) + ε^f(T_ref −
T_i − ΔT_c)]``; less the corrections it is the sample's, and ``Δu_B = −Q_sample/m``. The
standard massic energy adds the Washburn correction: ``Δcu° = Δu_B + ΔU_Σ/m``.

``corrections_J`` of a run: positive = heat released into the calorimeter by that process
(ignition, fuse, cotton, auxiliary, nitric acid, sulfuric acid); soot is negative (energy not
released). ``details`` names every constant used. When the sheet gives no bomb volume the
contents' energy equivalent and the Washburn correction are not computed and the run says so.

Safety: see :data:`calwork.core.safety.SAFETY_NOTE`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from calwork.bomb.buoyancy import buoyancy_factor
from calwork.bomb.certificate import (
    ReferenceMaterial,
    certified_massic_energy_J_per_g,
    load_reference_material,
)
from calwork.bomb.contents import contents_energy_equivalents_J_per_K, contents_referral_J
from calwork.bomb.corrections import (
    SULFUR_CONVENTIONS,
    cotton_energy_J,
    fuse_energy_J,
    fuse_material,
    nitric_acid_energy_J,
    nitric_acid_mol,
    soot_energy_J,
    sulfuric_acid_energy_J,
)
from calwork.bomb.washburn import Combustible, bomb_states, washburn_correction
from calwork.core.constants import CELSIUS_ZERO_K, T_REF_K, STANDARD_ATMOSPHERE_Pa
from calwork.core.errors import CalibrationError, CalworkError, RunError, check_choice
from calwork.core.results import BombRunResult, CalibrationResult
from calwork.data import load_data
from calwork.formula import element_counts, molar_mass_g_per_mol

__all__ = ["BombConditions", "bomb_conditions", "reduce_calibration_run",
           "reduce_combustion_run"]

_M_S = 32.06  # conventional atomic weight of sulfur (CIAAW), g/mol


@dataclass(frozen=True, kw_only=True)
class BombConditions:
    """Bomb volume, O2 pressure and bomb water of a run (``None`` volume = not given)."""

    bomb_volume_L: float | None
    o2_pressure_MPa: float
    bomb_water_g: float
    warnings: tuple[str, ...] = ()

    @property
    def complete(self) -> bool:
        return self.bomb_volume_L is not None


def _required(value: Any, column: str) -> float:
    """A sheet value this run needs (its rule — positive, non-negative — was checked when the
    RunInfo was made, :func:`calwork.core.runinfo.column_problem`)."""
    if value is None:
        raise RunError("is required", column=column, found=None, expected="a number > 0")
    return float(value)


def _given(value: Any) -> float:
    """A non-negative sheet value that defaults to zero when not given."""
    return float(value or 0.0)


def bomb_conditions(info: Any) -> BombConditions:
    """The bomb conditions of a run, with the standard values filled in (and warned about)."""
    std = load_reference_material("benzoic acid").standard_conditions
    warnings = []
    V = info.bomb_volume_L
    p = info.o2_pressure_MPa
    if p is None:
        p = std["o2_pressure_atm"] * STANDARD_ATMOSPHERE_Pa / 1e6
        warnings.append(f"o2_pressure_MPa not given: {p:.4g} MPa (standard bomb condition) "
                        "assumed")
    w = info.bomb_water_g
    if w is None:
        w = std["water_g_per_L"] * V if V is not None else 0.0
        if V is not None:
            warnings.append(f"bomb_water_g not given: {w:.4g} g (3 g per litre, standard "
                            "bomb condition) assumed")
    return BombConditions(bomb_volume_L=V, o2_pressure_MPa=p,
                          bomb_water_g=_given(w), warnings=tuple(warnings))


def _vacuum_mass(info: Any, density: float | None, details: dict, warnings: list) -> float:
    mass = _required(info.mass_g, "mass_g")
    basis = (info.mass_basis or "vacuum").strip().lower()
    check_choice("mass_basis", basis, ["air", "vacuum"])
    details["mass_basis"] = basis
    if basis == "air":
        if density is None:
            raise RunError("masses weighed in air need the sample density",
                           column="sample_density_g_per_cm3", found=None,
                           expected="the density in g/cm³")
        f = buoyancy_factor(density)
        details["buoyancy_factor"] = f
        mass *= f
    details["mass_vacuum_g"] = mass
    return mass


def _aux_density_factor(info: Any, name: str) -> float:
    if (info.mass_basis or "vacuum").strip().lower() != "air":
        return 1.0
    rho = load_data("bomb_corrections.toml")["buoyancy"]["material_density_g_per_cm3"][name]
    return buoyancy_factor(rho)


def _corrections(info: Any, *, sulfur_mol: float, convention: str,
                 water_per_s: float | None, details: dict
                 ) -> tuple[dict[str, float], dict[str, float], float, dict[str, float]]:
    """Correction energies (J), their standard uncertainties (J), n(HNO3) and fuel-convention
    sulfuric-acid energy."""
    rel = load_data("bomb_corrections.toml")["uncertainty_relative"]
    const: dict[str, str] = {}
    corr: dict[str, float] = {}
    corr["ignition"] = _given(info.ignition_J)
    const["ignition"] = "ignition_J from the run sheet"
    fuse_mass = info.fuse_mass_g
    if fuse_mass is not None:
        mat = fuse_material(info.fuse_material)
        fuse_mass = _given(fuse_mass) * (
            _aux_density_factor(info, mat) if mat != "platinum" else 1.0)
    corr["fuse"], const["fuse"] = fuse_energy_J(
        fuse_J=info.fuse_J, fuse_burnt_cm=info.fuse_burnt_cm, fuse_J_per_cm=info.fuse_J_per_cm,
        fuse_mass_g=fuse_mass, material=info.fuse_material,
    )
    cotton_g = _given(info.cotton_g) * _aux_density_factor(info, "cotton")
    corr["cotton"], const["cotton"] = cotton_energy_J(cotton_g)
    aux_g = _given(info.aux_mass_g) * _aux_density_factor(info, "auxiliary")
    if aux_g > 0 and info.aux_J_per_g is None:
        raise RunError("an auxiliary mass needs its massic energy", column="aux_J_per_g",
                       found=None, expected="the auxiliary's energy of combustion in J/g")
    aux_per = abs(float(info.aux_J_per_g or 0.0))
    corr["auxiliary"] = aux_g * aux_per
    const["auxiliary"] = f"aux {aux_per} J/g (run sheet) × {aux_g} g"
    n_hno3 = nitric_acid_mol(info.acid_titre_mL, info.acid_titrant_mol_per_L,
                             sulfuric_acid_mol=sulfur_mol)
    corr["nitric_acid"], const["nitric_acid"] = nitric_acid_energy_J(n_hno3)
    fuel_s = 0.0
    if sulfur_mol > 0:
        corr["sulfuric_acid"], const["sulfuric_acid"] = sulfuric_acid_energy_J(
            sulfur_mol, convention, water_mol_per_mol=water_per_s)
        fuel_s = sulfuric_acid_energy_J(sulfur_mol, "fuel", water_mol_per_mol=water_per_s)[0]
        const["sulfur_convention"] = convention
    if info.soot_g is not None:
        corr["soot"], const["soot"] = soot_energy_J(info.soot_g)
    u = {k: abs(v) * float(rel[k]) for k, v in corr.items()}
    details["correction_constants"] = const
    details["u_corrections_J"] = u
    details["nitric_acid_mol"] = n_hno3
    details["cotton_g_vacuum"] = cotton_g
    details["aux_mass_g_vacuum"] = aux_g
    return corr, u, n_hno3, {"sulfuric_acid_fuel": fuel_s}


def _rise_numbers(rise: Any) -> tuple[float, float, float]:
    dT = getattr(rise, "corrected_rise_K", None)
    if dT is None or not math.isfinite(dT) or dT <= 0:
        raise RunError("the corrected temperature rise is not a positive number",
                       found=dT, expected="a rise in K > 0")
    u = getattr(rise, "u_corrected_rise_K", None)
    if u is None or not math.isfinite(u) or u <= 0:
        from calwork.core.errors import UncertaintyError

        raise UncertaintyError("the corrected rise has no usable uncertainty", found=u)
    Ti = getattr(rise, "T_initial_K", None)
    return float(dT), float(u), float(Ti) if Ti is not None else math.nan


def _bomb_model(info: Any, cond: BombConditions, combustibles: list[Combustible], *,
                n_hno3: float, soot_g: float, rise_dT: float, T_i: float, details: dict,
                warnings: list, want_washburn: bool) -> tuple[float, float, Any]:
    """Contents referral (J), the reference temperature, and the Washburn result (or None)."""
    warnings.extend(cond.warnings)
    if not cond.complete or not math.isfinite(T_i):
        why = "no bomb_volume_L" if not cond.complete else "no initial temperature"
        T_ref = (T_i if math.isfinite(T_i) else T_REF_K) + rise_dT / 2.0
        warnings.append(f"contents: not included ({why}); rise referred to the mean "
                        "temperature")
        if want_washburn:
            warnings.append(f"washburn: not applied ({why}); no standard-state values")
        details["contents_included"] = False
        return 0.0, T_ref, None
    initial, final = bomb_states(
        combustibles, bomb_volume_L=cond.bomb_volume_L, o2_pressure_MPa=cond.o2_pressure_MPa,
        bomb_water_g=cond.bomb_water_g, nitric_acid_mol=n_hno3, soot_g=soot_g,
    )
    eps_i, eps_f = contents_energy_equivalents_J_per_K(initial, final, combustibles)
    referral = contents_referral_J(eps_i, eps_f, T_initial_K=T_i, corrected_rise_K=rise_dT,
                                   reference_temperature_K=T_REF_K)
    details.update(contents_included=True, eps_initial_contents_J_per_K=eps_i,
                   eps_final_contents_J_per_K=eps_f, contents_referral_J=referral)
    wb = None
    if want_washburn:
        wb = washburn_correction(
            combustibles, bomb_volume_L=cond.bomb_volume_L,
            o2_pressure_MPa=cond.o2_pressure_MPa, bomb_water_g=cond.bomb_water_g,
            nitric_acid_mol=n_hno3, soot_g=soot_g, states=(initial, final),
        )
        details["washburn_terms_J"] = dict(wb.terms_J)
        details["washburn_u_J"] = wb.u_correction_J
        details["washburn_u_components_J"] = dict(wb.u_components_J)
    return referral, T_REF_K, wb


def _extras(details: dict, combustibles: list[Combustible]) -> None:
    """Append the cotton thread and the auxiliary material (masses in vacuum)."""
    props = load_data("washburn_properties.toml")
    cot = load_data("bomb_corrections.toml")["cotton"]
    rho = load_data("bomb_corrections.toml")["buoyancy"]["material_density_g_per_cm3"]
    if details["cotton_g_vacuum"] > 0:
        combustibles.append(Combustible.from_formula(
            "cotton", cot["formula"], details["cotton_g_vacuum"],
            density_g_per_cm3=rho["cotton"],
            heat_capacity_J_per_g_K=cot["heat_capacity_J_per_g_K"]))
    if details["aux_mass_g_vacuum"] > 0:
        combustibles.append(Combustible.from_formula(
            "auxiliary", props["auxiliary"]["formula"], details["aux_mass_g_vacuum"], phase="l",
            density_g_per_cm3=rho["auxiliary"],
            heat_capacity_J_per_g_K=props["auxiliary"]["heat_capacity_J_per_g_K"]))


def calibration_material(info: Any, warnings: list[str]) -> ReferenceMaterial:
    """The reference material of a calibration row: a bundled certificate, or exactly the
    sheet's certified value — never another material's data (warnings say what was used)."""
    name = info.reference_material
    certified = info.certified_J_per_g
    if name is None and certified is None:
        raise RunError("a calibration run needs its reference material",
                       column="reference_material", found=None, expected="e.g. 'benzoic acid'")
    known = name is None or _key_known(name)
    if known:
        material = load_reference_material(name or "benzoic acid")
        if name is None:
            warnings.append("reference-material-assumed: no reference_material given; the "
                            f"certified value is taken as {material.name}'s")
        if certified is None:
            return material
        if info.u_certified_J_per_g is None:
            warnings.append(
                f"certificate-u-assumed: no u_certified_J_per_g; the relative standard "
                f"uncertainty of the bundled {material.name} certificate "
                f"({material.u_relative * 1e6:.0f} ppm) is used for the sheet's value")
        return material.with_certified(float(certified), info.u_certified_J_per_g)
    if certified is None:
        return load_reference_material(name)  # raises: unknown, with the known names
    if info.u_certified_J_per_g is None:
        raise RunError("a reference material calwork has no certificate for needs the "
                       "certificate's standard uncertainty", column="u_certified_J_per_g",
                       found=None, expected=f"u of {name}'s certified value in J/g")
    if not info.formula:
        raise RunError("a reference material calwork has no certificate for needs its "
                       "formula (for the bomb contents)", column="formula", found=None,
                       expected=f"the chemical formula of {name}")
    cond = load_data("washburn_properties.toml")["condensed"]
    key = "l" if (info.phase or "cr").lower().startswith("l") else "cr"
    density = info.sample_density_g_per_cm3
    if density is None:
        density = float(cond["density_g_per_cm3"][key])
        warnings.append(f"density-assumed: {name}: typical condensed-phase density "
                        f"{density} g/cm³ used for the bomb gas volume")
    warnings.append(f"reference-material-not-bundled: {name} reduced with the sheet's "
                    f"certified value {abs(certified):g} J/g as given; no "
                    "certificate-condition (Jessup-type) factor applied")
    return ReferenceMaterial.sheet_certified(
        name, info.formula, certified, info.u_certified_J_per_g, phase=info.phase or "cr",
        density_g_per_cm3=density,
        heat_capacity_J_per_g_K=float(cond["heat_capacity_J_per_g_K"][key]))


def _key_known(name: str) -> bool:
    try:
        load_reference_material(name)
    except CalibrationError:
        return False
    return True


def reduce_calibration_run(info: Any, rise: Any, *,
                           material: ReferenceMaterial | None = None) -> BombRunResult:
    """Energy equivalent ε(calor) from one reference-material run (errors raised)."""
    warnings: list[str] = []
    if material is None:
        material = calibration_material(info, warnings)
    details: dict[str, Any] = {"reference_material": material.name,
                               "certified_J_per_g": material.certified_J_per_g,
                               "u_certificate_relative": material.u_relative,
                               "certificate_source": material.source,
                               "certificate_condition_factor": material.has_condition_factor}
    density = info.sample_density_g_per_cm3 or material.density_g_per_cm3
    mass = _vacuum_mass(info, density, details, warnings)
    dT, u_dT, Ti = _rise_numbers(rise)
    cond = bomb_conditions(info)
    corr, _u, n_hno3, _ = _corrections(info, sulfur_mol=0.0, convention="fuel",
                                       water_per_s=None, details=details)
    ba = Combustible.from_formula("sample", material.formula, mass, phase=material.phase,
                                  density_g_per_cm3=density,
                                  heat_capacity_J_per_g_K=material.heat_capacity_J_per_g_K)
    combustibles = [ba]
    _extras(details, combustibles)
    referral, T_ref, _ = _bomb_model(info, cond, combustibles, n_hno3=n_hno3,
                                     soot_g=_given(info.soot_g), rise_dT=dT, T_i=Ti,
                                     details=details, warnings=warnings, want_washburn=False)
    if cond.complete:
        V = cond.bomb_volume_L
        s_per_L, w_per_L = mass / V, cond.bomb_water_g / V
    elif not material.has_condition_factor:
        s_per_L = w_per_L = math.nan  # not used: no certificate-condition factor
    else:
        s_per_L = material.standard_conditions["sample_g_per_L"]
        w_per_L = material.standard_conditions["water_g_per_L"]
        warnings.append("certificate: sample and water per bomb volume taken at the standard "
                        "bomb conditions (no bomb_volume_L)")
    certified = certified_massic_energy_J_per_g(
        material, o2_pressure_MPa=cond.o2_pressure_MPa, sample_g_per_L=s_per_L,
        water_g_per_L=w_per_L, temperature_K=T_ref)
    details["jessup_factor"] = certified / material.certified_J_per_g
    details["jessup_temperature_C"] = T_ref - CELSIUS_ZERO_K
    details["reference_material_energy_J"] = mass * certified
    heat = mass * certified + sum(corr.values())
    eps = (heat + referral) / dT
    details["heat_released_J"] = heat
    return BombRunResult(
        run=info.run, kind=info.kind, sample=info.sample or material.name,
        calorimeter=info.calorimeter, corrected_rise_K=dT, u_corrected_rise_K=u_dT,
        corrections_J=corr, energy_equivalent_J_per_K=eps,
        u_energy_equivalent_J_per_K=eps * u_dT / dT, reference_temperature_K=T_ref,
        warnings=tuple(warnings) + tuple(getattr(rise, "warnings", ())), rise=rise,
        details=details,
    )


def _sulfur(info: Any, counts: dict[str, float] | None, mass: float) -> float:
    if info.sulfur_mass_fraction is not None:
        w = float(info.sulfur_mass_fraction)
        if not 0.0 <= w < 1.0:
            raise RunError("must be a mass fraction between 0 and 1",
                           column="sulfur_mass_fraction", found=info.sulfur_mass_fraction,
                           expected="a number in [0, 1)")
        return mass * w / _M_S
    if counts and counts.get("S"):
        from calwork.formula import molar_mass_g_per_mol

        return mass / molar_mass_g_per_mol(info.formula) * counts["S"]
    return 0.0


def reduce_combustion_run(info: Any, rise: Any, calibration: CalibrationResult | None
                          ) -> BombRunResult:
    """Massic energy of the bomb process (and the standard one) of a sample run."""
    if calibration is None:
        raise RunError("no calibration for this calorimeter (no successful calibration run)",
                       column="calorimeter", found=info.calorimeter,
                       expected="a calorimeter with calibration runs on the sheet")
    details: dict[str, Any] = {"calibration_runs": list(calibration.runs)}
    warnings: list[str] = []
    counts = None
    if info.formula:
        try:
            counts = element_counts(info.formula)
        except CalworkError as exc:
            raise exc.with_context(column="formula") from None
    mass = _vacuum_mass(info, info.sample_density_g_per_cm3, details, warnings)
    dT, u_dT, Ti = _rise_numbers(rise)
    cond = bomb_conditions(info)
    n_s = _sulfur(info, counts, mass)
    convention = (info.sulfur_convention or ("thermochemical" if info.formula else "fuel"))
    check_choice("sulfur_convention", convention, SULFUR_CONVENTIONS)
    water_per_s = None
    if n_s > 0 and cond.complete:
        water_per_s = (cond.bomb_water_g / molar_mass_g_per_mol("H2O")) / n_s
    corr, u_corr, n_hno3, fuel = _corrections(info, sulfur_mol=n_s, convention=convention,
                                              water_per_s=water_per_s, details=details)
    combustibles: list[Combustible] = []
    if counts is not None:
        combustibles.append(Combustible.from_formula(
            "sample", info.formula, mass, phase=info.phase or "cr",
            density_g_per_cm3=info.sample_density_g_per_cm3))
    else:
        # no formula: the products are unknown; the sample is treated as (CH2)n for the bomb
        # gas (contents only; no standard-state values without a formula)
        warnings.append(f"formula-assumed: no formula for sample {info.sample!r}; the bomb "
                        "contents (gas amounts for the contents' energy equivalent) are "
                        "computed as if it were (CH2)n; no standard-state or formation values")
        combustibles.append(Combustible.from_formula(
            "sample", "CH2", mass, phase=info.phase or "cr",
            density_g_per_cm3=info.sample_density_g_per_cm3))
    _extras(details, combustibles)
    # The standard-state reduction knows the final states of C, H, O, N and S only (CO2, H2O,
    # N2, HNO3, H2SO4); a halogen or metal compound has products (HCl·nH2O, oxides…) the
    # element balance of bomb_states does not form, so its Washburn correction — and so a
    # standard massic energy — would be silently wrong.
    others = sorted(el for el, n in (counts or {}).items()
                    if n and el not in ("C", "H", "O", "N", "S"))
    if others:
        warnings.append(f"washburn: not applied (elements {others} in formula "
                        f"{info.formula!r}: only C, H, O, N, S compounds are reduced to "
                        "standard states); no standard-state values")
    referral, T_ref, wb = _bomb_model(
        info, cond, combustibles, n_hno3=n_hno3, soot_g=_given(info.soot_g),
        rise_dT=dT, T_i=Ti, details=details, warnings=warnings,
        want_washburn=counts is not None and not others)
    eps = calibration.energy_equivalent_J_per_K
    q_meas = eps * dT - referral
    q_sample = q_meas - sum(corr.values())
    du = -q_sample / mass
    fuel_du = du + (fuel["sulfuric_acid_fuel"] - corr.get("sulfuric_acid", 0.0)) / mass
    details.update(heat_measured_J=q_meas, d_massic_energy_d_epsilon_K_per_g=-dT / mass,
                   u_massic_energy_rise_J_per_g=eps * u_dT / mass,
                   massic_energy_fuel_convention_J_per_g=fuel_du,
                   sulfur_mol=n_s, sulfur_convention=convention,
                   u_corrections_J_per_g={k: v / mass for k, v in u_corr.items()})
    washburn_J = standard = None
    if wb is not None:
        washburn_J = wb.correction_J
        standard = du + washburn_J / mass
    return BombRunResult(
        run=info.run, kind=info.kind, sample=info.sample, calorimeter=info.calorimeter,
        corrected_rise_K=dT, u_corrected_rise_K=u_dT, corrections_J=corr,
        massic_energy_J_per_g=du, standard_massic_energy_J_per_g=standard,
        washburn_J=washburn_J, reference_temperature_K=T_ref,
        warnings=tuple(warnings) + tuple(getattr(rise, "warnings", ())), rise=rise,
        details=details,
    )
