"""From a standard massic energy of combustion to Δ_cU°, Δ_cH° and Δ_fH° (docs/methods.md §3.7–3.8).

For a compound C_aH_bO_cN_dS_e (phase ``cr``, ``l``, ...):

* Δ_cU° = M · Δ_cu°, with M from conventional atomic weights (:mod:`calwork.formula`);
* the standard combustion reaction (water liquid, nitrogen as N₂(g)); for sulfur the
  ``thermochemical`` convention of rotating-bomb work takes the final state H₂SO₄·115H₂O(l)
  (METHODS eq. 3.7)::

      C_aH_bO_cN_dS_e + (a + b/4 − c/2 + 3e/2) O₂(g) + (116e − b/2) H₂O(l)
          → a CO₂(g) + (d/2) N₂(g) + e H₂SO₄·115H₂O(l)

  while ``sulfur-dioxide`` burns S to SO₂(g) (as fuel tables do);
* Δ_cH° = Δ_cU° + Δn(gas) R T (ideal gases);
* Δ_fH° from the network solver: the combustion reaction is one determination, the key
  values (CO₂(g), H₂O(l), H₂SO₄ in 115 H₂O) enter as rows, so u(Δ_fH°) carries u(Δ_cu°) and
  the key values with their correlations — for CHON this is
  u² = u²(Δ_cH) + a² u²(CO₂) + (b/2)² u²(H₂O) (docs/methods.md §3.8).


"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from types import MappingProxyType
from typing import Any

import numpy as np

from calwork.core.constants import T_REF_K, R_J_per_mol_K
from calwork.core.errors import FormulaError, NetworkError, check_choice
from calwork.formula import molar_mass_g_per_mol
from calwork.hess.key_values import KeyValues, load_key_values
from calwork.hess.kirchhoff import CpModel
from calwork.hess.network import Network, solve_network
from calwork.hess.reactions import Reaction
from calwork.hess.species import Species, parse_species

__all__ = [
    "SULFUR_CONVENTIONS",
    "CombustionLink",
    "CombustionLinks",
    "combustion_link",
    "combustion_link_many",
    "combustion_reaction",
]

SULFUR_CONVENTIONS = ("thermochemical", "sulfur-dioxide")
_ALLOWED = {"C", "H", "O", "N", "S"}
_O2 = "O2(g)"
_H2O = "H2O(l)"


def combustion_reaction(formula: str, *, phase: str = "cr",
                        sulfur_convention: str = "thermochemical") -> Reaction:
    """The standard combustion reaction of a CHON(S) compound (Δ_rH not attached).

    Examples
    --------
    >>> combustion_reaction("C7H6O2").equation
    'C7H6O2(cr) + 15/2 O2(g) = 7 CO2(g) + 3 H2O(l)'
    """
    check_choice("sulfur_convention", sulfur_convention, SULFUR_CONVENTIONS)
    compound = parse_species(f"{formula}({phase})")
    if compound.charge:
        raise FormulaError("a combustion compound must be neutral", found=formula)
    extra = sorted(set(compound.elements) - _ALLOWED)
    if extra:
        raise FormulaError(f"combustion link handles C, H, O, N, S compounds; found {extra}",
                           found=formula)
    n = {el: compound.elements.get(el, Fraction(0)) for el in _ALLOWED}
    a, b, c, d, e = n["C"], n["H"], n["O"], n["N"], n["S"]
    thermochemical = sulfur_convention == "thermochemical" and e != 0
    o2 = a + b / 4 - c / 2 + (3 * e / 2 if thermochemical else e)
    stoich: dict[Species | str, Fraction] = {compound: Fraction(-1), _O2: -o2}
    water = b / 2 - 116 * e if thermochemical else b / 2  # > 0: water is a product
    if water < 0:
        stoich[_H2O] = water
    if a:
        stoich["CO2(g)"] = a
    if water > 0:
        stoich[_H2O] = water
    if d:
        stoich["N2(g)"] = d / 2
    if e:
        stoich["H2SO4·115H2O(l)" if thermochemical else "SO2(g)"] = e
    reaction = Reaction(stoichiometry=stoich, id=f"combustion:{compound.name}")
    reaction.check_balance()
    return reaction


@dataclass(frozen=True, kw_only=True)
class CombustionLink:
    """Δ_cU°, Δ_cH° and Δ_fH° of one compound, kJ/mol at ``T_K``, standard uncertainties."""

    formula: str
    phase: str
    species: str
    molar_mass_g_per_mol: float
    massic_energy_J_per_g: float
    u_massic_energy_J_per_g: float
    delta_c_U_kJ_per_mol: float
    u_delta_c_U_kJ_per_mol: float
    delta_n_gas: float
    delta_c_H_kJ_per_mol: float
    u_delta_c_H_kJ_per_mol: float
    delta_f_H_kJ_per_mol: float
    u_delta_f_H_kJ_per_mol: float
    coverage_factor: float
    reaction: str
    sulfur_convention: str
    T_K: float
    key_values_used: tuple[Mapping[str, Any], ...] = ()
    #: contribution of each input to u(Δ_fH°), kJ/mol (|∂Δ_fH/∂x| u(x))
    budget: Mapping[str, float] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "budget", MappingProxyType(dict(self.budget)))
        object.__setattr__(self, "key_values_used", tuple(self.key_values_used))

    @property
    def U_delta_f_H_kJ_per_mol(self) -> float:
        """Expanded uncertainty of Δ_fH° (k = ``coverage_factor``)."""
        return self.coverage_factor * self.u_delta_f_H_kJ_per_mol

    def to_dict(self) -> dict[str, Any]:
        out = {k: getattr(self, k) for k in self.__dataclass_fields__}
        out["budget"] = dict(self.budget)
        out["key_values_used"] = [dict(kv) for kv in self.key_values_used]
        out["U_delta_f_H_kJ_per_mol"] = self.U_delta_f_H_kJ_per_mol
        return out

    def report(self) -> str:
        k = self.coverage_factor
        return "\n".join([
            f"{self.species}: M = {self.molar_mass_g_per_mol:.4f} g/mol",
            f"  Δcu° = {self.massic_energy_J_per_g:.2f} ± {self.u_massic_energy_J_per_g:.2f} J/g",
            f"  ΔcU° = {self.delta_c_U_kJ_per_mol:.3f} ± {self.u_delta_c_U_kJ_per_mol:.3f} kJ/mol",
            f"  {self.reaction}   (Δn(gas) = {self.delta_n_gas:g})",
            f"  ΔcH° = {self.delta_c_H_kJ_per_mol:.3f} ± {self.u_delta_c_H_kJ_per_mol:.3f} kJ/mol",
            (f"  ΔfH° = {self.delta_f_H_kJ_per_mol:.3f} ± {self.u_delta_f_H_kJ_per_mol:.3f} kJ/mol"
            f" (u, k = 1); U = {self.U_delta_f_H_kJ_per_mol:.3f} kJ/mol (k = {k:g})"),
            "  key values: " + ", ".join(f"{kv['species']} {kv['value_kJ_per_mol']} ± "
                                         f"{kv['u_kJ_per_mol']:.4g} ({kv['status']})"
                                         for kv in self.key_values_used),
        ])


@dataclass(frozen=True, kw_only=True)
class CombustionLinks:
    """Several compounds solved together, with the joint covariance of their Δ_fH°."""

    links: tuple[CombustionLink, ...]
    names: tuple[str, ...]
    covariance: np.ndarray

    @property
    def correlation(self) -> np.ndarray:
        d = np.sqrt(np.diag(self.covariance))
        return self.covariance / np.outer(d, d)

    def to_dict(self) -> dict[str, Any]:
        return {"links": [link.to_dict() for link in self.links], "names": list(self.names),
                "covariance": self.covariance.tolist()}

    def report(self) -> str:
        return "\n\n".join(link.report() for link in self.links)


def _prepare(entry: Mapping[str, Any] | Sequence[Any], sulfur_convention: str, T_K: float
             ) -> dict[str, Any]:
    if isinstance(entry, Mapping):
        formula = str(entry["formula"])
        massic = float(entry["massic_energy_J_per_g"])
        u = entry.get("u_massic_energy_J_per_g")
        phase = str(entry.get("phase", "cr"))
    else:
        formula, massic, u, *rest = entry
        phase = str(rest[0]) if rest else "cr"
    if not math.isfinite(float(massic)) or float(massic) >= 0:
        raise NetworkError("a standard massic energy of combustion is negative (J/g, "
                           "thermochemical sign)", found=massic, expected="a number < 0")
    reaction = combustion_reaction(formula, phase=phase, sulfur_convention=sulfur_convention)
    molar_mass = molar_mass_g_per_mol(formula)
    dn = float(reaction.delta_n_gas())
    du = molar_mass * float(massic) / 1000.0
    dh = du + dn * R_J_per_mol_K * T_K / 1000.0
    return {"formula": formula, "phase": phase, "massic": float(massic),
            "u": None if u is None else float(u), "M": molar_mass, "reaction": reaction,
            "dn": dn, "dU": du, "dH": dh}


def combustion_link_many(
    compounds: Sequence[Mapping[str, Any] | Sequence[Any]],
    *,
    covariance_J2_per_g2: np.ndarray | None = None,
    sulfur_convention: str = "thermochemical",
    key_values: KeyValues | None = None,
    T_K: float = T_REF_K,
    heat_capacities: Mapping[Species | str, CpModel] | None = None,
    coverage_factor: float = 2.0,
) -> CombustionLinks:
    """Δ_fH° of several compounds from their Δ_cu° in one network (joint covariance).

    Parameters
    ----------
    compounds
        Entries ``{"formula", "massic_energy_J_per_g", "u_massic_energy_J_per_g", "phase"}``
        or tuples ``(formula, massic_J_per_g, u_J_per_g[, phase])``.
    covariance_J2_per_g2
        Covariance of the Δ_cu° values, (J/g)² (e.g. samples sharing one energy equivalent);
        its diagonal gives the variances (``u`` may then be None).
    key_values
        Table to use (default: the bundled CODATA key values).
    T_K
        Temperature of Δ_cu° (its RT term and, away from 298.15 K, the Kirchhoff adjustment
        with ``heat_capacities``).
    """
    check_choice("sulfur_convention", sulfur_convention, SULFUR_CONVENTIONS)
    prepared = [_prepare(e, sulfur_convention, T_K) for e in compounds]
    n = len(prepared)
    if n == 0:
        raise NetworkError("no compounds given")
    if covariance_J2_per_g2 is not None:
        cov = np.asarray(covariance_J2_per_g2, dtype=float)
        if cov.shape != (n, n) or not np.allclose(cov, cov.T):
            raise NetworkError(f"covariance must be a symmetric {n}×{n} matrix", found=cov.shape)
        for i, p in enumerate(prepared):
            if p["u"] is not None and not math.isclose(p["u"] ** 2, cov[i, i], rel_tol=1e-9):
                raise NetworkError("u of a compound disagrees with the covariance diagonal",
                                   found=(p["formula"], p["u"], math.sqrt(cov[i, i])))
            p["u"] = math.sqrt(cov[i, i])
    for p in prepared:
        if p["u"] is None or not p["u"] > 0:
            raise NetworkError("every compound needs u(Δcu°) > 0", found=p["formula"])
    rows, off = [], {}
    for i, p in enumerate(prepared):
        p["uU"] = p["M"] * p["u"] / 1000.0
        rows.append(Reaction(stoichiometry=p["reaction"].stoichiometry,
                             delta_r_H_kJ_per_mol=p["dH"], u_delta_r_H_kJ_per_mol=p["uU"],
                             id=f"combustion:{i + 1}:{p['formula']}({p['phase']})",
                             source="standard massic energy of combustion", temperature_K=T_K))
    if covariance_J2_per_g2 is not None:
        for i in range(n):
            for j in range(i + 1, n):
                if cov[i, j]:
                    off[(rows[i].id, rows[j].id)] = (prepared[i]["M"] * prepared[j]["M"]
                                                     * cov[i, j] / 1e6)
    names = [parse_species(f"{p['formula']}({p['phase']})").name for p in prepared]
    if len(set(names)) != n:
        raise NetworkError("compounds must be distinct species", found=names)
    network = Network(determinations=tuple(rows), covariance=off,
                      heat_capacities=heat_capacities or {})
    table = key_values if key_values is not None else load_key_values()
    result = solve_network(network, key_values=table, worst_offender="none",
                           coverage_factor=coverage_factor, covariance_species=names)
    budgets = _budgets(result, names)
    links = []
    for i, p in enumerate(prepared):
        value, u = result.value(names[i])
        links.append(CombustionLink(
            formula=p["formula"], phase=p["phase"], species=names[i], molar_mass_g_per_mol=p["M"],
            massic_energy_J_per_g=p["massic"], u_massic_energy_J_per_g=p["u"],
            delta_c_U_kJ_per_mol=p["dU"], u_delta_c_U_kJ_per_mol=p["uU"],
            delta_n_gas=p["dn"], delta_c_H_kJ_per_mol=p["dH"], u_delta_c_H_kJ_per_mol=p["uU"],
            delta_f_H_kJ_per_mol=value, u_delta_f_H_kJ_per_mol=u,
            coverage_factor=coverage_factor, reaction=p["reaction"].equation,
            sulfur_convention=sulfur_convention, T_K=T_K,
            key_values_used=result.key_values_used, budget=budgets[i],
        ))
    return CombustionLinks(links=tuple(links), names=tuple(names), covariance=result.covariance)


def _budgets(result, names: Sequence[str]) -> list[dict[str, float]]:
    """|∂x/∂y_j| u_j for every row j (uncorrelated rows; whitened influence otherwise)."""
    sol = result.solution
    index = {s.name: i for i, s in enumerate(result.unknowns)}
    out = []
    ids = [r.id for r in result.residuals]
    for name in names:
        c = np.zeros(len(result.unknowns))
        c[index[name]] = 1.0
        comp = sol.components[sol.column_component[index[name]]]
        z = comp.pinv_apply(c[comp.columns][:, None])[:, 0]
        aw = sol.whitened_A[comp.rows][:, comp.columns]
        infl = np.asarray(aw @ z).ravel()
        out.append({ids[r]: float(abs(v)) for r, v in zip(comp.rows, infl, strict=True)})
    return out


def combustion_link(
    formula: str,
    massic_energy_J_per_g: float,
    u_massic_energy_J_per_g: float,
    *,
    phase: str = "cr",
    sulfur_convention: str = "thermochemical",
    key_values: KeyValues | None = None,
    T_K: float = T_REF_K,
    heat_capacities: Mapping[Species | str, CpModel] | None = None,
    coverage_factor: float = 2.0,
) -> CombustionLink:
    """Δ_cU°, Δ_cH° and Δ_fH° of a CHON(S) compound from its standard massic energy.

    Parameters
    ----------
    formula
        e.g. ``'C7H6O2'`` (conventional atomic weights give M).
    massic_energy_J_per_g
        Standard massic energy of combustion Δ_cu° (negative), J/g, after the Washburn
        corrections.
    u_massic_energy_J_per_g
        Its standard uncertainty, J/g.
    phase
        State of the compound (``'cr'``, ``'l'``, ...).
    sulfur_convention
        ``'thermochemical'`` (H₂SO₄·115H₂O final state) or ``'sulfur-dioxide'``.
    key_values
        Auxiliary values (default: the bundled CODATA key values).
    T_K
        Temperature of Δ_cu° (298.15 K unless ``heat_capacities`` bring it there).

    Examples
    --------
    >>> link = combustion_link("C7H6O2", -26413.0, 1.5)
    >>> round(link.delta_f_H_kJ_per_mol, 1)
    -385.2
    """
    return combustion_link_many(
        [(formula, massic_energy_J_per_g, u_massic_energy_J_per_g, phase)],
        sulfur_convention=sulfur_convention, key_values=key_values, T_K=T_K,
        heat_capacities=heat_capacities, coverage_factor=coverage_factor,
    ).links[0]
