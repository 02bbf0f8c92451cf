"""The workbook's Calorific values sheet: a fuel sample's gross and net calorific values on
each basis and in each unit, as live formulas from the gross value, the moisture, ash and
elemental analysis and the constants of the fuel standards (docs/methods.md §7).

    dry basis            q_d   = q_ad / (1 − M)
    dry, ash-free        q_daf = q_ad / (1 − M − A)
    net, const. pressure q_p   = [q_d − 212.2 w(H)_d − 0.8 (w(O)_d + w(N)_d)] (1 − M) − 24.43 M%
    net, const. volume   q_v   = [q_d − 206.0 w(H)_d] (1 − M) − 23.05 M%

(ISO 1928, the same relations calwork.bomb.fuels computes; w in % on the dry basis, M the
moisture of the analysis sample; for the dry basis M = 0). Units: MJ/kg = J/g / 1000,
cal_IT/g = J/g / 4.1868, Btu_IT/lb = J/g / 2.326 (exact by definition).
"""

from __future__ import annotations

from typing import Any

from calwork.data import load_data
from calwork.report.formulas import Ref
from calwork.report.plan import Plan

__all__ = ["CALORIFIC", "plan_calorific"]

CALORIFIC = "Calorific values"

#: Exact factors of the units (J/g per unit).
_UNITS = (("MJ/kg", 1000.0, "MJ_per_kg"), ("cal_IT/g", 4.1868, "cal_IT_per_g"),
          ("Btu_IT/lb", 2.326, "Btu_IT_per_lb"))


def _fuel_info(red: Any, sample: str) -> Any:
    return next((i for i in red.run_infos if getattr(i, "sample", None) == sample), None)


def plan_calorific(plan: Plan) -> None:
    """One block per fuel sample (a sample with calorific values); nothing without one."""
    samples = [s for s in plan.reduction.samples if s.fuel]
    if not samples:
        return
    grid = plan.grid(CALORIFIC)
    c = load_data("fuel_relations.toml")["iso1928"]
    grid.put(1, 1, "Calorific values of the fuel samples (positive; fuel conventions)",
             kind="title")
    grid.put(2, 1, "Live formulas from the gross value, the analysis and the constants of "
             "ISO 1928 below; the units convert with exact factors.", kind="note")
    grid.header(4, ["constant", "value", "unit", "source"])
    consts = {}
    for r, (key, label) in enumerate((
            ("hydrogen_p_J_per_g_per_percent", "hydrogen, net at constant pressure"),
            ("oxygen_nitrogen_p_J_per_g_per_percent", "oxygen + nitrogen, constant pressure"),
            ("moisture_p_J_per_g_per_percent", "moisture, constant pressure"),
            ("hydrogen_v_J_per_g_per_percent", "hydrogen, net at constant volume"),
            ("moisture_v_J_per_g_per_percent", "moisture, constant volume")), start=5):
        grid.put(r, 1, label)
        consts[key] = grid.put(r, 2, float(c[key]), "0.00")
        grid.put(r, 3, "J/g per % (mass)")
        grid.put(r, 4, "ISO 1928 (calwork/data/fuel_relations.toml)")
    row = 12
    for s in samples:
        row = _sample_block(plan, grid, row, s, consts)
    plan.notes.append("Calorific values: the gross value as analysed is the mean fuel-"
                      "convention massic energy of the sample's runs (sign changed), as "
                      "calwork computed it; everything after it on that sheet is a formula.")


def _sample_block(plan: Plan, grid: Any, row: int, s: Any, c: dict[str, Ref]) -> int:
    fuel = dict(s.fuel)
    info = _fuel_info(plan.reduction, s.sample)
    grid.put(row, 1, f"Sample {s.sample}", kind="title")
    grid.header(row + 1, ["input", "value", "unit", "from"])
    r = row + 2
    grid.put(r, 1, "gross calorific value at constant volume, as analysed q_ad")
    gross = grid.put(r, 2, fuel["gross_v_as_analysed_J_per_g"], "0.0")
    grid.put(r, 3, "J/g")
    grid.put(r, 4, "calwork (mean of the runs, fuel convention)")
    inputs: dict[str, Ref | None] = {}
    for k, (name, label) in enumerate((("moisture_mass_fraction", "moisture M"),
                                       ("ash_mass_fraction", "ash A"),
                                       ("hydrogen_mass_fraction", "hydrogen w(H)"),
                                       ("oxygen_mass_fraction", "oxygen w(O)"),
                                       ("nitrogen_mass_fraction", "nitrogen w(N)")), start=1):
        value = getattr(info, name, None) if info is not None else None
        grid.put(r + k, 1, f"{label}, as analysed")
        inputs[name] = grid.put(r + k, 2, 0.0 if value is None else float(value), "0.0000")
        grid.put(r + k, 3, "mass fraction")
        grid.put(r + k, 4, "run sheet" if value is not None else "not given: 0 used")
    M, A = inputs["moisture_mass_fraction"], inputs["ash_mass_fraction"]
    H, Ox, N = (inputs["hydrogen_mass_fraction"], inputs["oxygen_mass_fraction"],
               inputs["nitrogen_mass_fraction"])
    r += 7
    grid.header(r, ["calorific value", "J/g", "MJ/kg", "cal_IT/g", "Btu_IT/lb"])
    r += 1
    dry = 1.0 / (1.0 - M)
    q_d = gross * dry
    out: list[tuple[str, str, Any]] = [
        ("gross, constant volume, as analysed", "gross_v_as_analysed", gross),
        ("gross, constant volume, dry", "gross_v_dry", q_d),
    ]
    if "gross_v_dry_ash_free_J_per_g" in fuel:
        out.append(("gross, constant volume, dry ash-free", "gross_v_dry_ash_free",
                    gross / (1.0 - M - A)))
    if "net_p_as_analysed_J_per_g" in fuel:
        h_d, on_d = H * dry * 100.0, (Ox + N) * dry * 100.0
        inner_p = q_d - c["hydrogen_p_J_per_g_per_percent"] * h_d \
            - c["oxygen_nitrogen_p_J_per_g_per_percent"] * on_d
        inner_v = q_d - c["hydrogen_v_J_per_g_per_percent"] * h_d
        out += [
            ("net, constant pressure, as analysed", "net_p_as_analysed",
             inner_p * (1.0 - M) - c["moisture_p_J_per_g_per_percent"] * (M * 100.0)),
            ("net, constant volume, as analysed", "net_v_as_analysed",
             inner_v * (1.0 - M) - c["moisture_v_J_per_g_per_percent"] * (M * 100.0)),
            ("net, constant pressure, dry", "net_p_dry", inner_p),
            ("net, constant volume, dry", "net_v_dry", inner_v),
        ]
    for label, key, expr in out:
        grid.put(r, 1, label)
        value = grid.put(r, 2, plan.checked(expr, fuel.get(f"{key}_J_per_g"),
                                            f"{label} of {s.sample}"), "0.0")
        if value is not None:
            for col, (_unit, factor, tag) in enumerate(_UNITS, start=3):
                grid.put(r, col, plan.checked(value / factor, fuel.get(f"{key}_{tag}"),
                                              f"{label} of {s.sample} in {_unit}"),
                         "0.0000" if factor == 1000.0 else "0.00")
        r += 1
    return r + 2
