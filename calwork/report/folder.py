"""The report folder of ``calwork reduce --out``: ``summary.csv`` (runs), ``samples.csv``,
``report.md`` (the summary document, :mod:`calwork.report.summary`) and one thermogram plot
per run. Text from sheets and logs is data in every file, never a formula or markup."""

from __future__ import annotations

import csv
from collections.abc import Callable
from pathlib import Path
from typing import Any

from calwork.core.errors import CalworkError, ExportError
from calwork.report.plain import render_markdown
from calwork.report.sanitise import csv_text
from calwork.report.summary import summary_document

__all__ = ["rise_plot_items", "write_outputs"]

_RUN_COLUMNS = ("run", "kind", "sample", "calorimeter", "corrected_rise_K",
                "u_corrected_rise_K", "energy_equivalent_J_per_K", "massic_energy_J_per_g",
                "standard_massic_energy_J_per_g", "washburn_J", "heater_energy_J",
                "reaction_heat_J", "molar_enthalpy_kJ_per_mol", "reference_temperature_K",
                "error")
_SAMPLE_COLUMNS = ("sample", "formula", "n_runs", "massic_energy_J_per_g",
                   "u_massic_energy_J_per_g", "standard_massic_energy_J_per_g",
                   "u_standard_massic_energy_J_per_g", "delta_c_U_kJ_per_mol",
                   "delta_c_H_kJ_per_mol", "delta_f_H_kJ_per_mol", "u_delta_f_H_kJ_per_mol",
                   "U_delta_f_H_kJ_per_mol", "molar_enthalpy_kJ_per_mol",
                   "u_molar_enthalpy_kJ_per_mol")


def _write_csv(path: Path, columns: tuple[str, ...], records: list[dict]) -> None:
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(columns)
        for rec in records:
            w.writerow(["" if rec.get(c) is None else csv_text(_cell(rec.get(c)))
                        for c in columns])


def _cell(value: object) -> object:
    if isinstance(value, (list, tuple)):
        return "; ".join(str(v) for v in value)
    return value



def write_outputs(red: Any, out_dir: str | Path, *, plots: bool = True,
                  on_problem: Callable[[str], None] | None = None) -> list[Path]:
    """Write ``summary.csv`` (runs), ``samples.csv``, ``report.md`` and per-run plots.

    ``on_problem`` hears of each plot that could not be drawn (the others are written);
    without it such a problem raises. Returns the files written.
    """
    out = Path(out_dir)
    try:
        out.mkdir(parents=True, exist_ok=True)
        written = [out / "summary.csv", out / "samples.csv", out / "report.md"]
        # one table for every kind: a column of another run kind's record is left empty
        runs = [{c: getattr(r, c, None) for c in _RUN_COLUMNS} for r in red.runs]
        _write_csv(written[0], _RUN_COLUMNS, runs)
        _write_csv(written[1], _SAMPLE_COLUMNS, [s.to_dict() for s in red.samples])
        written[2].write_text(render_markdown(summary_document(red)), encoding="utf-8")
    except OSError as exc:
        raise ExportError(f"cannot write the outputs ({exc.strerror})", path=out) from None
    if plots:
        written += _plots(red, out, on_problem)
    return written


def rise_plot_items(red: Any) -> list[tuple[Any, Any, str]]:
    """``(thermogram, rise, run id)`` of every run plot of a reduction (for
    :func:`calwork.report.plots.draw_rise_pngs`)."""
    from calwork.report.texts import primary_rise

    return [(red.thermograms[r.run], primary_rise(r), r.run) for r in red.runs
            if r.run in red.thermograms and hasattr(primary_rise(r), "corrected_rise_K")]


def _plots(red: Any, out: Path, on_problem: Callable[[str], None] | None) -> list[Path]:
    from calwork.report.plots import draw_rise_pngs, rise_png
    from calwork.report.texts import primary_rise

    files = []
    draw_rise_pngs(rise_plot_items(red))
    for r in red.runs:
        tg = red.thermograms.get(r.run)
        rise = primary_rise(r)  # for a multi-event (solution) log: the reaction's
        if tg is None or rise is None or not hasattr(rise, "corrected_rise_K"):
            continue
        path = out / f"{_safe(r.run)}.png"
        try:
            path.write_bytes(rise_png(tg, rise, r.run))
        except OSError as exc:
            raise ExportError(f"cannot write the plot ({exc.strerror})", path=path) from None
        except CalworkError as exc:
            if on_problem is None:
                raise
            on_problem(f"plot of run {r.run!r} not written: {exc}")
            continue
        files.append(path)
    return files


def _safe(name: str) -> str:
    return "".join(c if c.isalnum() or c in "-_." else "_" for c in name) or "run"
