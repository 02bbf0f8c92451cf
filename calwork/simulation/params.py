"""Parameters of the simulated isoperibol calorimeter (:class:`CalorimeterParams`).

The model (docs/methods.md §1.1, §1.9, §1.10): an inner body (bomb, or reaction vessel and ampoule
holder) of heat capacity ``C_b`` and the calorimeter water ``C_w`` coupled by a conductance
``G_bw``; the water exchanges heat with a jacket at ``T_j(t) = T_j0 + drift·(t − t_start)``
through a conductance ``G`` and receives a constant stirring power; the thermometer reads the
water temperature through a first-order lag. With ``bomb_water_conductance_W_per_K=None`` the
two heat capacities form one body.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, fields, replace
from pathlib import Path
from typing import Any

from calwork.core.errors import ChoiceError, InputFileError, SimulationError, check_choice
from calwork.data import load_data, parse_toml_text

__all__ = ["INITIAL_STATES", "PRESETS", "CalorimeterParams"]

#: Names of the bundled parameter sets (tables of ``simulator_defaults.toml``).
PRESETS = ("bomb", "solution")
#: How the calorimeter starts: ``'steady'`` = already in its steady drift (internal transients
#: of the inner body and the thermometer have died out, water at ``initial_temperature_K``);
#: ``'uniform'`` = every body and the thermometer at ``initial_temperature_K``.
INITIAL_STATES = ("steady", "uniform")
#: Shortest time constant the integrator accepts, s (shorter ones: model the body as one).
_MIN_TIME_CONSTANT_S = 1e-9


def _finite(name: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise SimulationError("must be a finite number", column=name, found=value,
                              expected="a finite number")
    return float(value)


def _positive(name: str, value: Any) -> float:
    value = _finite(name, value)
    if value <= 0:
        raise SimulationError("must be positive", column=name, found=value, expected="a value > 0")
    return value


def _non_negative(name: str, value: Any) -> float:
    value = _finite(name, value)
    if value < 0:
        raise SimulationError("must not be negative", column=name, found=value,
                              expected="a value >= 0")
    return value


def check_into(value: str) -> str:
    """Check an ``into`` option (``'bomb'`` = inner body, ``'water'``); SimulationError if not."""
    try:
        return check_choice("into", value, ("bomb", "water"))
    except ChoiceError as exc:
        raise SimulationError(exc.message, column="into", found=value,
                              expected="'bomb' (inner body) or 'water'") from None


@dataclass(frozen=True, kw_only=True)
class CalorimeterParams:
    """A simulated isoperibol calorimeter (all values SI, units in the names).

    The defaults are the macro bomb calorimeter of :meth:`bomb_preset` with an ideal
    thermometer (no lag, no quantisation).

    Attributes
    ----------
    bomb_heat_capacity_J_per_K
        Heat capacity of the inner body (bomb and contents, or vessel and ampoule holder), J/K.
    water_heat_capacity_J_per_K
        Heat capacity of the calorimeter water (with vessel and stirrer), J/K.
    bomb_water_conductance_W_per_K
        Conductance between inner body and water, W/K; ``None`` = one body of heat capacity
        ``C_b + C_w``.
    exchange_conductance_W_per_K
        Newtonian conductance water ↔ jacket ``G``, W/K (0 = adiabatic).
    jacket_temperature_K
        Jacket temperature at the start of the run ``T_j0``, K.
    jacket_drift_K_per_s
        Slow linear drift of the jacket temperature, K/s.
    stirring_power_W
        Constant stirring (plus thermometer self-heating) power into the water, W.
    thermometer_lag_s
        First-order time constant ``τ`` of the thermometer, s (0 = no lag).
    sampling_interval_s
        Time between readings, s.
    noise_K
        Standard deviation of the Gaussian reading noise, K.
    quantisation_K
        Resolution step of the readings, K (0 = none).
    initial_temperature_K
        Water temperature at the start of the run, K.
    electrical_noise_relative
        Relative standard deviation of the noise on the heater voltage and current channels.
    initial_state
        ``'steady'`` (default: already in steady drift) or ``'uniform'`` (see
        :data:`INITIAL_STATES`).
    """

    bomb_heat_capacity_J_per_K: float = 1600.0
    water_heat_capacity_J_per_K: float = 8400.0
    bomb_water_conductance_W_per_K: float | None = 15.0
    exchange_conductance_W_per_K: float = 0.4
    jacket_temperature_K: float = 298.15
    jacket_drift_K_per_s: float = 0.0
    stirring_power_W: float = 0.04
    thermometer_lag_s: float = 0.0
    sampling_interval_s: float = 5.0
    noise_K: float = 1e-4
    quantisation_K: float = 0.0
    initial_temperature_K: float = 296.65
    electrical_noise_relative: float = 1e-5
    initial_state: str = "steady"

    def __post_init__(self) -> None:
        _positive("bomb_heat_capacity_J_per_K", self.bomb_heat_capacity_J_per_K)
        _positive("water_heat_capacity_J_per_K", self.water_heat_capacity_J_per_K)
        if self.bomb_water_conductance_W_per_K is not None:
            _non_negative("bomb_water_conductance_W_per_K", self.bomb_water_conductance_W_per_K)
        _non_negative("exchange_conductance_W_per_K", self.exchange_conductance_W_per_K)
        _positive("jacket_temperature_K", self.jacket_temperature_K)
        _finite("jacket_drift_K_per_s", self.jacket_drift_K_per_s)
        _non_negative("stirring_power_W", self.stirring_power_W)
        _non_negative("thermometer_lag_s", self.thermometer_lag_s)
        if 0 < self.thermometer_lag_s < _MIN_TIME_CONSTANT_S:
            raise SimulationError("thermometer lag too short to integrate", column=
                                  "thermometer_lag_s", found=self.thermometer_lag_s,
                                  expected=f"0 (no lag) or at least {_MIN_TIME_CONSTANT_S} s")
        _positive("sampling_interval_s", self.sampling_interval_s)
        _non_negative("noise_K", self.noise_K)
        _non_negative("quantisation_K", self.quantisation_K)
        _positive("initial_temperature_K", self.initial_temperature_K)
        cmin = min(self.bomb_heat_capacity_J_per_K, self.water_heat_capacity_J_per_K)
        for name in ("bomb_water_conductance_W_per_K", "exchange_conductance_W_per_K"):
            value = getattr(self, name)
            if value is not None and value / cmin > 1 / _MIN_TIME_CONSTANT_S:
                raise SimulationError(
                    "conductance too large for the heat capacities (time constant below "
                    f"{_MIN_TIME_CONSTANT_S} s)", column=name, found=value,
                    expected=f"at most {cmin / _MIN_TIME_CONSTANT_S:.3g} W/K (or None for one "
                    "body)")
        _non_negative("electrical_noise_relative", self.electrical_noise_relative)
        try:
            check_choice("initial_state", self.initial_state, INITIAL_STATES)
        except ChoiceError as exc:
            raise SimulationError(exc.message, column="initial_state",
                                  found=self.initial_state) from None

    # --- derived quantities --------------------------------------------------------------------
    @property
    def energy_equivalent_J_per_K(self) -> float:
        """ε = C_b + C_w, J/K (the heat capacity a calibration measures)."""
        return self.bomb_heat_capacity_J_per_K + self.water_heat_capacity_J_per_K

    @property
    def exchange_rate_per_s(self) -> float:
        """Newtonian rate constant k = G/ε, 1/s (docs/methods.md §1.1)."""
        return self.exchange_conductance_W_per_K / self.energy_equivalent_J_per_K

    @property
    def convergence_temperature_K(self) -> float | None:
        """T_∞ = T_j0 + P_stir/G, K (docs/methods.md §1.1); ``None`` when G = 0 (no convergence)."""
        if self.exchange_conductance_W_per_K == 0:
            return None
        return self.jacket_temperature_K + self.stirring_power_W / self.exchange_conductance_W_per_K

    @property
    def two_body(self) -> bool:
        """Whether inner body and water are separate heat capacities."""
        return self.bomb_water_conductance_W_per_K is not None

    @property
    def internal_time_constant_s(self) -> float | None:
        """τ₁ = C_b C_w /(G_bw (C_b + C_w)), s, of the inner-body ↔ water exchange (docs/methods.md
        §1.9); ``None`` for one body, ``inf`` when ``G_bw = 0``."""
        if self.bomb_water_conductance_W_per_K is None:
            return None
        if self.bomb_water_conductance_W_per_K == 0:
            return math.inf
        cb, cw = self.bomb_heat_capacity_J_per_K, self.water_heat_capacity_J_per_K
        return cb * cw / (self.bomb_water_conductance_W_per_K * (cb + cw))

    def noise_free(self) -> CalorimeterParams:
        """The same calorimeter with an ideal read-out (no noise, no quantisation)."""
        return replace(self, noise_K=0.0, quantisation_K=0.0, electrical_noise_relative=0.0)

    def to_dict(self) -> dict[str, Any]:
        """The fields as a JSON-ready dictionary."""
        return asdict(self)

    def report(self) -> str:
        """A short human-readable summary."""
        body = ("one body" if not self.two_body else
                f"inner body {self.bomb_heat_capacity_J_per_K:g} J/K + water "
                f"{self.water_heat_capacity_J_per_K:g} J/K, G_bw "
                f"{self.bomb_water_conductance_W_per_K:g} W/K")
        return (
            f"Simulated isoperibol calorimeter: ε = {self.energy_equivalent_J_per_K:g} J/K "
            f"({body}); k = {self.exchange_rate_per_s:.3g} 1/s; jacket "
            f"{self.jacket_temperature_K:g} K; stirring {self.stirring_power_W:g} W; "
            f"thermometer lag {self.thermometer_lag_s:g} s; every {self.sampling_interval_s:g} s; "
            f"noise {self.noise_K:g} K"
        )

    # --- construction --------------------------------------------------------------------------
    @classmethod
    def preset(cls, name: str, **overrides: Any) -> CalorimeterParams:
        """A bundled parameter set (``'bomb'`` or ``'solution'``) with optional overrides."""
        try:
            check_choice("preset", name, PRESETS)
        except ChoiceError as exc:
            raise SimulationError(exc.message, column="preset", found=name) from None
        values: dict[str, Any] = dict(load_data("simulator_defaults.toml")[name])
        values.setdefault("bomb_water_conductance_W_per_K", None)
        values.update(overrides)
        return cls._from_mapping(values)

    @classmethod
    def bomb_preset(cls, **overrides: Any) -> CalorimeterParams:
        """A macro isoperibol oxygen-bomb calorimeter (ε = 10 kJ/K, k = 4e-5 1/s, two bodies,
        τ₁ ≈ 90 s, 2 s thermometer lag, readings every 5 s).
        """
        return cls.preset("bomb", **overrides)

    @classmethod
    def solution_preset(cls, **overrides: Any) -> CalorimeterParams:
        """A small semi-adiabatic solution calorimeter (ε = 360 J/K, k = 1e-3 1/s, one body,
        1 s thermometer lag, readings every 2 s)."""
        return cls.preset("solution", **overrides)

    @classmethod
    def _from_mapping(cls, values: dict[str, Any], path: Path | None = None) -> CalorimeterParams:
        names = {f.name for f in fields(cls)}
        for key in values:
            if key not in names:
                raise SimulationError("unknown calorimeter parameter", path=path, column=key,
                                      expected=f"one of {sorted(names)}")
        try:
            return cls(**values)
        except SimulationError as exc:
            raise exc.with_context(path=path) from None
        except TypeError as exc:  # pragma: no cover - guarded by the name check above
            raise SimulationError(str(exc), path=path) from None

    @classmethod
    def from_toml(cls, path: str | Path) -> CalorimeterParams:
        """Read a ``[calorimeter]`` table with the field names of this class.

        An optional ``preset = "bomb"`` (or ``"solution"``) key starts from that set; the
        other keys override it. ``bomb_water_conductance_W_per_K = "none"`` asks for one body.

        Examples
        --------
        A file ``my_calorimeter.toml``::

            [calorimeter]
            preset = "bomb"
            exchange_conductance_W_per_K = 0.55
            noise_K = 5e-5
        """
        path = Path(path)
        try:
            text = path.read_text(encoding="utf-8")
        except FileNotFoundError:
            raise InputFileError("calorimeter parameter file not found", path=path) from None
        except UnicodeDecodeError:
            raise InputFileError("the file is not UTF-8 text", path=path) from None
        except OSError as exc:
            raise InputFileError(f"cannot read the file: {exc.strerror or exc}",
                                 path=path) from None
        data = parse_toml_text(text, path=path, error=SimulationError)
        table = data.get("calorimeter")
        if not isinstance(table, dict):
            raise SimulationError("no [calorimeter] table", path=path,
                                  expected="a [calorimeter] table of simulator parameters")
        values = dict(table)
        base = values.pop("preset", None)
        gbw = values.get("bomb_water_conductance_W_per_K")
        if isinstance(gbw, str) and gbw.strip().lower() == "none":
            values["bomb_water_conductance_W_per_K"] = None
        if base is not None:
            if not isinstance(base, str) or base not in PRESETS:
                raise SimulationError("unknown preset", path=path, column="preset", found=base,
                                      expected=f"one of {list(PRESETS)}")
            preset = asdict(cls.preset(base))
            preset.update(values)
            values = preset
        return cls._from_mapping(values, path)
