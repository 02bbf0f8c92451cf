"""Exact integration of the linear calorimeter model.

State (temperatures as deviations from ``initial_temperature_K``, K):
``y = [T_b, T_w, T_m]`` (two bodies) or ``[T, T_m]`` (one body); ``T_m`` (thermometer) is
present only with a lag ``τ > 0``. The equations (docs/methods.md §1.1, §1.9, §1.10)::

    C_b dT_b/dt = G_bw (T_w − T_b) + P_b(t)
    C_w dT_w/dt = G_bw (T_b − T_w) + G (T_j(t) − T_w) + P_stir + P_w(t)
    τ   dT_m/dt = T_w − T_m

are linear with inputs that are, between switching times, outputs of linear generators
(constant, ramp, exponential, sinusoid). Between consecutive grid times (readings and switching
times) the augmented system ``d/dt [y; z] = [[A, B], [0, F]] [y; z]`` is advanced with its
matrix exponential, which is exact up to rounding; the generator states ``z`` are reset to their
analytic values at the start of every step, so no error accumulates in them.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy.linalg import expm

from calwork.core.errors import SimulationError
from calwork.simulation.inputs import FirstOrderRelease, HeatInput
from calwork.simulation.params import CalorimeterParams

__all__ = ["LinearModel", "integrate"]

#: Fast transients are allowed this many time constants to die out before a 'steady' start.
_WARMUP_TIME_CONSTANTS = 60.0
#: ... and the slow drift mode may decay by at most exp(-this) meanwhile (conditioning).
_WARMUP_MAX_SLOW_DECAY = 8.0


@dataclass(frozen=True)
class LinearModel:
    """Matrices of the calorimeter model for one parameter set."""

    A: np.ndarray               # state matrix, 1/s
    b_inner: np.ndarray         # state derivative per watt into the inner body, K/(s W)
    b_water: np.ndarray         # ... per watt into the water
    inner: int                  # index of the inner body (== water in one-body mode)
    water: int
    sensor: int                 # index of the thermometer (== water without lag)

    @classmethod
    def build(cls, p: CalorimeterParams) -> LinearModel:
        cb, cw = p.bomb_heat_capacity_J_per_K, p.water_heat_capacity_J_per_K
        G = p.exchange_conductance_W_per_K
        lag = p.thermometer_lag_s > 0
        if p.two_body:
            gbw = float(p.bomb_water_conductance_W_per_K)
            n = 3 if lag else 2
            A = np.zeros((n, n))
            A[0, 0], A[0, 1] = -gbw / cb, gbw / cb
            A[1, 0], A[1, 1] = gbw / cw, -(gbw + G) / cw
            inner, water = 0, 1
            b_inner, b_water = np.zeros(n), np.zeros(n)
            b_inner[0], b_water[1] = 1 / cb, 1 / cw
        else:
            n = 2 if lag else 1
            A = np.zeros((n, n))
            A[0, 0] = -G / (cb + cw)
            inner = water = 0
            b_inner = np.zeros(n)
            b_inner[0] = 1 / (cb + cw)
            b_water = b_inner
        sensor = water
        if lag:
            sensor = n - 1
            A[sensor, water] = 1 / p.thermometer_lag_s
            A[sensor, sensor] = -1 / p.thermometer_lag_s
        return cls(A=A, b_inner=b_inner, b_water=b_water, inner=inner, water=water, sensor=sensor)

    @property
    def n(self) -> int:
        return self.A.shape[0]


class _Source:
    """One input: generator ``(F, B)``, analytic state ``z(t)``, active on ``[start, end)``."""

    def __init__(self, F: np.ndarray, B: np.ndarray, state, start: float, end: float) -> None:
        self.F, self.B, self.state, self.start, self.end = F, B, state, start, end
        self._cache: dict[int, np.ndarray] = {}

    def gamma(self, A: np.ndarray, h: float, key: int) -> np.ndarray:
        """Response of ``y`` after ``h`` seconds to the generator started at state ``z``."""
        out = self._cache.get(key)
        if out is None:
            n, m = A.shape[0], self.F.shape[0]
            M = np.zeros((n + m, n + m))
            M[:n, :n], M[:n, n:], M[n:, n:] = A, self.B, self.F
            out = expm(M * h)[:n, n:]
            self._cache[key] = out
        return out


def _sources(p: CalorimeterParams, model: LinearModel, inputs: Sequence[HeatInput],
             t0: float) -> list[_Source]:
    G = p.exchange_conductance_W_per_K
    # stirring and jacket: z = [1, t − t0]; forcing of the water G (T_j − T_ref) + P_stir
    base_B = np.outer(model.b_water, [G * (p.jacket_temperature_K - p.initial_temperature_K)
                                      + p.stirring_power_W, G * p.jacket_drift_K_per_s])
    base_F = np.array([[0.0, 0.0], [1.0, 0.0]])
    out = [_Source(base_F, base_B, lambda t: np.array([1.0, t - t0]), -math.inf, math.inf)]
    for src in inputs:
        F, c = src.generator()
        b = model.b_inner if src.into == "bomb" else model.b_water
        end = math.inf if isinstance(src, FirstOrderRelease) else src.end_s
        out.append(_Source(F, np.outer(b, c), src.state, src.start_s, end))
    return out


def _key(h: float) -> int:
    # steps equal to within 1 ns share their matrices (readings are on a uniform grid)
    return round(h * 1e9)


def _steady_start(p: CalorimeterParams, model: LinearModel, base: _Source, t0: float) -> np.ndarray:
    """Initial deviation state with the fast modes (inner body, thermometer) already decayed.

    Integrates a warm-up of ``W`` seconds from a uniform state ``U`` (jacket extrapolated back)
    and picks ``U`` so that the water is at ``initial_temperature_K`` at ``t0``. Exact up to
    ``exp(−W/τ_fast)``.
    """
    rates = np.sort(-np.linalg.eigvals(model.A).real)
    if model.n == 1:
        return np.zeros(1)
    slow, fast = max(rates[0], 0.0), rates[1]
    if p.bomb_water_conductance_W_per_K == 0 or fast <= 0:
        raise SimulationError(
            "initial_state 'steady' needs a coupled inner body (bomb_water_conductance_W_per_K "
            "> 0)", column="initial_state", found=p.initial_state, expected="'uniform'")
    W = _WARMUP_TIME_CONSTANTS / fast
    if slow * W > _WARMUP_MAX_SLOW_DECAY:
        raise SimulationError(
            "initial_state 'steady' needs internal time constants much shorter than 1/k "
            f"(fast {1 / fast:.3g} s, slow {1 / slow:.3g} s)",
            column="initial_state", found=p.initial_state, expected="'uniform'")
    n = model.n
    phi = expm(model.A * W)
    gam = base.gamma(model.A, W, key=-1)
    forced = gam @ base.state(t0 - W)
    free = phi @ np.ones(n)
    U = -forced[model.water] / free[model.water]
    y = free * U + forced
    y[model.water] = 0.0
    return y


def integrate(p: CalorimeterParams, inputs: Sequence[HeatInput], times_s: np.ndarray,
              model: LinearModel | None = None) -> np.ndarray:
    """Noise-free temperatures at ``times_s`` (s): array ``(len(times_s), n)`` of absolute K.

    Columns follow :class:`LinearModel` (inner body, water, thermometer). ``times_s[0]`` is the
    start of the run; switching times of the inputs are added to the internal grid.
    """
    model = model or LinearModel.build(p)
    t0 = float(times_s[0])
    sources = _sources(p, model, inputs, t0)
    breaks = {s for src in sources[1:] for s in (src.start, src.end)
              if math.isfinite(s) and t0 < s < times_s[-1]}
    # a switch time within 1 ns of a reading time is taken at the reading time
    extra = [s for s in breaks if np.min(np.abs(times_s - s)) > 1e-9]
    grid = np.union1d(times_s, np.asarray(extra, dtype=float))
    y = _steady_start(p, model, sources[0], t0) if p.initial_state == "steady" else np.zeros(
        model.n)
    A = model.A
    phis: dict[int, np.ndarray] = {}
    out = np.empty((grid.size, model.n))
    out[0] = y
    for i in range(grid.size - 1):
        a, b = grid[i], grid[i + 1]
        h, mid = b - a, 0.5 * (a + b)
        key = _key(h)
        phi = phis.get(key)
        if phi is None:
            phi = phis[key] = expm(A * h)
        y = phi @ y
        for src in sources:
            if src.start <= mid < src.end:
                y = y + src.gamma(A, h, key) @ src.state(a)
        out[i + 1] = y
    idx = np.searchsorted(grid, times_s)
    return out[idx] + p.initial_temperature_K
