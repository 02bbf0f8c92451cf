"""The solution chain end to end on simulated runs with known truth (calwork.simulation)."""

from __future__ import annotations

import json
import math
from dataclasses import replace

import pytest
from calwork.sample_runs.solution_day import simulate_solution_day

from calwork.core.errors import LogFormatError
from calwork.core.runinfo import RunInfo
from calwork.core.thermogram import Thermogram
from calwork.formula import molar_mass_g_per_mol
from calwork.io.sheets import read_run_sheet
from calwork.simulation import CalorimeterParams, FirstOrderRelease, HeaterInterval, simulate_run
from calwork.solution.analysis import SolutionOptions
from calwork.solution.chain import reduce_solution_runs


def _chain(*args, **kwargs):
    """The chain's runs, calibrations and samples, as lists."""
    res = reduce_solution_runs(*args, **kwargs)
    return list(res.runs), list(res.calibrations), list(res.samples)

# A small semi-adiabatic vessel: ε = 300 J/K, k = G/ε = 1e-3 1/s (docs/methods.md §1.1 ranges)
VESSEL = CalorimeterParams.solution_preset(bomb_heat_capacity_J_per_K=40.0,
                                           water_heat_capacity_J_per_K=260.0,
                                           exchange_conductance_W_per_K=0.3)
EPS = VESSEL.energy_equivalent_J_per_K
P_HEATER, T_HEATER = 0.05, 300.0
TRIS = "C4H11NO3"


def _log(energy_J: float, *, seed: int, heaters=(True, True), params=VESSEL,
         tau_s: float = 25.0) -> Thermogram:
    """Calibration (300–600 s), reaction at 1200 s, calibration (1800–2100 s), 2700 s log;
    temperatures centred on 298.15 K (jacket) at the reaction."""
    rise = P_HEATER * T_HEATER / params.energy_equivalent_J_per_K
    T0 = 298.15 - (rise if heaters[0] else 0.0) - energy_J / params.energy_equivalent_J_per_K / 2
    p = replace(params, initial_temperature_K=T0)
    inputs = [FirstOrderRelease(energy_J=energy_J, start_s=1200.0, time_constant_s=tau_s)]
    if heaters[0]:
        inputs.append(HeaterInterval(power_W=P_HEATER, on_s=300.0, off_s=600.0))
    if heaters[1]:
        inputs.append(HeaterInterval(power_W=P_HEATER, on_s=1800.0, off_s=2100.0))
    return simulate_run(p, inputs, duration_s=2700.0, seed=seed).thermogram


def _info(run: str, **kw) -> RunInfo:
    base = {"kind": "solution", "calorimeter": "C1", "solvent_mass_g": 72.0}
    base.update(kw)
    return RunInfo(run=run, **base)


def test_dissolution_end_to_end_within_0_1_percent():
    # endothermic first-order dissolution, calibrations before and after in the same log:
    # the molar enthalpy must come back within 0.1 % of the simulated truth
    infos, logs, truth = [], {}, {}
    for k, (H_kJ, n) in enumerate([(17.5, 0.002), (25.0, 0.0015), (8.0, 0.004)]):
        run = f"S{k}"
        logs[run] = _log(-n * H_kJ * 1000.0, seed=100 + k)
        infos.append(_info(run, sample="salt", amount_mol=n))
        truth[run] = H_kJ
    runs, cals, samples = _chain(infos, thermograms=logs)
    assert cals == []
    for r in runs:
        assert r.error is None, r.error
        assert r.molar_enthalpy_kJ_per_mol == pytest.approx(truth[r.run], rel=1e-3)
        assert r.molar_enthalpy_kJ_per_mol > 0  # endothermic: ΔH > 0
        assert r.corrected_rise_K < 0
        assert r.energy_equivalent_J_per_K == pytest.approx(EPS, rel=1e-3)
        assert r.heater_energy_J == pytest.approx(P_HEATER * T_HEATER, rel=1e-4)
        assert r.details["calibration_basis"] == "mean"
        # the reported uncertainty covers the actual error
        assert abs(r.molar_enthalpy_kJ_per_mol - truth[r.run]) < 3 * r.u_molar_enthalpy_kJ_per_mol
        assert len(r.rise) == 3
        assert r.details["reaction_event_index"] == 1
    (s,) = samples
    assert s.n_runs == 3
    assert s.kind == "solution"
    assert s.molar_enthalpy_kJ_per_mol == pytest.approx(sum(truth.values()) / 3, rel=1e-3)


@pytest.mark.parametrize(("name", "J_per_g", "u_J_per_g"), [
    # Prosen & Kilday, J. Res. NBS 77A (1973) 581 (docs/references.md §3, confirmed):
    ("TRIS in 0.1 mol/dm3 HCl", -245.76, 0.26),   # exothermic
    ("TRIS in 0.05 mol/dm3 NaOH", 141.80, 0.19),  # endothermic
])
def test_tris_reference_reactions_are_recovered(name, J_per_g, u_J_per_g):
    mass_g = 0.5
    heat_released = -J_per_g * mass_g  # ΔH < 0 releases heat into the calorimeter
    tg = _log(heat_released, seed=7, tau_s=15.0)
    (r,), _, (s,) = _chain(
        [_info("T1", sample=name, formula=TRIS, mass_g=mass_g)], thermograms={"T1": tg})
    assert r.error is None, r.error
    M = molar_mass_g_per_mol(TRIS)
    assert M == pytest.approx(121.136, abs=0.001)  # the molar mass Prosen & Kilday used
    massic = r.molar_enthalpy_kJ_per_mol * 1000.0 / M
    assert abs(massic - J_per_g) < u_J_per_g  # within the certified uncertainty
    assert math.copysign(1, r.molar_enthalpy_kJ_per_mol) == math.copysign(1, J_per_g)
    # −245.76 J/g × 121.136 g/mol = −29.770 kJ/mol (docs/references.md §3, derived)
    if J_per_g < 0:
        assert r.molar_enthalpy_kJ_per_mol == pytest.approx(-29.770, abs=0.031)
    # referral rule (2.2): the mean of both calibrations refers to T_i + ΔT_c/2
    rise = r.rise[r.details["reaction_event_index"]]
    assert r.reference_temperature_K == pytest.approx(rise.T_initial_K + rise.corrected_rise_K / 2)
    assert s.molar_enthalpy_kJ_per_mol == r.molar_enthalpy_kJ_per_mol


def test_calibration_basis_options_and_referral():
    tg = _log(-35.0, seed=11)
    info = _info("R1", amount_mol=0.002)
    out = {}
    for basis in ("before", "after", "mean"):
        (r,), _, _ = _chain([info], thermograms={"R1": tg},
                                          options=SolutionOptions(calibration=basis))
        out[basis] = r
    rise = out["mean"].rise[1]
    Ti, dT = rise.T_initial_K, rise.corrected_rise_K
    assert out["after"].reference_temperature_K == pytest.approx(Ti)
    assert out["before"].reference_temperature_K == pytest.approx(Ti + dT)
    assert out["mean"].reference_temperature_K == pytest.approx(Ti + dT / 2)
    eps_b = out["before"].energy_equivalent_J_per_K
    eps_a = out["after"].energy_equivalent_J_per_K
    assert out["mean"].energy_equivalent_J_per_K == pytest.approx((eps_a + eps_b) / 2)
    # only a calibration after the reaction: 'auto' takes it (and refers to T_i)
    tg_after = _log(-35.0, seed=12, heaters=(False, True))
    (r,), _, _ = _chain([info], thermograms={"R1": tg_after})
    assert r.details["calibration_basis"] == "after"
    assert r.molar_enthalpy_kJ_per_mol == pytest.approx(17.5, rel=1e-3)


def test_electrical_series_with_standard_resistor_serves_runs_without_calibration():
    logs, infos = {}, []
    for k in range(3):
        run = f"E{k}"
        sim = simulate_run(replace(VESSEL, initial_temperature_K=298.125),
                           HeaterInterval(power_W=P_HEATER, on_s=300.0, off_s=600.0),
                           duration_s=1200.0, seed=200 + k)
        ch = dict(sim.thermogram.channels)
        ch["standard_resistor_V"] = ch.pop("heater_A") * 10.0  # I = V_s / R_s
        logs[run] = replace(sim.thermogram, channels=ch)
        infos.append(RunInfo(run=run, kind="electrical", calorimeter="C1",
                             standard_resistor_ohm=10.0))
    logs["D1"] = _log(-30.0, seed=210, heaters=(False, False))
    infos.append(_info("D1", amount_mol=0.0015, sample="no-cal"))
    runs, (cal,), (_s,) = _chain(infos, thermograms=logs)
    assert [r.error for r in runs] == [None] * 4
    assert cal.n_runs == 3
    assert cal.method == "electrical"
    assert cal.energy_equivalent_J_per_K == pytest.approx(EPS, rel=5e-4)
    assert cal.u_energy_equivalent_J_per_K > 0
    d = runs[-1]
    assert d.details["calibration_basis"] == "series"
    assert d.energy_equivalent_J_per_K == cal.energy_equivalent_J_per_K
    assert d.molar_enthalpy_kJ_per_mol == pytest.approx(20.0, rel=1e-3)
    assert "calibration_series" in d.details["budget_kJ_per_mol"]
    # missing R_s: the electrical run fails naming the column; the others still reduce
    bad = [replace(infos[0], standard_resistor_ohm=None), *infos[1:]]
    runs, (cal,), _ = _chain(bad, thermograms=logs)
    assert runs[0].error is not None
    assert "standard_resistor_ohm" in runs[0].error
    assert "'E0'" in runs[0].error
    assert cal.n_runs == 2


def test_sheet_heater_power_and_times_without_channels():
    sim = simulate_run(replace(VESSEL, initial_temperature_K=298.125),
                       HeaterInterval(power_W=P_HEATER, on_s=300.0, off_s=600.0),
                       duration_s=1200.0, seed=5)
    bare = replace(sim.thermogram, channels={})
    info = RunInfo(run="E1", kind="electrical", calorimeter="C1", heater_power_W=P_HEATER,
                   heater_on_s=300.0, heater_off_s=600.0)
    (r,), (cal,), _ = _chain([info], thermograms={"E1": bare})
    assert r.error is None, r.error
    assert r.heater_energy_J == pytest.approx(15.0)
    assert r.energy_equivalent_J_per_K == pytest.approx(EPS, rel=5e-4)
    assert cal.n_runs == 1
    assert cal.warnings
    # heater power given without the on/off times -> error naming the column
    (r,), cals, _ = _chain([replace(info, heater_on_s=None, heater_off_s=None)],
                                         thermograms={"E1": bare})
    assert "heater_on_s" in r.error
    assert cals == []
    # an electrical run with no heater data at all
    (r,), _, _ = _chain([replace(info, heater_power_W=None, heater_on_s=None,
                                               heater_off_s=None)], thermograms={"E1": bare})
    assert "heater" in r.error


def test_failing_runs_are_returned_with_their_error():
    tg = _log(-35.0, seed=13)
    infos = [
        _info("A", sample="x"),                                    # no amount at all
        _info("B", sample="x", mass_g=0.3),                        # mass but no formula
        RunInfo(run="C", kind="combustion", calorimeter="C1"),     # not a solution kind
        _info("D", sample="x", amount_mol=0.002),                  # log could not be read
        _info("E", sample="x", amount_mol=0.002),                  # fine
    ]
    logs = {"A": tg, "B": tg, "C": tg, "E": tg,
            "D": LogFormatError("no temperature column", path="d.csv", line=3)}
    runs, _, samples = _chain(infos, thermograms=logs)
    assert [r.run for r in runs] == ["A", "B", "C", "D", "E"]
    assert "amount_mol" in runs[0].error
    assert "'A'" in runs[0].error
    assert "formula" in runs[1].error
    assert "kind" in runs[2].error
    assert "d.csv:3" in runs[3].error
    assert runs[4].error is None
    assert samples[0].n_runs == 1
    assert samples[0].runs == ("E",)


def test_simulated_day_kcl_series_blanks_and_infinite_dilution(tmp_path):
    rows = simulate_solution_day(tmp_path, seed=3)
    truth = json.loads((tmp_path / "simulated_truth.json").read_text())
    assert truth["simulated"] is True
    assert all("simulated" in str(r["notes"]) for r in rows)
    infos = read_run_sheet(tmp_path / "solution_runs.csv")
    runs, (cal,), (kcl,) = _chain(infos)
    assert all(r.error is None for r in runs), [r.error for r in runs if r.error]
    assert cal.n_runs == 3
    assert cal.energy_equivalent_J_per_K == pytest.approx(360.0, rel=5e-4)
    for r in runs:
        t = truth["runs"][r.run]
        if r.kind == "blank":  # the breaking heat alone (vaporisation into 1 mL taken out)
            assert r.corrections_J["vaporisation"] == pytest.approx(t["vaporisation_J"],
                                                                    rel=0.01)
            assert abs(r.reaction_heat_J - t["ampoule_breaking_J"]) < 3 * r.details[
                "u_reaction_heat_J"]
        if r.kind == "solution":
            assert r.molar_enthalpy_kJ_per_mol == pytest.approx(
                t["molar_enthalpy_kJ_per_mol"], rel=1e-3)
            assert r.final_molality_mol_per_kg == pytest.approx(
                t["final_molality_mol_per_kg"], rel=1e-9)
            assert "ampoule_breaking" in r.corrections_J
            assert r.dilution_ratio == pytest.approx(
                1000.0 / 18.015 / r.final_molality_mol_per_kg, rel=1e-9)
    # the run nearest the SRM 1655 molality (0.111 mol/kg) reproduces the certified
    # 17.584 ± 0.017 kJ/mol (Kilday 1980, recalled from memory) within that uncertainty
    near = min((r for r in runs if r.kind == "solution"),
               key=lambda r: abs(r.final_molality_mol_per_kg - 0.111))
    assert abs(near.final_molality_mol_per_kg - 0.111) < 0.003
    assert abs(near.molar_enthalpy_kJ_per_mol - 17.584) < 0.017
    # the series at 5 molalities extrapolated with Pitzer ΦL: the simulated truth
    # Δ_solH∞ = 17.584 − ΦL(0.111) = 17.236 kJ/mol (SRM 1655 value recalled from memory)
    assert kcl.n_runs == 5
    assert kcl.infinite_dilution_enthalpy_kJ_per_mol == pytest.approx(17.236, abs=max(
        0.01, 2 * kcl.u_infinite_dilution_enthalpy_kJ_per_mol))
    # ... and consistent with the CODATA key values: 17.28 kJ/mol derived, u ≈ 0.12 (k = 1)
    assert abs(kcl.infinite_dilution_enthalpy_kJ_per_mol - 17.28) < math.hypot(
        0.119, kcl.u_infinite_dilution_enthalpy_kJ_per_mol)
    assert 0.02 < kcl.final_molality_mol_per_kg < 0.15


def test_sheet_heater_times_refine_the_channel_interval_and_options_are_checked():
    tg = _log(-35.0, seed=17)
    info = _info("H1", amount_mol=0.002, heater_on_s=300.0, heater_off_s=600.0)
    (r,), _, _ = _chain([info], thermograms={"H1": tg})
    cal = r.details["calibrations"][0]
    assert cal["energy_source"] == "sheet times, channel power"
    assert (cal["heater_on_s"], cal["heater_off_s"]) == (300.0, 600.0)
    assert cal["heater_energy_J"] == pytest.approx(15.0, rel=1e-5)
    assert r.details["calibrations"][1]["energy_source"] == "channels"
    from calwork.core.errors import ChoiceError

    with pytest.raises(ChoiceError, match="calibration"):
        SolutionOptions(calibration="middle")
    with pytest.raises(ChoiceError, match="phi_L_model"):
        SolutionOptions(phi_L_model="debye")


def test_public_names_resolve():
    import calwork.solution as solution

    for name in solution.__all__:
        assert callable(getattr(solution, name))
    with pytest.raises(AttributeError):
        _ = solution.no_such_name


def test_the_electrical_series_gets_the_same_statistics_as_a_bomb_series():
    # one implementation for every calibration series: Grubbs' test (ASTM E178) reports a
    # planted outlier of an electrical series exactly as it does for a bomb series
    from calwork.core.results import SolutionRunResult
    from calwork.core.statistics import grubbs_critical_value
    from calwork.solution.chain import _series

    values = [360.02, 359.98, 360.01, 359.99, 360.00, 361.50]
    items = [(SolutionRunResult(run=f"E{i}", kind="electrical", energy_equivalent_J_per_K=v,
                        u_energy_equivalent_J_per_K=0.05), {"power_calibration": 0.036})
             for i, v in enumerate(values)]
    cal = _series("SC-1", items)
    test = cal.outlier_test
    assert test["applied"]
    assert test["outlier"]
    assert test["suspect"] == "E5"
    mean = sum(values) / 6
    s = math.sqrt(sum((v - mean) ** 2 for v in values) / 5)   # by hand
    assert test["G"] == pytest.approx((361.50 - mean) / s, rel=1e-12)
    assert test["G_critical"] == pytest.approx(1.887, abs=1e-3)  # ASTM E178, n = 6 (recalled)
    assert grubbs_critical_value(6) == test["G_critical"]
    assert any("Grubbs" in w for w in cal.warnings)
    assert cal.std_dev_of_mean_J_per_K == pytest.approx(s / math.sqrt(6), rel=1e-12)


def test_a_run_without_an_independent_component_is_named_not_silently_filled_in():
    from calwork.core.results import SolutionRunResult
    from calwork.solution.reaction import SHARED_COMPONENTS
    from calwork.solution.samples import _sample

    runs = [SolutionRunResult(run=f"K{i}", kind="solution", molar_enthalpy_kJ_per_mol=17.5 + 0.01 * i,
                      u_molar_enthalpy_kJ_per_mol=0.02,
                      details={"budget_kJ_per_mol": {"power_calibration": 0.02}})
            for i in range(3)]
    s = _sample("KCl", "KCl", runs, "none", SHARED_COMPONENTS)
    flagged = [w for w in s.warnings if w.startswith("independent-u-assumed")]
    assert len(flagged) == 1
    assert "K0, K1, K2" in flagged[0]
