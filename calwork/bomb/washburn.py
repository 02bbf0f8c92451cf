"""Reduction of a bomb combustion to standard states (Washburn corrections), from first principles.

The bomb process at T_ref goes from the initial state (sample and auxiliaries, water, O2 at
p_i ≈ 3 MPa, partly dissolved, water vapour in the gas) to the final state (CO2, excess O2
and N2, partly dissolved, liquid water, HNO3 and H2SO4 in solution, water vapour). The
standard-state correction (docs/methods.md (3.5); Washburn, J. Res. NBS 10 (1933) 525; Hubbard,
Scott & Waddington 1956) is

    ΔU_Σ = [U(initial) − U°(initial)] − [U(final) − U°(final)]

so that ΔU(all reactants and products in their standard states) = ΔU_IBP + ΔU_Σ. Each state's
departure from its standard state is the sum of

* gas non-ideality, ``−n p T dB_mix/dT`` (virial equation, :mod:`calwork.bomb.gases`);
* gases dissolved in the bomb water, ``n_aq Δ_solU`` with Henry's law on the fugacity and
  ``Δ_solU = Δ_solH + RT``;
* water vapour in the gas phase, ``n_v Δ_vapU`` with ``Δ_vapU = Δ_vapH − RT`` and the vapour
  pressure raised by the Poynting factor ``exp(v_l (p − p*)/RT)``;
* compression of the condensed phases, ``−T (∂V/∂T)_p (p − p°)``.

Simplifications (stated in :class:`WashburnResult.notes`): water vapour is ideal and does not
enter B_mix; gas solubility is that in pure water (the dilute acids are ignored); the O2
charging pressure is the O2 partial pressure; nitric and sulfuric acid are handled by their
own energies in :mod:`calwork.bomb.corrections`, including the reduction of H2SO4 to
H2SO4·115H2O; the air left in the bomb (where the nitrogen of HNO3 comes from when the
sample has none) is ignored; fuse-metal oxides take no part.
Property data: ``washburn_properties.toml`` (sources there).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

from calwork.bomb.gases import (
    CROSS_MODELS,
    RECOMMENDED_CROSS_MODEL,
    fugacity_coefficients,
    mixture_virial_m3_per_mol,
)
from calwork.core.constants import T_REF_K, R_J_per_mol_K, STANDARD_PRESSURE_Pa
from calwork.core.errors import ConvergenceError, RunError, UncertaintyError
from calwork.core.results import jsonable
from calwork.core.uncertainty import root_sum_square
from calwork.data import load_data
from calwork.formula import element_counts, molar_mass_g_per_mol

__all__ = [
    "BombState",
    "Combustible",
    "WashburnResult",
    "bomb_states",
    "state_departure_J",
    "washburn_correction",
]

_BAR_Pa = 1e5


def _props() -> dict[str, Any]:
    return load_data("washburn_properties.toml")


@dataclass(frozen=True, kw_only=True)
class Combustible:
    """A material burnt in the bomb (sample, auxiliary oil, cotton thread).

    Attributes
    ----------
    name
        Label (``'sample'``, ``'cotton'``, ...).
    mass_g
        Mass in vacuum, g.
    counts
        Element counts of its formula (C, H, O, N, S are used).
    molar_mass_g_per_mol
        Molar mass of the formula unit, g/mol.
    density_g_per_cm3, expansivity_per_K, heat_capacity_J_per_g_K
        For the gas volume, the compression energy and the contents' energy equivalent.
    """

    name: str
    mass_g: float
    counts: Mapping[str, float]
    molar_mass_g_per_mol: float
    density_g_per_cm3: float
    expansivity_per_K: float
    heat_capacity_J_per_g_K: float

    def __post_init__(self) -> None:
        object.__setattr__(self, "counts", MappingProxyType(dict(self.counts)))

    @classmethod
    def from_formula(
        cls, name: str, formula: str, mass_g: float, *, phase: str = "cr",
        density_g_per_cm3: float | None = None, heat_capacity_J_per_g_K: float | None = None,
    ) -> Combustible:
        """A combustible from its formula, with the typical condensed-phase data as defaults."""
        cond = _props()["condensed"]
        key = "l" if (phase or "cr").lower().startswith("l") else "cr"
        return cls(
            name=name, mass_g=float(mass_g), counts=element_counts(formula),
            molar_mass_g_per_mol=molar_mass_g_per_mol(formula),
            density_g_per_cm3=float(density_g_per_cm3 or cond["density_g_per_cm3"][key]),
            expansivity_per_K=float(cond["expansivity_per_K"][key]),
            heat_capacity_J_per_g_K=float(
                heat_capacity_J_per_g_K or cond["heat_capacity_J_per_g_K"][key]
            ),
        )

    @property
    def amount_mol(self) -> float:
        """Amount of formula units, mol."""
        return self.mass_g / self.molar_mass_g_per_mol

    def element_mol(self, symbol: str) -> float:
        """Amount of element ``symbol`` in this material, mol."""
        return self.counts.get(symbol, 0.0) * self.amount_mol


@dataclass(frozen=True, kw_only=True)
class BombState:
    """Contents of the bomb at T_ref in the initial or the final state.

    Amounts in mol; ``gas_mol`` and ``dissolved_mol`` by gas (O2, CO2, N2).
    """

    label: str
    temperature_K: float
    gas_mol: Mapping[str, float]
    dissolved_mol: Mapping[str, float]
    water_vapour_mol: float
    water_liquid_g: float
    gas_volume_m3: float
    #: Pressure of the (virial) O2/CO2/N2 mixture, Pa.
    pressure_Pa: float
    fugacity_coefficients: Mapping[str, float]
    #: (mass_g, density_g_per_cm3, expansivity_per_K) of condensed combustibles present.
    condensed: tuple[tuple[float, float, float], ...] = ()

    def __post_init__(self) -> None:
        for name in ("gas_mol", "dissolved_mol", "fugacity_coefficients"):
            object.__setattr__(self, name, MappingProxyType(dict(getattr(self, name))))

    def total_mol(self, gas: str) -> float:
        """Amount of ``gas`` in the bomb (gas phase plus dissolved), mol."""
        return self.gas_mol.get(gas, 0.0) + self.dissolved_mol.get(gas, 0.0)

    def to_dict(self) -> dict[str, Any]:
        return jsonable({
            "label": self.label, "temperature_K": self.temperature_K,
            "gas_mol": self.gas_mol, "dissolved_mol": self.dissolved_mol,
            "water_vapour_mol": self.water_vapour_mol, "water_liquid_g": self.water_liquid_g,
            "gas_volume_m3": self.gas_volume_m3, "pressure_Pa": self.pressure_Pa,
            "fugacity_coefficients": self.fugacity_coefficients,
        })


def _water() -> Mapping[str, float]:
    return _props()["water"]


def _vapour_mol(gas_volume_m3: float, pressure_Pa: float, temperature_K: float) -> float:
    w = _water()
    rt = R_J_per_mol_K * temperature_K
    v_l = w["molar_mass_g_per_mol"] / w["density_g_per_cm3"] * 1e-6
    p_star = w["vapour_pressure_Pa"]
    poynting = math.exp(v_l * (pressure_Pa - p_star) / rt)
    return poynting * p_star * gas_volume_m3 / rt


_MAX_ITERATIONS = 100


def _partition(
    totals: Mapping[str, float], gas_volume_m3: float, liquid_kg: float, temperature_K: float,
    cross_model: str = RECOMMENDED_CROSS_MODEL,
) -> tuple[dict[str, float], dict[str, float], float, dict[str, float]]:
    """Split gas totals between the gas phase (virial) and the water (Henry), by iteration.

    Raises :class:`ConvergenceError` if the fixed point is not reached within
    ``_MAX_ITERATIONS`` (it normally takes 4–6: dissolved amounts are ~1 % of the gas).
    """
    gases = _props()["gases"]
    rt = R_J_per_mol_K * temperature_K
    aq = dict.fromkeys(totals, 0.0)
    gas = dict(totals)
    p = phi = None
    change = math.inf
    for _ in range(_MAX_ITERATIONS):
        n = sum(gas.values())
        y = {k: v / n for k, v in gas.items()}
        B, _ = mixture_virial_m3_per_mol(y, temperature_K, cross_model)
        if not gas_volume_m3 - n * B > 0:
            raise RunError("the gas amount is beyond the virial model (pressure far too high)",
                           column="o2_pressure_MPa", expected="a bomb pressure of a few MPa")
        p = n * rt / (gas_volume_m3 - n * B)
        phi = fugacity_coefficients(y, p, temperature_K, names=list(totals),
                                    cross_model=cross_model)
        new_aq = {
            k: gases[k]["henry_mol_per_kg_bar"] * phi[k] * y[k] * p / _BAR_Pa * liquid_kg
            for k in totals
        }
        new_gas = {k: totals[k] - new_aq[k] for k in totals}
        change = max(abs(new_aq[k] - aq[k]) for k in totals)
        aq, gas = new_aq, new_gas
        if change <= 1e-15 + 1e-12 * max(aq.values(), default=0.0):
            return gas, aq, float(p), dict(phi)
    raise ConvergenceError("gas/water partition of the bomb gas did not converge",
                           found=f"last change {change:.3g} mol after {_MAX_ITERATIONS} "
                                 "iterations")


def bomb_states(
    combustibles: Sequence[Combustible],
    *,
    bomb_volume_L: float,
    o2_pressure_MPa: float,
    bomb_water_g: float,
    nitric_acid_mol: float = 0.0,
    soot_g: float = 0.0,
    temperature_K: float = T_REF_K,
    cross_model: str = RECOMMENDED_CROSS_MODEL,
) -> tuple[BombState, BombState]:
    """Initial and final states of the bomb contents at ``temperature_K``.

    Parameters
    ----------
    combustibles
        Materials burnt (sample first), masses in vacuum.
    bomb_volume_L
        Internal volume of the bomb, L.
    o2_pressure_MPa
        Oxygen charging pressure at ``temperature_K``, MPa.
    bomb_water_g
        Water put into the bomb, g.
    nitric_acid_mol
        HNO3 formed (from the titre), mol.
    soot_g
        Unburnt carbon found after the run, g.
    temperature_K
        Reference temperature, K.
    cross_model
        Cross-virial model (:data:`calwork.bomb.gases.CROSS_MODELS`).

    Raises
    ------
    RunError
        If the bomb holds too little oxygen for the combustion, or volumes are not physical.
    ConvergenceError
        If the gas/water partition or the vapour–volume iteration does not converge.
    """
    w = _water()
    rt = R_J_per_mol_K * temperature_K
    V = bomb_volume_L * 1e-3
    p_i = o2_pressure_MPa * 1e6
    condensed = tuple((c.mass_g, c.density_g_per_cm3, c.expansivity_per_K) for c in combustibles)
    solid_m3 = sum(m / rho for m, rho, _ in condensed) * 1e-6
    vg_i = V - solid_m3 - bomb_water_g / w["density_g_per_cm3"] * 1e-6
    if vg_i <= 0.5 * V:
        raise RunError(
            "the sample and water fill more than half the bomb", column="bomb_volume_L",
            found=bomb_volume_L, expected="a bomb volume in L much larger than the contents",
        )
    B_O2, _ = mixture_virial_m3_per_mol({"O2": 1.0}, temperature_K)
    if not rt + B_O2 * p_i > 0.5 * rt:
        raise RunError("oxygen pressure far outside the virial model's range",
                       column="o2_pressure_MPa", found=o2_pressure_MPa,
                       expected="a bomb charging pressure of a few MPa")
    n_o2_gas = p_i * vg_i / (rt + B_O2 * p_i)
    M_w = w["molar_mass_g_per_mol"]
    # saturated vapour, unless there is too little water to saturate the gas: then all of
    # it is vapour (a dry bomb has none)
    vap_i = min(_vapour_mol(vg_i, p_i, temperature_K), bomb_water_g / M_w)
    liq_i_g = bomb_water_g - vap_i * M_w
    phi_o2 = fugacity_coefficients({"O2": 1.0}, p_i, temperature_K)["O2"]
    o2_aq = _props()["gases"]["O2"]["henry_mol_per_kg_bar"] * phi_o2 * p_i / _BAR_Pa \
        * liq_i_g / 1000
    initial = BombState(
        label="initial", temperature_K=temperature_K, gas_mol={"O2": n_o2_gas},
        dissolved_mol={"O2": o2_aq}, water_vapour_mol=vap_i, water_liquid_g=liq_i_g,
        gas_volume_m3=vg_i, pressure_Pa=p_i, fugacity_coefficients={"O2": phi_o2},
        condensed=condensed,
    )

    # element balances: C -> CO2 (less soot), N -> N2 (less HNO3), S -> H2SO4, H -> H2O
    el = {s: sum(c.element_mol(s) for c in combustibles) for s in "CHONS"}
    soot = load_data("bomb_corrections.toml")["soot"]
    n_soot = soot_g / molar_mass_g_per_mol("C")
    n_co2 = el["C"] - n_soot
    n_s = el["S"]
    n_hno3 = nitric_acid_mol
    # nitrogen for HNO3 beyond the sample's own comes from air left in the bomb (its small
    # amount is ignored in the gas energies)
    n_n2 = max((el["N"] - n_hno3) / 2, 0.0)
    water_i = bomb_water_g / M_w
    water_f = water_i + (el["H"] - n_hno3 - 2 * n_s) / 2
    o2_i = initial.total_mol("O2")
    o2_f = (el["O"] + 2 * o2_i + water_i - 2 * n_co2 - water_f - 3 * n_hno3 - 4 * n_s) / 2
    if n_co2 < 0:
        carbon_g = el["C"] * molar_mass_g_per_mol("C")
        raise RunError("more soot than the carbon of the combustibles", column="soot_g",
                       found=soot_g, expected=f"at most {carbon_g:.4g} g")
    if water_f <= 0:
        raise RunError("the final state has no liquid water (no water put into the bomb and "
                       "none formed): the standard-state correction assumes a liquid phase",
                       column="bomb_water_g", found=bomb_water_g,
                       expected="the water put into the bomb, in g (usually ~1 g)")
    if o2_f <= 0:
        raise RunError(
            "the bomb holds too little oxygen for this combustion",
            column="o2_pressure_MPa", found=o2_pressure_MPa,
            expected=f"more than {(o2_i - o2_f):.4g} mol O2 consumed",
        )
    totals = {"O2": o2_f, "CO2": n_co2}
    if n_n2 > 0:
        totals["N2"] = n_n2
    # liquid volume: the water (acids ignored); iterate the vapour amount with the volume
    # (a contraction: the vapour is ~1e-3 of the water, so two or three passes suffice)
    vap_f = vap_i
    soot_m3 = soot_g / float(soot["density_g_per_cm3"]) * 1e-6
    for _ in range(_MAX_ITERATIONS):
        liq_f_g = water_f * M_w - vap_f * M_w
        vg_f = V - liq_f_g / w["density_g_per_cm3"] * 1e-6 - soot_m3
        gas, aq, p_f, phi = _partition(totals, vg_f, liq_f_g / 1000, temperature_K,
                                       cross_model)
        new_vap = min(_vapour_mol(vg_f, p_f, temperature_K), water_f)
        converged = abs(new_vap - vap_f) <= 1e-12 * max(vap_f, 1e-300) + 1e-18
        vap_f = new_vap
        if converged:
            break
    else:
        raise ConvergenceError("water vapour / gas volume of the final bomb state did not "
                               "converge", found=f"{_MAX_ITERATIONS} iterations")
    final = BombState(
        label="final", temperature_K=temperature_K, gas_mol=gas, dissolved_mol=aq,
        water_vapour_mol=vap_f, water_liquid_g=liq_f_g, gas_volume_m3=vg_f, pressure_Pa=p_f,
        fugacity_coefficients=phi, condensed=(),
    )
    return initial, final


def state_departure_J(state: BombState, cross_model: str = RECOMMENDED_CROSS_MODEL
                      ) -> dict[str, float]:
    """``U − U°`` of a bomb state by term, J (gas, dissolved, vapour, compression)."""
    props = _props()
    T = state.temperature_K
    rt = R_J_per_mol_K * T
    n = sum(state.gas_mol.values())
    y = {k: v / n for k, v in state.gas_mol.items()}
    _, dB = mixture_virial_m3_per_mol(y, T, cross_model)
    gas = -n * state.pressure_Pa * T * dB
    dissolved = sum(
        n_aq * (props["gases"][k]["solution_enthalpy_kJ_per_mol"] * 1e3 + rt)
        for k, n_aq in state.dissolved_mol.items()
    )
    w = props["water"]
    vapour = state.water_vapour_mol * (w["vaporisation_enthalpy_kJ_per_mol"] * 1e3 - rt)
    dp = state.pressure_Pa - STANDARD_PRESSURE_Pa
    dVdT_m3 = state.water_liquid_g / w["density_g_per_cm3"] * w["expansivity_per_K"] * 1e-6
    dVdT_m3 += sum(m / rho * alpha for m, rho, alpha in state.condensed) * 1e-6
    compression = -T * dVdT_m3 * dp
    return {"gas": gas, "dissolved": dissolved, "vapour": vapour, "compression": compression}


@dataclass(frozen=True, kw_only=True)
class WashburnResult:
    """The standard-state correction ΔU_Σ of one bomb combustion.

    ``correction_J`` is added to the energy of the isothermal bomb process:
    ``ΔU° = ΔU_IBP + ΔU_Σ`` (positive for the usual organic combustion).
    """

    correction_J: float
    #: standard uncertainty (k = 1) of ``correction_J``, from ``u_components_J``
    u_correction_J: float
    #: independent standard-uncertainty components, J: the cross-virial model (spread
    #: between the two GERG-2008 fits), pure-gas virial data, other property data
    u_components_J: Mapping[str, float]
    terms_J: Mapping[str, float]
    initial: BombState
    final: BombState
    temperature_K: float
    cross_model: str = RECOMMENDED_CROSS_MODEL
    notes: tuple[str, ...] = ()
    source: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "terms_J", MappingProxyType(dict(self.terms_J)))
        object.__setattr__(self, "u_components_J",
                           MappingProxyType(dict(self.u_components_J)))
        u = self.u_correction_J
        if not (math.isfinite(u) and u > 0):
            raise UncertaintyError("the Washburn correction's uncertainty is not positive",
                                   found=u)

    def to_dict(self) -> dict[str, Any]:
        return {
            "correction_J": self.correction_J, "u_correction_J": self.u_correction_J,
            "u_components_J": dict(self.u_components_J), "cross_model": self.cross_model,
            "terms_J": dict(self.terms_J),
            "initial": self.initial.to_dict(), "final": self.final.to_dict(),
            "temperature_K": self.temperature_K, "notes": list(self.notes),
            "source": self.source,
        }

    def report(self) -> str:
        head = (f"Standard-state correction ΔU_Σ = {self.correction_J:+.3f} J, "
                f"u = {self.u_correction_J:.3f} J")
        lines = [head]
        lines += [f"  {k:<22} {v:+10.3f} J" for k, v in self.terms_J.items()]
        lines.append(
            f"  initial p = {self.initial.pressure_Pa / 1e6:.4f} MPa, "
            f"final p = {self.final.pressure_Pa / 1e6:.4f} MPa"
        )
        return "\n".join(lines)


NOTES = (
    "water vapour treated as an ideal gas outside the virial mixture",
    "gas solubilities in pure water (acids ignored)",
    ("O2 charging pressure taken as the O2 partial pressure; the air left in the bomb (the "
    "nitrogen source of HNO3) is ignored in the gas energies"),
    "HNO3 and H2SO4 energies handled by the nitric/sulfuric acid corrections",
)


def washburn_correction(
    combustibles: Sequence[Combustible],
    *,
    states: tuple[BombState, BombState] | None = None,
    **conditions: float,
) -> WashburnResult:
    """The Washburn correction ΔU_Σ (J) of a bomb combustion, with its terms.

    ``conditions`` are the keyword parameters of :func:`bomb_states` (``bomb_volume_L``,
    ``o2_pressure_MPa``, ``bomb_water_g``, and optionally ``nitric_acid_mol``, ``soot_g``,
    ``temperature_K``); ``states`` may pass the states :func:`bomb_states` already computed
    for them, and the conditions are then not needed. The cross-virial model is always the
    recommended one (the other enters the uncertainty).

    Examples
    --------
    Benzoic acid under the certificate's standard bomb conditions (1 L, 3 g, 3 g water,
    30 atm): about +21 J/g (docs/methods.md §3.3).

    >>> ba = Combustible.from_formula("sample", "C7H6O2", 3.0, density_g_per_cm3=1.32)
    >>> r = washburn_correction([ba], bomb_volume_L=1.0, o2_pressure_MPa=3.03975,
    ...                         bomb_water_g=3.0)
    >>> 18 < r.correction_J / 3.0 < 26
    True
    """
    if "cross_model" in conditions:
        raise TypeError("washburn_correction always uses the recommended cross-virial model")
    initial, final = states or bomb_states(combustibles, **conditions)
    terms = _terms(initial, final, RECOMMENDED_CROSS_MODEL)
    correction = sum(terms.values())
    # the cross-virial model: the other GERG-2008 fit evaluated on the same states (for
    # benzoic acid at standard conditions this gives 3.58 J against 3.32 J with the states
    # recomputed: slightly conservative, at half the cost); the two fits bracket the
    # reference model, so the difference is the half-width of a rectangular distribution
    # (u = |Δ|/√3)
    spread = max((abs(sum(_terms(initial, final, other).values()) - correction)
                  for other in CROSS_MODELS if other != RECOMMENDED_CROSS_MODEL), default=0.0)
    rel = _props()["uncertainty_relative"]
    gas_net = terms["gas_initial"] + terms["gas_final"]
    other_net = correction - gas_net
    components = {
        "cross_virial_model": spread / math.sqrt(3.0),
        "pure_gas_virial": abs(gas_net) * float(rel["pure_gas_virial"]),
        "other_property_data": abs(other_net) * float(rel["other_terms"]),
    }
    u = root_sum_square(components, name="the Washburn correction")
    return WashburnResult(
        correction_J=correction, u_correction_J=u, u_components_J=components, terms_J=terms,
        initial=initial, final=final, temperature_K=final.temperature_K, notes=NOTES,
        source=_props()["source"]["citation"],
    )


def _terms(initial: BombState, final: BombState, cross_model: str) -> dict[str, float]:
    di = state_departure_J(initial, cross_model)
    df = state_departure_J(final, cross_model)
    terms = {f"{k}_initial": v for k, v in di.items()}
    terms.update({f"{k}_final": -v for k, v in df.items()})
    return terms
