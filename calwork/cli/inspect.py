"""``calwork inspect LOG``: what the importer sees in a temperature log."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path
from typing import Any

import numpy as np

from calwork.cli._common import print_json
from calwork.core.constants import CELSIUS_ZERO_K
from calwork.core.errors import ChoiceError, ExportError
from calwork.core.logtime import describe_time, time_origin
from calwork.core.thermogram import Thermogram
from calwork.io.readers import read_log
from calwork.io.sensors import SENSORS
from calwork.report.plain import render_text
from calwork.report.views import log_summary_document

__all__ = ["inspect_summary", "register", "run"]

_DESCRIPTION = """\
Read a temperature log the way every calwork command reads it and print what was detected:
encoding, separator and decimal mark, the columns and which became time, temperature and
channels, their units, the number of readings, sampling interval, time span, temperature
range and the preamble metadata. --plot draws the readings as read.

Logs are delimited text (comma, semicolon, tab or whitespace; decimal point or comma) or .xlsx.
Raw thermometer resistance is converted with --sensor: pt100 / pt1000 (Callendar–Van Dusen,
IEC 60751 coefficients; --r0 overrides R0) or steinhart-hart (with --sh-coefficients A B C).
"""

_DETECTED = (
    "format", "sheet", "detected_encoding", "detected_separator", "detected_decimal",
    "header_line", "header_row", "units_line", "time_column", "time_unit", "time_unit_source",
    "temperature_column", "temperature_unit", "temperature_unit_source", "sensor_model",
    "sensor_source", "start",
    "clock_rollover",
)
_JSON_KEYS = ("columns", "channels", "ignored_columns")


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``inspect`` subcommand."""
    p = subparsers.add_parser(
        "inspect", help="show what the importer sees in a temperature log",
        description=_DESCRIPTION, formatter_class=argparse.RawDescriptionHelpFormatter,
    )
    p.add_argument("log", metavar="LOG", help="temperature log (.csv/.txt/.tsv/... or .xlsx)")
    p.add_argument("--sensor", choices=SENSORS,
                   help="convert a resistance column (ohm) with this thermometer model")
    p.add_argument("--sh-coefficients", nargs=3, type=float, metavar=("A", "B", "C"),
                   help="Steinhart–Hart coefficients a, b, c (1/K; ln R with R in ohm)")
    p.add_argument("--r0", type=float, metavar="OHM",
                   help="platinum sensor resistance at 0 °C (default 100 or 1000 ohm)")
    p.add_argument("--time-column", metavar="C", help="header of the time column")
    p.add_argument("--temperature-column", metavar="C", help="header of the temperature column")
    p.add_argument("--time-unit", metavar="U",
                   help="s, min, h, ms, mm:ss, hh:mm:ss or iso (overrides the header)")
    p.add_argument("--temperature-unit", metavar="U",
                   help="C, K or ohm (overrides the header)")
    p.add_argument("--sheet", metavar="NAME", help="worksheet of an .xlsx log (default first)")
    p.add_argument("--json", action="store_true", help="print one JSON object")
    p.add_argument("--plot", metavar="FILE.png", help="draw the readings as read")
    p.set_defaults(func=run)


def _json_field(meta: dict[str, str], key: str) -> Any:
    try:
        return json.loads(meta[key])
    except (KeyError, ValueError):
        return None


def inspect_summary(thermogram: Thermogram) -> dict[str, Any]:
    """The ``inspect --json`` object for a thermogram read by :func:`calwork.io.read_log`."""
    meta = dict(thermogram.metadata)
    T_C = thermogram.temperature_C
    steps = np.diff(thermogram.time_s)
    internal = set(_DETECTED) | set(_JSON_KEYS)
    detected = {k: meta[k] for k in _DETECTED if k in meta}
    preamble = {k: v for k, v in meta.items() if k not in internal}
    channels = _json_field(meta, "channels") or {}
    return {
        "source": thermogram.provenance.source_path,
        "sha256": thermogram.provenance.sha256,
        "points": thermogram.n_points,
        "first_row": thermogram.provenance.first_row,
        "last_row": thermogram.provenance.last_row,
        "time_span_s": thermogram.time_span_s,
        "sampling_interval_s": thermogram.sampling_interval_s,
        "sampling_interval_min_s": float(steps.min()),
        "sampling_interval_max_s": float(steps.max()),
        "temperature_min_C": float(T_C.min()),
        "temperature_max_C": float(T_C.max()),
        "temperature_first_C": float(T_C[0]),
        "temperature_last_C": float(T_C[-1]),
        "columns": _json_field(meta, "columns") or [],
        "time_column": meta.get("time_column"),
        "temperature_column": meta.get("temperature_column"),
        "channels": {
            name: {"column": column,
                   "min": float(thermogram.channels[name].min()),
                   "max": float(thermogram.channels[name].max())}
            for name, column in channels.items() if name in thermogram.channels
        },
        "ignored_columns": _json_field(meta, "ignored_columns") or [],
        "time_origin": time_origin(thermogram.metadata, thermogram.time_s),
        "first_reading": describe_time(float(thermogram.time_s[0]), thermogram.metadata),
        "last_reading": describe_time(float(thermogram.time_s[-1]), thermogram.metadata),
        "detected": detected,
        "preamble": preamble,
        "metadata": meta,
    }


def _plot(thermogram: Thermogram, path: str) -> None:
    import matplotlib

    matplotlib.use("Agg")
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8, 4.5), layout="constrained")
    ax = fig.add_subplot()
    minutes = (thermogram.time_s - thermogram.time_s[0]) / 60.0  # as the rise plot draws it
    ax.plot(minutes, thermogram.temperature_C, ".", ms=2, label="calorimeter")
    if "jacket_K" in thermogram.channels:
        ax.plot(minutes, thermogram.channels["jacket_K"] - CELSIUS_ZERO_K, "-", lw=1,
                label="jacket")
        ax.legend()
    ax.set_xlabel("time / min (from the first reading)")
    ax.set_ylabel("temperature / °C")
    ax.set_title(Path(thermogram.provenance.source_path or "log").name)
    try:
        fig.savefig(path, dpi=120)
    except (OSError, ValueError) as exc:
        raise ExportError(f"cannot write the plot: {exc}", path=path) from None


def run(args: argparse.Namespace) -> int:
    """Read the log and print the summary (table or JSON)."""
    coefficients: dict[str, float] = {}
    if args.sh_coefficients is not None:
        if args.sensor not in (None, "steinhart-hart"):
            raise ChoiceError("--sh-coefficients go with --sensor steinhart-hart",
                               found=args.sensor)
        args.sensor = "steinhart-hart"
        coefficients.update(zip("abc", args.sh_coefficients, strict=True))
    if args.r0 is not None:
        if args.sensor not in ("pt100", "pt1000"):
            raise ChoiceError("--r0 goes with --sensor pt100 or pt1000", found=args.sensor)
        coefficients["R0_ohm"] = args.r0
    thermogram = read_log(
        args.log, time_column=args.time_column, temperature_column=args.temperature_column,
        time_unit=args.time_unit, temperature_unit=args.temperature_unit, sensor=args.sensor,
        sensor_coefficients=coefficients or None, sheet=args.sheet,
    )
    summary = inspect_summary(thermogram)
    if args.plot:
        _plot(thermogram, args.plot)
        summary["plot"] = args.plot
    if args.json:
        print_json(summary)
    else:
        print(render_text(log_summary_document(summary)), end="")
        if args.plot:
            print(f"\nplot written to {args.plot}", file=sys.stdout)
    return 0
