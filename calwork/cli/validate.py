"""``calwork validate``: accuracy of the temperature-rise methods on simulated runs."""

from __future__ import annotations

import argparse

from calwork.cli._common import print_json
from calwork.report.plain import render_text
from calwork.report.views import validation_document

__all__ = ["register", "run"]

_DESCRIPTION = """\
Simulate N thermograms of a calorimeter with known heat (calwork's own simulator; invented
data), reduce every one with each temperature-rise method (automatic period detection) and
print the bias and spread (ppm) against the known truth, the largest error, the mean stated
standard uncertainty and its coverage (fraction of runs with |error| <= 2u).

--calorimeter reads the calorimeter's parameters from a TOML file: a [calorimeter] table with
the fields of calwork.simulation.CalorimeterParams (optionally preset = "bomb" or "solution" to
start from a bundled set and override some fields); without it the bundled macro bomb
calorimeter is used. Bomb-sized calorimeters (>= 2 kJ/K) get a combustion of about 2.5 K,
smaller ones a 300 s heater interval of about 50 mK.
"""


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``validate`` subcommand."""
    p = subparsers.add_parser(
        "validate", help="accuracy of the rise methods on simulated runs",
        description=_DESCRIPTION, formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--calorimeter", metavar="PARAMS.toml",
                   help="calorimeter parameters (default: the bundled bomb calorimeter)")
    p.add_argument("--runs", type=int, default=20, metavar="N",
                   help="number of simulated runs (default 20)")
    p.add_argument("--seed", type=int, default=0, metavar="S",
                   help="first seed of the reading noise (default 0)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Simulate, reduce and print the validation table (or JSON)."""
    from calwork.simulation import CalorimeterParams
    from calwork.simulation.validation import validate_methods

    if args.calorimeter:
        params = CalorimeterParams.from_toml(args.calorimeter)
    else:
        params = CalorimeterParams.bomb_preset()
    result = validate_methods(params, args.runs, args.seed)
    if args.json:
        print_json(result)
    else:
        print(render_text(validation_document(result)), end="")
    return 0
