"""The run-level energy chain with a given corrected rise (no thermograms needed)."""

from __future__ import annotations

from types import SimpleNamespace

import pytest

from calwork.bomb.certificate import jessup_factor
from calwork.bomb.chain import reduce_calibration_run, reduce_combustion_run
from calwork.bomb.series import calibration_series
from calwork.core.errors import CalworkError, RunError
from calwork.core.runinfo import RunInfo
from calwork.formula import molar_mass_g_per_mol


def rise(dT=2.6, T_i=298.15):
    return SimpleNamespace(corrected_rise_K=dT, u_corrected_rise_K=5e-5, T_initial_K=T_i,
                           warnings=())


BOMB = {"o2_pressure_MPa": 3.04, "bomb_volume_L": 0.342, "bomb_water_g": 1.0}


def test_calibration_by_hand():
    info = RunInfo(run="c1", kind="calibration", calorimeter="A", mass_g=1.0,
                   reference_material="benzoic acid", ignition_J=1.0, fuse_J=10.0,
                   acid_titre_mL=8.0, acid_titrant_mol_per_L=0.1)
    r = reduce_calibration_run(info, rise(T_i=297.15))
    # no bomb volume: contents not included, process referred to the mean temperature, and
    # the certificate's other conditions taken as standard
    T_mean = 297.15 + 1.3
    f = jessup_factor(3.03975, 3.0, 3.0, T_mean)
    heat = 26434 * f + 1.0 + 10.0 + 8e-4 * 59700
    assert r.energy_equivalent_J_per_K == pytest.approx(heat / 2.6, rel=1e-12)
    assert r.reference_temperature_K == pytest.approx(T_mean)
    assert any(w.startswith("contents: not included") for w in r.warnings)
    assert r.corrections_J["nitric_acid"] == pytest.approx(47.76)
    assert "59.7" in r.details["correction_constants"]["nitric_acid"]


def test_calibration_with_contents_refers_to_298():
    info = RunInfo(run="c1", kind="calibration", calorimeter="A", mass_g=1.0,
                   reference_material="benzoic acid", **BOMB)
    r = reduce_calibration_run(info, rise(T_i=298.15))
    d = r.details
    # starting at T_ref: ε(calor) ΔT = Q − ε^f ΔT  (docs/methods.md (3.2))
    q = 26434 * jessup_factor(3.04, 1 / 0.342, 1 / 0.342, 298.15)
    assert r.energy_equivalent_J_per_K == pytest.approx(
        (q - d["eps_final_contents_J_per_K"] * 2.6) / 2.6, rel=1e-12)
    assert r.reference_temperature_K == 298.15


def test_sulfur_sample_both_conventions():
    cal = calibration_series("A", [reduce_calibration_run(RunInfo(
        run=f"c{i}", kind="calibration", calorimeter="A", mass_g=1.0 + 0.001 * i,
        reference_material="benzoic acid", **BOMB), rise(2.6 + 0.0026 * i)) for i in range(3)])
    base = {"run": "s", "kind": "combustion", "calorimeter": "A", "sample": "thianthrene",
            "formula": "C12H8S2", "mass_g": 0.1, "sample_density_g_per_cm3": 1.44,
            "acid_titre_mL": 25.0, "acid_titrant_mol_per_L": 0.1, **BOMB}
    thermo = reduce_combustion_run(RunInfo(**base), rise(), cal)
    fuel = reduce_combustion_run(RunInfo(**base, sulfur_convention="fuel"), rise(), cal)
    n_s = 2 * 0.1 / molar_mass_g_per_mol("C12H8S2")
    # the titre counts H2SO4 (two protons): n(HNO3) = V c − 2 n(S)
    assert thermo.details["nitric_acid_mol"] == pytest.approx(25e-3 * 0.1 - 2 * n_s)
    # fuel convention: S referred to SO2(g): ≈ 9.4 J per mg S less heat from the sample
    assert fuel.corrections_J["sulfuric_acid"] == pytest.approx(n_s * 301e3, rel=0.01)
    assert fuel.massic_energy_J_per_g - thermo.massic_energy_J_per_g == pytest.approx(
        (fuel.corrections_J["sulfuric_acid"] - thermo.corrections_J["sulfuric_acid"]) / 0.1)
    assert thermo.details["massic_energy_fuel_convention_J_per_g"] == pytest.approx(
        fuel.massic_energy_J_per_g)
    assert thermo.standard_massic_energy_J_per_g > thermo.massic_energy_J_per_g


def test_errors_name_the_column():
    cal = calibration_series("A", [reduce_calibration_run(RunInfo(
        run="c", kind="calibration", calorimeter="A", mass_g=1.0,
        reference_material="benzoic acid"), rise())])
    assert any("single" in w for w in cal.warnings)
    with pytest.raises(RunError, match="calorimeter"):
        reduce_combustion_run(RunInfo(run="s", kind="combustion", mass_g=1.0), rise(), None)
    with pytest.raises(RunError, match="aux_J_per_g"):
        reduce_combustion_run(RunInfo(run="s", kind="combustion", mass_g=1.0, aux_mass_g=0.1),
                              rise(), cal)
    with pytest.raises(CalworkError, match="reference_material"):
        reduce_calibration_run(RunInfo(run="c", kind="calibration", mass_g=1.0,
                                       reference_material="unobtainium"), rise())
    with pytest.raises(RunError, match="corrected temperature rise"):
        reduce_calibration_run(RunInfo(run="c", kind="calibration", mass_g=1.0,
                                       reference_material="benzoic acid"), rise(dT=-1.0))
