"""Option choices of the command line, mirrored from the libraries they select in.

The parsers need these lists when ``calwork --help`` is built; importing the numerical layers
for them would slow every command's start-up, so they are repeated here and
``tests/test_cli_startup.py`` checks that each list equals the registry it mirrors.
"""

from __future__ import annotations

__all__ = ["DICKINSON_RULES", "RISE_METHODS", "SCENARIOS", "WORST_OFFENDER_MODES"]

#: calwork.rise.METHODS
RISE_METHODS = ("dickinson", "newton-fit", "regnault-pfaundler")
#: calwork.rise.DICKINSON_RULES
DICKINSON_RULES = ("equal-area", "60-percent")
#: calwork.hess.network.WORST_OFFENDER_MODES
WORST_OFFENDER_MODES = ("none", "report", "inflate")
#: calwork.simulation.SCENARIOS
SCENARIOS = ("bomb", "solution")
