"""Bomb calorimetry physics: certificate, Jessup factor, buoyancy, corrections, series, fuels."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from calwork.bomb.buoyancy import buoyancy_factor, mass_in_vacuum_g
from calwork.bomb.certificate import (
    certified_massic_energy_J_per_g,
    jessup_factor,
    load_reference_material,
)
from calwork.bomb.corrections import (
    cotton_energy_J,
    fuse_energy_J,
    nitric_acid_energy_J,
    nitric_acid_mol,
    soot_energy_J,
    sulfuric_acid_energy_J,
)
from calwork.bomb.fuels import (
    convert_basis,
    convert_calorific_value,
    fuel_outputs,
    net_calorific_value_J_per_g,
    net_from_gross_astm_d240_J_per_g,
)
from calwork.core.constants import R_J_per_mol_K, STANDARD_ATMOSPHERE_Pa
from calwork.core.errors import CalibrationError, ChoiceError, RunError
from calwork.core.statistics import grubbs_critical_value, grubbs_test, series_statistics
from calwork.core.units import CAL_IT_J, CAL_TH_J
from calwork.data import load_data
from calwork.formula import molar_mass_g_per_mol

ATM_MPa = STANDARD_ATMOSPHERE_Pa / 1e6


# --- certificate and Jessup factor -----------------------------------------------------------
def test_bundled_certificate_values():
    rm = load_reference_material("Benzoic Acid")
    # NIST SRM 39j certificate (docs/references.md §2, confirmed): 26 434 J/g, ± 3 J/g, 1.320 g/cm³
    assert rm.certified_J_per_g == 26434.0
    assert rm.density_g_per_cm3 == 1.320
    # documented assumption: the ± 3 J/g is expanded with k = 2 -> u = 1.5 J/g
    assert rm.u_certified_J_per_g == pytest.approx(1.5)
    assert load_reference_material("SRM 39j").name == "benzoic acid"
    with pytest.raises(CalibrationError, match="reference_material"):
        load_reference_material("naphthalene")


@pytest.mark.parametrize(
    ("p_atm", "s", "w", "t_C", "expected"),
    [
        # Jessup test vectors (docs/references.md §2, derived from the recalled formula)
        (30, 3, 3, 25, 1.0),
        (25, 2.924, 2.924, 25, 0.9998945),
        (30, 3, 3, 20, 1.000225),
        (35, 3, 3, 25, 1.000100),
    ],
)
def test_jessup_vectors(p_atm, s, w, t_C, expected):
    f = jessup_factor(p_atm * ATM_MPa, s, w, t_C + 273.15)
    assert f == pytest.approx(expected, abs=5e-8)  # the vectors are printed to 7 decimals


def test_jessup_energies_match_reference_table():
    rm = load_reference_material("benzoic acid")
    # docs/references.md §2: 26 431.21, 26 439.95, 26 436.64 J/g (derived)
    for args, value in [((25, 2.924, 2.924, 25), 26431.21), ((30, 3, 3, 20), 26439.95),
                        ((35, 3, 3, 25), 26436.64)]:
        p, s, w, t = args
        e = certified_massic_energy_J_per_g(rm, o2_pressure_MPa=p * ATM_MPa, sample_g_per_L=s,
                                            water_g_per_L=w, temperature_K=t + 273.15)
        assert e == pytest.approx(value, abs=0.005)


def test_sheet_certified_value_keeps_relative_uncertainty():
    rm = load_reference_material("benzoic acid").with_certified(-26450.0)
    assert rm.certified_J_per_g == 26450.0
    assert rm.u_relative == pytest.approx(1.5 / 26434)


# --- buoyancy ---------------------------------------------------------------------------------
def test_buoyancy_certificate_check():
    # 26 434 J/g in vacuum = 26 454 J/g per gram weighed in air against brass (benzoic acid
    # 1.320, air 0.0012, brass 8.4 g/cm³; benzoic-acid certificates, docs/references.md §2)
    assert 26434 * buoyancy_factor(1.320) == pytest.approx(26454, abs=0.5)
    # first-order form printed on the certificate: 26 454.25 (derived)
    linear = 26434 * (1 + 0.0012 * (1 / 1.320 - 1 / 8.4))
    assert 26434 * buoyancy_factor(1.320) == pytest.approx(linear, abs=0.05)
    # a body as dense as the weights has no buoyancy correction (Archimedes)
    assert buoyancy_factor(8.4) == pytest.approx(1.0, abs=1e-15)
    assert buoyancy_factor(8.0, weights="steel") == pytest.approx(1.0, abs=1e-15)
    assert mass_in_vacuum_g(1.0, 1.320) > 1.0
    with pytest.raises(RunError, match="sample_density_g_per_cm3"):
        buoyancy_factor(0.0)


# --- corrections ------------------------------------------------------------------------------
def test_nitric_acid_per_mL():
    # docs/methods.md §3.4: 0.0866 mol/L titrant with ΔfU(HNO3, aq) = −59.7 kJ/mol -> ≈ 5.17 J/mL
    n = nitric_acid_mol(1.0, 0.0866)
    assert nitric_acid_energy_J(n)[0] == pytest.approx(5.170, abs=0.001)
    # 0.0709 N titrant gives about 1 cal per mL (old ASTM coal practice, docs/methods.md §3.4 ≈ 4.18 J)
    assert nitric_acid_energy_J(nitric_acid_mol(1.0, 0.0709))[0] == pytest.approx(4.23, abs=0.01)


def test_titre_without_concentration_names_the_column():
    with pytest.raises(RunError, match="acid_titrant_mol_per_L"):
        nitric_acid_mol(10.0, None)
    with pytest.raises(RunError, match="acid_titre_mL"):
        nitric_acid_mol(-1.0, 0.1)
    # the titre counts the sulfuric acid too (two protons)
    assert nitric_acid_mol(10.0, 0.1, sulfuric_acid_mol=2e-4) == pytest.approx(6e-4)
    with pytest.raises(RunError, match="acid_titre_mL"):
        nitric_acid_mol(1.0, 0.1, sulfuric_acid_mol=1e-3)


def test_fuse_and_cotton():
    assert fuse_energy_J(fuse_J=12.0)[0] == 12.0
    assert fuse_energy_J(fuse_burnt_cm=8.0, fuse_J_per_cm=9.6)[0] == pytest.approx(76.8)
    # platinum is not consumed
    assert fuse_energy_J(fuse_mass_g=0.01, material="Pt")[0] == 0.0
    # iron: 2 Fe + 3/2 O2 = Fe2O3 with ΔfH(Fe2O3) = −824.2 kJ/mol (NBS 1982, recalled)
    per_g = (824.2 - 1.5 * R_J_per_mol_K * 298.15 / 1000) * 1000 / (2 * 55.845)
    assert fuse_energy_J(fuse_mass_g=1.0, material="iron")[0] == pytest.approx(per_g, rel=1e-3)
    # cotton: 16 240 J/g default (thermochemical practice, recalled)
    assert cotton_energy_J(0.003)[0] == pytest.approx(48.72)
    assert fuse_energy_J(fuse_mass_g=0.003, material="cotton")[0] == pytest.approx(48.72)
    with pytest.raises(ChoiceError):
        fuse_energy_J(fuse_mass_g=0.01, material="copper")
    with pytest.raises(RunError, match="fuse_burnt_cm"):
        fuse_energy_J(fuse_burnt_cm=-1.0, fuse_J_per_cm=9.6)


def test_soot_uses_codata_carbon_dioxide():
    # Δcu(graphite) = −393.51 kJ/mol (CODATA 1989) / 12.011 g/mol -> 32.76 kJ/g not released
    assert soot_energy_J(0.001)[0] == pytest.approx(-393.51 / 12.011, rel=1e-5)


def test_sulfuric_acid_conventions():
    # fuel convention: ≈ 9.4 J per mg S (docs/methods.md §3.4)
    e, _ = sulfuric_acid_energy_J(1e-3 / 32.06, "fuel")
    assert e == pytest.approx(9.40, abs=0.01)
    # recomputed from ΔfH(H2SO4 in 115 H2O) = −887.81 (NBS 1982, recalled), SO2(g) −296.81
    # (CODATA, confirmed), H2O(l) −285.830 (CODATA) and Δn(gas) = −3/2
    du = -887.81 + 296.81 + 285.830 + 1.5 * R_J_per_mol_K * 298.15 / 1000
    assert load_data("bomb_corrections.toml")["sulfuric_acid"][
        "delta_r_U_from_SO2_kJ_per_mol"] == pytest.approx(du, abs=0.01)
    # ASTM total-acid practice: the extra S correction ≈ 5.7 J per mg S (docs/methods.md §3.4)
    astm = (301.45 - 2 * 59.7) / 32.06
    assert astm == pytest.approx(5.7, abs=0.1)
    # thermochemical: already at 115 H2O -> nothing; a more concentrated bomb solution
    # releases heat on dilution that the bomb did not see (negative correction)
    assert sulfuric_acid_energy_J(1e-3, "thermochemical", water_mol_per_mol=115)[0] == 0.0
    assert sulfuric_acid_energy_J(1e-3, "thermochemical", water_mol_per_mol=50)[0] < 0
    with pytest.raises(ChoiceError):
        sulfuric_acid_energy_J(1e-3, "ISO")


# --- series statistics and Grubbs ------------------------------------------------------------
def test_grubbs_critical_values():
    # ASTM E178 two-sided 5 % table (recalled): n = 3 … 10
    table = {3: 1.155, 4: 1.481, 5: 1.715, 6: 1.887, 7: 2.020, 8: 2.126, 9: 2.215, 10: 2.290}
    for n, g in table.items():
        assert grubbs_critical_value(n) == pytest.approx(g, abs=1.5e-3)


def test_grubbs_critical_value_by_simulation():
    # independent check: the 95th percentile of G under normality (seeded Monte Carlo)
    rng = np.random.default_rng(1)
    x = rng.standard_normal((40000, 8))
    g = np.max(np.abs(x - x.mean(1, keepdims=True)), 1) / x.std(1, ddof=1)
    assert np.quantile(g, 0.95) == pytest.approx(grubbs_critical_value(8), abs=0.02)


def test_grubbs_flags_but_never_removes():
    values = [10000.0, 10001.0, 9999.5, 10000.4, 9999.8, 10012.0]
    s = series_statistics(values, [f"r{i}" for i in range(6)], rsd_limit_percent=0.1)
    assert s.outlier_test["outlier"] is True
    assert s.outlier_test["suspect"] == "r5"
    assert s.n == 6  # kept
    assert s.mean == pytest.approx(np.mean(values))
    assert any("Grubbs" in w for w in s.warnings)
    assert grubbs_test([1.0, 2.0])["applied"] is False


def test_series_statistics_and_rsd_limit():
    values = [10000.0, 10010.0, 9990.0, 10005.0, 9995.0, 10000.0]
    s = series_statistics(values, rsd_limit_percent=0.05)
    assert s.std_dev == pytest.approx(np.std(values, ddof=1))
    assert s.std_dev_of_mean == pytest.approx(s.std_dev / math.sqrt(6))
    assert s.rsd_percent == pytest.approx(100 * s.std_dev / 10000)
    assert any("exceeds the acceptance limit" in w for w in s.warnings)
    assert not series_statistics(values, rsd_limit_percent=0.2).warnings
    # the standard deviation of the mean agrees with scipy's sem
    assert s.std_dev_of_mean == pytest.approx(stats.sem(values))


# --- fuels ------------------------------------------------------------------------------------
def test_exact_unit_factors():
    # exact by definition (calwork.core.units; pint/scipy agree): Btu_IT/lb = 2.326 J/g,
    # cal_IT = 4.1868 J, cal_th = 4.184 J
    assert convert_calorific_value(2.326, "Btu_IT/lb") == pytest.approx(1.0, rel=1e-14)
    assert convert_calorific_value(4.1868, "cal_IT/g") == pytest.approx(1.0, rel=1e-15)
    assert convert_calorific_value(4.184, "cal_th/g") == pytest.approx(1.0, rel=1e-15)
    assert (CAL_IT_J, CAL_TH_J) == (4.1868, 4.184)
    assert convert_calorific_value(47788.0, "MJ/kg") == pytest.approx(47.788)
    with pytest.raises(ChoiceError):
        convert_calorific_value(1.0, "kcal/kg")


def test_net_value_constants_from_codata_water():
    # docs/references.md §8a derivation: CODATA ΔfH(H2O, l) = −285.830, ΔfH(H2O, g) = −241.826
    # kJ/mol; M(H2O) = 18.015, M(H) = 1.008 (conventional atomic weights)
    M_w = molar_mass_g_per_mol("H2O")
    M_H = molar_mass_g_per_mol("H")
    RT = R_J_per_mol_K * 298.15
    dvapH = (-241.826 + 285.830) * 1000 / M_w  # J/g
    dvapU = dvapH - RT / M_w
    water_per_percent_H = 0.01 / (2 * M_H) * M_w   # g water per g fuel per % H
    k_p = water_per_percent_H * dvapH - 0.25 * (0.01 / M_H) * RT
    k_v = water_per_percent_H * dvapU
    c = load_data("fuel_relations.toml")["iso1928"]
    assert k_p == pytest.approx(c["hydrogen_p_J_per_g_per_percent"], abs=0.1)    # 212.2
    assert k_v == pytest.approx(c["hydrogen_v_J_per_g_per_percent"], abs=0.1)    # 206.0
    assert 0.01 * dvapH == pytest.approx(c["moisture_p_J_per_g_per_percent"], abs=0.01)  # 24.43
    assert 0.01 * dvapU == pytest.approx(c["moisture_v_J_per_g_per_percent"], abs=0.01)  # 23.05
    # the O/N term: ½ RT per mol of O or N atoms released as gas, per % -> 0.78 / 0.89 ≈ 0.8
    o_term = 0.5 * 0.01 / molar_mass_g_per_mol("O") * RT
    n_term = 0.5 * 0.01 / molar_mass_g_per_mol("N") * RT
    assert (o_term + n_term) / 2 == pytest.approx(c["oxygen_nitrogen_p_J_per_g_per_percent"],
                                                  abs=0.05)
    # ASTM D240's 0.2122 MJ/kg per % H is the same constant
    assert net_from_gross_astm_d240_J_per_g(45000.0, 0.1) == pytest.approx(45000 - 2122.0)


def test_net_value_by_hand():
    # ISO 1928 form, worked by hand: q_gr,ad = 25 000 J/g, M_ad = 5 %, H_ad = 4 %, O_ad = 8 %,
    # N_ad = 1.5 %: dry values ×1/0.95
    q_d, H, Ox, N = 25000 / 0.95, 4 / 0.95, 8 / 0.95, 1.5 / 0.95
    p = (q_d - 212.2 * H - 0.8 * (Ox + N)) * 0.95 - 24.43 * 5
    v = (q_d - 206.0 * H) * 0.95 - 23.05 * 5
    kw = {"hydrogen": 0.04, "oxygen": 0.08, "nitrogen": 0.015, "moisture_ad": 0.05}
    assert net_calorific_value_J_per_g(25000.0, **kw) == pytest.approx(p, rel=1e-12)
    assert net_calorific_value_J_per_g(25000.0, at="constant-volume", **kw) == \
        pytest.approx(v, rel=1e-12)
    # the net value is below the gross value; the constant-pressure net below constant-volume
    assert p < v < 25000


def test_bases():
    # ASTM D3180 / ISO 17247 algebra: ad 25 000 J/g, M_ad 5 %, A_ad 10 %
    assert convert_basis(25000.0, moisture_ad=0.05, to="dry") == pytest.approx(25000 / 0.95)
    assert convert_basis(25000.0, moisture_ad=0.05, ash_ad=0.10, to="dry-ash-free") == \
        pytest.approx(25000 / 0.85)
    assert convert_basis(25000.0, moisture_ad=0.05, to="as-received", moisture_ar=0.2) == \
        pytest.approx(25000 * 0.8 / 0.95)
    out = fuel_outputs(-25000.0, hydrogen=0.04, moisture=0.05, ash=0.1)
    assert out["gross_v_as_analysed_J_per_g"] == 25000.0
    assert out["gross_v_as_analysed_MJ_per_kg"] == pytest.approx(25.0)
    assert out["gross_v_as_analysed_Btu_IT_per_lb"] == pytest.approx(25000 / 2.326)
    assert out["net_p_as_analysed_J_per_g"] < out["net_v_as_analysed_J_per_g"] < 25000
    with pytest.raises(RunError, match="hydrogen_mass_fraction"):
        net_calorific_value_J_per_g(25000.0, hydrogen=4.0)


def test_astm_d240_check_fuel_isooctane():
    # ASTM D240 §8.2: 2,2,4-trimethylpentane, gross heat of combustion 47.788 MJ/kg (weight in
    # air, confirmed). Its ΔfH°(l) = −259.2 kJ/mol (CRC via chemicals; docs/references.md §4) gives
    # through this chain ΔcH° → ΔcU° → gross CV in vacuum → × buoyancy (liquid density
    # 0.6919 g/cm³, recalled) the same value within 0.01 MJ/kg.
    from calwork.hess import combustion_link

    co2, h2o = -393.51, -285.830   # CODATA key values (Cox, Wagman & Medvedev 1989)
    dcH = 8 * co2 + 9 * h2o - (-259.2)
    dcU = dcH + 4.5 * R_J_per_mol_K * 298.15 / 1000   # Δn(gas) = 8 − 12.5 = −4.5
    M = molar_mass_g_per_mol("C8H18")
    gross_vac = -dcU / M                               # kJ/g = MJ/kg
    gross_air = gross_vac * buoyancy_factor(0.6919)
    assert gross_air == pytest.approx(47.788, abs=0.01)
    # and back through the Hess link: Δcu° from the check value gives ΔfH° ≈ −259.2
    du = -47.788 / buoyancy_factor(0.6919) * 1000
    link = combustion_link("C8H18", du, 1.0, phase="l")
    assert link.delta_f_H_kJ_per_mol == pytest.approx(-259.2, abs=0.01 * M)
    assert convert_calorific_value(-du, "MJ/kg") == pytest.approx(47.714, abs=0.01)
