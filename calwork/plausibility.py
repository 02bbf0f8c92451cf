"""Plausibility ranges of inputs with physical units, and the unit slips they recognise.

The ranges and slips live in ``calwork/data/plausibility.toml`` (sources there). A value
outside its range raises; when the value converted from a slipped unit falls inside the
range, the message names the likely unit ("30.4 looks like bar; o2_pressure_MPa expects
MPa"). Callers add the file, line and column to the error.
"""

from __future__ import annotations

from functools import cache
from typing import Any

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import UnitError
from calwork.data import load_data

__all__ = ["PLAUSIBLE_COLUMNS", "check_plausible", "temperature_slip"]


@cache
def _table() -> dict[str, Any]:
    return {k: v for k, v in load_data("plausibility.toml").items() if k != "source"}


#: Inputs that have a plausible range (temperatures are checked by the log reader).
PLAUSIBLE_COLUMNS = frozenset(_table())


def check_plausible(column: str, value: float) -> None:
    """Raise :class:`UnitError` if ``value`` of ``column`` is outside its plausible range.

    Examples
    --------
    >>> check_plausible("o2_pressure_MPa", 3.04)
    >>> check_plausible("o2_pressure_MPa", 30.4)
    Traceback (most recent call last):
    ...
    calwork.core.errors.UnitError: column 'o2_pressure_MPa': 30.4 looks like bar; o2_pressure_MPa \
expects MPa (expected 1 to 4.5 MPa: oxygen bombs are charged to about 3 MPa; got 30.4)
    """
    entry = _table().get(column)
    if entry is None:
        return
    lo, hi = (float(x) for x in entry["range"])
    v = float(value)
    if lo <= v <= hi:
        return
    unit = column.rsplit("_", 1)[-1] if "_" in column else ""
    unit = _UNIT_NAMES.get(column, unit)
    expected = f"{lo:g} to {hi:g} {unit}: {entry.get('note', '')}".rstrip(": ")
    for slip, factor in entry.get("slips", []):
        if lo * float(factor) <= v <= hi * float(factor):
            raise UnitError(f"{v:g} looks like {slip}; {column} expects {unit}", column=column,
                            found=value, expected=expected)
    raise UnitError(f"{v:g} is outside the plausible range for {column}", column=column,
                    found=value, expected=expected)


_UNIT_NAMES = {
    "mass_g": "g", "bomb_water_g": "g", "cotton_g": "g", "aux_mass_g": "g", "fuse_mass_g": "g",
    "solvent_mass_g": "g", "bomb_volume_L": "L", "fuse_burnt_cm": "cm", "acid_titre_mL": "mL",
    "acid_titrant_mol_per_L": "mol/L", "certified_J_per_g": "J/g", "u_certified_J_per_g": "J/g",
    "aux_J_per_g": "J/g", "fuse_J_per_cm": "J/cm", "fuse_J": "J", "ignition_J": "J",
    "heater_power_W": "W", "ampoule_gas_volume_mL": "mL", "o2_pressure_MPa": "MPa",
    "sample_density_g_per_cm3": "g/cm³", "amount_mol": "mol",
}


def temperature_slip(median_value: float, unit: str) -> tuple[str | None, tuple[float, float]]:
    """The likely slip of temperature readings whose median is ``median_value`` read in
    ``unit`` (``'C'``, ``'K'`` or ``'F'``), and the plausible range in that unit.

    Returns ``(None, range)`` when the median is plausible, else the unit it looks like
    (``'K'``, ``'C'``, ``'F'``, or ``'?'`` when none fits).
    """
    lo_C, hi_C = (float(x) for x in _table()["temperature_C"]["range"])
    as_C = {"C": median_value, "K": median_value - CELSIUS_ZERO_K,
            "F": (median_value - 32.0) * 5.0 / 9.0}[unit]
    rng = {"C": (lo_C, hi_C), "K": (lo_C + CELSIUS_ZERO_K, hi_C + CELSIUS_ZERO_K),
           "F": (lo_C * 9 / 5 + 32, hi_C * 9 / 5 + 32)}[unit]
    if lo_C <= as_C <= hi_C:
        return None, rng
    for other, in_C in (("C", median_value), ("K", median_value - CELSIUS_ZERO_K),
                        ("F", (median_value - 32.0) * 5.0 / 9.0)):
        if other != unit and lo_C <= in_C <= hi_C:
            return other, rng
    return "?", rng
