"""Series of bomb runs: the calibration of a calorimeter and the result of a sample.

Uncertainty (GUM law of propagation, JCGM 100:2008; the trade's scheme of Rossini 1956 and
Olofsson 1979, docs/methods.md §4): the budget of a sample's mean massic energy combines

* the scatter of the sample series, ``s/√n`` (Type A);
* the calibration series, ``s(ε)/√n_c`` — systematic for every run on that calorimeter, so it
  is *not* averaged down over the sample runs;
* the certified value of the reference material (systematic, shared by every calorimeter
  calibrated with it);
* the auxiliary corrections (ignition, fuse, cotton, auxiliary, acids, soot) and, for the
  standard values, the Washburn correction (Type B, systematic);

and, through :func:`calwork.hess.combustion_link`, the auxiliary formation enthalpies
(CO2, H2O, ...). Results are reported as u (k = 1) and U = 2u ("twice the overall standard
deviation of the mean"). Components shared between samples (calibration, certificate,
constants) make their results correlated: :func:`sample_covariance` builds the covariance.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from calwork.bomb.fuels import fuel_outputs
from calwork.core.errors import CalworkError, UncertaintyError
from calwork.core.results import BombRunResult, CalibrationResult, SampleResult
from calwork.core.statistics import DEFAULT_RSD_LIMIT_PERCENT, series_statistics
from calwork.core.uncertainty import Budget, root_sum_square, variance_component
from calwork.data import load_data

__all__ = [
    "SampleTerms",
    "calibration_series",
    "formation_enthalpies",
    "sample_covariance",
    "sample_series",
]


def calibration_series(
    calorimeter: str, runs: Sequence[BombRunResult], *,
    rsd_limit_percent: float | None = DEFAULT_RSD_LIMIT_PERCENT,
) -> CalibrationResult:
    """The energy equivalent of ``calorimeter`` from its successful calibration runs.

    ``u_energy_equivalent_J_per_K`` combines the standard deviation of the mean, the
    certificate's relative standard uncertainty and the correction constants (systematic);
    each is in ``budget`` separately (the sample budgets use them separately, with their
    correlations). With a
    single run the propagated rise uncertainty stands in for the scatter (and a warning says
    so).
    """
    ok = [r for r in runs if r.error is None and r.energy_equivalent_J_per_K is not None]
    if not ok:
        raise CalworkError(f"calorimeter {calorimeter!r}: no successful calibration run")
    values = [r.energy_equivalent_J_per_K for r in ok]
    names = [r.run for r in ok]
    st = series_statistics(values, names, rsd_limit_percent=rsd_limit_percent,
                           label=f"calibration of {calorimeter!r}")
    warnings = list(st.warnings)
    if st.std_dev_of_mean is None:
        sdm = ok[0].u_energy_equivalent_J_per_K
        warnings.append("u(ε) of a single calibration run: the propagated rise uncertainty "
                        "is used in place of the scatter")
    else:
        sdm = st.std_dev_of_mean
    if not sdm or not math.isfinite(sdm) or sdm <= 0:
        raise UncertaintyError(f"calorimeter {calorimeter!r}: the scatter of ε is zero",
                               found=sdm, expected="a positive standard deviation")
    u_r_cert = float(np.mean([r.details.u_certificate_relative for r in ok]))
    u_cert = st.mean * u_r_cert
    names_k = sorted({k for r in ok for k in r.corrections_J})
    per_rise = {k: float(np.mean([r.corrections_J.get(k, 0.0) / r.corrected_rise_K
                                  for r in ok])) for k in names_k}
    # the correction constants (fuse J/cm, ΔfU(HNO3), the ignition estimate…): a relative
    # error r_k moves every run's ε by r_k C_k/ΔT, so the mean by r_k·mean(C_k/ΔT) (systematic)
    rel = load_data("bomb_corrections.toml")["uncertainty_relative"]
    u_corr = root_sum_square({k: float(rel[k]) * abs(per_rise[k]) for k in names_k},
                             name="the correction constants' share of u(ε)")
    materials = sorted({str(r.details.reference_material) for r in ok})
    certs = sorted({math.nan if r.details.certified_J_per_g is None
                    else float(r.details.certified_J_per_g) for r in ok})
    return CalibrationResult(
        calorimeter=calorimeter, energy_equivalent_J_per_K=st.mean,
        u_energy_equivalent_J_per_K=math.sqrt(sdm**2 + u_cert**2 + u_corr**2), n_runs=st.n,
        rsd_percent=math.nan if st.rsd_percent is None else st.rsd_percent,
        std_dev_J_per_K=math.nan if st.std_dev is None else st.std_dev,
        std_dev_of_mean_J_per_K=sdm, runs=names, values_J_per_K=values,
        method="reference-material: " + ", ".join(materials),
        budget=Budget.of(
            "energy equivalent ε", "J/K",
            {"std_dev_of_mean_J_per_K": sdm, "certificate_J_per_K": u_cert,
             "corrections_J_per_K": u_corr, "certificate_relative": u_r_cert},
            units={"certificate_relative": "1"},
            keys={"std_dev_of_mean_J_per_K": f"calibration {calorimeter}",
                  "certificate_J_per_K": f"certificate {certs[0]:g} J/g"
                  if len(certs) == 1 else "certificates",
                  "certificate_relative": f"certificate {certs[0]:g} J/g"
                  if len(certs) == 1 else "certificates",
                  "corrections_J_per_K": "correction constants"}),
        certified_J_per_g=certs[0] if len(certs) == 1 and math.isfinite(certs[0]) else None,
        rsd_limit_percent=rsd_limit_percent,
        outlier_test=st.outlier_test, warnings=warnings,
        correction_per_rise_J_per_K=per_rise,
    )


@dataclass(frozen=True, kw_only=True)
class SampleTerms:
    """Systematic budget components of a sample's standard massic energy, J/g, keyed by
    what they share (``('calibration', calorimeter)``, ``('certificate', value)``,
    ``('correction', name)``, ``('washburn',)``), plus its independent scatter."""

    sample: str
    scatter_J_per_g: float
    shared: Mapping[tuple, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "shared", MappingProxyType(dict(self.shared)))


def _mean_details(runs: Sequence[BombRunResult], key: str) -> float | None:
    vals = [getattr(r.details, key) for r in runs]
    if any(v is None for v in vals):
        return None
    return float(np.mean(vals))


def sample_series(
    sample: str, runs: Sequence[BombRunResult], infos: Sequence[Any],
    calibrations: Mapping[str, CalibrationResult],
) -> tuple[SampleResult, SampleTerms]:
    """Mean and budget of a sample's successful combustion runs.

    Parameters
    ----------
    sample
        Sample name.
    runs, infos
        The sample's successful RunResults and their RunInfos (same order).
    calibrations
        Calibration of each calorimeter, by name.

    The molar and formation quantities are added by :func:`formation_enthalpies`.
    """
    n = len(runs)
    info0 = infos[0]
    rel = load_data("bomb_corrections.toml")["uncertainty_relative"]
    values = [r.massic_energy_J_per_g for r in runs]
    st = series_statistics(values, [r.run for r in runs], rsd_limit_percent=None,
                           label=f"sample {sample!r}")
    warnings = [w for w in st.warnings if "single run" not in w]
    if st.std_dev_of_mean is None:
        scatter = runs[0].details.u_massic_energy_rise_J_per_g
        warnings.append("a single run: the propagated rise uncertainty is used in place of "
                        "the scatter of the series")
    else:
        scatter = st.std_dev_of_mean
    shared: dict[tuple, float] = {}
    for r in runs:
        cal = calibrations[r.calorimeter]
        sens = r.details.d_massic_energy_d_epsilon_K_per_g / n
        key = ("calibration", cal.calorimeter)
        shared[key] = shared.get(key, 0.0) + sens * cal.budget["std_dev_of_mean_J_per_K"]
        ckey = ("certificate", math.nan if cal.certified_J_per_g is None
                else cal.certified_J_per_g)
        shared[ckey] = shared.get(ckey, 0.0) + sens * cal.budget["certificate_J_per_K"]
        # A correction constant (fuse J/cm, ΔfU(HNO3), the ignition estimate…) serves the
        # calibration and the sample runs alike: its relative error r moves Δu by
        # r·(C_sample − ΔT_sample·S_cal)/m, S_cal = mean(C_cal/ΔT_cal) being the share of ε
        # it contributed. Treated as systematic (fully correlated); per-run random parts
        # show in the scatter.
        per_rise = cal.correction_per_rise_J_per_K
        mass = r.details.mass_vacuum_g
        for name, c_J in r.corrections_J.items():
            u_rel = float(rel[name])
            net = c_J - r.corrected_rise_K * per_rise.get(name, 0.0)
            k = ("correction", name)
            shared[k] = shared.get(k, 0.0) + u_rel * net / mass / n
    bomb_budget = {"scatter_J_per_g": scatter}
    for kind, part in (("calibration_J_per_g", "calibration"),
                       ("certificate_J_per_g", "certificate"),
                       ("corrections_J_per_g", "correction")):
        bomb_budget[kind] = root_sum_square(
            [abs(v) for k, v in shared.items() if k[0] == part],
            name=f"the {part} share of u(Δu) of {sample!r}")
    u_bomb = root_sum_square(bomb_budget, name=f"Δu of {sample!r}")
    budget = dict(bomb_budget)
    standard = u_standard = None
    if all(r.standard_massic_energy_J_per_g is not None for r in runs):
        standard = float(np.mean([r.standard_massic_energy_J_per_g for r in runs]))
        # the correction's own u (cross-virial model spread, virial and property data):
        # systematic, the same for every run of the series, so averaged, not reduced by √n
        w = sum(r.details.washburn_u_J / r.details.mass_vacuum_g for r in runs) / n
        shared[("washburn",)] = w
        budget["washburn_J_per_g"] = w
        u_standard = math.sqrt(u_bomb**2 + w * w)
    if u_bomb <= 0 or not math.isfinite(u_bomb):
        raise UncertaintyError(f"sample {sample!r}: the uncertainty could not be propagated",
                               found=u_bomb)
    fuel = _fuel(runs, info0)
    result = SampleResult(
        sample=sample, formula=info0.formula, n_runs=n, runs=[r.run for r in runs],
        kind="combustion", phase=info0.phase or "cr",
        calorimeter=runs[0].calorimeter if len({r.calorimeter for r in runs}) == 1 else None,
        massic_energy_J_per_g=st.mean, u_massic_energy_J_per_g=u_bomb,
        standard_massic_energy_J_per_g=standard,
        u_standard_massic_energy_J_per_g=u_standard,
        budget=Budget.of("standard massic energy Δu°" if u_standard is not None
                         else "massic energy Δu", "J/g", budget,
                         keys={"calibration_J_per_g": "calibration",
                               "certificate_J_per_g": "certificate",
                               "corrections_J_per_g": "correction constants",
                               "washburn_J_per_g": "Washburn data"}),
        fuel=fuel, warnings=warnings, coverage_factor=2.0,
    )
    return result, SampleTerms(sample=sample, scatter_J_per_g=scatter, shared=shared)


def _fuel(runs: Sequence[BombRunResult], info: Any) -> dict[str, float]:
    if info.hydrogen_mass_fraction is None and info.moisture_mass_fraction is None \
            and info.ash_mass_fraction is None:
        return {}
    fuel_du = float(np.mean([r.details.massic_energy_fuel_convention_J_per_g
                             for r in runs]))
    return fuel_outputs(fuel_du, hydrogen=info.hydrogen_mass_fraction,
                        oxygen=info.oxygen_mass_fraction, nitrogen=info.nitrogen_mass_fraction,
                        moisture=info.moisture_mass_fraction, ash=info.ash_mass_fraction)


def sample_covariance(terms: Sequence[SampleTerms]) -> dict[str, Any]:
    """Covariance matrix of the samples' standard massic energies, (J/g)².

    ``cov(A, B) = Σ_k c_A,k c_B,k`` over the shared components (same calibration, same
    certificate, same correction constants, Washburn data) plus the scatter on the diagonal.
    """
    names = [t.sample for t in terms]
    m = len(terms)
    mat = [[0.0] * m for _ in range(m)]
    for i, a in enumerate(terms):
        for j, b in enumerate(terms):
            s = sum(v * b.shared[k] for k, v in a.shared.items() if k in b.shared)
            if i == j:
                s += a.scatter_J_per_g ** 2
            mat[i][j] = s
    return {"quantity": "standard_massic_energy_J_per_g", "unit": "(J/g)^2",
            "names": names, "matrix": mat}


def _hess_convention(formula: str, convention: str) -> str:
    from calwork.formula import element_counts

    if not element_counts(formula).get("S"):
        return "thermochemical"
    return "sulfur-dioxide" if convention == "fuel" else "thermochemical"


def formation_enthalpies(
    samples: Sequence[SampleResult], terms: Sequence[SampleTerms],
    conventions: Sequence[str],
) -> tuple[list[SampleResult], dict[str, Any]]:
    """Δ_cU°, Δ_cH° and Δ_fH° of the samples through :func:`calwork.hess.combustion_link_many`.

    Samples with a formula and a standard massic energy are solved together (one network
    per sulfur convention) with the covariance of their Δ_cu° from :func:`sample_covariance`,
    so compounds measured on one calorimeter get correlated Δ_fH°.

    Returns
    -------
    (samples, covariance)
        The samples with the molar fields filled in, and the ``Reduction.covariance`` mapping:
        ``quantity``, ``unit``, ``names``, ``matrix`` (Δ_cu°, (J/g)²) and ``delta_f_H``: a
        list of ``{"names", "matrix"}`` blocks, (kJ/mol)².
    """
    from dataclasses import replace

    from calwork.hess import combustion_link_many

    out = list(samples)
    idx = [i for i, s in enumerate(samples)
           if s.formula and s.standard_massic_energy_J_per_g is not None]
    cov = sample_covariance([terms[i] for i in idx])
    cov["delta_f_H"] = []
    groups: dict[str, list[int]] = {}
    for i in idx:
        try:
            key = _hess_convention(samples[i].formula, conventions[i])
            # check each compound on its own first: one compound the link cannot take (an
            # element beyond CHONS, a non-negative Δcu°) must not fail the network of the
            # others solved with it
            _check_linkable(samples[i], key)
        except CalworkError as exc:
            out[i] = replace(out[i], warnings=(*out[i].warnings,
                                               f"formation enthalpy not computed: {exc}"))
            continue
        groups.setdefault(key, []).append(i)
    for convention, members in groups.items():
        # a species may appear once per network; repeated compounds are solved on their own
        seen: dict[tuple[str, str], int] = {}
        batches: list[list[int]] = [[]]
        for i in members:
            key = (samples[i].formula, _phase(samples[i]))
            if key in seen:
                batches.append([i])
            else:
                seen[key] = i
                batches[0].append(i)
        for batch in batches:
            if not batch:
                continue
            pos = [idx.index(i) for i in batch]
            sub = np.asarray(cov["matrix"], dtype=float)[np.ix_(pos, pos)]
            compounds = [{"formula": samples[i].formula, "phase": _phase(samples[i]),
                          "massic_energy_J_per_g": samples[i].standard_massic_energy_J_per_g,
                          "u_massic_energy_J_per_g": None} for i in batch]
            try:
                links = combustion_link_many(compounds, covariance_J2_per_g2=sub,
                                             sulfur_convention=convention)
            except CalworkError as exc:
                for i in batch:
                    out[i] = replace(out[i], warnings=(
                        *out[i].warnings, f"formation enthalpy not computed: {exc}"))
                continue
            cov["delta_f_H"].append({"names": [samples[i].sample for i in batch],
                                     "species": list(links.names),
                                     "unit": "(kJ/mol)^2",
                                     "matrix": links.covariance.tolist()})
            for i, link in zip(batch, links.links, strict=True):
                # the key values' share of u(Δ_fH°): u_f² − u_c² (the two are independent)
                key_values = math.sqrt(variance_component(
                    link.u_delta_f_H_kJ_per_mol**2 - link.u_delta_c_H_kJ_per_mol**2,
                    magnitude=link.u_delta_f_H_kJ_per_mol**2, name="key-value component"))
                formation = Budget.of(
                    "standard enthalpy of formation Δ_fH°", "kJ/mol",
                    {"combustion_kJ_per_mol": link.u_delta_c_H_kJ_per_mol,
                     "key_values_kJ_per_mol": key_values},
                    keys={"key_values_kJ_per_mol": "key values"})
                out[i] = replace(
                    out[i], derived_budgets={**out[i].derived_budgets, "delta_f_H": formation},
                    delta_c_U_kJ_per_mol=link.delta_c_U_kJ_per_mol,
                    u_delta_c_U_kJ_per_mol=link.u_delta_c_U_kJ_per_mol,
                    delta_c_H_kJ_per_mol=link.delta_c_H_kJ_per_mol,
                    u_delta_c_H_kJ_per_mol=link.u_delta_c_H_kJ_per_mol,
                    delta_f_H_kJ_per_mol=link.delta_f_H_kJ_per_mol,
                    u_delta_f_H_kJ_per_mol=link.u_delta_f_H_kJ_per_mol,
                    U_delta_f_H_kJ_per_mol=2.0 * link.u_delta_f_H_kJ_per_mol,
                    coverage_factor=2.0,
                    key_values_used={"species": link.species, "reaction": link.reaction,
                                     "sulfur_convention": link.sulfur_convention,
                                     "values": [dict(kv) for kv in link.key_values_used]},
                )
    return out, cov


def _check_linkable(sample: SampleResult, convention: str) -> None:
    """Raise the combustion link's error for a sample it cannot take (checked alone)."""
    from calwork.core.errors import NetworkError
    from calwork.hess import combustion_reaction

    combustion_reaction(sample.formula, phase=_phase(sample), sulfur_convention=convention)
    value = sample.standard_massic_energy_J_per_g
    if not math.isfinite(value) or value >= 0:
        raise NetworkError("a standard massic energy of combustion is negative (J/g, "
                           "thermochemical sign)", found=value, expected="a number < 0")


def _phase(sample: SampleResult) -> str:
    return sample.phase or "cr"
