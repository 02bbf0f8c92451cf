"""Property-based checks of the network solver (hypothesis)."""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from calwork.hess.network import Network, solve_network
from calwork.hess.reactions import Reaction
from calwork.hess.species import parse_species

_ELEMENTS = {"C": "C(cr,graphite)", "H": "H2(g)", "O": "O2(g)"}
_PER_MOLECULE = {"C": Fraction(1), "H": Fraction(1, 2), "O": Fraction(1, 2)}


def _balanced(stoich: dict) -> dict:
    """Close a stoichiometry with elements in their reference states."""
    totals = {el: Fraction(0) for el in _ELEMENTS}
    for sp, c in stoich.items():
        for el, n in sp.elements.items():
            totals[el] += c * n
    out = dict(stoich)
    for el, total in totals.items():
        if total:
            ref = parse_species(_ELEMENTS[el])
            out[ref] = out.get(ref, Fraction(0)) - total * _PER_MOLECULE[el]
    return {sp: c for sp, c in out.items() if c}


@st.composite
def networks(draw):
    n = draw(st.integers(3, 7))
    formulas = draw(st.lists(st.tuples(st.integers(1, 6), st.integers(0, 12), st.integers(0, 4)),
                             min_size=n, max_size=n, unique=True))
    species = [parse_species(f"C{c}H{h}O{o}(g)") for c, h, o in formulas]
    truth = {sp: draw(st.floats(-900, 300, allow_nan=False)) for sp in species}
    rows = []
    for i, sp in enumerate(species):  # one formation determination each
        u = draw(st.floats(0.05, 3.0))
        rows.append(Reaction(stoichiometry=_balanced({sp: Fraction(1)}),
                             delta_r_H_kJ_per_mol=truth[sp], u_delta_r_H_kJ_per_mol=u,
                             id=f"f{i}"))
    for k in range(draw(st.integers(1, 8))):
        picks = draw(st.lists(st.integers(0, n - 1), min_size=2, max_size=3, unique=True))
        coeffs = [Fraction(draw(st.sampled_from([-3, -2, -1, 1, 2, 3])), draw(st.sampled_from(
            [1, 2]))) for _ in picks]
        stoich = _balanced({species[p]: c for p, c in zip(picks, coeffs, strict=True)})
        dh = sum(float(c) * truth.get(sp, 0.0) for sp, c in stoich.items())
        rows.append(Reaction(stoichiometry=stoich, delta_r_H_kJ_per_mol=dh,
                             u_delta_r_H_kJ_per_mol=draw(st.floats(0.05, 3.0)), id=f"r{k}"))
    return rows, truth


_SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _solve(rows):
    return solve_network(Network(determinations=tuple(rows)), key_values=False,
                         worst_offender="none")


@_SETTINGS
@given(networks())
def test_noise_free_network_recovered_exactly(data):
    rows, truth = data
    for r in rows:
        r.check_balance()
    res = _solve(rows)
    assert res.undetermined == ()
    for sp, value in truth.items():
        assert res.values[sp.name] == pytest.approx(value, abs=1e-7)
    assert res.chi2 == pytest.approx(0.0, abs=1e-12)


@_SETTINGS
@given(networks(), st.randoms(use_true_random=False))
def test_invariant_to_row_order(data, rnd):
    rows, _ = data
    # give the rows some scatter so the check is not trivial
    noisy = [replace(r, delta_r_H_kJ_per_mol=r.delta_r_H_kJ_per_mol + 0.1 * (-1) ** i)
             for i, r in enumerate(rows)]
    shuffled = list(noisy)
    rnd.shuffle(shuffled)
    a, b = _solve(noisy), _solve(shuffled)
    for name in a.species:
        assert b.values[name] == pytest.approx(a.values[name], abs=1e-8)
        assert b.uncertainties[name] == pytest.approx(a.uncertainties[name], rel=1e-8)
    assert b.chi2 == pytest.approx(a.chi2, rel=1e-8, abs=1e-10)


@_SETTINGS
@given(networks(), st.integers(0, 100), st.sampled_from(["reverse", "-2", "1/3", "5/2"]))
def test_reversing_or_scaling_a_row_changes_nothing(data, pick, how):
    rows, _ = data
    noisy = [replace(r, delta_r_H_kJ_per_mol=r.delta_r_H_kJ_per_mol + 0.07 * (-1) ** i)
             for i, r in enumerate(rows)]
    j = pick % len(noisy)
    changed = list(noisy)
    changed[j] = noisy[j].reversed() if how == "reverse" else noisy[j].scaled(how)
    changed[j] = replace(changed[j], id=noisy[j].id)
    a, b = _solve(noisy), _solve(changed)
    for name in a.species:
        assert b.values[name] == pytest.approx(a.values[name], abs=1e-8)
        assert b.uncertainties[name] == pytest.approx(a.uncertainties[name], rel=1e-8)
    assert b.chi2 == pytest.approx(a.chi2, rel=1e-8, abs=1e-10)
    ra = {r.id: r.normalised for r in a.residuals}
    rb = {r.id: r.normalised for r in b.residuals}
    sign = -1.0 if how == "reverse" or how.startswith("-") else 1.0
    assert rb[noisy[j].id] == pytest.approx(sign * ra[noisy[j].id], abs=1e-8)
    assert np.isfinite(b.chi2)
