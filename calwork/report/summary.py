"""The summary of a reduction — calibrations, runs, samples with their budgets, warnings — as
a :class:`~calwork.report.model.Document`: what ``calwork reduce`` prints, what its
``report.md`` holds (:mod:`calwork.report.plain` renders both)."""

from __future__ import annotations

import math
from typing import Any

from calwork.core.safety import SAFETY_NOTE
from calwork.report.model import Document, Paragraph, Section, Table
from calwork.report.texts import SAMPLE_LABELS, component_label

__all__ = ["boundary_origins", "calorific_value_blocks", "outlier_test_text", "review_table",
           "summary_document"]

#: The fuel outputs of a sample (``SampleResult.fuel``) by the words a fuel lab uses.
_CALORIFIC = (
    ("gross_v_as_analysed", "gross, constant volume, as analysed"),
    ("gross_v_dry", "gross, constant volume, dry"),
    ("gross_v_dry_ash_free", "gross, constant volume, dry ash-free"),
    ("net_p_as_analysed", "net, constant pressure, as analysed"),
    ("net_v_as_analysed", "net, constant volume, as analysed"),
    ("net_p_dry", "net, constant pressure, dry"),
    ("net_v_dry", "net, constant volume, dry"),
)
_INPUTS = (("moisture_mass_fraction", "moisture"), ("hydrogen_mass_fraction", "hydrogen"),
           ("ash_mass_fraction", "ash"), ("oxygen_mass_fraction", "oxygen"),
           ("nitrogen_mass_fraction", "nitrogen"))


_SOURCES = {"detected": "detected", "heater-channel": "heater channel", "given": "sheet"}


def _origin(name: str, source: str | None, info: Any, review: Any) -> str:
    """Where a period boundary came from: detected, the sheet, an amendment, a remark in a
    hand-read record, the heater channel (limits: the sheet, an amendment, or none)."""
    overrides = (review or {}).get("overrides") or {}
    if overrides.get(name, "") != "":
        return f"amended (v{review.get('version')})"
    given = info is not None and getattr(info, name, None) is not None
    if source is None:  # a limit, not a detected boundary
        return "sheet" if given else "whole record"
    if source == "given" and not given:
        return "record remark"
    return _SOURCES.get(source, source)


def boundary_origins(periods: Any, info: Any, review: Any) -> dict[str, str]:
    """Where each of a run's four period boundaries came from (see :func:`review_table`)."""
    periods = periods or {}
    return {
        "fore_start_s": _origin("fore_start_s", None, info, review),
        "fire_time_s": _origin("fire_time_s", periods.get("fire_source"), info, review)
        if periods else "—",
        "main_end_s": _origin("main_end_s", periods.get("main_end_source"), info, review)
        if periods else "—",
        "after_end_s": _origin("after_end_s", None, info, review),
    }


def review_table(red: Any) -> Table:
    """Per run: its state and version, who approved it, and where each period boundary came
    from (the same table in the report and the workbook)."""
    infos = {getattr(i, "run", None): i for i in red.run_infos}
    rows = []
    for run in red.runs:
        review = red.review.get(run.run) or {}
        origins = boundary_origins(run.periods, infos.get(run.run), review)
        approved = (f"{review['approved_by']} ({review.get('approved_utc') or ''})"
                    if review.get("approved_by") else "")
        if review.get("approval_lapsed"):
            approved = "lapsed: result changed since approval"
        rows.append([
            run.run, review.get("state") or "not recorded",
            str(review.get("version") or ""), approved, *origins.values()])
    return Table(["run", "state", "version", "approved by", "fore-period start",
                  "firing", "end of main period", "after-period end"], rows,
                 number_columns=(2,))


def calorific_value_blocks(sample: Any, infos: Any) -> list[Paragraph | Table]:
    """The calorific values of a fuel sample (positive, by basis, in J/g, MJ/kg, cal_IT/g and
    Btu_IT/lb where computed) and the analysis inputs they rest on; empty for a non-fuel."""
    fuel = dict(sample.fuel)
    if not fuel:
        return []
    rows = []
    for key, label in _CALORIFIC:
        value = fuel.get(f"{key}_J_per_g")
        if value is None:
            continue
        rows.append([label, f"{value:.1f}", f"{value / 1000.0:.4f}",
                     _fmt(fuel.get(f"{key}_cal_IT_per_g"), 2),
                     _fmt(fuel.get(f"{key}_Btu_IT_per_lb"), 1)])
    info = next((i for i in infos if getattr(i, "sample", None) == sample.sample), None)
    given = [f"{label} {getattr(info, name):g}" for name, label in _INPUTS
             if info is not None and getattr(info, name, None) is not None]
    return [
        Table(["calorific value", "J/g", "MJ/kg", "cal_IT/g", "Btu_IT/lb"], rows,
              f"Calorific values of {sample.sample} (positive; fuel conventions)",
              number_columns=(1, 2, 3, 4)),
        Paragraph("Basis inputs (mass fractions, as analysed): "
                  + (", ".join(given) if given else "none given"), "note"),
    ]

_SAMPLE_VALUES = ("massic_energy_J_per_g", "u_massic_energy_J_per_g",
                  "standard_massic_energy_J_per_g", "u_standard_massic_energy_J_per_g",
                  "delta_c_U_kJ_per_mol", "delta_c_H_kJ_per_mol", "delta_f_H_kJ_per_mol",
                  "u_delta_f_H_kJ_per_mol", "U_delta_f_H_kJ_per_mol",
                  "molar_enthalpy_kJ_per_mol", "u_molar_enthalpy_kJ_per_mol",
                  "infinite_dilution_enthalpy_kJ_per_mol",
                  "u_infinite_dilution_enthalpy_kJ_per_mol")


def _fmt(value: Any, digits: int = 4) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return ""
    if isinstance(value, float):
        return f"{value:.{digits}f}"
    return str(value)


def outlier_test_text(t: Any) -> str:
    """A Grubbs test result in words (``G = … vs …`` and the outlier, or why not applied)."""
    if not t:
        return ""
    if not t.get("applied"):
        return str(t.get("reason", ""))
    text = f"G = {t['G']:.3f} vs {t['G_critical']:.3f}"
    return text + (f" — outlier {t['suspect']}" if t.get("outlier") else "")


def summary_document(red: Any) -> Document:
    """The summary of ``red`` (a :class:`~calwork.core.results.Reduction`)."""
    head = Section("Reduction", "reduction")
    if red.sheet_path:
        head.blocks.append(Paragraph(f"Run sheet: {red.sheet_path}"))
    head.blocks.append(Paragraph(f"Temperature-rise method: {red.method}"))
    head.blocks.append(Paragraph(SAFETY_NOTE, "safety"))
    sections = [head]
    if red.calibrations:
        sections.append(Section("Calibrations", "calibrations", [Table(
            ["calorimeter", "ε / J K⁻¹", "u(ε) / J K⁻¹", "n", "RSD / %", "outlier test"],
            [[c.calorimeter, _fmt(c.energy_equivalent_J_per_K, 2),
              _fmt(c.u_energy_equivalent_J_per_K, 2), str(c.n_runs),
              _fmt(c.rsd_percent, 4), outlier_test_text(c.outlier_test)]
             for c in red.calibrations])]))
    sections.append(Section("Runs", "runs", [Table(
        ["run", "kind", "sample", "ΔT_c / K", "ε / J K⁻¹", "Δu / J g⁻¹", "ΔH / kJ mol⁻¹",
         "corrections / J", "error"],
        [[r.run, r.kind, r.sample or "", _fmt(r.corrected_rise_K, 5),
          _fmt(r.energy_equivalent_J_per_K, 2),
          _fmt(getattr(r, "massic_energy_J_per_g", None), 2),  # bomb runs only
          _fmt(getattr(r, "molar_enthalpy_kJ_per_mol", None), 4),  # solution runs only
          ", ".join(f"{k} {v:.2f}" for k, v in r.corrections_J.items() if v),
          r.error or ""] for r in red.runs])]))
    failed_cals = {c.calorimeter: "; ".join(c.acceptance_problems) for c in red.calibrations
                   if c.acceptance_problems}
    if red.samples:
        samples = Section("Samples", "samples")
        for s in red.samples:
            rows = [[SAMPLE_LABELS.get(key, key), _fmt(getattr(s, key, None), 3)]
                    for key in _SAMPLE_VALUES if getattr(s, key, None) is not None]
            for budget in (s.budget, *s.derived_budgets.values()):
                rows += [[component_label(c.name, budget.quantity),
                          f"{_fmt(c.value, 4)} {c.unit}"] for c in budget.components]
            samples.blocks.append(Table(["quantity", "value"], rows,
                                        f"{s.sample} ({s.formula or 'no formula'}), "
                                        f"{s.n_runs} run(s)"))
            samples.blocks += calorific_value_blocks(s, red.run_infos)
            samples.blocks.extend(Paragraph(w, "warning") for w in s.warnings)
            if s.calorimeter in failed_cals:
                samples.blocks.append(Paragraph(
                    f"calibration-not-accepted: {s.sample} is computed from the calibration "
                    f"series of {s.calorimeter}, which fails its acceptance "
                    f"({failed_cals[s.calorimeter]})", "warning"))
        sections.append(samples)
    warns = list(red.warnings) + [f"{c.calorimeter}: {w}" for c in red.calibrations
                                  for w in c.warnings]
    warns += [f"run {r.run}: {w}" for r in red.runs for w in r.warnings]
    if warns:
        sections.append(Section("Warnings", "warnings",
                                [Paragraph(w, "warning") for w in warns]))
    sections.append(Section("Uncertainties", "uncertainties", [Paragraph(
        "u is a standard uncertainty (k = 1); U = 2u (k = 2).", "note")]))
    return Document(title="Reduction report", subtitle="", sections=sections,
                    simulated=False)
