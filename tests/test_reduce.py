"""End to end: simulated bomb runs with known truth → run sheet → reduce_sheet.

The simulated calorimeter is calwork's own simulator (two bodies, thermometer lag, noise);
every number here is invented and labelled simulated. The heat of each simulated run follows
docs/methods.md (3.1)–(3.2): benzoic acid releases mass × certified value × Jessup factor for
the run's bomb conditions, the samples mass × |Δu_bomb|; plus ignition, fuse and nitric-acid
energies; the bomb contents' energy equivalent is part of the simulated heat capacity.

The Jessup factor, the nitric-acid energy and the contents' energy equivalents that make the
simulated heat are worked out here by hand (:func:`_by_hand`), from published values named
beside them — not with calwork's own functions, so a bug in those shows as a wrong result.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from calwork.core.constants import T_REF_K
from calwork.io import write_log, write_run_sheet
from calwork.reduce import reduce_runs, reduce_sheet
from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run

V_L, P_MPa, W_G = 0.342, 3.04, 1.0
CERT = 26434.0
SAMPLE_DU = -40120.0            # the simulated sample's massic energy (truth), J/g
SAMPLE_FORMULA, SAMPLE_RHO = "C10H8", 1.16
FIRE_S, DURATION_S = 600.0, 2700.0


# Hand-calculation inputs, each with its source:
R = 8.314462618              # J/(mol K), CODATA 2018 (exact)
ATM_PA = 101325.0            # Pa (exact)
CV_O2 = 29.38 - R            # J/(mol K): Cp(O2, g, 298 K) 29.38, NIST-JANAF (recalled)
CV_CO2 = 37.12 - R           # J/(mol K): Cp(CO2, g, 298 K) 37.12, NIST-JANAF (recalled)
C_WATER = 4.1813             # J/(g K), liquid water at 25 °C, IAPWS-95
M_WATER = 18.015             # g/mol, from IUPAC conventional atomic weights
HNO3_KJ_PER_MOL = 59.7       # −ΔU of ½N2 + 5/4O2 + ½H2O(l) = HNO3(aq), the value of
#                              thermochemical practice (recalled; older practice 59.0)
# Jessup's correction of the benzoic-acid certificate to other bomb conditions, ppm per unit
# of P/atm, m_s/V, m_w/V (g/L) and t/°C about 30 atm, 3 g/L, 3 g/L, 25 °C (as printed on SRM 39
# certificates; recalled from memory)
JESSUP_PPM = (20.0, 42.0, 30.0, -45.0)
#: moles of O2 used and of CO2 and H2O(l) formed per mole burnt; molar mass g/mol (IUPAC
#: conventional atomic weights C 12.011, H 1.008, O 15.999)
COMBUSTION = {"C7H6O2": (7.5, 7.0, 3.0, 122.123), "C10H8": (12.0, 10.0, 4.0, 128.174)}


def _by_hand(formula, mass, rho, cp, titre, conc):
    """(ε^i, ε^f) of the bomb contents (J/K) and the nitric-acid energy (J), by hand: ideal
    O2 in the free volume; all products gaseous CO2 and liquid water (the few parts in a
    thousand of CO2 dissolved in 1 g of water and the non-ideality are left out — worth about
    0.01 J/K, i.e. 1 ppm of ε)."""
    o2_used, co2, h2o, molar_mass = COMBUSTION[formula]
    n_sample = mass / molar_mass
    # free gas volume: bomb less water (0.99705 g/cm³ at 25 °C, IAPWS-95) and sample
    free_L = V_L - W_G / 997.05 - mass / rho / 1000.0
    n_o2 = P_MPa * 1e6 * free_L * 1e-3 / (R * 298.15)
    eps_i = n_o2 * CV_O2 + W_G * C_WATER + mass * cp
    eps_f = ((n_o2 - o2_used * n_sample) * CV_O2 + co2 * n_sample * CV_CO2
             + (W_G + h2o * n_sample * M_WATER) * C_WATER)
    return eps_i, eps_f, titre * conc / 1000.0 * HNO3_KJ_PER_MOL * 1000.0


def _jessup(mass):
    a, b, c, d = JESSUP_PPM
    t_C = 25.0  # the process is referred to 25 °C
    return 1.0 + 1e-6 * (a * (P_MPa * 1e6 / ATM_PA - 30.0) + b * (mass / V_L - 3.0)
                         + c * (W_G / V_L - 3.0) + d * (t_C - 25.0))


def _simulate(tmp, name, *, heat_J, eps_i, eps_f, seed):
    base = CalorimeterParams.bomb_preset()
    # the contents are inside the bomb: the final contents add to the inner body
    p = CalorimeterParams.bomb_preset(
        bomb_heat_capacity_J_per_K=base.bomb_heat_capacity_J_per_K + eps_f)
    k = p.exchange_rate_per_s
    T_inf = p.convergence_temperature_K
    T_i = T_inf - (T_inf - p.initial_temperature_K) * math.exp(-k * FIRE_S)
    # (3.1) with the contents: ε(calor+cont_f) ΔT = Q(T_ref) + (ε^i − ε^f)(T_i − T_ref)
    energy = heat_J + (eps_i - eps_f) * (T_i - T_REF_K)
    run = simulate_run(p, CombustionPulse(energy_J=energy, fire_time_s=FIRE_S, burn_time_s=20.0),
                       duration_s=DURATION_S, seed=seed)
    path = tmp / f"{name}.csv"
    write_log(run.thermogram, path, preamble={"simulated": "true"})
    return path


@pytest.fixture(scope="module")
def dataset(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("e2e")
    rng = np.random.default_rng(20240601)
    rows = []
    for i in range(6):
        m = 0.95 + 0.1 * rng.random()
        titre, conc, ign, fuse = 8.0 + rng.random(), 0.0866, 1.0, 12.0 + rng.random()
        eps_i, eps_f, e_hno3 = _by_hand("C7H6O2", m, 1.320, 1.202, titre, conc)
        heat = m * CERT * _jessup(m) + ign + fuse + e_hno3
        log = _simulate(tmp, f"cal{i}", heat_J=heat, eps_i=eps_i, eps_f=eps_f, seed=100 + i)
        rows.append({"run": f"cal{i}", "kind": "calibration", "log": log.name,
                     "calorimeter": "A", "sample": "benzoic acid", "mass_g": round(m, 5),
                     "reference_material": "benzoic acid", "ignition_J": ign,
                     "fuse_J": round(fuse, 4), "acid_titre_mL": round(titre, 4),
                     "acid_titrant_mol_per_L": conc, "o2_pressure_MPa": P_MPa,
                     "bomb_volume_L": V_L, "bomb_water_g": W_G})
    for i in range(5):
        m = 0.45 + 0.05 * i + 0.01 * rng.random()
        titre, conc, ign, fuse = 6.0 + rng.random(), 0.0866, 1.0, 12.0 + rng.random()
        # mass rounded first: the sheet's mass is the truth's mass
        m = round(m, 5)
        titre, fuse = round(titre, 4), round(fuse, 4)
        eps_i, eps_f, e_hno3 = _by_hand(SAMPLE_FORMULA, m, SAMPLE_RHO, 1.2, titre, conc)
        heat = m * -SAMPLE_DU + ign + fuse + e_hno3
        log = _simulate(tmp, f"s{i}", heat_J=heat, eps_i=eps_i, eps_f=eps_f, seed=200 + i)
        rows.append({"run": f"s{i}", "kind": "combustion", "log": log.name, "calorimeter": "A",
                     "sample": "naphthalene (simulated)", "formula": SAMPLE_FORMULA,
                     "phase": "cr", "mass_g": m, "ignition_J": ign, "fuse_J": fuse,
                     "acid_titre_mL": titre, "acid_titrant_mol_per_L": conc,
                     "o2_pressure_MPa": P_MPa, "bomb_volume_L": V_L, "bomb_water_g": W_G,
                     "sample_density_g_per_cm3": SAMPLE_RHO})
    # the calibration masses were rounded for the sheet: recompute those runs' truth exactly
    sheet = tmp / "runs.csv"
    write_run_sheet(rows, sheet)
    return sheet, rows


@pytest.fixture(scope="module")
def reduction(dataset):
    return reduce_sheet(dataset[0])


def test_every_sample_within_150_ppm(reduction):
    assert not [r.error for r in reduction.runs if r.error]
    (cal,) = reduction.calibrations
    assert cal.n_runs == 6
    (s,) = reduction.samples
    assert s.n_runs == 5
    # truth: the simulated sample's Δu of the bomb process (simulated data)
    assert s.massic_energy_J_per_g == pytest.approx(SAMPLE_DU, rel=150e-6)
    for r in reduction.runs:
        if r.kind == "combustion":
            assert r.massic_energy_J_per_g == pytest.approx(SAMPLE_DU, rel=150e-6)
    # the budget is honest: the error is within 3 u
    assert abs(s.massic_energy_J_per_g - SAMPLE_DU) < 3 * s.u_massic_energy_J_per_g


def test_molar_quantities_by_hand(reduction):
    R_J_per_mol_K = R
    (s,) = reduction.samples
    M = COMBUSTION[SAMPLE_FORMULA][3]  # 128.174 g/mol by hand
    # ΔcU° = M Δcu°; C10H8 + 12 O2 = 10 CO2 + 4 H2O(l): Δn(gas) = −2 (docs/methods.md (3.6), (3.8))
    # (M to 1e-5 relative: the atomic weights' rounding)
    assert s.delta_c_U_kJ_per_mol == pytest.approx(M * s.standard_massic_energy_J_per_g / 1e3,
                                                   rel=1e-5)
    assert s.delta_c_H_kJ_per_mol == pytest.approx(
        s.delta_c_U_kJ_per_mol - 2 * R_J_per_mol_K * 298.15 / 1e3, abs=1e-9)
    # (3.9) with the CODATA key values CO2(g) −393.51, H2O(l) −285.830 kJ/mol
    assert s.delta_f_H_kJ_per_mol == pytest.approx(
        10 * -393.51 + 4 * -285.830 - s.delta_c_H_kJ_per_mol, abs=1e-6)
    assert s.U_delta_f_H_kJ_per_mol == pytest.approx(2 * s.u_delta_f_H_kJ_per_mol)
    # u(ΔfH)² = u(ΔcH)² + 10² u(CO2)² + 4² u(H2O)² with u = ± / 2 (CODATA, treated as k = 2)
    u = math.sqrt(s.u_delta_c_H_kJ_per_mol**2 + 100 * 0.065**2 + 16 * 0.020**2)
    assert s.u_delta_f_H_kJ_per_mol == pytest.approx(u, rel=1e-6)
    # the budget: scatter, calibration (not averaged down), certificate, corrections, Washburn
    b = s.budget
    assert b["certificate_J_per_g"] == pytest.approx(abs(SAMPLE_DU) * 1.5 / 26434, rel=0.02)
    parts = [b[k] for k in ("scatter_J_per_g", "calibration_J_per_g", "certificate_J_per_g",
                            "corrections_J_per_g")]
    assert s.u_massic_energy_J_per_g == pytest.approx(math.sqrt(sum(p * p for p in parts)))
    assert s.u_standard_massic_energy_J_per_g == pytest.approx(
        math.hypot(s.u_massic_energy_J_per_g, b["washburn_J_per_g"]))
    # Washburn correction of an aromatic hydrocarbon at ≈ 3 MPa: tens of J/g, positive
    assert 10 < s.standard_massic_energy_J_per_g - s.massic_energy_J_per_g < 40


def test_calibration_series(reduction):
    (cal,) = reduction.calibrations
    assert cal.n_runs == 6
    assert len(cal.values_J_per_K) == 6
    assert cal.energy_equivalent_J_per_K == pytest.approx(np.mean(cal.values_J_per_K))
    assert cal.std_dev_of_mean_J_per_K == pytest.approx(
        np.std(cal.values_J_per_K, ddof=1) / math.sqrt(6))
    assert cal.rsd_percent < 0.1
    assert cal.outlier_test["applied"]
    # ASTM E178 table, n = 6, two-sided 5 % (recalled)
    assert cal.outlier_test["G_critical"] == pytest.approx(1.887, abs=1e-3)
    # the calibration run says how it referred the process to 298.15 K
    run = next(r for r in reduction.runs if r.run == "cal0")
    assert run.details["contents_included"] is True
    assert run.reference_temperature_K == 298.15
    assert run.corrections_J["nitric_acid"] > 0


def _infos(dataset):
    from calwork.io import read_run_sheet

    return read_run_sheet(dataset[0])


def test_bad_rows_fail_alone(dataset):
    from dataclasses import replace

    infos = _infos(dataset)
    s0 = next(i for i in infos if i.run == "s0")
    cal0 = next(i for i in infos if i.run == "cal0")
    bad = [
        (replace(s0, run="b_cal", calorimeter="B"), "calorimeter"),
        (replace(cal0, run="b_ref", reference_material=None), "reference_material"),
        (replace(s0, run="b_formula", formula="C10Qq8"), "formula"),
        (replace(s0, run="b_mass0", mass_g=0.0), "mass_g"),
        (replace(s0, run="b_massneg", mass_g=-0.5), "mass_g"),
        (replace(s0, run="b_titre", acid_titrant_mol_per_L=None), "acid_titrant_mol_per_L"),
        (replace(s0, run="b_air", mass_basis="air", sample_density_g_per_cm3=None),
         "sample_density_g_per_cm3"),
    ]
    red = reduce_runs(infos + [b for b, _ in bad])
    by_run = {r.run: r for r in red.runs}
    assert len(red.runs) == len(infos) + len(bad)      # nothing vanished
    for info, column in bad:
        err = by_run[info.run].error
        assert err is not None
        assert f"run {info.run!r}" in err, err
        assert repr(column) in err, err
    good = [r for r in red.runs if not r.run.startswith("b_")]
    assert all(r.error is None for r in good)
    (s,) = red.samples
    assert s.n_runs == 5
    assert s.massic_energy_J_per_g == pytest.approx(SAMPLE_DU, rel=150e-6)


def test_shared_calibration_correlates_samples(dataset):
    from dataclasses import replace

    infos = _infos(dataset)
    rows = [replace(i, sample="X") if i.run in ("s0", "s1", "s2") else
            replace(i, sample="Y", formula="C10H8O") if i.run in ("s3", "s4") else i
            for i in infos]
    red = reduce_runs(rows)
    cov = red.covariance
    assert cov["names"] == ["X", "Y"]
    m = np.asarray(cov["matrix"])
    x, y = red.samples
    assert m[0, 0] == pytest.approx(x.u_standard_massic_energy_J_per_g**2)
    assert m[1, 1] == pytest.approx(y.u_standard_massic_energy_J_per_g**2)
    # shared ε and certificate: cov ≈ Δcu_X Δcu_Y [u_r²(ε̄) + u_r²(cert)] (+ constants), > 0
    cal = red.calibrations[0]
    ur2 = (cal.std_dev_of_mean_J_per_K / cal.energy_equivalent_J_per_K) ** 2 \
        + (1.5 / 26434) ** 2
    shared = x.massic_energy_J_per_g * y.massic_energy_J_per_g * ur2
    assert m[0, 1] == m[1, 0]
    assert m[0, 1] > 0.9 * shared
    # the formation enthalpies come back correlated from the network (hess)
    (block,) = cov["delta_f_H"]
    f = np.asarray(block["matrix"])
    assert f[0, 1] > 0
    assert math.sqrt(f[0, 0]) == pytest.approx(x.u_delta_f_H_kJ_per_mol, rel=1e-9)


def test_cli_json_and_outputs(dataset, tmp_path, capsys):
    import json

    from calwork.cli.main import main

    sheet = dataset[0]
    out = tmp_path / "out"
    assert main(["reduce", str(sheet), "--json", "--out", str(out), "--no-plots"]) == 0
    data = json.loads(capsys.readouterr().out)
    for key in ("calorimeter", "energy_equivalent_J_per_K", "u_energy_equivalent_J_per_K",
                "n_runs", "rsd_percent", "runs"):
        assert key in data["calibrations"][0]
    for key in ("run", "kind", "sample", "corrected_rise_K", "u_corrected_rise_K",
                "corrections_J", "energy_equivalent_J_per_K", "massic_energy_J_per_g",
                "warnings", "error"):
        assert all(key in r for r in data["runs"])
    assert data["runs"][0]["energy_equivalent_J_per_K"] > 0
    for key in ("sample", "formula", "n_runs", "massic_energy_J_per_g",
                "u_massic_energy_J_per_g", "standard_massic_energy_J_per_g",
                "delta_c_U_kJ_per_mol", "delta_c_H_kJ_per_mol", "delta_f_H_kJ_per_mol",
                "u_delta_f_H_kJ_per_mol", "U_delta_f_H_kJ_per_mol"):
        assert key in data["samples"][0]
    assert (out / "summary.csv").read_text().count("\n") == 12
    assert "Calibrations" in (out / "report.md").read_text()


def test_cli_out_writes_plots(reduction, tmp_path):
    pytest.importorskip("calwork.rise.plot")
    from dataclasses import replace

    from calwork.report.folder import write_outputs

    three = replace(reduction, runs=reduction.runs[4:7])   # plots are slow: three runs
    files = write_outputs(three, tmp_path, plots=True)
    pngs = [f for f in files if f.suffix == ".png"]
    assert sorted(f.stem for f in pngs) == ["cal4", "cal5", "s0"]
    assert all(f.stat().st_size > 1000 for f in pngs)


def test_cli_exit_status(dataset, tmp_path, capsys):
    from calwork.cli.main import main
    from calwork.io import write_run_sheet

    rows = [dict(r) for r in dataset[1]]
    rows[-1]["calorimeter"] = "B"          # a sample run with no calibration
    sheet = dataset[0].parent / "one_bad.csv"
    write_run_sheet(rows, sheet)
    assert main(["reduce", str(sheet), "--rsd-limit", "0.2"]) == 1
    text = capsys.readouterr()
    assert "s4" in text.err
    assert "Calibrations" in text.out
    assert main(["reduce", str(tmp_path / "missing.csv")]) == 2
    assert "error" in capsys.readouterr().err


def test_fuel_outputs_and_simplifications(dataset):
    from dataclasses import replace

    infos = _infos(dataset)
    rows = []
    for i in infos:
        if i.kind == "combustion":
            # a fuel sample: no formula, hydrogen content given (C10H8: 6.29 % H)
            i = replace(i, formula=None, hydrogen_mass_fraction=0.0629,
                        moisture_mass_fraction=0.0)
        rows.append(i)
    red = reduce_runs(rows)
    (s,) = red.samples
    assert s.standard_massic_energy_J_per_g is None
    assert s.delta_f_H_kJ_per_mol is None
    fuel = s.fuel
    assert fuel["gross_v_as_analysed_J_per_g"] == pytest.approx(-s.massic_energy_J_per_g)
    # ASTM D240 / ISO 1928: net = gross − 212.2 J/g per % H
    assert fuel["net_p_as_analysed_J_per_g"] == pytest.approx(
        fuel["gross_v_as_analysed_J_per_g"] - 212.2 * 6.29, rel=1e-12)
    assert fuel["gross_v_as_analysed_MJ_per_kg"] == pytest.approx(
        fuel["gross_v_as_analysed_J_per_g"] / 1000)
    # the terminal summary and the HTML report show the same calorific values as the JSON
    from calwork.report.content import build_document
    from calwork.report.html import render_html
    from calwork.report.plain import render_text
    from calwork.report.summary import summary_document

    text = render_text(summary_document(red), width=120)
    html = render_html(build_document(red))
    for key, label in (("gross_v_as_analysed", "gross, constant volume, as analysed"),
                       ("net_p_as_analysed", "net, constant pressure, as analysed")):
        value = f"{fuel[key + '_J_per_g']:.1f}"
        assert label in text
        assert value in text
        assert value in html
    assert "hydrogen 0.0629" in text  # the basis input is named

    # without bomb data the chain says which simplification it used
    plain = [replace(i, bomb_volume_L=None, bomb_water_g=None) for i in infos]
    red = reduce_runs(plain)
    cal0 = next(r for r in red.runs if r.run == "cal0")
    assert any("contents: not included (no bomb_volume_L); rise referred to the mean "
               "temperature" in w for w in cal0.warnings)
    assert cal0.reference_temperature_K > 298.0
    s0 = next(r for r in red.runs if r.run == "s0")
    assert any(w.startswith("washburn: not applied") for w in s0.warnings)
    (s,) = red.samples
    # the bomb massic energy still agrees with the truth (contents ≈ cancel, ≈ 1e-4)
    assert s.massic_energy_J_per_g == pytest.approx(SAMPLE_DU, rel=5e-4)


def test_sheet_certificate_and_buoyancy(dataset):
    from dataclasses import replace

    from calwork.bomb.buoyancy import buoyancy_factor

    infos = _infos(dataset)
    base = reduce_runs(infos)
    f = buoyancy_factor(1.320)
    rows = [replace(i, mass_g=i.mass_g / f, mass_basis="air") if i.kind == "calibration"
            else i for i in infos]
    red = reduce_runs(rows)
    # the same masses, weighed in air: the same energy equivalent (docs/references.md §2 densities)
    assert red.calibrations[0].energy_equivalent_J_per_K == pytest.approx(
        base.calibrations[0].energy_equivalent_J_per_K, rel=1e-9)
    # a sheet's certified value replaces the bundled one
    rows = [replace(i, certified_J_per_g=26444.0) if i.kind == "calibration" else i
            for i in infos]
    red = reduce_runs(rows)
    ratio = red.calibrations[0].energy_equivalent_J_per_K / \
        base.calibrations[0].energy_equivalent_J_per_K
    assert ratio == pytest.approx(1 + 10 / 26434, rel=2e-6)
    # a negative one (a sign slip: certified values are positive) fails that run, named
    rows = [replace(i, certified_J_per_g=-26444.0) if i.run == "cal0" else i for i in infos]
    bad = next(r for r in reduce_runs(rows).runs if r.run == "cal0")
    assert "'certified_J_per_g'" in bad.error
    assert "positive" in bad.error


def test_solution_rows_are_handed_over(dataset):
    from dataclasses import replace

    infos = _infos(dataset)
    s0 = next(i for i in infos if i.run == "s0")
    # an electrical-calibration row whose log is a bomb log: the solution chain reduces or
    # rejects it, but the row comes back either way and the bomb runs are untouched
    el = replace(s0, run="e1", kind="electrical", formula=None, heater_power_W=0.05,
                 heater_on_s=600.0, heater_off_s=900.0)
    red = reduce_runs([*infos, el])
    by_run = {r.run: r for r in red.runs}
    assert "e1" in by_run
    assert by_run["e1"].kind == "electrical"
    assert all(by_run[i.run].error is None for i in infos)


def test_bad_cells_in_the_sheet_file_fail_alone(dataset, tmp_path):
    """A zero mass, text in a number cell and a missing log in the sheet *file* do not stop
    the sheet: those runs come back with their error (file, line, column), the rest reduce."""
    import shutil

    sheet, rows = dataset
    for row in rows:
        shutil.copy(sheet.parent / row["log"], tmp_path / row["log"])
    bad_rows = [dict(rows[-1], run="bad_mass", mass_g=0.0),
                dict(rows[-1], run="bad_text", fuse_J="twelve"),
                dict(rows[-1], run="bad_log", log="missing.csv")]
    path = tmp_path / "runs.csv"
    write_run_sheet([*rows, *bad_rows], path)
    red = reduce_sheet(path)
    by_run = {r.run: r for r in red.runs}
    assert len(red.runs) == len(rows) + 3                 # nothing vanished
    assert "column 'mass_g'" in by_run["bad_mass"].error
    assert "runs.csv:" in by_run["bad_mass"].error        # names the file and line
    assert "column 'fuse_J'" in by_run["bad_text"].error
    assert "'twelve'" in by_run["bad_text"].error
    assert "log file not found" in by_run["bad_log"].error
    (s,) = red.samples
    assert s.n_runs == 5
    # strict reading (the default of read_run_sheet) still raises on the first bad cell
    from calwork.core.errors import SheetError
    from calwork.io import read_run_sheet

    with pytest.raises(SheetError, match="mass_g"):
        read_run_sheet(path)
