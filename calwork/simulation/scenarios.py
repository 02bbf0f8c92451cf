"""Simulated scenarios: a folder of logs plus a run sheet, as a laboratory would keep them.

* ``bomb``: benzoic-acid calibrations (``kind=calibration``) and combustions of an invented
  sample (``kind=combustion``) in the macro bomb calorimeter;
* ``solution``: logs with an electrical calibration before and after an endothermic
  dissolution (``kind=solution``) in the small solution calorimeter.

Every file is labelled as simulated (a ``simulated: true`` preamble line in each log and
``notes = "simulated by calwork"`` in the run sheet). Scenario constants are in
``calwork/data/simulator_defaults.toml`` (``[scenario.*]`` tables).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import date, timedelta
from pathlib import Path
from typing import Any

import numpy as np

from calwork.core.errors import ChoiceError, ExportError, SimulationError, check_choice
from calwork.core.runinfo import EXTENSION_COLUMNS, RUN_SHEET_COLUMNS
from calwork.data import load_data
from calwork.io.writers import write_log, write_run_sheet
from calwork.simulation.inputs import CombustionPulse, FirstOrderRelease, HeaterInterval
from calwork.simulation.params import CalorimeterParams
from calwork.simulation.run import SimulatedRun, simulate_run

__all__ = ["SCENARIOS", "ScenarioRun", "build_scenario", "simulate_scenario"]

#: Scenario names.
SCENARIOS = ("bomb", "solution")
#: The note every simulated row carries.
SIMULATED_NOTE = "simulated by calwork"
_FIRST_DATE = date(2025, 3, 3)


@dataclass(frozen=True, kw_only=True)
class ScenarioRun:
    """One run written by :func:`build_scenario`: its run-sheet row, log path and simulation."""

    row: dict[str, Any]
    log_path: Path
    run: SimulatedRun

    @property
    def reaction_heat_J(self) -> float:
        """True heat of the combustion or dissolution (heater energy excluded), J (signed)."""
        return math.fsum(e.energy_J for e in self.run.truth.events if e.kind != "heater")

    @property
    def reaction_rise_K(self) -> float:
        """``reaction_heat_J / ε`` — the true corrected rise of the reaction alone, K."""
        return self.reaction_heat_J / self.run.truth.energy_equivalent_J_per_K

    @property
    def electrical_energy_J(self) -> float:
        """True energy of all electrical calibrations in the log, J."""
        return math.fsum(e.energy_J for e in self.run.truth.events if e.kind == "heater")


def _preamble(run: SimulatedRun, run_id: str) -> dict[str, str]:
    meta = {"note": "SIMULATED DATA invented by calwork's calorimeter simulator, "
                    "not a measurement", "run": run_id}
    meta.update(run.thermogram.metadata)
    return meta


def _write(run: SimulatedRun, out_dir: Path, run_id: str, fmt: str, digits: int) -> Path:
    path = out_dir / f"{run_id}.{fmt}"
    write_log(run.thermogram, path, fmt=fmt, preamble=_preamble(run, run_id), digits=digits)
    return path


def _bomb_runs(params: CalorimeterParams, n: int, rng: np.random.Generator,
               duration_s: float, out_dir: Path, fmt: str) -> list[ScenarioRun]:
    sc = load_data("simulator_defaults.toml")["scenario"]["bomb"]
    fuse_J = sc["fuse_burnt_cm"] * sc["fuse_J_per_cm"]
    plan = [("calibration", i) for i in range(1, n + 1)] + [("combustion", i)
                                                            for i in range(1, n + 1)]
    out = []
    for day, (kind, i) in enumerate(plan):
        if kind == "calibration":
            mass = round(float(rng.uniform(sc["mass_min_g"], sc["mass_max_g"])), 4)
            massic = sc["benzoic_acid_J_per_g"]
            run_id = f"cal-{i:02d}"
        else:
            mass = round(float(rng.uniform(sc["sample_mass_min_g"], sc["sample_mass_max_g"])), 4)
            massic = sc["sample_J_per_g"]
            run_id = f"sample-{i:02d}"
        # Heat released = m × massic energy + ignition + fuse. For the calibrations this uses
        # the certified value as if the run were at the certificate's standard bomb conditions
        # (it ignores the small correction to actual conditions): a simulation convenience.
        heat = mass * massic + sc["ignition_J"] + fuse_J
        pulse = CombustionPulse(energy_J=heat, fire_time_s=sc["fire_time_s"],
                                burn_time_s=sc["burn_time_s"])
        run = simulate_run(params, pulse, duration_s=duration_s,
                           seed=int(rng.integers(2**32)))
        path = _write(run, out_dir, run_id, fmt, digits=6)
        row: dict[str, Any] = {
            "run": run_id, "kind": kind, "log": path.name, "calorimeter": "sim-bomb-1",
            "mass_g": mass, "ignition_J": sc["ignition_J"],
            "fuse_burnt_cm": sc["fuse_burnt_cm"], "fuse_J_per_cm": sc["fuse_J_per_cm"],
            "o2_pressure_MPa": 3.04, "bomb_volume_L": 0.342, "bomb_water_g": 1.0,
        }
        if kind == "calibration":
            row.update(sample="benzoic acid", formula="C7H6O2", phase="cr",
                       reference_material="benzoic-acid",
                       certified_J_per_g=sc["benzoic_acid_J_per_g"])
        else:
            row.update(sample=sc["sample_name"], formula=sc["sample_formula"], phase="cr")
        row.update(notes=SIMULATED_NOTE, date=(_FIRST_DATE + timedelta(days=day)).isoformat())
        out.append(ScenarioRun(row=row, log_path=path, run=run))
    return out


def _solution_runs(params: CalorimeterParams, n: int, rng: np.random.Generator,
                   duration_s: float, out_dir: Path, fmt: str) -> list[ScenarioRun]:
    sc = load_data("simulator_defaults.toml")["scenario"]["solution"]
    out = []
    for i in range(1, n + 1):
        amount = round(float(rng.uniform(sc["amount_min_mol"], sc["amount_max_mol"])), 7)
        # endothermic dissolution: the calorimeter loses n ΔsolH
        energy = -amount * sc["dissolution_molar_enthalpy_J_per_mol"]
        inputs = [
            HeaterInterval(power_W=sc["heater_power_W"], on_s=sc["first_heater_on_s"],
                           off_s=sc["first_heater_on_s"] + sc["heater_duration_s"],
                           resistance_ohm=sc["heater_resistance_ohm"]),
            FirstOrderRelease(energy_J=energy, start_s=sc["dissolution_start_s"],
                              time_constant_s=sc["dissolution_time_constant_s"]),
            HeaterInterval(power_W=sc["heater_power_W"], on_s=sc["second_heater_on_s"],
                           off_s=sc["second_heater_on_s"] + sc["heater_duration_s"],
                           resistance_ohm=sc["heater_resistance_ohm"]),
        ]
        run = simulate_run(params, inputs, duration_s=duration_s, seed=int(rng.integers(2**32)))
        run_id = f"soln-{i:02d}"
        # 8 decimals: µK readings and heater V, A channels resolved to 1e-8 (ppm-level energy)
        path = _write(run, out_dir, run_id, fmt, digits=8)
        row = {
            "run": run_id, "kind": "solution", "log": path.name, "calorimeter": "sim-solution-1",
            "sample": sc["sample_name"], "amount_mol": amount,
            "solvent_mass_g": sc["solvent_mass_g"],
            "notes": f"{SIMULATED_NOTE}; electrical calibrations before and after the "
                     "dissolution are in the heater_V/heater_A channels",
            "date": (_FIRST_DATE + timedelta(days=i - 1)).isoformat(),
            "fire_time_s": sc["dissolution_start_s"],
        }
        out.append(ScenarioRun(row=row, log_path=path, run=run))
    return out


def build_scenario(
    kind: str,
    out_dir: str | Path,
    *,
    params: CalorimeterParams | None = None,
    runs: int = 5,
    seed: int | None = 0,
    fmt: str = "csv",
    duration_s: float | None = None,
) -> list[ScenarioRun]:
    """Write a simulated scenario into ``out_dir`` and return what was written, with truth.

    Parameters
    ----------
    kind
        ``'bomb'`` (``runs`` benzoic-acid calibrations and ``runs`` sample combustions) or
        ``'solution'`` (``runs`` solution logs, each with electrical calibrations before and
        after an endothermic dissolution).
    out_dir
        Folder for the logs and ``runs.csv`` (created if missing).
    params
        The calorimeter; default the scenario's preset.
    runs
        Number of runs (of each kind for ``'bomb'``).
    seed
        Seed of masses, energies and noise (same seed, same files).
    fmt
        Log format, ``'csv'`` or ``'xlsx'``; the run sheet is always ``runs.csv``.
    duration_s
        Length of each log, s (default from the scenario table).
    """
    try:
        check_choice("scenario", kind, SCENARIOS)
        check_choice("fmt", fmt, ("csv", "xlsx"))
    except ChoiceError as exc:
        raise SimulationError(exc.message, found=exc.found) from None
    if isinstance(runs, bool) or not isinstance(runs, int) or runs < 1:
        raise SimulationError("the number of runs must be a positive integer", column="runs",
                              found=runs, expected="an integer >= 1")
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ExportError(f"cannot create the folder: {exc.strerror or exc}", path=out) from None
    table = load_data("simulator_defaults.toml")["scenario"][kind]
    duration = float(table["duration_s"] if duration_s is None else duration_s)
    if params is None:
        params = CalorimeterParams.preset(kind)
    rng = np.random.default_rng(seed)
    build = _bomb_runs if kind == "bomb" else _solution_runs
    written = build(params, runs, rng, duration, out, fmt)
    allowed = set(RUN_SHEET_COLUMNS) | set(EXTENSION_COLUMNS)
    assert all(set(w.row) <= allowed for w in written)  # sheet columns stay the contract's
    write_run_sheet([w.row for w in written], out / "runs.csv")
    return written


def simulate_scenario(kind: str, out_dir: str | Path, **options: Any) -> list[dict[str, Any]]:
    """Write a simulated scenario (logs + ``runs.csv``) and return the run-sheet rows written.

    ``options`` are the keyword parameters of :func:`build_scenario` (``params``, ``runs``,
    ``seed``, ``fmt``, ``duration_s``), which also returns the truth of every run.

    Examples
    --------
    >>> import tempfile
    >>> rows = simulate_scenario("bomb", tempfile.mkdtemp(), runs=1, seed=1)
    >>> [r["kind"] for r in rows]
    ['calibration', 'combustion']
    """
    return [w.row for w in build_scenario(kind, out_dir, **options)]
