"""Sparse and hand-read records: reduced when the periods are given, with an uncertainty that
honestly widens (Student's t, the reading resolution, the interpolation of the main period).

The records come from calwork's simulator (``calwork.simulation.handread``): a Newtonian
calorimeter (one body, so that the check is about the record, not about the calorimeter
model), read each minute in the drift periods and each 60, 30 or 15 s in the main period, to
0.01 °C or 0.001 °C.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from calwork.core.errors import PeriodDetectionError
from calwork.rise import corrected_rise
from calwork.rise.sparse import interpolation_component_K, reading_resolution_K, student_factor
from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run
from calwork.simulation.handread import HAND_READ_SCHEMES, hand_read_record, reading_times_s

PARAMS = CalorimeterParams.bomb_preset(bomb_water_conductance_W_per_K=None)
ENERGY_J = 26434.0
#: main-period lengths (s) per scheme that keep every record within 12–40 readings
MAIN_LENGTHS = {"1 min": (360.0, 600.0), "30 s": (300.0, 480.0), "15 s": (240.0, 300.0)}


def _record(scheme: str, seed: int):
    rng = np.random.default_rng(seed)
    n_fore, n_after = int(rng.integers(3, 9)), int(rng.integers(3, 9))
    length = float(rng.choice(np.arange(*MAIN_LENGTHS[scheme], 60.0)))
    resolution = 0.01 if seed % 2 == 0 else 0.001
    fire = 60.0 * (n_fore + 1)
    drift, main = HAND_READ_SCHEMES[scheme]
    times = reading_times_s(fire_time_s=fire, fore_readings=n_fore, main_length_s=length,
                            after_readings=n_after, drift_interval_s=drift,
                            main_interval_s=main)
    run = hand_read_record(PARAMS, CombustionPulse(energy_J=ENERGY_J, fire_time_s=fire), times,
                           resolution_K=resolution, reading_noise_K=0.3 * resolution,
                           seed=seed)
    return run, fire, fire + length, resolution


@pytest.mark.parametrize("scheme", list(HAND_READ_SCHEMES))
def test_hand_read_records_are_covered_by_their_uncertainty(scheme):
    """200 seeded records per scheme (12–40 readings, 0.01 °C and 0.001 °C): none refused,
    |error| ≤ 2u for at least 90 % (the issue's criterion; a normal error gives 95 %), and the
    mean error within the mean stated u (no bias the u does not cover)."""
    errors, us, sizes = [], [], []
    for seed in range(200):
        run, fire, end, _ = _record(scheme, seed)
        result = corrected_rise(run.thermogram, fire_time_s=fire, main_end_s=end)
        errors.append(result.corrected_rise_K - run.truth.adiabatic_rise_K)
        us.append(result.u_corrected_rise_K)
        sizes.append(run.thermogram.time_s.size)
    errors, us = np.array(errors), np.array(us)
    assert min(sizes) >= 12
    assert max(sizes) <= 40
    coverage = float(np.mean(np.abs(errors) <= 2 * us))
    assert coverage >= 0.90, coverage
    assert abs(float(np.mean(errors))) <= float(np.mean(us))


def test_a_14_reading_record_gets_a_wider_u_not_a_refusal():
    fire = 240.0
    times = reading_times_s(fire_time_s=fire, fore_readings=4, main_length_s=360.0,
                            after_readings=4, drift_interval_s=60.0, main_interval_s=60.0)
    assert times.size == 14
    pulse = CombustionPulse(energy_J=ENERGY_J, fire_time_s=fire)
    sparse = hand_read_record(PARAMS, pulse, times, resolution_K=0.01, seed=3)
    result = corrected_rise(sparse.thermogram, fire_time_s=fire, main_end_s=fire + 360.0)
    dense = corrected_rise(simulate_run(PARAMS, pulse, duration_s=1800.0, seed=3).thermogram,
                           fire_time_s=fire)
    assert result.u_corrected_rise_K > 10 * dense.u_corrected_rise_K
    assert abs(result.corrected_rise_K - sparse.truth.adiabatic_rise_K) <= (
        2 * result.u_corrected_rise_K)
    assert result.reading_resolution_K == 0.01
    # 4 fore readings, 5 after (the reading at the end of the main period starts it), four
    # Newtonian parameters
    assert result.dof == 5
    budget = dict(result.uncertainty_budget)
    assert {"fit", "main-period-interpolation"} <= set(budget)
    assert any(w.startswith("few-degrees-of-freedom") for w in result.warnings)
    # every reading up to the given firing time is in the fore period (no guard readings
    # silently left out)
    assert result.fore_period_s == (float(times[0]), fire)


@pytest.mark.parametrize(("dof", "table"), [(1, 13.97), (2, 4.53), (3, 3.31), (4, 2.87),
                                            (5, 2.65), (10, 2.28), (20, 2.13), (50, 2.05)])
def test_student_factor_against_the_gum_table(dof, table):
    # GUM (JCGM 100:2008) Table G.2, t_p(ν) for p = 95.45 % (recalled; two decimals), over
    # z = 2.000 for the normal distribution
    assert student_factor(dof) == pytest.approx(table / 2.0, abs=0.006)


def test_reading_resolution_is_detected_from_the_values():
    base = 273.15 + np.array([22.51, 22.53, 22.56, 24.9])
    assert reading_resolution_K(base, "°C") == 0.01
    assert reading_resolution_K(273.15 + np.array([22.514, 22.533]), "°C") == 0.001
    assert reading_resolution_K(np.array([295.5, 296.0]), "K") == 0.5
    rng = np.random.default_rng(1)
    assert reading_resolution_K(295 + rng.random(50), "K") is None  # not on a grid
    assert reading_resolution_K(base, "ohm") is None
    dense = simulate_run(PARAMS, CombustionPulse(energy_J=ENERGY_J, fire_time_s=600.0),
                         duration_s=2400.0, seed=1)
    assert corrected_rise(dense.thermogram).reading_resolution_K is None


def test_resolution_becomes_a_component_when_the_scatter_cannot_show_it():
    """Noise-free readings rounded to 0.01 °C on a slow drift: the fits see almost no scatter,
    so the rounding (u = 0.01/√12 K per reading) is a component of its own."""
    fire = 300.0
    times = reading_times_s(fire_time_s=fire, fore_readings=6, main_length_s=480.0,
                            after_readings=6, drift_interval_s=60.0, main_interval_s=30.0)
    run = hand_read_record(PARAMS, CombustionPulse(energy_J=ENERGY_J, fire_time_s=fire), times,
                           resolution_K=0.01, seed=0)
    result = corrected_rise(run.thermogram, fire_time_s=fire, main_end_s=fire + 480.0)
    budget = dict(result.uncertainty_budget)
    if result.noise_K < 0.01 / math.sqrt(12):
        assert budget["reading-resolution"] > 0
    else:
        assert "reading-resolution" not in budget  # the scatter already holds it


def test_interpolation_component_by_hand():
    """A main period that rises 2 K in the first 60 s interval, then straight: the smooth
    part is exact for the trapezoid; the corner interval gives k·(2 K·60 s/2)/√2."""
    from calwork.rise.selection import Selection

    t = np.array([0.0, 60.0, 120.0, 180.0, 240.0, 300.0, 360.0])
    T = np.array([295.0, 295.0, 297.0, 297.01, 297.02, 297.03, 297.04])
    sel = Selection(t=t, T=T, fore=t <= 60.0, after=t >= 240.0, t_i=60.0, t_f=240.0,
                    periods=None, source_path=None)
    k = 4e-5
    assert interpolation_component_K(sel, k) == pytest.approx(k * (2.0 * 60.0 / 2) / math.sqrt(2),
                                                              rel=1e-12)


def test_too_few_readings_say_what_to_give():
    fire = 120.0
    times = reading_times_s(fire_time_s=fire, fore_readings=2, main_length_s=300.0,
                            after_readings=4, drift_interval_s=60.0, main_interval_s=30.0)
    run = hand_read_record(PARAMS, CombustionPulse(energy_J=ENERGY_J, fire_time_s=fire), times,
                           resolution_K=0.01, seed=0)
    with pytest.raises(PeriodDetectionError, match="fore period too short") as err:
        corrected_rise(run.thermogram, fire_time_s=fire, main_end_s=fire + 300.0)
    assert "2 readings" in str(err.value)
    # detected, the two fore readings cannot show a drift either: the message says what to give
    with pytest.raises(PeriodDetectionError, match="give fire_time_s"):
        corrected_rise(run.thermogram)
    # eleven readings are too few to detect anything
    eleven = reading_times_s(fire_time_s=180.0, fore_readings=4, main_length_s=240.0,
                             after_readings=3, drift_interval_s=60.0, main_interval_s=60.0)
    assert eleven.size == 11
    short = hand_read_record(PARAMS, CombustionPulse(energy_J=ENERGY_J, fire_time_s=180.0),
                             eleven, resolution_K=0.01, seed=0)
    with pytest.raises(PeriodDetectionError, match="give the firing time and the end"):
        corrected_rise(short.thermogram)


#: main-period lengths (s) per scheme for detection tests: 12–29 readings
DETECT_LENGTHS = {"1 min": (300.0, 540.0), "30 s": (240.0, 360.0), "15 s": (180.0, 240.0)}


@pytest.mark.parametrize("scheme", list(HAND_READ_SCHEMES))
def test_sparse_periods_are_detected_from_12_readings(scheme):
    """No boundary given: 200 records per scheme with 12–29 readings; the firing is found at
    the right reading, and |error| ≤ 2u for at least 90 %."""
    drift, main = HAND_READ_SCHEMES[scheme]
    covered = total = 0
    for seed in range(200):
        rng = np.random.default_rng(seed)
        n_fore, n_after = int(rng.integers(3, 7)), int(rng.integers(4, 7))
        length = float(rng.choice(np.arange(*DETECT_LENGTHS[scheme], 60.0)))
        resolution = 0.01 if seed % 2 == 0 else 0.001
        fire = 60.0 * (n_fore + 1)
        times = reading_times_s(fire_time_s=fire, fore_readings=n_fore, main_length_s=length,
                                after_readings=n_after, drift_interval_s=drift,
                                main_interval_s=main)
        if not 12 <= times.size <= 29:
            continue
        run = hand_read_record(PARAMS, CombustionPulse(energy_J=ENERGY_J, fire_time_s=fire),
                               times, resolution_K=resolution,
                               reading_noise_K=0.3 * resolution, seed=seed)
        result = corrected_rise(run.thermogram)
        assert result.fire_time_s == fire
        assert result.periods.main_end_source == "detected"
        total += 1
        covered += abs(result.corrected_rise_K - run.truth.adiabatic_rise_K) <= (
            2 * result.u_corrected_rise_K)
    assert total >= 150
    assert covered / total >= 0.90


def test_a_sparse_record_still_rising_gets_no_early_end():
    """The record stops while the readings still curve towards the maximum (a slow release):
    the end is not put there; the user is told to give it."""
    from calwork.simulation import FirstOrderRelease

    fire = 180.0
    times = reading_times_s(fire_time_s=fire, fore_readings=4, main_length_s=420.0,
                            after_readings=3, drift_interval_s=60.0, main_interval_s=60.0)
    slow = FirstOrderRelease(energy_J=ENERGY_J, start_s=fire, time_constant_s=200.0)
    run = hand_read_record(PARAMS, slow, times, resolution_K=0.001, seed=2)
    with pytest.raises(PeriodDetectionError, match="still curve"):
        corrected_rise(run.thermogram)
