"""Per-run sheets of the workbook: Corrections, Calibration runs, Sample runs, Solution runs.

The formulas are those of the bomb chain (:mod:`calwork.bomb.chain`, docs/methods.md (3.1)–(3.4)):

* mass in vacuum ``m = m_weighed · b`` (b = buoyancy factor, 1 for masses in vacuum);
* Jessup's factor ``f = 1 + 10⁻⁶ [a (p/atm − p₀) + b (m/V − s₀) + c (w/V − w₀) + d (t − t₀)]``
  with the reference material's coefficients (:mod:`calwork.bomb.certificate`);
* contents referral to T_ref ``R = ε^i (T_i − T_ref) + ε^f (T_ref − T_i − ΔT_c)``;
* calibration ``ε = (m·q·f + Σ corrections + R) / ΔT_c``;
* combustion ``Δu = −(ε·ΔT_c − R − Σ corrections) / m`` and ``Δu° = Δu + ΔU_Σ / m``.

Corrected rises and their uncertainties come from fits, the contents' energy equivalents from
the bomb-gas model and the Washburn correction from its own computation: those are plain
numbers, with the method named.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import Any

from calwork.core.constants import T_REF_K, STANDARD_ATMOSPHERE_Pa
from calwork.core.errors import CalworkError
from calwork.report.formulas import Const, Expr, Ref, total
from calwork.report.plan import Plan, Table, detail
from calwork.report.texts import primary_rise, rise_method

__all__ = [
    "ordered_bomb_runs",
    "plan_calibration_runs",
    "plan_corrections",
    "plan_sample_runs",
    "plan_solution_runs",
    "runs_of",
]


CORRECTIONS = "Corrections"
CALIBRATION_RUNS = "Calibration runs"
SAMPLE_RUNS = "Sample runs"
SOLUTION_RUNS = "Solution runs"

_TAIL = [("date", "date", None), ("operator", "operator", None), ("notes", "notes", None),
         ("warnings", "warnings", None), ("error", "error", None)]
_MASS = [
    ("mass_w", "mass weighed (g)", "0.00000"),
    ("buoy", "buoyancy factor b (1 = weighed in vacuum)", "0.0000000"),
    ("mass", "mass in vacuum m = mass·b (g)", "0.000000"),
]
_CONTENTS = [
    ("eps_i", "ε^i of the bomb contents (J/K)", "0.000"),
    ("eps_f", "ε^f of the bomb contents (J/K)", "0.000"),
    ("T_i", "T_i, start of main period (K, fitted)", "0.00000"),
    ("T_ref", "T_ref (K)", "0.00"),
    ("rise", "corrected rise ΔT_c (K, fitted)", "0.000000"),
    ("u_rise", "u(ΔT_c) (K)", "0.000000"),
    ("method", "rise method", None),
    ("referral", "contents referral R = ε^i(T_i − T_ref) + ε^f(T_ref − T_i − ΔT_c) (J)",
     "0.000"),
    ("corr", "Σ corrections (J)", "0.000"),
]


def _infos(plan: Plan) -> dict[str, Any]:
    return {info.run: info for info in plan.reduction.run_infos}


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


def ordered_bomb_runs(plan: Plan) -> tuple[list[Any], list[Any]]:
    """Calibration runs (by series) and combustion runs (by sample series), in sheet order."""
    red = plan.reduction
    return (_ordered_runs(plan, "calibration", [c.runs for c in red.calibrations]),
            _ordered_runs(plan, "combustion", [s.runs for s in red.samples]))


def runs_of(refs: dict, what: str, ids: Iterable[str]) -> list[Ref]:
    """The cells of ``what`` for the run ids that have one."""
    return [refs[(what, rid)] for rid in ids if (what, rid) in refs]


def plan_corrections(plan: Plan, runs: list[Any]) -> None:
    """One row per bomb run, one column per correction (J, + = heat released), and Σ."""
    names: list[str] = []
    for run in runs:
        names.extend(n for n in run.corrections_J if n not in names)
    grid = plan.grid(CORRECTIONS)
    cols = [("run", "run", None), ("kind", "kind", None)]
    cols += [(f"c:{n}", f"{n} (J)", "0.000") for n in names]
    cols += [("sum", "Σ corrections (J)", "0.000"), ("constants", "constants used", None)]
    table = Table(grid, 1, cols)
    for i, run in enumerate(runs):
        row = 2 + i
        table.put(row, "run", run.run)
        table.put(row, "kind", run.kind)
        refs = [ref for name, value in run.corrections_J.items()
                if (ref := table.put(row, f"c:{name}", float(value))) is not None]
        constants = getattr(run.details, "correction_constants", None) or {}
        table.put(row, "constants", "; ".join(f"{k}: {v}" for k, v in constants.items())
                  or None)
        if not refs:
            continue
        content = plan.checked(total(refs), sum(float(v) for v in run.corrections_J.values()),
                               f"Σ corrections of run {run.run}")
        ref = table.put(row, "sum", content)
        if ref is not None:
            plan.refs[("corr", run.run)] = ref
    grid.put(len(runs) + 3, 1, "Correction energies in J, positive when the process releases "
             "heat into the calorimeter (ignition, fuse, cotton, auxiliary material, acids), "
             "negative for soot; computed by calwork.bomb.corrections from the run-sheet "
             "columns with the constants named.", kind="note")


def _common(table: Table, row: int, run: Any, info: Any) -> None:
    table.put(row, "run", run.run)
    table.put(row, "calorimeter", run.calorimeter)
    if info is not None:
        table.put(row, "date", info.date)
        table.put(row, "operator", info.operator)
        table.put(row, "notes", info.notes)
    table.put(row, "warnings", "; ".join(run.warnings) or None)
    table.put(row, "error", run.error)


def _mass(plan: Plan, table: Table, row: int, run: Any, info: Any) -> Ref | None:
    weighed = None if info is None else info.mass_g
    m_vac = detail(run.details, "mass_vacuum_g")
    mass_w = table.put(row, "mass_w", weighed)
    buoy = table.put(row, "buoy", detail(run.details, "buoyancy_factor") or 1.0)
    if mass_w is None or m_vac is None:
        return table.put(row, "mass", m_vac)
    return table.put(row, "mass", plan.checked(mass_w * buoy, m_vac,
                                               f"mass in vacuum of run {run.run}"))


def _referral(plan: Plan, table: Table, row: int, run: Any) -> tuple[Ref | None, ...]:
    """ε^i, ε^f, T_i, T_ref, ΔT_c cells and the contents referral R (formula when included)."""
    d = run.details
    rise = table.put(row, "rise", run.corrected_rise_K)
    table.put(row, "u_rise", run.u_corrected_rise_K)
    table.put(row, "method", rise_method(run, plan.reduction.method))
    if not d.contents_included:
        referral = table.put(row, "referral", 0.0 if run.error is None else None)
        return rise, referral
    eps_i = table.put(row, "eps_i", detail(d, "eps_initial_contents_J_per_K"))
    eps_f = table.put(row, "eps_f", detail(d, "eps_final_contents_J_per_K"))
    T_i = table.put(row, "T_i", getattr(primary_rise(run), "T_initial_K", None))
    T_ref = table.put(row, "T_ref", T_REF_K)
    reported = detail(d, "contents_referral_J")
    if None in (eps_i, eps_f, T_i, T_ref, rise):
        return rise, table.put(row, "referral", reported)
    expr = eps_i * (T_i - T_ref) + eps_f * (T_ref - T_i - rise)
    return rise, table.put(row, "referral", plan.checked(expr, reported,
                                                        f"contents referral of run {run.run}"))


def _jessup(plan: Plan, table: Table, row: int, run: Any, info: Any, m: Ref | None
            ) -> Ref | None:
    """Jessup's factor as a formula of the bomb conditions (when the bomb volume is known)."""
    d = run.details
    reported = detail(d, "jessup_factor")
    if reported is None:
        return table.put(row, "factor", 1.0)
    try:
        from calwork.bomb.certificate import load_reference_material
        from calwork.bomb.chain import bomb_conditions

        cond = bomb_conditions(info)
        material = load_reference_material(str(d.reference_material or "benzoic acid"))
    except (CalworkError, AttributeError, TypeError):
        return table.put(row, "factor", reported)
    p = table.put(row, "p", cond.o2_pressure_MPa)
    t = table.put(row, "t", detail(d, "jessup_temperature_C"))
    if not cond.complete or m is None or t is None or p is None:
        return table.put(row, "factor", reported)
    V = table.put(row, "V", cond.bomb_volume_L)
    w = table.put(row, "w", cond.bomb_water_g)
    c, s = material.jessup_ppm, material.standard_conditions
    atm = STANDARD_ATMOSPHERE_Pa / 1e6
    ppm = (Const(c["per_atm"]) * (p / atm - s["o2_pressure_atm"])
           + Const(c["per_sample_g_per_L"]) * (m / V - s["sample_g_per_L"])
           + Const(c["per_water_g_per_L"]) * (w / V - s["water_g_per_L"])
           + Const(c["per_K"]) * (t - s["temperature_C"]))
    return table.put(row, "factor", plan.checked(1.0 + ppm / 1e6, reported,
                                                 f"Jessup factor of run {run.run}"))



def _run_rows(plan: Plan, grid: Any, cols: list, runs: list[Any]) -> tuple[Table, list]:
    """A per-run table with the common trailing columns, its common cells filled; and per
    run its spreadsheet row, the run and its run-sheet row (or ``None``)."""
    table = Table(grid, 1, [*cols, *_TAIL])
    infos = _infos(plan)
    rows = []
    for i, run in enumerate(runs):
        info = infos.get(run.run)
        _common(table, 2 + i, run, info)
        rows.append((2 + i, run, info))
    return table, rows

def plan_calibration_runs(plan: Plan, runs: list[Any]) -> None:
    """ε = (m·q·f + Σ corrections + R)/ΔT_c for every calibration run, as a formula."""
    grid = plan.grid(CALIBRATION_RUNS)
    cols = [
        ("run", "run", None), ("calorimeter", "calorimeter", None),
        ("material", "reference material", None), *_MASS,
        ("cert", "certified massic energy q (J/g, positive)", "0.0"),
        ("p", "O2 pressure p (MPa)", "0.000"), ("V", "bomb volume V (L)", "0.0000"),
        ("w", "water in bomb w (g)", "0.000"),
        ("t", "temperature of the bomb process t (°C)", "0.00"),
        ("factor", ("Jessup factor f = 1 + 1e-6·[a(p/atm − 30) + b(m/V − 3) + c(w/V − 3) + "
                   "d(t − 25)]"), "0.00000000"),
        *_CONTENTS,
        ("eps", "energy equivalent ε = (m·q·f + Σ corr + R)/ΔT_c (J/K)", "0.000"),
    ]
    table, rows = _run_rows(plan, grid, cols, runs)
    for row, run, info in rows:
        table.put(row, "material", run.details.reference_material or run.sample)
        m = _mass(plan, table, row, run, info)
        q = table.put(row, "cert", detail(run.details, "certified_J_per_g"))
        f = _jessup(plan, table, row, run, info, m)
        corr = plan.refs.get(("corr", run.run))
        corr = table.put(row, "corr", corr) if corr is not None else None
        rise, referral = _referral(plan, table, row, run)
        eps = run.energy_equivalent_J_per_K
        if run.error is None and None not in (m, q, f, corr, rise, referral):
            content: Expr | float | None = plan.checked(
                (m * q * f + corr + referral) / rise, eps,
                f"energy equivalent of calibration run {run.run}")
        else:
            content = eps
        ref = table.put(row, "eps", content)
        if ref is not None and run.error is None:
            plan.refs[("eps", run.run)] = ref
    grid.put(len(runs) + 3, 1, "Jessup coefficients a, b, c, d are those of the reference "
             "material's data file (calwork/data/benzoic_acid.toml; recalled from memory, as "
             "printed on SRM 39 certificates). ε^i, ε^f from the bomb-gas model "
             "(calwork.bomb.contents).", kind="note")


def plan_sample_runs(plan: Plan, runs: list[Any]) -> None:
    """Δu = −(ε·ΔT_c − R − Σ corrections)/m and Δu° = Δu + ΔU_Σ/m per combustion run."""
    grid = plan.grid(SAMPLE_RUNS)
    cols = [
        ("run", "run", None), ("sample", "sample", None), ("calorimeter", "calorimeter", None),
        *_MASS, ("eps", "energy equivalent ε used (J/K, mean of the calibration)", "0.000"),
        *_CONTENTS,
        ("du", "massic energy Δu = −(ε·ΔT_c − R − Σ corr)/m (J/g)", "0.00"),
        ("washburn", "standard-state (Washburn) correction ΔU_Σ (J)", "0.000"),
        ("du0", "standard massic energy Δu° = Δu + ΔU_Σ/m (J/g)", "0.00"),
    ]
    table, rows = _run_rows(plan, grid, cols, runs)
    for row, run, info in rows:
        table.put(row, "sample", run.sample)
        m = _mass(plan, table, row, run, info)
        mean = plan.refs.get(("eps_mean", run.calorimeter or ""))
        eps = table.put(row, "eps", mean if mean is not None and run.error is None
                        else run.energy_equivalent_J_per_K)
        rise, referral = _referral(plan, table, row, run)
        corr = plan.refs.get(("corr", run.run))
        corr = table.put(row, "corr", corr) if corr is not None else None
        du_value = run.massic_energy_J_per_g
        if run.error is None and None not in (m, eps, rise, referral, corr):
            du = table.put(row, "du", plan.checked(-(eps * rise - referral - corr) / m,
                                                   du_value, f"massic energy of run {run.run}"))
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
    grid.put(len(runs) + 3, 1, "ΔU_Σ: the standard-state (Washburn) correction of the whole "
             "bomb content (calwork.bomb.washburn).", kind="note")


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
    ]
    table, rows = _run_rows(plan, grid, cols, runs)
    for row, run, _info in rows:
        table.put(row, "kind", run.kind)
        table.put(row, "sample", run.sample)
        table.put(row, "rise", run.corrected_rise_K)
        table.put(row, "u_rise", run.u_corrected_rise_K)
        table.put(row, "method", rise_method(run, plan.reduction.method))
        table.put(row, "eps", run.energy_equivalent_J_per_K)
        table.put(row, "heater", run.heater_energy_J)
        table.put(row, "q", run.reaction_heat_J)
        table.put(row, "h", run.molar_enthalpy_kJ_per_mol)
        table.put(row, "u_h", run.u_molar_enthalpy_kJ_per_mol)
        table.put(row, "molality", run.final_molality_mol_per_kg)
    grid.put(len(runs) + 3, 1, "Solution-calorimetry values as computed by calwork.solution "
             "(electrical calibration, blanks, vaporisation and dilution corrections).",
             kind="note")
