"""``calwork demo``: reduce the bundled, simulated ``sample_runs/`` end to end."""

from __future__ import annotations

import argparse
import sys
from importlib import resources
from pathlib import Path

from calwork.cli._common import print_json, with_safety_note
from calwork.rise.registry import METHODS

__all__ = ["register", "run", "sample_sheet"]

_DESCRIPTION = """\
Reduce the bundled sample runs end to end and write a report folder: per-run thermogram plots,
summary CSV files, a markdown and an HTML report, and an auditable workbook. The sample runs
are SIMULATED with calwork's own calorimeter simulator for a fictional laboratory (a
benzoic-acid calibration series and combustions of succinic acid and acetanilide in an oxygen
bomb calorimeter; electrical calibrations, blanks and a potassium chloride dissolution series
in a solution calorimeter).
"""


def sample_sheet() -> Path:
    """Path of the bundled sample run sheet (``calwork.sample_runs/runs.csv``)."""
    return Path(str(resources.files("calwork.sample_runs").joinpath("runs.csv")))


def register(subparsers: argparse._SubParsersAction) -> None:
    p = subparsers.add_parser(
        "demo", help="reduce the bundled simulated sample runs end to end",
        description=with_safety_note(_DESCRIPTION),
        formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--out", default="calwork-demo", metavar="DIR",
                   help="report folder to write (default: %(default)s)")
    p.add_argument("--method", default="newton-fit", choices=sorted(METHODS),
                   help="temperature-rise method (default: %(default)s)")
    p.add_argument("--no-plots", action="store_true", help="skip the per-run PNG plots")
    p.add_argument("--json", action="store_true",
                   help="print the reduction as one JSON object instead of tables")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    from calwork.reduce import reduce_sheet
    from calwork.report import write_report, write_workbook
    from calwork.report.content import draw_control_charts
    from calwork.report.folder import rise_plot_items, write_outputs
    from calwork.report.plain import render_text
    from calwork.report.plots import draw_rise_pngs
    from calwork.report.summary import summary_document

    red = reduce_sheet(sample_sheet(), method=args.method, progress=not args.json)
    out = Path(args.out)
    workbook = out / "calwork-demo.xlsx"
    # the run plots are drawn by worker processes while this one writes the workbook
    finish = (lambda: None) if args.no_plots else draw_rise_pngs(rise_plot_items(red),
                                                                  wait=False)
    out.mkdir(parents=True, exist_ok=True)
    write_workbook(red, workbook)
    draw_control_charts(red)
    finish()
    written = write_outputs(red, out, plots=not args.no_plots,
                            on_problem=lambda text: print(f"calwork demo: {text}",
                                                          file=sys.stderr))
    html = out / "report.html"
    write_report(red, html)
    written += [workbook, html]
    if args.json:
        print_json(red.to_dict())
    else:
        print("calwork demo: SIMULATED sample runs of a fictional laboratory\n")
        print(render_text(summary_document(red)), end="")
        print(f"\nwrote {len(written)} files to {out}/ (report: {html}, workbook: {workbook})")
    return 1 if any(r.error for r in red.runs) else 0
