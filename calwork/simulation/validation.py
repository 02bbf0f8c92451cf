"""Method validation on simulated runs: bias, spread and coverage of every rise method.

``validate_methods(params, runs, seed)`` simulates ``runs`` thermograms of the user's
calorimeter (:class:`calwork.simulation.CalorimeterParams`) with known heat, reduces each with
every method (automatic period detection) and compares with the truth:

* **bias** and **spread** (mean and standard deviation of the relative error, ppm) against the
  adiabatic rise ``Q/(C_b + C_w)``, and against the *Newtonian limit* ``Q/ε_eff`` — what a
  perfect Newtonian analysis of the record finds (equal for one body; for two bodies the inner
  body's lag in the drift periods makes every method read ≈ ``C_b τ_b k`` low, a constant of
  the instrument that a calibration absorbs);
* **coverage**: the fraction of runs whose error (against the Newtonian limit) is within twice
  the stated standard uncertainty.

The heat input is a combustion pulse giving about 2.5 K for bomb-sized calorimeters
(ε ≥ 2 kJ/K), otherwise a 300 s heater interval giving about 50 mK (an electrical calibration
of a solution calorimeter). All records are simulated (invented) data.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calwork.core.errors import CalworkError
from calwork.rise.engine import corrected_rise
from calwork.rise.registry import METHODS

__all__ = ["MethodValidation", "ValidationResult", "validate_methods"]

def _variants() -> tuple[tuple[str, str, dict[str, str]], ...]:
    """(label, method, options) of the rows of the validation table: every registered method
    with its default options, then each other value of each of its options."""
    rows = []
    for spec in METHODS.values():
        rows.append((spec.name, spec.name, {}))
        for option, values in spec.options.items():
            rows += [(spec.label(**{option: v}), spec.name, {option: v}) for v in values[1:]]
    return tuple(rows)


#: (label, method, options) of the rows of the validation table.
VARIANTS = _variants()
FIRE_TIME_S = 600.0


@dataclass(frozen=True, kw_only=True)
class MethodValidation:
    """Statistics of one method over the simulated runs (errors in ppm of the truth)."""

    method: str
    n_runs: int
    n_failed: int
    bias_ppm: float
    spread_ppm: float
    bias_newtonian_ppm: float
    spread_newtonian_ppm: float
    max_abs_error_ppm: float
    mean_u_ppm: float
    coverage: float
    failures: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {k: (list(v) if isinstance(v, tuple) else v) for k, v in self.__dict__.items()}


@dataclass(frozen=True, kw_only=True)
class ValidationResult:
    """Result of :func:`validate_methods`."""

    params: dict[str, Any]
    runs: int
    seed: int
    scenario: str
    adiabatic_rise_K: float
    newtonian_rise_K: float
    methods: tuple[MethodValidation, ...]
    duration_s: float
    warnings: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        return {
            "params": dict(self.params), "runs": self.runs, "seed": self.seed,
            "scenario": self.scenario, "duration_s": self.duration_s,
            "adiabatic_rise_K": self.adiabatic_rise_K,
            "newtonian_rise_K": self.newtonian_rise_K,
            "methods": [m.to_dict() for m in self.methods], "warnings": list(self.warnings),
        }


def _scenario(params) -> tuple[Any, float, str]:
    from calwork.simulation import CombustionPulse, HeaterInterval

    eps = params.energy_equivalent_J_per_K
    tau = params.internal_time_constant_s or 0.0
    tail = max(1800.0, 12.0 * tau + 900.0)
    duration = FIRE_TIME_S + min(tail, 7200.0)
    if eps >= 2000.0:
        energy = 2.5 * eps
        return (CombustionPulse(energy_J=energy, fire_time_s=FIRE_TIME_S), duration,
                f"combustion of {energy:.0f} J at {FIRE_TIME_S:g} s, {duration:g} s record")
    power = 0.05 * eps / 300.0
    return (HeaterInterval(power_W=power, on_s=FIRE_TIME_S, off_s=FIRE_TIME_S + 300.0),
            duration, (f"heater {power * 1e3:.3g} mW for 300 s from {FIRE_TIME_S:g} s, "
                       f"{duration:g} s record"))


def validate_methods(params, runs: int = 20, seed: int = 0) -> ValidationResult:
    """Bias, spread and coverage of every rise method on ``runs`` simulated thermograms.

    Parameters
    ----------
    params
        The calorimeter (:class:`calwork.simulation.CalorimeterParams`).
    runs
        Number of simulated runs (seeds ``seed``, ``seed + 1``, …).
    seed
        First seed of the reading noise.

    Returns
    -------
    ValidationResult
        One :class:`MethodValidation` row per method (and the 60 % Dickinson variant).
    """
    from calwork.simulation import simulate_run

    if runs < 1:
        raise CalworkError("the number of runs must be at least 1", column="runs", found=runs)
    heat, duration, text = _scenario(params)
    errors: dict[str, list[tuple[float, float, float]]] = {v[0]: [] for v in VARIANTS}
    failures: dict[str, list[str]] = {v[0]: [] for v in VARIANTS}
    truth = None
    for i in range(runs):
        run = simulate_run(params, heat, duration_s=duration, seed=seed + i)
        truth = run.truth
        limit = truth.newtonian_rise_K or truth.adiabatic_rise_K
        for label, method, options in VARIANTS:
            try:
                res = corrected_rise(run.thermogram, method, **options)
            except CalworkError as exc:
                failures[label].append(f"seed {seed + i}: {exc}")
                continue
            errors[label].append((res.corrected_rise_K / truth.adiabatic_rise_K - 1.0,
                                  res.corrected_rise_K / limit - 1.0,
                                  res.u_corrected_rise_K / abs(limit)))
    rows = []
    for label, _, _ in VARIANTS:
        e = np.array(errors[label]).reshape(-1, 3) * 1e6
        n_ok = e.shape[0]
        nan = float("nan")
        rows.append(MethodValidation(
            method=label, n_runs=runs, n_failed=runs - n_ok,
            bias_ppm=float(e[:, 0].mean()) if n_ok else nan,
            spread_ppm=float(e[:, 0].std(ddof=1)) if n_ok > 1 else nan,
            bias_newtonian_ppm=float(e[:, 1].mean()) if n_ok else nan,
            spread_newtonian_ppm=float(e[:, 1].std(ddof=1)) if n_ok > 1 else nan,
            max_abs_error_ppm=float(np.abs(e[:, 1]).max()) if n_ok else nan,
            mean_u_ppm=float(e[:, 2].mean()) if n_ok else nan,
            coverage=float(np.mean(np.abs(e[:, 1]) <= 2.0 * e[:, 2])) if n_ok else nan,
            failures=tuple(failures[label]),
        ))
    notes = []
    if params.two_body:
        notes.append("two-body calorimeter: every method reads the Newtonian limit, "
                     f"{(truth.newtonian_rise_K / truth.adiabatic_rise_K - 1) * 1e6:+.0f} ppm "
                     "from Q/(C_b + C_w); a calibration with a reference heat absorbs it")
    if any(math.isnan(m.bias_ppm) for m in rows):
        notes.append("a method failed on every run (see failures)")
    return ValidationResult(
        params=params.to_dict(), runs=runs, seed=seed, scenario=text,
        adiabatic_rise_K=truth.adiabatic_rise_K,
        newtonian_rise_K=truth.newtonian_rise_K or truth.adiabatic_rise_K,
        methods=tuple(rows), duration_s=duration, warnings=tuple(notes),
    )
