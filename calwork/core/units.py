"""Exact conversion factors and unit parsing at the boundary.

Inside calwork everything is SI: s, K, J, g (mass stays in grams as the trade weighs), mol, Pa.
Conversions happen only where data enter or leave.
"""

from __future__ import annotations

import re

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import UnitError

__all__ = [
    "BTU_IT_J",
    "CAL_IT_J",
    "CAL_TH_J",
    "ENERGY_PER_MASS_J_PER_G",
    "POUND_KG",
    "energy_per_mass_from_J_per_g",
    "energy_per_mass_to_J_per_g",
    "parse_temperature_unit",
    "parse_time_unit",
    "temperature_to_K",
    "time_to_s",
]

#: International-table calorie, exact by definition (pint ``international_calorie``).
CAL_IT_J = 4.1868
#: Thermochemical calorie, exact by definition (pint ``thermochemical_calorie``).
CAL_TH_J = 4.184
#: International avoirdupois pound, exact (international yard and pound agreement, 1959).
POUND_KG = 0.45359237
#: British thermal unit (IT): 1 Btu_IT/lb ≡ 1 cal_IT/g × 1.8 K/°F,
#: so Btu_IT = 4.1868 × 453.59237 / 1.8 J = 1055.05585262 J.
BTU_IT_J = CAL_IT_J * POUND_KG * 1000.0 / 1.8

#: Energy-per-mass units and their factor to J/g.
ENERGY_PER_MASS_J_PER_G = {
    "J/g": 1.0,
    "kJ/g": 1000.0,
    "MJ/kg": 1000.0,
    "kJ/kg": 1.0,
    "cal_IT/g": CAL_IT_J,
    "cal_th/g": CAL_TH_J,
    "Btu_IT/lb": BTU_IT_J / (POUND_KG * 1000.0),
}


def energy_per_mass_to_J_per_g(value: float, unit: str) -> float:
    """Convert a massic energy in ``unit`` to J/g (exact factors)."""
    try:
        return value * ENERGY_PER_MASS_J_PER_G[unit]
    except KeyError:
        valid = str(sorted(ENERGY_PER_MASS_J_PER_G))
        raise UnitError("unknown energy-per-mass unit", found=unit, expected=valid) from None


def energy_per_mass_from_J_per_g(value_J_per_g: float, unit: str) -> float:
    """Convert a massic energy in J/g to ``unit`` (exact factors).

    Examples
    --------
    >>> round(energy_per_mass_from_J_per_g(26454.0, "Btu_IT/lb"), 1)
    11373.2
    """
    return value_J_per_g / energy_per_mass_to_J_per_g(1.0, unit)


_TIME_UNITS = {
    "s": 1.0, "sec": 1.0, "second": 1.0, "seconds": 1.0,
    "ms": 1e-3,
    "min": 60.0, "minute": 60.0, "minutes": 60.0, "m": 60.0,
    "h": 3600.0, "hr": 3600.0, "hour": 3600.0, "hours": 3600.0,
}
_CLOCK_UNITS = {"mm:ss", "hh:mm:ss", "iso", "iso8601", "timestamp", "clock"}

_TEMPERATURE_UNITS = {
    "c": "C", "°c": "C", "degc": "C", "deg c": "C", "celsius": "C", "oc": "C", "º c": "C",
    "ºc": "C", "℃": "C",
    "k": "K", "kelvin": "K",
    "f": "F", "°f": "F", "degf": "F", "deg f": "F", "fahrenheit": "F", "℉": "F",
    "ohm": "ohm", "ω": "ohm", "ohms": "ohm", "Ω": "ohm",
}


def parse_time_unit(text: str) -> str:
    """Normalise a time unit: returns ``'s'``, ``'min'``, ``'h'``, ``'ms'`` or a clock format."""
    key = text.strip().lower()
    if key in _CLOCK_UNITS:
        return {"iso8601": "iso", "timestamp": "iso", "clock": "hh:mm:ss"}.get(key, key)
    if key in _TIME_UNITS:
        factor = _TIME_UNITS[key]
        return {1.0: "s", 60.0: "min", 3600.0: "h", 1e-3: "ms"}[factor]
    raise UnitError(
        "unknown time unit", found=text, expected="s, min, h, ms, mm:ss, hh:mm:ss or iso"
    )


def time_to_s(value: float, unit: str) -> float:
    """Convert a numeric time in a normalised ``unit`` to seconds."""
    return value * _TIME_UNITS[parse_time_unit(unit)]


def parse_temperature_unit(text: str) -> str:
    """Normalise a temperature unit to ``'C'``, ``'K'``, ``'F'`` or ``'ohm'`` (raw sensor
    resistance)."""
    key = re.sub(r"\s+", " ", text.strip()).lower()
    if key in _TEMPERATURE_UNITS:
        return _TEMPERATURE_UNITS[key]
    if text.strip() in _TEMPERATURE_UNITS:
        return _TEMPERATURE_UNITS[text.strip()]
    raise UnitError("unknown temperature unit", found=text, expected="°C, K, °F or ohm")


def temperature_to_K(value, unit: str):
    """Convert a temperature (not a difference) in ``'C'``, ``'K'`` or ``'F'`` to kelvin."""
    unit = parse_temperature_unit(unit)
    if unit == "C":
        return value + CELSIUS_ZERO_K
    if unit == "K":
        return value
    if unit == "F":
        return (value - 32.0) * (5.0 / 9.0) + CELSIUS_ZERO_K
    raise UnitError("a resistance needs a sensor model to become a temperature", found=unit)
