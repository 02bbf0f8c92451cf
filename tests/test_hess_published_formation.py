"""Ten C, H, O, N compounds: the published Δ_fH° from the published Δ_cH°, three ways.

Every value below was seen in the NIST Chemistry WebBook (SRD 69), condensed-phase
thermochemistry pages, and is named beside it with the study the WebBook cites. Two kinds of
entry:

* **study pairs** — a study's Δ_cH° with the WebBook's "corresponding Δ_fH° (simple
  calculation by NIST; no Washburn corrections)": the published Δ_fH° is the Hess's-law sum of
  that Δ_cH° and CODATA CO2(g), H2O(l), so calwork must reproduce it to the printed digits;
* **evaluated pairs** — the WebBook's average Δ_cH° (with its ±) and a Δ_fH° from a precise
  study: calwork's Δ_fH° from the average must fall within the average's published ±.

Each is computed three independent ways: (1) the combustion link (Δ_cu° → Δ_cU° → Δ_cH° →
Δ_fH°, docs/methods.md §3.8), (2) the Hess back-solver with the combustion reaction as a network
row and the bundled CODATA key values, and (3) by hand in this file from the CODATA key values
typed here (Cox, Wagman & Medvedev 1989: CO2(g) −393.51, H2O(l) −285.830 kJ/mol;
docs/references.md §1a). kcal are thermochemical, 4.184 J (exact).
"""

from __future__ import annotations

import pytest

from calwork.core.constants import T_REF_K, R_J_per_mol_K
from calwork.formula import molar_mass_g_per_mol
from calwork.hess.combustion import combustion_link, combustion_reaction
from calwork.hess.network import Network, solve_network
from calwork.hess.reactions import Reaction

KCAL = 4.184
CO2, H2O = -393.51, -285.830            # CODATA key values, kJ/mol (docs/references.md §1a)

# (compound, formula, phase, Δ_cH° kJ/mol, published Δ_fH° kJ/mol, tolerance kJ/mol, source)
STUDY_PAIRS = [
    ("benzoic acid", "C7H6O2", "cr", -3228.06, -384.00, 0.01,
     "Pilcher & Bickerton 1984: Δ_cH° −3228.06 ± 0.44, corresponding Δ_fH° −384.00"),
    ("benzoic acid", "C7H6O2", "cr", -3226.87, -385.19, 0.01,
     "Mosselman & Dekker 1969: Δ_cH° −3226.87, corresponding Δ_fH° −385.19"),
    ("ethanol", "C2H6O", "l", -1367.6, -276.9, 0.06,
     "Chao & Rossini 1965: Δ_cH° −1367.6 ± 0.3, corresponding Δ_fH° −276.9"),
    ("butanoic acid", "C4H8O2", "l", -521.87 * KCAL, -127.59 * KCAL, 0.006 * KCAL,
     "Lebedeva 1964: Δ_cH° −521.87 ± 0.14 kcal/mol, corresponding Δ_fH° −127.59 kcal/mol"),
    ("3,5-dimethylphenol", "C8H10O", "cr", -1035.57 * KCAL, -58.41 * KCAL, 0.006 * KCAL,
     ("Andon, Biddiscombe et al. 1960: Δ_cH° −1035.57 ± 0.28 kcal/mol, corresponding Δ_fH° "
     "−58.41 kcal/mol")),
    ("2,4,6-trimethylphenol", "C9H12O", "cr", -1191.0 * KCAL, -65.0 * KCAL, 0.5 * KCAL,
     "Bertholon, Giray et al. 1971: Δ_cH° −1191 kcal/mol, corresponding Δ_fH° −65 kcal/mol"),
]

# (compound, formula, phase, average Δ_cH°, its ±, study Δ_fH°, source)
EVALUATED_PAIRS = [
    ("benzene", "C6H6", "l", -3267.0, 20.0, 49.04,
     "WebBook average of 9 Δ_cH° −3267 ± 20; Δ_fH° 49.04 ± 0.50 (Prosen, Gilmont et al. 1945)"),
    ("ethylbenzene", "C8H10", "l", -1092.0 * KCAL, 4.0 * KCAL, -2.98 * KCAL,
     ("WebBook average of 6 Δ_cH° −1092 ± 4 kcal/mol; Δ_fH° −2.98 ± 0.20 kcal/mol (Prosen, "
     "Gilmont et al. 1945)")),
    ("urea", "CH4N2O", "cr", -152.0 * KCAL, 2.0 * KCAL, -79.682 * KCAL,
     ("WebBook average of 8 Δ_cH° −152 ± 2 kcal/mol; Δ_fH° −79.682 ± 0.041 kcal/mol (Johnson "
     "1975)")),
    ("naphthalene", "C10H8", "cr", -1232.0 * KCAL, 5.0 * KCAL, 18.0 * KCAL,
     "WebBook average of 18 Δ_cH° −1232 ± 5 kcal/mol; average of 7 Δ_fH° 18 ± 2 kcal/mol"),
    ("phenol", "C6H6O", "cr", -731.0 * KCAL, 3.0 * KCAL, -39.46 * KCAL,
     ("WebBook average of 6 Δ_cH° −731 ± 3 kcal/mol; Δ_fH° −39.46 ± 0.30 kcal/mol (Andon, "
     "Biddiscombe et al. 1960)")),
]


def _counts(formula: str) -> tuple[int, int]:
    reaction = combustion_reaction(formula)
    sto = {sp.name: c for sp, c in reaction.stoichiometry.items()}
    return int(sto.get("CO2(g)", 0)), float(sto.get("H2O(l)", 0))


def _by_hand(formula: str, delta_c_H: float) -> float:
    """Δ_fH° = a·Δ_fH°(CO2) + (b/2)·Δ_fH°(H2O) − Δ_cH° (N goes to N2, O2 is an element)."""
    a, water = _counts(formula)
    return a * CO2 + water * H2O - delta_c_H


def _link(formula: str, phase: str, delta_c_H: float) -> float:
    # the combustion link starts from the massic energy a bomb gives: Δ_cu° = (Δ_cH° − Δn RT)/M
    dn = float(combustion_reaction(formula, phase=phase).delta_n_gas())
    massic = (delta_c_H - dn * R_J_per_mol_K * T_REF_K / 1000) * 1000 / molar_mass_g_per_mol(
        formula)
    link = combustion_link(formula, massic, 1.0, phase=phase)
    assert link.delta_c_H_kJ_per_mol == pytest.approx(delta_c_H, abs=1e-9)
    return link.delta_f_H_kJ_per_mol


def _network(formula: str, phase: str, delta_c_H: float) -> float:
    reaction = combustion_reaction(formula, phase=phase)
    row = Reaction(stoichiometry=reaction.stoichiometry, delta_r_H_kJ_per_mol=delta_c_H,
                   u_delta_r_H_kJ_per_mol=0.5, id="combustion")
    result = solve_network(Network(determinations=(row,)), worst_offender="none")
    return result.value(f"{formula}({phase})")[0]


@pytest.mark.parametrize(("name", "formula", "phase", "delta_c_H", "published", "tol", "src"),
                         STUDY_PAIRS, ids=[f"{p[0]}-{p[6].split(':')[0]}" for p in STUDY_PAIRS])
def test_study_pairs_reproduce_the_published_formation_enthalpy(name, formula, phase,
                                                                  delta_c_H, published, tol,
                                                                  src):
    hand = _by_hand(formula, delta_c_H)
    assert hand == pytest.approx(published, abs=tol), src
    assert _link(formula, phase, delta_c_H) == pytest.approx(published, abs=tol), src
    assert _network(formula, phase, delta_c_H) == pytest.approx(published, abs=tol), src
    assert _link(formula, phase, delta_c_H) == pytest.approx(hand, abs=1e-6)


@pytest.mark.parametrize(("name", "formula", "phase", "delta_c_H", "pm", "published", "src"),
                         EVALUATED_PAIRS, ids=[p[0] for p in EVALUATED_PAIRS])
def test_evaluated_pairs_agree_within_the_published_spread(name, formula, phase, delta_c_H,
                                                           pm, published, src):
    ours = _link(formula, phase, delta_c_H)
    assert abs(ours - published) <= pm, src
    assert _network(formula, phase, delta_c_H) == pytest.approx(ours, abs=1e-6)
    assert ours == pytest.approx(_by_hand(formula, delta_c_H), abs=1e-6)


def test_ten_compounds_of_c_h_o_n():
    compounds = {p[0] for p in STUDY_PAIRS} | {p[0] for p in EVALUATED_PAIRS}
    assert len(compounds) >= 10
    formulas = {p[1] for p in STUDY_PAIRS} | {p[1] for p in EVALUATED_PAIRS}
    assert all({ch for ch in f if ch.isalpha()} <= set("CHON") for f in formulas)
