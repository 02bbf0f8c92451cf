"""Corrected temperature rise of isoperibol and semi-adiabatic thermograms.

* :func:`detect_periods` — fore, main and after periods (firing / heater-on / ampoule-break
  time by the onset rule, end of the main period by the plateau test; docs/methods.md §1.7).
* :func:`corrected_rise` — ``ΔT_c`` with its standard uncertainty by one of :data:`METHODS`:
  ``'newton-fit'`` (joint Newtonian fit, default), ``'regnault-pfaundler'``, ``'dickinson'``
  (``dickinson_rule='equal-area'`` or ``'60-percent'``).
* :class:`Periods`, :class:`RiseResult` — the records; :func:`plot_rise` — the figure;

The pure functions the methods are built of (``corrected_rise_K``, ``drift_rate_K_per_s``,
``exchange_from_drift_K``, ``newton_constants_from_drifts``, the Regnault–Pfaundler and
Dickinson formulas) are re-exported for direct use; they are the ones the fits call. :data:`METHODS`
is the registry of rise methods (:mod:`calwork.rise.registry`).

Names are imported on first use (PEP 562), so that ``calwork.rise.registry`` — what the
command line needs to build its help — loads no numerical code.
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

#: public name -> submodule that defines it
_WHERE = {
    "DICKINSON_RULES": "registry",
    "METHODS": "registry",
    "RiseMethod": "registry",
    "DriftCurve": "result",
    "Periods": "periods",
    "RiseResult": "result",
    "corrected_rise": "engine",
    "corrected_rise_K": "drift",
    "detect_periods": "periods",
    "dickinson_exact_tx_s": "dickinson",
    "dickinson_rise_K": "dickinson",
    "drift_rate_K_per_s": "drift",
    "exchange_from_drift_K": "drift",
    "find_events": "events",
    "list_heat_events": "events",
    "MANUAL_PROCEDURES": "manual",
    "manual_rise": "manual",
    "newton_constants_from_drifts": "drift",
    "plot_rise": "plot",
    "regnault_pfaundler_exchange_K": "regnault_pfaundler",
    "regnault_pfaundler_rise_K": "regnault_pfaundler",
    "time_at_fraction_s": "dickinson",
}

__all__ = sorted(_WHERE)


def __getattr__(name: str) -> Any:
    try:
        module = _WHERE[name]
    except KeyError:
        raise AttributeError(f"module 'calwork.rise' has no attribute {name!r}") from None
    value = getattr(import_module(f"calwork.rise.{module}"), name)
    globals()[name] = value  # later look-ups skip this hook
    return value


def __dir__() -> list[str]:
    return sorted(__all__)
