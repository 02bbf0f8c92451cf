"""Noise, spikes, gaps and the machine-readable warnings of the temperature-rise engine.

Every warning is a string ``"<code>: <text>"`` with one of the stable codes of
:data:`WARNING_CODES`, so callers can filter on the prefix.
"""

from __future__ import annotations

import numpy as np
from scipy.ndimage import median_filter

from calwork.core.numeric import median

__all__ = [
    "MIN_PERIOD_READINGS",
    "MIN_PERIOD_S",
    "WARNING_CODES",
    "ar1_inflation",
    "find_spikes",
    "format_times",
    "robust_noise_K",
    "sampling_gaps",
    "warning",
]

#: Stable warning codes (the text before the first colon of every warning).
WARNING_CODES = {
    "fore-short": "fore period shorter than 5 min or 10 readings",
    "after-short": "after period shorter than 5 min or 10 readings",
    "fore-not-newtonian": "fore-period residuals show a trend the Newtonian drift does not explain",
    "after-not-newtonian": "the after period is not yet Newtonian (transient still decaying)",
    "spikes-removed": "single-reading outliers removed before the fit (count and times)",
    "sampling-gap": "an interval between readings is much longer than the median interval",
    "noise-high": "reading noise large compared with the rise",
    "autocorrelated-residuals": "drift-period residuals are serially correlated (Durbin–Watson)",
    "drift-implausible": "k ≤ 0 or T_∞ far from the jacket temperature",
    "methods-disagree": "newton-fit and Regnault–Pfaundler differ beyond their uncertainties",
    "cross-check-failed": "the cross-check by another method could not be computed",
    "fire-time-late": "the given firing time is after the detected onset of the rise",
    "main-end-early": "the given end of the main period is before the detected plateau",
    "dickinson-60-percent": "the 60 % shortcut differs from the equal-area Dickinson value",
    "boundary-uncertain": "a detected period boundary is poorly defined",
    "time-unit-assumed": "the log names no time unit; the importer assumed seconds",
    "boundary-component-incomplete": "a part of the boundary uncertainty could not be "
                                     "evaluated (the message says which; give the boundary)",
    "few-degrees-of-freedom": "the drift fits rest on few readings: their scatter-based "
                              "uncertainty is widened by Student's t",
    "main-end-unconfirmed": "the after period is too short to confirm that the rise had "
                            "ended (the message names the time to check)",
}

#: Minimum fore/after lengths (ASTM D240 rates over 5 min before firing and after c; ISO 1928
#: similar — recalled from memory, docs/methods.md §1.2/§1.7) and a minimum reading count [D].
MIN_PERIOD_S = 300.0
MIN_PERIOD_READINGS = 10


def warning(code: str, text: str) -> str:
    """``"code: text"``; ``code`` must be one of :data:`WARNING_CODES`."""
    if code not in WARNING_CODES:  # pragma: no cover - programming error
        raise KeyError(code)
    return f"{code}: {text}"


def format_times(times_s, limit: int = 8) -> str:
    """``'12.0, 85.0 s'`` (at most ``limit`` times, then ``…``)."""
    values = [f"{float(v):.6g}" for v in times_s]
    if len(values) > limit:
        values = [*values[:limit], "…"]
    return ", ".join(values) + " s"


def robust_noise_K(temperature_K: np.ndarray) -> float:
    """Reading noise σ (K) from the median absolute second difference.

    For white noise of standard deviation σ the second difference has standard deviation
    ``σ√6``; the median is insensitive to the main period and to spikes. A floor from the
    root-mean-square of the central second differences protects heavily quantised records
    (where most second differences are exactly zero).
    """
    T = np.asarray(temperature_K, dtype=float)
    if T.size < 5:
        return float(np.std(T)) or 1e-12
    d2 = T[2:] - 2.0 * T[1:-1] + T[:-2]
    a = np.abs(d2 - median(d2))
    sigma = 1.4826 * median(a) / np.sqrt(6.0)
    if sigma <= 0.0:
        central = np.sort(a)[: max(1, int(0.9 * a.size))]
        sigma = float(np.sqrt(np.mean(central**2) / 6.0))
    # last resort: the floating-point resolution of the readings
    return max(sigma, 4.0 * np.finfo(float).eps * float(np.max(np.abs(T))))


def running_median5_K(temperature_K: np.ndarray) -> np.ndarray:
    """Running median of five readings (the ends repeat the first and last reading), K."""
    return median_filter(np.asarray(temperature_K, dtype=float), size=5, mode="nearest")


def find_spikes(temperature_K: np.ndarray, sigma_K: float, *, threshold: float = 8.0,
                allowed: np.ndarray | None = None,
                median5_K: np.ndarray | None = None) -> np.ndarray:
    """Indices of single-reading outliers: ``|T − median₅(T)| > threshold·σ``.

    A running median of five readings passes monotonic stretches (the rise) unchanged, so only
    isolated departures (one or two readings) stand out. ``allowed`` (boolean, same length)
    restricts the search, e.g. to the drift periods; ``median5_K`` is
    :func:`running_median5_K` of the readings when the caller has it already.
    """
    T = np.asarray(temperature_K, dtype=float)
    if T.size < 7:
        return np.zeros(0, dtype=np.int64)
    resid = T - (running_median5_K(T) if median5_K is None else median5_K)
    bad = np.abs(resid) > threshold * sigma_K
    if allowed is not None:
        bad &= allowed
    return np.flatnonzero(bad)


def sampling_gaps(time_s: np.ndarray, factor: float = 3.0) -> list[tuple[float, float]]:
    """Intervals ``(t_before, t_after)`` longer than ``factor`` × the median interval."""
    t = np.asarray(time_s, dtype=float)
    d = np.diff(t)
    if d.size == 0:
        return []
    med = median(d)
    idx = np.flatnonzero(d > factor * med)
    return [(float(t[i]), float(t[i + 1])) for i in idx]


def ar1_inflation(rho1: float, *, cap: float = 0.95) -> float:
    """Variance inflation ``(1 + ρ)/(1 − ρ)`` of a mean under AR(1) noise (1 for ρ ≤ 0).

    The effective number of independent readings of an AR(1) series is ``n (1 − ρ)/(1 + ρ)``;
    the same factor is applied to the whole fit covariance (common practice for serially
    correlated residuals).
    """
    rho = min(max(float(rho1), 0.0), cap)
    return (1.0 + rho) / (1.0 - rho)
