"""Review of the bomb energy chain: compounds the standard-state link cannot take.

The rises are stand-ins (objects with the fields the chain reads, see DEVELOPERS.md
"Temperature rise"); every number is invented. Energies are checked by hand against the
chain's own equations (docs/methods.md (3.1)–(3.8)).
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import pytest

from calwork.bomb.chain import reduce_calibration_run, reduce_combustion_run
from calwork.bomb.corrections import nitric_acid_mol
from calwork.bomb.series import calibration_series, formation_enthalpies, sample_series
from calwork.core.errors import RunError
from calwork.core.runinfo import RunInfo
from calwork.hess import combustion_link

BOMB = {"calorimeter": "A", "bomb_volume_L": 0.342, "o2_pressure_MPa": 3.04,
        "bomb_water_g": 1.0}


def _rise(dT: float) -> SimpleNamespace:
    return SimpleNamespace(corrected_rise_K=dT, u_corrected_rise_K=1e-4, T_initial_K=297.15,
                           warnings=())


@pytest.fixture(scope="module")
def calibration():
    runs = []
    for i, dT in enumerate((2.0, 2.001, 1.999)):
        info = RunInfo(run=f"c{i}", kind="calibration", mass_g=1.0,
                       reference_material="benzoic acid", ignition_J=1.0, fuse_J=12.0, **BOMB)
        runs.append(reduce_calibration_run(info, _rise(dT)))
    return calibration_series("A", runs, rsd_limit_percent=None)


def _sample(calibration, name, formula, runs):
    results, infos = [], []
    for run, mass, dT in runs:
        info = RunInfo(run=run, kind="combustion", sample=name, formula=formula, mass_g=mass,
                       ignition_J=1.0, fuse_J=12.0, **BOMB)
        results.append(reduce_combustion_run(info, _rise(dT), calibration))
        infos.append(info)
    return sample_series(name, results, infos, {"A": calibration})


def test_halogen_compound_gets_no_standard_value(calibration):
    # bomb_states balances C, H, O, N, S only: for a chlorine compound the HCl(aq) final state
    # is not formed, so a Washburn correction (and a standard massic energy) would be wrong.
    info = RunInfo(run="cl", kind="combustion", sample="dichloronaphthalene",
                   formula="C10H6Cl2", mass_g=0.6, **BOMB)
    res = reduce_combustion_run(info, _rise(2.0), calibration)
    assert res.error is None
    assert res.massic_energy_J_per_g < 0
    assert res.standard_massic_energy_J_per_g is None
    assert res.washburn_J is None
    assert any("washburn: not applied" in w and "Cl" in w for w in res.warnings)
    # a CHONS compound under the same conditions keeps its standard value
    ok = reduce_combustion_run(RunInfo(run="n", kind="combustion", sample="naphthalene",
                                       formula="C10H8", mass_g=0.6, **BOMB),
                               _rise(2.0), calibration)
    assert ok.standard_massic_energy_J_per_g is not None
    assert not any("washburn" in w for w in ok.warnings)


def test_one_unlinkable_sample_does_not_drop_the_others(calibration):
    # Before the fix, a sample the combustion link rejects (here a non-negative Δcu°,
    # as a bad row could give) made combustion_link_many fail for the whole network, and
    # every other sample of the sheet lost its ΔfH° with that sample's error as its warning.
    naph, t_naph = _sample(calibration, "naphthalene", "C10H8",
                           [("n1", 0.66, 2.0), ("n2", 0.663, 2.01)])
    ba, t_ba = _sample(calibration, "benzoic acid sample", "C7H6O2",
                       [("b1", 1.0, 2.0), ("b2", 1.001, 2.002)])
    bad, t_bad = _sample(calibration, "bad", "C6H6", [("x1", 0.5, 1.0)])
    from dataclasses import replace

    bad = replace(bad, standard_massic_energy_J_per_g=5.0)  # a physically impossible value
    out, cov = formation_enthalpies([naph, bad, ba], [t_naph, t_bad, t_ba],
                                    ["thermochemical"] * 3)
    good = {s.sample: s for s in out}
    for name in ("naphthalene", "benzoic acid sample"):
        s = good[name]
        assert s.delta_f_H_kJ_per_mol is not None, name
        assert not any("formation enthalpy not computed" in w for w in s.warnings)
        # the same number as the link of that sample alone (independent call)
        alone = combustion_link(s.formula, s.standard_massic_energy_J_per_g,
                                s.u_standard_massic_energy_J_per_g)
        assert s.delta_f_H_kJ_per_mol == pytest.approx(alone.delta_f_H_kJ_per_mol, abs=1e-9)
    assert good["bad"].delta_f_H_kJ_per_mol is None
    assert any("formation enthalpy not computed" in w for w in good["bad"].warnings)
    # the two good samples were still solved together, correlated through ε
    block = [b for b in cov["delta_f_H"] if len(b["names"]) == 2]
    assert block
    assert block[0]["names"] == ["naphthalene", "benzoic acid sample"]
    m = block[0]["matrix"]
    assert m[0][1] > 0
    assert m[0][1] < math.sqrt(m[0][0] * m[1][1])


def test_halogen_sample_on_the_sheet_keeps_others_formation_enthalpies(calibration):
    naph, t_naph = _sample(calibration, "naphthalene", "C10H8", [("n1", 0.66, 2.0)])
    cl, t_cl = _sample(calibration, "chloro", "C10H7Cl", [("k1", 0.6, 2.0)])
    assert cl.standard_massic_energy_J_per_g is None  # not sent to the link at all
    out, _ = formation_enthalpies([naph, cl], [t_naph, t_cl], ["thermochemical"] * 2)
    assert out[0].delta_f_H_kJ_per_mol is not None
    assert out[1].delta_f_H_kJ_per_mol is None


def test_titre_message_names_the_sulfur_not_only_the_mass_fraction():
    # the sulfur may come from the formula (no sulfur_mass_fraction on the row)
    with pytest.raises(RunError, match="sample's sulfur"):
        nitric_acid_mol(20.0, 0.1, sulfuric_acid_mol=0.00555)
