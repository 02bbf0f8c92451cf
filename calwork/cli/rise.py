"""``calwork rise LOG``: the corrected temperature rise of one temperature log."""

from __future__ import annotations

import argparse

from calwork.cli._common import print_json, with_safety_note
from calwork.core.errors import ChoiceError
from calwork.core.logtime import on_axis_s, parse_log_time
from calwork.report.plain import render_text
from calwork.report.views import manual_rise_document, rise_document
from calwork.rise.registry import DICKINSON_RULES, METHODS

__all__ = ["register", "run"]

_DESCRIPTION = """\
Read a temperature log, find its fore, main and after periods (firing or heater-on time from
the onset of the rise, end of the main period where the record is Newtonian again) and print
the corrected (adiabatic) temperature rise with its standard uncertainty, the drift model
(k, T_inf) and any warnings.

Methods: newton-fit (default; fore and after periods fitted jointly to Newton's law of
cooling), regnault-pfaundler, dickinson (--dickinson-rule equal-area, the exact t_x; or
60-percent, the fuel standards' shortcut — for routine fuel work, not thermochemistry).
--fire-time and --main-end override the detected boundaries, written as the log writes time:
seconds on the log's axis (312, 312 s), a time with a unit (5.2 min, 5 min 12 s) or a clock
time (10:05:00 or 10:05 in a log of times of day; 05:12 as mm:ss in a log of elapsed time).
`calwork inspect LOG` shows where the log's time zero is; JSON results are always in s.
--procedure works the rise again by a standard's manual procedure with the same periods,
step by step, beside calwork's estimate (iso-1928, astm-60-percent; docs/methods.md §1.13).
A log with several heat events (two firings; a calibration, a reaction and a calibration) is
refused with the list of its events unless --event N says which one to reduce.

This command only reads files.
"""


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``rise`` subcommand."""
    from calwork.io.sensors import SENSORS

    p = subparsers.add_parser(
        "rise", help="corrected temperature rise of one temperature log",
        description=with_safety_note(_DESCRIPTION),
        formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("log", metavar="LOG", help="temperature log (.csv/.txt/... or .xlsx)")
    p.add_argument("--method", default="newton-fit", choices=sorted(METHODS),
                   help="temperature-rise method (default newton-fit)")
    p.add_argument("--dickinson-rule", default="equal-area", choices=DICKINSON_RULES,
                   help="t_x rule of the dickinson method (default equal-area)")
    p.add_argument("--fire-time", metavar="TIME",
                   help="firing / heater-on time: s, a time with a unit, or a clock time "
                        "(overrides detection)")
    p.add_argument("--main-end", metavar="TIME",
                   help="end of the main period: s, a time with a unit, or a clock time "
                        "(overrides detection)")
    p.add_argument("--procedure", choices=sorted(p for m in METHODS.values()
                                                 for p in m.manual_procedures),
                   help="also work the corrected rise by a standard's manual procedure, step "
                        "by step (iso-1928: the Regnault–Pfaundler hand form; astm-60-percent: "
                        "the 60 %% point with 5-min rates), beside calwork's estimate")
    p.add_argument("--event", type=int, metavar="N",
                   help="for a log with several heat events: reduce event N (1-based)")
    p.add_argument("--time-column", metavar="C", help="header of the time column")
    p.add_argument("--temperature-column", metavar="C", help="header of the temperature column")
    p.add_argument("--time-unit", metavar="U", help="unit of the time column (overrides header)")
    p.add_argument("--temperature-unit", metavar="U",
                   help="C, K or ohm (overrides the header)")
    p.add_argument("--sensor", choices=SENSORS,
                   help="convert a resistance column (ohm) with this thermometer model")
    p.add_argument("--sh-coefficients", nargs=3, type=float, metavar=("A", "B", "C"),
                   help="Steinhart–Hart coefficients a, b, c (with --sensor steinhart-hart)")
    p.add_argument("--sheet", metavar="NAME", help="worksheet of an .xlsx log")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--plot", metavar="FILE.png",
                   help="draw readings, periods, drift model, rise and residuals")
    p.set_defaults(func=run)


def run(args: argparse.Namespace) -> int:
    """Read the log, reduce it and print the result (table or JSON)."""
    from calwork.io import read_log
    from calwork.rise import corrected_rise, plot_rise

    coefficients = None
    if args.sh_coefficients is not None:
        if args.sensor not in (None, "steinhart-hart"):
            raise ChoiceError("--sh-coefficients go with --sensor steinhart-hart",
                              found=args.sensor)
        args.sensor = "steinhart-hart"
        coefficients = dict(zip("abc", args.sh_coefficients, strict=True))
    thermogram = read_log(
        args.log, time_column=args.time_column, temperature_column=args.temperature_column,
        time_unit=args.time_unit, temperature_unit=args.temperature_unit, sensor=args.sensor,
        sensor_coefficients=coefficients, sheet=args.sheet,
    )
    fire, end = (None if text is None else on_axis_s(parse_log_time(text, column=name),
                                                     thermogram, column=name)
                 for text, name in ((args.fire_time, "--fire-time"),
                                    (args.main_end, "--main-end")))
    result = corrected_rise(thermogram, args.method, fire_time_s=fire, main_end_s=end,
                            dickinson_rule=args.dickinson_rule,
                            event=args.event)
    out = result.to_dict()
    manual = None
    if args.procedure:
        from dataclasses import replace

        from calwork.rise.manual import manual_rise

        manual = replace(manual_rise(thermogram, args.procedure, fire_time_s=result.fire_time_s,
                                     main_end_s=result.main_end_s, best_estimate=False),
                         best_estimate=result)
        out["manual"] = manual.to_dict()
    if args.plot:
        out["plot"] = str(plot_rise(thermogram, result, args.plot))
    if args.json:
        print_json(out)
    else:
        print(render_text(rise_document(result)), end="")
        if manual is not None:
            print()
            print(render_text(manual_rise_document(manual)), end="")
        if args.plot:
            print(f"plot written to {out['plot']}")
    return 0
