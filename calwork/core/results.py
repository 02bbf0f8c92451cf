"""Result records of the reduction chain (run → calibration/sample → reduction).

These are shared by the bomb and solution chains, the lab book and the reports. JSON keys of
``to_dict()`` are part of the command-line contract (see DEVELOPERS.md); fields that do not
apply to a run's kind are not in its record (:class:`BombRunResult`,
:class:`SolutionRunResult`) and not in its JSON; the ones that apply but have no value are
``null``.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, field, fields
from types import MappingProxyType
from typing import Any, ClassVar

from calwork.core.errors import UncertaintyError
from calwork.core.provenance import Provenance
from calwork.core.runinfo import BOMB_KINDS, RUN_KINDS, SOLUTION_KINDS
from calwork.core.uncertainty import Budget

__all__ = [
    "BombRunDetails",
    "BombRunResult",
    "CalibrationResult",
    "ChainResult",
    "Reduction",
    "RunDetails",
    "RunResult",
    "SampleResult",
    "SolutionRunDetails",
    "SolutionRunResult",
    "failed_run",
    "jsonable",
    "run_result",
]


def jsonable(value: Any) -> Any:
    """Turn records, mappings, tuples, numpy scalars and non-finite floats into JSON values."""
    if hasattr(value, "to_dict"):
        return value.to_dict()
    if isinstance(value, Mapping):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [jsonable(v) for v in value]
    if hasattr(value, "tolist"):  # numpy arrays and scalars
        return jsonable(value.tolist())
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def _check_budget(*budgets: Any) -> None:
    for budget in budgets:
        if not isinstance(budget, Budget):
            raise TypeError("a result's budget is a calwork.core.uncertainty.Budget (each "
                            f"component with its unit), not {type(budget).__name__}")


def _check_values(obj: Any) -> None:
    """Validation on construction: a known run kind, and every standard (``u_…``) or expanded
    (``U_…``) uncertainty either absent or a finite, non-negative number."""
    kind = getattr(obj, "kind", None)
    if kind is not None and kind not in RUN_KINDS:
        raise ValueError(f"unknown run kind {kind!r}: one of {sorted(RUN_KINDS)}")
    for f in fields(obj):
        if f.name.startswith(("u_", "U_")):
            value = getattr(obj, f.name)
            if value is None:
                continue
            if isinstance(value, bool) or not isinstance(value, int | float) or not (
                    math.isfinite(value) and value >= 0.0):
                raise UncertaintyError(f"{type(obj).__name__}.{f.name} must be a finite, "
                                       "non-negative uncertainty", found=value)


def _from_dict(cls: type, data: Mapping[str, Any]) -> Any:
    """The record ``to_dict`` wrote (unknown keys are ignored; the provenance and the
    budgets are rebuilt as records)."""
    names = {f.name for f in fields(cls)}
    kwargs = {k: v for k, v in data.items() if k in names}
    if isinstance(kwargs.get("provenance"), Mapping):
        kwargs["provenance"] = Provenance.from_dict(kwargs["provenance"])
    if isinstance(kwargs.get("budget"), Mapping):
        kwargs["budget"] = Budget.from_dict(kwargs["budget"])
    if isinstance(kwargs.get("derived_budgets"), Mapping):
        kwargs["derived_budgets"] = {k: Budget.from_dict(v)
                                     for k, v in kwargs["derived_budgets"].items()}
    return cls(**kwargs)  # the records turn JSON lists back into tuples themselves


class _Record:
    """JSON form of a result record: :meth:`to_dict` and :meth:`from_dict` read each other."""

    def to_dict(self) -> dict[str, Any]:
        return {f.name: jsonable(getattr(self, f.name)) for f in fields(self)}  # type: ignore

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> Any:
        """The record :meth:`to_dict` wrote (``RunResult.rise`` is not serialised)."""
        return _from_dict(cls, data)


def _freeze(obj: Any, *names: str) -> None:
    for name in names:
        object.__setattr__(obj, name, MappingProxyType(dict(getattr(obj, name))))



@dataclass(frozen=True, kw_only=True)
class RunDetails(Mapping[str, Any]):
    """The numbers behind one run's result, beyond the contract fields; each run kind has its
    record (:class:`BombRunDetails`, :class:`SolutionRunDetails`) with typed, named fields.

    Reports read the attributes. The record also reads as a mapping of the fields that are
    given (what the JSON holds), and a mapping with an unknown key is refused — so a writer
    cannot add a number no reader knows about.
    """

    def __getitem__(self, key: str) -> Any:
        if key not in self._names():
            raise KeyError(key)
        value = getattr(self, key)
        if value is None:
            raise KeyError(key)
        return value

    def __iter__(self) -> Iterator[str]:
        return (k for k in self._names() if getattr(self, k) is not None)

    def __len__(self) -> int:
        return sum(1 for _ in self)

    @classmethod
    def _names(cls) -> tuple[str, ...]:
        return tuple(f.name for f in fields(cls))

    @classmethod
    def from_mapping(cls, data: Mapping[str, Any]) -> RunDetails:
        unknown = sorted(set(data) - set(cls._names()))
        if unknown:
            raise ValueError(f"{cls.__name__} has no field {unknown}: add it to the record "
                             "(with its unit in the name) before a stage writes it")
        return cls(**dict(data))

    def to_dict(self) -> dict[str, Any]:
        return {k: jsonable(getattr(self, k)) for k in self}


@dataclass(frozen=True, kw_only=True)
class BombRunDetails(RunDetails):
    """Details of a calibration or combustion run of the oxygen-bomb chain."""

    mass_basis: str | None = None
    buoyancy_factor: float | None = None
    mass_vacuum_g: float | None = None
    correction_constants: Mapping[str, Any] | None = None
    u_corrections_J: Mapping[str, float] | None = None
    u_corrections_J_per_g: Mapping[str, float] | None = None
    nitric_acid_mol: float | None = None
    sulfur_mol: float | None = None
    sulfur_convention: str | None = None
    cotton_g_vacuum: float | None = None
    aux_mass_g_vacuum: float | None = None
    contents_included: bool | None = None
    eps_initial_contents_J_per_K: float | None = None
    eps_final_contents_J_per_K: float | None = None
    contents_referral_J: float | None = None
    washburn_terms_J: Mapping[str, float] | None = None
    washburn_u_J: float | None = None
    washburn_u_components_J: Mapping[str, float] | None = None
    reference_material: str | None = None
    certified_J_per_g: float | None = None
    u_certificate_relative: float | None = None
    certificate_source: str | None = None
    certificate_condition_factor: bool | None = None
    jessup_factor: float | None = None
    jessup_temperature_C: float | None = None
    reference_material_energy_J: float | None = None
    heat_released_J: float | None = None
    heat_measured_J: float | None = None
    calibration_runs: tuple[str, ...] | None = None
    d_massic_energy_d_epsilon_K_per_g: float | None = None
    u_massic_energy_rise_J_per_g: float | None = None
    massic_energy_fuel_convention_J_per_g: float | None = None


@dataclass(frozen=True, kw_only=True)
class SolutionRunDetails(RunDetails):
    """Details of an electrical, blank or solution run of the solution chain."""

    calibrations: tuple[Any, ...] | None = None
    events: tuple[Any, ...] | None = None
    budget_J_per_K: Mapping[str, float] | None = None
    calibration_basis: str | None = None
    measured_heat_J: float | None = None
    u_reaction_heat_J: float | None = None
    amount_mol: float | None = None
    u_amount_mol: float | None = None
    amount_source: str | None = None
    budget_kJ_per_mol: Mapping[str, float] | None = None
    u_independent_kJ_per_mol: float | None = None
    energy_equivalent_budget_J_per_K: Mapping[str, float] | None = None
    reaction_event_index: int | None = None
    blank: Mapping[str, Any] | None = None
    vaporisation: Mapping[str, Any] | None = None


def _details_for(kind: str, data: Any) -> RunDetails:
    record = BombRunDetails if kind in BOMB_KINDS else SolutionRunDetails
    if isinstance(data, RunDetails):
        if not isinstance(data, record):
            raise TypeError(f"the details of a {kind} run are a {record.__name__}, not a "
                            f"{type(data).__name__}")
        return data
    return record.from_mapping(data or {})


def _check_rise(obj: Any, rise: Any) -> None:
    """A rise record has a corrected rise; anything else in ``rise`` is a writer's slip."""
    if rise is not None and not hasattr(rise, "corrected_rise_K"):
        raise TypeError(f"{type(obj).__name__}.rise holds corrected-rise records "
                        f"(calwork.rise.RiseResult), not {type(rise).__name__}")


@dataclass(frozen=True, kw_only=True)
class RunResult(_Record):
    """The reduced result of one run: the part every run kind has.

    Each run kind has its own record: :class:`BombRunResult` (calibration and combustion runs
    of the oxygen-bomb chain) and :class:`SolutionRunResult` (electrical, solution and blank
    runs); build one with :func:`run_result` when the kind is only known at run time.
    ``RunResult`` itself is not built. Failed runs carry ``error`` and no numbers beyond the
    rise, if one was computed.
    """

    #: The run kinds this record serves.
    KINDS: ClassVar[tuple[str, ...]] = RUN_KINDS

    run: str
    kind: str
    sample: str | None = None
    calorimeter: str | None = None
    corrected_rise_K: float | None = None
    u_corrected_rise_K: float | None = None
    #: Correction energies in J, positive when the process releases heat into the calorimeter
    #: (ignition, fuse, cotton, aux, nitric acid, vaporisation...), each with the name of its
    #: constant.
    corrections_J: Mapping[str, float] = field(default_factory=dict)
    energy_equivalent_J_per_K: float | None = None
    u_energy_equivalent_J_per_K: float | None = None
    reference_temperature_K: float | None = None
    warnings: tuple[str, ...] = ()
    error: str | None = None
    #: The numbers behind the result (mass in vacuum, certificate factor, ...), a typed record
    #: per run kind (:class:`BombRunDetails`, :class:`SolutionRunDetails`).
    details: RunDetails = field(default_factory=dict)  # type: ignore[assignment]
    provenance: Provenance | None = None
    #: The period boundaries of the rise behind the numbers, s on the log's axis, and where
    #: each came from (``fire_source``/``main_end_source``: detected, given, heater-channel):
    #: taken from the rise record when there is one, kept when read back from JSON.
    periods: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        if type(self) is RunResult:
            raise TypeError("RunResult is the part every run kind shares: build a "
                            "BombRunResult or a SolutionRunResult (or run_result(kind, ...))")
        _check_values(self)
        if self.kind not in self.KINDS:
            raise ValueError(f"{type(self).__name__} serves the run kinds {list(self.KINDS)}, "
                             f"not {self.kind!r}")
        object.__setattr__(self, "details", _details_for(self.kind, self.details))
        if not self.periods:
            object.__setattr__(self, "periods", _periods_of(self))
        _freeze(self, "corrections_J", "periods")
        object.__setattr__(self, "warnings", tuple(self.warnings))

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dictionary with the contract keys: every run carries the same keys
        (the other kinds' fields as ``null``, as the JSON contract allows), in one order;
        ``rise`` is not serialised."""
        own = {f.name for f in fields(self)}
        out = {name: jsonable(getattr(self, name)) if name in own else None
               for name in _RUN_JSON_KEYS}
        out["provenance"] = None if self.provenance is None else self.provenance.to_dict()
        return out

    @classmethod
    def from_dict(cls, data: Mapping[str, Any]) -> RunResult:
        """The record :meth:`to_dict` wrote, of the class its ``kind`` calls for (a null
        field of another run kind, as older lab books stored them, is ignored)."""
        record = _RUN_RECORDS.get(data.get("kind"), RunResult)
        if record is RunResult:
            raise ValueError(f"unknown run kind {data.get('kind')!r}: one of "
                             f"{sorted(RUN_KINDS)}")
        if not issubclass(record, cls):
            raise ValueError(f"a {data.get('kind')} run is a {record.__name__}, not a "
                             f"{cls.__name__}")
        names = {f.name for f in fields(record)}
        foreign = sorted(k for k, v in data.items() if k not in names and v is not None
                         and k in _ALL_RUN_FIELDS)
        if foreign:
            raise ValueError(f"a {data.get('kind')} run has no field {foreign}")
        return _from_dict(record, data)


@dataclass(frozen=True, kw_only=True)
class BombRunResult(RunResult):
    """A calibration or combustion run of the oxygen-bomb chain."""

    KINDS: ClassVar[tuple[str, ...]] = BOMB_KINDS

    #: Massic energy of the bomb process, J/g (ΔU/m; negative for a combustion).
    massic_energy_J_per_g: float | None = None
    #: The same reduced to the standard state (Washburn corrections), J/g.
    standard_massic_energy_J_per_g: float | None = None
    washburn_J: float | None = None
    #: The corrected-rise record (:class:`calwork.rise.RiseResult`) behind the numbers.
    rise: Any = None
    details: BombRunDetails = field(  # type: ignore[assignment]
        default_factory=BombRunDetails)

    def __post_init__(self) -> None:
        super().__post_init__()
        _check_rise(self, self.rise)


@dataclass(frozen=True, kw_only=True)
class SolutionRunResult(RunResult):
    """An electrical calibration, a solution (reaction) or a blank run."""

    KINDS: ClassVar[tuple[str, ...]] = SOLUTION_KINDS

    heater_energy_J: float | None = None
    reaction_heat_J: float | None = None
    molar_enthalpy_kJ_per_mol: float | None = None
    u_molar_enthalpy_kJ_per_mol: float | None = None
    final_molality_mol_per_kg: float | None = None
    dilution_ratio: float | None = None
    #: The corrected-rise records of the log's heat events, in time order.
    rise: tuple[Any, ...] | None = None
    details: SolutionRunDetails = field(  # type: ignore[assignment]
        default_factory=SolutionRunDetails)

    def __post_init__(self) -> None:
        super().__post_init__()
        if self.rise is not None:
            rises = (self.rise,) if hasattr(self.rise, "corrected_rise_K") else tuple(self.rise)
            for rise in rises:
                _check_rise(self, rise)
            object.__setattr__(self, "rise", rises)


_RUN_RECORDS: dict[Any, type[RunResult]] = {
    **dict.fromkeys(BOMB_KINDS, BombRunResult), **dict.fromkeys(SOLUTION_KINDS,
                                                                SolutionRunResult)}
_ALL_RUN_FIELDS = frozenset(f.name for record in (BombRunResult, SolutionRunResult)
                            for f in fields(record))
#: The keys of a run's JSON, in their order (the contract keys first).
_RUN_JSON_KEYS = (
    "run", "kind", "sample", "calorimeter", "corrected_rise_K", "u_corrected_rise_K",
    "corrections_J", "energy_equivalent_J_per_K", "u_energy_equivalent_J_per_K",
    "massic_energy_J_per_g", "standard_massic_energy_J_per_g", "washburn_J",
    "heater_energy_J", "reaction_heat_J", "molar_enthalpy_kJ_per_mol",
    "u_molar_enthalpy_kJ_per_mol", "final_molality_mol_per_kg", "dilution_ratio",
    "reference_temperature_K", "warnings", "error", "details", "periods", "provenance")
assert set(_RUN_JSON_KEYS) == _ALL_RUN_FIELDS - {"rise"}, "a run field is missing from its JSON"


#: The boundary keys a run record keeps from its rise's periods.
_PERIOD_KEYS = ("fore_period_s", "fire_time_s", "main_end_s", "after_period_s",
                "fire_source", "main_end_source")


def _periods_of(run: Any) -> dict[str, Any]:
    """The boundaries of the run's rise (for a multi-event log, the reaction event's,
    ``details.reaction_event_index``, else the first), or ``{}`` without a rise."""
    rise = getattr(run, "rise", None)
    if isinstance(rise, tuple | list):
        index = getattr(run.details, "reaction_event_index", None)
        rise = (rise[index] if isinstance(index, int) and 0 <= index < len(rise)
                else rise[0] if rise else None)
    periods = getattr(rise, "periods", None)
    if periods is None:
        return {}
    return {k: jsonable(getattr(periods, k)) for k in _PERIOD_KEYS}


def run_result(kind: str, **values: Any) -> RunResult:
    """The record of a run of ``kind`` (:class:`BombRunResult` or
    :class:`SolutionRunResult`) built from ``values``."""
    try:
        record = _RUN_RECORDS[kind]
    except KeyError:
        raise ValueError(f"unknown run kind {kind!r}: one of {sorted(RUN_KINDS)}") from None
    return record(kind=kind, **values)


@dataclass(frozen=True, kw_only=True)
class CalibrationResult(_Record):
    """Energy equivalent of one calorimeter from a calibration series."""

    calorimeter: str
    energy_equivalent_J_per_K: float
    #: Standard uncertainty of the mean ε (standard deviation of the mean, combined with the
    #: reference-material certificate where applicable), J/K.
    u_energy_equivalent_J_per_K: float
    n_runs: int
    rsd_percent: float
    std_dev_J_per_K: float
    std_dev_of_mean_J_per_K: float
    runs: tuple[str, ...]
    values_J_per_K: tuple[float, ...] = ()
    method: str = "reference-material"
    #: The components of u(ε), each with its unit (J/K, or 1 for the certificate's relative u).
    budget: Budget = field(default_factory=lambda: Budget(quantity="energy equivalent",
                                                          unit="J/K"))
    #: The reference material's certified massic energy, J/g (calibration with a material).
    certified_J_per_g: float | None = None
    #: The acceptance limit applied to the series' RSD, % (``None``: none applied).
    rsd_limit_percent: float | None = None
    outlier_test: Mapping[str, Any] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    #: Mean over the series of each correction energy divided by the corrected rise, J/K:
    #: the part of ε that a correction constant contributes, so that an error in a constant
    #: shared by calibration and sample runs is propagated with its correlation.
    correction_per_rise_J_per_K: Mapping[str, float] = field(default_factory=dict)

    @property
    def acceptance_problems(self) -> tuple[str, ...]:
        """Why the series fails its acceptance (the RSD above its limit, an outlier by
        Grubbs' test); empty when it passes."""
        out = []
        if (self.rsd_limit_percent is not None and self.rsd_percent is not None
                and self.rsd_percent > self.rsd_limit_percent):
            out.append(f"RSD {self.rsd_percent:.3f} % above the limit "
                       f"{self.rsd_limit_percent:g} %")
        if self.outlier_test.get("outlier"):
            out.append(f"Grubbs' test flags {self.outlier_test.get('suspect')} as an outlier")
        return tuple(out)

    def __post_init__(self) -> None:
        _check_values(self)
        _check_budget(self.budget)
        _freeze(self, "outlier_test", "correction_per_rise_J_per_K")
        object.__setattr__(self, "runs", tuple(self.runs))
        object.__setattr__(self, "values_J_per_K", tuple(self.values_J_per_K))
        object.__setattr__(self, "warnings", tuple(self.warnings))


@dataclass(frozen=True, kw_only=True)
class SampleResult(_Record):
    """A sample series: the mean over its runs and the derived molar quantities."""

    sample: str
    formula: str | None
    n_runs: int
    runs: tuple[str, ...]
    kind: str = "combustion"
    #: Phase of the compound ('cr', 'l', ...), as the run sheet gives it.
    phase: str | None = None
    calorimeter: str | None = None
    massic_energy_J_per_g: float | None = None
    u_massic_energy_J_per_g: float | None = None
    standard_massic_energy_J_per_g: float | None = None
    u_standard_massic_energy_J_per_g: float | None = None
    delta_c_U_kJ_per_mol: float | None = None
    u_delta_c_U_kJ_per_mol: float | None = None
    delta_c_H_kJ_per_mol: float | None = None
    u_delta_c_H_kJ_per_mol: float | None = None
    delta_f_H_kJ_per_mol: float | None = None
    u_delta_f_H_kJ_per_mol: float | None = None
    U_delta_f_H_kJ_per_mol: float | None = None
    coverage_factor: float = 2.0
    # solution series
    molar_enthalpy_kJ_per_mol: float | None = None
    u_molar_enthalpy_kJ_per_mol: float | None = None
    final_molality_mol_per_kg: float | None = None
    infinite_dilution_enthalpy_kJ_per_mol: float | None = None
    u_infinite_dilution_enthalpy_kJ_per_mol: float | None = None
    #: The components of u of the series' main quantity (Δu° or ΔH), each with its unit.
    budget: Budget = field(default_factory=lambda: Budget(quantity="", unit=""))
    #: Budgets of quantities derived from it: ``'delta_f_H'`` (bomb) or
    #: ``'infinite_dilution'`` (solution).
    derived_budgets: Mapping[str, Budget] = field(default_factory=dict)
    #: Fuel outputs (gross/net calorific values, positive, J/g) when asked for.
    fuel: Mapping[str, float] = field(default_factory=dict)
    key_values_used: Mapping[str, Any] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        _check_values(self)
        _check_budget(self.budget, *self.derived_budgets.values())
        _freeze(self, "derived_budgets", "fuel", "key_values_used")
        object.__setattr__(self, "runs", tuple(self.runs))
        object.__setattr__(self, "warnings", tuple(self.warnings))


@dataclass(frozen=True, kw_only=True)
class ChainResult:
    """What one energy chain (bomb or solution) returns for its rows of a run sheet."""

    #: One RunResult per row given, in the same order (failures carry ``error``).
    runs: tuple[RunResult, ...]
    calibrations: tuple[CalibrationResult, ...] = ()
    samples: tuple[SampleResult, ...] = ()
    #: Covariance of the samples (bomb chain; see :attr:`Reduction.covariance`).
    covariance: Mapping[str, Any] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()
    #: Thermograms read, by run id (the ones that could be read).
    thermograms: Mapping[str, Any] = field(default_factory=dict, repr=False)

    def __post_init__(self) -> None:
        _freeze(self, "covariance", "thermograms")
        for name in ("calibrations", "runs", "samples", "warnings"):
            object.__setattr__(self, name, tuple(getattr(self, name)))


@dataclass(frozen=True, kw_only=True)
class Reduction:
    """Everything ``calwork reduce`` produces for one run sheet."""

    calibrations: tuple[CalibrationResult, ...]
    runs: tuple[RunResult, ...]
    samples: tuple[SampleResult, ...]
    #: Covariance of the samples' standard massic energies (or ΔfH), for the Hess solver:
    #: {"quantity": ..., "names": [...], "matrix": [[...]]}.
    covariance: Mapping[str, Any] = field(default_factory=dict)
    method: str = "newton-fit"
    sheet_path: str | None = None
    provenance: Provenance | None = None
    warnings: tuple[str, ...] = ()
    #: The run-sheet rows reduced (in sheet order), for reports and the lab book.
    run_infos: tuple[Any, ...] = ()
    #: Thermograms read, by run id (not serialised; for plots and workbooks).
    thermograms: Mapping[str, Any] = field(default_factory=dict, repr=False)
    #: For runs read back from a lab book: each run's review record by run id (``state``,
    #: ``version``, ``approved_by``, ``approved_utc``, ``overrides`` in force...); empty for
    #: a reduction of a sheet on disk.
    review: Mapping[str, Mapping[str, Any]] = field(default_factory=dict)

    def __post_init__(self) -> None:
        _freeze(self, "covariance", "thermograms", "review")
        object.__setattr__(self, "run_infos", tuple(self.run_infos))
        for name in ("calibrations", "runs", "samples", "warnings"):
            object.__setattr__(self, name, tuple(getattr(self, name)))

    def to_dict(self) -> dict[str, Any]:
        return {
            "calibrations": [c.to_dict() for c in self.calibrations],
            "runs": [r.to_dict() for r in self.runs],
            "samples": [s.to_dict() for s in self.samples],
            "covariance": jsonable(self.covariance),
            "method": self.method,
            "sheet_path": self.sheet_path,
            "warnings": list(self.warnings),
            "provenance": None if self.provenance is None else self.provenance.to_dict(),
        } | ({"review": jsonable(self.review)} if self.review else {})


def failed_run(info: Any, exc: Any, *, rise: Any = None) -> RunResult:
    """A RunResult for the run-sheet row ``info`` that carries the error ``exc`` (a
    :class:`~calwork.core.errors.CalworkError`, given the row's sheet location) and no numbers
    beyond the rise, if one was computed. A failing run is reported, never dropped."""
    err = exc.with_context(run=info.run, path=getattr(info, "sheet_path", None),
                           line=getattr(info, "line", None))
    return run_result(info.kind, run=info.run, sample=info.sample,
                      calorimeter=info.calorimeter, error=str(err), rise=rise,
                      corrected_rise_K=getattr(rise, "corrected_rise_K", None),
                      u_corrected_rise_K=getattr(rise, "u_corrected_rise_K", None))
