"""Correction uncertainties in a sample's budget carry their correlation with the calibration.

A correction constant (fuse J/cm, ΔfU(HNO3), …) serves calibration and sample runs alike, so
its error cancels to the extent the calibration absorbed it (GUM, JCGM 100:2008 §5.2 —
correlated input quantities; derived here for Δu = −(ε ΔT − C)/m with ε = (Q + C_cal)/ΔT_cal).
"""

from __future__ import annotations

import pytest

from calwork.bomb.series import calibration_series, sample_series
from calwork.core.results import BombRunResult
from calwork.core.runinfo import RunInfo
from calwork.data import load_data

FUSE_J, DT_CAL, EPS = 80.0, 2.6, 10_000.0


def _cal(run, dT=DT_CAL, fuse=FUSE_J):
    return BombRunResult(run=run, kind="calibration", calorimeter="A", corrected_rise_K=dT,
                     u_corrected_rise_K=5e-5, corrections_J={"fuse": fuse},
                     energy_equivalent_J_per_K=EPS + (0.2 if run.endswith("1") else -0.2),
                     details={"u_certificate_relative": 5.7e-5, "reference_material":
                              "benzoic acid", "certified_J_per_g": 26434.0})


def _sample(run, dT, fuse, mass=1.0):
    du = -(EPS * dT - fuse) / mass
    return BombRunResult(run=run, kind="combustion", sample="x", calorimeter="A",
                     corrected_rise_K=dT, u_corrected_rise_K=5e-5,
                     corrections_J={"fuse": fuse}, massic_energy_J_per_g=du,
                     details={"mass_vacuum_g": mass, "d_massic_energy_d_epsilon_K_per_g":
                              -dT / mass, "u_massic_energy_rise_J_per_g": 0.5})


def _corrections_component(dT, fuse):
    cal = calibration_series("A", [_cal("c1"), _cal("c2")])
    runs = [_sample("s1", dT, fuse), _sample("s2", dT, fuse)]
    infos = [RunInfo(run=r.run, kind="combustion", formula="C7H6O2") for r in runs]
    result, _ = sample_series("x", runs, infos, {"A": cal})
    return result.budget["corrections_J_per_g"]


def test_a_sample_like_the_calibration_has_no_correction_component():
    # same rise and same fuse energy as the calibration: the fuse error cancels exactly
    assert _corrections_component(DT_CAL, FUSE_J) == pytest.approx(0.0, abs=1e-12)


def test_a_sample_with_half_the_rise_keeps_half_the_fuse_error():
    u_rel = load_data("bomb_corrections.toml")["uncertainty_relative"]["fuse"]
    # net = C_s − ΔT_s · C_cal/ΔT_cal = 80 − 1.3 · 80/2.6 = 40 J on 1 g
    assert _corrections_component(DT_CAL / 2, FUSE_J) == pytest.approx(u_rel * 40.0, rel=1e-12)
