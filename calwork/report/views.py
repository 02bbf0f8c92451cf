"""Documents of the results the other commands print: a corrected rise, a Hess network, a
cycle, a control chart, a method validation, what an importer sees, simulated logs, and the
lab book's listings and checks.

Each builder turns a result record into a :class:`~calwork.report.model.Document`; the command
line renders it as terminal text (:func:`calwork.report.plain.render_text`) — or markdown —
exactly as the reduction's summary is rendered, so no command formats its own table and no
record carries a text renderer.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from calwork.report.model import Document, Paragraph, Section, Table

__all__ = [
    "amend_document",
    "audit_document",
    "control_chart_document",
    "cycle_document",
    "derived_enthalpy_document",
    "describe",
    "document_of",
    "ingest_document",
    "labbook_list_document",
    "labbook_run_document",
    "log_summary_document",
    "manual_rise_document",
    "network_document",
    "network_result_document",
    "periods_document",
    "recompute_document",
    "rise_document",
    "run_versions_document",
    "simulated_logs_document",
    "validation_document",
    "verify_document",
]


def _doc(title: str, *sections: Section) -> Document:
    return Document(title=title, subtitle="", sections=list(sections), simulated=False)


def _g(value: Any, digits: int = 6) -> str:
    """A number in ``digits`` significant digits (empty when missing or not finite)."""
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    return f"{value:.{digits}g}" if isinstance(value, float) else str(value)


def _f(value: Any, digits: int) -> str:
    """A number with ``digits`` decimals (empty when missing)."""
    return "" if value is None else f"{value:.{digits}f}"


def _small_K(value: float) -> tuple[str, str]:
    """A small temperature (an uncertainty) in fixed notation with its unit: mK below
    0.01 K (``0.090 mK``, not ``9e-05``), µK below 0.01 mK."""
    if value >= 0.01:
        return f"{value:.3g}", "K"
    if value >= 1e-5:
        return f"{value * 1e3:.2g}" if value * 1e3 >= 1 else f"{value * 1e3:.3f}", "mK"
    return f"{value * 1e6:.3f}", "µK"


# --- corrected rise ---------------------------------------------------------------------------
def rise_document(result: Any) -> Document:
    """One corrected rise (:class:`calwork.rise.RiseResult`): value, u, periods, fit, budget."""
    r = result
    periods = r.periods
    rows = [
        ("corrected rise ΔT_c", f"{r.corrected_rise_K:.6f}", "K"),
        ("u (k = 1)", *_small_K(r.u_corrected_rise_K)),
        ("method", r.method + (f" ({r.dickinson_rule})" if r.dickinson_rule else ""), ""),
        ("fire time", f"{r.fire_time_s:.1f}", f"s ({periods.fire_source})"),
        ("main period end", f"{r.main_end_s:.1f}", f"s ({periods.main_end_source})"),
        ("fore period", f"{r.fore_period_s[0]:.1f}–{r.fore_period_s[1]:.1f}", "s"),
        ("after period", f"{r.after_period_s[0]:.1f}–{r.after_period_s[1]:.1f}", "s"),
        ("T_i", f"{r.T_initial_K:.6f}", "K"),
        ("T_f", f"{r.T_final_K:.6f}", "K"),
        ("exchange correction", f"{r.exchange_correction_K:+.6f}", "K"),
        ("k", f"{r.k_per_s:.4g}", "1/s"),
        ("T_inf", f"{r.T_inf_K:.4f}", "K"),
        ("reading noise", f"{(r.noise_K or 0.0) * 1e3:.3g}", "mK"),
        ("reading resolution", "finer than 0.01 mK" if r.reading_resolution_K is None
         else f"{r.reading_resolution_K * 1e3:g}", "" if r.reading_resolution_K is None
         else "mK"),
        ("degrees of freedom of the drift fits", "—" if r.dof is None else str(r.dof), ""),
    ]
    if r.t_x_s is not None:
        rows.append(("t_x (Dickinson time)", f"{r.t_x_s:.1f}", "s"))
    rows += [(f"u: {k}", *_small_K(v)) for k, v in r.uncertainty_budget.items()]
    if r.event is not None:
        rows.insert(0, ("event", f"{r.event} of {len(r.events)}",
                        r.events[r.event - 1]["kind"]))
    sec = Section("Corrected temperature rise", "rise",
                  [Table(["quantity", "value", "unit"], [list(row) for row in rows])])
    sec.blocks += [Paragraph(w, "warning") for w in r.warnings]
    return _doc("Corrected temperature rise", sec)


def periods_document(periods: Any) -> Document:
    """The periods of a thermogram (:class:`calwork.rise.Periods`) and where each boundary
    came from."""
    p = periods
    rows = [["fore period", f"{p.fore_period_s[0]:.1f} – {p.fore_period_s[1]:.1f}", ""],
            ["main period", f"{p.fire_time_s:.1f} – {p.main_end_s:.1f}",
             f"start {p.fire_source}, end {p.main_end_source}"],
            ["after period", f"{p.after_period_s[0]:.1f} – {p.after_period_s[1]:.1f}", ""]]
    sec = Section("Periods", "periods", [Table(["period", "time / s", "source"], rows)])
    if p.noise_K is not None:
        sec.blocks.append(Paragraph(f"reading noise {p.noise_K * 1e3:.4g} mK"))
    sec.blocks += [Paragraph(w, "warning") for w in p.warnings]
    return _doc("Periods", sec)


def manual_rise_document(manual: Any) -> Document:
    """A manual procedure's worked calculation (:class:`calwork.rise.manual.ManualRise`) and
    calwork's best estimate beside it."""
    sec = Section(manual.title, "manual", [Table(
        ["step", "worked", "value", "unit"],
        [[s.label, s.expression, f"{s.value:.7g}", s.unit] for s in manual.steps])])
    sec.blocks.append(Paragraph(
        f"corrected rise by {manual.procedure}: {manual.corrected_rise_K:.6f} K"))
    best = manual.best_estimate
    if best is not None:
        diff = manual.corrected_rise_K - best.corrected_rise_K
        sec.blocks.append(Paragraph(
            f"calwork's best estimate ({best.method}, same periods): "
            f"{best.corrected_rise_K:.6f} ± {best.u_corrected_rise_K:.2g} K (u, k = 1); the "
            f"manual value differs by {diff * 1e3:+.3g} mK "
            f"({diff / best.u_corrected_rise_K:+.2f} u)"))
    sec.blocks += [Paragraph(n, "note") for n in manual.notes]
    return _doc(manual.title, sec)


# --- Hess's law -------------------------------------------------------------------------------
def _network_sections(result: Any) -> list[Section]:
    k = result.coverage_factor
    rows = []
    for name in result.species:
        v, u = result.values[name], result.uncertainties.get(name)
        rows.append([name, "undetermined" if v is None else f"{v:.3f}",
                     "" if u is None else f"{u:.3f}", "" if u is None else f"{k * u:.3f}"])
    solved = Section("Standard enthalpies of formation", "species", [Table(
        ["species", "ΔfH° / kJ·mol⁻¹", "u (k = 1)", f"U (k = {k:g})"], rows,
        number_columns=(1, 2, 3))])
    res_rows = [[r.id, r.kind, f"{r.measured_kJ_per_mol:.3f}", f"{r.u_kJ_per_mol:.3f}",
                 f"{r.residual_kJ_per_mol:.3f}", f"{r.normalised:.2f}",
                 "" if r.standardised is None else f"{r.standardised:.2f}"]
                for r in result.residuals]
    fit = Section("Residuals and consistency", "residuals", [Table(
        ["row", "kind", "ΔrH / kJ·mol⁻¹", "u", "residual r", "r/u", "z"], res_rows,
        number_columns=(2, 3, 4, 5, 6))])
    p = "n/a" if result.p_value is None else f"{result.p_value:.3g}"
    rb = "n/a" if result.birge_ratio is None else f"{result.birge_ratio:.3f}"
    notes = [(f"χ² = {result.chi2:.4g}, ν = {result.dof}, p = {p}, Birge ratio = {rb} "
              f"(method: {result.method})")]
    if result.worst_offenders:
        notes.append("worst offenders (removal order): " + "; ".join(
            o.describe() for o in result.worst_offenders))
    notes += [f"inflated u of {inf.id}: {inf.old_u_kJ_per_mol:.4g} → "
              f"{inf.new_u_kJ_per_mol:.4g} kJ/mol (step {inf.step})"
              for inf in result.inflations]
    if result.undetermined:
        notes.append("not determined by the data: " + ", ".join(result.undetermined))
        notes.append("free directions: " + "; ".join(result.free_directions))
    if result.key_values_used:
        notes.append("key values used: " + ", ".join(
            f"{kv['species']} ({kv['status']})" for kv in result.key_values_used))
    fit.blocks += [Paragraph(n) for n in notes]
    fit.blocks += [Paragraph(w, "warning") for w in result.warnings]
    if result.monte_carlo:
        mc = result.monte_carlo
        fit.blocks.append(Paragraph(
            f"Monte Carlo check ({mc['n']} draws, seed {mc['seed']}): largest relative "
            f"difference of u from the linear propagation {mc['max_relative_difference_u']:.2%}"))
    return [solved, fit]


def _derived(derived: Any) -> Paragraph:
    return Paragraph(
        f"{derived.equation}: ΔrH = {derived.delta_r_H_kJ_per_mol:.3f} ± "
        f"{derived.u_delta_r_H_kJ_per_mol:.3f} kJ/mol (u, k = 1); U = "
        f"{derived.U_delta_r_H_kJ_per_mol:.3f} kJ/mol (k = {derived.coverage_factor:g})")


def _derivation_blocks(d: Any) -> list[Paragraph | Table]:
    from calwork.hess.derivation import format_factor

    head = ("Hess's law: the least-squares combination of the routes through the network "
            "(the factors are the weights of several routes)" if d.over_determined else
            "Hess's law: the target as a sum of the determinations, reversed (−) and scaled")
    return [
        Paragraph(head),
        Table(["factor", "row", "equation", "ΔrH / kJ·mol⁻¹", "factor × ΔrH / kJ·mol⁻¹"],
              [[format_factor(s.factor), s.id, s.equation, f"{s.delta_r_H_kJ_per_mol:.3f}",
                f"{s.contribution_kJ_per_mol:+.3f}"] for s in d.steps],
              number_columns=(3, 4)),
        *(Paragraph(line) for line in d.worked_lines()),
    ]


def derivation_calculation(d: Any, title: str = "Derivation") -> Any:
    """The derivation as a calculation: each row's factor and ΔrH, the contribution as the
    live formula factor × ΔrH, and the target as their SUM (the workbook writes the
    formulas with calwork's values cached; the prose formats show the values)."""
    from calwork.report.formulas import Ref, total
    from calwork.report.grid import Grid, Text
    from calwork.report.model import Calculation

    grid = Grid(title)
    grid.put(1, 1, f"Hess's law: {d.equation}", kind="title")
    grid.header(2, ["row", "equation", "factor", "ΔrH / kJ·mol⁻¹",
                    "factor × ΔrH / kJ·mol⁻¹"])
    refs = []
    for i, step in enumerate(d.steps, start=3):
        grid.put(i, 1, Text(step.id))
        grid.put(i, 2, Text(step.equation))
        factor = grid.put(i, 3, step.factor, "0.000000")
        value = grid.put(i, 4, step.delta_r_H_kJ_per_mol, "0.000")
        refs.append(grid.put(i, 5, factor * value, "0.000"))
    last = 3 + len(d.steps)
    grid.put(last, 2, Text("ΔrH of the target (sum)"), kind="header")
    grid.put(last, 5, total([r for r in refs if isinstance(r, Ref)]), "0.000")
    grid.put(last + 1, 2, Text("u (k = 1), from the network's covariance"))
    grid.put(last + 1, 5, d.u_delta_r_H_kJ_per_mol, "0.000")
    return Calculation(grid)


def network_document(result: Any, *, source: str, n_rows: int, target: Any = None,
                     derivation: Any = None) -> Document:
    """A solved Hess network (:class:`calwork.hess.NetworkResult`) and, when asked for, the
    reaction enthalpy of a target reaction."""
    sections = _network_sections(result)
    sections[0].blocks.insert(0, Paragraph(
        f"Network {source}: {n_rows} rows, ΔfH° at 298.15 K in kJ/mol"))
    if target is not None:
        sec = Section("Target reaction", "target", [_derived(target)])
        if derivation is not None:
            sec.blocks += _derivation_blocks(derivation)
        sections.append(sec)
        if derivation is not None:  # the same sum as live formulas, for the workbook
            sections.append(Section("Derivation", "derivation",
                                    [derivation_calculation(derivation)], workbook_only=True))
    return _doc(f"Hess network {source}", *sections)


def cycle_document(result: Any, derivation: Any = None) -> Document:
    """A thermochemical cycle (:class:`calwork.solution.cycles.CycleResult`), with the
    Hess's-law derivation of its target when given."""
    steps = Section(f"Cycle: {result.name or '(unnamed)'}", "cycle", [Table(
        ["id", "equation", "ΔrH / kJ·mol⁻¹", "u (k = 1)"],
        [[r.id, r.equation, f"{r.delta_r_H_kJ_per_mol:.3f}", f"{r.u_delta_r_H_kJ_per_mol:.3f}"]
         for r in result.determinations])])
    if result.target is not None and result.delta_f_H_kJ_per_mol is not None:
        steps.blocks.append(Paragraph(
            f"Δ_fH°({result.target}) = {result.delta_f_H_kJ_per_mol:.3f} ± "
            f"{result.u_delta_f_H_kJ_per_mol:.3f} kJ/mol (u, k = 1); U = "
            f"{result.U_delta_f_H_kJ_per_mol:.3f} kJ/mol (k = {result.coverage_factor:g})"))
    if result.target_reaction is not None:
        steps.blocks.append(_derived(result.target_reaction))
    steps.blocks += [Paragraph(w, "warning") for w in result.warnings]
    extra = []
    if derivation is not None:
        steps.blocks += _derivation_blocks(derivation)
        extra.append(Section("Derivation", "derivation", [derivation_calculation(derivation)],
                             workbook_only=True))
    return _doc(f"Cycle {result.name}", steps, *_network_sections(result.network), *extra)


# --- QA ---------------------------------------------------------------------------------------
def control_chart_document(chart: Any) -> Document:
    """An individuals / moving-range chart (:class:`calwork.qa.ControlChart`) with its signals
    and the advice."""
    lo_w, hi_w = chart.warning_limits
    lo_a, hi_a = chart.action_limits
    rel = f" ({100 * chart.std / abs(chart.mean):.3g} %)" if chart.mean else ""
    rows = [
        ["points", str(len(chart.values)), ""],
        ["baseline points", str(len(chart.baseline_indices)), chart.baseline_source],
        ["mean", f"{chart.mean:.6g}", chart.unit],
        ["standard deviation s", f"{chart.std:.4g}{rel}", chart.unit],
        ["warning limits", f"{lo_w:.6g} .. {hi_w:.6g}", chart.unit],
        ["action limits", f"{lo_a:.6g} .. {hi_a:.6g}", chart.unit],
        ["moving range: mean", f"{chart.mr_mean:.4g}", chart.unit],
        ["moving range: upper limit", f"{chart.mr_upper_limit:.4g}", f"D4 = {chart.d4}"],
    ]
    sec = Section(chart.title or f"control chart of {chart.quantity}", "chart",
                  [Table(["quantity", "value", "unit / note"], rows)])
    sec.blocks += [Paragraph(f"signal: {v.message}", "warning") for v in chart.violations]
    sec.blocks += [Paragraph(f"note: {n}", "note") for n in chart.notes]
    rec = chart.recommendation
    sec.blocks.append(Paragraph(f"{rec.action}: {rec.reason}"))
    return _doc(sec.title, sec)


def validation_document(result: Any) -> Document:
    """Method validation on simulated runs (:class:`calwork.simulation.validation.
    ValidationResult`)."""
    head = (f"Method validation on {result.runs} simulated runs (seed {result.seed}): "
            f"{result.scenario}")
    limit = (result.newtonian_rise_K / result.adiabatic_rise_K - 1) * 1e6
    sec = Section(head, "validation", [
        Paragraph(f"adiabatic rise {result.adiabatic_rise_K:.6f} K, Newtonian limit "
                  f"{result.newtonian_rise_K:.6f} K ({limit:+.1f} ppm)", "simulated"),
        Table(["method", "runs", "bias ppm", "spread ppm", "bias vs limit", "max |err| ppm",
               "mean u ppm", "|err| ≤ 2u"],
              [[m.method, str(m.n_runs - m.n_failed), f"{m.bias_ppm:+.1f}",
                f"{m.spread_ppm:.1f}", f"{m.bias_newtonian_ppm:+.1f}",
                f"{m.max_abs_error_ppm:.1f}", f"{m.mean_u_ppm:.1f}",
                f"{100 * m.coverage:.0f} %"] for m in result.methods])])
    sec.blocks += [Paragraph(f"note: {w}", "note") for w in result.warnings]
    return _doc("Method validation", sec)


# --- importers and the simulator --------------------------------------------------------------
def _unit_source(source: Any) -> str:
    """Where a unit came from, as a phrase ('from header', 'assumed: ...')."""
    if source == "assumed":
        return "assumed: no unit in the header; check it or give --time-unit"
    if source and str(source).startswith(("inferred", "assumed")):
        return str(source)
    return f"from {source}"


#: What ``inspect`` shows of the importer's detections, in this order.
_DETECTED = ("format", "sheet", "detected_encoding", "detected_separator", "detected_decimal",
             "header_line", "header_row", "units_line", "sensor_model", "sensor_source",
             "start", "clock_rollover")


def log_summary_document(summary: Mapping[str, Any]) -> Document:
    """What the importer made of a log (the summary ``calwork inspect`` computes)."""
    d = summary["detected"]
    source = summary["source"]
    lines = [f"log: {source}", f"sha256: {summary['sha256']}"]
    lines += [f"{k.replace('detected_', '').replace('_', ' ')}: {d[k]}" for k in _DETECTED
              if d.get(k)]
    lines.append(f"readings: {summary['points']} (lines {summary['first_row']}–"
                 f"{summary['last_row']})")
    if summary.get("time_origin"):
        lines.append(f"time axis: {summary['time_origin']}; last reading "
                     f"{summary['last_reading']}")
    lines.append(
        f"time span: {summary['time_span_s']:.3f} s; sampling interval "
        f"{summary['sampling_interval_s']:.4g} s (min {summary['sampling_interval_min_s']:.4g}, "
        f"max {summary['sampling_interval_max_s']:.4g})")
    lines.append(
        f"temperature: {summary['temperature_min_C']:.6f} to {summary['temperature_max_C']:.6f}"
        f" °C (first {summary['temperature_first_C']:.6f}, "
        f"last {summary['temperature_last_C']:.6f})")
    channel_of = {v["column"]: k for k, v in summary["channels"].items()}
    rows = []
    for col in summary["columns"]:
        if col == summary["time_column"]:
            role = f"time (unit {d.get('time_unit')}, {_unit_source(d.get('time_unit_source'))})"
        elif col == summary["temperature_column"]:
            role = (f"temperature (unit {d.get('temperature_unit')}, "
                    f"{_unit_source(d.get('temperature_unit_source'))})")
        elif col in channel_of:
            role = f"channel {channel_of[col]}"
        else:
            role = "ignored"
        rows.append([str(col), role])
    sec = Section(f"Log {source}", "log", [Paragraph(line) for line in lines])
    sec.blocks.append(Table(["column", "taken as"], rows))
    if summary["preamble"]:
        sec.blocks.append(Table(["metadata", "value"],
                                [[str(k), str(v)] for k, v in
                                 sorted(summary["preamble"].items())]))
    return _doc(f"Log {source}", sec)


def simulated_logs_document(written: Sequence[Any], out: str) -> Document:
    """The simulated logs ``calwork simulate`` wrote, with their true heats and rises."""
    heaters = any(w.electrical_energy_J for w in written)
    headers = ["run", "kind", "log", "true heat J", "true rise K"]
    if heaters:
        headers.append("electrical J")
    rows = []
    for w in written:
        row = [w.row["run"], w.row["kind"], w.row["log"], f"{w.reaction_heat_J:.4f}",
               f"{w.reaction_rise_K:.7f}"]
        if heaters:
            row.append(f"{w.electrical_energy_J:.4f}")
        rows.append(row)
    sec = Section("Simulated logs", "simulated", [Table(headers, rows), Paragraph(
        f"wrote {len(written)} simulated logs and runs.csv to {out} (invented data; true heat "
        "excludes electrical calibrations)", "simulated")])
    return _doc("Simulated logs", sec)


# --- the lab book -----------------------------------------------------------------------------
def _state_cell(run: Mapping[str, Any]) -> str:
    """``approved (ana)``, ``recorded``, ``recorded (approval lapsed)``, ``void``."""
    state = run.get("state") or run.get("status")
    if state == "approved" and run.get("approved_by"):
        return f"approved ({run['approved_by']})"
    if state == "recorded" and run.get("approval_lapsed"):
        return "recorded (approval lapsed)"
    return str(state)


def labbook_list_document(runs: Sequence[Mapping[str, Any]], cals: Sequence[Mapping[str, Any]],
                          samples: Sequence[Mapping[str, Any]]) -> Document:
    """The runs, calibrations and samples a lab-book listing found."""
    sections = [
        Section(f"runs ({len(runs)})", "runs", [Table(
            ["run", "kind", "calorimeter", "sample", "date", "state", "version", "sheet",
             "ΔT_c / K", "ε / J K⁻¹", "Δu / J g⁻¹", "error"],
            [[r["run"], r["kind"], r["calorimeter"], r["sample"], r["date"],
              _state_cell(r), r.get("version", 1), r["sheet_id"], _g(r["corrected_rise_K"]),
              _g(r["energy_equivalent_J_per_K"], 8),
              _g(r["massic_energy_J_per_g"], 8), (r["error"] or "")[:40]] for r in runs])]),
        Section(f"calibrations ({len(cals)})", "calibrations", [Table(
            ["calorimeter", "ε / J K⁻¹", "u(ε) / J K⁻¹", "n", "valid from", "valid until",
             "runs", "sheet"],
            [[c["calorimeter"], _g(c["energy_equivalent_J_per_K"], 8),
              _g(c["u_energy_equivalent_J_per_K"], 3), c["n_runs"], c["valid_from"],
              c["valid_until"] or "(current)", f"{c['first_run']}..{c['last_run']}",
              c["sheet_id"]] for c in cals])]),
        Section(f"samples ({len(samples)})", "samples", [Table(
            ["sample", "formula", "n", "Δu / J g⁻¹", "u(Δu) / J g⁻¹", "ΔfH° / kJ mol⁻¹",
             "u(ΔfH°) / kJ mol⁻¹", "sheet"],
            [[s["sample"], s.get("formula"), s.get("n_runs"),
              _g(s.get("massic_energy_J_per_g"), 8), _g(s.get("u_massic_energy_J_per_g"), 3),
              _g(s.get("delta_f_H_kJ_per_mol"), 6), _g(s.get("u_delta_f_H_kJ_per_mol"), 3),
              s["sheet_id"]] for s in samples])]),
    ]
    solution = [s for s in samples if s.get("kind", "combustion") != "combustion"]
    if solution:  # their results are molar enthalpies, blank in the table above
        sections.append(Section(f"solution samples ({len(solution)})", "solution", [Table(
            ["sample", "formula", "n", "ΔH / kJ mol⁻¹", "u(ΔH) / kJ mol⁻¹",
             "molality / mol kg⁻¹", "ΔH∞ / kJ mol⁻¹", "u(ΔH∞) / kJ mol⁻¹", "sheet"],
            [[s["sample"], s.get("formula"), s.get("n_runs"),
              _g(s.get("molar_enthalpy_kJ_per_mol"), 6),
              _g(s.get("u_molar_enthalpy_kJ_per_mol"), 3),
              _g(s.get("final_molality_mol_per_kg"), 4),
              _g(s.get("infinite_dilution_enthalpy_kJ_per_mol"), 6),
              _g(s.get("u_infinite_dilution_enthalpy_kJ_per_mol"), 3),
              s["sheet_id"]] for s in solution])]))
    for sec in sections:  # every cell is text in the document model
        for block in sec.blocks:
            if isinstance(block, Table):
                block.rows = [["" if c is None else str(c) for c in row] for row in block.rows]
    return _doc("Lab book", *sections)


def labbook_run_document(info: Mapping[str, Any]) -> Document:
    """One recorded run: its sheet row, log, state and current result."""
    sheet, log, void = info["sheet"], info["log"], info["void"]
    state = info.get("state") or {}
    status = f"state: {state.get('state', info['status'])}, version {state.get('version', 1)}"
    if void:
        status += f" — void: {void['reason']} ({void['voided_utc']}, {void['voided_by']})"
    if state.get("approved_by"):
        status += (f" — approved by {state['approved_by']} ({state['approved_utc']})"
                   + (f": {state['approval_note']}" if state.get("approval_note") else ""))
    if state.get("approval_lapsed"):
        status += f" — {state['approval_lapsed']}"
    if state.get("overrides"):
        status += " — amended cells: " + ", ".join(
            f"{k}={v if v != '' else '(blank)'}" for k, v in state["overrides"].items())
    lines = [
        (f"run {info['run']} ({info['kind']}), calorimeter {info['calorimeter']}, "
         f"sample {info['sample']}, date {info['date']}"),
        status,
        (f"sheet #{sheet['id']} {sheet['file_name']} line {sheet['line']}: "
         f"sha256 {sheet['sha256']}, {sheet['size_bytes']} bytes, from "
         f"{sheet['original_path']} (added {sheet['added_utc']} by {sheet['added_by']})"),
    ]
    if log:
        lines.append(f"log {log['rel_path']}: sha256 {log['sha256']}, {log['size_bytes']} "
                     f"bytes ({log['stored_bytes']} stored, {log['codec']}), from "
                     f"{log['original_path']}")
    lines.append("sheet row: " + ", ".join(f"{k}={v}" for k, v in sheet["row"].items()
                                           if v not in (None, {}, "")))
    sec = Section(f"Run {info['run']}", "run", [Paragraph(line) for line in lines])
    result, prov = info["result"], info["result_provenance"]
    if result:
        sec.blocks.append(Paragraph(
            f"result (reduction #{prov['reduction_id']} v{prov['version']}"
            f"{'' if prov['current'] else ', superseded'}; method {prov['method']}, "
            f"calwork {prov['calwork_version']}, {prov['created_utc']}):"))
        sec.blocks.append(Table(["field", "value"], [
            [str(k), str(v)] for k, v in result.items()
            if v not in (None, {}, [], "") and k != "provenance"]))
        if prov["constants"]:
            sec.blocks.append(Paragraph("constants: " + ", ".join(
                sorted(map(str, prov["constants"])))))
    return _doc(f"Run {info['run']}", sec)


def ingest_document(result: Any) -> Document:
    """What ``labbook add`` recorded (:class:`calwork.labbook.ingest.AddResult`)."""
    if result.already_recorded:
        sec = Section("Already recorded", "ingest", [Paragraph(
            f"already recorded: {result.file_name} is sheet #{result.sheet_id} "
            f"({result.n_runs} runs, reduced with {result.method}); nothing changed")])
    else:
        sec = Section(f"Recorded sheet #{result.sheet_id}", "ingest", [Paragraph(
            f"recorded sheet #{result.sheet_id} {result.file_name}: {result.n_runs} runs "
            f"({result.n_runs - len(result.failed)} reduced, {len(result.failed)} failed), "
            f"method {result.method}, in {result.labbook}")])
        sec.blocks += [Paragraph(f"failed {r}: {e}", "error") for r, e in result.failed]
        if result.calibrations:
            sec.blocks.append(Table(["calorimeter", "ε / J K⁻¹", "u(ε) / J K⁻¹", "n"], [
                [str(c["calorimeter"]), _g(c.get("energy_equivalent_J_per_K"), 8),
                 _g(c.get("u_energy_equivalent_J_per_K"), 3), str(c.get("n_runs"))]
                for c in result.calibrations]))
        sec.blocks += [Paragraph(f"sample {s['sample']}: {s.get('n_runs')} runs")
                       for s in result.samples]
    sec.blocks += [Paragraph(f"note: {n}", "note") for n in result.notes]
    return _doc("Lab book", sec)


def audit_document(run: str, entries: Sequence[Any]) -> Document:
    """The audit entries of a run, oldest first."""
    return _doc(f"History of {run}", Section(f"History of run {run}", "history", [Table(
        ["entry", "time (UTC)", "user", "action", "object", "reason"],
        [[f"#{e.id}", e.ts_utc, e.user, e.action, e.object, e.reason or ""]
         for e in entries])]))


def run_versions_document(run: str, versions: Sequence[Mapping[str, Any]],
                          entries: Sequence[Any] = ()) -> Document:
    """The versions of a recorded run with the change from each to the next, then its audit
    entries (``labbook history``)."""
    rows = []
    for v in versions:
        res = v.get("result") or {}
        value = (res.get("error") and f"failed: {res['error']}") or "; ".join(
            f"{k} = {_g(res[k], 8)}" for k in ("corrected_rise_K", "energy_equivalent_J_per_K",
                                              "massic_energy_J_per_g",
                                              "molar_enthalpy_kJ_per_mol") if k in res)
        rows.append([str(v["version"]), v["action"], v["created_utc"], v["created_by"],
                     v.get("reason") or "", value])
    blocks: list[Any] = [Table(["version", "made", "time (UTC)", "user", "reason", "result"],
                               rows)]
    for v in versions[1:]:
        changes = v.get("changes") or {}
        blocks.append(Paragraph(
            f"version {v['version'] - 1} → {v['version']}: " + "; ".join(
                f"{k}: {old if old != '' else '(blank)'} → {new if new != '' else '(blank)'}"
                for k, (old, new) in changes.items())
            + (f" (from corrected sheet {v['source']['sheet']})" if v.get("source") else "")))
    sections = [Section(f"Versions of run {run}", "versions", blocks)]
    if entries:
        sections.append(audit_document(run, entries).sections[0])
    return _doc(f"History of {run}", *sections)


def amend_document(results: Sequence[Any]) -> Document:
    """What amendments recorded (:class:`calwork.labbook.lifecycle.AmendResult`)."""
    if not results:
        return _doc("Lab book", Section("Nothing amended", "amend", [Paragraph(
            "every row agrees with the version of its run in force; nothing was recorded")]))
    blocks: list[Any] = []
    for r in results:
        blocks.append(Paragraph(
            f"run {r.run}: version {r.version} recorded (audit entry #{r.audit_id}); "
            + "; ".join(f"{k}: {a if a != '' else '(blank)'} → {b if b != '' else '(blank)'}"
                        for k, (a, b) in r.changes.items())))
        if r.also_changed:
            blocks.append(Paragraph(f"  re-reduced with it: {', '.join(r.also_changed)} "
                                    "(same sheet: calibration series and samples follow)"))
        if r.error:
            blocks.append(Paragraph(f"  run {r.run} now fails: {r.error}", "error"))
    return _doc("Lab book", Section("Amended", "amend", blocks))


def recompute_document(report: Any) -> Document:
    """The outcome of ``labbook recompute``
    (:class:`calwork.labbook.recompute.RecomputeReport`)."""
    verdict = (f"all agree within {report.tolerance:g} relative" if report.agree
               else f"{len(report.differences)} difference(s) beyond {report.tolerance:g} "
                    "relative")
    sec = Section("Recomputation", "recompute", [Paragraph(
        f"recomputed {report.records} records ({report.numbers} numbers, {report.runs} runs) "
        f"in {report.reductions} reductions: {verdict}")])
    if report.differences:
        sec.blocks.append(Table(
            ["sheet", "reduction", "record", "field", "stored", "recomputed", "relative"],
            [[f"#{d.sheet_id}", f"#{d.reduction_id}", d.record, d.field, repr(d.stored),
              repr(d.recomputed), "" if d.relative is None else f"{d.relative:.3g}"]
             for d in report.differences]))
    sec.blocks += [Paragraph(f"note: {n}", "note") for n in report.notes]
    return _doc("Recomputation", sec)


def verify_document(report: Any, *, print_head: bool = False) -> Document:
    """The outcome of ``labbook verify`` (:class:`calwork.labbook.verify.VerifyReport`)."""
    checked = ", ".join(f"{n} {k}" for k, n in report.counts.items())
    if report.ok:
        sec = Section("Verification", "verify", [Paragraph(f"lab book verifies: {checked}")])
    else:
        sec = Section("Verification", "verify",
                      [Paragraph(p, "error") for p in report.problems])
        sec.blocks.append(Paragraph(f"lab book does NOT verify: {len(report.problems)} "
                                    f"problem(s); checked {checked}"))
    if print_head:
        sec.blocks.append(Paragraph(f"audit head: {report.head} (entry #{report.head_entry})"))
    return _doc("Verification", sec)


def derived_enthalpy_document(derived: Any) -> Document:
    """The reaction enthalpy of one reaction computed from a solved network
    (:class:`calwork.hess.network_result.DerivedEnthalpy`)."""
    return _doc("Reaction enthalpy", Section("Reaction enthalpy", "target", [_derived(derived)]))


def network_result_document(result: Any) -> Document:
    """A solved Hess network on its own (without the file it came from)."""
    return _doc("Hess network", *_network_sections(result))


#: The document of each record type a user may want to read (by class name, so that this
#: module imports none of the stages).
_VIEWS = {
    "RiseResult": rise_document,
    "ManualRise": manual_rise_document,
    "Periods": periods_document,
    "NetworkResult": network_result_document,
    "DerivedEnthalpy": derived_enthalpy_document,
    "CycleResult": cycle_document,
    "ControlChart": control_chart_document,
    "ValidationResult": validation_document,
    "AddResult": ingest_document,
    "RecomputeReport": recompute_document,
    "VerifyReport": verify_document,
}


def document_of(record: Any) -> Document:
    """The document of a result record (a corrected rise, a network, a cycle, a control chart,
    a validation, a lab-book check); :class:`TypeError` for anything else."""
    for cls in type(record).__mro__:
        view = _VIEWS.get(cls.__name__)
        if view is not None:
            return view(record)
    raise TypeError(f"no document is defined for a {type(record).__name__}; one of "
                    f"{sorted(_VIEWS)}")


def describe(record: Any, *, markdown: bool = False) -> str:
    """A result record as readable text (or markdown) — the text the command line prints.

    Examples
    --------
    >>> from calwork.qa import control_chart
    >>> print(describe(control_chart([10.0, 10.1, 9.9, 10.0, 10.05])).splitlines()[0])
    control chart of energy_equivalent_J_per_K
    """
    from calwork.report.plain import render_markdown, render_text

    doc = document_of(record)
    return render_markdown(doc) if markdown else render_text(doc)
