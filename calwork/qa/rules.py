"""Run rules for an individuals control chart (shift and trend signals).

calwork's default rules, each a common SPC practice (Shewhart individuals chart with
Western Electric / Nelson-style run rules; the exact run lengths differ between handbooks and
are configurable):

============================  =================================================  ===========
name                          signal                                             advice
============================  =================================================  ===========
``beyond-action``             1 point beyond the action limits (mean ± 3 s)      recalibrate
``two-of-three-warning``      2 of 3 successive points beyond the same warning   investigate
                              limit (mean ± 2 s)
``run-one-side``              7 successive points on one side of the mean        investigate
``trend``                     6 points in a row, each higher (or each lower)     investigate
                              than the one before
``moving-range``              a moving range above the MR chart's upper limit    investigate
                              D4 · MR̄
============================  =================================================  ===========

Rule specification text (``calwork qa --rules``): comma-separated names, each optionally with
its parameter, e.g. ``beyond-action,run-one-side=8,trend=6,two-of-three-warning=2/3``;
``default`` means :data:`DEFAULT_RULES`.
"""

from __future__ import annotations

import itertools
from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

from calwork.core.errors import CalworkError, check_choice

__all__ = ["DEFAULT_RULES", "RULES", "Rule", "Violation", "evaluate", "parse_rules"]

_ORIGIN = "common SPC practice"


@dataclass(frozen=True, kw_only=True)
class Rule:
    """One run rule: its name, parameters, the advice it triggers and where it comes from.

    ``n`` is the run length (points) or, for ``two-of-three-warning``, the number of points
    beyond the warning limit out of ``m`` successive points.
    """

    name: str
    n: int = 1
    m: int = 1
    severity: str = "investigate"
    origin: str = _ORIGIN

    @property
    def description(self) -> str:
        """The rule in words."""
        return {
            "beyond-action": "1 point beyond the action limits (mean ± 3 s)",
            "two-of-three-warning": f"{self.n} of {self.m} successive points beyond the same "
                                    "warning limit (mean ± 2 s)",
            "run-one-side": f"{self.n} successive points on one side of the mean",
            "trend": f"{self.n} points in a row, each higher (or each lower) than the one "
                     "before",
            "moving-range": "a moving range above the upper limit of the moving-range chart "
                            "(D4 · mean moving range)",
        }[self.name]

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "n": self.n, "m": self.m, "severity": self.severity,
                "description": self.description, "origin": self.origin}


#: Every rule calwork knows, with its default parameters.
RULES: dict[str, Rule] = {
    "beyond-action": Rule(name="beyond-action", severity="recalibrate",
                          origin=_ORIGIN + " (Shewhart chart; Western Electric rule 1)"),
    "two-of-three-warning": Rule(name="two-of-three-warning", n=2, m=3,
                                 origin=_ORIGIN + " (Western Electric rule 2)"),
    "run-one-side": Rule(name="run-one-side", n=7,
                         origin=_ORIGIN + " (run rule; handbooks use 7 to 9 points — "
                                          "the Western Electric handbook 8, Nelson 9; "
                                          "recalled from memory)"),
    "trend": Rule(name="trend", n=6, origin=_ORIGIN + " (Nelson rule 3; recalled from memory)"),
    "moving-range": Rule(name="moving-range",
                         origin=_ORIGIN + " (moving-range chart, UCL = D4 · MR̄)"),
}

#: The rules in force unless others are asked for (calwork's defaults).
DEFAULT_RULES: tuple[Rule, ...] = tuple(RULES.values())


def parse_rules(spec: str | None) -> tuple[Rule, ...]:
    """Rules from a specification such as ``"beyond-action,run-one-side=8,trend=6"``.

    Examples
    --------
    >>> [(r.name, r.n) for r in parse_rules("beyond-action,run-one-side=8")]
    [('beyond-action', 1), ('run-one-side', 8)]
    """
    if spec is None or spec.strip() in ("", "default"):
        return DEFAULT_RULES
    rules = []
    for item in (p.strip() for p in spec.split(",")):
        if not item:
            continue
        if item == "default":
            rules.extend(DEFAULT_RULES)
            continue
        name, _, param = item.partition("=")
        base = RULES[check_choice("rule", name.strip(), RULES)]
        if param:
            base = _with_param(base, param.strip(), item)
        rules.append(base)
    if not rules:
        raise CalworkError("no run rules given", found=spec, expected="e.g. 'default'")
    return tuple(rules)


def _with_param(rule: Rule, param: str, item: str) -> Rule:
    try:
        if rule.name == "two-of-three-warning":
            n, _, m = param.partition("/")
            n_i, m_i = int(n), int(m or rule.m)
            if not 1 <= n_i <= m_i:
                raise ValueError
            return replace(rule, n=n_i, m=m_i)
        if rule.name in ("run-one-side", "trend"):
            n_i = int(param)
            if n_i < 2:
                raise ValueError
            return replace(rule, n=n_i)
    except ValueError:
        pass
    raise CalworkError(f"bad parameter for run rule {rule.name!r}", found=item,
                       expected="run-one-side=N (N >= 2), trend=N (N >= 2) or "
                                "two-of-three-warning=K/M (1 <= K <= M); other rules take none")


@dataclass(frozen=True, kw_only=True)
class Violation:
    """A rule signalled at point ``index`` (the point completing the pattern)."""

    rule: str
    severity: str
    index: int
    indices: tuple[int, ...]
    side: str
    label: str = ""
    date: str | None = None
    message: str = ""

    def to_dict(self) -> dict[str, Any]:
        return {"rule": self.rule, "severity": self.severity, "index": self.index,
                "indices": list(self.indices), "side": self.side, "run": self.label,
                "date": self.date, "message": self.message}


def _runs(flags: Sequence[int]) -> list[tuple[int, int, int]]:
    """Maximal runs ``(start, end, value)`` of equal non-zero values in ``flags``."""
    out, start = [], 0
    for i in range(1, len(flags) + 1):
        if i == len(flags) or flags[i] != flags[start]:
            if flags[start] != 0:
                out.append((start, i - 1, flags[start]))
            start = i
    return out


def evaluate(rule: Rule, z: Sequence[float], moving_ranges: Sequence[float | None],
             mr_limit: float) -> list[tuple[int, tuple[int, ...], str]]:
    """Signals of one rule: ``(index, indices of the pattern, side)``.

    ``z`` are the standardised values ``(x - mean) / s``.
    """
    z = [float(v) for v in z]
    hits: list[tuple[int, tuple[int, ...], str]] = []
    if rule.name == "beyond-action":
        hits = [(i, (i,), "above" if v > 0 else "below") for i, v in enumerate(z) if abs(v) > 3]
    elif rule.name == "two-of-three-warning":
        for sign, side in ((1, "above"), (-1, "below")):
            beyond = [sign * v > 2 for v in z]
            for i in range(len(z)):
                window = range(max(0, i - rule.m + 1), i + 1)
                inside = [j for j in window if beyond[j]]
                if beyond[i] and len(window) == rule.m and len(inside) >= rule.n:
                    hits.append((i, tuple(inside), side))
    elif rule.name == "run-one-side":
        signs = [(v > 0) - (v < 0) for v in z]
        for start, end, value in _runs(signs):
            if end - start + 1 >= rule.n:
                hits.append((start + rule.n - 1, tuple(range(start, end + 1)),
                             "above" if value > 0 else "below"))
    elif rule.name == "trend":
        steps = [0] + [(b > a) - (b < a) for a, b in itertools.pairwise(z)]
        for start, end, value in _runs(steps):
            first = start - 1  # the point before the first step starts the run
            if end - first + 1 >= rule.n:
                hits.append((first + rule.n - 1, tuple(range(first, end + 1)),
                             "up" if value > 0 else "down"))
    elif rule.name == "moving-range":
        hits = [(i, (i - 1, i), "above") for i, mr in enumerate(moving_ranges)
                if mr is not None and mr > mr_limit]
    return sorted(hits)
