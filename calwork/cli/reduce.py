"""``calwork reduce SHEET``: the whole reduction of a run sheet.

Exit status: 0 when every run was reduced; 1 when the sheet was reduced but some runs failed
(they are listed with their errors); 2 when the sheet cannot be read at all (one line on
stderr).
"""

from __future__ import annotations

import argparse
import csv
import math
import sys
from pathlib import Path
from typing import Any

from calwork.cli._common import print_json
from calwork.core.errors import CalworkError, ExportError
from calwork.core.results import Reduction
from calwork.core.safety import SAFETY_NOTE
from calwork.core.text import format_table
from calwork.rise.registry import METHODS

__all__ = ["reduction_markdown", "register", "write_outputs"]

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
    p.add_argument("--rsd-limit", metavar="PERCENT", type=float, default=None,
                   help="acceptance limit on the relative standard deviation of a "
                   "calibration series, %% (default 0.1, common practice)")
    p.set_defaults(func=run)


def _report_function(name: str):
    try:
        import calwork.report as report
    except ModuleNotFoundError as exc:
        if not (exc.name or "").startswith("calwork.report"):
            raise
        report = None
    fn = getattr(report, name, None) if report is not None else None
    if fn is None:
        raise ExportError(f"calwork.report.{name} is not available in this installation",
                          expected="the calwork.report package")
    return fn


def run(args: argparse.Namespace) -> int:
    from calwork.core.statistics import DEFAULT_RSD_LIMIT_PERCENT
    from calwork.reduce import reduce_sheet

    limit = DEFAULT_RSD_LIMIT_PERCENT if args.rsd_limit is None else args.rsd_limit
    red = reduce_sheet(args.sheet, method=args.method, progress=not args.json,
                       rsd_limit_percent=limit)
    if args.out:
        write_outputs(red, args.out, plots=not args.no_plots)
    if args.xlsx:
        _report_function("write_workbook")(red, args.xlsx)
    if args.report:
        _report_function("write_report")(red, args.report)
    if args.json:
        print_json(red.to_dict())
    else:
        print(_tables(red))
    failed = [r.run for r in red.runs if r.error]
    if failed and not args.json:
        print(f"\n{len(failed)} run(s) failed: {', '.join(failed)}", file=sys.stderr)
    return 1 if failed else 0


def _fmt(value: Any, digits: int = 4) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    if isinstance(value, float):
        return f"{value:.{digits}f}"
    return str(value)


def _tables(red: Reduction) -> str:
    out = []
    if red.calibrations:
        out.append("Calibrations")
        out.append(format_table(
            ["calorimeter", "ε / J/K", "u(ε) / J/K", "n", "RSD / %"],
            [[c.calorimeter, _fmt(c.energy_equivalent_J_per_K, 2),
              _fmt(c.u_energy_equivalent_J_per_K, 2), c.n_runs, _fmt(c.rsd_percent, 4)]
             for c in red.calibrations]))
    out.append("\nRuns")
    out.append(format_table(
        ["run", "kind", "sample", "ΔT_c / K", "ε / J/K", "Δu / J/g", "ΔH / kJ/mol", "error"],
        [[r.run, r.kind, r.sample or "", _fmt(r.corrected_rise_K, 5),
          _fmt(r.energy_equivalent_J_per_K, 2), _fmt(r.massic_energy_J_per_g, 2),
          _fmt(r.molar_enthalpy_kJ_per_mol, 4), (r.error or "")[:60]] for r in red.runs]))
    bomb = [s for s in red.samples if s.kind == "combustion"]
    if bomb:
        out.append("\nSamples (combustion)")
        out.append(format_table(
            ["sample", "n", "Δu / J/g", "u / J/g", "Δcu° / J/g", "ΔfH° / kJ/mol",
             "U(k=2) / kJ/mol"],
            [[s.sample, s.n_runs, _fmt(s.massic_energy_J_per_g, 2),
              _fmt(s.u_massic_energy_J_per_g, 2), _fmt(s.standard_massic_energy_J_per_g, 2),
              _fmt(s.delta_f_H_kJ_per_mol, 2), _fmt(s.U_delta_f_H_kJ_per_mol, 2)]
             for s in bomb]))
    other = [s for s in red.samples if s.kind != "combustion"]
    if other:
        out.append("\nSamples (solution)")
        out.append(format_table(
            ["sample", "n", "ΔH / kJ/mol", "u / kJ/mol", "m / mol/kg", "ΔH∞ / kJ/mol",
             "u(ΔH∞) / kJ/mol"],
            [[s.sample, s.n_runs, _fmt(s.molar_enthalpy_kJ_per_mol, 4),
              _fmt(s.u_molar_enthalpy_kJ_per_mol, 4), _fmt(s.final_molality_mol_per_kg, 4),
              _fmt(s.infinite_dilution_enthalpy_kJ_per_mol, 4),
              _fmt(s.u_infinite_dilution_enthalpy_kJ_per_mol, 4)] for s in other]))
    warns = list(red.warnings) + [f"{c.calorimeter}: {w}" for c in red.calibrations
                                  for w in c.warnings]
    if warns:
        out.append("\nWarnings")
        out.extend(f"- {w}" for w in warns)
    return "\n".join(out)


_RUN_COLUMNS = ("run", "kind", "sample", "calorimeter", "corrected_rise_K",
                "u_corrected_rise_K", "energy_equivalent_J_per_K", "massic_energy_J_per_g",
                "standard_massic_energy_J_per_g", "washburn_J", "heater_energy_J",
                "reaction_heat_J", "molar_enthalpy_kJ_per_mol", "reference_temperature_K",
                "error")
_SAMPLE_COLUMNS = ("sample", "formula", "n_runs", "massic_energy_J_per_g",
                   "u_massic_energy_J_per_g", "standard_massic_energy_J_per_g",
                   "u_standard_massic_energy_J_per_g", "delta_c_U_kJ_per_mol",
                   "delta_c_H_kJ_per_mol", "delta_f_H_kJ_per_mol", "u_delta_f_H_kJ_per_mol",
                   "U_delta_f_H_kJ_per_mol", "molar_enthalpy_kJ_per_mol",
                   "u_molar_enthalpy_kJ_per_mol")


def _write_csv(path: Path, columns: tuple[str, ...], records: list[dict]) -> None:
    from calwork.report.sanitise import csv_text  # text from sheets is data, never formulas

    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(columns)
        for rec in records:
            w.writerow(["" if rec.get(c) is None else csv_text(_cell(rec.get(c)))
                        for c in columns])


def _cell(value: object) -> object:
    if isinstance(value, (list, tuple)):
        return "; ".join(str(v) for v in value)
    return value


def write_outputs(red: Reduction, out_dir: str | Path, *, plots: bool = True) -> list[Path]:
    """Write ``summary.csv`` (runs), ``samples.csv``, ``report.md`` and per-run plots.

    Returns the files written.
    """
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
        written = [out / "summary.csv", out / "samples.csv", out / "report.md"]
        runs = [{c: getattr(r, c) for c in _RUN_COLUMNS} for r in red.runs]
        _write_csv(written[0], _RUN_COLUMNS, runs)
        _write_csv(written[1], _SAMPLE_COLUMNS, [s.to_dict() for s in red.samples])
        written[2].write_text(reduction_markdown(red), encoding="utf-8")
    except OSError as exc:
        raise ExportError(f"cannot write the outputs ({exc.strerror})", path=out) from None
    if plots:
        written += _plots(red, out)
    return written


def _plots(red: Reduction, out: Path) -> list[Path]:
    try:
        from calwork.report.texts import primary_rise
        from calwork.rise import plot_rise
    except ImportError as exc:  # a checkout without the plotting module
        print(f"calwork reduce: plots not written ({exc})", file=sys.stderr)
        return []
    files = []
    for r in red.runs:
        tg = red.thermograms.get(r.run)
        rise = primary_rise(r)  # for a multi-event (solution) log: the reaction's
        if tg is None or rise is None or not hasattr(rise, "corrected_rise_K"):
            continue
        path = out / f"{_safe(r.run)}.png"
        try:
            plot_rise(tg, rise, path)
        except CalworkError as exc:
            print(f"calwork reduce: plot of run {r.run!r} not written: {exc}", file=sys.stderr)
            continue
        files.append(path)
    return files


def _safe(name: str) -> str:
    return "".join(c if c.isalnum() or c in "-_." else "_" for c in name) or "run"


def reduction_markdown(red: Reduction) -> str:
    """A readable markdown report of a reduction (every text from a sheet or log escaped)."""
    from calwork.report.sanitise import markdown_text as md

    lines = ["# Reduction report", ""]
    if red.sheet_path:
        lines.append(f"Run sheet: {md(red.sheet_path)}  ")
    lines += [f"Temperature-rise method: {red.method}", "", SAFETY_NOTE, ""]
    if red.calibrations:
        header = "| calorimeter | ε / J K⁻¹ | u(ε) / J K⁻¹ | n | RSD / % | outlier test |"
        lines += ["## Calibrations", "", header, "|---|---|---|---|---|---|"]
        for c in red.calibrations:
            t = c.outlier_test
            test = (f"G = {t['G']:.3f} vs {t['G_critical']:.3f}"
                    f"{' — outlier ' + md(t['suspect']) if t.get('outlier') else ''}"
                    if t.get("applied") else md(t.get("reason", "")))
            lines.append(f"| {md(c.calorimeter)} | {_fmt(c.energy_equivalent_J_per_K, 2)} | "
                         f"{_fmt(c.u_energy_equivalent_J_per_K, 2)} | {c.n_runs} | "
                         f"{_fmt(c.rsd_percent, 4)} | {test} |")
        lines.append("")
    header = ("| run | kind | sample | ΔT_c / K | ε / J K⁻¹ | Δu / J g⁻¹ | corrections / J "
              "| error |")
    lines += ["## Runs", "", header, "|---|---|---|---|---|---|---|---|"]
    for r in red.runs:
        corr = ", ".join(f"{k} {v:.2f}" for k, v in r.corrections_J.items() if v)
        lines.append(f"| {md(r.run)} | {md(r.kind)} | {md(r.sample or '')} | "
                     f"{_fmt(r.corrected_rise_K, 5)}"
                     f" | {_fmt(r.energy_equivalent_J_per_K, 2)} | "
                     f"{_fmt(r.massic_energy_J_per_g, 2)} | {corr} | {md(r.error or '')} |")
    lines.append("")
    if red.samples:
        lines += ["## Samples", ""]
        for s in red.samples:
            lines.append(f"### {md(s.sample)} ({md(s.formula or 'no formula')}), "
                         f"{s.n_runs} run(s)")
            lines.append("")
            for key in ("massic_energy_J_per_g", "u_massic_energy_J_per_g",
                        "standard_massic_energy_J_per_g", "u_standard_massic_energy_J_per_g",
                        "delta_c_U_kJ_per_mol", "delta_c_H_kJ_per_mol", "delta_f_H_kJ_per_mol",
                        "u_delta_f_H_kJ_per_mol", "U_delta_f_H_kJ_per_mol",
                        "molar_enthalpy_kJ_per_mol", "u_molar_enthalpy_kJ_per_mol"):
                v = getattr(s, key, None)
                if v is not None:
                    lines.append(f"- {key}: {_fmt(v, 3)}")
            for budget in (s.budget, *s.derived_budgets.values()):
                if budget:
                    lines.append(f"- budget of {budget.quantity}: " + ", ".join(
                        f"{c.name} {_fmt(c.value, 4)} {c.unit}" for c in budget.components))
            if s.fuel:
                lines.append("- fuel: " + ", ".join(f"{k} {_fmt(v, 3)}"
                                                    for k, v in s.fuel.items()))
            lines += [f"- warning: {md(w)}" for w in s.warnings]
            lines.append("")
    warns = list(red.warnings) + [f"{c.calorimeter}: {w}" for c in red.calibrations
                                  for w in c.warnings]
    warns += [f"run {r.run}: {w}" for r in red.runs for w in r.warnings]
    if warns:
        lines += ["## Warnings", ""] + [f"- {md(w)}" for w in warns]
    lines.append("")
    lines.append("Uncertainties: u is a standard uncertainty (k = 1); U = 2u (k = 2).")
    return "\n".join(lines) + "\n"
