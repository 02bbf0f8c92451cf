"""The Thermogram record: one temperature log, in SI, with its provenance."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace
from types import MappingProxyType
from typing import Any

import numpy as np

from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import LogFormatError, TimeAxisError, ValueCellError
from calwork.core.numeric import median
from calwork.core.provenance import Provenance

#: Shortest median interval between readings accepted, s: calorimeter logs are sampled at
#: 0.1 s at the fastest (common practice); far shorter spacing is a time-unit slip.
MIN_SAMPLING_INTERVAL_S = 1e-3

__all__ = ["CHANNELS", "Thermogram"]

#: Known optional channels and their meaning (SI units in the names).
CHANNELS = {
    "jacket_K": "jacket (surroundings) temperature, K",
    "heater_V": "voltage across the calibration heater (potential leads), V",
    "heater_A": "heater current, A",
    "standard_resistor_V": "voltage across the series standard resistor, V",
    "resistance_ohm": "raw thermometer resistance, ohm",
}


def _frozen_array(values: Any, name: str) -> np.ndarray:
    arr = np.array(values, dtype=float, copy=True)
    if arr.ndim != 1:
        raise LogFormatError(f"{name} must be one-dimensional", found=arr.shape)
    arr.flags.writeable = False
    return arr


@dataclass(frozen=True, kw_only=True, eq=False)
class Thermogram:
    """A temperature log in SI units.

    Attributes
    ----------
    time_s
        Elapsed time, s, strictly increasing.
    temperature_K
        Calorimeter temperature (ITS-90), K.
    channels
        Optional extra channels of the same length, named with their unit
        (see :data:`CHANNELS`, e.g. ``'jacket_K'``, ``'heater_V'``, ``'heater_A'``).
    rows
        1-based source line (or spreadsheet row) number of every reading, for error messages
        and audit; ``None`` for computed records.
    metadata
        Preamble ``key: value`` lines and importer notes, as text.
    provenance
        Source file, SHA-256, importer.
    """

    time_s: np.ndarray
    temperature_K: np.ndarray
    channels: Mapping[str, np.ndarray] = field(default_factory=dict)
    rows: np.ndarray | None = None
    metadata: Mapping[str, str] = field(default_factory=dict)
    provenance: Provenance = field(default_factory=Provenance)

    def __post_init__(self) -> None:
        t = _frozen_array(self.time_s, "time_s")
        T = _frozen_array(self.temperature_K, "temperature_K")
        where = {"path": self.provenance.source_path}
        if t.size != T.size:
            raise LogFormatError(
                "time and temperature columns differ in length", found=(t.size, T.size), **where
            )
        if t.size < 2:
            raise LogFormatError("a thermogram needs at least 2 readings", found=t.size, **where)
        rows = None if self.rows is None else np.asarray(self.rows, dtype=np.int64).copy()
        if rows is not None:
            rows.flags.writeable = False
        for name, arr in (("time_s", t), ("temperature_K", T)):
            bad = np.flatnonzero(~np.isfinite(arr))
            if bad.size:
                i = int(bad[0])
                raise ValueCellError(
                    f"{name} is not finite", line=None if rows is None else int(rows[i]),
                    found=float(arr[i]), expected="a finite number", **where,
                )
        steps = np.diff(t)
        bad = np.flatnonzero(steps <= 0)
        if bad.size:
            i = int(bad[0]) + 1
            raise TimeAxisError(
                "times must be strictly increasing (duplicated or out-of-order reading)",
                line=None if rows is None else int(rows[i]),
                found=float(t[i]), expected=f"a time after {float(t[i - 1])!r} s", **where,
            )
        spacing = median(steps) if steps.size else 1.0
        if spacing < MIN_SAMPLING_INTERVAL_S:
            raise TimeAxisError(
                f"readings only {spacing:.3g} s apart: no calorimeter log is sampled that fast;"
                " check the time unit (ms read as s, or a time of day in days?)",
                found=spacing, expected=f"at least {MIN_SAMPLING_INTERVAL_S} s between "
                "readings", **where)
        chans = {}
        for name, values in dict(self.channels).items():
            arr = _frozen_array(values, name)
            if arr.size != t.size:
                raise LogFormatError(
                    f"channel {name!r} differs in length from time", found=arr.size, **where
                )
            chans[name] = arr
        object.__setattr__(self, "time_s", t)
        object.__setattr__(self, "temperature_K", T)
        object.__setattr__(self, "rows", rows)
        object.__setattr__(self, "channels", MappingProxyType(chans))
        object.__setattr__(self, "metadata", MappingProxyType(dict(self.metadata)))

    # --- derived views -----------------------------------------------------------------------
    @property
    def n_points(self) -> int:
        """Number of readings."""
        return int(self.time_s.size)

    @property
    def sampling_interval_s(self) -> float:
        """Median interval between readings, s."""
        return median(np.diff(self.time_s))

    @property
    def time_span_s(self) -> float:
        """Time from the first to the last reading, s."""
        return float(self.time_s[-1] - self.time_s[0])

    @property
    def temperature_C(self) -> np.ndarray:
        """Temperature in °C (for display only)."""
        return self.temperature_K - CELSIUS_ZERO_K

    def window(self, start_s: float, end_s: float) -> Thermogram:
        """The readings with ``start_s <= t <= end_s``, as a new Thermogram."""
        mask = (self.time_s >= start_s) & (self.time_s <= end_s)
        return replace(
            self,
            time_s=self.time_s[mask],
            temperature_K=self.temperature_K[mask],
            channels={k: v[mask] for k, v in self.channels.items()},
            rows=None if self.rows is None else self.rows[mask],
        )

    def report(self) -> str:
        """A short human-readable summary."""
        src = self.provenance.source_path or "(in memory)"
        return (
            f"Thermogram {src}: {self.n_points} readings over {self.time_span_s:.1f} s "
            f"(every {self.sampling_interval_s:.3g} s), "
            f"{self.temperature_C.min():.4f} to {self.temperature_C.max():.4f} °C; "
            f"channels: {', '.join(self.channels) or 'none'}"
        )
