"""Solution results as Hess determinations; cycle files; export for ``calwork network``."""

from __future__ import annotations

import json
import math

import pytest

from calwork.cli.main import main
from calwork.core.errors import BalanceError, InputFileError, NetworkError
from calwork.core.results import SampleResult
from calwork.hess import load_key_values, read_network_file, solve_network
from calwork.report.views import describe
from calwork.solution.cycles import (
    cycle_network,
    determination_from_sample,
    dissolution_equation,
    solution_determination,
    solve_cycle,
    write_network_csv,
)
from calwork.solution.dilution import extrapolate_to_infinite_dilution

# NBS tables of chemical thermodynamic properties (Wagman et al. 1982), recalled from memory:
# Δ_fH°(MgSO4, cr) = −1284.9, Δ_fH°(MgSO4·7H2O, cr) = −3388.71, Δ_fH°(MgSO4, aq, std) =
# −1376.12 kJ/mol. Dissolution enthalpies at infinite dilution derived from them:
# MgSO4: −1376.12 + 1284.9 = −91.22; hydrate: −1376.12 + 7(−285.830) + 3388.71 = +11.78.
MGSO4_CR, HYDRATE, MGSO4_AQ = -1284.9, -3388.71, -1376.12
D_ANHYDROUS = MGSO4_AQ - MGSO4_CR
D_HYDRATE = MGSO4_AQ + 7 * -285.830 - HYDRATE

HYDRATE_CYCLE = f"""
[cycle]
name = "MgSO4·7H2O(cr) from MgSO4(cr) and water (values from the NBS tables, memory)"
target = "MgSO4·7H2O(cr)"
target_reaction = "MgSO4(cr) + 7 H2O(l) = MgSO4·7H2O(cr)"

[[dissolution]]
id = "anhydrous"
solute = "MgSO4(cr)"
infinite_dilution = true
delta_sol_H_kJ_per_mol = {D_ANHYDROUS!r}
u_delta_sol_H_kJ_per_mol = 0.10

[[dissolution]]
id = "hydrate"
solute = "MgSO4·7H2O(cr)"
infinite_dilution = true
delta_sol_H_kJ_per_mol = {D_HYDRATE!r}
u_delta_sol_H_kJ_per_mol = 0.05

[[species]]
name = "MgSO4(cr)"
delta_f_H_kJ_per_mol = {MGSO4_CR!r}
u_delta_f_H_kJ_per_mol = 0.5
source = "NBS 1982 tables (recalled from memory); not a bundled key value"
"""


def test_dissolution_equations():
    assert dissolution_equation("KCl(cr)", dilution_ratio=500.4) == "KCl(cr) = KCl(aq,1:500)"
    assert dissolution_equation("KCl(cr)", infinite_dilution=True) == (
        "KCl(cr) = K+(aq) + Cl-(aq)")
    assert dissolution_equation("Na2SO4(cr)", infinite_dilution=True) == (
        "Na2SO4(cr) = 2 Na+(aq) + SO4^2-(aq)")
    assert dissolution_equation("C4H11NO3(cr)", infinite_dilution=True) == (
        "C4H11NO3(cr) = C4H11NO3(aq)")
    # a hydrate's water joins the solvent: in 400 H2O the solution is 1:407
    assert dissolution_equation("MgSO4·7H2O(cr)", dilution_ratio=400) == (
        "MgSO4·7H2O(cr) = MgSO4(aq,1:407) + 7 H2O(l)")
    assert dissolution_equation("MgSO4·7H2O(cr)", infinite_dilution=True) == (
        "MgSO4·7H2O(cr) = Mg^2+(aq) + SO4^2-(aq) + 7 H2O(l)")
    with pytest.raises(NetworkError, match="final_state"):
        dissolution_equation("KCl(cr)")
    with pytest.raises(BalanceError):
        solution_determination("KCl(cr)", 17.2, 0.1, final_state="NaCl(aq)")


def test_hydrate_cycle_gives_the_tabulated_formation_enthalpy(tmp_path):
    path = tmp_path / "hydrate.toml"
    path.write_text(HYDRATE_CYCLE, encoding="utf-8")
    r = solve_cycle(path)
    # the cycle closes on the table's own value (consistency of the algebra; NBS 1982, memory)
    assert r.target == "MgSO4·7H2O(cr)"
    assert r.delta_f_H_kJ_per_mol == pytest.approx(HYDRATE, abs=1e-9)
    # u² = u(MgSO4)² + 49 u(H2O)² + u(d1)² + u(d2)²; bundled u(H2O, l) = 0.040/2 (CODATA ±,
    # treated as k = 2)
    u_h2o = load_key_values()["H2O(l)"].u_kJ_per_mol
    assert u_h2o == pytest.approx(0.020)
    expected = math.sqrt(0.5**2 + 49 * u_h2o**2 + 0.10**2 + 0.05**2)
    assert r.u_delta_f_H_kJ_per_mol == pytest.approx(expected, rel=1e-9)
    assert r.U_delta_f_H_kJ_per_mol == pytest.approx(2 * expected)
    # hydration enthalpy MgSO4(cr) + 7 H2O(l) -> MgSO4·7H2O(cr) = Δ_solH(anh) − Δ_solH(hyd)
    assert r.target_reaction.delta_r_H_kJ_per_mol == pytest.approx(D_ANHYDROUS - D_HYDRATE)
    assert r.target_reaction.u_delta_r_H_kJ_per_mol == pytest.approx(math.hypot(0.10, 0.05))
    assert "MgSO4·7H2O(cr)" in describe(r)
    assert json.loads(json.dumps(r.to_dict()))["target"] == "MgSO4·7H2O(cr)"


def test_kcl_formation_enthalpy_from_srm1655_and_the_ion_key_values():
    # SRM 1655 (Kilday 1980; recalled from memory): 17.584 ± 0.017 kJ/mol at 0.111 mol/kg;
    # Pitzer ΦL -> Δ_solH∞; with CODATA K+(aq), Cl−(aq) the cycle gives Δ_fH°(KCl, cr), to be
    # compared with CODATA −436.50 ± 0.20 (u = 0.10; docs/references.md §1a, memory)
    ext = extrapolate_to_infinite_dilution([0.111], [17.584], [0.017], model="pitzer",
                                           electrolyte="KCl")
    spec = {
        "cycle": {"target": "KCl(cr)", "omit_key_values": ["KCl(cr)"]},
        "dissolution": [{
            "id": "srm1655", "solute": "KCl(cr)", "infinite_dilution": True,
            "delta_sol_H_kJ_per_mol": ext.infinite_dilution_enthalpy_kJ_per_mol,
            "u_delta_sol_H_kJ_per_mol": ext.u_infinite_dilution_enthalpy_kJ_per_mol}],
    }
    r = solve_cycle(spec)
    kv = load_key_values()
    codata, u_codata = kv["KCl(cr)"].value_kJ_per_mol, kv["KCl(cr)"].u_kJ_per_mol
    assert codata == pytest.approx(-436.50)
    assert abs(r.delta_f_H_kJ_per_mol - codata) < math.hypot(r.u_delta_f_H_kJ_per_mol,
                                                             u_codata)
    # with the bundled KCl(cr) kept, the network is over-determined and still consistent
    spec["cycle"] = {"target": "KCl(cr)"}
    r2 = solve_cycle(spec)
    assert r2.network.dof == 1
    assert r2.network.p_value > 0.05
    assert not r2.warnings


def test_export_is_read_by_the_network_solver_and_cli(tmp_path, capsys):
    network, _ = cycle_network(tomllib_loads(HYDRATE_CYCLE))
    path = write_network_csv([*network.determinations, *network.priors], tmp_path / "net.csv")
    back = read_network_file(path)
    assert [r.equation for r in back.determinations] == [r.equation for r in
                                                         network.determinations]
    res = solve_network(back)
    assert res.value("MgSO4·7H2O(cr)")[0] == pytest.approx(HYDRATE, abs=1e-9)
    # and the command line reads the same file
    assert main(["network", str(path), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["species"]["MgSO4·7H2O(cr)"]["delta_f_H_kJ_per_mol"] == pytest.approx(HYDRATE)


def tomllib_loads(text: str) -> dict:
    import tomllib

    return tomllib.loads(text)


def test_determination_from_a_solution_series():
    s = SampleResult(sample="KCl series", formula="KCl", n_runs=4, runs=("a", "b", "c", "d"),
                     kind="solution", molar_enthalpy_kJ_per_mol=17.55,
                     u_molar_enthalpy_kJ_per_mol=0.02, final_molality_mol_per_kg=0.1110,
                     infinite_dilution_enthalpy_kJ_per_mol=17.236,
                     u_infinite_dilution_enthalpy_kJ_per_mol=0.018)
    finite = determination_from_sample(s)
    assert finite.equation == "KCl(cr) = KCl(aq,1:500)"  # 1000/(18.015 × 0.111) = 500.06
    assert finite.delta_r_H_kJ_per_mol == 17.55
    assert finite.id == "KCl series"
    inf = determination_from_sample(s, infinite_dilution=True)
    assert inf.equation == "KCl(cr) = K+(aq) + Cl-(aq)"
    assert inf.u_delta_r_H_kJ_per_mol == 0.018
    bare = SampleResult(sample="x", formula=None, n_runs=1, runs=("a",), kind="solution")
    with pytest.raises(NetworkError, match="formula"):
        determination_from_sample(bare)


def test_cycle_file_errors_name_file_entry_and_field(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text(HYDRATE_CYCLE.replace("u_delta_sol_H_kJ_per_mol = 0.05\n", ""),
                   encoding="utf-8")
    with pytest.raises(NetworkError, match=r"bad\.toml.*dissolution #2.*u_delta_sol_H"):
        solve_cycle(bad)
    with pytest.raises(InputFileError):
        solve_cycle(tmp_path / "missing.toml")
    with pytest.raises(NetworkError, match="unknown table"):
        solve_cycle({"cycles": {}})
    with pytest.raises(NetworkError, match="dissolution"):
        solve_cycle({"cycle": {"target": "KCl(cr)"}})
    with pytest.raises(NetworkError, match="unknown id"):
        solve_cycle({**tomllib_loads(HYDRATE_CYCLE),
                     "correlation": [{"a": "anhydrous", "b": "nope", "correlation": 0.5}]})


def test_cycle_command(tmp_path, capsys):
    # the subcommand module (calwork/cli/cycle.py) through its own parser
    import argparse

    from calwork.cli import cycle as cycle_cli

    path = tmp_path / "hydrate.toml"
    path.write_text(HYDRATE_CYCLE, encoding="utf-8")
    parser = argparse.ArgumentParser(prog="calwork")
    cycle_cli.register(parser.add_subparsers())
    net = tmp_path / "exported.csv"
    args = parser.parse_args(["cycle", str(path), "--json", "--export-network", str(net)])
    assert args.func(args) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["delta_f_H_kJ_per_mol"] == pytest.approx(HYDRATE)
    assert out["U_delta_f_H_kJ_per_mol"] == pytest.approx(2 * out["u_delta_f_H_kJ_per_mol"])
    assert solve_network(read_network_file(net)).value("MgSO4·7H2O(cr)")[0] == pytest.approx(
        HYDRATE)
    args = parser.parse_args(["cycle", str(path)])
    assert args.func(args) == 0
    assert "MgSO4·7H2O(cr)" in capsys.readouterr().out


def test_correlated_dissolutions_reduce_the_uncertainty_of_their_difference():
    # two dissolutions sharing a calibration are positively correlated; the hydration
    # enthalpy (their difference) then has u² = u1² + u2² − 2ρ u1 u2 (GUM 5.2.2)
    spec = tomllib_loads(HYDRATE_CYCLE)
    spec["correlation"] = [{"a": "anhydrous", "b": "hydrate", "correlation": 0.6}]
    r = solve_cycle(spec)
    expected = math.sqrt(0.10**2 + 0.05**2 - 2 * 0.6 * 0.10 * 0.05)
    assert r.target_reaction.u_delta_r_H_kJ_per_mol == pytest.approx(expected, rel=1e-9)
