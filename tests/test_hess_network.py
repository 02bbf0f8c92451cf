"""Network solver: values, covariance, consistency, worst offenders, identifiability."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from calwork.core.errors import NetworkError
from calwork.hess.key_values import load_key_values
from calwork.hess.kirchhoff import ConstantCp
from calwork.hess.network import Network, solve_network
from calwork.hess.reactions import Reaction

R = Reaction.from_equation
F = Reaction.formation


def test_two_measurements_weighted_mean_chi2_birge():
    # textbook weighted mean: x = Σ(y/u²)/Σ(1/u²), u = (Σ 1/u²)^-1/2; χ² = (y1-y2)²/(u1²+u2²)
    y1, u1, y2, u2 = -110.40, 0.10, -110.70, 0.20
    net = Network(determinations=(F("CO(g)", y1, u1, id="a"), F("CO(g)", y2, u2, id="b")))
    res = solve_network(net, key_values=False)
    w = np.array([1 / u1**2, 1 / u2**2])
    mean = (w @ [y1, y2]) / w.sum()
    v, u = res.value("CO(g)")
    assert v == pytest.approx(mean, abs=1e-10)
    assert u == pytest.approx(w.sum() ** -0.5, rel=1e-10)
    chi2 = (y1 - y2) ** 2 / (u1**2 + u2**2)
    assert res.chi2 == pytest.approx(chi2, rel=1e-10)
    assert res.dof == 1
    assert res.p_value == pytest.approx(stats.chi2.sf(chi2, 1), rel=1e-10)
    assert res.birge_ratio == pytest.approx(math.sqrt(chi2), rel=1e-10)
    # standardised residual of each row is the z-score of one against the other
    z = (y1 - y2) / math.hypot(u1, u2)
    assert {r.id: r.standardised for r in res.residuals} == pytest.approx({"a": z, "b": -z})


def test_correlated_determinations_generalised_least_squares():
    y = np.array([-393.40, -393.60])
    u = np.array([0.10, 0.15])
    rho = 0.6
    v = np.array([[u[0] ** 2, rho * u[0] * u[1]], [rho * u[0] * u[1], u[1] ** 2]])
    net = Network(determinations=(F("CO2(g)", y[0], u[0], id="a"),
                                  F("CO2(g)", y[1], u[1], id="b")),
                  covariance={("a", "b"): v[0, 1]})
    res = solve_network(net, key_values=False)
    one = np.ones(2)
    vi = np.linalg.inv(v)
    # GLS (Aitken) estimator of a common mean: (1ᵀV⁻¹1)⁻¹ 1ᵀV⁻¹y
    assert res.value("CO2(g)")[0] == pytest.approx((one @ vi @ y) / (one @ vi @ one))
    assert res.value("CO2(g)")[1] == pytest.approx((one @ vi @ one) ** -0.5)
    r = y - res.value("CO2(g)")[0]
    assert res.chi2 == pytest.approx(r @ vi @ r)


def test_hess_cycle_with_key_values_and_derived_reaction():
    net = Network(determinations=(
        R("C(cr,graphite) + 1/2 O2(g) = CO(g)", -110.53, 0.085, id="CO-f"),
        R("CO(g) + 1/2 O2(g) = CO2(g)", -282.98, 0.11, id="CO-c"),
    ))
    res = solve_network(net)
    used = {kv["species"] for kv in res.key_values_used}
    # the row CO-f is CO's formation reaction: it replaces the bundled CO(g) value (one
    # literature value must not count twice); CO2(g) still comes from the bundled table
    assert used == {"CO2(g)"}
    assert any("key value of CO(g) is not used" in w for w in res.warnings)
    v, _ = res.value("CO2(g)")
    assert v == pytest.approx(-393.51, abs=1e-6)  # consistent data: docs/references.md §1d
    d = res.reaction_enthalpy("C(cr,graphite) + O2(g) = CO2(g)")
    assert d.delta_r_H_kJ_per_mol == pytest.approx(-393.51, abs=1e-6)
    assert d.u_delta_r_H_kJ_per_mol == pytest.approx(res.value("CO2(g)")[1])
    cov = res.covariance
    assert np.allclose(cov, cov.T)
    assert np.all(np.linalg.eigvalsh(cov) > 0)


def test_neutralisation_from_key_values():
    # docs/references.md §1d (derived from CODATA memory values): H+ + OH- -> H2O(l), -55.815 kJ/mol
    net = Network(determinations=(R("H+(aq) + OH-(aq) = H2O(l)", -55.84, 0.05, id="n"),))
    res = solve_network(net)
    d = res.reaction_enthalpy("H+(aq) + OH-(aq) = H2O(l)")
    assert d.delta_r_H_kJ_per_mol == pytest.approx(-55.815, abs=0.03)
    assert "H+(aq)" not in res.species  # zero by convention, not an unknown


def test_user_prior_replaces_bundled_key_value():
    net = Network(determinations=(R("CO(g) + 1/2 O2(g) = CO2(g)", -282.98, 0.11, id="c"),),
                  priors=(F("CO2(g)", -393.0, 0.5, source="user"),))
    res = solve_network(net)
    used = {kv["species"] for kv in res.key_values_used}
    assert "CO2(g)" not in used
    assert "CO(g)" in used
    assert res.residuals[-1].id.startswith("key:")


def test_sulfuric_acid_key_value_brings_water():
    net = Network(determinations=(R("S(cr,rhombic) + H2(g) + 2 O2(g) + 115 H2O(l) = "
                                    "H2SO4·115H2O(l)", -887.81, 0.4, id="s"),))
    res = solve_network(net)
    assert {kv["species"] for kv in res.key_values_used} == {"H2SO4·115H2O(l)", "H2O(l)"}
    v, _ = res.value("H2SO4·115H2O(l)")
    assert v == pytest.approx(-887.81 + 115 * -285.830, abs=1e-6)  # docs/methods.md §3.8


def test_worst_offender_named_first_and_inflation_record():
    rows = [
        F("CO(g)", -110.50, 0.10, id="m1"),
        F("CO(g)", -110.58, 0.12, id="m2"),
        R("CO(g) + 1/2 O2(g) = CO2(g)", -282.95, 0.10, id="c1"),
        R("C(cr,graphite) + O2(g) = CO2(g)", -393.50, 0.10, id="f1"),
        R("C(cr,graphite) + O2(g) = CO2(g)", -395.20, 0.10, id="bad"),  # 17 u off
        R("C(cr,graphite) + O2(g) = CO2(g)", -393.55, 0.15, id="f2"),
    ]
    net = Network(determinations=tuple(rows))
    res = solve_network(net, worst_offender="report")
    assert res.worst_offenders[0].id == "bad"
    assert res.worst_offenders[0].chi2_after < res.worst_offenders[0].chi2_before
    # leave-one-out identity: removing 'bad' lowers χ² by z²
    z = next(r.standardised for r in res.residuals if r.id == "bad")
    assert res.chi2 - res.worst_offenders[0].chi2_after == pytest.approx(z**2, rel=1e-8)
    inflated = solve_network(net, worst_offender="inflate", threshold=2.0,
                             inflation_factor=1.5)
    assert inflated.inflations[0].id == "bad"
    steps = [i.step for i in inflated.inflations]
    assert steps == list(range(1, len(steps) + 1))
    assert all(i.new_u_kJ_per_mol == pytest.approx(1.5 * i.old_u_kJ_per_mol)
               for i in inflated.inflations)
    assert max(abs(r.standardised) for r in inflated.residuals
               if r.standardised is not None) <= 2.0
    assert res.p_value < 1e-6 < inflated.p_value


def test_undetermined_species_reported_not_invented():
    net = Network(determinations=(
        R("C4H10(g,n-butane) = C4H10(g,isobutane)", -8.4, 0.5, id="iso"),
        R("C(cr,graphite) + 1/2 O2(g) = CO(g)", -110.53, 0.085, id="co"),
    ))
    res = solve_network(net, key_values=False)
    assert set(res.undetermined) == {"C4H10(g,n-butane)", "C4H10(g,isobutane)"}
    assert res.values["C4H10(g,isobutane)"] is None
    assert res.uncertainties.get("C4H10(g,isobutane)") is None
    assert res.free_directions == ("C4H10(g,isobutane) + C4H10(g,n-butane)",)
    with pytest.raises(NetworkError, match="not determined"):
        res.value("C4H10(g,n-butane)")
    # ... but the isomerisation enthalpy is determined (orthogonal to the free direction)
    d = res.reaction_enthalpy("C4H10(g,n-butane) = C4H10(g,isobutane)")
    assert d.delta_r_H_kJ_per_mol == pytest.approx(-8.4)
    assert d.u_delta_r_H_kJ_per_mol == pytest.approx(0.5)
    with pytest.raises(NetworkError, match="not determined"):
        res.reaction_enthalpy("C4H10(g,isobutane) + 2 O2(g) = 4 CO(g) + 5 H2(g)")
    with pytest.raises(NetworkError, match="not in the network"):
        res.reaction_enthalpy("C(cr,graphite) + 2 H2(g) = CH4(g)")
    assert res.to_dict()["undetermined"] == ["C4H10(g,isobutane)", "C4H10(g,n-butane)"]


def test_monte_carlo_matches_linear_within_2_percent():
    net = Network(determinations=(
        R("C(cr,graphite) + 1/2 O2(g) = CO(g)", -110.53, 0.085, id="a"),
        R("CO(g) + 1/2 O2(g) = CO2(g)", -282.98, 0.11, id="b"),
        R("C7H6O2(cr) + 15/2 O2(g) = 7 CO2(g) + 3 H2O(l)", -3226.87, 0.09, id="bz"),
        R("C6H6(l) + 15/2 O2(g) = 6 CO2(g) + 3 H2O(l)", -3267.6, 0.5, id="bzn"),
    ))
    # N = 20 000: relative sd of a sample standard deviation ≈ 1/√(2N) = 0.5 %, so 2 % is 4σ
    res = solve_network(net, monte_carlo=20_000, seed=7)
    mc = res.monte_carlo["species"]
    for name, entry in mc.items():
        assert entry["u_ratio_mc_to_linear"] == pytest.approx(1.0, abs=0.02), name
        assert entry["mean_kJ_per_mol"] == pytest.approx(res.values[name],
                                                         abs=4 * res.uncertainties[name] / 141)


def test_sparse_and_dense_paths_agree():
    rng = np.random.default_rng(3)
    truth = {f"C{k}H{2 * k + 2}(g)": -20.0 - 20.8 * k + rng.normal(0, 2) for k in range(1, 9)}
    rows = []
    names = list(truth)
    for i, name in enumerate(names):
        k = i + 1
        eq = f"{name} + {3 * k + 1}/2 O2(g) = {k} CO2(g) + {k + 1} H2O(l)"
        dh = k * -393.51 + (k + 1) * -285.830 - truth[name]
        rows.append(R(eq, dh + rng.normal(0, 0.5), 0.5, id=f"c{k}"))
    for i in range(len(names) - 1):
        eq = f"{names[i]} + C(cr,graphite) + H2(g) = {names[i + 1]}"
        dh = truth[names[i + 1]] - truth[names[i]]
        rows.append(R(eq, dh + rng.normal(0, 0.3), 0.3, id=f"l{i}"))
    net = Network(determinations=tuple(rows))
    dense = solve_network(net, method="dense", worst_offender="none")
    sparse = solve_network(net, method="sparse", worst_offender="none",
                           covariance_species=names)
    for name in names:
        assert sparse.values[name] == pytest.approx(dense.values[name], abs=1e-7)
        assert sparse.uncertainties[name] == pytest.approx(dense.uncertainties[name], rel=1e-6)
    assert sparse.chi2 == pytest.approx(dense.chi2, rel=1e-8)
    assert sparse.method == "sparse"


def test_sparse_path_finds_undetermined_species():
    net = Network(determinations=(
        R("C2H6O(l) = C2H6O(g)", 42.3, 0.1, id="vap"),
        R("C(cr,graphite) + O2(g) = CO2(g)", -393.51, 0.1, id="f"),
    ))
    res = solve_network(net, method="sparse", key_values=False)
    assert set(res.undetermined) == {"C2H6O(l)", "C2H6O(g)"}
    assert res.reaction_enthalpy("C2H6O(l) = C2H6O(g)").delta_r_H_kJ_per_mol == \
        pytest.approx(42.3)


def test_temperature_needs_heat_capacities():
    row = R("H2O(l) = H2O(g)", 43.99, 0.05, id="vap", temperature_K=303.15)
    with pytest.raises(NetworkError, match="needs heat capacities"):
        solve_network(Network(determinations=(row,)))
    res = solve_network(Network(determinations=(row,)), allow_unadjusted_temperature=True)
    assert any("303.15 K" in w for w in res.warnings)
    # constant Cp: ΔrH(298.15) = ΔrH(T) + Δ_rCp (298.15 − T); Cp(l) 75.3, Cp(g) 33.6 J/(mol K)
    # (common practice values near 298 K)
    cps = {"H2O(l)": ConstantCp(cp_J_per_mol_K=75.3), "H2O(g)": ConstantCp(cp_J_per_mol_K=33.6)}
    net = Network(determinations=(row,), heat_capacities=cps)
    res = solve_network(net, key_values=False, worst_offender="none")
    expected = 43.99 + (33.6 - 75.3) * (298.15 - 303.15) / 1000
    assert res.temperature_adjustments["vap"] == pytest.approx(expected - 43.99)
    assert res.reaction_enthalpy("H2O(l) = H2O(g)").delta_r_H_kJ_per_mol == \
        pytest.approx(expected)


def test_bad_networks_raise():
    with pytest.raises(NetworkError, match="unique"):
        Network(determinations=(F("CO(g)", -110.5, 0.1, id="x"), F("CO2(g)", -393.5, 0.1,
                                                                    id="x")))
    with pytest.raises(NetworkError, match="only elements"):
        solve_network(Network(determinations=(F("O2(g)", 0.0, 0.1, id="o2"),)),
                      key_values=False)
    with pytest.raises(NetworkError):
        solve_network(Network(determinations=(F("CO(g)", -110.5, 0.0, id="zero-u"),)),
                      key_values=False)


def test_to_dict_contract_keys():
    net = Network(determinations=(R("CO(g) + 1/2 O2(g) = CO2(g)", -282.98, 0.11, id="c"),))
    out = solve_network(net).to_dict()
    for key in ("species", "covariance", "chi2", "dof", "p_value", "residuals",
                "worst_offenders", "undetermined"):
        assert key in out
    assert set(out["species"]["CO(g)"]) >= {"delta_f_H_kJ_per_mol", "u_delta_f_H_kJ_per_mol"}
    assert out["covariance"]["names"] == ["CO(g)", "CO2(g)"]
    assert set(out["residuals"]) == {"c", "key:CO(g)", "key:CO2(g)"}


def test_key_values_table_convention():
    kv = load_key_values()
    # CODATA ± taken as k = 2 expanded uncertainty (docs/references.md §1, memory): u = ±/2
    assert kv["CO2(g)"].pm_kJ_per_mol == 0.13
    assert kv["CO2(g)"].u_kJ_per_mol == pytest.approx(0.065)
    assert kv["H2O(l)"].status == "memory"
    assert kv["CO2(g)"].status == "confirmed"
    ext = load_key_values(extra={"CO2(g)": (-393.0, 0.2), "Xe2(g)": {"delta_f_H_kJ_per_mol": 1.0,
                                                                    "u_kJ_per_mol": 0.1}})
    assert ext["CO2(g)"].value_kJ_per_mol == -393.0
    assert ext["CO2(g)"].u_kJ_per_mol == 0.2
    assert "Xe2(g)" in ext
    assert "Xe2(g)" not in kv


def _isomer_network(n: int, seed: int = 5):
    """``n`` isomers, each linked to the first and to its neighbour, the first one known."""
    rng = np.random.default_rng(seed)
    names = [f"C4H10(g,isomer{k})" for k in range(n)]
    truth = rng.normal(-130.0, 5.0, n)
    rows = [F(names[0], truth[0], 0.5, id="known")]
    for k in range(1, n):
        rows.append(R(f"{names[0]} = {names[k]}", truth[k] - truth[0], 0.4, id=f"a{k}"))
        rows.append(R(f"{names[k - 1]} = {names[k]}", truth[k] - truth[k - 1], 0.4,
                      id=f"b{k}"))
    net = Network(determinations=tuple(r for r in rows if r.id != "known"),
                  priors=(rows[0],))
    return net, names


def test_large_network_gives_every_species_its_exact_uncertainty():
    # 2 100 isomers: above the size whose full covariance is formed, solved by the sparse
    # path; every variance comes from the factorised normal matrix (selected inversion)
    n = 2100
    net, names = _isomer_network(n)
    res = solve_network(net, key_values=False, worst_offender="none", method="sparse")
    assert res.undetermined == ()
    assert not [w for w in res.warnings if w.startswith("uncertainties-not-computed")]
    assert len(res.uncertainties) == n
    # the same network by the dense SVD path (cov = (AᵀWA)⁺), an independent computation
    dense = solve_network(net, key_values=False, worst_offender="none", method="dense")
    for name in names:
        assert res.uncertainties[name] == pytest.approx(dense.uncertainties[name], rel=1e-9)
    # and by the conjugate-gradient covariance of two species asked for by name
    picked = [names[1], names[1500]]
    by_cg = solve_network(net, key_values=False, worst_offender="none", method="sparse",
                          covariance_species=picked)
    for p in picked:
        assert by_cg.uncertainties[p] == pytest.approx(dense.uncertainties[p], rel=1e-8)


def test_large_network_says_which_uncertainties_it_did_not_compute(monkeypatch):
    from calwork.hess import selinv

    monkeypatch.setattr(selinv, "MAX_FACTOR_ENTRIES", 1000)  # as if wired at random
    monkeypatch.setattr(selinv, "DENSE_MAX", 0)
    n = 2100
    net, names = _isomer_network(n)
    res = solve_network(net, key_values=False, worst_offender="none", method="sparse")
    note = [w for w in res.warnings if w.startswith("uncertainties-not-computed")]
    assert len(note) == 1
    assert f"{n} of {n} determined species" in note[0]
    assert "would need about" in note[0]
    picked = [names[1], names[1500]]
    res = solve_network(net, key_values=False, worst_offender="none", method="sparse",
                        covariance_species=picked)
    assert all(res.uncertainties[p] > 0 for p in picked)
    assert f"{n - 2} of {n} determined species" in next(
        w for w in res.warnings if w.startswith("uncertainties-not-computed"))


def test_every_element_in_its_reference_state_is_zero():
    """Lanthanides, actinides and the rest of the table are elements in their reference state
    too (ΔfH° = 0 by definition): a dissolution cycle with Dy(cr) determines DyCl3(cr)."""
    from calwork.hess.species import is_reference_state

    for element in ("Dy(cr)", "La(cr)", "U(cr)", "Ga(cr)", "Hg(l)", "Rn(g)", "As(cr,gray)"):
        assert is_reference_state(element), element
    assert not is_reference_state("Dy(g)")  # another state of the element is not
    net = Network(determinations=(
        R("Dy(cr) + 3/2 Cl2(g) = DyCl3(cr)", -990.0, 3.0, id="made-up"),))
    res = solve_network(net, key_values=False)
    assert res.value("DyCl3(cr)") == pytest.approx((-990.0, 3.0), rel=1e-12)
    assert "Dy(cr)" not in res.undetermined
