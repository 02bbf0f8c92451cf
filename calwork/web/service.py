"""What the review workbench shows and does, as plain data (no HTTP, no HTML here).

Every change goes through the lab book's own audited actions
(:mod:`calwork.labbook.lifecycle`); a preview re-reduces a run's stored log with other period
boundaries or another method and stores nothing.
"""

from __future__ import annotations

import contextlib
import itertools
import math
import threading
from collections import OrderedDict
from collections.abc import Iterator, Mapping
from dataclasses import replace
from pathlib import Path
from typing import Any

import numpy as np

from calwork.core.errors import CalworkError, ChoiceError, LabbookError, ValueCellError
from calwork.core.logtime import on_axis_s, parse_log_time, time_origin
from calwork.core.runinfo import within_limits

__all__ = ["DISPLAY_POINTS", "THUMB_POINTS", "StaleVersionError", "Workbench"]

#: Readings drawn on a run's chart at most (min/max per bucket; computation uses them all).
DISPLAY_POINTS = 4000
#: Points of a day-view thumbnail.
THUMB_POINTS = 60
#: The boundaries a reviewer moves, in the order they occur on the time axis.
BOUNDARIES = ("fore_start_s", "fire_time_s", "main_end_s", "after_end_s")


class StaleVersionError(LabbookError):
    """The run changed since the reviewer loaded it (a version check failed)."""


class _LogCache:
    """Thermograms read from stored logs, by content (thread-safe, least recently used out):
    what :func:`calwork.labbook.runlog.stored_run` takes as its ``cache``."""

    def __init__(self, size: int = 256) -> None:
        self._items: OrderedDict[Any, Any] = OrderedDict()
        self._lock = threading.Lock()
        self._size = size

    def __contains__(self, key: Any) -> bool:
        with self._lock:
            return key in self._items

    def __getitem__(self, key: Any) -> Any:
        with self._lock:
            self._items.move_to_end(key)
            return self._items[key]

    def __setitem__(self, key: Any, value: Any) -> None:
        with self._lock:
            self._items[key] = value
            while len(self._items) > self._size:
                self._items.popitem(last=False)


def _finite(value: Any) -> Any:
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def decimated(t: np.ndarray, y: np.ndarray, limit: int = DISPLAY_POINTS
              ) -> tuple[np.ndarray, np.ndarray, bool]:
    """At most ``limit`` points for drawing: the first, minimum, maximum and last reading of
    each bucket, in time order, so that no excursion disappears. Returns ``(t, y,
    decimated?)``."""
    n = t.size
    if n <= limit:
        return t, y, False
    buckets = max(1, limit // 4)
    edges = np.linspace(0, n, buckets + 1).astype(int)
    keep = set()
    for a, b in itertools.pairwise(edges):
        if b <= a:
            continue
        seg = y[a:b]
        keep.update((a, b - 1, a + int(np.argmin(seg)), a + int(np.argmax(seg))))
    idx = np.fromiter(sorted(keep), dtype=int)
    return t[idx], y[idx], True


def thumbnail_points(t: np.ndarray, y: np.ndarray, width: float = 120.0,
                     height: float = 36.0) -> str:
    """An SVG ``points`` attribute for a small thumbnail of a thermogram."""
    if t.size < 2:
        return ""
    idx = np.linspace(0, t.size - 1, min(THUMB_POINTS, t.size)).astype(int)
    tt, yy = t[idx], y[idx]
    span_t = float(tt[-1] - tt[0]) or 1.0
    lo, hi = float(np.min(yy)), float(np.max(yy))
    span_y = (hi - lo) or 1.0
    xs = (tt - tt[0]) / span_t * width
    ys = height - (yy - lo) / span_y * height
    return " ".join(f"{x:.1f},{v:.1f}" for x, v in zip(xs, ys, strict=True))


class Workbench:
    """The workbench over one lab book.

    Parameters
    ----------
    labbook
        The lab book file (it must exist: ``calwork labbook add`` creates one).
    read_only
        Refuse every change.
    import_root
        A folder whose run sheets the Import page may list and record (``None``: uploads
        only).
    """

    def __init__(self, labbook: str | Path, *, read_only: bool = False,
                 import_root: str | Path | None = None) -> None:
        self.path = Path(labbook)
        self.read_only = read_only
        self.import_root = None if import_root is None else Path(import_root).resolve()
        self._lock = threading.Lock()
        self._logs = _LogCache()
        self._thumbs: dict[Any, str] = {}

    # --- plumbing -----------------------------------------------------------------------------
    @contextlib.contextmanager
    def book(self, user: str | None = None) -> Iterator[Any]:
        """The lab book, opened for one request."""
        from calwork.labbook import open_labbook

        with open_labbook(self.path, user=user) as book:
            yield book

    def _changing(self) -> None:
        if self.read_only:
            raise LabbookError("the workbench was started read-only: nothing can be changed")

    def _stored(self, book: Any, run: str) -> Any:
        from calwork.labbook.runlog import stored_run

        return stored_run(book.connection, run, cache=self._logs)

    # --- reading ------------------------------------------------------------------------------
    def runs(self, filters: Any = None, *, thumbnails: bool = True) -> list[dict[str, Any]]:
        """The runs (newest state), each with its warnings and a thumbnail of its log."""
        import json

        with self.book() as book:
            runs = book.runs(filters)
            conn = book.connection
            warnings = {}
            for run, text in conn.execute(
                    "SELECT res.key, res.json FROM results res JOIN current_reductions red"
                    " ON red.id = res.reduction_id WHERE res.type = 'run'"):
                warnings[run] = json.loads(text).get("warnings") or []
            for r in runs:
                r["warnings"] = warnings.get(r["run"], [])
                r["thumbnail"] = self._thumbnail(book, r["run"]) if thumbnails else ""
        return runs

    def warm(self, stop: threading.Event) -> int:
        """Draw every run's thumbnail into the cache (the server does this in the background
        at start, so the first day view does not wait for them); returns how many."""
        done = 0
        try:
            with self.book() as book:
                for r in book.runs():
                    if stop.is_set():
                        break
                    self._thumbnail(book, r["run"])
                    done += 1
        except Exception:  # a cache warm-up never fails the server
            return done
        return done

    def _thumbnail(self, book: Any, run: str) -> str:
        row = book.connection.execute(
            "SELECT f.sha256 FROM runs r JOIN files f ON f.id = r.log_file_id WHERE r.run = ?",
            (run,)).fetchone()
        if row is None:
            return ""
        with self._lock:
            if row[0] in self._thumbs:
                return self._thumbs[row[0]]
        try:
            tg = self._stored(book, run).thermogram
        except CalworkError:
            points = ""
        else:
            points = thumbnail_points(tg.time_s, tg.temperature_K) if tg is not None else ""
        with self._lock:
            self._thumbs[row[0]] = points
        return points

    def run(self, run: str, *, readings: bool = True) -> dict[str, Any]:
        """One run: the contract keys (state, version, result, warnings, periods with their
        source, and with ``readings`` every reading), the readings thinned for drawing, its
        stored result, history and the log's heat events."""
        from calwork.report.summary import boundary_origins
        from calwork.report.texts import is_simulated

        with self.book() as book:
            listed = [r for r in book.runs() if r["run"] == run]
            if not listed:
                raise LabbookError("run is not in the lab book", run=run)
            shown = book.show(run)
            versions = book.versions(run)
            history = [e.to_dict() for e in book.history(run)]
            stored = self._stored(book, run)
            sheet_method = book.connection.execute(
                "SELECT red.method FROM reductions red JOIN runs r ON r.sheet_id = red.sheet_id"
                " WHERE r.run = ? AND red.version = 1", (run,)).fetchone()
        result = shown["result"] or {}
        state = shown["state"]
        out: dict[str, Any] = {
            "run": run, "kind": shown["kind"], "sample": shown["sample"],
            "calorimeter": shown["calorimeter"], "date": shown["date"],
            "state": state["state"], "version": state["version"],
            "approved_by": state.get("approved_by"), "approved_utc": state.get("approved_utc"),
            "approval_lapsed": state.get("approval_lapsed"),
            "void_reason": state.get("void_reason"), "overrides": state.get("overrides") or {},
            "corrected_rise_K": result.get("corrected_rise_K"),
            "u_corrected_rise_K": result.get("u_corrected_rise_K"),
            "warnings": list(result.get("warnings") or []), "error": result.get("error"),
            "result": result, "versions": versions, "history": history,
            "notes": (shown["sheet"].get("row") or {}).get("notes"),
            "operator": (shown["sheet"].get("row") or {}).get("operator"),
        }
        info, tg = stored.info, stored.thermogram
        out["rise_method"] = info.rise_method or (sheet_method[0] if sheet_method
                                                  else "newton-fit")
        out["simulated"] = tg is not None and is_simulated(tg)
        periods = dict(result.get("periods") or {})
        out["periods"] = {
            "fore_start_s": _finite(on_axis_s(info.fore_start_s, tg)) if tg is not None
            else None,
            "fire_time_s": periods.get("fire_time_s"),
            "main_end_s": periods.get("main_end_s"),
            "after_end_s": _finite(on_axis_s(info.after_end_s, tg)) if tg is not None
            else None,
            "fore_period_s": periods.get("fore_period_s"),
            "after_period_s": periods.get("after_period_s"),
            "source": boundary_origins(periods, info, state),
        }
        if tg is not None:
            out["time_origin"] = time_origin(tg.metadata, tg.time_s)
            out["events"] = _events(tg)
            t, y = tg.time_s, tg.temperature_K
            if readings:
                out["readings"] = {"t_s": t.tolist(), "T_K": y.tolist()}
            dt, dy, cut = decimated(t, y)
            out["display"] = {"t_s": dt.tolist(), "T_K": dy.tolist(), "decimated": cut,
                              "n_readings": int(t.size)}
        return out

    def preview(self, run: str, settings: Mapping[str, Any]) -> dict[str, Any]:
        """The run's corrected rise with other boundaries and/or method (nothing stored).

        ``settings``: any of ``fore_start_s``, ``fire_time_s``, ``main_end_s``,
        ``after_end_s`` (seconds, or text in the log's own time notation; ``None`` or ``''``
        = detect / no limit), ``method`` and ``event``. Boundaries not given keep the run's
        current ones.
        """
        from calwork.rise import METHODS, corrected_rise

        unknown = sorted(set(settings) - {*BOUNDARIES, "method", "event"})
        if unknown:
            raise ValueCellError("unknown preview settings", found=unknown,
                                 expected=[*BOUNDARIES, "method", "event"])
        with self.book() as book:
            stored = self._stored(book, run)
        info, tg = stored.info, stored.thermogram
        if tg is None:
            raise LabbookError("the run has no log to preview", run=run)
        event = settings.get("event", info.event)
        event = None if event in (None, "") else int(event)
        # another heat event of the log: the boundaries in force belong to the old one
        other_event = "event" in settings and event != info.event
        values = {}
        for name in BOUNDARIES:
            raw = settings.get(name, None if other_event else getattr(info, name))
            if isinstance(raw, str):
                raw = parse_log_time(raw, column=name) if raw.strip() else None
            values[name] = on_axis_s(raw, tg, column=name)
        present = [(n, values[n]) for n in BOUNDARIES if values[n] is not None]
        for (a, va), (b, vb) in itertools.pairwise(present):
            if not va < vb:
                raise ValueCellError(f"{b} must come after {a}", column=b, found=vb,
                                     expected=f"a time after {va:g} s")
        t0, t1 = float(tg.time_s[0]), float(tg.time_s[-1])
        for name, value in present:
            if not t0 <= value <= t1:
                raise ValueCellError(f"{name} lies outside the record", column=name,
                                     found=value, expected=f"{t0:g} to {t1:g} s")
        method = settings.get("method") or info.rise_method or "newton-fit"
        if method not in METHODS:
            raise ChoiceError("unknown rise method", column="method", found=method,
                              expected=list(METHODS))
        limited = within_limits(replace(info, fore_start_s=values["fore_start_s"],
                                        after_end_s=values["after_end_s"]), tg)
        rises = {}
        for name in METHODS:
            try:
                rises[name] = corrected_rise(limited, name, event=event,
                                             fire_time_s=values["fire_time_s"],
                                             main_end_s=values["main_end_s"])
            except CalworkError as exc:
                if name == method:
                    raise
                rises[name] = exc
        main = rises[method]
        return {
            "run": run, "method": method,
            "corrected_rise_K": main.corrected_rise_K,
            "u_corrected_rise_K": main.u_corrected_rise_K,
            "warnings": list(main.warnings),
            "periods": {"fore_start_s": values["fore_start_s"],
                        "fire_time_s": main.fire_time_s, "main_end_s": main.main_end_s,
                        "after_end_s": values["after_end_s"],
                        "fore_period_s": list(main.fore_period_s),
                        "after_period_s": list(main.after_period_s),
                        "fire_source": main.periods.fire_source,
                        "main_end_source": main.periods.main_end_source},
            "methods": {name: ({"corrected_rise_K": r.corrected_rise_K,
                                "u_corrected_rise_K": r.u_corrected_rise_K}
                               if not isinstance(r, Exception) else {"error": str(r)})
                        for name, r in rises.items()},
            "residuals": _residuals(limited, main),
        }

    def calibration(self, calorimeter: str) -> dict[str, Any]:
        """A calorimeter's calibration series, its calibrations with their validity, and
        the control chart of ε with run rules and the recalibration advice."""
        from calwork.labbook.quality import calibration_chart
        from calwork.report.summary import outlier_test_text

        with self.book() as book:
            chart = calibration_chart(book, calorimeter)
            points, notes = book.calibration_series(calorimeter)
            cals = [c | {"outlier_text": outlier_test_text(c.get("outlier_test") or {})}
                    for c in book.calibrations() if c["calorimeter"] == calorimeter]
            voided = [r for r in book.runs(include_void=True)
                      if r["calorimeter"] == calorimeter and r["state"] == "void"
                      and r["epsilon_is_calibration"]]
        return {"calorimeter": calorimeter, "points": points, "notes": notes,
                "void_points": voided, "calibrations": cals, "chart": chart.to_dict()}

    def calorimeters(self) -> list[str]:
        with self.book() as book:
            return sorted({r["calorimeter"] for r in book.runs() if r["calorimeter"]})

    def samples(self) -> list[dict[str, Any]]:
        with self.book() as book:
            return book.samples()

    # --- changes ------------------------------------------------------------------------------
    def _check_version(self, book: Any, run: str, version: Any) -> None:
        if version is None:
            raise ValueCellError("the version you reviewed is required", column="version",
                                 expected="the run's version as loaded")
        try:
            wanted = int(version)
        except (TypeError, ValueError):
            raise ValueCellError("version must be a whole number", column="version",
                                 found=version) from None
        state = book.states([run]).get(run)
        if state is None:
            raise LabbookError("run is not in the lab book", run=run)
        if state.version != wanted:
            raise StaleVersionError(
                f"run {run} changed since you loaded it (now version {state.version}, you "
                f"reviewed version {wanted}): reload it", run=run)

    def amend(self, run: str, cells: Mapping[str, Any], *, reason: str, version: Any,
              user: str) -> dict[str, Any]:
        self._changing()
        if not isinstance(cells, Mapping) or not cells:
            raise ValueCellError("amend needs the cells to change", column="set",
                                 expected='{"set": {"column": "value", ...}}')
        with self.book(user) as book:
            self._check_version(book, run, version)
            result = book.amend(run, {str(k): "" if v is None else str(v)
                                      for k, v in cells.items()}, reason=reason)
        return result.to_dict()

    def approve(self, run: str, *, version: Any, note: str, user: str) -> dict[str, Any]:
        self._changing()
        with self.book(user) as book:
            self._check_version(book, run, version)
            entry = book.approve(run, note=note or "", expect_version=int(version))
        return entry.to_dict()

    def void(self, run: str, *, reason: str, user: str) -> dict[str, Any]:
        self._changing()
        with self.book(user) as book:
            return book.void(run, reason=reason).to_dict()

    def restore(self, run: str, *, reason: str, user: str) -> dict[str, Any]:
        self._changing()
        with self.book(user) as book:
            return book.restore(run, reason=reason).to_dict()


def _events(tg: Any) -> list[dict[str, Any]]:
    """The heat events of a log (several in a solution run's log)."""
    from calwork.rise.events import list_heat_events

    try:
        found = list_heat_events(tg)
    except CalworkError:
        return []
    return [{"index": i, "start_s": float(e.start_s), "end_s": float(e.end_s),
             "kind": getattr(e, "kind", "")} for i, e in enumerate(found.events, 1)]


def _residuals(tg: Any, rise: Any) -> dict[str, list[float]]:
    """Readings minus the fitted drift curve, in the fore and after periods (K)."""
    t, y = tg.time_s, tg.temperature_K
    out: dict[str, list[float]] = {}
    for name, (a, b), curve in (("fore", rise.fore_period_s, rise.fore_curve),
                                ("after", rise.after_period_s, rise.after_curve)):
        mask = (t >= a) & (t <= b)
        tt = t[mask]
        if tt.size > DISPLAY_POINTS // 4:
            tt = tt[np.linspace(0, tt.size - 1, DISPLAY_POINTS // 4).astype(int)]
        yy = np.interp(tt, t, y)
        try:
            res = yy - np.asarray(curve(tt), dtype=float)
        except (TypeError, ValueError):
            continue
        out[f"{name}_t_s"] = tt.tolist()
        out[f"{name}_K"] = res.tolist()
    return out
