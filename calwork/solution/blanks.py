"""Ampoule-breaking blanks (docs/methods.md §2.4).

Breaking an empty sealed ampoule in the solvent releases a small heat ``q_break`` (mechanical
work, glass fracture, stirring disturbance), of order millijoules. Blank runs (sheet kind
``blank``) on a calorimeter measure it: each gives ``q = ε ΔT_c`` (heat released into the
calorimeter; the vaporisation into the empty ampoule's gas space, if its volume is given, is
taken out so the blank is the breaking energy alone). The correction applied to a reaction
run on the same calorimeter is the mean ``q̄`` with two uncertainty components:

* ``ampoule_breaking``: the ampoule-to-ampoule standard deviation ``s`` (the breaking energy of
  the run's own ampoule differs from the mean by about that much; independent between runs);
* ``blank_mean``: the standard deviation of the mean, ``s/√n``, shared by every run that uses
  the same blank series (it does not average down over a series; docs/methods.md §4.5).

With a single blank the spread is unknown; its own measurement uncertainty is used for both
components and a warning says so.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, fields

import numpy as np

from calwork.core.errors import UncertaintyError
from calwork.core.results import jsonable

__all__ = ["BlankCorrection", "blank_correction"]


@dataclass(frozen=True, kw_only=True)
class BlankCorrection:
    """Mean ampoule-breaking heat of a calorimeter's blank runs (J, released into it)."""

    calorimeter: str | None
    mean_J: float
    std_dev_J: float | None
    #: Uncertainty of one run's breaking energy about the mean (ampoule-to-ampoule), J.
    u_spread_J: float
    #: Standard deviation of the mean (shared by all runs corrected with it), J.
    u_mean_J: float
    n_runs: int
    runs: tuple[str, ...]
    values_J: tuple[float, ...]
    warnings: tuple[str, ...] = ()

    @property
    def u_J(self) -> float:
        """Total standard uncertainty of the correction for one run, √(s² + s²/n), J."""
        return math.hypot(self.u_spread_J, self.u_mean_J)

    def to_dict(self) -> dict[str, object]:
        out = {f.name: jsonable(getattr(self, f.name)) for f in fields(self)}
        out["u_J"] = self.u_J
        return out

    def report(self) -> str:
        sd = "n/a" if self.std_dev_J is None else f"{self.std_dev_J * 1e3:.2f} mJ"
        return (f"ampoule blank ({self.calorimeter}): q̄ = {self.mean_J * 1e3:.2f} mJ from "
                f"{self.n_runs} runs, s = {sd}, u(run) = {self.u_J * 1e3:.2f} mJ")


def blank_correction(
    values_J: Sequence[float],
    *,
    runs: Sequence[str],
    u_values_J: Sequence[float] | None = None,
    calorimeter: str | None = None,
) -> BlankCorrection:
    """The ampoule-breaking correction from a calorimeter's blank runs.

    Parameters
    ----------
    values_J
        Heat of each blank run, J (released into the calorimeter; normally > 0).
    runs
        Run ids, same order.
    u_values_J
        Measurement uncertainty of each blank, J (needed when there is only one blank).
    calorimeter
        Calorimeter name.

    Examples
    --------
    >>> b = blank_correction([0.010, 0.012, 0.008], runs=["b1", "b2", "b3"])
    >>> round(b.mean_J, 4), round(b.std_dev_J, 4), round(b.u_mean_J, 5)
    (0.01, 0.002, 0.00115)
    """
    q = np.asarray(values_J, dtype=float)
    if q.size == 0 or q.size != len(runs):
        raise UncertaintyError("blank correction needs one value per blank run",
                               column="kind", found=(q.size, len(runs)))
    warnings: list[str] = []
    mean = float(np.mean(q))
    if q.size >= 2:
        s = float(np.std(q, ddof=1))
        u_spread, u_mean, std = s, s / math.sqrt(q.size), s
        if s == 0:
            raise UncertaintyError("blank runs are identical: their spread is zero",
                                   column="kind", found=q.tolist())
    else:
        if u_values_J is None or not u_values_J or not u_values_J[0] > 0:
            raise UncertaintyError("a single blank needs its own measurement uncertainty",
                                   column="kind", found=None if u_values_J is None
                                   else list(u_values_J))
        u_spread = u_mean = float(u_values_J[0])
        std = None
        warnings.append("only one blank run: ampoule-to-ampoule spread unknown; its "
                        "measurement uncertainty is used")
    return BlankCorrection(calorimeter=calorimeter, mean_J=mean, std_dev_J=std,
                           u_spread_J=u_spread, u_mean_J=u_mean, n_runs=int(q.size),
                           runs=tuple(runs), values_J=tuple(q.tolist()),
                           warnings=tuple(warnings))
