"""Option choices of the command line, mirrored from the libraries they select in.

The parsers need these lists when ``calwork --help`` is built; importing the numerical layers
for them would slow every command's start-up, so they are repeated here and
``tests/test_cli_startup.py`` checks that each list equals the registry it mirrors. (The rise
methods come from their own light registry, :mod:`calwork.rise.registry`.)
"""

from __future__ import annotations

__all__ = ["SCENARIOS", "WORST_OFFENDER_MODES"]

#: calwork.hess.network.WORST_OFFENDER_MODES
WORST_OFFENDER_MODES = ("none", "report", "inflate")
#: calwork.simulation.SCENARIOS
SCENARIOS = ("bomb", "solution")
