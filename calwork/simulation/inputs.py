"""Heat inputs of the simulated calorimeter: combustion pulse, heater interval, first-order release.

Each input is a power ``P(t)`` (W) switched on over ``[start_s, end_s)``. Inside that interval
the power is a combination of exponentials and sinusoids, i.e. the output of a small linear
"generator" system ``dz/dt = F z``, ``P = c·z``; the integrator (:mod:`calwork.simulation.
integrate`) augments the calorimeter's state with ``z`` and integrates exactly.

Which body receives the heat (``into``): a combustion releases its heat inside the bomb (the
inner body); an immersed electrical heater and a dissolution release theirs into the water
(liquid). Override with ``into="bomb"`` or ``into="water"``; in one-body mode it is the same.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from calwork.core.errors import SimulationError
from calwork.simulation.params import _finite, _positive, check_into

__all__ = ["CombustionPulse", "FirstOrderRelease", "HeatInput", "HeaterInterval"]

#: Fraction of a first-order release left after ``end_s`` (the nominal end of the event).
_RELEASE_TAIL = 1e-6


@dataclass(frozen=True, kw_only=True)
class CombustionPulse:
    """A combustion: ``energy_J`` released over ``burn_time_s`` from ``fire_time_s``.

    The power has a raised-cosine shape ``P(t) = (E/Δ)(1 − cos(2π(t − t₀)/Δ))`` for
    ``t₀ ≤ t < t₀ + Δ`` — smooth (zero power and zero slope at both ends) and integrating
    exactly to ``E``.

    Attributes
    ----------
    energy_J
        Heat released, J (> 0).
    fire_time_s
        Firing time ``t₀``, s.
    burn_time_s
        Duration ``Δ`` of the heat release, s.
    into
        Receiving body, ``'bomb'`` (default) or ``'water'``.
    """

    energy_J: float
    fire_time_s: float
    burn_time_s: float = 10.0
    into: str = "bomb"

    kind = "combustion"

    def __post_init__(self) -> None:
        _positive("energy_J", self.energy_J)
        _finite("fire_time_s", self.fire_time_s)
        _positive("burn_time_s", self.burn_time_s)
        check_into(self.into)

    @property
    def start_s(self) -> float:
        return float(self.fire_time_s)

    @property
    def end_s(self) -> float:
        return float(self.fire_time_s + self.burn_time_s)

    def power_at_W(self, t_s: np.ndarray) -> np.ndarray:
        """Power at times ``t_s`` (s), W."""
        t = np.asarray(t_s, dtype=float)
        x = (t - self.fire_time_s) / self.burn_time_s
        on = (x >= 0) & (x < 1)
        return np.where(on, self.energy_J / self.burn_time_s * (1 - np.cos(2 * np.pi * x)), 0.0)

    def energy_between_J(self, a_s: float, b_s: float) -> float:
        """Heat released between times ``a_s`` and ``b_s``, J (closed form)."""
        def cumulative(t: float) -> float:
            x = min(max((t - self.fire_time_s) / self.burn_time_s, 0.0), 1.0)
            return self.energy_J * (x - math.sin(2 * math.pi * x) / (2 * math.pi))
        return cumulative(b_s) - cumulative(a_s)

    def generator(self) -> tuple[np.ndarray, np.ndarray]:
        """``(F, c)`` with ``z = [1, cos ω(t−t₀), sin ω(t−t₀)]``, ``P = c·z``."""
        w = 2 * math.pi / self.burn_time_s
        F = np.array([[0.0, 0.0, 0.0], [0.0, 0.0, -w], [0.0, w, 0.0]])
        p = self.energy_J / self.burn_time_s
        return F, np.array([p, -p, 0.0])

    def state(self, t_s: float) -> np.ndarray:
        """The generator state ``z`` at time ``t_s`` (analytic)."""
        phase = 2 * math.pi * (t_s - self.fire_time_s) / self.burn_time_s
        return np.array([1.0, math.cos(phase), math.sin(phase)])


@dataclass(frozen=True, kw_only=True)
class HeaterInterval:
    """An electrical heater at constant ``power_W`` from ``on_s`` to ``off_s``.

    The simulated log carries the heater voltage ``V = √(P R)`` and current ``I = √(P/R)``
    (channels ``heater_V``, ``heater_A``) while it is on.

    Attributes
    ----------
    power_W
        Heater power, W (> 0).
    on_s, off_s
        Switch-on and switch-off times, s.
    resistance_ohm
        Heater resistance, Ω (sets V and I of the channels only).
    into
        Receiving body, ``'water'`` (default) or ``'bomb'``.
    """

    power_W: float
    on_s: float
    off_s: float
    resistance_ohm: float = 50.0
    into: str = "water"

    kind = "heater"

    def __post_init__(self) -> None:
        _positive("power_W", self.power_W)
        _finite("on_s", self.on_s)
        _finite("off_s", self.off_s)
        if self.off_s <= self.on_s:
            raise SimulationError("the heater must be switched off after it is switched on",
                                  column="off_s", found=self.off_s,
                                  expected=f"a time after on_s = {self.on_s!r} s")
        _positive("resistance_ohm", self.resistance_ohm)
        check_into(self.into)

    @property
    def energy_J(self) -> float:
        """Electrical energy P (t_off − t_on), J."""
        return self.power_W * (self.off_s - self.on_s)

    @property
    def start_s(self) -> float:
        return float(self.on_s)

    @property
    def end_s(self) -> float:
        return float(self.off_s)

    @property
    def voltage_V(self) -> float:
        """Heater voltage √(P R), V."""
        return math.sqrt(self.power_W * self.resistance_ohm)

    @property
    def current_A(self) -> float:
        """Heater current √(P/R), A."""
        return math.sqrt(self.power_W / self.resistance_ohm)

    def power_at_W(self, t_s: np.ndarray) -> np.ndarray:
        """Power at times ``t_s`` (s), W."""
        t = np.asarray(t_s, dtype=float)
        return np.where((t >= self.on_s) & (t < self.off_s), self.power_W, 0.0)

    def energy_between_J(self, a_s: float, b_s: float) -> float:
        """Heat released between times ``a_s`` and ``b_s``, J."""
        lo, hi = max(a_s, self.on_s), min(b_s, self.off_s)
        return self.power_W * max(hi - lo, 0.0)

    def generator(self) -> tuple[np.ndarray, np.ndarray]:
        """``(F, c)`` with ``z = [1]``."""
        return np.zeros((1, 1)), np.array([float(self.power_W)])

    def state(self, t_s: float) -> np.ndarray:
        return np.array([1.0])


@dataclass(frozen=True, kw_only=True)
class FirstOrderRelease:
    """A first-order heat release ``P(t) = (E/τ) exp(−(t − t₀)/τ)`` for ``t ≥ t₀``.

    Models a dissolution or mixing; a negative ``energy_J`` is an endothermic process (heat
    absorbed from the calorimeter).

    Attributes
    ----------
    energy_J
        Total heat released, J (negative = endothermic; not zero).
    start_s
        Start ``t₀`` (ampoule broken, reagent injected), s.
    time_constant_s
        Time constant ``τ``, s.
    into
        Receiving body, ``'water'`` (default) or ``'bomb'``.
    """

    energy_J: float
    start_s: float
    time_constant_s: float
    into: str = "water"

    kind = "release"

    def __post_init__(self) -> None:
        _finite("energy_J", self.energy_J)
        if self.energy_J == 0:
            raise SimulationError("a release of zero energy is not a heat input",
                                  column="energy_J", found=self.energy_J,
                                  expected="a non-zero energy, J (negative = endothermic)")
        _finite("start_s", self.start_s)
        _positive("time_constant_s", self.time_constant_s)
        check_into(self.into)

    @property
    def end_s(self) -> float:
        """Nominal end: time by which all but 1e-6 of the energy is released, s."""
        return float(self.start_s + self.time_constant_s * math.log(1 / _RELEASE_TAIL))

    def power_at_W(self, t_s: np.ndarray) -> np.ndarray:
        """Power at times ``t_s`` (s), W."""
        t = np.asarray(t_s, dtype=float)
        x = np.maximum(t - self.start_s, 0.0) / self.time_constant_s
        return np.where(t >= self.start_s, self.energy_J / self.time_constant_s * np.exp(-x), 0.0)

    def energy_between_J(self, a_s: float, b_s: float) -> float:
        """Heat released between times ``a_s`` and ``b_s``, J (closed form)."""
        def cumulative(t: float) -> float:
            x = max(t - self.start_s, 0.0) / self.time_constant_s
            return -self.energy_J * math.expm1(-x)
        return cumulative(b_s) - cumulative(a_s)

    def generator(self) -> tuple[np.ndarray, np.ndarray]:
        """``(F, c)`` with ``z = [exp(−(t − t₀)/τ)]``."""
        return (np.array([[-1.0 / self.time_constant_s]]),
                np.array([self.energy_J / self.time_constant_s]))

    def state(self, t_s: float) -> np.ndarray:
        return np.array([math.exp(-(t_s - self.start_s) / self.time_constant_s)])


HeatInput = CombustionPulse | HeaterInterval | FirstOrderRelease
