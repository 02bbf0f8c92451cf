"""The RunInfo record: one row of a run sheet, typed, in the units its column names say."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field, fields
from pathlib import Path
from types import MappingProxyType
from typing import Any

from calwork.core.errors import RunError
from calwork.core.logtime import LogTime, on_axis_s, parse_log_time

__all__ = [
    "BOMB_KINDS",
    "EXTENSION_COLUMNS",
    "NON_NEGATIVE_COLUMNS",
    "POSITIVE_COLUMNS",
    "RUN_KINDS",
    "RUN_SHEET_COLUMNS",
    "SOLUTION_KINDS",
    "TIME_COLUMNS",
    "RunInfo",
    "column_problem",
    "within_limits",
]

#: Run kinds of the oxygen-bomb chain (:func:`calwork.bomb.pipeline.reduce_bomb_runs`).
BOMB_KINDS = ("calibration", "combustion")
#: Run kinds of the solution chain (:func:`calwork.solution.chain.reduce_solution_runs`).
SOLUTION_KINDS = ("electrical", "solution", "blank")
#: The run kinds a sheet may name (contract).
RUN_KINDS = BOMB_KINDS + SOLUTION_KINDS

#: Contract columns of a run sheet and their Python types (``float`` cells in the units of the
#: name's suffix). Blank cells mean "not given".
RUN_SHEET_COLUMNS: dict[str, type] = {
    "run": str,
    "kind": str,
    "log": str,
    "calorimeter": str,
    "sample": str,
    "formula": str,
    "phase": str,
    "mass_g": float,
    "reference_material": str,
    "certified_J_per_g": float,
    "ignition_J": float,
    "fuse_burnt_cm": float,
    "fuse_J_per_cm": float,
    "fuse_J": float,
    "cotton_g": float,
    "aux_mass_g": float,
    "aux_J_per_g": float,
    "acid_titre_mL": float,
    "acid_titrant_mol_per_L": float,
    "sulfur_mass_fraction": float,
    "o2_pressure_MPa": float,
    "bomb_volume_L": float,
    "bomb_water_g": float,
    "amount_mol": float,
    "solvent_mass_g": float,
    "heater_power_W": float,
    "heater_on_s": float,
    "heater_off_s": float,
    "standard_resistor_ohm": float,
    "ampoule_gas_volume_mL": float,
    "time_column": str,
    "temperature_column": str,
    "time_unit": str,
    "temperature_unit": str,
    "notes": str,
}

#: calwork's own optional columns beyond the contract (documented in the README).
EXTENSION_COLUMNS: dict[str, type] = {
    "date": str,                       # ISO 8601 date or date-time of the run (QA ordering)
    "operator": str,
    "mass_basis": str,                 # 'vacuum' (default) or 'air' (apply buoyancy)
    "sample_density_g_per_cm3": float, # for buoyancy and the bomb gas volume
    "u_certified_J_per_g": float,      # standard uncertainty (k = 1) of certified_J_per_g
    "fuse_material": str,              # 'iron', 'nickel-chromium', 'platinum', 'cotton'...
    "fuse_mass_g": float,
    "soot_g": float,                   # unburnt carbon found after the run
    "fire_time_s": LogTime,            # override of the detected firing / start time
    "main_end_s": LogTime,             # override of the detected end of the main period
    #                                    (seconds, a time with a unit or a clock time in the
    #                                    log's notation: calwork.core.logtime)
    "fore_start_s": LogTime,           # readings before this time are left out (a limit)
    "after_end_s": LogTime,            # readings after this time are left out (a limit)
    "rise_method": str,                # this run's corrected-rise method (else the reduction's)
    "event": int,                      # which heat event of a multi-event log (1-based)
    "sensor": str,                     # 'pt100', 'pt1000', 'steinhart-hart' for resistance logs
    "hydrogen_mass_fraction": float,   # fuel outputs (net calorific value)
    "oxygen_mass_fraction": float,
    "nitrogen_mass_fraction": float,
    "moisture_mass_fraction": float,
    "ash_mass_fraction": float,
    "sulfur_convention": str,          # 'fuel' (SO2(g)) or 'thermochemical' (H2SO4·115H2O)
}


#: Columns holding a time on the log's axis (seconds, a time with a unit or a clock time).
TIME_COLUMNS = ("fire_time_s", "main_end_s", "fore_start_s", "after_end_s")

#: Quantities that must be > 0 where given.
POSITIVE_COLUMNS = frozenset({
    "mass_g", "cotton_g", "aux_mass_g", "bomb_water_g", "solvent_mass_g", "fuse_mass_g",
    "bomb_volume_L", "ampoule_gas_volume_mL", "o2_pressure_MPa", "amount_mol",
    "certified_J_per_g", "standard_resistor_ohm", "acid_titrant_mol_per_L",
    "sample_density_g_per_cm3", "u_certified_J_per_g",
})
#: Quantities that must be ≥ 0 where given.
NON_NEGATIVE_COLUMNS = frozenset({
    "acid_titre_mL", "soot_g", "fuse_burnt_cm", "fuse_J_per_cm", "fuse_J", "ignition_J",
    "heater_power_W",
})


def column_problem(name: str, value: float) -> tuple[str, str] | None:
    """``(what is wrong, what was expected)`` if ``value`` breaks the rule of sheet column
    ``name`` (finite; > 0, ≥ 0, or a mass fraction in [0, 1], as the column says), else
    ``None``. The one definition of these rules: the sheet reader and :class:`RunInfo` both
    apply it."""
    v = float(value)
    if name in POSITIVE_COLUMNS and not (math.isfinite(v) and v > 0.0):
        return "must be a positive number", "a number > 0"
    if name in NON_NEGATIVE_COLUMNS and not (math.isfinite(v) and v >= 0.0):
        return "must not be negative", "a number ≥ 0"
    if name.endswith("_mass_fraction") and not (math.isfinite(v) and 0.0 <= v <= 1.0):
        return "a mass fraction must lie between 0 and 1", "0 ≤ value ≤ 1 (not percent)"
    return None


@dataclass(frozen=True, kw_only=True)
class RunInfo:
    """One run as described by a run sheet.

    Every contract column is an attribute (``None`` when the cell is blank). ``log_path`` is
    the resolved log file; ``sheet_path`` and ``line`` locate the row for error messages;
    ``extra`` keeps unknown columns verbatim.
    """

    run: str
    kind: str
    log: str | None = None
    calorimeter: str | None = None
    sample: str | None = None
    formula: str | None = None
    phase: str | None = None
    mass_g: float | None = None
    reference_material: str | None = None
    certified_J_per_g: float | None = None
    ignition_J: float | None = None
    fuse_burnt_cm: float | None = None
    fuse_J_per_cm: float | None = None
    fuse_J: float | None = None
    cotton_g: float | None = None
    aux_mass_g: float | None = None
    aux_J_per_g: float | None = None
    acid_titre_mL: float | None = None
    acid_titrant_mol_per_L: float | None = None
    sulfur_mass_fraction: float | None = None
    o2_pressure_MPa: float | None = None
    bomb_volume_L: float | None = None
    bomb_water_g: float | None = None
    amount_mol: float | None = None
    solvent_mass_g: float | None = None
    heater_power_W: float | None = None
    heater_on_s: float | None = None
    heater_off_s: float | None = None
    standard_resistor_ohm: float | None = None
    ampoule_gas_volume_mL: float | None = None
    time_column: str | None = None
    temperature_column: str | None = None
    time_unit: str | None = None
    temperature_unit: str | None = None
    notes: str | None = None
    # calwork extensions
    date: str | None = None
    operator: str | None = None
    mass_basis: str | None = None
    sample_density_g_per_cm3: float | None = None
    u_certified_J_per_g: float | None = None
    fuse_material: str | None = None
    fuse_mass_g: float | None = None
    soot_g: float | None = None
    #: seconds on the log's axis, or a clock time (:class:`~calwork.core.logtime.LogTime`)
    #: that the chain places on the log's axis
    fire_time_s: float | LogTime | None = None
    main_end_s: float | LogTime | None = None
    fore_start_s: float | LogTime | None = None
    after_end_s: float | LogTime | None = None
    rise_method: str | None = None
    event: int | None = None
    sensor: str | None = None
    hydrogen_mass_fraction: float | None = None
    oxygen_mass_fraction: float | None = None
    nitrogen_mass_fraction: float | None = None
    moisture_mass_fraction: float | None = None
    ash_mass_fraction: float | None = None
    sulfur_convention: str | None = None
    # location and leftovers
    log_path: Path | None = None
    sheet_path: Path | None = None
    line: int | None = None
    extra: Mapping[str, str] = field(default_factory=dict)
    #: Row-level problems found while reading a sheet leniently (``strict=False``): the
    #: errors themselves, so the run can be reported as failed instead of stopping the sheet.
    problems: tuple[Exception, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "extra", MappingProxyType(dict(self.extra)))
        for name in TIME_COLUMNS:  # a time as written (a stored row, the API)
            value = getattr(self, name)
            if isinstance(value, str):
                object.__setattr__(self, name, parse_log_time(value, column=name))
        # the column rules are checked here, once, however the record was made (sheet, API,
        # an amendment): a broken value becomes a problem of the run, reported, never used
        problems = list(self.problems)
        named = {getattr(p, "column", None) for p in problems}
        for name in (*POSITIVE_COLUMNS, *NON_NEGATIVE_COLUMNS):
            value = getattr(self, name, None)
            if value is None or name in named or isinstance(value, bool):
                continue
            found = column_problem(name, value)
            if found is not None:
                problems.append(RunError(found[0], column=name, found=value,
                                         expected=found[1], run=self.run))
        object.__setattr__(self, "problems", tuple(problems))

    def given(self) -> dict[str, object]:
        """The sheet columns that were filled in (contract and extension columns)."""
        names = set(RUN_SHEET_COLUMNS) | set(EXTENSION_COLUMNS)
        return {
            f.name: getattr(self, f.name)
            for f in fields(self)
            if f.name in names and getattr(self, f.name) is not None
        }


def within_limits(info: RunInfo, thermogram: Any) -> Any:
    """The readings of ``thermogram`` between the run's ``fore_start_s`` and ``after_end_s``
    (each a limit when given: readings before the first and after the second are left out,
    e.g. a disturbance before the fore period or a lid opened after the run); the whole
    record when neither is given.

    Raises
    ------
    RunError
        The limits are out of order, or fewer than two readings lie between them.
    """
    if info.fore_start_s is None and info.after_end_s is None:
        return thermogram
    t = thermogram.time_s
    start = on_axis_s(info.fore_start_s, thermogram, column="fore_start_s")
    end = on_axis_s(info.after_end_s, thermogram, column="after_end_s")
    lo = float(t[0]) if start is None else float(start)
    hi = float(t[-1]) if end is None else float(end)
    if not hi > lo:
        raise RunError("the after-period end must come after the fore-period start",
                       run=info.run, column="after_end_s", found=(lo, hi),
                       expected="fore_start_s < after_end_s on the log's time axis")
    limited = thermogram.window(lo, hi)
    if limited.n_points < 2:
        raise RunError("fewer than two readings lie between fore_start_s and after_end_s",
                       run=info.run, column="fore_start_s", found=(lo, hi),
                       expected=f"limits inside the record ({float(t[0]):g} to "
                       f"{float(t[-1]):g} s)")
    return limited
