"""A physically based isoperibol calorimeter simulator with exact ground truth.

Parameters, heat inputs, the exact linear integrator, and the run and scenario builders.
Everything it produces is invented data and is labelled
``simulated: true`` in the thermogram metadata.

Model (docs/methods.md §1.1, §1.9, §1.10, §2): an inner body (bomb, or reaction vessel/ampoule
holder, ``C_b``) and the calorimeter water (``C_w``) coupled by ``G_bw``; Newtonian exchange of
the water with a jacket at ``T_j(t) = T_j0 + drift·(t − t_start)`` through ``G``; constant
stirring power into the water; heat inputs into the inner body (combustion) or the water
(electrical heater, dissolution), overridable with ``into=``; first-order thermometer lag;
Gaussian reading noise (seeded) and quantisation. The system is integrated exactly (matrix
exponential of the state augmented with the input generators).

Examples
--------
>>> from calwork.simulation import CalorimeterParams, HeaterInterval, simulate_run
>>> p = CalorimeterParams.solution_preset()
>>> run = simulate_run(p, HeaterInterval(power_W=0.05, on_s=300.0, off_s=600.0),
...                    duration_s=1500.0, seed=3)
>>> round(run.truth.heat_released_J, 9)
15.0
"""

from __future__ import annotations

from calwork.simulation.inputs import CombustionPulse, FirstOrderRelease, HeaterInterval, HeatInput
from calwork.simulation.params import PRESETS, CalorimeterParams
from calwork.simulation.run import EventTruth, SimulatedRun, SimulationTruth, simulate_run
from calwork.simulation.scenarios import SCENARIOS, ScenarioRun, build_scenario, simulate_scenario

__all__ = [
    "PRESETS",
    "SCENARIOS",
    "CalorimeterParams",
    "CombustionPulse",
    "EventTruth",
    "FirstOrderRelease",
    "HeatInput",
    "HeaterInterval",
    "ScenarioRun",
    "SimulatedRun",
    "SimulationTruth",
    "build_scenario",
    "simulate_run",
    "simulate_scenario",
]
