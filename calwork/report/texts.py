"""Fixed wording shared by the workbook and the reports (safety note, labels)."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

__all__ = [
    "SAMPLE_LABELS",
    "SIMULATED_NOTE",
    "component_label",
    "is_simulated",
    "primary_rise",
    "rise_method",
    "simulated_runs",
]

#: Label for anything that comes from simulated (invented) data.
SIMULATED_NOTE = (
    "SIMULATED DATA: some or all of these logs were made by calwork's simulator "
    "(invented data, not measurements)."
)


def is_simulated(thermogram: Any) -> bool:
    """True when a thermogram's metadata says it is simulated (``simulated: true``)."""
    meta: Mapping[str, str] = getattr(thermogram, "metadata", {}) or {}
    return str(meta.get("simulated", "")).strip().lower() in ("true", "yes", "1")


def simulated_runs(reduction: Any) -> list[str]:
    """Run ids whose thermogram is simulated, in the reduction's order."""
    thermograms = reduction.thermograms
    return [r.run for r in reduction.runs
            if r.run in thermograms and is_simulated(thermograms[r.run])]


def primary_rise(run: Any) -> Any:
    """The rise result to show for a run: its own, or for a multi-event log (solution runs)
    the reaction event's (``details['reaction_event_index']``, else the first)."""
    rise = run.rise
    if isinstance(rise, (tuple, list)):
        if not rise:
            return None
        index = getattr(run.details, "reaction_event_index", None)
        if isinstance(index, int) and 0 <= index < len(rise):
            return rise[index]
        return rise[0]
    return rise


def rise_method(run: Any, default: str | None = None) -> str | None:
    """The corrected-rise method behind a run's numbers (``default``: the reduction's)."""
    return getattr(primary_rise(run), "method", None) or default


#: Reader's labels of a sample's result fields (symbol, then unit).
SAMPLE_LABELS = {
    "massic_energy_J_per_g": "massic energy Δu / J g⁻¹",
    "u_massic_energy_J_per_g": "u(Δu) / J g⁻¹",
    "standard_massic_energy_J_per_g": "standard massic energy Δcu° / J g⁻¹",
    "u_standard_massic_energy_J_per_g": "u(Δcu°) / J g⁻¹",
    "delta_c_U_kJ_per_mol": "ΔcU° / kJ mol⁻¹",
    "delta_c_H_kJ_per_mol": "ΔcH° / kJ mol⁻¹",
    "delta_f_H_kJ_per_mol": "ΔfH° / kJ mol⁻¹",
    "u_delta_f_H_kJ_per_mol": "u(ΔfH°) / kJ mol⁻¹",
    "U_delta_f_H_kJ_per_mol": "U(ΔfH°), k = 2 / kJ mol⁻¹",
    "molar_enthalpy_kJ_per_mol": "molar enthalpy ΔH / kJ mol⁻¹",
    "u_molar_enthalpy_kJ_per_mol": "u(ΔH) / kJ mol⁻¹",
    "infinite_dilution_enthalpy_kJ_per_mol": "ΔH at infinite dilution / kJ mol⁻¹",
    "u_infinite_dilution_enthalpy_kJ_per_mol": "u(ΔH at infinite dilution) / kJ mol⁻¹",
}


def component_label(name: str, quantity: str = "") -> str:
    """A budget component in plain words: ``u(Δcu°): certificate`` for the component
    ``certificate_J_per_g`` of the quantity ``standard massic energy Δu°``.

    >>> component_label("key_values_kJ_per_mol", "standard enthalpy of formation Δ_fH°")
    'u(ΔfH°): key values'
    """
    for suffix in ("_J_per_g", "_kJ_per_mol", "_J_per_K", "_percent", "_J", "_K"):
        if name.endswith(suffix):
            name = name[: -len(suffix)]
            break
    words = name.replace("_", " ")
    symbol = quantity.split()[-1] if quantity else ""
    symbol = {"Δu°": "Δcu°"}.get(symbol, symbol).replace("Δ_f", "Δf").replace("Δ_c", "Δc")
    if not symbol:
        return words
    return f"u({symbol}): {words}" if words else f"u({symbol})"
