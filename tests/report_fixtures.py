"""A Reduction for the report and workbook tests, built in memory (no files).

Calibration (benzoic acid) and combustion runs with simulated thermograms
(``calwork.simulation``; invented data, labelled ``simulated``), their corrected rises
(``calwork.rise.corrected_rise``) and the real bomb chain (``calwork.bomb.chain``,
``calwork.bomb.series``, ``calwork.hess``) run exactly as ``calwork.reduce`` runs it, so the
numbers follow the chain's definitions:

* calibration run: ε = (m·q_cert·f + Σ corrections + contents referral) / ΔT_c;
* combustion run: Δu = −(ε̄·ΔT_c − referral − Σ corrections) / m, Δu° = Δu + ΔU_Σ / m;
* ΔcU° = M·Δu°/1000, ΔcH° = ΔcU° + Δn_g·R·T/1000, ΔfH° = a·ΔfH°(CO2) + b/2·ΔfH°(H2O) − ΔcH°.

The massic energy the simulated sample releases is invented; the certified value 26 434 J/g
is NIST SRM 39j (docs/references.md §2).
"""

from __future__ import annotations

import re
from dataclasses import replace
from functools import lru_cache
from pathlib import Path
from typing import Any

import numpy as np
import openpyxl
import pytest

from calwork.bomb.chain import reduce_calibration_run, reduce_combustion_run
from calwork.bomb.series import calibration_series, formation_enthalpies, sample_series
from calwork.core.errors import CalworkError
from calwork.core.provenance import Provenance, sha256_bytes
from calwork.core.results import Reduction
from calwork.core.results import failed_run as failed_result
from calwork.core.runinfo import RunInfo
from calwork.rise import corrected_rise
from calwork.simulation import CalorimeterParams, CombustionPulse, simulate_run

CERTIFIED_J_PER_G = 26434.0  # NIST SRM 39j, mass in vacuum (docs/references.md §2, confirmed)
SAMPLE_J_PER_G = 40_230.0  # invented massic energy of the simulated sample, J/g
REL = 1e-9  # acceptance tolerance of the formula check (engine vs calwork, relative)


def _log(sim, rid: str):
    th = sim.thermogram
    data = th.time_s.tobytes() + th.temperature_K.tobytes()
    prov = Provenance(source_path=f"{rid}.csv", sha256=sha256_bytes(data),
                      importer="calwork.simulation (in memory)", first_row=2,
                      last_row=1 + th.n_points)
    return replace(th, provenance=prov)


def demo_reduction(*, sample: str = "naphthalene", formula: str = "C10H8",
                   notes: str | None = "weighed twice", duration_s: float = 2400.0,
                   sampling_interval_s: float = 5.0, n_calibrations: int = 3,
                   n_samples: int = 1, runs_per_sample: int = 3, seed: int = 20240611,
                   method: str = "newton-fit", failed_run: bool = False) -> Reduction:
    """A Reduction of ``n_calibrations`` benzoic-acid runs and ``n_samples`` series of
    ``runs_per_sample`` combustion runs (simulated logs, the real bomb chain).

    The first series is named ``sample``; further ones ``f"{sample} {k}"``. With
    ``failed_run`` one more combustion run is added whose mass is missing (it comes back
    with ``error`` set, as the chain reports it).
    """
    rng = np.random.default_rng(seed)
    params = CalorimeterParams.bomb_preset(sampling_interval_s=sampling_interval_s)
    fire_s = 600.0
    common = {"calorimeter": "bomb-A", "ignition_J": 1.0, "fuse_burnt_cm": 8.0,
              "fuse_J_per_cm": 9.6, "o2_pressure_MPa": 3.04, "bomb_volume_L": 0.342,
              "bomb_water_g": 1.0, "acid_titrant_mol_per_L": 0.1, "operator": "A. N. Other",
              "notes": notes}
    infos: list[RunInfo] = []
    rises: dict[str, Any] = {}
    thermograms: dict[str, Any] = {}

    def simulate(info: RunInfo, massic_J_per_g: float, k: int) -> None:
        heat = info.mass_g * massic_J_per_g + 1.0 + 76.8 + 6.0 * info.acid_titre_mL
        sim = simulate_run(params, CombustionPulse(energy_J=heat, fire_time_s=fire_s),
                           duration_s=duration_s, seed=seed + k)
        thermograms[info.run] = _log(sim, info.run)
        rises[info.run] = corrected_rise(thermograms[info.run], method)
        infos.append(info)

    for i in range(n_calibrations):
        info = RunInfo(run=f"C{i + 1}", kind="calibration", log=f"C{i + 1}.csv",
                       sample="benzoic acid", formula="C7H6O2", phase="cr",
                       reference_material="benzoic acid", certified_J_per_g=CERTIFIED_J_PER_G,
                       mass_g=round(1.0 + 0.02 * rng.standard_normal(), 5),
                       acid_titre_mL=round(5.0 + 0.5 * rng.standard_normal(), 2),
                       date=f"2024-06-{i % 28 + 1:02d}", **common)
        simulate(info, CERTIFIED_J_PER_G, i)
    for k in range(n_samples):
        name = sample if k == 0 else f"{sample} {k + 1}"
        for i in range(runs_per_sample):
            rid = f"S{k * runs_per_sample + i + 1}"
            info = RunInfo(run=rid, kind="combustion", log=f"{rid}.csv", sample=name,
                           formula=formula, phase="cr",
                           mass_g=round(0.65 + 0.01 * rng.standard_normal(), 5),
                           acid_titre_mL=round(4.0 + 0.5 * rng.standard_normal(), 2),
                           date="2024-07-01", **common)
            simulate(info, SAMPLE_J_PER_G, 1000 + k * runs_per_sample + i)
    if failed_run:
        info = RunInfo(run="S-bad", kind="combustion", log="S-bad.csv", sample=sample,
                       formula=formula, phase="cr", mass_g=0.65, acid_titre_mL=4.0,
                       date="2024-07-02", **common)
        simulate(info, SAMPLE_J_PER_G, 5000)
        infos[-1] = replace(info, mass_g=None)

    # the chain, as calwork.reduce.reduce_runs runs it
    results, cal_runs = {}, []
    for info in infos:
        if info.kind == "calibration":
            results[info.run] = reduce_calibration_run(info, rises[info.run])
            cal_runs.append(results[info.run])
    cal = calibration_series("bomb-A", cal_runs)
    series: dict[str, list] = {}
    for info in infos:
        if info.kind == "combustion":
            try:
                res = reduce_combustion_run(info, rises[info.run], cal)
            except CalworkError as exc:
                res = failed_result(info, exc, rise=rises[info.run])
            results[info.run] = res
            if res.error is None:
                series.setdefault(info.sample, []).append((res, info))
    samples, terms, conventions = [], [], []
    for name, members in series.items():
        s, t = sample_series(name, [m[0] for m in members], [m[1] for m in members],
                             {"bomb-A": cal})
        samples.append(s)
        terms.append(t)
        conventions.append(members[0][0].details["sulfur_convention"])
    samples, covariance = formation_enthalpies(samples, terms, conventions)
    prov = Provenance(importer="calwork.reduce.reduce_runs (test fixture)", method=method,
                      parents=tuple(th.provenance for th in thermograms.values()))
    return Reduction(
        calibrations=(cal,), runs=tuple(results[i.run] for i in infos), samples=samples,
        covariance=covariance, method=method, sheet_path="runs.csv", provenance=prov,
        warnings=("fixture: simulated runs reduced in memory",),
        run_infos=tuple(infos), thermograms=thermograms,
    )


@lru_cache(maxsize=8)
def cached_reduction(**kwargs: Any) -> Reduction:
    """:func:`demo_reduction`, built once per set of arguments (records are immutable)."""
    return demo_reduction(**kwargs)


# --- workbook checks shared by the test modules ----------------------------------------------
def _engine_values(path: Path) -> dict[tuple[str, str], float]:
    formulas = pytest.importorskip("formulas")
    model = formulas.ExcelModel().loads(str(path)).finish()
    solution = model.calculate()
    out = {}
    pattern = re.compile(r"^'\[[^\]]+\](.+)'!([A-Z]+[0-9]+)$")
    for key, value in solution.items():
        m = pattern.match(key)
        if m is None:
            continue
        v = np.asarray(getattr(value, "value", value))
        if v.shape == (1, 1):
            out[(m.group(1), m.group(2))] = v[0, 0]
    return out


def formula_cells(path: Path) -> list[tuple[str, str, str, float | None]]:
    """(sheet, cell, formula, cached value) of every formula cell."""
    wf = openpyxl.load_workbook(path)
    wv = openpyxl.load_workbook(path, data_only=True)
    return [(ws.title, c.coordinate, c.value, wv[ws.title][c.coordinate].value)
            for ws in wf.worksheets for row in ws.iter_rows() for c in row
            if c.data_type == "f"]


def check_with_engine(path: Path) -> tuple[int, float]:
    """Every formula cell equals its cached (calwork) value per the independent engine."""
    engine = _engine_values(path)
    cells = formula_cells(path)
    worst = 0.0
    for sheet, coord, formula, cached in cells:
        assert cached is not None, f"{sheet}!{coord} {formula} has no calwork value"
        value = float(engine[(sheet.upper(), coord)])
        rel = abs(value - cached) / max(abs(cached), 1e-300)
        assert rel <= REL, f"{sheet}!{coord} {formula}: engine {value!r} vs calwork {cached!r}"
        worst = max(worst, rel)
    return len(cells), worst


def table(ws, header_row: int = 1) -> tuple[dict[str, int], list[tuple]]:
    headers = [c.value for c in ws[header_row]]
    cols = {h: i for i, h in enumerate(headers) if h}
    rows = []
    for r in ws.iter_rows(min_row=header_row + 1, values_only=True):
        if not r[0]:
            break  # the table ends at the first blank row (notes follow)
        rows.append(r)
    return cols, rows


