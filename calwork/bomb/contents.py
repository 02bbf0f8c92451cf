"""Energy equivalent of the bomb contents and the referral of the bomb process to T_ref.

The isothermal bomb process at T_ref (Hubbard, Scott & Waddington 1956; docs/methods.md (3.1)):

    ΔU_IBP = −ε(calor) ΔT_c + ε^i(cont) (T_i − T_ref) + ε^f(cont) (T_ref − T_i − ΔT_c) + ΔU_ign

with ε^i and ε^f the energy equivalents of the contents in the initial state (sample,
auxiliaries, water, O2) and in the final state (water, CO2, O2, N2). Heat capacities are data
(``washburn_properties.toml``, ``benzoic_acid.toml``, ``bomb_corrections.toml``): c_v for the
gases, c_p for the condensed phases.
"""

from __future__ import annotations

from collections.abc import Sequence

from calwork.bomb.washburn import BombState, Combustible
from calwork.data import load_data

__all__ = ["contents_energy_equivalents_J_per_K", "contents_referral_J"]


def contents_energy_equivalents_J_per_K(
    initial: BombState, final: BombState, combustibles: Sequence[Combustible]
) -> tuple[float, float]:
    """``(ε^i, ε^f)`` of the bomb contents, J/K.

    Parameters
    ----------
    initial, final
        Bomb states from :func:`calwork.bomb.washburn.bomb_states`.
    combustibles
        The materials burnt (their masses and massic heat capacities).
    """
    props = load_data("washburn_properties.toml")
    gases = props["gases"]
    c_w = props["water"]["heat_capacity_J_per_g_K"]
    M_w = props["water"]["molar_mass_g_per_mol"]

    def gas_part(state: BombState) -> float:
        return sum(
            state.total_mol(g) * gases[g]["heat_capacity_v_J_per_mol_K"] for g in gases
        )

    water_i = initial.water_liquid_g + initial.water_vapour_mol * M_w
    water_f = final.water_liquid_g + final.water_vapour_mol * M_w
    eps_i = gas_part(initial) + water_i * c_w + sum(
        c.mass_g * c.heat_capacity_J_per_g_K for c in combustibles
    )
    eps_f = gas_part(final) + water_f * c_w
    return eps_i, eps_f


def contents_referral_J(
    eps_initial_J_per_K: float,
    eps_final_J_per_K: float,
    *,
    T_initial_K: float,
    corrected_rise_K: float,
    reference_temperature_K: float,
) -> float:
    """``ε^i (T_i − T_ref) + ε^f (T_ref − T_i − ΔT_c)``, J.

    Added to ε(calor) ΔT_c it gives the heat the bomb process would release at T_ref
    (the ignition energy included), from (3.1).

    Examples
    --------
    Equal ε^i = ε^f = 15 J/K: the contents behave like part of the calorimeter.

    >>> contents_referral_J(15.0, 15.0, T_initial_K=298.15, corrected_rise_K=2.0,
    ...                     reference_temperature_K=298.15)
    -30.0
    """
    Ti, Tr, dT = T_initial_K, reference_temperature_K, corrected_rise_K
    return eps_initial_J_per_K * (Ti - Tr) + eps_final_J_per_K * (Tr - Ti - dT)
