"""Corrected temperature rise of isoperibol and semi-adiabatic thermograms.

* :func:`detect_periods` — fore, main and after periods (firing / heater-on / ampoule-break
  time by the onset rule, end of the main period by the plateau test; docs/methods.md §1.7).
* :func:`corrected_rise` — ``ΔT_c`` with its standard uncertainty by one of :data:`METHODS`:
  ``'newton-fit'`` (joint Newtonian fit, default), ``'regnault-pfaundler'``, ``'dickinson'``
  (``dickinson_rule='equal-area'`` or ``'60-percent'``).
* :class:`Periods`, :class:`RiseResult` — the records; :func:`plot_rise` — the figure;

The pure Newtonian functions (``exchange_correction_K``, ``newton_drift_K_per_s``, the
Regnault–Pfaundler and Dickinson formulas) are re-exported for direct use.
"""

from calwork.rise.dickinson import (
    DICKINSON_RULES,
    dickinson_exact_tx_s,
    dickinson_rise_K,
    time_at_fraction_s,
)
from calwork.rise.drift import (
    corrected_rise_K,
    exchange_correction_K,
    newton_constants_from_drifts,
    newton_drift_K_per_s,
    newton_temperature_K,
)
from calwork.rise.engine import corrected_rise
from calwork.rise.events import find_events, list_heat_events
from calwork.rise.methods import METHODS
from calwork.rise.periods import Periods, detect_periods
from calwork.rise.regnault_pfaundler import (
    regnault_pfaundler_exchange_K,
    regnault_pfaundler_rise_K,
)
from calwork.rise.result import DriftCurve, RiseResult

__all__ = [
    "DICKINSON_RULES",
    "METHODS",
    "DriftCurve",
    "Periods",
    "RiseResult",
    "corrected_rise",
    "corrected_rise_K",
    "detect_periods",
    "dickinson_exact_tx_s",
    "dickinson_rise_K",
    "exchange_correction_K",
    "find_events",
    "list_heat_events",
    "newton_constants_from_drifts",
    "newton_drift_K_per_s",
    "newton_temperature_K",
    "plot_rise",
    "regnault_pfaundler_exchange_K",
    "regnault_pfaundler_rise_K",
    "time_at_fraction_s",
]


def __getattr__(name: str):
    # plotting pulls in matplotlib: import it on first use
    if name == "plot_rise":
        from calwork.rise.plot import plot_rise

        return plot_rise
    raise AttributeError(f"module 'calwork.rise' has no attribute {name!r}")
