"""``calwork simulate``: write simulated logs and a run sheet."""

from __future__ import annotations

import argparse

from calwork.cli._choices import SCENARIOS
from calwork.cli._common import print_json, with_safety_note
from calwork.report.plain import render_text
from calwork.report.views import simulated_logs_document

__all__ = ["register", "run"]

_DESCRIPTION = """\
Write simulated temperature logs and a run sheet (runs.csv) into DIR, made with calwork's
physical isoperibol calorimeter model (exact integration, seeded noise).

Scenarios:
  bomb      N benzoic-acid calibrations and N combustions of an invented sample
            (macro bomb calorimeter, epsilon = 10 kJ/K)
  solution  N logs with an electrical calibration before and after an endothermic
            dissolution (small solution calorimeter, epsilon = 360 J/K)

Everything written is invented data, labelled "simulated" in every log and in the
run sheet's notes. --calorimeter reads a [calorimeter] table with the field names of
calwork.simulation.CalorimeterParams (optionally preset = "bomb" or "solution").

"""


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``simulate`` subcommand."""
    p = subparsers.add_parser(
        "simulate", help="write simulated logs and a run sheet",
        description=with_safety_note(_DESCRIPTION),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("--out", required=True, metavar="DIR",
                   help="output folder (created; must be new or empty unless --overwrite)")
    p.add_argument("--calorimeter", metavar="PARAMS.toml",
                   help="calorimeter parameters ([calorimeter] table); default the preset of "
                        "the scenario")
    p.add_argument("--scenario", choices=SCENARIOS, default="bomb",
                   help="what to simulate (default: bomb)")
    p.add_argument("--runs", type=int, default=5, metavar="N",
                   help="number of runs (of each kind for bomb; default 5)")
    p.add_argument("--seed", type=int, default=0, metavar="S",
                   help="random seed: same seed, same files (default 0)")
    p.add_argument("--format", dest="fmt", choices=("csv", "xlsx"), default="csv",
                   help="log file format (default csv; the run sheet is always runs.csv)")
    p.add_argument("--duration", type=float, default=None, metavar="S",
                   help="length of each log in s (default: bomb 2400, solution 2700)")
    p.add_argument("--overwrite", action="store_true",
                   help="write into a folder that already holds files (runs.csv and logs of "
                   "the same names are replaced)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.set_defaults(func=run)


def _check_out(out: str, overwrite: bool) -> None:
    """Refuse a non-empty output folder unless --overwrite: the simulated runs.csv and logs
    (cal-01.csv, ...) carry the names a laboratory's own files may have, and replacing real
    data with invented data without a word would be silent data loss."""
    from pathlib import Path

    from calwork.core.errors import ExportError

    folder = Path(out)
    if overwrite or not folder.is_dir():
        return
    present = sorted(p.name for p in folder.iterdir())
    if present:
        shown = ", ".join(present[:5]) + (", ..." if len(present) > 5 else "")
        raise ExportError("the output folder is not empty; simulated files would replace "
                          "files of the same names", path=out, found=shown,
                          expected="a new or empty folder, or --overwrite")


def run(args: argparse.Namespace) -> int:
    """Write the scenario and print what was written."""
    from calwork.simulation import CalorimeterParams, build_scenario

    _check_out(args.out, args.overwrite)
    params = CalorimeterParams.from_toml(args.calorimeter) if args.calorimeter else None
    written = build_scenario(args.scenario, args.out, params=params, runs=args.runs,
                             seed=args.seed, fmt=args.fmt, duration_s=args.duration)
    if args.json:
        print_json({
            "out": str(args.out),
            "run_sheet": "runs.csv",
            "simulated": True,
            "runs": [{"run": w.row["run"], "kind": w.row["kind"], "log": w.row["log"],
                      "true_heat_J": w.reaction_heat_J, "true_rise_K": w.reaction_rise_K,
                      "true_electrical_J": w.electrical_energy_J,
                      "truth": w.run.truth.to_dict()} for w in written],
        })
        return 0
    print(render_text(simulated_logs_document(written, str(args.out))), end="")
    return 0
