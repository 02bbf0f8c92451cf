"""Finding the heater intervals and the reaction event in one solution-calorimetry log.

A solution run's log typically holds an electrical calibration, the reaction (ampoule break,
injection) and a second calibration, each separated by drift periods. This module locates the
events and gives each a *window* of the log — the drift period before it, the event, and the
drift period after it, up to the next event — on which the temperature-rise engine
(:func:`calwork.rise.corrected_rise`) is run exactly as on a single-event log.

How (docs/methods.md §1.7 in spirit; the thresholds are calwork's own):

1. Heater intervals come from the heater channels (:func:`~calwork.solution.electrical.
   find_heater_intervals`) or from the sheet's ``heater_on_s``/``heater_off_s``.
2. Local slopes of the temperature are taken by a centred moving straight-line fit. In a
   drift period the slope obeys Newton's law, ``g = k (T_∞ − T)``, a straight line in T; that
   line is fitted robustly to the readings outside the heater intervals and its residuals are
   scaled by a robust (MAD) noise estimate.
3. Readings whose slope residual exceeds ``n_sigma`` noise units are "active"; the contiguous
   active stretches that do not belong to a heater are candidate reactions, and the one with
   the largest temperature change is the reaction (unless ``fire_time_s`` gives its start).
4. The window of each event starts a little after the end of the previous event's active
   stretch (``settle_fraction`` of the gap) and ends just before the next event starts. Both
   drift periods of the gap are shared by its two neighbours.

A reaction too small to be seen against the noise (an empty-ampoule blank) needs the sheet's
``fire_time_s`` (the time of the break).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import cache

import numpy as np

from calwork.core.errors import PeriodDetectionError
from calwork.core.numeric import median
from calwork.core.thermogram import Thermogram

__all__ = ["LogEvent", "LogEvents", "find_events", "list_heat_events", "local_slopes_K_per_s"]


def local_slopes_K_per_s(time_s, temperature_K, half_width: int) -> np.ndarray:
    """Slope of a centred moving straight-line fit over ``2·half_width + 1`` readings, K/s.

    The window shrinks at the ends of the record. Uses running sums (O(n)).

    Examples
    --------
    >>> local_slopes_K_per_s([0, 1, 2, 3, 4], [0, 2, 4, 6, 8], 1).tolist()
    [2.0, 2.0, 2.0, 2.0, 2.0]
    """
    t = np.asarray(time_s, dtype=float)
    x = np.asarray(temperature_K, dtype=float)
    t = t - t[0]
    x = x - x[0]
    n = t.size
    zero = np.zeros(1)
    c1 = np.concatenate([zero, np.cumsum(np.ones(n))])
    ct = np.concatenate([zero, np.cumsum(t)])
    cx = np.concatenate([zero, np.cumsum(x)])
    ctt = np.concatenate([zero, np.cumsum(t * t)])
    ctx = np.concatenate([zero, np.cumsum(t * x)])
    i = np.arange(n)
    lo = np.maximum(i - half_width, 0)
    hi = np.minimum(i + half_width + 1, n)
    N = c1[hi] - c1[lo]
    St = ct[hi] - ct[lo]
    Sx = cx[hi] - cx[lo]
    Stt = ctt[hi] - ctt[lo]
    Stx = ctx[hi] - ctx[lo]
    den = N * Stt - St * St
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = np.where(den > 0, (N * Stx - St * Sx) / np.where(den > 0, den, 1.0), 0.0)
    return slope


@dataclass(frozen=True, kw_only=True)
class LogEvent:
    """One event of a log and the window of readings to reduce it on.

    Attributes
    ----------
    kind
        ``'heater'`` or ``'reaction'``.
    start_s
        Heater on, or (a little before) the onset of the reaction, s — the ``fire_time_s``
        handed to the temperature-rise engine.
    end_s
        Heater off, or the end of the reaction's active stretch, s.
    active_end_s
        End of the stretch where the temperature departs from Newtonian drift, s.
    window_start_s, window_end_s
        The readings to reduce this event on, s.
    u_start_s, u_end_s
        Standard uncertainties of the heater switching times, s (0 for a reaction).
    source
        ``'channels'``, ``'sheet'``, ``'detected'`` or ``'given'`` (sheet ``fire_time_s``).
    """

    kind: str
    start_s: float
    end_s: float
    active_end_s: float
    window_start_s: float
    window_end_s: float
    u_start_s: float = 0.0
    u_end_s: float = 0.0
    source: str = "detected"

    def to_dict(self) -> dict[str, float | str]:
        return {k: getattr(self, k) for k in (
            "kind", "start_s", "end_s", "active_end_s", "window_start_s", "window_end_s",
            "u_start_s", "u_end_s", "source")}


@dataclass(frozen=True, kw_only=True)
class LogEvents:
    """The events of one log in time order, with notes on how they were found."""

    events: tuple[LogEvent, ...]
    noise_slope_K_per_s: float
    warnings: tuple[str, ...] = field(default=())

    @property
    def heaters(self) -> tuple[LogEvent, ...]:
        """The heater events, in time order."""
        return tuple(e for e in self.events if e.kind == "heater")

    @property
    def reaction(self) -> LogEvent | None:
        """The reaction event, or ``None``."""
        for e in self.events:
            if e.kind == "reaction":
                return e
        return None

    def to_dict(self) -> dict[str, object]:
        return {"events": [e.to_dict() for e in self.events],
                "noise_slope_K_per_s": self.noise_slope_K_per_s, "warnings": list(self.warnings)}


def _segments(mask: np.ndarray, merge_gap: int, min_points: int) -> list[tuple[int, int]]:
    """Contiguous True stretches (first, last) with short gaps merged."""
    idx = np.flatnonzero(np.diff(np.concatenate([[0], mask.astype(np.int8), [0]])))
    segs = [(int(a), int(b) - 1) for a, b in zip(idx[::2], idx[1::2], strict=True)]
    merged: list[list[int]] = []
    for a, b in segs:
        if merged and a - merged[-1][1] - 1 <= merge_gap:
            merged[-1][1] = b
        else:
            merged.append([a, b])
    return [(a, b) for a, b in merged if b - a + 1 >= min_points]


def _median(x: np.ndarray) -> float:
    """The upper median (one partition; a robust location needs no averaging of the two
    middle values, and this is several times faster than ``np.median`` on short arrays)."""
    k = x.size // 2
    return float(np.partition(x, k)[k])


def _robust_sigma(r: np.ndarray) -> float:
    r = r[np.isfinite(r)]
    if r.size == 0:
        return 0.0
    return 1.4826 * _median(np.abs(r - _median(r)))


def _line(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Least-squares line ``y = c x + a`` (closed form), as ``[c, a]``."""
    xm, ym = x.mean(), y.mean()
    dx = x - xm
    sxx = float(dx @ dx)
    c = float(dx @ (y - ym)) / sxx if sxx > 0 else 0.0
    return np.array([c, ym - c * xm])


@cache
def _pairs(n: int) -> tuple[np.ndarray, np.ndarray]:
    return np.triu_indices(n, k=1)


def _theil_sen(x: np.ndarray, y: np.ndarray, max_points: int = 60) -> np.ndarray:
    """Median-of-pairwise-slopes line ``y = c x + a`` (on at most ``max_points`` readings)."""
    if x.size > max_points:
        pick = (np.arange(max_points) * (x.size - 1)) // (max_points - 1)
        x, y = x[pick], y[pick]
    i, j = _pairs(x.size)
    dx = x[j] - x[i]
    ok = np.abs(dx) > 0
    if not np.any(ok):
        return np.array([0.0, _median(y)])
    c = _median((y[j] - y[i])[ok] / dx[ok])
    return np.array([c, _median(y - c * x)])


def _departures(t: np.ndarray, T: np.ndarray, quiet: np.ndarray, h: int, n_sigma: float,
                *, passes: int = 3) -> tuple[list[tuple[int, int]], np.ndarray, float]:
    """Stretches where the local slope departs from Newtonian drift, the slope residuals and
    their robust noise.

    Newtonian drift is ``g = a + c T``: a Theil–Sen line through (T, g) of the ``quiet``
    readings (an event's readings are a small minority), then least squares with trimming
    (``passes`` times).
    """
    slope = local_slopes_K_per_s(t, T, h)
    if np.count_nonzero(quiet) < 10:
        quiet = np.ones(t.size, dtype=bool)
    coef = _theil_sen(T[quiet] - T[0], slope[quiet])
    r = slope - (coef[0] * (T - T[0]) + coef[1])
    sigma = _robust_sigma(r[quiet])
    use = quiet & (np.abs(r) < 5.0 * sigma) if sigma > 0 else quiet.copy()
    for _ in range(passes):
        if np.count_nonzero(use) < 10:
            break
        coef = _line(T[use] - T[0], slope[use])
        r = slope - (coef[0] * (T - T[0]) + coef[1])
        sigma = _robust_sigma(r[use])
        if sigma <= 0:
            break
        trimmed = quiet & (np.abs(r) < 5.0 * sigma)
        if np.count_nonzero(trimmed) < 10:
            break
        use = trimmed
    resid = slope - (coef[0] * (T - T[0]) + coef[1])
    if sigma <= 0:
        sigma = max(float(np.std(resid[quiet])), 1e-12)
    active = np.abs(resid) > n_sigma * sigma
    return _segments(active, merge_gap=h, min_points=3), resid, float(sigma)


def _windows(events: list[dict], t: np.ndarray, h: int, dt: float, settle_fraction: float,
             min_drift_s: float, warnings: list[str]) -> list[LogEvent]:
    """Each event's window: from a little after the previous event to just before the next."""
    out = []
    for i, e in enumerate(events):
        prev_end = events[i - 1]["active_end"] if i > 0 else float(t[0])
        w0 = prev_end + settle_fraction * (e["start"] - prev_end) if i > 0 else float(t[0])
        w1 = events[i + 1]["start"] - (h + 1) * dt if i + 1 < len(events) else float(t[-1])
        if e["start"] - w0 < min_drift_s:
            warnings.append(f"{e['kind']} at {e['start']:.0f} s: drift period before it is only "
                            f"{e['start'] - w0:.0f} s")
        if w1 - e["active_end"] < min_drift_s:
            warnings.append(f"{e['kind']} at {e['start']:.0f} s: drift period after it is only "
                            f"{max(w1 - e['active_end'], 0.0):.0f} s")
        if w1 <= e["start"]:
            raise PeriodDetectionError(
                f"events overlap: the {e['kind']} at {e['start']:.0f} s has no after period",
                column="fire_time_s", found=e["start"])
        out.append(LogEvent(kind=e["kind"], start_s=float(e["start"]), end_s=float(e["end"]),
                            active_end_s=float(e["active_end"]), window_start_s=float(w0),
                            window_end_s=float(w1), u_start_s=float(e["u_start"]),
                            u_end_s=float(e["u_end"]), source=e["source"]))
    return out


def find_events(
    time_s,
    temperature_K,
    heater_intervals: Sequence[tuple] = (),
    *,
    fire_time_s: float | None = None,
    expect_reaction: bool = True,
    half_width_s: float = 15.0,
    n_sigma: float = 8.0,
    settle_fraction: float = 0.2,
    min_drift_s: float = 60.0,
    heater_source: str = "channels",
) -> LogEvents:
    """Locate the heater intervals and the reaction of one log and their reduction windows.

    Parameters
    ----------
    time_s, temperature_K
        The log's readings (s, K).
    heater_intervals
        ``(on_s, off_s, u_on_s, u_off_s)`` or ``(on_s, off_s, u_on_s, u_off_s, source)`` of
        each heater interval (from the channels or the sheet), in any order.
    fire_time_s
        Start of the reaction if known (sheet column ``fire_time_s``); otherwise detected.
    expect_reaction
        Look for a reaction (False for a stand-alone electrical calibration).
    half_width_s
        Half-width of the moving slope fit, s.
    n_sigma
        Threshold of the slope residual, in robust noise units.
    settle_fraction
        Fraction of each gap between events skipped after the earlier event.
    min_drift_s
        Drift periods shorter than this give a warning.
    heater_source
        Label of where the heater intervals came from when the tuples do not say
        (``'channels'`` or ``'sheet'``).

    Returns
    -------
    LogEvents

    Raises
    ------
    PeriodDetectionError
        When a reaction is expected but none is found (column ``fire_time_s``).
    """
    t = np.asarray(time_s, dtype=float)
    T = np.asarray(temperature_K, dtype=float)
    dt = median(np.diff(t))
    h = max(2, round(half_width_s / dt))
    heaters = sorted((float(h_[0]), float(h_[1]), float(h_[2]), float(h_[3]),
                      str(h_[4]) if len(h_) > 4 else heater_source)
                     for h_ in heater_intervals)
    quiet = np.ones(t.size, dtype=bool)
    for on, off, *_ in heaters:
        quiet &= ~((t >= on - (h + 1) * dt) & (t <= off + (4 * h + 1) * dt))
    if fire_time_s is not None:
        quiet &= ~((t >= fire_time_s - (h + 1) * dt) & (t <= fire_time_s + 10 * h * dt))
    segments, resid, sigma = _departures(t, T, quiet, h, n_sigma)

    events: list[dict] = []
    claimed = np.zeros(len(segments), dtype=bool)
    for on, off, u_on, u_off, src in heaters:
        end = off
        for j, (a, b) in enumerate(segments):
            if t[b] >= on - (h + 1) * dt and t[a] <= off + (h + 1) * dt:
                claimed[j] = True
                end = max(end, float(t[b]))
        events.append({"kind": "heater", "start": on, "end": off, "active_end": end,
                       "u_start": u_on, "u_end": u_off, "source": src})
    warnings: list[str] = []
    if expect_reaction:
        free = [(a, b) for j, (a, b) in enumerate(segments) if not claimed[j]]
        if fire_time_s is not None:
            start = float(fire_time_s)
            later = [(a, b) for a, b in free if t[b] >= start and t[a] <= start + 10 * h * dt]
            active_end = max([float(t[b]) for _, b in later], default=start + 2 * h * dt)
            events.append({"kind": "reaction", "start": start, "end": active_end,
                           "active_end": active_end, "u_start": 0.0, "u_end": 0.0,
                           "source": "given"})
        else:
            if not free:
                raise PeriodDetectionError(
                    "no reaction found in the log (no departure from Newtonian drift outside "
                    "the heater intervals)", column="fire_time_s",
                    expected="a detectable reaction, or its start time in fire_time_s")
            size = [abs(float(np.sum(resid[a:b + 1]))) for a, b in free]
            a, b = free[int(np.argmax(size))]
            if len(free) > 1:
                warnings.append(f"{len(free)} departures from drift outside the heater "
                                f"intervals; the largest (at {t[a]:.0f} s) taken as the reaction")
            start = float(t[max(a - h, 0)])
            events.append({"kind": "reaction", "start": start, "end": float(t[b]),
                           "active_end": float(t[b]), "u_start": 0.0, "u_end": 0.0,
                           "source": "detected"})
    events.sort(key=lambda e: e["start"])
    out = _windows(events, t, h, dt, settle_fraction, min_drift_s, warnings)
    return LogEvents(events=tuple(out), noise_slope_K_per_s=float(sigma),
                     warnings=tuple(warnings))


#: Dense logs are scanned for events on block means of at most this many points.
_SCAN_POINTS = 600


def list_heat_events(
    thermogram: Thermogram,
    *,
    half_width_s: float = 15.0,
    n_sigma: float = 8.0,
    min_gap_s: float = 120.0,
    min_fraction: float = 0.05,
    settle_fraction: float = 0.2,
    min_drift_s: float = 60.0,
) -> LogEvents:
    """Every heat event of a log, whatever its nature, with the window to reduce it on.

    An event is a stretch where the temperature departs from Newtonian drift (see
    :func:`find_events`); stretches closer than ``min_gap_s`` (or 10 readings) are one event
    (a two-body transient, a slow dissolution), and stretches whose departure from drift is
    below ``min_fraction`` of the largest event's are noise, not events. An event during
    which the ``heater_V`` channel shows power is labelled ``'heater'``, the others
    ``'event'``. The rise engine refuses to reduce a log with several events as one.

    Parameters
    ----------
    thermogram
        The log.
    half_width_s, n_sigma
        As for :func:`find_events`.
    min_gap_s
        Shortest drift period between two separate events, s.
    min_fraction
        Smallest departure from drift, relative to the largest event, that counts as an event.
    """
    t = np.asarray(thermogram.time_s, dtype=float)
    T = np.asarray(thermogram.temperature_K, dtype=float)
    if t.size < 12:
        return LogEvents(events=(), noise_slope_K_per_s=0.0)
    heater = thermogram.channels.get("heater_V")
    heater = None if heater is None else np.abs(np.asarray(heater, dtype=float))
    if t.size > _SCAN_POINTS:
        # events last minutes: block means of a dense log keep them and bound the cost
        block = -(-t.size // _SCAN_POINTS)
        n = t.size // block * block
        t, T = (x[:n].reshape(-1, block).mean(axis=1) for x in (t, T))
        if heater is not None:
            heater = heater[:n].reshape(-1, block).max(axis=1)
    dt = median(np.diff(t))
    h = max(2, min(round(half_width_s / dt), t.size // 4))
    segments, resid, sigma = _departures(t, T, np.ones(t.size, dtype=bool), h, n_sigma,
                                         passes=2)
    gap = max(round(min_gap_s / dt), 10)
    merged: list[list[int]] = []
    for a, b in segments:
        if merged and a - merged[-1][1] <= gap:
            merged[-1][1] = b
        else:
            merged.append([a, b])
    step = np.gradient(t)
    size = [abs(float(np.sum(resid[a:b + 1] * step[a:b + 1]))) for a, b in merged]
    biggest = max(size, default=0.0)
    events: list[dict] = []
    for (a, b), departure in zip(merged, size, strict=True):
        if departure < min_fraction * biggest:
            continue
        powered = heater is not None and bool(
            np.nanmax(heater[a:b + 1], initial=0.0)
            > 0.5 * np.nanmax(heater, initial=0.0) > 0)
        start = float(t[max(a - h, 0)])
        events.append({"kind": "heater" if powered else "event", "start": start,
                       "end": float(t[b]), "active_end": float(t[b]), "u_start": 0.0,
                       "u_end": 0.0, "source": "detected"})
    warnings: list[str] = []
    out = _windows(events, t, h, dt, settle_fraction, min_drift_s, warnings)
    return LogEvents(events=tuple(out), noise_slope_K_per_s=float(sigma),
                     warnings=tuple(warnings))
