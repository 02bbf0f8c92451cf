"""``calwork reduce SHEET``: the whole reduction of a run sheet.

Exit status: 0 when every run was reduced; 1 when the sheet was reduced but some runs failed
(they are listed with their errors); 2 when the sheet cannot be read at all (one line on
stderr).
"""

from __future__ import annotations

import argparse
import sys

from calwork.cli._common import print_json
from calwork.core.results import Reduction
from calwork.core.safety import SAFETY_NOTE
from calwork.report.plain import render_text
from calwork.report.summary import summary_document
from calwork.rise.registry import METHODS

__all__ = ["register", "write_requested_outputs"]

def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``reduce`` subcommand."""
    methods = sorted(METHODS)
    p = subparsers.add_parser(
        "reduce", help="reduce a run sheet: calibrations, samples, formation enthalpies",
        description="Reduce every run of a run sheet (CSV, XLSX or TOML): corrected "
        "temperature rises, energy equivalents per calorimeter, massic energies of "
        "combustion with the Washburn corrections, formation enthalpies, solution runs. "
        "Exit status 0 = all runs reduced, 1 = some runs failed (listed), 2 = the sheet "
        "cannot be read. " + SAFETY_NOTE,
    )
    p.add_argument("sheet", metavar="SHEET", help="run sheet (.csv, .xlsx or .toml)")
    p.add_argument("--method", default="newton-fit", choices=methods,
                   help="temperature-rise method (default: newton-fit)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--out", metavar="DIR",
                   help="write per-run plots, summary CSV files and a markdown report to DIR")
    p.add_argument("--xlsx", metavar="FILE", help="write a workbook (calwork.report)")
    p.add_argument("--report", metavar="FILE", help="write an HTML or PDF report (by suffix)")
    p.add_argument("--no-plots", action="store_true", help="with --out: skip the plots")
    p.add_argument("--accept-calibration", action="store_true",
                   help="exit 0 even when a calibration series fails its acceptance (RSD "
                        "limit, Grubbs' outlier test); the results say so either way")
    p.add_argument("--rsd-limit", metavar="PERCENT", type=float, default=None,
                   help="acceptance limit on the relative standard deviation of a "
                   "calibration series, %% (default 0.1, common practice)")
    p.set_defaults(func=run)


def write_requested_outputs(red: Reduction, args: argparse.Namespace, command: str) -> None:
    """The report folder, workbook and report the options ask for (``--out``, ``--xlsx``,
    ``--report``); a plot that cannot be drawn is one line on stderr."""
    from calwork.report import write_report, write_workbook
    from calwork.report.folder import write_outputs

    if getattr(args, "out", None):
        write_outputs(red, args.out, plots=not args.no_plots,
                      on_problem=lambda text: print(f"{command}: {text}", file=sys.stderr))
    if getattr(args, "xlsx", None):
        write_workbook(red, args.xlsx)
    if getattr(args, "report", None):
        write_report(red, args.report)


def run(args: argparse.Namespace) -> int:
    from calwork.core.statistics import DEFAULT_RSD_LIMIT_PERCENT
    from calwork.reduce import reduce_sheet

    limit = DEFAULT_RSD_LIMIT_PERCENT if args.rsd_limit is None else args.rsd_limit
    red = reduce_sheet(args.sheet, method=args.method, progress=not args.json,
                       rsd_limit_percent=limit)
    write_requested_outputs(red, args, "calwork reduce")
    if args.json:
        print_json(red.to_dict())
    else:
        print(render_text(summary_document(red)), end="")
    failed = [r.run for r in red.runs if r.error]
    if failed and not args.json:
        print(f"\n{len(failed)} run(s) failed: {', '.join(failed)}", file=sys.stderr)
    refused = [f"{c.calorimeter} ({'; '.join(c.acceptance_problems)})"
               for c in red.calibrations if c.acceptance_problems]
    if refused and not args.accept_calibration:
        print(f"calwork reduce: calibration series failing acceptance: {', '.join(refused)}; "
              "give --accept-calibration to accept them", file=sys.stderr)
    return 1 if failed or (refused and not args.accept_calibration) else 0
