"""Per-run sheets of the workbook: Corrections, Calibration runs, Sample runs, Solution runs.

Arithmetic is written as formulas (energy equivalent of a calibration run, massic energy of a
combustion run, sums of corrections); corrected rises and their uncertainties come from fits and
are plain numbers with the method named beside them.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from calwork.report.formulas import Ref, total
from calwork.report.plan import Plan, Table, detail

__all__ = [
    "SOLUTION_KINDS",
    "ordered_bomb_runs",
    "plan_calibration_runs",
    "plan_corrections",
    "plan_sample_runs",
    "plan_solution_runs",
    "runs_of",
]

SOLUTION_KINDS = ("electrical", "solution", "blank")

# Names of the RunResult.details keys the chain fills in (calwork.bomb.chain).
MASS_KEYS = ("mass_vacuum_g", "mass_in_vacuum_g", "sample_mass_vacuum_g")
CERT_KEYS = ("certified_J_per_g", "certified_massic_energy_J_per_g")
FACTOR_KEYS = ("certificate_factor", "jessup_factor")

CORRECTIONS = "Corrections"
CALIBRATION_RUNS = "Calibration runs"
SAMPLE_RUNS = "Sample runs"
SOLUTION_RUNS = "Solution runs"


def _infos(plan: Plan) -> dict[str, Any]:
    return {info.run: info for info in plan.reduction.run_infos}


def _text_list(items: Iterable[str]) -> str:
    return "; ".join(str(i) for i in items)


def _ordered_runs(plan: Plan, kind: str, groups: Iterable[Iterable[str]]) -> list[Any]:
    """Runs of ``kind``: those of each group in the group's order, then the rest."""
    by_id = {r.run: r for r in plan.reduction.runs if r.kind == kind}
    out, seen = [], set()
    for group in groups:
        for rid in group:
            if rid in by_id and rid not in seen:
                out.append(by_id[rid])
                seen.add(rid)
    out.extend(r for r in plan.reduction.runs if r.kind == kind and r.run not in seen)
    return out


def plan_corrections(plan: Plan, runs: list[Any]) -> None:
    """One row per bomb run, one column per correction (J, + = heat released), and Σ."""
    names: list[str] = []
    for run in runs:
        names.extend(n for n in run.corrections_J if n not in names)
    grid = plan.grid(CORRECTIONS)
    cols = [("run", "run", None), ("kind", "kind", None)]
    cols += [(f"c:{n}", f"{n} (J)", "0.000") for n in names]
    cols += [("sum", "Σ corrections (J)", "0.000")]
    table = Table(grid, 1, cols)
    note_row = len(runs) + 3
    grid.put(note_row, 1, "Correction energies in J, positive when the process releases heat "
             "into the calorimeter (ignition, fuse, cotton, auxiliary material, nitric acid...), "
             "as computed by calwork from the run-sheet columns and the cited constants.",
             kind="note")
    for i, run in enumerate(runs):
        row = 2 + i
        table.put(row, "run", run.run)
        table.put(row, "kind", run.kind)
        refs = []
        for name, value in run.corrections_J.items():
            ref = table.put(row, f"c:{name}", float(value))
            if ref is not None:
                refs.append(ref)
        if refs:
            content = plan.checked(total(refs), sum(float(v) for v in run.corrections_J.values()),
                                   f"Σ corrections of run {run.run}")
        else:
            content = 0.0
        ref = table.put(row, "sum", content)
        if ref is not None:
            plan.refs[("corr", run.run)] = ref


def _common(table: Table, row: int, run: Any, info: Any) -> None:
    table.put(row, "run", run.run)
    table.put(row, "calorimeter", run.calorimeter)
    if info is not None:
        table.put(row, "date", info.date)
        table.put(row, "operator", info.operator)
        table.put(row, "notes", info.notes)
    table.put(row, "warnings", _text_list(run.warnings) or None)
    table.put(row, "error", run.error)


_TAIL = [("date", "date", None), ("operator", "operator", None), ("notes", "notes", None),
         ("warnings", "warnings", None), ("error", "error", None)]


def plan_calibration_runs(plan: Plan, runs: list[Any]) -> None:
    """ε = (m·q·f + Σ corrections)/ΔT_c for every calibration run, as a formula."""
    grid = plan.grid(CALIBRATION_RUNS)
    cols = [
        ("run", "run", None), ("calorimeter", "calorimeter", None),
        ("material", "reference material", None),
        ("mass", "mass in vacuum m (g)", "0.00000"),
        ("cert", "certified massic energy q (J/g, positive)", "0.0"),
        ("factor", "certificate factor f (Jessup, 1 = certificate conditions)", "0.0000000"),
        ("corr", "Σ corrections (J)", "0.000"),
        ("rise", "corrected rise ΔT_c (K, fitted)", "0.000000"),
        ("u_rise", "u(ΔT_c) (K)", "0.000000"),
        ("method", "rise method", None),
        ("eps", "energy equivalent ε = (m·q·f + Σ corr)/ΔT_c (J/K)", "0.000"),
        *_TAIL,
    ]
    table = Table(grid, 1, cols)
    infos = _infos(plan)
    for i, run in enumerate(runs):
        row = 2 + i
        info = infos.get(run.run)
        _common(table, row, run, info)
        table.put(row, "material", (info.reference_material if info else None) or run.sample)
        m = table.put(row, "mass", detail(run.details, *MASS_KEYS))
        q = table.put(row, "cert", detail(run.details, *CERT_KEYS))
        factor = detail(run.details, *FACTOR_KEYS)
        f = table.put(row, "factor", 1.0 if factor is None else factor)
        corr = plan.refs.get(("corr", run.run))
        if corr is not None:
            corr = table.put(row, "corr", corr)
        rise = table.put(row, "rise", run.corrected_rise_K)
        table.put(row, "u_rise", run.u_corrected_rise_K)
        table.put(row, "method", getattr(run.rise, "method", None) or plan.reduction.method)
        eps = run.energy_equivalent_J_per_K
        if None not in (m, q, f, corr, rise):
            content = plan.checked((m * q * f + corr) / rise, eps,
                                   f"energy equivalent of calibration run {run.run}")
        else:
            content = eps
        ref = table.put(row, "eps", content)
        if ref is not None and run.error is None:
            plan.refs[("eps", run.run)] = ref


def plan_sample_runs(plan: Plan, runs: list[Any]) -> None:
    """Δu = −(ε·ΔT_c − Σ corrections)/m and Δu° = Δu + ΔU_Σ/m per combustion run."""
    grid = plan.grid(SAMPLE_RUNS)
    cols = [
        ("run", "run", None), ("sample", "sample", None), ("calorimeter", "calorimeter", None),
        ("mass", "mass in vacuum m (g)", "0.00000"),
        ("eps", "energy equivalent ε used (J/K)", "0.000"),
        ("rise", "corrected rise ΔT_c (K, fitted)", "0.000000"),
        ("u_rise", "u(ΔT_c) (K)", "0.000000"),
        ("method", "rise method", None),
        ("corr", "Σ corrections (J)", "0.000"),
        ("du", "massic energy Δu = −(ε·ΔT_c − Σ corr)/m (J/g)", "0.00"),
        ("washburn", "standard-state (Washburn) correction ΔU_Σ (J)", "0.000"),
        ("du0", "standard massic energy Δu° = Δu + ΔU_Σ/m (J/g)", "0.00"),
        *_TAIL,
    ]
    table = Table(grid, 1, cols)
    infos = _infos(plan)
    for i, run in enumerate(runs):
        row = 2 + i
        _common(table, row, run, infos.get(run.run))
        table.put(row, "sample", run.sample)
        m = table.put(row, "mass", detail(run.details, *MASS_KEYS))
        eps_value = run.energy_equivalent_J_per_K
        mean = plan.refs.get(("eps_mean", run.calorimeter or ""))
        if mean is not None and eps_value is not None:
            eps = table.put(row, "eps", plan.checked(mean, eps_value,
                                                     f"energy equivalent used for run {run.run}"))
        else:
            eps = table.put(row, "eps", eps_value)
        rise = table.put(row, "rise", run.corrected_rise_K)
        table.put(row, "u_rise", run.u_corrected_rise_K)
        table.put(row, "method", getattr(run.rise, "method", None) or plan.reduction.method)
        corr = plan.refs.get(("corr", run.run))
        if corr is not None:
            corr = table.put(row, "corr", corr)
        du_value = run.massic_energy_J_per_g
        if None not in (m, eps, rise, corr) and run.error is None:
            du = table.put(row, "du", plan.checked(-(eps * rise - corr) / m, du_value,
                                                   f"massic energy of run {run.run}"))
        else:
            du = table.put(row, "du", du_value)
        w = table.put(row, "washburn", run.washburn_J)
        du0_value = run.standard_massic_energy_J_per_g
        if None not in (du, w, m):
            du0 = table.put(row, "du0", plan.checked(du + w / m, du0_value,
                                                     f"standard massic energy of run {run.run}"))
        else:
            du0 = table.put(row, "du0", du0_value)
        if run.error is None:
            if du is not None:
                plan.refs[("du", run.run)] = du
            if du0 is not None:
                plan.refs[("du0", run.run)] = du0


def plan_solution_runs(plan: Plan, runs: list[Any]) -> None:
    """Solution-calorimetry runs: the chain's numbers (calwork.solution), one row each."""
    grid = plan.grid(SOLUTION_RUNS)
    cols = [
        ("run", "run", None), ("kind", "kind", None), ("sample", "sample", None),
        ("calorimeter", "calorimeter", None),
        ("rise", "corrected rise ΔT_c (K, fitted)", "0.000000"),
        ("u_rise", "u(ΔT_c) (K)", "0.000000"), ("method", "rise method", None),
        ("eps", "energy equivalent ε (J/K)", "0.0000"),
        ("heater", "heater energy (J)", "0.0000"),
        ("q", "reaction heat (J)", "0.0000"),
        ("h", "molar enthalpy (kJ/mol)", "0.000"), ("u_h", "u(molar enthalpy) (kJ/mol)", "0.000"),
        ("molality", "final molality (mol/kg)", "0.00000"),
        *_TAIL,
    ]
    table = Table(grid, 1, cols)
    infos = _infos(plan)
    for i, run in enumerate(runs):
        row = 2 + i
        _common(table, row, run, infos.get(run.run))
        table.put(row, "kind", run.kind)
        table.put(row, "sample", run.sample)
        table.put(row, "rise", run.corrected_rise_K)
        table.put(row, "u_rise", run.u_corrected_rise_K)
        table.put(row, "method", getattr(run.rise, "method", None) or plan.reduction.method)
        table.put(row, "eps", run.energy_equivalent_J_per_K)
        table.put(row, "heater", run.heater_energy_J)
        table.put(row, "q", run.reaction_heat_J)
        table.put(row, "h", run.molar_enthalpy_kJ_per_mol)
        table.put(row, "u_h", run.u_molar_enthalpy_kJ_per_mol)
        table.put(row, "molality", run.final_molality_mol_per_kg)
    grid.put(len(runs) + 3, 1, "Solution-calorimetry values as computed by calwork.solution "
             "(electrical calibration, blanks, vaporisation and dilution corrections).",
             kind="note")


def ordered_bomb_runs(plan: Plan) -> tuple[list[Any], list[Any]]:
    """Calibration runs (by series) and combustion runs (by sample series), in sheet order."""
    red = plan.reduction
    return (_ordered_runs(plan, "calibration", [c.runs for c in red.calibrations]),
            _ordered_runs(plan, "combustion", [s.runs for s in red.samples]))


def runs_of(refs: dict, what: str, ids: Iterable[str]) -> list[Ref]:
    """The cells of ``what`` for the run ids that have one."""
    return [refs[(what, rid)] for rid in ids if (what, rid) in refs]
