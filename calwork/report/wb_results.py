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

from calwork.constants import T_REF_K, R_J_per_mol_K
from calwork.formula import ATOMIC_WEIGHT_SOURCE, element_counts
from calwork.report.formulas import Const, Expr, Ref, average, count, func, quadrature, sqrt
from calwork.report.formulas import stdev as stdev_of
from calwork.report.plan import Plan, Table
from calwork.report.texts import SAFETY_NOTE, SIMULATED_NOTE, simulated_runs
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
        for key, name in keys.items():
            out[key] = table.put(row, key, reported.get(name))
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
        refs = runs_of(plan.refs, "du", s.runs)
        _series_stats(plan, table, row, refs,
                      {"n": s.n_runs, "mean": s.massic_energy_J_per_g},
                      {"mean": "du", "s": "s_du", "rsd": "rsd"},
                      f"the massic energies of {s.sample}")
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


def _components(plan: Plan, table: Table, row: int, series: str, quantity: str, unit: str,
                budget: Mapping[str, float]) -> tuple[list[Ref], int]:
    refs = []
    for name, value in budget.items():
        table.put(row, "series", series)
        table.put(row, "quantity", quantity)
        table.put(row, "component", name)
        table.put(row, "unit", unit)
        ref = table.put(row, "value", float(value))
        if ref is not None:
            refs.append(ref)
        row += 1
    return refs, row


def plan_budget(plan: Plan) -> None:
    """Budget components (calwork's propagation) and their root-sum-of-squares totals."""
    red = plan.reduction
    grid = plan.grid(BUDGET)
    table = Table(grid, 1, [
        ("series", "series", None), ("quantity", "quantity", None),
        ("component", "component", None), ("value", "contribution to u (unit →)", "0.0000"),
        ("unit", "unit", None), ("note", "note", None),
    ])
    row = 2
    for c in red.calibrations:
        refs, row = _components(plan, table, row, c.calorimeter, "energy equivalent ε", "J/K",
                                c.budget)
        table.put(row, "series", c.calorimeter)
        table.put(row, "component", "combined u(ε) = √Σ u_i²")
        table.put(row, "unit", "J/K")
        content: Expr | float | None = c.u_energy_equivalent_J_per_K
        if refs:
            content = plan.checked(quadrature(*refs), c.u_energy_equivalent_J_per_K,
                                   f"combined u(ε) of {c.calorimeter}")
        ref = table.put(row, "value", content)
        if ref is not None:
            summary = plan.tables["summary_cals"]
            summary.put(plan.refs[("cal_row", c.calorimeter)].cell.row, "u", ref)
        row += 2
    candidates = [("u_massic_energy_J_per_g", "massic energy Δu", "J/g", "u_du"),
                  ("u_standard_massic_energy_J_per_g", "standard massic energy Δu°", "J/g",
                   "u_du0"),
                  ("u_delta_c_U_kJ_per_mol", "ΔcU°", "kJ/mol", "u_dcU"),
                  ("u_delta_f_H_kJ_per_mol", "ΔfH°", "kJ/mol", "u_dfH")]
    summary = plan.tables["summary_samples"]
    for s in red.samples:
        values = [float(v) for v in s.budget.values()]
        rss = math.sqrt(math.fsum(v * v for v in values)) if values else math.nan
        match = next((c for c in candidates if getattr(s, c[0]) is not None and
                      math.isclose(rss, getattr(s, c[0]), rel_tol=1e-10)), None)
        quantity, unit = (match[1], match[2]) if match else ("(see components)", "")
        refs, row = _components(plan, table, row, s.sample, quantity, unit, s.budget)
        if match and refs:
            table.put(row, "series", s.sample)
            table.put(row, "quantity", quantity)
            table.put(row, "component", f"combined u({quantity}) = √Σ u_i²")
            table.put(row, "unit", unit)
            ref = table.put(row, "value", plan.checked(quadrature(*refs), getattr(s, match[0]),
                                                      f"combined u of {s.sample}"))
            plan.refs[(match[3], s.sample)] = ref
            row += 1
        elif s.budget:
            table.put(row - 1, "note", "components as propagated by calwork (combined with "
                      "their correlations; not a plain root sum of squares)")
        row += 1
    for s in red.samples:
        srow = plan.refs[("summary_row", s.sample)].cell.row
        for key, attr in (("u_du", "u_massic_energy_J_per_g"),
                          ("u_du0", "u_standard_massic_energy_J_per_g")):
            ref = plan.refs.get((key, s.sample))
            summary.put(srow, key, ref if ref is not None else getattr(s, attr))
    grid.put(row + 1, 1, "Components are standard uncertainties (k = 1) in the unit shown, as "
             "propagated by calwork (GUM law of propagation, JCGM 100:2008).", kind="note")


def _key_value(sample: Any, species: str) -> tuple[float, float] | None:
    raw = sample.key_values_used.get(species)
    if raw is None:
        return None
    if isinstance(raw, Mapping):
        value = raw.get("delta_f_H_kJ_per_mol", raw.get("value_kJ_per_mol"))
        u = raw.get("u_kJ_per_mol", raw.get("u_delta_f_H_kJ_per_mol"))
    elif isinstance(raw, (tuple, list)) and len(raw) == 2:
        value, u = raw
    else:
        return None
    if value is None or u is None:
        return None
    return float(value), float(u)


_FORM_COLS = [
    ("sample", "sample", None), ("formula", "formula", None),
    ("a", "C atoms a", "0.###"), ("b", "H atoms b", "0.###"), ("c", "O atoms c", "0.###"),
    ("d", "N atoms d", "0.###"),
    ("M", "molar mass M = Σ n·A_r (g/mol)", "0.0000"),
    ("du0", "mean Δu° (J/g)", "0.00"), ("u_du0", "u(Δu°) (J/g)", "0.00"),
    ("dcU", "ΔcU° = M·Δu°/1000 (kJ/mol)", "0.000"),
    ("u_dcU", "u(ΔcU°) = M·u(Δu°)/1000 (kJ/mol)", "0.000"),
    ("dn", "Δn_gas = c/2 + d/2 − b/4 (mol/mol)", "0.###"),
    ("dcH", "ΔcH° = ΔcU° + Δn_gas·R·T/1000 (kJ/mol)", "0.000"),
    ("u_dcH", "u(ΔcH°) (kJ/mol)", "0.000"),
    ("dfH", "ΔfH° = a·ΔfH°(CO2) + b/2·ΔfH°(H2O) − ΔcH° (kJ/mol)", "0.000"),
    ("u_dfH", "u(ΔfH°) = √(u²(ΔcH°) + a²u²(CO2) + (b/2)²u²(H2O)) (kJ/mol)", "0.000"),
    ("U_dfH", "U(ΔfH°) = k·u (kJ/mol)", "0.000"), ("note", "note", None),
]
_CHON = ("C", "H", "O", "N")


def plan_formation(plan: Plan) -> None:
    """ΔcU°, ΔcH° and ΔfH° of every combustion sample with a CHON formula, as formulas."""
    red = plan.reduction
    samples = [s for s in red.samples if s.kind == "combustion"]
    grid = plan.grid(FORMATION)
    table = Table(grid, 1, _FORM_COLS)
    # constants block below the table: R, T, key values, atomic weights
    base = len(samples) + 4
    grid.put(base, 1, "Constants and key values used", kind="title")
    grid.header(base + 1, ["quantity", "value", "unit / u", "source"])
    r = base + 2
    grid.put(r, 1, "molar gas constant R")
    R = grid.put(r, 2, R_J_per_mol_K, "0.000000000")
    grid.put(r, 3, "J/(mol·K)")
    grid.put(r, 4, "CODATA 2018 (exact, N_A·k)")
    grid.put(r + 1, 1, "reference temperature T")
    T = grid.put(r + 1, 2, T_REF_K, "0.00")
    grid.put(r + 1, 3, "K")
    grid.put(r + 1, 4, "thermochemical reference temperature (common practice)")
    r += 2
    kv_refs: dict[str, tuple[Ref, Ref]] = {}
    for species in ("CO2(g)", "H2O(l)"):
        kv = next((_key_value(s, species) for s in samples if _key_value(s, species)), None)
        if kv is None:
            continue
        src = next((str(s.key_values_used[species].get("source", ""))
                    for s in samples if isinstance(s.key_values_used.get(species), Mapping)), "")
        grid.put(r, 1, f"ΔfH°({species}) / u (kJ/mol)")
        value = grid.put(r, 2, kv[0], "0.000")
        u = grid.put(r, 3, kv[1], "0.000")
        grid.put(r, 4, src or "calwork key values")
        kv_refs[species] = (value, u)
        r += 1
    weights: dict[str, Ref] = {}
    import periodictable  # only here: the atomic weights behind calwork.formula

    for el in _CHON:
        grid.put(r, 1, f"atomic weight A_r({el})")
        weights[el] = grid.put(r, 2, float(periodictable.elements.symbol(el).mass), "0.00000")
        grid.put(r, 3, "g/mol")
        grid.put(r, 4, ATOMIC_WEIGHT_SOURCE)
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


def _formation_row(plan: Plan, table: Table, row: int, s: Any, R: Ref, T: Ref,
                   kv: Mapping[str, tuple[Ref, Ref]], weights: Mapping[str, Ref]
                   ) -> dict[str, Ref | None]:
    out: dict[str, Ref | None] = {}
    try:
        counts = element_counts(s.formula) if s.formula else {}
    except Exception:  # a formula calwork could not read: the chain reported why
        counts = {}
    du0 = plan.refs.get(("du0_mean", s.sample))
    u_du0 = plan.refs.get(("u_du0", s.sample))
    plain = {"dcU": s.delta_c_U_kJ_per_mol, "u_dcU": s.u_delta_c_U_kJ_per_mol,
             "dcH": s.delta_c_H_kJ_per_mol, "u_dcH": s.u_delta_c_H_kJ_per_mol,
             "dfH": s.delta_f_H_kJ_per_mol, "u_dfH": s.u_delta_f_H_kJ_per_mol,
             "U_dfH": s.U_delta_f_H_kJ_per_mol}
    chon = bool(counts) and set(counts) <= set(_CHON)
    if not chon or du0 is None or len(kv) < 2:
        why = ("formula has elements other than C, H, O, N" if counts and not chon
               else "no formula" if not counts else "no standard massic energy or key values")
        table.put(row, "note", f"values from calwork ({why})")
        for key, value in plain.items():
            out[key] = table.put(row, key, value)
        return out
    n = {el: table.put(row, k, counts.get(el, 0.0)) for el, k in zip(_CHON, "abcd", strict=True)}
    M = table.put(row, "M", _sum(n[el] * weights[el] for el in _CHON if counts.get(el)))
    du0 = table.put(row, "du0", du0)
    name = s.sample
    dcU = table.put(row, "dcU", plan.checked(M * du0 / 1000.0, s.delta_c_U_kJ_per_mol,
                                             f"ΔcU° of {name}"))
    out["dcU"] = dcU
    u_du0 = table.put(row, "u_du0", s.u_standard_massic_energy_J_per_g if u_du0 is None
                      else u_du0)
    if u_du0 is not None:
        out["u_dcU"] = table.put(row, "u_dcU", plan.checked(
            M * u_du0 / 1000.0, s.u_delta_c_U_kJ_per_mol, f"u(ΔcU°) of {name}"))
    else:
        out["u_dcU"] = table.put(row, "u_dcU", s.u_delta_c_U_kJ_per_mol)
    dn = table.put(row, "dn", n["O"] / 2.0 + n["N"] / 2.0 - n["H"] / 4.0)
    dcH = table.put(row, "dcH", plan.checked(dcU + dn * R * T / 1000.0, s.delta_c_H_kJ_per_mol,
                                             f"ΔcH° of {name}"))
    out["dcH"] = dcH
    u_dcH = table.put(row, "u_dcH", s.u_delta_c_H_kJ_per_mol)
    out["u_dcH"] = u_dcH
    (co2, u_co2), (h2o, u_h2o) = kv["CO2(g)"], kv["H2O(l)"]
    out["dfH"] = table.put(row, "dfH", plan.checked(
        n["C"] * co2 + n["H"] / 2.0 * h2o - dcH, s.delta_f_H_kJ_per_mol, f"ΔfH° of {name}"))
    if u_dcH is not None:
        u_dfH = table.put(row, "u_dfH", plan.checked(
            quadrature(u_dcH, n["C"] * u_co2, n["H"] / 2.0 * u_h2o), s.u_delta_f_H_kJ_per_mol,
            f"u(ΔfH°) of {name}"))
        out["u_dfH"] = u_dfH
        if u_dfH is not None:
            k = Const(float(s.coverage_factor))
            out["U_dfH"] = table.put(row, "U_dfH", plan.checked(
                k * u_dfH, s.U_delta_f_H_kJ_per_mol, f"U(ΔfH°) of {name}"))
    return out


def _sum(terms: Any) -> Expr:
    items = list(terms)
    out = items[0]
    for t in items[1:]:
        out = out + t
    return out
