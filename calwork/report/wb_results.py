"""Result sheets of the workbook: Summary, Uncertainty budget and Formation.

Series statistics are live formulas over the run sheets (``COUNT``, ``AVERAGE``, ``STDEV``,
s/√n, RSD); combined uncertainties are ``SQRT(SUMSQ(...))`` of the budget components when that
is how calwork combined them; the formation enthalpy is
a·ΔfH°(CO2, g) + b/2·ΔfH°(H2O, l) − ΔcH° with ΔcH° = ΔcU° + Δn_g·R·T and ΔcU° = M·Δu°.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

from calwork.core.constants import T_REF_K, R_J_per_mol_K
from calwork.core.errors import CalworkError
from calwork.core.safety import SAFETY_NOTE
from calwork.formula import ATOMIC_WEIGHT_SOURCE, element_counts
from calwork.report.formulas import Const, Expr, Ref, average, count, func, quadrature, sqrt
from calwork.report.formulas import stdev as stdev_of
from calwork.report.plan import Plan, Table
from calwork.report.texts import SIMULATED_NOTE, simulated_runs
from calwork.report.wb_runs import runs_of

__all__ = [
    "BUDGET",
    "FORMATION",
    "SUMMARY",
    "plan_budget",
    "plan_formation",
    "plan_summary_calibrations",
    "plan_summary_samples",
]

SUMMARY = "Summary"
BUDGET = "Uncertainty budget"
FORMATION = "Formation"

_SAMPLE_COLS = [
    ("sample", "sample", None), ("formula", "formula", None),
    ("calorimeter", "calorimeter", None), ("n", "runs n", "0"),
    ("du", "mean massic energy Δu (J/g)", "0.00"),
    ("s_du", "s(Δu), one run (J/g)", "0.00"),
    ("rsd", "RSD of Δu (%)", "0.0000"),
    ("u_du", "u(Δu) of the mean (J/g)", "0.00"),
    ("du0", "mean standard massic energy Δu° (J/g)", "0.00"),
    ("u_du0", "u(Δu°) (J/g)", "0.00"),
    ("dcU", "ΔcU° (kJ/mol)", "0.00"), ("u_dcU", "u(ΔcU°) (kJ/mol)", "0.00"),
    ("dcH", "ΔcH° (kJ/mol)", "0.00"), ("u_dcH", "u(ΔcH°) (kJ/mol)", "0.00"),
    ("dfH", "ΔfH° (kJ/mol)", "0.00"), ("u_dfH", "u(ΔfH°) (kJ/mol)", "0.00"),
    ("U_dfH", "U(ΔfH°) = k·u (kJ/mol)", "0.00"), ("k", "coverage factor k", "0.0"),
    ("h", "solution: molar enthalpy ΔH (kJ/mol)", "0.0000"),
    ("u_h", "solution: u(ΔH) (kJ/mol)", "0.0000"),
    ("molality", "solution: final molality (mol/kg)", "0.00000"),
    ("h_inf", "solution: ΔH at infinite dilution (kJ/mol)", "0.0000"),
    ("u_h_inf", "solution: u(ΔH at infinite dilution) (kJ/mol)", "0.0000"),
    ("runs", "runs", None), ("warnings", "warnings", None),
]
_CAL_COLS = [
    ("calorimeter", "calorimeter", None), ("n", "runs n", "0"),
    ("eps", "mean energy equivalent ε (J/K)", "0.000"),
    ("s", "s(ε), one run (J/K)", "0.000"), ("sm", "s(ε)/√n (J/K)", "0.000"),
    ("rsd", "RSD of ε (%)", "0.0000"), ("u", "u(ε) of the mean (J/K)", "0.000"),
    ("method", "method", None), ("runs", "runs", None), ("warnings", "warnings", None),
]


def _series_stats(plan: Plan, table: Table, row: int, refs: list[Ref], reported: Mapping[str, Any],
                  keys: Mapping[str, str], label: str) -> dict[str, Ref | None]:
    """n, mean, s, s/√n and RSD of ``refs`` as formulas, each checked against calwork."""
    out: dict[str, Ref | None] = {}
    if not refs:
        for stat, col in keys.items():
            out[stat] = table.put(row, col, reported.get(stat))
        return out
    n = table.put(row, "n", plan.checked(count(refs), reported.get("n"), f"n of {label}"))
    mean = table.put(row, keys["mean"], plan.checked(average(refs), reported.get("mean"),
                                                    f"mean of {label}"))
    out["n"], out["mean"] = n, mean
    if len(refs) >= 2:
        s = table.put(row, keys["s"], plan.checked(stdev_of(refs), reported.get("s"),
                                                  f"standard deviation of {label}"))
        out["s"] = s
        if "sm" in keys and n is not None:
            out["sm"] = table.put(row, keys["sm"], plan.checked(
                s / sqrt(n), reported.get("sm"), f"standard deviation of the mean of {label}"))
        out["rsd"] = table.put(row, keys["rsd"], plan.checked(
            100.0 * s / func("ABS", mean), reported.get("rsd"), f"RSD of {label}"))
    return out


def plan_summary_calibrations(plan: Plan) -> None:
    """Title, legend and the calibration table (ε statistics as formulas), notes below."""
    red = plan.reduction
    grid = plan.grid(SUMMARY)
    sim = simulated_runs(red)
    grid.put(1, 1, f"calwork reduction of {red.sheet_path or '(runs given in memory)'} — "
             f"corrected rise by {red.method}", kind="title")
    legend = ("Blue numbers are inputs and fitted values; black cells are live formulas. "
              "u: standard uncertainty (k = 1); U = k·u.")
    grid.put(2, 1, f"{SIMULATED_NOTE} {legend}" if sim else legend, kind="note")
    plan.tables["summary_samples"] = Table(grid, 3, _SAMPLE_COLS)

    first = 4 + len(red.samples) + 2
    grid.put(first, 1, "Calibrations (energy equivalent of each calorimeter)", kind="title")
    cal_table = Table(grid, first + 1, _CAL_COLS, freeze=False)
    grid.freeze = "B4"
    for i, c in enumerate(red.calibrations):
        row = first + 2 + i
        cal_table.put(row, "calorimeter", c.calorimeter)
        cal_table.put(row, "method", c.method)
        cal_table.put(row, "runs", ", ".join(c.runs))
        cal_table.put(row, "warnings", "; ".join(c.warnings) or None)
        refs = runs_of(plan.refs, "eps", c.runs)
        stats = _series_stats(
            plan, cal_table, row, refs,
            {"n": c.n_runs, "mean": c.energy_equivalent_J_per_K, "s": c.std_dev_J_per_K,
             "sm": c.std_dev_of_mean_J_per_K, "rsd": c.rsd_percent},
            {"mean": "eps", "s": "s", "sm": "sm", "rsd": "rsd"},
            f"the energy equivalents of {c.calorimeter}")
        if not refs:
            cal_table.put(row, "n", c.n_runs)
            for key, value in (("s", c.std_dev_J_per_K), ("sm", c.std_dev_of_mean_J_per_K),
                               ("rsd", c.rsd_percent)):
                cal_table.put(row, key, value)
        mean = stats.get("mean") or cal_table.put(row, "eps", c.energy_equivalent_J_per_K)
        if mean is not None:
            plan.refs[("eps_mean", c.calorimeter)] = mean
        sm = stats.get("sm")
        if sm is not None:
            plan.refs[("eps_sm", c.calorimeter)] = sm
        plan.refs[("cal_row", c.calorimeter)] = Ref(SUMMARY, row, 1, 0.0)
    plan.tables["summary_cals"] = cal_table

    row = first + 3 + len(red.calibrations)
    for text in [*(f"Warning: {w}" for w in red.warnings), SAFETY_NOTE]:
        grid.put(row, 1, text, kind="note")
        row += 1


def plan_summary_samples(plan: Plan) -> None:
    """One row per sample series: n, mean, s and RSD of Δu, mean Δu° (formulas)."""
    table = plan.tables["summary_samples"]
    for i, s in enumerate(plan.reduction.samples):
        row = 4 + i
        table.put(row, "sample", s.sample)
        table.put(row, "formula", s.formula)
        table.put(row, "calorimeter", s.calorimeter)
        table.put(row, "runs", ", ".join(s.runs))
        table.put(row, "warnings", "; ".join(s.warnings) or None)
        table.put(row, "k", s.coverage_factor)
        for key, attr in (("h", "molar_enthalpy_kJ_per_mol"),
                          ("u_h", "u_molar_enthalpy_kJ_per_mol"),
                          ("molality", "final_molality_mol_per_kg"),
                          ("h_inf", "infinite_dilution_enthalpy_kJ_per_mol"),
                          ("u_h_inf", "u_infinite_dilution_enthalpy_kJ_per_mol")):
            table.put(row, key, getattr(s, attr))
        refs = runs_of(plan.refs, "du", s.runs)
        stats = _series_stats(plan, table, row, refs,
                              {"n": s.n_runs, "mean": s.massic_energy_J_per_g},
                              {"mean": "du", "s": "s_du", "rsd": "rsd"},
                              f"the massic energies of {s.sample}")
        for key in ("s", "n"):
            if stats.get(key) is not None:
                plan.refs[(f"du_{key}", s.sample)] = stats[key]
        if not refs:
            table.put(row, "n", s.n_runs)
        refs0 = runs_of(plan.refs, "du0", s.runs)
        if refs0:
            mean0 = table.put(row, "du0", plan.checked(
                average(refs0), s.standard_massic_energy_J_per_g,
                f"mean standard massic energy of {s.sample}"))
        else:
            mean0 = table.put(row, "du0", s.standard_massic_energy_J_per_g)
        if mean0 is not None:
            plan.refs[("du0_mean", s.sample)] = mean0
        plan.refs[("summary_row", s.sample)] = Ref(SUMMARY, row, 1, 0.0)


def _budget_row(table: Table, row: int, series: str, quantity: str, component: str,
                content: Any, unit: str, how: str | None = None) -> Ref | None:
    table.put(row, "series", series)
    table.put(row, "quantity", quantity)
    table.put(row, "component", component)
    table.put(row, "unit", unit)
    table.put(row, "how", how)
    return table.put(row, "value", content)


def _calibration_budget(plan: Plan, table: Table, row: int, c: Any) -> int:
    b = dict(c.budget)
    name, q = c.calorimeter, "energy equivalent ε"
    sm_ref = plan.refs.get(("eps_sm", name))
    mean_ref = plan.refs.get(("eps_mean", name))
    parts: list[Ref] = []
    if {"std_dev_of_mean_J_per_K", "certificate_J_per_K", "certificate_relative"} <= set(b):
        sm = b.pop("std_dev_of_mean_J_per_K")
        content = sm if sm_ref is None else plan.checked(sm_ref, sm, f"s(ε)/√n of {name}")
        parts.append(_budget_row(table, row, name, q, "repeatability s(ε)/√n", content, "J/K",
                                 "Summary (or the rise uncertainty of a single run)"))
        u_r = _budget_row(table, row + 1, name, q, "certificate, relative u_r",
                          b.pop("certificate_relative"), "1", "reference-material certificate")
        cert = b.pop("certificate_J_per_K")
        content = cert if mean_ref is None or u_r is None else plan.checked(
            mean_ref * u_r, cert, f"certificate part of u(ε) of {name}")
        parts.append(_budget_row(table, row + 2, name, q, "certificate ε̄·u_r", content, "J/K",
                                 "formula"))
        row += 3
        n_parts = 2
        if "corrections_J_per_K" in b:
            parts.append(_budget_row(table, row, name, q,
                                     "correction constants √Σ(r_k·mean(C_k/ΔT))²",
                                     b.pop("corrections_J_per_K"), "J/K",
                                     "calwork (bomb_corrections.toml relative u)"))
            row += 1
            n_parts = 3
        parts = [p for p in parts if p is not None]
        total_content: Any = c.u_energy_equivalent_J_per_K
        if len(parts) == n_parts:
            total_content = plan.checked(quadrature(*parts), c.u_energy_equivalent_J_per_K,
                                         f"u(ε) of {name}")
    else:
        total_content = c.u_energy_equivalent_J_per_K
    for key, value in b.items():
        if isinstance(value, (int, float)) and math.isfinite(value):
            # components without a unit suffix are J/K, like u(ε) (calwork.solution.chain)
            _budget_row(table, row, name, q, f"(information) {key}", float(value),
                        c.budget.unit_of(key))
            row += 1
    ref = _budget_row(table, row, name, q, "combined u(ε) = √(Σ u_i²)", total_content, "J/K",
                      "formula" if not isinstance(total_content, float) else "calwork")
    if ref is not None:
        plan.tables["summary_cals"].put(plan.refs[("cal_row", name)].cell.row, "u", ref)
    return row + 2


_BOMB_PARTS = ("scatter_J_per_g", "calibration_J_per_g", "certificate_J_per_g",
               "corrections_J_per_g")
_PART_NAMES = {"scatter_J_per_g": "scatter of the series s(Δu)/√n",
               "calibration_J_per_g": "calibration series (systematic)",
               "certificate_J_per_g": "reference-material certificate (systematic)",
               "corrections_J_per_g": "corrections (ignition, fuse, acids...)",
               "washburn_J_per_g": "Washburn correction data"}


def _sample_budget(plan: Plan, table: Table, row: int, s: Any) -> int:
    b = dict(s.budget)
    name = s.sample
    summary = plan.tables["summary_samples"]
    srow = plan.refs[("summary_row", name)].cell.row
    s_ref, n_ref = plan.refs.get(("du_s", name)), plan.refs.get(("du_n", name))
    if set(_BOMB_PARTS) <= set(b):
        q = "massic energy Δu"
        parts = []
        for key in _BOMB_PARTS:
            value = b.pop(key)
            content: Any = value
            how = "calwork (GUM propagation)"
            if key == "scatter_J_per_g" and s_ref is not None and n_ref is not None:
                content = plan.checked(s_ref / sqrt(n_ref), value, f"scatter of {name}")
                how = "formula (Summary)"
            parts.append(_budget_row(table, row, name, q, _PART_NAMES[key], content, "J/g",
                                     how))
            row += 1
        u_reported = s.u_massic_energy_J_per_g
        u_du = _budget_row(table, row, name, q, "combined u(Δu) = √(Σ u_i²)",
                           plan.checked(quadrature(*parts), u_reported, f"u(Δu) of {name}"),
                           "J/g", "formula")
        plan.refs[("u_du", name)] = u_du
        row += 1
        if "washburn_J_per_g" in b and u_du is not None:
            q0 = "standard massic energy Δu°"
            w = _budget_row(table, row, name, q0, _PART_NAMES["washburn_J_per_g"],
                            b.pop("washburn_J_per_g"), "J/g", "calwork (GUM propagation)")
            u0 = s.u_standard_massic_energy_J_per_g
            plan.refs[("u_du0", name)] = _budget_row(
                table, row + 1, name, q0, "combined u(Δu°) = √(u²(Δu) + u²(Washburn))",
                plan.checked(quadrature(u_du, w), u0, f"u(Δu°) of {name}"), "J/g", "formula")
            row += 2
    # the rest as calwork computed them (the formation budget is written as formulas on the
    # Formation sheet)
    rest = [(s.budget, key) for key in b]
    rest += [(budget, c.name) for label, budget in s.derived_budgets.items()
             if label != "delta_f_H" for c in budget.components]
    for budget, key in rest:
        _budget_row(table, row, name, budget.quantity, key, budget[key], budget.unit_of(key),
                    "calwork")
        row += 1
    for key, attr in (("u_du", "u_massic_energy_J_per_g"),
                      ("u_du0", "u_standard_massic_energy_J_per_g")):
        ref = plan.refs.get((key, name))
        summary.put(srow, key, ref if ref is not None else getattr(s, attr))
    return row + 1


def plan_budget(plan: Plan) -> None:
    """Budget components (calwork's propagation) and their root-sum-of-squares totals."""
    red = plan.reduction
    grid = plan.grid(BUDGET)
    table = Table(grid, 1, [
        ("series", "series", None), ("quantity", "quantity", None),
        ("component", "component", None),
        ("value", "standard uncertainty u_i (unit →)", "0.00000"),
        ("unit", "unit", None), ("how", "from", None),
    ])
    row = 2
    for c in red.calibrations:
        row = _calibration_budget(plan, table, row, c)
    for s in red.samples:
        row = _sample_budget(plan, table, row, s)
    grid.put(row + 1, 1, "Components are standard uncertainties (k = 1) in the unit shown, "
             "propagated by calwork (GUM law of propagation, JCGM 100:2008); the calibration "
             "and certificate parts are systematic for every run on that calorimeter and are "
             "not averaged down (docs/methods.md §4).", kind="note")


def _key_values(samples: list[Any]) -> dict[str, dict[str, Any]]:
    """Key values used, by species (from ``SampleResult.key_values_used['values']``)."""
    out: dict[str, dict[str, Any]] = {}
    for s in samples:
        for kv in s.key_values_used.get("values", ()) or ():
            if isinstance(kv, Mapping) and kv.get("species") and kv.get("equation") is None:
                out.setdefault(str(kv["species"]), dict(kv))
    return out


_FORM_COLS = [
    ("sample", "sample", None), ("formula", "formula", None),
    ("a", "C atoms a", None), ("b", "H atoms b", None), ("c", "O atoms c", None),
    ("d", "N atoms d", None),
    ("M", "molar mass M = Σ n·A_r (g/mol)", "0.0000"),
    ("du0", "mean Δu° (J/g)", "0.00"), ("u_du0", "u(Δu°) (J/g)", "0.00"),
    ("dcU", "ΔcU° = M·Δu°/1000 (kJ/mol)", "0.000"),
    ("u_dcU", "u(ΔcU°) = M·u(Δu°)/1000 (kJ/mol)", "0.000"),
    ("dn", "Δn_gas = c/2 + d/2 − b/4 (mol/mol)", "0.00"),
    ("dcH", "ΔcH° = ΔcU° + Δn_gas·R·T/1000 (kJ/mol)", "0.000"),
    ("u_dcH", "u(ΔcH°) = u(ΔcU°) (kJ/mol)", "0.000"),
    ("dfH", "ΔfH° = a·ΔfH°(CO2) + b/2·ΔfH°(H2O) − ΔcH° (kJ/mol)", "0.000"),
    ("u_kv", "u from key values = √((a·u(CO2))² + (b/2·u(H2O))²) (kJ/mol)", "0.000"),
    ("u_dfH", "u(ΔfH°) = √(u²(ΔcH°) + u²(key values)) (kJ/mol)", "0.000"),
    ("U_dfH", "U(ΔfH°) = k·u (kJ/mol)", "0.000"), ("note", "note", None),
]
_CHON = ("C", "H", "O", "N")


def plan_formation(plan: Plan) -> None:
    """ΔcU°, ΔcH° and ΔfH° of every combustion sample with a CHON formula, as formulas."""
    import periodictable  # the atomic weights behind calwork.formula

    red = plan.reduction
    samples = [s for s in red.samples if s.kind == "combustion"]
    if not samples:
        return
    grid = plan.grid(FORMATION)
    table = Table(grid, 1, _FORM_COLS)
    base = len(samples) + 4
    grid.put(base, 1, "Constants and key values used", kind="title")
    grid.header(base + 1, ["quantity", "value", "u (k = 1)", "unit", "source"])
    r = base + 2
    grid.put(r, 1, "molar gas constant R")
    R = grid.put(r, 2, R_J_per_mol_K, "0.000000000")
    grid.put(r, 4, "J/(mol·K)")
    grid.put(r, 5, "CODATA 2018 (exact, N_A·k)")
    grid.put(r + 1, 1, "reference temperature T")
    T = grid.put(r + 1, 2, T_REF_K, "0.00")
    grid.put(r + 1, 4, "K")
    grid.put(r + 1, 5, "thermochemical reference temperature (common practice)")
    r += 2
    kv_refs: dict[str, tuple[Ref, Ref]] = {}
    for species, kv in _key_values(samples).items():
        grid.put(r, 1, f"ΔfH°({species})")
        value = grid.put(r, 2, kv.get("value_kJ_per_mol"), "0.000")
        u = grid.put(r, 3, kv.get("u_kJ_per_mol"), "0.0000")
        grid.put(r, 4, "kJ/mol")
        grid.put(r, 5, f"{kv.get('source', '')} (status: {kv.get('status', '?')})")
        if value is not None and u is not None:
            kv_refs[species] = (value, u)
        r += 1
    weights = {}
    for el in _CHON:
        grid.put(r, 1, f"atomic weight A_r({el})")
        weights[el] = grid.put(r, 2, float(periodictable.elements.symbol(el).mass), "0.00000")
        grid.put(r, 4, "g/mol")
        grid.put(r, 5, ATOMIC_WEIGHT_SOURCE)
        r += 1

    summary = plan.tables["summary_samples"]
    for i, s in enumerate(samples):
        row = 2 + i
        srow = plan.refs[("summary_row", s.sample)].cell.row
        table.put(row, "sample", s.sample)
        table.put(row, "formula", s.formula)
        cells = _formation_row(plan, table, row, s, R, T, kv_refs, weights)
        for key, attr in (("dcU", "delta_c_U_kJ_per_mol"), ("u_dcU", "u_delta_c_U_kJ_per_mol"),
                          ("dcH", "delta_c_H_kJ_per_mol"), ("u_dcH", "u_delta_c_H_kJ_per_mol"),
                          ("dfH", "delta_f_H_kJ_per_mol"), ("u_dfH", "u_delta_f_H_kJ_per_mol"),
                          ("U_dfH", "U_delta_f_H_kJ_per_mol")):
            ref = cells.get(key)
            summary.put(srow, key, ref if ref is not None else getattr(s, attr))


def _plain_formation(table: Table, row: int, s: Any, why: str) -> dict[str, Ref | None]:
    table.put(row, "note", f"values from calwork ({why})")
    plain = {"dcU": s.delta_c_U_kJ_per_mol, "u_dcU": s.u_delta_c_U_kJ_per_mol,
             "dcH": s.delta_c_H_kJ_per_mol, "u_dcH": s.u_delta_c_H_kJ_per_mol,
             "dfH": s.delta_f_H_kJ_per_mol, "u_dfH": s.u_delta_f_H_kJ_per_mol,
             "U_dfH": s.U_delta_f_H_kJ_per_mol}
    return {key: table.put(row, key, value) for key, value in plain.items()}


def _formation_row(plan: Plan, table: Table, row: int, s: Any, R: Ref, T: Ref,
                   kv: Mapping[str, tuple[Ref, Ref]], weights: Mapping[str, Ref]
                   ) -> dict[str, Ref | None]:
    try:
        counts = element_counts(s.formula) if s.formula else {}
    except CalworkError:
        counts = {}
    du0 = plan.refs.get(("du0_mean", s.sample))
    if not counts:
        return _plain_formation(table, row, s, "no formula")
    if not set(counts) <= set(_CHON):
        return _plain_formation(table, row, s, "formula has elements other than C, H, O, N")
    if du0 is None or s.delta_c_U_kJ_per_mol is None:
        return _plain_formation(table, row, s, "no standard massic energy")
    if not {"CO2(g)", "H2O(l)"} <= set(kv):
        return _plain_formation(table, row, s, "key values of CO2(g) and H2O(l) not recorded")
    out: dict[str, Ref | None] = {}
    n = {el: table.put(row, k, counts.get(el, 0.0)) for el, k in zip(_CHON, "abcd", strict=True)}
    M = table.put(row, "M", _sum([n[el] * weights[el] for el in _CHON if counts.get(el)]))
    du0 = table.put(row, "du0", du0)
    name = s.sample
    out["dcU"] = dcU = table.put(row, "dcU", plan.checked(
        M * du0 / 1000.0, s.delta_c_U_kJ_per_mol, f"ΔcU° of {name}"))
    u_du0 = plan.refs.get(("u_du0", name))
    u_du0 = table.put(row, "u_du0", s.u_standard_massic_energy_J_per_g if u_du0 is None
                      else u_du0)
    u_dcU = None
    if u_du0 is not None:
        u_dcU = table.put(row, "u_dcU", plan.checked(
            M * u_du0 / 1000.0, s.u_delta_c_U_kJ_per_mol, f"u(ΔcU°) of {name}"))
    else:
        table.put(row, "u_dcU", s.u_delta_c_U_kJ_per_mol)
    out["u_dcU"] = u_dcU
    dn = table.put(row, "dn", n["O"] / 2.0 + n["N"] / 2.0 - n["H"] / 4.0)
    out["dcH"] = dcH = table.put(row, "dcH", plan.checked(
        dcU + dn * R * T / 1000.0, s.delta_c_H_kJ_per_mol, f"ΔcH° of {name}"))
    u_dcH = table.put(row, "u_dcH", s.u_delta_c_H_kJ_per_mol if u_dcU is None else
                      plan.checked(u_dcU + 0.0, s.u_delta_c_H_kJ_per_mol, f"u(ΔcH°) of {name}"))
    out["u_dcH"] = u_dcH
    (co2, u_co2), (h2o, u_h2o) = kv["CO2(g)"], kv["H2O(l)"]
    out["dfH"] = table.put(row, "dfH", plan.checked(
        n["C"] * co2 + n["H"] / 2.0 * h2o - dcH, s.delta_f_H_kJ_per_mol, f"ΔfH° of {name}"))
    u_kv = table.put(row, "u_kv", plan.checked(
        quadrature(n["C"] * u_co2, n["H"] / 2.0 * u_h2o),
        s.derived_budgets["delta_f_H"]["key_values_kJ_per_mol"]
        if "delta_f_H" in s.derived_budgets else None,
        f"key-value part of u(ΔfH°) of {name}"))
    if u_dcH is not None and u_kv is not None:
        out["u_dfH"] = u_dfH = table.put(row, "u_dfH", plan.checked(
            quadrature(u_dcH, u_kv), s.u_delta_f_H_kJ_per_mol, f"u(ΔfH°) of {name}"))
        if u_dfH is not None:
            out["U_dfH"] = table.put(row, "U_dfH", plan.checked(
                Const(float(s.coverage_factor)) * u_dfH, s.U_delta_f_H_kJ_per_mol,
                f"U(ΔfH°) of {name}"))
    return out


def _sum(terms: list[Expr]) -> Expr:
    out = terms[0]
    for t in terms[1:]:
        out = out + t
    return out
