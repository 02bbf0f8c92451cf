"""The summary of a reduction — calibrations, runs, samples with their budgets, warnings — as
a :class:`~calwork.report.model.Document`: what ``calwork reduce`` prints, what its
``report.md`` holds (:mod:`calwork.report.plain` renders both)."""

from __future__ import annotations

import math
from typing import Any

from calwork.core.safety import SAFETY_NOTE
from calwork.report.model import Document, Paragraph, Section, Table

__all__ = ["summary_document"]

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


def _outlier_test(t: Any) -> str:
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
              _fmt(c.rsd_percent, 4), _outlier_test(c.outlier_test)]
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
            rows = [[key, _fmt(getattr(s, key, None), 3)] for key in _SAMPLE_VALUES
                    if getattr(s, key, None) is not None]
            for budget in (s.budget, *s.derived_budgets.values()):
                rows += [[f"u component of {budget.quantity}: {c.name}",
                          f"{_fmt(c.value, 4)} {c.unit}"] for c in budget.components]
            rows += [[f"fuel: {k}", _fmt(v, 3)] for k, v in s.fuel.items()]
            samples.blocks.append(Table(["quantity", "value"], rows,
                                        f"{s.sample} ({s.formula or 'no formula'}), "
                                        f"{s.n_runs} run(s)"))
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
