"""The lab book's bridge to the reduction chain, and materialising stored sheet bundles.

A stored sheet is written back from its blobs into a temporary folder with the original
relative layout (sheet file plus logs), so the same importer and reduction run on exactly the
bytes on record. Paths of that temporary folder inside the results are mapped back to the
sheet's original folder, so a recomputed record can be compared string for string with the
stored one.
"""

from __future__ import annotations

import contextlib
import sqlite3
import tempfile
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field, fields
from pathlib import Path, PurePath
from typing import Any

from calwork.core.provenance import calwork_version
from calwork.core.results import jsonable
from calwork.core.runinfo import RunInfo
from calwork.labbook.blobs import get_blob, safe_relative_path, write_inside

__all__ = ["ReducedSheet", "materialised", "reduce_from_path", "reduce_stored", "relocate",
           "stored_info", "to_records"]

#: Reduction keys kept on the ``reductions`` row (the rest are stored as result rows).
_PER_RESULT = ("runs", "calibrations", "samples")


@dataclass(frozen=True, kw_only=True)
class ReducedSheet:
    """A Reduction as lab-book rows: a summary and ``(type, key, record)`` results."""

    method: str
    calwork_version: str
    run_ids: tuple[str, ...]
    full_sheet: bool
    summary: Mapping[str, Any]
    results: tuple[tuple[str, str, dict[str, Any]], ...]
    constants: Mapping[str, Any] = field(default_factory=dict)


def relocate(obj: Any, old: str, new: str) -> Any:
    """Replace the path prefix ``old`` by ``new`` in every string inside ``obj``."""
    if isinstance(obj, str):
        return obj.replace(old, new) if old in obj else obj
    if isinstance(obj, Mapping):
        return {k: relocate(v, old, new) for k, v in obj.items()}
    if isinstance(obj, list | tuple):
        return [relocate(v, old, new) for v in obj]
    return obj


def to_records(reduction: Any, *, method: str, expected: Sequence[tuple[str, str]],
               full_sheet: bool, moved: tuple[str, str] | None = None,
               overrides: Mapping[str, Mapping[str, Any]] | None = None) -> ReducedSheet:
    """Turn a :class:`~calwork.core.results.Reduction` into lab-book rows.

    ``expected`` lists ``(run id, kind)`` of the runs handed to the reduction; a run missing
    from its output is kept as a failed record (a run never disappears). ``overrides`` (the
    amended sheet cells the reduction used, by run) are kept in the summary, so that
    ``recompute`` repeats the reduction exactly.
    """
    data = jsonable(reduction.to_dict())
    if overrides:
        data["overrides"] = {run: dict(cells) for run, cells in sorted(overrides.items())}
    if moved is not None:
        data = relocate(data, *moved)
    results: list[tuple[str, str, dict[str, Any]]] = []
    got = set()
    for rec in data.get("runs") or []:
        results.append(("run", str(rec.get("run")), rec))
        got.add(str(rec.get("run")))
    for run, kind in expected:
        if run not in got:
            results.append(("run", run, {"run": run, "kind": kind,
                                         "error": "no result returned by the reduction"}))
    results += [("calibration", str(c.get("calorimeter")), c)
                for c in data.get("calibrations") or []]
    results += [("sample", str(s.get("sample")), s) for s in data.get("samples") or []]
    summary = {k: v for k, v in data.items() if k not in _PER_RESULT}
    prov = getattr(reduction, "provenance", None)
    version = getattr(prov, "calwork_version", None) or calwork_version()
    constants = dict(getattr(prov, "constants", None) or {})
    return ReducedSheet(method=method, calwork_version=version,
                        run_ids=tuple(r for r, _k in expected), full_sheet=full_sheet,
                        summary=summary, results=tuple(results),
                        constants=jsonable(constants))


def reduce_from_path(sheet: Path, *, method: str, infos: Sequence[Any]) -> ReducedSheet:
    """Reduce a sheet file in place with :func:`calwork.reduce.reduce_sheet`."""
    from calwork.reduce import reduce_sheet

    reduction = reduce_sheet(sheet, method=method)
    return to_records(reduction, method=method, full_sheet=True,
                      expected=[(i.run, i.kind) for i in infos])


@contextlib.contextmanager
def materialised(conn: sqlite3.Connection, sheet_id: int) -> Iterator[tuple[Path, str]]:
    """Write a stored sheet bundle into a temporary folder.

    Yields ``(path of the sheet file there, original folder of the sheet)``; the folder is
    removed afterwards. Stored relative paths are re-checked, so nothing is written outside.
    """
    name, original = conn.execute(
        "SELECT file_name, original_path FROM sheets WHERE id = ?", (sheet_id,)).fetchone()
    safe_relative_path(name)
    files = conn.execute(
        "SELECT rel_path, sha256 FROM files WHERE sheet_id = ? ORDER BY id", (sheet_id,)
    ).fetchall()
    with tempfile.TemporaryDirectory(prefix="calwork-labbook-") as tmp:
        root = Path(tmp).resolve()
        for rel, sha in files:
            write_inside(root, rel, get_blob(conn, sha), exist_ok_same=False)
        yield root / name, str(PurePath(original).parent)


def reduce_stored(conn: sqlite3.Connection, sheet_id: int, run_ids: Sequence[str], *,
                  method: str, full_sheet: bool,
                  overrides: Mapping[str, Mapping[str, Any]] | None = None) -> ReducedSheet:
    """Reduce a stored sheet (all its runs, or only ``run_ids``) from the stored bytes, with
    the amended cells ``overrides`` (run → column → cell text) in place of the sheet's."""
    from calwork.io import amended_run, read_run_sheet
    from calwork.reduce import reduce_runs, reduce_sheet

    overrides = {run: cells for run, cells in (overrides or {}).items() if cells}
    with materialised(conn, sheet_id) as (sheet, original_dir):
        moved = (str(sheet.parent), original_dir)
        infos = read_run_sheet(sheet)
        if overrides:
            full_sheet = False
            infos = [amended_run(i, overrides[i.run]) if i.run in overrides else i
                     for i in infos]
        if full_sheet:
            reduction = reduce_sheet(sheet, method=method)
            chosen = list(infos)
        else:
            wanted = set(run_ids)
            chosen = [i for i in infos if i.run in wanted]
            if not chosen:
                return ReducedSheet(method=method, calwork_version=calwork_version(),
                                    run_ids=(), full_sheet=False,
                                    summary={"method": method,
                                             "note": "no active runs left in this sheet"},
                                    results=())
            reduction = reduce_runs(chosen, method=method)
        return to_records(reduction, method=method, full_sheet=full_sheet, moved=moved,
                          expected=[(i.run, i.kind) for i in chosen],
                          overrides={r: c for r, c in overrides.items()
                                     if r in {i.run for i in chosen}})


def stored_info(row: dict[str, Any], sheet_path: str | None) -> RunInfo:
    """A :class:`RunInfo` from a stored sheet row (``runs.row_json``)."""
    names = {f.name for f in fields(RunInfo)}
    kwargs = {k: v for k, v in row.items() if k in names and k not in ("log_path",)}
    log = row.get("log_path")
    return RunInfo(**kwargs, log_path=None if log is None else Path(log),
                   sheet_path=None if sheet_path is None else Path(sheet_path))
