"""calwork: a workbench for calorimetry data reduction.

From temperature logs to corrected temperature rises, energy equivalents, energies of
combustion and solution, and standard enthalpies of formation with correlated uncertainties.

The public API is listed in ``__all__`` and re-exported here. Names are imported on first use
(PEP 562) so that ``import calwork`` and the command line start quickly; internal modules
import each other directly, never through this package root.

Examples
--------
>>> import calwork
>>> round(calwork.molar_mass_g_per_mol("C7H6O2"), 3)
122.123
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

#: public name -> module that defines it
_EXPORTS: dict[str, str] = {}


def _export(module: str, *names: str) -> None:
    for name in names:
        _EXPORTS[name] = module


_export("calwork.core.errors", "CalworkError")
_export("calwork.formula", "element_counts", "molar_mass_g_per_mol")
_export("calwork.core.provenance", "Provenance")
_export("calwork.core.results", "BombRunResult", "CalibrationResult", "Reduction", "RunResult",
        "SampleResult", "SolutionRunResult")
_export("calwork.core.runinfo", "RunInfo")
_export("calwork.core.thermogram", "Thermogram")
_export("calwork.io", "read_log", "read_run_sheet", "load_run_log", "write_log",
        "write_run_sheet", "unknown_columns", "cvd_resistance_ohm", "cvd_temperature_C",
        "steinhart_hart_temperature_K", "steinhart_hart_resistance_ohm")
_export("calwork.simulation", "CalorimeterParams", "CombustionPulse", "HeaterInterval",
        "FirstOrderRelease", "simulate_run", "SimulatedRun", "SimulationTruth", "EventTruth",
        "simulate_scenario", "build_scenario", "ScenarioRun")
_export("calwork.simulation.validation", "validate_methods")
_export("calwork.rise", "corrected_rise", "detect_periods", "Periods", "RiseResult",
        "plot_rise", "find_events", "list_heat_events")
_export("calwork.hess", "parse_species", "Species", "parse_equation", "Reaction", "combine",
        "Combination", "Network", "solve_network", "NetworkResult", "load_key_values",
        "combustion_link", "combustion_link_many", "combustion_reaction", "read_network_file")
_export("calwork.reduce", "reduce_runs", "reduce_sheet")
_export("calwork.bomb", "jessup_factor", "buoyancy_factor", "mass_in_vacuum_g",
        "washburn_correction", "calibration_series", "nitric_acid_energy_J",
        "sulfuric_acid_energy_J", "gross_calorific_value_J_per_g",
        "net_calorific_value_J_per_g", "convert_basis", "convert_calorific_value",
        "fuel_outputs")
_export("calwork.solution", "reduce_solution_runs", "SolutionOptions", "electrical_energy_J",
        "vaporisation_correction_J", "apparent_molar_enthalpy_DH",
        "apparent_molar_enthalpy_pitzer", "extrapolate_to_infinite_dilution",
        "solution_determination", "determination_from_sample", "solve_cycle",
        "write_network_csv")
_export("calwork.core.uncertainty", "propagate", "monte_carlo", "MonteCarloResult")
_export("calwork.core.statistics", "grubbs_test", "series_statistics")
_export("calwork.labbook", "Labbook", "open_labbook")
_export("calwork.qa", "control_chart", "ControlChart", "plot_control_chart")
_export("calwork.report", "write_workbook", "write_report", "safe_filename")
_export("calwork.report.views", "describe")
_export("calwork.core.provenance", "calwork_version")

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name == "__version__":
        return import_module("calwork.core.provenance").calwork_version()
    try:
        module = _EXPORTS[name]
    except KeyError:
        raise AttributeError(f"module 'calwork' has no attribute {name!r}") from None
    value = getattr(import_module(module), name)
    globals()[name] = value  # later look-ups skip this hook
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(__all__))

