"""Network files (CSV, TOML) and the `calwork network` command."""

from __future__ import annotations

import json

import pytest

from calwork.cli.main import main
from calwork.core.errors import (
    BalanceError,
    FormulaError,
    InputFileError,
    NetworkError,
    ValueCellError,
)
from calwork.hess.files import read_network_file

CSV = """id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol,source
co,C(cr,graphite) + 1/2 O2(g) = CO(g),-110.53,0.085,REFERENCES 1d (memory)
co-c,"CO(g) + 1/2 O2(g) = CO2(g)",-282.98,0.11,derived
bad,C(cr,graphite) + O2(g) = CO2(g),-396.0,0.10,deliberately inconsistent
f2,C(cr,graphite) + O2(g) = CO2(g),-393.50,0.10,
"""


def test_csv_network_and_cli_json(tmp_path, capsys):
    path = tmp_path / "net.csv"
    path.write_text(CSV, encoding="utf-8")
    net = read_network_file(path)
    assert [r.id for r in net.determinations] == ["co", "co-c", "bad", "f2"]
    status = main(["network", str(path), "--json", "--target",
                   "C(cr,graphite) + O2(g) = CO2(g)", "--monte-carlo", "2000", "--seed", "3"])
    assert status == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("species", "covariance", "chi2", "dof", "p_value", "residuals",
                "worst_offenders", "undetermined", "delta_r_H_kJ_per_mol",
                "u_delta_r_H_kJ_per_mol"):
        assert key in out
    assert out["worst_offenders"][0] == "bad"
    assert out["undetermined"] == []
    # rows 'bad' and 'f2' (and 'co' for CO) are formation reactions: the network's own
    # values replace the bundled key values of CO2(g) and CO(g), which are not counted twice
    assert set(out["residuals"]) == {"co", "co-c", "bad", "f2"}
    assert any("key value of CO2(g) is not used" in w for w in out["warnings"])
    assert out["species"]["CO2(g)"]["u_delta_f_H_kJ_per_mol"] > 0
    assert out["monte_carlo"]["n"] == 2000


def test_single_species_row_replaces_key_value_and_plain_output(tmp_path, capsys):
    path = tmp_path / "net.csv"
    path.write_text("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
                    "c,CO(g) + 1/2 O2(g) = CO2(g),-282.98,0.11\n"
                    "mine,CO2(g),-393.40,0.20\n", encoding="utf-8")
    assert main(["network", str(path)]) == 0
    text = capsys.readouterr().out
    assert "χ²" in text
    assert "CO2(g)" in text
    assert "key values used: CO(g)" in text
    assert main(["network", str(path), "--no-key-values", "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["key_values_used"] == []
    assert out["species"]["CO2(g)"]["delta_f_H_kJ_per_mol"] == pytest.approx(-393.40)


def test_toml_network_with_priors_heat_capacity_and_correlation(tmp_path):
    path = tmp_path / "net.toml"
    path.write_text("""
[[determination]]
id = "vap"
equation = "H2O(l) = H2O(g)"
delta_r_H_kJ_per_mol = 43.99
u_delta_r_H_kJ_per_mol = 0.05
temperature_K = 303.15

[[determination]]
id = "vap2"
equation = "H2O(l) = H2O(g)"
delta_r_H_kJ_per_mol = 44.02
u_delta_r_H_kJ_per_mol = 0.05

[[species]]
name = "H2O(l)"
delta_f_H_kJ_per_mol = -285.83
u_delta_f_H_kJ_per_mol = 0.02

[[heat_capacity]]
species = "H2O(l)"
model = "constant"
cp_J_per_mol_K = 75.3

[[heat_capacity]]
species = "H2O(g)"
model = "constant"
cp_J_per_mol_K = 33.6

[[correlation]]
a = "vap"
b = "vap2"
correlation = 0.3
""", encoding="utf-8")
    net = read_network_file(path)
    assert [p.id for p in net.priors] == ["H2O(l)"]
    assert net.covariance[("vap", "vap2")] == pytest.approx(0.3 * 0.05 * 0.05)
    from calwork.hess.network import solve_network

    res = solve_network(net)
    assert res.temperature_adjustments["vap"] == pytest.approx((33.6 - 75.3) * -5 / 1000)


@pytest.mark.parametrize(
    ("content", "error", "match"),
    [
        ("id,equation,delta_r_H_kJ_per_mol\nx,CO(g),1\n", NetworkError, "missing column"),
        (("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
         "x,C(cr,graphite) + O2(g) = CO(g),1,0.1\n"), BalanceError, r"net.csv:2: column 'equation'"),
        (("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
         "x,CO(g),abc,0.1\n"), ValueCellError, r"net.csv:2: column 'delta_r_H_kJ_per_mol'"),
        (("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
         "x,CO(g),-110,0\n"), ValueCellError, "must be > 0"),
        (("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
         "# comment\nx,CO(g) + ,-110,0.1\n"), FormulaError, r"net.csv:3: column 'equation'"),
        (("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
         "x,CO(g),-110,0.1,7\n"), NetworkError, "5 cells for 4 columns"),
    ],
)
def test_file_errors_name_file_line_column(tmp_path, content, error, match):
    path = tmp_path / "net.csv"
    path.write_text(content, encoding="utf-8")
    with pytest.raises(error, match=match):
        read_network_file(path)


def test_toml_error_line_and_cli_exit_status(tmp_path, capsys):
    path = tmp_path / "net.toml"
    path.write_text('[[determination]]\nid = "a"\nequation = "CO(g) = CO2(g)"\n'
                    'delta_r_H_kJ_per_mol = 1\nu_delta_r_H_kJ_per_mol = 1\n', encoding="utf-8")
    with pytest.raises(BalanceError, match=r"net.toml:1: column 'equation'"):
        read_network_file(path)
    assert main(["network", str(path)]) == 2
    err = capsys.readouterr().err
    assert "net.toml:1" in err
    assert "O off by 1" in err
    with pytest.raises(InputFileError):
        read_network_file(tmp_path / "missing.csv")
