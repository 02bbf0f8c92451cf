"""Hess's law shown: the derivation of a target reproduces hand calculations of problems made
up for these tests (the ΔrH values are invented round numbers; the hand sums are written out
beside each), and the least-squares combination when a network over-determines a target."""

from __future__ import annotations

import json

import pytest

from calwork.cli.main import main
from calwork.core.errors import NetworkError
from calwork.hess.derivation import format_factor
from calwork.hess.network import Network, solve_network
from calwork.hess.reactions import Reaction

R = Reaction.from_equation


def _solve(*rows):
    return solve_network(Network(determinations=tuple(rows)), key_values=False)


def _factors(d):
    return {s.id: s.factor for s in d.steps}


def test_a_reversed_reaction():
    res = _solve(R("CO(g) + 1/2 O2(g) = CO2(g)", -283.0, 0.2, id="a"))
    d = res.derivation("CO2(g) = CO(g) + 1/2 O2(g)")
    assert _factors(d) == {"a": -1.0}
    assert d.delta_r_H_kJ_per_mol == pytest.approx(+283.0, abs=1e-9)  # −1 × (−283.0)
    assert d.u_delta_r_H_kJ_per_mol == pytest.approx(0.2, rel=1e-9)


def test_a_reaction_scaled_by_a_half():
    res = _solve(R("2 H2(g) + O2(g) = 2 H2O(l)", -571.6, 0.1, id="a"))
    d = res.derivation("H2(g) + 1/2 O2(g) = H2O(l)")
    assert _factors(d) == {"a": 0.5}
    assert d.delta_r_H_kJ_per_mol == pytest.approx(-285.8, abs=1e-9)  # ½ × (−571.6)
    assert d.u_delta_r_H_kJ_per_mol == pytest.approx(0.05, rel=1e-9)  # ½ × 0.1


def test_cancellation_across_three_steps_with_a_reversed_and_a_doubled_row():
    res = _solve(R("CH4(g) + 2 O2(g) = CO2(g) + 2 H2O(l)", -890.0, 0.3, id="a"),
                 R("C(cr,graphite) + O2(g) = CO2(g)", -393.5, 0.1, id="b"),
                 R("H2(g) + 1/2 O2(g) = H2O(l)", -285.8, 0.04, id="c"))
    d = res.derivation("C(cr,graphite) + 2 H2(g) = CH4(g)")
    # by hand: −1 × a + 1 × b + 2 × c = 890.0 − 393.5 − 571.6 = −75.1
    assert _factors(d) == {"a": -1.0, "b": 1.0, "c": 2.0}
    assert d.delta_r_H_kJ_per_mol == pytest.approx(-75.1, abs=1e-9)
    assert d.u_delta_r_H_kJ_per_mol == pytest.approx((0.3**2 + 0.1**2 + (2 * 0.04) ** 2) ** 0.5,
                                                     rel=1e-9)
    assert d.cancelled == ("CO2(g)", "H2O(l)", "O2(g)")
    assert not d.over_determined


def test_states_are_kept_apart():
    res = _solve(R("H2(g) + 1/2 O2(g) = H2O(l)", -285.8, 0.04, id="c"),
                 R("H2O(l) = H2O(g)", 44.0, 0.02, id="d"))
    d = res.derivation("H2(g) + 1/2 O2(g) = H2O(g)")
    # by hand: c + d = −285.8 + 44.0 = −241.8; H2O(l) cancels, H2O(g) is the product
    assert _factors(d) == {"c": 1.0, "d": 1.0}
    assert d.delta_r_H_kJ_per_mol == pytest.approx(-241.8, abs=1e-9)
    assert "H2O(l)" in d.cancelled
    assert "H2O(g)" not in d.cancelled


def test_a_step_reversed_and_halved_at_once():
    res = _solve(R("2 NO2(g) = N2O4(g)", -57.2, 0.4, id="f"))
    d = res.derivation("1/2 N2O4(g) = NO2(g)")
    assert _factors(d) == {"f": -0.5}
    assert d.delta_r_H_kJ_per_mol == pytest.approx(28.6, abs=1e-9)  # −½ × (−57.2)
    assert format_factor(-0.5) == "−½"


def test_an_over_determined_target_is_the_weighted_combination_of_its_routes():
    """Two determinations of one reaction: the factors are the weights 1/u² normalised (the
    weighted mean, by hand), and they sum to one."""
    res = _solve(R("CO(g) + 1/2 O2(g) = CO2(g)", -283.0, 0.1, id="x"),
                 R("CO(g) + 1/2 O2(g) = CO2(g)", -282.6, 0.2, id="y"))
    d = res.derivation("CO(g) + 1/2 O2(g) = CO2(g)")
    w = {"x": 1 / 0.1**2, "y": 1 / 0.2**2}
    assert _factors(d) == pytest.approx({k: v / sum(w.values()) for k, v in w.items()})
    assert d.delta_r_H_kJ_per_mol == pytest.approx((-283.0 * 100 - 282.6 * 25) / 125, abs=1e-9)
    assert d.over_determined


def test_an_undetermined_target_is_refused_with_the_missing_link():
    res = _solve(R("CO(g) + 1/2 O2(g) = CO2(g)", -283.0, 0.2, id="a"))
    with pytest.raises(NetworkError, match="not determined by the data"):
        res.derivation("C(cr,graphite) + O2(g) = CO2(g)")


def test_the_command_line_prints_and_writes_the_derivation(tmp_path, capsys):
    path = tmp_path / "net.csv"
    path.write_text("id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol\n"
                    "a,CH4(g) + 2 O2(g) = CO2(g) + 2 H2O(l),-890.0,0.3\n"
                    "b,C(cr,graphite) + O2(g) = CO2(g),-393.5,0.1\n"
                    "c,H2(g) + 1/2 O2(g) = H2O(l),-285.8,0.04\n", encoding="utf-8")
    target = "C(cr,graphite) + 2 H2(g) = CH4(g)"
    assert main(["network", str(path), "--no-key-values", "--target", target, "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert [(s["id"], s["factor"], s["contribution_kJ_per_mol"]) for s in out["derivation"]] == [
        ("a", -1.0, pytest.approx(890.0)), ("b", 1.0, pytest.approx(-393.5)),
        ("c", 2.0, pytest.approx(-571.6))]
    assert out["cancelled"] == ["CO2(g)", "H2O(l)", "O2(g)"]
    assert out["delta_r_H_kJ_per_mol"] == pytest.approx(-75.1, abs=1e-9)
    assert main(["network", str(path), "--no-key-values", "--target", target]) == 0
    text = capsys.readouterr().out
    assert "−1 × a" in text
    assert "(reversed)" in text
    assert "cancelled: CO2(g), H2O(l), O2(g)" in text


def test_another_notation_gets_a_hint_with_the_networks_spelling():
    res = _solve(R("C(cr,graphite) + O2(g) = CO2(g)", -393.5, 0.1, id="b"),
                 R("H2(g) + 1/2 O2(g) = H2O(l)", -285.8, 0.04, id="c"))
    with pytest.raises(NetworkError, match=r"did you mean C\(cr,graphite\)"):
        res.reaction_enthalpy("C(s) + O2(g) = CO2(g)")
    from calwork.core.errors import EquationError

    with pytest.raises(EquationError, match=r"H2O\(liq\) is written H2O\(l\)"):
        res.reaction_enthalpy("H2(g) + 1/2 O2(g) = H2O(liq)")
    with pytest.raises(EquationError, match=r"C\(graphite\) is written C\(cr,graphite\)"):
        res.reaction_enthalpy("C(graphite) + O2(g) = CO2(g)")


def test_each_single_route_is_shown_beside_the_least_squares_value():
    """A triangle of made-up determinations: CO2(g) from graphite directly (r) and through
    CO(g) (p then q): two single routes, −393.3 and −110.5 + (−283.0) = −393.5 by hand; the
    least-squares value lies between them."""
    res = _solve(R("C(cr,graphite) + 1/2 O2(g) = CO(g)", -110.5, 0.1, id="p"),
                 R("CO(g) + 1/2 O2(g) = CO2(g)", -283.0, 0.1, id="q"),
                 R("C(cr,graphite) + O2(g) = CO2(g)", -393.3, 0.1, id="r"))
    d = res.derivation("C(cr,graphite) + O2(g) = CO2(g)")
    assert d.over_determined
    routes = sorted((sorted(rows.items()), round(v, 9)) for rows, v in d.routes)
    assert routes == [([("p", 1.0), ("q", 1.0)], -393.5), ([("r", 1.0)], -393.3)]
    # weights by hand: route r has variance 0.01, route p+q 0.02 → 2/3 and 1/3
    assert d.delta_r_H_kJ_per_mol == pytest.approx((2 * -393.3 + -393.5) / 3, abs=1e-9)
    assert any(line.startswith("single route") for line in d.worked_lines())


def test_network_and_cycle_write_a_workbook_and_a_report(tmp_path, capsys):
    """--xlsx: the derivation as live formulas (factor × ΔrH, summed), checked by the
    independent formula engine within 1e-9; --report: the same document as HTML."""
    import openpyxl
    from conftest import copy_sample_runs
    from report_fixtures import check_with_engine

    runs = copy_sample_runs(tmp_path / "runs")
    book, page = tmp_path / "net.xlsx", tmp_path / "net.html"
    target = "CO(g) + 2 H2(g) = CH3OH(l)"
    assert main(["network", str(runs / "network.csv"), "--target", target, "--xlsx", str(book),
                 "--report", str(page), "--json"]) == 0
    value = json.loads(capsys.readouterr().out)["delta_r_H_kJ_per_mol"]
    n_formulas, worst = check_with_engine(book)
    assert worst <= 1e-9
    assert n_formulas >= 10
    ws = openpyxl.load_workbook(book, data_only=True)["Derivation"]
    total = next(r[4] for r in ws.iter_rows(values_only=True) if r[1] == "ΔrH of the target (sum)")
    assert total == pytest.approx(value, rel=1e-9)
    html = page.read_text(encoding="utf-8")
    assert "Hess&#x27;s law" in html or "Hess's law" in html
    cycle_book = tmp_path / "cycle.xlsx"
    assert main(["cycle", str(runs / "kcl_cycle.toml"), "--xlsx", str(cycle_book)]) == 0
    capsys.readouterr()
    assert "Derivation" in openpyxl.load_workbook(cycle_book).sheetnames
    check_with_engine(cycle_book)
    assert main(["network", str(runs / "network.csv"), "--xlsx", str(tmp_path / "x.csv")]) == 2
    assert ".xlsx" in capsys.readouterr().err
