"""Simulated hand-read records: the readings a technician writes down from a thermometer.

The standards' manual procedures read the calorimeter thermometer at fixed times — each
minute in the fore and after periods, each half-minute or 15 s in the main period — to the
thermometer's resolution (0.01 °C or 0.001 °C). :func:`hand_read_record` makes such a record
from calwork's simulator: the calorimeter is simulated densely and noise-free, the readings
are taken on the schedule, a small reading noise is added and each value is rounded to the
resolution in °C, as it would be written. The result is labelled as simulated.
"""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import SimulationError
from calwork.core.provenance import Provenance
from calwork.core.thermogram import Thermogram
from calwork.simulation.params import CalorimeterParams
from calwork.simulation.run import SimulatedRun, simulate_run

__all__ = ["HAND_READ_SCHEMES", "hand_read_record", "reading_times_s"]

#: Reading schedules (drift-period interval, main-period interval), s: a reading each minute
#: throughout, or each minute with 30 s or 15 s in the main period (common practice; the fuel
#: standards' manual procedures read at such intervals — recalled).
HAND_READ_SCHEMES = {"1 min": (60.0, 60.0), "30 s": (60.0, 30.0), "15 s": (60.0, 15.0)}


def reading_times_s(*, fire_time_s: float, fore_readings: int, main_length_s: float,
                    after_readings: int, drift_interval_s: float,
                    main_interval_s: float) -> np.ndarray:
    """The times a technician reads: ``fore_readings`` up to and including the firing, the
    main period at ``main_interval_s``, then ``after_readings`` at ``drift_interval_s``, s."""
    fore = fire_time_s - drift_interval_s * np.arange(fore_readings - 1, -1, -1)
    n_main = round(main_length_s / main_interval_s)
    main = fire_time_s + main_interval_s * np.arange(1, n_main + 1)
    end = float(main[-1]) if main.size else fire_time_s
    after = end + drift_interval_s * np.arange(1, after_readings + 1)
    return np.concatenate([fore, main, after])


def hand_read_record(params: CalorimeterParams, heat_inputs, times_s: np.ndarray, *,
                     resolution_K: float = 0.01, reading_noise_K: float = 0.0,
                     seed: int | None = None, step_s: float = 1.0) -> SimulatedRun:
    """A hand-read record of the simulated calorimeter at ``times_s`` (s, from time zero).

    Parameters
    ----------
    params, heat_inputs
        The calorimeter and what heats it (as for :func:`~calwork.simulation.simulate_run`).
    times_s
        Reading times, s, increasing, each a multiple of ``step_s``.
    resolution_K
        The step the readings are written to (0.01 for a thermometer read to 0.01 °C), K.
    reading_noise_K
        Standard deviation of the reading error before rounding, K.
    seed
        Seed of the reading noise.
    step_s
        Time step of the dense simulation the readings are taken from, s.
    """
    t = np.asarray(times_s, dtype=float)
    if t.size < 2 or np.any(np.diff(t) <= 0):
        raise SimulationError("reading times must increase", column="times_s")
    idx = np.round(t / step_s)
    if np.any(np.abs(idx * step_s - t) > 1e-9) or t[0] < 0:
        raise SimulationError("reading times must be non-negative multiples of the "
                              "simulation step", column="times_s", found=step_s)
    if not (resolution_K > 0 and math.isfinite(resolution_K)):
        raise SimulationError("the resolution must be a positive number of kelvin",
                              column="resolution_K", found=resolution_K)
    dense = simulate_run(replace(params.noise_free(), sampling_interval_s=step_s), heat_inputs,
                         duration_s=float(t[-1]) + step_s, seed=seed)
    pick = idx.astype(int)
    sensor = dense.sensor_temperature_K[pick]
    rng = np.random.default_rng(seed)
    noisy = sensor + (rng.normal(0.0, reading_noise_K, t.size) if reading_noise_K else 0.0)
    celsius = np.round((noisy - CELSIUS_ZERO_K) / resolution_K) * resolution_K
    reading = celsius + CELSIUS_ZERO_K
    meta = dict(dense.thermogram.metadata)
    meta.update({"temperature_unit": "C", "time_unit": "s", "hand_read": "simulated",
                 "resolution_C": f"{resolution_K:g}"})
    thermogram = Thermogram(
        time_s=t, temperature_K=reading, metadata=meta,
        provenance=Provenance(importer="calwork.simulation.handread", method="simulated",
                              constants={**params.to_dict(), "seed": seed,
                                         "resolution_K": resolution_K,
                                         "reading_noise_K": reading_noise_K}))
    return SimulatedRun(thermogram=thermogram, truth=dense.truth, params=params,
                        water_temperature_K=dense.water_temperature_K[pick],
                        inner_temperature_K=dense.inner_temperature_K[pick],
                        sensor_temperature_K=sensor)
