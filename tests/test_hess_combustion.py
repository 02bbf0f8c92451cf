"""Combustion link: Δcu° → ΔcU° → ΔcH° → ΔfH°, checked against published values."""

from __future__ import annotations

import math

import numpy as np
import pytest

from calwork.core.constants import T_REF_K, R_J_per_mol_K
from calwork.core.errors import FormulaError, NetworkError
from calwork.formula import molar_mass_g_per_mol
from calwork.hess.combustion import combustion_link, combustion_link_many, combustion_reaction
from calwork.hess.key_values import load_key_values
from calwork.hess.network import Network, solve_network
from calwork.hess.reactions import Reaction

RT = R_J_per_mol_K * T_REF_K / 1000  # kJ/mol
KV = load_key_values()
U_CO2 = KV["CO2(g)"].u_kJ_per_mol
U_H2O = KV["H2O(l)"].u_kJ_per_mol


def massic_from_delta_c_H(formula: str, delta_c_H_kJ_per_mol: float, phase: str = "cr") -> float:
    """Δcu° (J/g) from a published ΔcH° (derived: ΔcU = ΔcH − Δn RT, M conventional)."""
    dn = float(combustion_reaction(formula, phase=phase).delta_n_gas())
    return (delta_c_H_kJ_per_mol - dn * RT) * 1000 / molar_mass_g_per_mol(formula)


def test_benzoic_acid_formation_enthalpy():
    # Δcu° = −26 413.0 J/g derived from ΔcH° = −3226.87 ± 0.18 kJ/mol (Mosselman & Dekker
    # 1969 via NIST WebBook; docs/references.md §2a); its ± taken as k = 2, so u = 0.09 kJ/mol.
    massic = massic_from_delta_c_H("C7H6O2", -3226.87)
    assert massic == pytest.approx(-26413.0, abs=0.5)
    u_massic = 0.09e3 / molar_mass_g_per_mol("C7H6O2")
    link = combustion_link("C7H6O2", massic, u_massic)
    assert link.delta_n_gas == -0.5
    assert link.delta_c_U_kJ_per_mol == pytest.approx(-3225.63, abs=0.01)  # §2a derived
    # −385.19 ± 0.94 (k = 2) derived from the same ΔcH° with CODATA CO2/H2O (docs/references.md §1d)
    assert link.delta_f_H_kJ_per_mol == pytest.approx(-385.19, abs=0.01)
    assert link.U_delta_f_H_kJ_per_mol == pytest.approx(0.94, abs=0.01)
    # published −384.8 ± 0.50 (Corral 1960, WebBook): agrees within the combined uncertainty
    combined = math.hypot(link.u_delta_f_H_kJ_per_mol, 0.50 / 2)
    assert abs(link.delta_f_H_kJ_per_mol - -384.8) <= 2 * combined
    # hand formula of docs/methods.md §3.8: u² = u²(ΔcH) + a² u²(CO2) + (b/2)² u²(H2O)
    hand = math.sqrt(link.u_delta_c_H_kJ_per_mol**2 + 49 * U_CO2**2 + 9 * U_H2O**2)
    assert link.u_delta_f_H_kJ_per_mol == pytest.approx(hand, rel=1e-10)
    assert set(link.budget) == {"combustion:1:C7H6O2(cr)", "key:CO2(g)", "key:H2O(l)"}
    assert link.budget["key:CO2(g)"] == pytest.approx(7 * U_CO2)
    assert {kv["species"] for kv in link.key_values_used} == {"CO2(g)", "H2O(l)"}


@pytest.mark.parametrize(
    ("formula", "delta_c_H", "published_f_H", "tolerance"),
    [
        # Corral 1960 (NIST WebBook): ΔcH° −3227.3 ± 0.3, ΔfH° −384.8 ± 0.50 (confirmed)
        ("C7H6O2", -3227.3, -384.8, 0.5),
        # WebBook averages: ΔcH° −5155 ± 21 kJ/mol; ΔfH° 18 ± 2 kcal/mol = 75.3 ± 8.4 (confirmed)
        ("C10H8", -5155.0, 18 * 4.184, 8.4),
        # urea: ΔcH° WebBook average −635 ± 8; ΔfH° −333.39 ± 0.17 (Johnson 1975) (confirmed)
        ("CH4N2O", -635.0, -333.39, 8.0),
    ],
)
def test_organic_compounds_from_published_combustion_enthalpies(formula, delta_c_H,
                                                                 published_f_H, tolerance):
    link = combustion_link(formula, massic_from_delta_c_H(formula, delta_c_H), 1.0)
    assert link.delta_c_H_kJ_per_mol == pytest.approx(delta_c_H, abs=1e-9)
    assert link.delta_f_H_kJ_per_mol == pytest.approx(published_f_H, abs=tolerance)


@pytest.mark.parametrize(
    ("formula", "massic", "published_f_H"),
    [
        # succinic acid: ICTAC Δcu ≈ −12 638 J/g and ΔfH° −940.5 (Vanderzee et al. 1972);
        # both recalled from memory (docs/references.md §4); tolerance 0.5 kJ/mol ≈ 3e-4 of ΔcH
        ("C4H6O4", -12638.0, -940.5),
        # acetanilide: ICTAC Δcu ≈ −31 234 J/g (memory); ΔfH° −209.4 (CRC via chemicals)
        ("C8H9NO", -31234.0, -209.4),
    ],
)
def test_reference_materials_massic_energies(formula, massic, published_f_H):
    link = combustion_link(formula, massic, 2.0)
    assert link.delta_f_H_kJ_per_mol == pytest.approx(published_f_H, abs=0.5)


def test_sulfur_compound_thermochemical_convention():
    # thianthrene: WebBook ΔcH° average −7250 ± 10 kJ/mol (final state H2SO4(aq)) and
    # ΔfH°(cr) 182.6 ± 1.3 (Sunner 1963), both confirmed (docs/references.md §4)
    reaction = combustion_reaction("C12H8S2")
    assert reaction.equation == ("C12H8S2(cr) + 17 O2(g) + 228 H2O(l) = 12 CO2(g) + "
                                 "2 H2SO4·115H2O(l)")
    assert reaction.delta_n_gas() == -5  # METHODS eq. 3.7: c/2 + d/2 − b/4 − 3e/2
    link = combustion_link("C12H8S2", massic_from_delta_c_H("C12H8S2", -7250.0), 2.0)
    assert link.delta_f_H_kJ_per_mol == pytest.approx(182.6, abs=10.0)
    # METHODS eq. 3.10 by hand, and its uncertainty (b/2 − e)² u²(H2O) + e² u²(H2SO4 soln)
    x = KV["H2SO4·115H2O(l)"]
    hand = 12 * -393.51 + 2 * x.value_kJ_per_mol + (4 - 2) * -285.830 - link.delta_c_H_kJ_per_mol
    assert link.delta_f_H_kJ_per_mol == pytest.approx(hand, abs=1e-8)
    u_hand = math.sqrt(link.u_delta_c_H_kJ_per_mol**2 + 144 * U_CO2**2 + 4 * U_H2O**2
                       + 4 * x.u_kJ_per_mol**2)
    assert link.u_delta_f_H_kJ_per_mol == pytest.approx(u_hand, rel=1e-10)
    so2 = combustion_reaction("C12H8S2", sulfur_convention="sulfur-dioxide")
    assert so2.equation == "C12H8S2(cr) + 16 O2(g) = 12 CO2(g) + 4 H2O(l) + 2 SO2(g)"


CHEMICALS_COMPOUNDS = [
    ("65-85-0", "C7H6O2"), ("91-20-3", "C10H8"), ("57-13-6", "CH4N2O"),
    ("110-15-6", "C4H6O4"), ("103-84-4", "C8H9NO"), ("59-67-6", "C6H5NO2"),
]


@pytest.mark.parametrize(("cas", "formula"), CHEMICALS_COMPOUNDS)
def test_cross_check_against_chemicals(cas, formula):
    chemicals_combustion = pytest.importorskip("chemicals.combustion")
    from chemicals.reaction import Hfs

    hf = Hfs(cas, method="CRC")  # J/mol
    lib = chemicals_combustion.combustion_data(formula, Hf=hf)
    products = chemicals_combustion.Hf_combustion_chemicals  # the library's own CO2/H2O (J/mol)
    table = load_key_values(extra={"CO2(g)": (products["CO2"] / 1000, 0.01),
                                   "H2O(l)": (products["H2O"] / 1000, 0.01)})
    reaction = combustion_reaction(formula)
    net = Network(determinations=(), priors=(Reaction.formation(f"{formula}(cr)", hf / 1000, 0.1),))
    res = solve_network(net, key_values=table, worst_offender="none",
                        include_species=reaction.species)
    ours = res.reaction_enthalpy(reaction)
    # the library's HHV is rounded to 1 J/mol
    assert ours.delta_r_H_kJ_per_mol == pytest.approx(lib.HHV / 1000, abs=2e-3)
    # and back again through the massic energy (conventional M, so the round trip is exact)
    massic = massic_from_delta_c_H(formula, ours.delta_r_H_kJ_per_mol)
    link = combustion_link(formula, massic, 1.0, key_values=table)
    assert link.delta_f_H_kJ_per_mol == pytest.approx(hf / 1000, abs=1e-8)


def test_benzoic_acid_codata_products_column():
    # docs/references.md §4: chemicals CRC ΔfH −385.20 with CODATA products gives ΔcH° −3226.86
    net = Network(determinations=(), priors=(Reaction.formation("C7H6O2(cr)", -385.20, 0.1),))
    reaction = combustion_reaction("C7H6O2")
    res = solve_network(net, worst_offender="none", include_species=reaction.species)
    d = res.reaction_enthalpy(reaction)
    assert d.delta_r_H_kJ_per_mol == pytest.approx(-3226.86, abs=0.01)


def test_many_compounds_share_a_calibration():
    # docs/methods.md §4.5: cov(ΔfH_A, ΔfH_B) = M_A M_B cov(Δcu) + a_A a_B u²(CO2) + b_A b_B/4 u²(H2O)
    u_a, u_b, rho = 1.5, 2.0, 0.8
    cov = np.array([[u_a**2, rho * u_a * u_b], [rho * u_a * u_b, u_b**2]])
    many = combustion_link_many([("C7H6O2", -26413.0, None), ("C10H8", -40195.0, None)],
                                covariance_J2_per_g2=cov)
    ma, mb = molar_mass_g_per_mol("C7H6O2"), molar_mass_g_per_mol("C10H8")
    expected = ma * mb * cov[0, 1] / 1e6 + 7 * 10 * U_CO2**2 + 3 * 4 * U_H2O**2
    assert many.covariance[0, 1] == pytest.approx(expected, rel=1e-10)
    single = combustion_link("C7H6O2", -26413.0, u_a)
    assert many.links[0].delta_f_H_kJ_per_mol == pytest.approx(single.delta_f_H_kJ_per_mol)
    assert many.covariance[0, 0] == pytest.approx(single.u_delta_f_H_kJ_per_mol**2)
    assert -1 < many.correlation[0, 1] < 1
    with pytest.raises(NetworkError, match="disagrees"):
        combustion_link_many([("C7H6O2", -26413.0, 9.0), ("C10H8", -40195.0, None)],
                             covariance_J2_per_g2=cov)


def test_combustion_link_errors():
    with pytest.raises(NetworkError, match="negative"):
        combustion_link("C7H6O2", 26413.0, 1.0)
    with pytest.raises(FormulaError, match="C, H, O, N, S"):
        combustion_link("C6H5Cl", -27000.0, 1.0, phase="l")
    with pytest.raises(NetworkError, match="heat capacities"):
        combustion_link("C7H6O2", -26413.0, 1.0, T_K=303.15)
