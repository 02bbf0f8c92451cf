"""Statistics of a series of results — calibration series (bomb and solution calorimeters
alike) and sample series: mean, scatter, acceptance, outliers.

A calibration series (ASTM D240 §8.1: not less than six reference-material runs over at least
three days) gives the mean energy equivalent ε̄, the standard deviation s of one run, the
standard deviation of the mean s/√n and the relative standard deviation. The acceptance limit
on the RSD is configurable; the default 0.1 % is common practice for routine fuel work
(recalled: ASTM D4809 / ISO 1928 quote limits of about 0.1–0.2 %). A series beyond the limit
is reported with a warning, never rejected silently.

Outliers are *tested and reported*, never removed automatically: Grubbs' test as in ASTM E178,
``G = max|x_i − x̄|/s`` against the two-sided critical value from the t distribution,

    G_crit = (n − 1)/√n · √(t² / (n − 2 + t²)),   t = t_{1 − α/(2n), n − 2}.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

import numpy as np

from calwork.core.errors import CalibrationError, UncertaintyError

__all__ = [
    "DEFAULT_RSD_LIMIT_PERCENT",
    "SeriesStatistics",
    "grubbs_critical_value",
    "grubbs_test",
    "series_statistics",
]

#: Default acceptance limit on the relative standard deviation of a calibration series, %
#: (common practice for routine work; recalled).
DEFAULT_RSD_LIMIT_PERCENT = 0.1


def grubbs_critical_value(n: int, alpha: float = 0.05) -> float:
    """Two-sided critical value of Grubbs' statistic for ``n`` observations (ASTM E178).

    Examples
    --------
    >>> round(grubbs_critical_value(10), 3)   # ASTM E178 table, two-sided 5 %: 2.290
    2.29
    """
    if n < 3:
        raise CalibrationError("Grubbs' test needs at least 3 values", found=n)
    from scipy import stats  # imported on first use: core stays light

    t = stats.t.ppf(1.0 - alpha / (2.0 * n), n - 2)
    return (n - 1) / math.sqrt(n) * math.sqrt(t * t / (n - 2 + t * t))


def grubbs_test(values: Sequence[float], names: Sequence[str] | None = None,
                alpha: float = 0.05) -> dict[str, Any]:
    """Grubbs' test for one outlier (two-sided); a report, not a removal.

    Returns a dict with ``test``, ``alpha``, ``n``, ``G``, ``G_critical``, ``suspect``
    (name of the most extreme value), ``suspect_value``, ``outlier`` (bool) — or
    ``{"test": ..., "applied": False, "reason": ...}`` for fewer than 3 values or no scatter.
    """
    x = np.asarray(values, dtype=float)
    n = x.size
    base = {"test": "Grubbs (ASTM E178), two-sided", "alpha": alpha, "n": int(n)}
    if n < 3:
        return {**base, "applied": False, "reason": "fewer than 3 values"}
    s = float(np.std(x, ddof=1))
    if s == 0:
        return {**base, "applied": False, "reason": "no scatter"}
    dev = np.abs(x - x.mean())
    k = int(np.argmax(dev))
    G = float(dev[k] / s)
    crit = grubbs_critical_value(n, alpha)
    label = names[k] if names is not None else str(k)
    return {**base, "applied": True, "G": G, "G_critical": crit, "suspect": label,
            "suspect_value": float(x[k]), "outlier": bool(G > crit)}


@dataclass(frozen=True, kw_only=True)
class SeriesStatistics:
    """Statistics of a series of values (energy equivalents or massic energies)."""

    mean: float
    std_dev: float | None
    std_dev_of_mean: float | None
    rsd_percent: float | None
    n: int
    outlier_test: Mapping[str, Any] = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        object.__setattr__(self, "outlier_test", MappingProxyType(dict(self.outlier_test)))


def series_statistics(
    values: Sequence[float],
    names: Sequence[str] | None = None,
    *,
    rsd_limit_percent: float | None = DEFAULT_RSD_LIMIT_PERCENT,
    label: str = "series",
) -> SeriesStatistics:
    """Mean, standard deviation, standard deviation of the mean, RSD, n and Grubbs' test.

    Parameters
    ----------
    values
        The values of the series (any unit).
    names
        Run ids, for the outlier report.
    rsd_limit_percent
        Acceptance limit on the RSD, % (``None`` = no check); exceeding it gives a warning.
    label
        Name of the series in warnings.

    Examples
    --------
    >>> s = series_statistics([10000.0, 10001.0, 9999.0])
    >>> (s.mean, s.std_dev, round(s.rsd_percent, 4))
    (10000.0, 1.0, 0.01)
    """
    x = np.asarray(values, dtype=float)
    if x.size == 0:
        raise CalibrationError(f"{label}: no values")
    if not np.all(np.isfinite(x)):
        raise UncertaintyError(f"{label}: non-finite values", found=x.tolist())
    mean = float(x.mean())
    warnings: list[str] = []
    if x.size < 2:
        sd = sdm = rsd = None
        warnings.append(f"{label}: a single run, no scatter can be computed")
    else:
        sd = float(np.std(x, ddof=1))
        sdm = sd / math.sqrt(x.size)
        rsd = 100.0 * sd / abs(mean)
        if rsd_limit_percent is not None and rsd > rsd_limit_percent:
            warnings.append(
                f"{label}: relative standard deviation {rsd:.3f} % exceeds the acceptance "
                f"limit {rsd_limit_percent:g} %"
            )
    test = grubbs_test(x, names)
    if test.get("outlier"):
        warnings.append(
            f"{label}: Grubbs' test flags {test['suspect']} as an outlier "
            f"(G = {test['G']:.3f} > {test['G_critical']:.3f}); it was kept — "
            "investigate the run before removing it"
        )
    return SeriesStatistics(mean=mean, std_dev=sd, std_dev_of_mean=sdm, rsd_percent=rsd,
                            n=int(x.size), outlier_test=test, warnings=tuple(warnings))
