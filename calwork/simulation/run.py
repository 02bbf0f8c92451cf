"""``simulate_run``: one simulated calorimeter log with its ground truth."""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calwork.core.errors import SimulationError
from calwork.core.provenance import Provenance
from calwork.core.thermogram import Thermogram
from calwork.simulation.inputs import (
    CombustionPulse,
    FirstOrderRelease,
    HeaterInterval,
    HeatInput,
)
from calwork.simulation.integrate import LinearModel, integrate
from calwork.simulation.params import CalorimeterParams, _finite, _positive

__all__ = ["EventTruth", "SimulatedRun", "SimulationTruth", "simulate_run"]

_INPUT_TYPES = (CombustionPulse, HeaterInterval, FirstOrderRelease)


@dataclass(frozen=True, kw_only=True)
class EventTruth:
    """One heat input as simulated.

    Attributes
    ----------
    kind
        ``'combustion'``, ``'heater'`` or ``'release'``.
    start_s, end_s
        Start and (nominal) end of the heat input, s; for a first-order release ``end_s`` is
        when all but 1e-6 of it is released, or the end of the run if earlier.
    energy_J
        Heat released into the calorimeter within the run, J (signed: < 0 endothermic).
    adiabatic_rise_K
        ``energy_J / ε``, K.
    into
        ``'bomb'`` (inner body) or ``'water'``.
    """

    kind: str
    start_s: float
    end_s: float
    energy_J: float
    adiabatic_rise_K: float
    into: str

    def to_dict(self) -> dict[str, Any]:
        return {"kind": self.kind, "start_s": self.start_s, "end_s": self.end_s,
                "energy_J": self.energy_J, "adiabatic_rise_K": self.adiabatic_rise_K,
                "into": self.into}


@dataclass(frozen=True, kw_only=True)
class SimulationTruth:
    """The exact values behind a simulated run.

    Attributes
    ----------
    energy_equivalent_J_per_K
        ε = C_b + C_w, J/K.
    heat_released_J
        Sum of the heat inputs within the run, J (signed).
    adiabatic_rise_K
        ``heat_released_J / ε`` — the corrected temperature rise a perfect method finds, K.
    events
        One :class:`EventTruth` per heat input, in time order.
    exchange_rate_per_s
        k = G/ε, 1/s (docs/methods.md §1.1).
    convergence_temperature_K
        T_∞ = T_j0 + P_stir/G, K (exact with zero jacket drift; with drift, its value at the
        start); ``None`` when G = 0.
    drift_rate_per_s
        Decay rate of the slow (drift) mode of the water temperature, 1/s: equal to k for one
        body, slightly different for two bodies (the rate a Newtonian fit of a drift period
        finds).
    internal_time_constant_s
        τ₁ of the inner-body ↔ water exchange, s (``None`` for one body).
    effective_energy_equivalent_J_per_K
        ``G / drift_rate_per_s``: the energy equivalent that a perfect Newtonian analysis of
        the thermometer record finds (what an ideal calibration measures), J/K. Equal to ε
        for one body; for two bodies slightly larger (the inner body lags the water during
        the drift periods; ≈ +6.8e-4 relative for the bomb preset). Derivation: after the
        transients, the Newtonian correction with the slow rate λ gives the rise
        ``Q λ ∫h dt`` (h = impulse response of the reading), and ``∫h dt = 1/G`` because in
        steady state every watt leaves through G. ``ε`` when G = 0; ``None`` when the inner
        body is uncoupled (``G_bw = 0``).
    newtonian_rise_K
        ``heat_released_J / effective_energy_equivalent_J_per_K``: the corrected rise a
        perfect Newtonian method (exact drift law, after period long after the transients)
        finds on this record, K. Equal to ``adiabatic_rise_K`` for one body.
    thermometer_lag_s
        τ of the thermometer, s.
    seed
        Seed of the reading noise (``None`` = fresh entropy).
    """

    energy_equivalent_J_per_K: float
    heat_released_J: float
    adiabatic_rise_K: float
    events: tuple[EventTruth, ...]
    exchange_rate_per_s: float
    convergence_temperature_K: float | None
    drift_rate_per_s: float
    internal_time_constant_s: float | None
    thermometer_lag_s: float
    effective_energy_equivalent_J_per_K: float | None = None
    newtonian_rise_K: float | None = None
    seed: int | None = None

    def to_dict(self) -> dict[str, Any]:
        return {
            "energy_equivalent_J_per_K": self.energy_equivalent_J_per_K,
            "heat_released_J": self.heat_released_J,
            "adiabatic_rise_K": self.adiabatic_rise_K,
            "events": [e.to_dict() for e in self.events],
            "exchange_rate_per_s": self.exchange_rate_per_s,
            "convergence_temperature_K": self.convergence_temperature_K,
            "drift_rate_per_s": self.drift_rate_per_s,
            "internal_time_constant_s": self.internal_time_constant_s,
            "thermometer_lag_s": self.thermometer_lag_s,
            "effective_energy_equivalent_J_per_K": self.effective_energy_equivalent_J_per_K,
            "newtonian_rise_K": self.newtonian_rise_K,
            "seed": self.seed,
        }

    def report(self) -> str:
        lines = [(f"Simulated truth: ε = {self.energy_equivalent_J_per_K:.6g} J/K, heat "
                 f"{self.heat_released_J:.6g} J, adiabatic rise {self.adiabatic_rise_K:.7g} K, "
                 f"k = {self.exchange_rate_per_s:.4g} 1/s")]
        lines.extend(f"  {e.kind:<10} {e.start_s:9.2f}–{e.end_s:9.2f} s  {e.energy_J:12.6g} J  "
                     f"{e.adiabatic_rise_K:+.7f} K into {e.into}" for e in self.events)
        return "\n".join(lines)


@dataclass(frozen=True, kw_only=True)
class SimulatedRun:
    """A simulated log and the truth behind it.

    Attributes
    ----------
    thermogram
        The measured record (lagged, noisy, quantised thermometer readings; ``jacket_K``
        channel; ``heater_V``/``heater_A`` with a heater).
    truth
        The exact values (:class:`SimulationTruth`).
    params
        The calorimeter simulated.
    water_temperature_K, inner_temperature_K, sensor_temperature_K
        Noise-free temperatures at the reading times, K: water, inner body (== water for one
        body) and the thermometer (lagged, before noise and quantisation).
    """

    thermogram: Thermogram
    truth: SimulationTruth
    params: CalorimeterParams
    water_temperature_K: np.ndarray = field(repr=False)
    inner_temperature_K: np.ndarray = field(repr=False)
    sensor_temperature_K: np.ndarray = field(repr=False)

    def report(self) -> str:
        return self.thermogram.report() + "\n" + self.truth.report()


def _as_inputs(heat_inputs: Any) -> tuple[HeatInput, ...]:
    if heat_inputs is None:
        return ()
    if isinstance(heat_inputs, _INPUT_TYPES):
        return (heat_inputs,)
    items = tuple(heat_inputs)
    for i, item in enumerate(items):
        if not isinstance(item, _INPUT_TYPES):
            raise SimulationError(f"heat input #{i} is not a heat input", column="heat_inputs",
                                  found=type(item).__name__,
                                  expected="CombustionPulse, HeaterInterval or FirstOrderRelease")
    return tuple(sorted(items, key=lambda s: s.start_s))


def _check_window(inputs: Sequence[HeatInput], t0: float, t1: float) -> None:
    heaters = [s for s in inputs if isinstance(s, HeaterInterval)]
    for src in inputs:
        name = "on_s" if isinstance(src, HeaterInterval) else (
            "fire_time_s" if isinstance(src, CombustionPulse) else "start_s")
        if src.start_s < t0:
            raise SimulationError(f"{src.kind} starts before the simulated run", column=name,
                                  found=src.start_s, expected=f"a time at or after {t0!r} s")
        if src.start_s >= t1:
            raise SimulationError(
                f"{src.kind} starts at {src.start_s!r} s, after the end of the simulated run "
                "(duration too short)", column="duration_s", found=t1 - t0,
                expected=f"more than {src.start_s - t0!r} s")
        if not isinstance(src, FirstOrderRelease) and src.end_s > t1:
            raise SimulationError(f"{src.kind} ends after the simulated run (duration too short)",
                                  column="duration_s", found=t1 - t0,
                                  expected=f"at least {src.end_s - t0!r} s")
    for a, b in itertools.pairwise(heaters):
        if b.on_s < a.off_s:
            raise SimulationError("heater intervals overlap (one heater channel)", column="on_s",
                                  found=b.on_s, expected=f"a time at or after {a.off_s!r} s")


def _metadata(params: CalorimeterParams, inputs: Sequence[HeatInput], seed: int | None,
              truth: SimulationTruth) -> dict[str, str]:
    meta = {
        "simulated": "true",
        "simulator": "calwork.simulation (isoperibol calorimeter model; invented data)",
        "seed": "none" if seed is None else str(seed),
        "true_heat_released_J": repr(truth.heat_released_J),
        "true_adiabatic_rise_K": repr(truth.adiabatic_rise_K),
        "true_energy_equivalent_J_per_K": repr(truth.energy_equivalent_J_per_K),
    }
    for name, value in params.to_dict().items():
        meta[f"param_{name}"] = "none" if value is None else str(value)
    for i, src in enumerate(inputs, 1):
        meta[f"input_{i}"] = repr(src)
    return meta


def simulate_run(
    params: CalorimeterParams,
    heat_inputs: HeatInput | Sequence[HeatInput] | None = (),
    *,
    duration_s: float,
    seed: int | None = None,
    start_time_s: float = 0.0,
) -> SimulatedRun:
    """Simulate one calorimeter log with exact ground truth.

    Parameters
    ----------
    params
        The calorimeter (:class:`CalorimeterParams`).
    heat_inputs
        One input or a sequence of :class:`CombustionPulse`, :class:`HeaterInterval`,
        :class:`FirstOrderRelease` (times in s on the log's time axis).
    duration_s
        Length of the log, s (readings at ``start_time_s + n·sampling_interval_s``).
    seed
        Seed of the reading noise (``numpy.random.default_rng(seed)``); the same seed gives the
        same log.
    start_time_s
        Time of the first reading, s.

    Returns
    -------
    SimulatedRun
        ``.thermogram`` (the measured record), ``.truth`` and the noise-free temperatures.

    Examples
    --------
    >>> p = CalorimeterParams.bomb_preset()
    >>> run = simulate_run(p, CombustionPulse(energy_J=26434.0, fire_time_s=600.0),
    ...                    duration_s=2400.0, seed=1)
    >>> round(run.truth.adiabatic_rise_K, 6)
    2.6434
    """
    if not isinstance(params, CalorimeterParams):
        raise SimulationError("params must be a CalorimeterParams", column="params",
                              found=type(params).__name__)
    t0 = _finite("start_time_s", start_time_s)
    duration = _positive("duration_s", duration_s)
    dt = params.sampling_interval_s
    n_steps = math.floor(duration / dt + 1e-9)
    if n_steps < 2:
        raise SimulationError("the run is shorter than two sampling intervals",
                              column="duration_s", found=duration,
                              expected=f"at least {2 * dt!r} s")
    inputs = _as_inputs(heat_inputs)
    _check_window(inputs, t0, t0 + duration)
    times = t0 + dt * np.arange(n_steps + 1)
    model = LinearModel.build(params)
    states = integrate(params, inputs, times, model)
    water, inner, sensor = (states[:, model.water], states[:, model.inner],
                            states[:, model.sensor])

    rng = np.random.default_rng(seed)
    reading = sensor + (rng.normal(0.0, params.noise_K, times.size) if params.noise_K else 0.0)
    if params.quantisation_K:
        q = params.quantisation_K
        reading = np.round(reading / q) * q
    channels = {"jacket_K": params.jacket_temperature_K
                + params.jacket_drift_K_per_s * (times - t0)}
    heaters = [s for s in inputs if isinstance(s, HeaterInterval)]
    if heaters:
        volts, amps = np.zeros(times.size), np.zeros(times.size)
        for h in heaters:
            on = (times >= h.on_s) & (times < h.off_s)
            volts[on], amps[on] = h.voltage_V, h.current_A
        rel = params.electrical_noise_relative
        if rel:
            volts = volts * (1 + rng.normal(0.0, rel, times.size))
            amps = amps * (1 + rng.normal(0.0, rel, times.size))
        channels["heater_V"], channels["heater_A"] = volts, amps

    eps = params.energy_equivalent_J_per_K
    t_end = float(times[-1])
    events = tuple(
        EventTruth(kind=s.kind, start_s=s.start_s, end_s=min(s.end_s, t_end),
                   energy_J=(q := s.energy_between_J(s.start_s, t_end)),
                   adiabatic_rise_K=q / eps, into=s.into)
        for s in inputs
    )
    heat = math.fsum(e.energy_J for e in events)
    drift = _drift_rate_per_s(params)
    eff = _effective_energy_equivalent(params)
    truth = SimulationTruth(
        energy_equivalent_J_per_K=eps, heat_released_J=heat, adiabatic_rise_K=heat / eps,
        events=events, exchange_rate_per_s=params.exchange_rate_per_s,
        convergence_temperature_K=params.convergence_temperature_K,
        drift_rate_per_s=drift, internal_time_constant_s=params.internal_time_constant_s,
        thermometer_lag_s=params.thermometer_lag_s, effective_energy_equivalent_J_per_K=eff,
        newtonian_rise_K=None if eff is None else heat / eff, seed=seed,
    )
    thermogram = Thermogram(
        time_s=times, temperature_K=reading, channels=channels,
        metadata=_metadata(params, inputs, seed, truth),
        provenance=Provenance(importer="calwork.simulation", method="simulated",
                              constants={**params.to_dict(), "seed": seed}),
    )
    return SimulatedRun(thermogram=thermogram, truth=truth, params=params,
                        water_temperature_K=_frozen(water), inner_temperature_K=_frozen(inner),
                        sensor_temperature_K=_frozen(sensor))


def _two_body_terms(params: CalorimeterParams) -> tuple[float, float, float]:
    """``(a, trace, det)`` of the 2×2 thermal matrix: a = G_bw/C_b, det = a G/C_w."""
    cb, cw = params.bomb_heat_capacity_J_per_K, params.water_heat_capacity_J_per_K
    gbw, G = float(params.bomb_water_conductance_W_per_K), params.exchange_conductance_W_per_K
    a = gbw / cb
    return a, a + (gbw + G) / cw, a * G / cw


def _drift_rate_per_s(params: CalorimeterParams) -> float:
    """Rate of the slow mode of the water temperature, 1/s.

    One body: G/ε. Two bodies: the smaller root of λ² − tr λ + det = 0 in the cancellation-free
    form 2 det/(tr + √(tr² − 4 det)) (accurate down to G → 0). An uncoupled inner body
    (G_bw = 0) leaves the water's own rate G/C_w.
    """
    if not params.two_body:
        return params.exchange_rate_per_s
    if params.bomb_water_conductance_W_per_K == 0:
        return params.exchange_conductance_W_per_K / params.water_heat_capacity_J_per_K
    _, tr, det = _two_body_terms(params)
    return 2 * det / (tr + math.sqrt(max(tr * tr - 4 * det, 0.0)))


def _effective_energy_equivalent(params: CalorimeterParams) -> float | None:
    """G/λ (see SimulationTruth), written without dividing by a vanishing λ."""
    if not params.two_body:
        return params.energy_equivalent_J_per_K
    if params.bomb_water_conductance_W_per_K == 0:
        return None
    a, tr, det = _two_body_terms(params)
    cw = params.water_heat_capacity_J_per_K
    return cw * (tr + math.sqrt(max(tr * tr - 4 * det, 0.0))) / (2 * a)


def _frozen(a: np.ndarray) -> np.ndarray:
    a = np.array(a, dtype=float)
    a.flags.writeable = False
    return a
