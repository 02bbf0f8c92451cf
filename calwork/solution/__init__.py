"""Solution calorimetry: electrical calibration, reaction runs, blanks, vaporisation,
Debye–Hückel / Pitzer ΦL and extrapolation to infinite dilution, thermochemical cycles.

* :mod:`.electrical` — heater power (``heater_V`` × ``heater_A`` or ``V_s/R_s``), heater
  intervals, ``Q = ∫ V I dt``, ``ε = Q/ΔT_c`` (docs/methods.md §2.3).
* :mod:`.analysis` — one log: events → corrected rises → in-log calibrations.
* :mod:`.reaction` — Δ_rH = −(ε ΔT_c − Σq)/n, the (2.2) referral rule, amounts, molality.
* :mod:`.blanks`, :mod:`.vaporisation` — ampoule-breaking and vaporisation corrections (§2.4).
* :mod:`.dilution` — ΦL (limiting, extended Debye–Hückel, Pitzer) and the extrapolation.
* :mod:`.cycles` — solution results as Hess determinations; cycle files; network CSV export.
* :mod:`.chain` — :func:`reduce_solution_runs`, the pipeline entry point.

Submodules are imported on first use so that ``import calwork.solution`` stays light.
"""

from __future__ import annotations

import importlib

__all__ = [
    "SolutionOptions",
    "apparent_molar_enthalpy_DH",
    "apparent_molar_enthalpy_pitzer",
    "blank_correction",
    "determination_from_sample",
    "electrical_energy_J",
    "extrapolate_to_infinite_dilution",
    "heater_power_W",
    "molar_enthalpy_J_per_mol",
    "reduce_solution_runs",
    "refer_energy_equivalent",
    "solution_determination",
    "solve_cycle",
    "vaporisation_correction_J",
    "water_vapour_pressure_Pa",
    "write_network_csv",
]

_WHERE = {
    "SolutionOptions": "analysis",
    "apparent_molar_enthalpy_DH": "dilution",
    "apparent_molar_enthalpy_pitzer": "dilution",
    "blank_correction": "blanks",
    "determination_from_sample": "cycles",
    "electrical_energy_J": "electrical",
    "extrapolate_to_infinite_dilution": "dilution",
    "heater_power_W": "electrical",
    "molar_enthalpy_J_per_mol": "reaction",
    "reduce_solution_runs": "chain",
    "refer_energy_equivalent": "reaction",
    "solution_determination": "cycles",
    "solve_cycle": "cycles",
    "vaporisation_correction_J": "vaporisation",
    "water_vapour_pressure_Pa": "vaporisation",
    "write_network_csv": "cycles",
}


def __getattr__(name: str):
    if name in _WHERE:
        module = importlib.import_module(f"calwork.solution.{_WHERE[name]}")
        return getattr(module, name)
    raise AttributeError(f"module 'calwork.solution' has no attribute {name!r}")
