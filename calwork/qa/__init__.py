"""Quality control of calorimeter calibrations: control charts, run rules, recalibration advice.

:func:`control_chart` builds an individuals / moving-range chart of a series (usually the
energy equivalent ε of each calibration run, in date order) with warning (± 2 s) and action
(± 3 s) limits from the standardisation series, applies run rules (:mod:`calwork.qa.rules`,
calwork's defaults are common SPC practice) and recommends *recalibrate*, *investigate* or
*in control*. :func:`plot_control_chart` draws it.
"""

from calwork.qa.chart import D4_N2, ControlChart, Recommendation, control_chart
from calwork.qa.plot import plot_control_chart
from calwork.qa.rules import DEFAULT_RULES, RULES, Rule, Violation, parse_rules

__all__ = [
    "D4_N2",
    "DEFAULT_RULES",
    "RULES",
    "ControlChart",
    "Recommendation",
    "Rule",
    "Violation",
    "control_chart",
    "parse_rules",
    "plot_control_chart",
]
