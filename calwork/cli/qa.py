"""``calwork qa CALORIMETER``: control chart of the energy equivalent and recalibration advice."""

from __future__ import annotations

import argparse

from calwork.cli._common import print_json, with_safety_note
from calwork.cli.labbook import _common
from calwork.report.plain import render_text
from calwork.report.views import control_chart_document

__all__ = ["register"]

_DESCRIPTION = """\
Control chart of a calorimeter's energy equivalent: ε of each active calibration run in the
lab book (void and failed runs left out), ordered by date then run id. The mean and the
single-run standard deviation s come from the standardisation series — by default the first
calibration series recorded for the calorimeter, or the first N runs with --baseline N.
Warning limits mean ± 2 s, action limits mean ± 3 s, moving-range chart (upper limit
D4 · MR̄, D4 = 3.267), and run rules (calwork's defaults, common SPC practice):

  beyond-action          1 point beyond the action limits           -> recalibrate
  two-of-three-warning   2 of 3 points beyond the same warning limit -> investigate
  run-one-side           7 successive points on one side of the mean -> investigate
  trend                  6 points in a row increasing or decreasing  -> investigate
  moving-range           a moving range above D4 · MR̄                -> investigate

Change them with --rules, e.g. --rules beyond-action,run-one-side=8,trend=6.

QA note: a signal says the calorimeter changed, not why. Check what changed (bomb, vessel,
thermometer, stirrer, jacket, water mass, oxygen pressure, crucible, reference-material lot)
and standardise again after any change of a part, and after service or any sign of damage
have the bomb inspected and pressure-tested as its maker and local codes require before it
is fired again.
"""


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``qa`` subcommand."""
    p = subparsers.add_parser("qa", help="control chart of ε and recalibration advice",
                              description=with_safety_note(_DESCRIPTION),
                              formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("calorimeter", metavar="CALORIMETER", help="calorimeter id (sheet column)")
    p.add_argument("--baseline", type=int, metavar="N",
                   help="use the first N runs as the standardisation series")
    p.add_argument("--rules", metavar="SPEC", default=None,
                   help="run rules, comma-separated (default: 'default')")
    p.add_argument("--since", metavar="DATE", help="only runs dated on/after (ISO 8601)")
    p.add_argument("--until", metavar="DATE", help="only runs dated on/before (ISO 8601)")
    p.add_argument("--plot", metavar="FILE.png", help="draw the individuals and MR charts")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    _common(p)
    p.set_defaults(func=_qa)


def _qa(args: argparse.Namespace) -> int:
    from calwork.labbook import Filters, open_labbook
    from calwork.labbook.quality import calibration_chart, void_calibration_points
    from calwork.qa import parse_rules

    rules = parse_rules(args.rules)
    filters = Filters(since=args.since, until=args.until)
    with open_labbook(args.labbook, user=args.user, timeout_s=args.timeout) as book:
        chart = calibration_chart(book, args.calorimeter, filters, baseline_n=args.baseline,
                                  rules=rules)
        void = void_calibration_points(book, args.calorimeter)
    if args.plot:
        from calwork.qa import plot_control_chart

        plot_control_chart(chart, args.plot, void=void)
    if args.json:
        print_json({"calorimeter": args.calorimeter, **chart.to_dict(),
                    "plot": args.plot})
    else:
        print(render_text(control_chart_document(chart)), end="")
        if args.plot:
            print(f"plot: {args.plot}")
    return 0
