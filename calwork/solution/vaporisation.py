"""Solvent vaporisation into an ampoule's gas space (docs/methods.md §2.4).

When a sealed ampoule holding a dry solid (and air) breaks in the solvent, solvent evaporates
until the ampoule's free gas volume ``V_a`` is saturated. That absorbs

    q_vap = n_v Δ_vapH(T),        n_v = p*(T) V_a / (R T)

from the calorimeter (an endothermic side effect: it makes the measured heat more negative).
In calwork's bookkeeping, where corrections are heats *released into* the calorimeter, the
vaporisation correction is ``−q_vap``. For water, V_a = 1 cm³ at 298.15 K:
n_v = 1.28 µmol and q_vap ≈ 0.056 J (docs/methods.md §2.4).

Raoult lowering of the vapour pressure over a dilute solution (< 0.5 % at 0.1 mol/kg) and air
dissolving are neglected. An ampoule filled with a volatile *liquid* sample is already
saturated with that sample's vapour; there the correction is for the sample's vapour instead
(not implemented: give the correction yourself).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, fields

import numpy as np

from calwork.core.constants import R_J_per_mol_K
from calwork.core.errors import RunError, check_choice
from calwork.data import load_data

__all__ = [
    "SOLVENTS",
    "VaporisationCorrection",
    "vaporisation_correction_J",
    "vapour_amount_mol",
    "water_enthalpy_of_vaporisation_J_per_mol",
    "water_vapour_pressure_Pa",
]

#: Solvents whose vapour pressure and enthalpy of vaporisation are bundled.
SOLVENTS = ("water",)

_DATA = "solution_properties.toml"


def water_vapour_pressure_Pa(temperature_K: float) -> float:
    """Saturation vapour pressure of water, Pa (IAPWS-IF97 region 4).

    Parameters
    ----------
    temperature_K
        Temperature, K (273.15 K to 647.096 K).

    Returns
    -------
    float
        p*(T), Pa.

    Examples
    --------
    >>> round(water_vapour_pressure_Pa(298.15), 1)
    3169.7
    """
    table = load_data(_DATA)["water"]["saturation_pressure"]
    T = float(temperature_K)
    if not table["T_min_K"] <= T <= table["T_max_K"]:
        raise RunError(
            "temperature outside the range of the water saturation-pressure equation",
            column="temperature_K", found=T,
            expected=f"{table['T_min_K']} K to {table['T_max_K']} K",
        )
    n = table["n"]
    theta = T + n[8] / (T - n[9])
    A = theta * theta + n[0] * theta + n[1]
    B = n[2] * theta * theta + n[3] * theta + n[4]
    C = n[5] * theta * theta + n[6] * theta + n[7]
    p_MPa = (2.0 * C / (-B + math.sqrt(B * B - 4.0 * A * C))) ** 4
    return p_MPa * 1e6


def water_enthalpy_of_vaporisation_J_per_mol(temperature_K: float) -> float:
    """Enthalpy of vaporisation of water at saturation, J/mol (IAPWS-95 table, interpolated).

    Parameters
    ----------
    temperature_K
        Temperature, K (273.16 K to 323.15 K, the range of the bundled table).

    Examples
    --------
    >>> round(water_enthalpy_of_vaporisation_J_per_mol(298.15))
    43988
    """
    table = load_data(_DATA)["water"]["enthalpy_of_vaporisation"]
    T_tab = table["temperature_K"]
    T = float(temperature_K)
    if not T_tab[0] <= T <= T_tab[-1]:
        raise RunError(
            "temperature outside the bundled table of the enthalpy of vaporisation of water",
            column="temperature_K", found=T, expected=f"{T_tab[0]} K to {T_tab[-1]} K",
        )
    return float(np.interp(T, T_tab, table["delta_vap_H_kJ_per_mol"])) * 1000.0


def vapour_amount_mol(
    gas_volume_mL: float, temperature_K: float, vapour_pressure_Pa: float
) -> float:
    """Amount of vapour that saturates a gas volume (ideal gas), mol.

    Parameters
    ----------
    gas_volume_mL
        Free gas volume, mL (= cm³).
    temperature_K
        Temperature, K.
    vapour_pressure_Pa
        Saturation vapour pressure of the solvent at that temperature, Pa.

    Examples
    --------
    >>> round(vapour_amount_mol(1.0, 298.15, 3169.7) * 1e6, 2)
    1.28
    """
    return vapour_pressure_Pa * gas_volume_mL * 1e-6 / (R_J_per_mol_K * temperature_K)


@dataclass(frozen=True, kw_only=True)
class VaporisationCorrection:
    """Solvent vaporisation into an ampoule's gas space.

    ``heat_absorbed_J`` is q_vap = n_v Δ_vapH (positive); ``correction_J`` = −q_vap is the
    same energy as heat released into the calorimeter (calwork's sign for corrections).
    """

    solvent: str
    gas_volume_mL: float
    temperature_K: float
    vapour_pressure_Pa: float
    vapour_amount_mol: float
    delta_vap_H_J_per_mol: float
    heat_absorbed_J: float
    u_heat_absorbed_J: float
    correction_J: float

    def to_dict(self) -> dict[str, float | str]:
        return {f.name: getattr(self, f.name) for f in fields(self)}

    def report(self) -> str:
        return (
            f"vaporisation of {self.solvent} into {self.gas_volume_mL:g} mL at "
            f"{self.temperature_K:.2f} K: n_v = {self.vapour_amount_mol * 1e6:.3f} µmol, "
            f"q_vap = {self.heat_absorbed_J:.4f} ± {self.u_heat_absorbed_J:.4f} J (absorbed)"
        )


def vaporisation_correction_J(
    gas_volume_mL: float,
    temperature_K: float,
    *,
    solvent: str = "water",
    u_gas_volume_mL: float | None = None,
) -> VaporisationCorrection:
    """Heat absorbed by solvent evaporating into an ampoule's free gas volume.

    Parameters
    ----------
    gas_volume_mL
        Free gas volume of the ampoule, mL (sheet column ``ampoule_gas_volume_mL``).
    temperature_K
        Temperature of the calorimeter at the break, K.
    solvent
        Solvent name; one of :data:`SOLVENTS`.
    u_gas_volume_mL
        Standard uncertainty of the gas volume, mL; default: the relative value
        ``u_relative_ampoule_gas_volume`` of ``solution_properties.toml``.

    Returns
    -------
    VaporisationCorrection
        With ``heat_absorbed_J`` (q_vap > 0) and ``correction_J`` (= −q_vap).

    Examples
    --------
    >>> c = vaporisation_correction_J(1.0, 298.15)
    >>> round(c.heat_absorbed_J, 4), round(c.correction_J, 4)
    (0.0562, -0.0562)
    """
    check_choice("solvent", solvent, SOLVENTS)
    V = float(gas_volume_mL)
    if not math.isfinite(V) or V < 0:
        raise RunError("must be a non-negative volume", column="ampoule_gas_volume_mL",
                       found=gas_volume_mL, expected="a volume >= 0 mL")
    p = water_vapour_pressure_Pa(temperature_K)
    h = water_enthalpy_of_vaporisation_J_per_mol(temperature_K)
    n_v = vapour_amount_mol(V, temperature_K, p)
    q = n_v * h
    if u_gas_volume_mL is None:
        u_rel = load_data(_DATA)["defaults"]["u_relative_ampoule_gas_volume"]
        u_q = q * u_rel
    else:
        u_q = q * float(u_gas_volume_mL) / V if V > 0 else 0.0
    return VaporisationCorrection(
        solvent=solvent, gas_volume_mL=V, temperature_K=float(temperature_K),
        vapour_pressure_Pa=p, vapour_amount_mol=n_v, delta_vap_H_J_per_mol=h,
        heat_absorbed_J=q, u_heat_absorbed_J=u_q, correction_J=-q,
    )
