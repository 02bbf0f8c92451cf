"""Column roles of a temperature log: which header is time, temperature or a channel, in
which unit.

A header name is split into a base and a unit: ``time_s`` → (time, s), ``T [°C]`` →
(T, °C), ``time (min)`` → (time, min), ``temperature / K`` → (temperature, K). The base gives the
role; single letters keep their case (``t`` is time, ``T`` temperature, ``R`` resistance).
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from pathlib import Path

from calwork.core.errors import AmbiguousColumnError, ColumnError, UnitError
from calwork.core.units import parse_temperature_unit, parse_time_unit

__all__ = ["ColumnPlan", "plan_columns", "split_name"]

_TIME = {"time", "elapsed", "elapsed_time", "time_elapsed", "timestamp", "datetime",
         "date_time", "clock", "runtime", "run_time"}
_TEMPERATURE = {"temperature", "temp", "calorimeter_temperature", "vessel_temperature",
                "inner_temperature", "temperature_calorimeter", "calorimeter"}
_JACKET = {"jacket", "jacket_temperature", "jacket_temp", "t_jacket", "temperature_jacket",
           "jacket_t", "surroundings", "surroundings_temperature", "shield",
           "shield_temperature"}
_HEATER_V = {"heater_voltage", "u_heater", "voltage_heater", "heater_u"}
_HEATER_A = {"heater_current", "i_heater", "current_heater", "heater_i"}
_STD_V = {"standard_resistor", "standard_resistor_voltage", "std_resistor", "u_std",
          "u_standard_resistor", "std_resistor_voltage"}
_RESISTANCE = {"resistance", "sensor_resistance", "thermometer_resistance", "r_thermometer",
               "r_sensor", "resistance_thermometer"}
_ELECTRIC = {"v": "V", "a": "A", "ohm": "ohm", "ohms": "ohm", "ω": "ohm"}

_BRACKET = re.compile(r"(.*?)\s*[\[\(]\s*([^\]\)]*?)\s*[\]\)]\s*")
_SLASH = re.compile(r"(.*?)\s*/\s*([^/\s]+)\s*")


def _norm(base: str) -> str:
    return re.sub(r"[\s\-.]+", "_", base.strip()).lower()


def _kind_of_unit(unit: str) -> str | None:
    """'time', 'temperature' (incl. ohm) or 'electric' for a unit text, else None."""
    key = unit.strip().lower()
    if key in _ELECTRIC and key not in ("ohm", "ohms", "ω"):
        return "electric"
    try:
        parse_temperature_unit(unit)
        return "temperature"
    except UnitError:
        pass
    try:
        parse_time_unit(unit)
        return "time"
    except UnitError:
        return None


def _role_of_base(base: str) -> str | None:
    if base in ("t",):
        return "time"
    if base in ("T", "θ"):
        return "temperature"
    if base in ("R",):
        return "resistance"
    key = _norm(base)
    for role, names in (("time", _TIME), ("temperature", _TEMPERATURE), ("jacket", _JACKET),
                        ("heater_V", _HEATER_V), ("heater_A", _HEATER_A),
                        ("standard_resistor_V", _STD_V), ("resistance", _RESISTANCE)):
        if key in names:
            return role
    if key in ("heater", "u", "i", "r", "standard_resistor"):
        return "electric"  # role decided by the unit
    return None


def split_name(name: str) -> tuple[str, str | None, str | None]:
    """``(base, unit text, role)`` of a header name; unit and role may be ``None``."""
    text = name.strip().strip('"').lstrip("\ufeff").strip()
    for pattern in (_BRACKET, _SLASH):
        m = pattern.fullmatch(text)
        if m and m.group(1):
            return m.group(1), m.group(2), _role_of_base(m.group(1))
    role = _role_of_base(text)
    if role is not None and role != "electric":
        return text, None, role
    if "_" in text:
        base, suffix = text.rsplit("_", 1)
        base_role = _role_of_base(base)
        if base_role is not None:
            return base, suffix, base_role
    return text, None, role


@dataclass(frozen=True)
class ColumnPlan:
    """One column to read: its index, header name, role and unit (normalised or ``None``)."""

    index: int
    name: str
    role: str
    unit: str | None
    unit_source: str


def _electric_role(base: str, unit: str) -> str | None:
    u = _ELECTRIC.get(unit.strip().lower())
    key = _norm(base)
    if u == "V":
        return "standard_resistor_V" if "standard" in key or "std" in key else (
            "heater_V" if key in ("heater", "u") else None)
    if u == "A":
        return "heater_A" if key in ("heater", "i") else None
    if u == "ohm":
        return "resistance"
    return None


def _classify(name: str, units_row: str | None, path):
    """(role, normalised unit, where the unit came from, deferred UnitError) for a header."""
    try:
        return (*_classify_strict(name, units_row, path), None)
    except UnitError as err:
        role = split_name(name)[2]
        return (None if role == "electric" else role), None, "", err


def _classify_strict(name: str, units_row: str | None, path):
    base, unit, role = split_name(name)
    source = "header"
    if unit is None and units_row:
        unit, source = units_row, "units row"
    if role is None:
        return None, None, ""
    if unit is None:
        return (None if role == "electric" else role), None, ""
    if role == "electric":
        return _electric_role(base, unit), _ELECTRIC.get(unit.strip().lower()), source
    kind = _kind_of_unit(unit)
    if role in ("time", "temperature") and len(base) == 1 and kind in ("time", "temperature"):
        role = kind  # a single letter with a unit: the unit decides ('t [°C]' is a temperature)
    where = {"path": path, "column": name}
    if role == "time":
        if kind != "time":
            raise UnitError("cannot parse the time unit", found=unit,
                            expected="s, min, h, ms, mm:ss, hh:mm:ss or iso", **where)
        return role, parse_time_unit(unit), source
    if role in ("temperature", "jacket"):
        if kind != "temperature":
            raise UnitError("cannot parse the temperature unit", found=unit,
                            expected="°C, K or ohm", **where)
        norm = parse_temperature_unit(unit)
        if norm == "ohm":
            return ("resistance" if role == "temperature" else None), "ohm", source
        return role, norm, source
    if role in ("heater_V", "standard_resistor_V", "heater_A", "resistance"):
        want = {"heater_V": "V", "standard_resistor_V": "V", "heater_A": "A",
                "resistance": "ohm"}[role]
        got = _ELECTRIC.get(unit.strip().lower())
        if got != want:
            raise UnitError(f"the {role} channel needs unit {want}", found=unit, **where)
        return role, got, source
    return None, None, ""


def _find_named(header: list[str], wanted: str, path, what: str) -> int:
    exact = [i for i, h in enumerate(header) if h.strip() == wanted.strip()]
    if len(exact) == 1:
        return exact[0]
    loose = [i for i, h in enumerate(header) if h.strip().lower() == wanted.strip().lower()]
    if len(exact) > 1 or (not exact and len(loose) > 1):
        hits = exact or loose
        raise AmbiguousColumnError(
            f"{len(hits)} columns are named like the {what} column", path=path, column=wanted,
            candidates=[header[i] for i in hits], found=[header[i] for i in hits],
        )
    if len(loose) == 1:
        return loose[0]
    raise ColumnError(f"no {what} column of that name", path=path, column=wanted,
                      expected=f"one of {header}")


def _pick(cands: list[int], header: list[str], path, role: str, hint: str) -> int | None:
    if len(cands) > 1:
        names = [header[i] for i in cands]
        raise AmbiguousColumnError(
            f"several columns could be the {role} column; name one with {hint}",
            path=path, candidates=names, found=names,
        )
    return cands[0] if cands else None


def plan_columns(
    header: list[str], units: list[str] | None, path: str | Path, *,
    time_column: str | None, temperature_column: str | None, time_unit: str | None,
    temperature_unit: str | None, resistance_source: bool, resistance_fallback: bool = False,
) -> dict[str, ColumnPlan]:
    """Choose the time, temperature and channel columns.

    ``resistance_source`` is true when a sensor is given: a resistance column then becomes the
    temperature source. ``resistance_fallback`` (a sensor named in the preamble) allows a
    resistance column when there is no temperature column. The returned mapping has keys
    ``'time'``, ``'temperature'`` (whose unit is ``'ohm'`` for resistance) and channel roles
    (``'jacket'``, ``'heater_V'``, ``'heater_A'``, ``'standard_resistor_V'``,
    ``'resistance'``).
    """
    roles: list[tuple[str | None, str | None, str, UnitError | None]] = []
    for i, name in enumerate(header):
        unit_cell = units[i] if units is not None and i < len(units) else None
        unit_cell = unit_cell.strip().strip("[]()") if unit_cell else None
        roles.append(_classify(name, unit_cell or None, path))
    by_role: dict[str, list[int]] = {}
    for i, (role, _, _, _) in enumerate(roles):
        if role is not None:
            by_role.setdefault(role, []).append(i)

    def plan(i: int, role: str, unit_arg: str | None, parse, named: bool = False) -> ColumnPlan:
        unit, source, error = roles[i][1], roles[i][2], roles[i][3]
        own = roles[i][0]
        # time against a temperature-like role (temperature, resistance, jacket…): the
        # column's unit is of the wrong kind; a resistance read as temperature is fine
        if (own is not None and (own == "time") != (role == "time") and unit is not None
                and unit_arg is None):
            # a user-named column whose header states a unit of another kind ('jacket_C'
            # as the time column): its unit must not be read as one of this role
            raise ColumnError(f"holds {own} values ({unit}), not {role}",
                              path=path, column=header[i], found=header[i],
                              expected=f"a {role} column (or give its unit with {role}_unit)")
        if unit_arg is not None:
            unit, source = parse(unit_arg), "argument"
        elif error is not None:  # a unit that does not parse matters only for a used column
            raise error
        elif unit is None and named:
            # a column named by the user whose base calwork does not know ('Zeit [min]',
            # 'Widerstand [Ω]'): its header still states the unit, which must not be dropped
            unit_cell = units[i] if units is not None and i < len(units) else None
            unit, source = _named_unit(header[i], unit_cell, role, path)
        return ColumnPlan(index=i, name=header[i], role=role, unit=unit,
                          unit_source=source or "assumed")

    out: dict[str, ColumnPlan] = {}
    if time_column is not None:
        ti = _find_named(header, time_column, path, "time")
    else:
        ti = _pick(by_role.get("time", []), header, path, "time", "time_column")
        if ti is None:
            raise ColumnError(
                "no time column found", path=path, found=header,
                expected="a column such as time_s, time_min, time, t, elapsed or timestamp "
                "(or name it with time_column)",
            )
    out["time"] = plan(ti, "time", time_unit, _time_unit_arg(path),
                       named=time_column is not None)

    ohm_arg = temperature_unit is not None and _temp_unit_arg(path)(temperature_unit) == "ohm"
    if temperature_column is not None:
        Ti = _find_named(header, temperature_column, path, "temperature")
    else:
        temps = [i for i in by_role.get("temperature", []) if i != ti]
        res = [i for i in by_role.get("resistance", []) if i != ti]
        if (resistance_source or ohm_arg) and res:
            Ti = _pick(res, header, path, "resistance", "temperature_column")
        elif temps:
            Ti = _pick(temps, header, path, "temperature", "temperature_column")
        elif res and resistance_fallback:
            Ti = _pick(res, header, path, "resistance", "temperature_column")
        elif res:
            raise ColumnError(
                "the log holds thermometer resistance only; a sensor model is needed",
                path=path, column=header[res[0]],
                expected="sensor='pt100', 'pt1000' or 'steinhart-hart' (--sensor)",
            )
        else:
            raise ColumnError(
                "no temperature column found", path=path, found=header,
                expected="a column such as temperature_C, temperature_K, T, temp_C or temp "
                "(or name it with temperature_column)",
            )
    if Ti == ti:
        raise ColumnError("the time and temperature columns are the same column", path=path,
                          column=header[ti])
    tplan = plan(Ti, "temperature", temperature_unit, _temp_unit_arg(path),
                 named=temperature_column is not None)
    if roles[Ti][0] == "resistance" and temperature_unit is None:
        tplan = ColumnPlan(index=Ti, name=header[Ti], role="temperature", unit="ohm",
                           unit_source=roles[Ti][2] or "column name")
    out["temperature"] = tplan
    for role in ("jacket", "heater_V", "heater_A", "standard_resistor_V", "resistance"):
        cands = [i for i in by_role.get(role, []) if i not in (ti, Ti)]
        ci = _pick(cands, header, path, role, "a unique name")
        if ci is not None:
            out[role] = plan(ci, role, None, str)
    return out


def _named_unit(name: str, unit_cell: str | None, role: str, path) -> tuple[str | None, str]:
    """(normalised unit, source) of a user-named column from its header or units row.

    A bracketed or slashed unit (``Zeit [min]``, ``R / ohm``) or a units-row cell must parse
    as a unit of the column's role; an ``_suffix`` counts only when it does parse
    (``Zeit_min`` yes, ``probe_2`` no).
    """
    parse = parse_time_unit if role == "time" else parse_temperature_unit
    what = "time" if role == "time" else "temperature"
    expected = "s, min, h, ms, mm:ss, hh:mm:ss or iso" if role == "time" else "°C, K or ohm"
    _, unit, _ = split_name(name)
    source = "header"
    if unit is None and unit_cell and unit_cell.strip().strip("[]()").strip():
        unit, source = unit_cell.strip().strip("[]()").strip(), "units row"
    if unit is None:
        text = name.strip().strip('"').lstrip("\ufeff").strip()
        if "_" in text:
            try:
                return parse(text.rsplit("_", 1)[1]), "header"
            except UnitError:
                return None, ""
        return None, ""
    try:
        return parse(unit), source
    except UnitError:
        raise UnitError(f"cannot parse the {what} unit", path=path, column=name, found=unit,
                        expected=expected) from None


def _time_unit_arg(path):
    def parse(text: str) -> str:
        try:
            return parse_time_unit(text)
        except UnitError as err:
            raise err.with_context(path=path, column="time_unit") from None
    return parse


def _temp_unit_arg(path):
    def parse(text: str) -> str:
        try:
            return parse_temperature_unit(text)
        except UnitError as err:
            raise err.with_context(path=path, column="temperature_unit") from None
    return parse
