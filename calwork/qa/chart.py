"""Individuals and moving-range control chart of a calorimeter's energy equivalent.

Method (docs/methods.md §6.2, common SPC practice): the mean ε̄ and the single-run standard
deviation s(ε) come from the standardisation series (the baseline); each later value is
plotted against warning limits ε̄ ± 2 s and action limits ε̄ ± 3 s. The moving range
MR_i = |ε_i − ε_(i−1)| is charted against MR̄ (over the baseline) and the upper limit
D4 · MR̄ (the lower limit D3 · MR̄ is 0 for ranges of two). Run rules
(:mod:`calwork.qa.rules`) flag shifts and trends; the recommendation follows the most severe
signal: *recalibrate* for a point beyond the action limits, *investigate* for a run-rule
signal, else *in control*.

QA note: a control chart tells when the calorimeter has changed, not why. Before
recalibrating, check the usual causes (a changed or serviced part — bomb, vessel,
thermometer, stirrer, jacket —, the water mass, oxygen pressure, crucible, benzoic-acid lot);
ASTM D240 §8.1 asks for a new standardisation after changing any part of the calorimeter.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from calwork.core.errors import CalibrationError
from calwork.qa.rules import DEFAULT_RULES, Rule, Violation, evaluate

__all__ = ["D2_N2", "D4_N2", "ControlChart", "Recommendation", "control_chart"]

#: Control-chart constant D4 for moving ranges of n = 2 (UCL of the MR chart = D4 · MR̄).
#: 3.267 is the tabulated value of the standard SPC constants tables (e.g. ASTM MNL 7,
#: recalled from memory); it equals 1 + 3 d3/d2 with d2 = 2/√π and d3 = √(2 − 4/π), the mean
#: and standard deviation of the range of two standard normal values (derived; checked in
#: tests/test_qa.py).
D4_N2 = 3.267
#: d2 for n = 2 (mean range of two standard normal values, 2/√π = 1.128); σ ≈ MR̄ / d2.
D2_N2 = 2.0 / math.sqrt(math.pi)

#: ASTM D240 §8.1: the energy equivalent is the mean of not less than six standardisation
#: tests (docs/methods.md §6.1, seen).
MIN_BASELINE_RUNS = 6
#: Fewer baseline points than this give no control limits worth judging by (common SPC
#: practice; a chart with limits from 2–4 points of its own signals nothing).
MIN_POINTS_FOR_LIMITS = 5


@dataclass(frozen=True, kw_only=True)
class Recommendation:
    """What to do: ``action`` is ``'recalibrate'``, ``'investigate'``, ``'in control'`` or
    ``'too few for control limits'`` (a baseline of fewer than
    :data:`MIN_POINTS_FOR_LIMITS` points)."""

    action: str
    reason: str

    def to_dict(self) -> dict[str, str]:
        return {"action": self.action, "reason": self.reason}


@dataclass(frozen=True, kw_only=True)
class ControlChart:
    """An individuals / moving-range chart with its run-rule signals and advice.

    Attributes
    ----------
    values
        The charted values in order (e.g. ε of each calibration run, J/K).
    labels, dates
        Run id and date of every point.
    moving_ranges
        |x_i − x_(i−1)|, ``None`` for the first point (unit of the values).
    mean, std
        Centre line and single-value standard deviation from the baseline.
    baseline_indices, baseline_source
        Points forming the baseline and how it was chosen.
    warning_limits, action_limits
        (lower, upper) = mean ∓ 2 s and mean ∓ 3 s.
    mr_mean, mr_upper_limit
        MR̄ over the baseline and D4 · MR̄.
    """

    quantity: str
    unit: str
    values: tuple[float, ...]
    labels: tuple[str, ...]
    dates: tuple[str | None, ...]
    moving_ranges: tuple[float | None, ...]
    mean: float
    std: float
    baseline_indices: tuple[int, ...]
    baseline_source: str
    warning_limits: tuple[float, float]
    action_limits: tuple[float, float]
    mr_mean: float
    mr_upper_limit: float
    sigma_from_moving_range: float
    violations: tuple[Violation, ...]
    recommendation: Recommendation
    rules: tuple[Rule, ...]
    notes: tuple[str, ...] = ()
    d4: float = D4_N2
    title: str = field(default="")

    @property
    def z(self) -> np.ndarray:
        """Standardised values (x − mean) / s."""
        return (np.asarray(self.values) - self.mean) / self.std

    def to_dict(self) -> dict[str, Any]:
        z = self.z
        in_base = set(self.baseline_indices)
        return {
            "quantity": self.quantity, "unit": self.unit, "title": self.title,
            "points": [
                {"index": i, "run": lab, "date": d, "value": v, "moving_range": mr,
                 "z": float(zi), "baseline": i in in_base}
                for i, (lab, d, v, mr, zi) in enumerate(zip(
                    self.labels, self.dates, self.values, self.moving_ranges, z, strict=True))
            ],
            "mean": self.mean, "std": self.std,
            "baseline": {"n": len(self.baseline_indices), "source": self.baseline_source,
                         "runs": [self.labels[i] for i in self.baseline_indices]
                         if self.baseline_indices else []},
            "warning_limits": list(self.warning_limits),
            "action_limits": list(self.action_limits),
            "moving_range": {"mean": self.mr_mean, "upper_limit": self.mr_upper_limit,
                             "lower_limit": 0.0, "d4": self.d4,
                             "d4_source": "SPC constants table, n = 2 (1 + 3 d3/d2)",
                             "sigma_estimate": self.sigma_from_moving_range},
            "violations": [v.to_dict() for v in self.violations],
            "recommendation": self.recommendation.to_dict(),
            "rules": [r.to_dict() for r in self.rules],
            "defaults": "calwork's default run rules (common SPC practice); limits "
                        "mean ± 2 s (warning) and ± 3 s (action)",
            "notes": list(self.notes),
        }


def _fmt_point(labels: Sequence[str], dates: Sequence[str | None], i: int) -> str:
    return f"run {labels[i]}" + (f" ({dates[i]})" if dates[i] else "")


def _message(rule: Rule, index: int, indices: tuple[int, ...], side: str,
             labels: Sequence[str], dates: Sequence[str | None], values: Sequence[float],
             unit: str) -> str:
    here = _fmt_point(labels, dates, index)
    since = _fmt_point(labels, dates, indices[0])
    if rule.name == "beyond-action":
        limit = "upper" if side == "above" else "lower"
        return f"{here} beyond the {limit} action limit (value {values[index]:.6g} {unit})"
    if rule.name == "two-of-three-warning":
        limit = "upper" if side == "above" else "lower"
        return f"{rule.n} of {rule.m} points beyond the {limit} warning limit at {here}"
    if rule.name == "run-one-side":
        return f"{len(indices)} successive points {side} the mean since {since}"
    if rule.name == "trend":
        return (f"{len(indices)} points in a row {'increasing' if side == 'up' else 'decreasing'}"
                f" since {since}")
    return f"moving range at {here} above the moving-range upper limit"


def _recommend(violations: Sequence[Violation], n_points: int) -> Recommendation:
    for action in ("recalibrate", "investigate"):
        hits = [v for v in violations if v.severity == action]
        if hits:
            latest = max(hits, key=lambda v: (v.index, v.rule))
            more = f" ({len(hits)} such signals in all)" if len(hits) > 1 else ""
            return Recommendation(action=action, reason=latest.message + more)
    return Recommendation(action="in control",
                          reason=f"{n_points} points, none beyond the action limits and no "
                                 "run-rule signal")


def control_chart(values: Sequence[float], labels: Sequence[str] | None = None, *,
                  dates: Sequence[str | None] | None = None, baseline_n: int | None = None,
                  baseline_labels: Sequence[str] | None = None,
                  rules: Sequence[Rule] = DEFAULT_RULES,
                  quantity: str = "energy_equivalent_J_per_K", unit: str = "J/K",
                  title: str = "") -> ControlChart:
    """Individuals / moving-range control chart with run rules and a recommendation.

    Parameters
    ----------
    values
        The series in time order (e.g. ε of each calibration run, J/K).
    labels
        Run id of each point (default ``'1'``, ``'2'``, ...).
    dates
        ISO date of each point (for messages), or ``None``.
    baseline_n
        Use the first ``baseline_n`` points as the standardisation series.
    baseline_labels
        Or: the points with these labels (a named calibration series).
    rules
        Run rules (:data:`calwork.qa.rules.DEFAULT_RULES`).
    quantity, unit
        Name and unit of the values (for reports).

    Without a baseline, all points form it (a first-phase chart).

    Examples
    --------
    >>> chart = control_chart([10001.0, 10003.0, 9999.0, 10002.0, 10000.0, 10001.5])
    >>> chart.recommendation.action
    'in control'
    """
    x = np.asarray(values, dtype=float)
    n = x.size
    if n < 2 or not np.all(np.isfinite(x)):
        raise CalibrationError("a control chart needs at least 2 finite values", found=n)
    labels = tuple(str(v) for v in (labels if labels is not None else range(1, n + 1)))
    dates = tuple(dates) if dates is not None else (None,) * n
    if len(labels) != n or len(dates) != n:
        raise CalibrationError("labels and dates must match the values in number",
                               found=(n, len(labels), len(dates)))
    notes: list[str] = []
    if baseline_labels is not None:
        wanted = set(baseline_labels)
        base = tuple(i for i, lab in enumerate(labels) if lab in wanted)
        source = "named calibration series"
    elif baseline_n is not None:
        if not 2 <= baseline_n <= n:
            raise CalibrationError("baseline must hold at least 2 of the charted points",
                                   found=baseline_n, expected=f"2 .. {n}")
        base = tuple(range(baseline_n))
        source = f"first {baseline_n} points"
    else:
        base = tuple(range(n))
        source = "all points (first-phase chart)"
    if len(base) < 2:
        raise CalibrationError("the baseline series has fewer than 2 points", found=len(base))
    if len(base) < MIN_BASELINE_RUNS:
        notes.append(f"baseline has {len(base)} runs; ASTM D240 §8.1 asks for at least "
                     f"{MIN_BASELINE_RUNS} standardisation tests (bomb calorimetry)")
    xb = x[list(base)]
    mean = float(np.mean(xb))
    std = float(np.std(xb, ddof=1))
    if not std > 0:
        raise CalibrationError("the baseline values are all equal; no standard deviation "
                               "to set control limits", found=float(xb[0]))
    mr = [None] + [float(abs(b - a)) for a, b in itertools.pairwise(x)]
    in_base = set(base)
    base_mr = [mr[i] for i in base if i > 0 and i - 1 in in_base]
    mr_mean = float(np.mean(base_mr)) if base_mr else D2_N2 * std
    if not base_mr:
        notes.append("baseline has no consecutive points; MR̄ taken as d2 · s")
    z = (x - mean) / std
    violations = []
    for rule in rules:
        for index, indices, side in evaluate(rule, z, mr, D4_N2 * mr_mean):
            violations.append(Violation(
                rule=rule.name, severity=rule.severity, index=index, indices=indices,
                side=side, label=labels[index], date=dates[index],
                message=_message(rule, index, indices, side, labels, dates, x, unit)))
    violations.sort(key=lambda v: (v.index, v.rule))
    return ControlChart(
        quantity=quantity, unit=unit, values=tuple(float(v) for v in x), labels=labels,
        dates=dates, moving_ranges=tuple(mr), mean=mean, std=std, baseline_indices=base,
        baseline_source=source, warning_limits=(mean - 2 * std, mean + 2 * std),
        action_limits=(mean - 3 * std, mean + 3 * std), mr_mean=mr_mean,
        mr_upper_limit=D4_N2 * mr_mean, sigma_from_moving_range=mr_mean / D2_N2,
        violations=tuple(violations),
        recommendation=(_recommend(violations, n) if len(base) >= MIN_POINTS_FOR_LIMITS
                        else Recommendation(
                            action="too few for control limits",
                            reason=f"the baseline has {len(base)} points; control limits need "
                                   f"at least {MIN_POINTS_FOR_LIMITS} (the limits shown are "
                                   "from those points only, not a judgement)")),
        rules=tuple(rules), notes=tuple(notes), title=title,
    )
