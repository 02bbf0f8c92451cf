"""Towards infinite dilution: relative apparent molar enthalpy ΦL and extrapolation.

A molar enthalpy of solution measured at final molality m relates to the value at infinite
dilution through the relative apparent molar enthalpy of the solute (docs/methods.md (2.4)):

    Δ_solH(m) = Δ_solH^∞ + ΦL(m)

For an electrolyte M_νM X_νX (charges z_M, z_X; ν = ν_M + ν_X) three models of ΦL are offered
(docs/methods.md (2.5); parameters in ``solution_properties.toml``):

``limiting``
    Debye–Hückel limiting law, ΦL = ν|z_M z_X| (A_H/2) √I (for 1:1: A_H √m).
``extended``
    The Debye–Hückel term of Pitzer's equations, ΦL = ν|z_M z_X| (A_H/2b) ln(1 + b√I).
``pitzer``
    The extended term plus Pitzer's enthalpy virial terms
    −2 ν_M ν_X R T² [m B^L + m² ν_M z_M C^L] with
    B^L = β^(0)L + (2β^(1)L/(α² I)) [1 − (1 + α√I) e^(−α√I)], C^L = C^φL / (2√|z_M z_X|).
    Parameters are bundled for KCl and NaCl only.
``none``
    ΦL = 0 (non-electrolytes: Δ_solH(m) is extrapolated linearly in m).

:func:`extrapolate_to_infinite_dilution` fits ``Δ_solH(m) − ΦL_model(m) = Δ_solH^∞ + B_L m`` by
weighted least squares (weights 1/u²) and gives the intercept with its standard uncertainty.
A_H is computed at the run's temperature from the IAPWS water properties
(:mod:`calwork.solution.water`); Pitzer's β and C parameters are those at 298.15 K (a
warning is given away from it).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, fields
from typing import Any

import numpy as np

from calwork.core.constants import T_REF_K, R_J_per_mol_K
from calwork.core.errors import RunError, UncertaintyError, check_choice
from calwork.core.results import jsonable
from calwork.data import load_data
from calwork.solution.water import debye_huckel_slopes

__all__ = [
    "PHI_L_MODELS",
    "DilutionExtrapolation",
    "Electrolyte",
    "apparent_molar_enthalpy_DH",
    "apparent_molar_enthalpy_pitzer",
    "debye_huckel_A_H",
    "electrolyte_by_name",
    "extrapolate_to_infinite_dilution",
    "ionic_strength_mol_per_kg",
    "relative_apparent_molar_enthalpy_J_per_mol",
]

#: Models of the relative apparent molar enthalpy.
PHI_L_MODELS = ("extended", "limiting", "none", "pitzer")

_DATA = "solution_properties.toml"


@dataclass(frozen=True, kw_only=True)
class Electrolyte:
    """Charges and stoichiometry of an electrolyte M_νM X_νX, with Pitzer enthalpy parameters.

    ``beta0_L``, ``beta1_L`` (kg mol⁻¹ K⁻¹) and ``Cphi_L`` (kg² mol⁻² K⁻¹) are the
    temperature derivatives of β⁽⁰⁾, β⁽¹⁾ and C^φ at 298.15 K; ``None`` when not known.
    """

    name: str
    z_M: int = 1
    z_X: int = -1
    nu_M: int = 1
    nu_X: int = 1
    beta0_L: float | None = None
    beta1_L: float | None = None
    Cphi_L: float | None = None
    m_max_mol_per_kg: float | None = None
    source: str = ""

    @property
    def nu(self) -> int:
        """Number of ions per formula unit."""
        return self.nu_M + self.nu_X

    @property
    def has_pitzer(self) -> bool:
        """True when the Pitzer enthalpy parameters are known."""
        return None not in (self.beta0_L, self.beta1_L, self.Cphi_L)


def electrolyte_by_name(name: str) -> Electrolyte:
    """The bundled description of electrolyte ``name`` (e.g. ``'KCl'``).

    Examples
    --------
    >>> e = electrolyte_by_name("KCl")
    >>> e.nu, e.has_pitzer
    (2, True)
    """
    data = load_data(_DATA)
    if name in data.get("pitzer", {}):
        p = data["pitzer"][name]
        return Electrolyte(
            name=name, z_M=int(p["z_M"]), z_X=int(p["z_X"]), nu_M=int(p["nu_M"]),
            nu_X=int(p["nu_X"]), beta0_L=float(p["beta0_L_kg_per_mol_K"]),
            beta1_L=float(p["beta1_L_kg_per_mol_K"]), Cphi_L=float(p["Cphi_L_kg2_per_mol2_K"]),
            m_max_mol_per_kg=float(p["m_max_mol_per_kg"]), source=str(p["status"]),
        )
    known = data.get("electrolytes", {})
    if name in known:
        p = known[name]
        return Electrolyte(name=name, z_M=int(p["z_M"]), z_X=int(p["z_X"]),
                           nu_M=int(p["nu_M"]), nu_X=int(p["nu_X"]),
                           source="charges and stoichiometry (common chemistry)")
    raise RunError("electrolyte not bundled; give its charges and stoichiometry",
                   column="formula", found=name,
                   expected=f"one of {sorted(set(known) | set(data.get('pitzer', {})))}")


def debye_huckel_A_H(temperature_K: float = T_REF_K) -> float:
    """Debye–Hückel enthalpy slope A_H, J kg^½ mol^−3/2, from the IAPWS water properties.

    Examples
    --------
    >>> round(debye_huckel_A_H() / (8.314462618 * 298.15), 4)
    0.7956
    """
    return debye_huckel_slopes(temperature_K)[1]


def ionic_strength_mol_per_kg(molality_mol_per_kg, z_M: int = 1, z_X: int = -1,
                              nu_M: int = 1, nu_X: int = 1):
    """Ionic strength I = ½ m (ν_M z_M² + ν_X z_X²), mol/kg (array or float).

    Examples
    --------
    >>> float(ionic_strength_mol_per_kg(0.1, 2, -2))
    0.4
    """
    return 0.5 * np.asarray(molality_mol_per_kg, dtype=float) * (nu_M * z_M**2 + nu_X * z_X**2)


def _as_electrolyte(value: str | Electrolyte | None) -> Electrolyte:
    if value is None:
        return Electrolyte(name="1:1")
    if isinstance(value, Electrolyte):
        return value
    return electrolyte_by_name(value)


def _check_molality(m: np.ndarray) -> None:
    if np.any(~np.isfinite(m)) or np.any(m < 0):
        raise RunError("molality must be a finite number >= 0", column="molality_mol_per_kg",
                       found=m.tolist(), expected="m >= 0 mol/kg")


def apparent_molar_enthalpy_DH(
    molality_mol_per_kg,
    *,
    model: str = "extended",
    electrolyte: str | Electrolyte | None = None,
    A_H_J_kg05_per_mol15: float | None = None,
    b_kg05_per_mol05: float | None = None,
    temperature_K: float = T_REF_K,
):
    """Debye–Hückel relative apparent molar enthalpy ΦL, J/mol.

    Parameters
    ----------
    molality_mol_per_kg
        Molality of the electrolyte, mol/kg (float or array).
    model
        ``'limiting'`` (limiting law) or ``'extended'`` (Pitzer's Debye–Hückel term).
    electrolyte
        Name of a bundled electrolyte or an :class:`Electrolyte`; default a 1:1 electrolyte.
    A_H_J_kg05_per_mol15
        Enthalpy slope A_H, J kg^½ mol^−3/2; default the IAPWS value at ``temperature_K``.
    b_kg05_per_mol05
        Pitzer's b, kg^½ mol^−½; default 1.2.
    temperature_K
        Temperature of the solution, K (for A_H).

    Returns
    -------
    float or ndarray
        ΦL, J per mole of electrolyte (positive for these models).

    Examples
    --------
    >>> round(float(apparent_molar_enthalpy_DH(0.01, model="limiting")), 1)  # A_H √m
    197.2
    """
    check_choice("model", model, ("extended", "limiting"))
    e = _as_electrolyte(electrolyte)
    m = np.asarray(molality_mol_per_kg, dtype=float)
    _check_molality(m)
    data = load_data(_DATA)["debye_huckel"]
    A_H = (debye_huckel_A_H(temperature_K) if A_H_J_kg05_per_mol15 is None
           else float(A_H_J_kg05_per_mol15))
    b = float(data["b_kg05_per_mol05"] if b_kg05_per_mol05 is None else b_kg05_per_mol05)
    sqrt_I = np.sqrt(ionic_strength_mol_per_kg(m, e.z_M, e.z_X, e.nu_M, e.nu_X))
    factor = e.nu * abs(e.z_M * e.z_X)
    if model == "limiting":
        out = factor * (A_H / 2.0) * sqrt_I
    else:
        out = factor * (A_H / (2.0 * b)) * np.log1p(b * sqrt_I)
    return float(out) if out.ndim == 0 else out


def apparent_molar_enthalpy_pitzer(
    molality_mol_per_kg,
    *,
    electrolyte: str | Electrolyte,
    temperature_K: float = T_REF_K,
    A_H_J_kg05_per_mol15: float | None = None,
):
    """Pitzer relative apparent molar enthalpy ΦL, J/mol (docs/methods.md (2.5)).

    Parameters
    ----------
    molality_mol_per_kg
        Molality, mol/kg (float or array).
    electrolyte
        Bundled electrolyte with Pitzer parameters (``'KCl'``, ``'NaCl'``) or an
        :class:`Electrolyte` carrying ``beta0_L``, ``beta1_L``, ``Cphi_L``.
    temperature_K
        Temperature for the R T² factor, K (parameters are those at 298.15 K).
    A_H_J_kg05_per_mol15
        Enthalpy slope, J kg^½ mol^−3/2; default the IAPWS value at ``temperature_K``.

    Examples
    --------
    >>> round(float(apparent_molar_enthalpy_pitzer(0.111, electrolyte="KCl")))
    344
    """
    e = _as_electrolyte(electrolyte)
    if not e.has_pitzer:
        raise RunError("no Pitzer enthalpy parameters for this electrolyte", column="formula",
                       found=e.name, expected="KCl, NaCl or an Electrolyte with beta0_L, "
                       "beta1_L and Cphi_L")
    m = np.asarray(molality_mol_per_kg, dtype=float)
    _check_molality(m)
    alpha = float(load_data(_DATA)["debye_huckel"]["alpha_kg05_per_mol05"])
    dh = np.asarray(apparent_molar_enthalpy_DH(m, model="extended", electrolyte=e,
                                               A_H_J_kg05_per_mol15=A_H_J_kg05_per_mol15,
                                               temperature_K=temperature_K))
    ionic = ionic_strength_mol_per_kg(m, e.z_M, e.z_X, e.nu_M, e.nu_X)
    x = alpha * np.sqrt(ionic)
    # g(x) = 2[1 − (1 + x) e^−x]/x², → 1 − 2x/3 as x → 0 (series used below x = 1e-4)
    x_safe = np.where(x > 1e-4, x, 1.0)
    g = np.where(x > 1e-4, 2.0 * (1.0 - (1.0 + x_safe) * np.exp(-x_safe)) / x_safe**2,
                 1.0 - 2.0 * x / 3.0)
    B_L = e.beta0_L + e.beta1_L * g
    C_L = e.Cphi_L / (2.0 * math.sqrt(abs(e.z_M * e.z_X)))
    RT2 = R_J_per_mol_K * temperature_K**2
    out = dh - 2.0 * e.nu_M * e.nu_X * RT2 * (m * B_L + m * m * e.nu_M * e.z_M * C_L)
    return float(out) if out.ndim == 0 else out


def relative_apparent_molar_enthalpy_J_per_mol(
    molality_mol_per_kg,
    *,
    model: str = "extended",
    electrolyte: str | Electrolyte | None = None,
    temperature_K: float = T_REF_K,
):
    """ΦL by ``model`` (one of :data:`PHI_L_MODELS`), J/mol; ``'none'`` gives zeros."""
    check_choice("model", model, PHI_L_MODELS)
    if model == "none":
        m = np.asarray(molality_mol_per_kg, dtype=float)
        _check_molality(m)
        out = np.zeros_like(m)
        return float(out) if out.ndim == 0 else out
    if model == "pitzer":
        return apparent_molar_enthalpy_pitzer(molality_mol_per_kg, electrolyte=electrolyte,
                                              temperature_K=temperature_K)
    return apparent_molar_enthalpy_DH(molality_mol_per_kg, model=model, electrolyte=electrolyte,
                                      temperature_K=temperature_K)


@dataclass(frozen=True, kw_only=True)
class DilutionExtrapolation:
    """Result of an extrapolation of Δ_solH(m) to infinite dilution."""

    infinite_dilution_enthalpy_kJ_per_mol: float
    u_infinite_dilution_enthalpy_kJ_per_mol: float
    #: Slope B_L of the residual linear term, kJ kg mol⁻² (None when not fitted).
    slope_kJ_kg_per_mol2: float | None
    u_slope_kJ_kg_per_mol2: float | None
    model: str
    method: str
    n_points: int
    n_molalities: int
    chi2: float | None
    dof: int
    birge_ratio: float | None
    molalities_mol_per_kg: tuple[float, ...]
    phi_L_kJ_per_mol: tuple[float, ...]
    residuals_kJ_per_mol: tuple[float, ...]
    electrolyte: str | None = None
    warnings: tuple[str, ...] = ()
    details: Mapping[str, Any] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {f.name: jsonable(getattr(self, f.name)) for f in fields(self)}

    def report(self) -> str:
        slope = ("" if self.slope_kJ_kg_per_mol2 is None else
                 f", B_L = {self.slope_kJ_kg_per_mol2:.4f} ± {self.u_slope_kJ_kg_per_mol2:.4f}"
                 " kJ kg/mol²")
        return (
            f"Δ_solH∞ = {self.infinite_dilution_enthalpy_kJ_per_mol:.4f} ± "
            f"{self.u_infinite_dilution_enthalpy_kJ_per_mol:.4f} kJ/mol (u, k = 1) from "
            f"{self.n_points} runs at {self.n_molalities} molalities; ΦL model {self.model!r}, "
            f"{self.method}{slope}"
        )


def extrapolate_to_infinite_dilution(
    molalities_mol_per_kg: Sequence[float],
    molar_enthalpies_kJ_per_mol: Sequence[float],
    u_molar_enthalpies_kJ_per_mol: Sequence[float],
    *,
    model: str = "extended",
    electrolyte: str | Electrolyte | None = None,
    fit_slope: bool | None = None,
    temperature_K: float = T_REF_K,
    scale_by_birge: bool = True,
    u_phi_L_fraction: float = 0.0,
) -> DilutionExtrapolation:
    """Extrapolate molar enthalpies of solution to infinite dilution.

    Fits ``y_i = Δ_solH(m_i) − ΦL(m_i) = Δ_solH^∞ + B_L m_i`` by weighted least squares
    (weights 1/u_i²). With one molality only (or ``fit_slope=False``) the intercept is the
    weighted mean of ``y_i`` (for a single molality that is the ΦL correction of that molality
    alone).

    Parameters
    ----------
    molalities_mol_per_kg
        Final molalities m_i, mol/kg.
    molar_enthalpies_kJ_per_mol
        Δ_solH(m_i), kJ/mol.
    u_molar_enthalpies_kJ_per_mol
        Standard uncertainties, kJ/mol (all > 0).
    model
        ΦL model, one of :data:`PHI_L_MODELS` (``'none'`` for non-electrolytes).
    electrolyte
        Electrolyte name or :class:`Electrolyte` (default a 1:1 electrolyte).
    fit_slope
        Fit the linear term B_L m. Default: yes when at least two molalities differ and the
        model is not ``'pitzer'`` (Pitzer's parameters already describe the m-dependence).
    temperature_K
        Temperature of the results, K (the parameters are at 298.15 K).
    scale_by_birge
        Multiply the parameter uncertainties by the Birge ratio √(χ²/ν) when it exceeds 1
        (the scatter is larger than the stated uncertainties; common practice).
    u_phi_L_fraction
        Relative standard uncertainty of the ΦL model values (Type B), added to the
        intercept's uncertainty as ``u_phi_L_fraction × mean |ΦL|``; default 0 (not included).

    Returns
    -------
    DilutionExtrapolation

    Examples
    --------
    >>> r = extrapolate_to_infinite_dilution([0.111], [17.584], [0.017], model="pitzer",
    ...                                      electrolyte="KCl")
    >>> round(r.infinite_dilution_enthalpy_kJ_per_mol, 3)
    17.24
    """
    check_choice("model", model, PHI_L_MODELS)
    m = np.asarray(molalities_mol_per_kg, dtype=float)
    H = np.asarray(molar_enthalpies_kJ_per_mol, dtype=float)
    u = np.asarray(u_molar_enthalpies_kJ_per_mol, dtype=float)
    if not (m.shape == H.shape == u.shape) or m.ndim != 1 or m.size == 0:
        raise RunError("molalities, enthalpies and uncertainties must be equal-length lists",
                       column="molality_mol_per_kg", found=(m.shape, H.shape, u.shape))
    _check_molality(m)
    if np.any(~np.isfinite(H)):
        raise RunError("molar enthalpies must be finite", column="molar_enthalpy_kJ_per_mol",
                       found=H.tolist())
    if np.any(~np.isfinite(u)) or np.any(u <= 0):
        raise UncertaintyError("every molar enthalpy needs a positive finite uncertainty",
                               column="u_molar_enthalpy_kJ_per_mol", found=u.tolist())
    e = None if model == "none" else _as_electrolyte(electrolyte)
    warnings: list[str] = []
    if abs(temperature_K - T_REF_K) > 5.0 and model == "pitzer":
        warnings.append(f"Pitzer's ΦL parameters are for 298.15 K; results at "
                        f"{temperature_K:.2f} K (A_H is computed at that temperature)")
    if e is not None and e.m_max_mol_per_kg is not None and m.max() > e.m_max_mol_per_kg:
        warnings.append(f"molality above the range of the {e.name} parameters")
    phi = np.atleast_1d(relative_apparent_molar_enthalpy_J_per_mol(
        m, model=model, electrolyte=e, temperature_K=temperature_K)) / 1000.0
    y = H - phi
    n_mol = int(np.unique(np.round(m, 12)).size)
    if fit_slope is None:
        fit_slope = n_mol >= 2 and model != "pitzer"
    if fit_slope and n_mol < 2:
        raise RunError("a slope needs at least two different molalities",
                       column="molality_mol_per_kg", found=m.tolist())
    if not fit_slope and model in ("limiting", "extended"):
        warnings.append("Debye–Hückel term only, no fitted B_L m term: the neglected virial "
                        "term is not in the uncertainty unless u_phi_L_fraction is given")
    w = 1.0 / u**2
    if fit_slope:
        A = np.column_stack([np.ones_like(m), m])
        method = "weighted linear fit in m"
    else:
        A = np.ones((m.size, 1))
        method = ("ΦL correction of a single molality" if n_mol == 1
                  else "weighted mean of Δ_solH(m) − ΦL(m)")
    Aw = A * np.sqrt(w)[:, None]
    yw = y * np.sqrt(w)
    coef, *_ = np.linalg.lstsq(Aw, yw, rcond=None)
    cov = np.linalg.inv(Aw.T @ Aw)
    resid = y - A @ coef
    dof = m.size - A.shape[1]
    chi2 = float(np.sum(w * resid**2)) if dof > 0 else None
    birge = math.sqrt(chi2 / dof) if chi2 is not None else None
    if scale_by_birge and birge is not None and birge > 1.0:
        cov = cov * birge**2
        warnings.append(f"scatter exceeds the stated uncertainties (Birge ratio {birge:.2f}); "
                        "uncertainties scaled")
    u_int = math.hypot(math.sqrt(cov[0, 0]),
                       float(u_phi_L_fraction) * float(np.mean(np.abs(phi))))
    if not math.isfinite(u_int) or u_int <= 0:
        raise UncertaintyError("the intercept's uncertainty could not be propagated",
                               found=u_int)
    slope = float(coef[1]) if fit_slope else None
    u_slope = math.sqrt(cov[1, 1]) if fit_slope else None
    return DilutionExtrapolation(
        infinite_dilution_enthalpy_kJ_per_mol=float(coef[0]),
        u_infinite_dilution_enthalpy_kJ_per_mol=u_int,
        slope_kJ_kg_per_mol2=slope, u_slope_kJ_kg_per_mol2=u_slope, model=model,
        method=method, n_points=int(m.size), n_molalities=n_mol, chi2=chi2, dof=dof,
        birge_ratio=birge, molalities_mol_per_kg=tuple(m.tolist()),
        phi_L_kJ_per_mol=tuple(phi.tolist()), residuals_kJ_per_mol=tuple(resid.tolist()),
        electrolyte=None if e is None else e.name, warnings=tuple(warnings),
        details={"covariance": cov.tolist()},
    )
