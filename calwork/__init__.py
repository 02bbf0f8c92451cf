"""calwork: a workbench for calorimetry data reduction.

The public API is re-exported here; internal modules import each other directly.
"""

from calwork.errors import CalworkError
from calwork.formula import element_counts, molar_mass_g_per_mol
from calwork.provenance import Provenance
from calwork.results import CalibrationResult, Reduction, RunResult, SampleResult
from calwork.runinfo import RunInfo
from calwork.thermogram import Thermogram

__all__ = [
    "CalibrationResult",
    "CalworkError",
    "Provenance",
    "Reduction",
    "RunInfo",
    "RunResult",
    "SampleResult",
    "Thermogram",
    "element_counts",
    "molar_mass_g_per_mol",
]
