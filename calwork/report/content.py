"""What a report says, independent of its format: sections of paragraphs, tables and figures.

:func:`build_document` turns a :class:`~calwork.core.results.Reduction` into a :class:`Document`;
:mod:`calwork.report.html` and :mod:`calwork.report.pdf` render it. Sections: summary (with
the safety note), one per calibrated calorimeter (runs and the control chart of ε), one per
sample series (result and uncertainty budget), one per run (values, warnings, and the
thermogram with its periods, drift model and residuals drawn by
:func:`calwork.rise.plot_rise`). Everything from simulated logs is labelled as simulated.
"""

from __future__ import annotations

import io
import math
from collections.abc import Callable
from typing import Any

from calwork.core.errors import CalworkError
from calwork.core.provenance import calwork_version
from calwork.core.results import BombRunResult
from calwork.core.safety import SAFETY_NOTE
from calwork.report.model import Document, Figure, Paragraph, Section, Table
from calwork.report.plots import plot_style, simulated_stamp
from calwork.report.summary import calorific_value_blocks, review_table
from calwork.report.texts import (
    SIMULATED_NOTE,
    component_label,
    is_simulated,
    primary_rise,
    simulated_runs,
)

__all__ = ["build_document", "draw_control_charts", "fmt"]


def fmt(value: Any, digits: int = 4, *, sig: bool = False) -> str:
    """A number for a report table (``—`` when missing or not finite)."""
    if value is None:
        return "—"
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        return str(value)
    if not math.isfinite(value):
        return "—"
    return f"{value:.{digits}g}" if sig else f"{value:.{digits}f}"


def _pm(value: Any, u: Any, digits: int) -> str:
    if value is None:
        return "—"
    return f"{fmt(value, digits)} ± {fmt(u, digits)}" if u is not None else fmt(value, digits)


def _png(draw: Callable[[Any], None], size: tuple[float, float]) -> bytes:
    from matplotlib.figure import Figure as MplFigure

    with plot_style():
        fig = MplFigure(figsize=size, layout="constrained")
        draw(fig)
        buf = io.BytesIO()
        fig.savefig(buf, format="png", dpi=100)
    return buf.getvalue()


def _budget_table(*budgets: Any) -> Table:
    """The components of each budget with their units, and each budget's combined u."""
    rows = []
    for budget in budgets:
        rows.extend([component_label(c.name, budget.quantity), "component",
                     fmt(c.value, 4, sig=True), c.unit] for c in budget.components)
        symbol = component_label("", budget.quantity).split(":")[0]
        rows.append([f"{symbol}: combined ({budget.quantity})", "combined",
                     fmt(budget.total(), 4, sig=True), budget.unit])
    return Table(["component", "", "standard uncertainty u (k = 1)", "unit"], rows,
                 "Uncertainty budget (standard uncertainties, k = 1; GUM propagation)")


def _summary(red: Any) -> Section:
    sec = Section("Summary", "summary")
    sim = simulated_runs(red)
    if sim:
        sec.blocks.append(Paragraph(f"{SIMULATED_NOTE} Simulated runs: {', '.join(sim)}.",
                                    "simulated"))
    sec.blocks.append(Paragraph(SAFETY_NOTE, "safety"))
    rows = [[s.sample, s.formula or "—", str(s.n_runs),
             _pm(s.massic_energy_J_per_g, s.u_massic_energy_J_per_g, 2),
             _pm(s.standard_massic_energy_J_per_g, s.u_standard_massic_energy_J_per_g, 2),
             _pm(s.delta_c_U_kJ_per_mol, s.u_delta_c_U_kJ_per_mol, 2),
             _pm(s.delta_c_H_kJ_per_mol, s.u_delta_c_H_kJ_per_mol, 2),
             _pm(s.delta_f_H_kJ_per_mol, s.u_delta_f_H_kJ_per_mol, 2),
             fmt(s.U_delta_f_H_kJ_per_mol, 2)] for s in red.samples if s.kind == "combustion"]
    sec.blocks.append(Table(
        ["sample", "formula", "n", "Δu (J/g)", "Δu° (J/g)", "ΔcU° (kJ/mol)", "ΔcH° (kJ/mol)",
         "ΔfH° (kJ/mol)", "U(ΔfH°), k = 2"], rows,
        "Sample series: mean ± standard uncertainty u (k = 1); U = k·u"))
    solution = [s for s in red.samples if s.kind != "combustion"]
    if solution:
        sec.blocks.append(Table(
            ["sample", "kind", "n", "ΔH (kJ/mol)", "final molality (mol/kg)",
             "ΔH at infinite dilution (kJ/mol)"],
            [[s.sample, s.kind, str(s.n_runs),
              _pm(s.molar_enthalpy_kJ_per_mol, s.u_molar_enthalpy_kJ_per_mol, 3),
              fmt(s.final_molality_mol_per_kg, 4),
              _pm(s.infinite_dilution_enthalpy_kJ_per_mol,
                  s.u_infinite_dilution_enthalpy_kJ_per_mol, 3)] for s in solution],
            "Solution series: molar enthalpies ± u (k = 1)"))
    rows = [[c.calorimeter, str(c.n_runs),
             _pm(c.energy_equivalent_J_per_K, c.u_energy_equivalent_J_per_K, 3),
             fmt(c.rsd_percent, 4), c.method] for c in red.calibrations]
    sec.blocks.append(Table(["calorimeter", "n", "ε (J/K)", "RSD (%)", "method"], rows,
                            "Energy equivalents: mean ± u (k = 1)"))
    sec.blocks.extend(Paragraph(w, "warning") for w in red.warnings)
    failed = [r for r in red.runs if r.error]
    sec.blocks.extend(Paragraph(f"run {r.run}: {r.error}", "error") for r in failed)
    return sec


#: Control-chart images already drawn, by calibration record (kept with it).
_CHART_PNGS: dict[int, tuple[Any, tuple[bytes | None, str]]] = {}


def draw_control_charts(red: Any) -> None:
    """Draw the control chart of each calibration of ``red`` now (e.g. while worker
    processes draw the run plots); the report then takes them as drawn."""
    for cal in red.calibrations:
        _control_chart_png(cal, red)


def _control_chart_png(cal: Any, red: Any) -> tuple[bytes | None, str]:
    found = _CHART_PNGS.get(id(cal))
    if found is not None and found[0] is cal:
        return found[1]
    drawn = _draw_control_chart(cal, red)
    if len(_CHART_PNGS) > 64:
        _CHART_PNGS.clear()
    _CHART_PNGS[id(cal)] = (cal, drawn)
    return drawn


def _draw_control_chart(cal: Any, red: Any) -> tuple[bytes | None, str]:
    from calwork.qa import control_chart, plot_control_chart

    infos = {i.run: i for i in red.run_infos}
    labels = list(cal.runs)
    values = list(cal.values_J_per_K)
    dates = [getattr(infos.get(r), "date", None) for r in labels]
    try:
        chart = control_chart(values, labels, dates=dates, baseline_labels=labels,
                              title=f"{cal.calorimeter}: energy equivalent of each run")
    except CalworkError as exc:
        return None, f"No control chart: {exc}"

    def draw(fig: Any) -> None:
        axes = fig.subplots(2, 1, sharex=True, height_ratios=(2, 1))
        plot_control_chart(chart, tuple(axes))

    return _png(draw, (8.0, 5.5)), f"{chart.recommendation.action}: {chart.recommendation.reason}"


def _calibration(cal: Any, red: Any, anchor: str) -> Section:
    sec = Section(f"Calibration of {cal.calorimeter}", anchor)
    by_id = {r.run: r for r in red.runs}
    infos = {i.run: i for i in red.run_infos}
    rows = []
    for rid in cal.runs:
        r = by_id.get(rid)
        if r is None:
            continue
        d = r.details
        rows.append([rid, getattr(infos.get(rid), "date", None) or "—",
                     fmt(getattr(d, "mass_vacuum_g", None), 5), fmt(r.corrected_rise_K, 6),
                     fmt(r.u_corrected_rise_K, 2, sig=True), fmt(r.energy_equivalent_J_per_K, 3),
                     str(len(r.warnings))])
    sec.blocks.append(Table(["run", "date", "m (g)", "ΔT_c (K)", "u(ΔT_c) (K)", "ε (J/K)",
                             "warnings"], rows, "Calibration runs"))
    sec.blocks.append(Paragraph(
        f"ε = {_pm(cal.energy_equivalent_J_per_K, cal.u_energy_equivalent_J_per_K, 3)} J/K "
        f"(u, k = 1) from {cal.n_runs} runs; s = {fmt(cal.std_dev_J_per_K, 3)} J/K, "
        f"RSD = {fmt(cal.rsd_percent, 4)} %."))
    png, text = _control_chart_png(cal, red)
    if png is not None:
        sec.blocks.append(Figure(png, f"Control chart of the energy equivalent of "
                                      f"{cal.calorimeter}",
                                 "Individuals chart with mean, ±2s (warning) and ±3s (action) "
                                 "limits; moving ranges below (calwork.qa)."))
    sec.blocks.append(Paragraph(text, "note"))
    sec.blocks.extend(Paragraph(w, "warning") for w in cal.warnings)
    return sec


def _solution_sample(s: Any, red: Any, sec: Section) -> Section:
    """A solution series: molar enthalpies (kJ/mol), not the combustion chain's Δu."""
    lines = [f"Formula {s.formula or '—'}; {s.n_runs} runs ({', '.join(s.runs)})."]
    text = (f"Mean molar enthalpy ΔH = "
            f"{_pm(s.molar_enthalpy_kJ_per_mol, s.u_molar_enthalpy_kJ_per_mol, 3)} kJ/mol (u)")
    if s.final_molality_mol_per_kg is not None:
        text += f" at a mean final molality of {fmt(s.final_molality_mol_per_kg, 4)} mol/kg"
    lines.append(text + ".")
    if s.infinite_dilution_enthalpy_kJ_per_mol is not None:
        inf = _pm(s.infinite_dilution_enthalpy_kJ_per_mol,
                  s.u_infinite_dilution_enthalpy_kJ_per_mol, 3)
        lines.append(f"ΔH at infinite dilution = {inf} kJ/mol (u, k = 1).")
    sec.blocks.extend(Paragraph(t) for t in lines)
    if s.budget:
        sec.blocks.append(_budget_table(s.budget, *s.derived_budgets.values()))
    by_id = {r.run: r for r in red.runs}
    rows = [[rid, fmt(by_id[rid].final_molality_mol_per_kg, 5),
             fmt(by_id[rid].corrected_rise_K, 6), fmt(by_id[rid].energy_equivalent_J_per_K, 3),
             _pm(by_id[rid].molar_enthalpy_kJ_per_mol, by_id[rid].u_molar_enthalpy_kJ_per_mol,
                 3)]
            for rid in s.runs if rid in by_id]
    sec.blocks.append(Table(["run", "m (mol/kg)", "ΔT_c (K)", "ε (J/K)", "ΔH (kJ/mol)"], rows,
                            "Runs of the series"))
    sec.blocks.extend(Paragraph(w, "warning") for w in s.warnings)
    return sec


def _sample(s: Any, red: Any, anchor: str) -> Section:
    sec = Section(f"Sample {s.sample}", anchor)
    if s.kind != "combustion":
        return _solution_sample(s, red, sec)
    k = s.coverage_factor
    lines = [
        f"Formula {s.formula or '—'}; {s.n_runs} runs ({', '.join(s.runs)}).",
        (f"Massic energy Δu = {_pm(s.massic_energy_J_per_g, s.u_massic_energy_J_per_g, 2)} "
        "J/g; standard massic energy Δu° = "
        f"{_pm(s.standard_massic_energy_J_per_g, s.u_standard_massic_energy_J_per_g, 2)} J/g."),
    ]
    if s.delta_f_H_kJ_per_mol is not None:
        lines.append(
            f"ΔcU° = {_pm(s.delta_c_U_kJ_per_mol, s.u_delta_c_U_kJ_per_mol, 2)} kJ/mol, "
            f"ΔcH° = {_pm(s.delta_c_H_kJ_per_mol, s.u_delta_c_H_kJ_per_mol, 2)} kJ/mol, "
            f"ΔfH° = {_pm(s.delta_f_H_kJ_per_mol, s.u_delta_f_H_kJ_per_mol, 2)} kJ/mol (u); "
            f"U = {fmt(s.U_delta_f_H_kJ_per_mol, 2)} kJ/mol (k = {k:g}).")
    sec.blocks.extend(Paragraph(t) for t in lines)
    sec.blocks += calorific_value_blocks(s, red.run_infos)
    if s.budget:
        sec.blocks.append(_budget_table(s.budget, *s.derived_budgets.values()))
    values = s.key_values_used.get("values") if s.key_values_used else None
    if values:
        sec.blocks.append(Table(
            ["species", "ΔfH° (kJ/mol)", "u (kJ/mol)", "status", "source"],
            [[str(v.get("species")), fmt(v.get("value_kJ_per_mol"), 3),
              fmt(v.get("u_kJ_per_mol"), 3), str(v.get("status", "")),
              str(v.get("source", ""))] for v in values],
            f"Key values used ({s.key_values_used.get('reaction', '')})"))
    by_id = {r.run: r for r in red.runs}
    rows = [[rid, fmt(getattr(by_id[rid].details, "mass_vacuum_g", None), 5),
             fmt(by_id[rid].corrected_rise_K, 6), fmt(by_id[rid].massic_energy_J_per_g, 2),
             fmt(by_id[rid].standard_massic_energy_J_per_g, 2)]
            for rid in s.runs if rid in by_id]
    sec.blocks.append(Table(["run", "m (g)", "ΔT_c (K)", "Δu (J/g)", "Δu° (J/g)"], rows,
                            "Runs of the series"))
    sec.blocks.extend(Paragraph(w, "warning") for w in s.warnings)
    return sec


def _readings_png(th: Any, title: str) -> bytes:
    def draw(fig: Any) -> None:
        ax = fig.subplots()
        ax.plot(th.time_s / 60.0, th.temperature_K, linestyle="none", marker="o",
                markersize=2.5, color="#000000", label="readings")
        ax.set_xlabel("time / min")
        ax.set_ylabel("temperature / K")
        ax.set_title(title)
        ax.legend(loc="best")
        if is_simulated(th):
            simulated_stamp(fig)

    return _png(draw, (8.0, 4.5))


def _run_figure(run: Any, th: Any) -> Figure | None:
    if th is None:
        return None
    from calwork.report.plots import rise_png
    from calwork.rise import RiseResult

    sim = is_simulated(th)
    label = " (simulated data)" if sim else ""
    rise = primary_rise(run)
    if isinstance(rise, RiseResult):
        return Figure(rise_png(th, rise, run.run), f"Thermogram of run {run.run}{label}",
                      f"Run {run.run}{label}: readings, fore/main/after periods, fitted drift "
                      "model extended over the main period, residuals of the drift fits "
                      "(calwork.rise.plot_rise).", sim)
    return Figure(_readings_png(th, f"Run {run.run}: readings{label}"),
                  f"Readings of run {run.run}{label}",
                  f"Run {run.run}{label}: readings (no corrected rise to draw).", sim)


def _run(run: Any, red: Any, anchor: str) -> Section:
    th = red.thermograms.get(run.run)
    sim = th is not None and is_simulated(th)
    sec = Section(f"Run {run.run}" + (" (simulated data)" if sim else ""), anchor,
                  simulated=sim)
    rise = primary_rise(run)
    prov = getattr(th, "provenance", None) or run.provenance
    pairs = [
        ("kind", run.kind), ("sample", run.sample or "—"), ("calorimeter", run.calorimeter),
        ("log file", getattr(prov, "source_path", None) or "—"),
        ("SHA-256", getattr(prov, "sha256", None) or "—"),
        ("simulated data", "yes" if sim else "no"),
        ("rise method", getattr(rise, "method", None) or red.method),
        ("firing time / end of main period (s)",
         (f"{fmt(getattr(rise, 'fire_time_s', None), 1)} / "
         f"{fmt(getattr(rise, 'main_end_s', None), 1)}")),
        ("corrected rise ΔT_c (K)", _pm(run.corrected_rise_K, run.u_corrected_rise_K, 6)),
        ("cooling constant k (1/s)", fmt(getattr(rise, "k_per_s", None), 4, sig=True)),
        ("corrections (J)", ", ".join(f"{k} {fmt(v, 2)}" for k, v in run.corrections_J.items())
         or "—"),
    ]
    if run.energy_equivalent_J_per_K is not None:
        pairs.append(("energy equivalent ε (J/K)", fmt(run.energy_equivalent_J_per_K, 3)))
    if isinstance(run, BombRunResult):
        if run.massic_energy_J_per_g is not None:
            pairs.append(("massic energy Δu (J/g)", fmt(run.massic_energy_J_per_g, 2)))
        if run.standard_massic_energy_J_per_g is not None:
            pairs.append(("standard massic energy Δu° (J/g)",
                          fmt(run.standard_massic_energy_J_per_g, 2)))
    elif run.molar_enthalpy_kJ_per_mol is not None:
        pairs.append(("molar enthalpy (kJ/mol)", _pm(run.molar_enthalpy_kJ_per_mol,
                                                     run.u_molar_enthalpy_kJ_per_mol, 3)))
    sec.blocks.append(Table(["quantity", "value"], [[k, str(v)] for k, v in pairs]))
    if run.error:
        sec.blocks.append(Paragraph(f"error: {run.error}", "error"))
    sec.blocks.extend(Paragraph(w, "warning") for w in run.warnings)
    figure = _run_figure(run, th)
    if figure is not None:
        sec.blocks.append(figure)
    return sec


def _anchor(prefix: str, text: str, taken: set[str]) -> str:
    import re

    base = prefix + "-" + (re.sub(r"[^A-Za-z0-9_-]+", "-", text).strip("-") or "x")
    anchor, n = base, 2
    while anchor in taken:
        anchor, n = f"{base}-{n}", n + 1
    taken.add(anchor)
    return anchor


def build_document(red: Any) -> Document:
    """The report of ``red`` as sections (summary, calibrations, samples, runs)."""
    taken: set[str] = {"summary", "review"}
    sections = [_summary(red), Section("Review state and period boundaries", "review", [
        Paragraph("State (recorded, approved, void) and version of each run as the lab book "
                  "holds them ('not recorded' for a sheet reduced from disk), and where each "
                  "period boundary came from: detected by calwork, given in the run sheet, "
                  "amended in the lab book, or none (the whole record)."),
        review_table(red)])]
    sections += [_calibration(c, red, _anchor("calibration", c.calorimeter, taken))
                 for c in red.calibrations]
    sections += [_sample(s, red, _anchor("sample", s.sample, taken)) for s in red.samples]
    sections += [_run(r, red, _anchor("run", r.run, taken)) for r in red.runs]
    prov = red.provenance
    subtitle = (f"run sheet {red.sheet_path or '(in memory)'}; corrected rise by {red.method}; "
                f"calwork {prov.calwork_version if prov else calwork_version()}")
    return Document(title="calwork reduction report", subtitle=subtitle, sections=sections,
                    simulated=bool(simulated_runs(red)))

