"""The workbench's pages, rendered on the server (Jinja2, autoescaped): they read without
JavaScript; the charts, dragging boundaries and the live preview are added by
``static/app.js``. Every action is a plain HTML form (POST, CSRF field) that also works
without JavaScript."""

from __future__ import annotations

import secrets
import shutil
import tempfile
from collections import OrderedDict
from itertools import groupby
from pathlib import Path
from typing import Any

import jinja2
from starlette.concurrency import run_in_threadpool
from starlette.requests import Request
from starlette.responses import HTMLResponse, RedirectResponse, Response
from starlette.routing import Route

from calwork.core.errors import CalworkError, InputFileError, LabbookError, ValueCellError
from calwork.core.safety import SAFETY_NOTE
from calwork.web.api import filters_of
from calwork.web.http import checked_form, request_user

__all__ = ["error_page", "routes", "templates"]

_HERE = Path(__file__).resolve().parent
#: Staged uploads kept at most (oldest dropped), and their lifetime is the server's.
_MAX_STAGED = 8


def templates() -> jinja2.Environment:
    """The template environment (autoescape on for every template)."""
    env = jinja2.Environment(
        loader=jinja2.FileSystemLoader(str(_HERE / "templates")),
        autoescape=True, undefined=jinja2.StrictUndefined, trim_blocks=True,
        lstrip_blocks=True)
    env.filters["num"] = _num
    env.filters["mK"] = lambda v: "" if v is None else f"{float(v) * 1e3:.3f} mK"
    return env


def _num(value: Any, digits: int = 6) -> str:
    """A number in ``digits`` significant digits ('' when missing)."""
    if value is None or isinstance(value, bool):
        return ""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if v != v:  # NaN
        return ""
    return f"{v:.{digits}g}"


def _render(request: Request, name: str, status: int = 200, **context: Any) -> HTMLResponse:
    settings = request.app.state.settings
    base = {"user": request_user(request), "csrf": settings["csrf"],
            "read_only": settings["read_only"], "labbook": str(request.app.state.bench.path),
            "safety": SAFETY_NOTE, "path": request.url.path}
    html = request.app.state.templates.get_template(name).render(**base, **context)
    return HTMLResponse(html, status_code=status,
                        headers={"Content-Security-Policy":
                                 "default-src 'self'; img-src 'self' data:; "
                                 "style-src 'self' 'unsafe-inline'; "
                                 "script-src 'self' 'unsafe-eval'; object-src 'none'; "
                                 "frame-ancestors 'none'",
                                 "X-Content-Type-Options": "nosniff"})


def error_page(request: Request, status: int, message: str) -> HTMLResponse:
    return _render(request, "error.html", status=status, status_code=status, message=message)


# --- pages ------------------------------------------------------------------------------------
async def day(request: Request) -> HTMLResponse:
    bench = request.app.state.bench
    filters = filters_of(request.query_params)
    runs = await run_in_threadpool(bench.runs, filters)
    calorimeters = await run_in_threadpool(bench.calorimeters)
    groups = []
    for date, by_date in groupby(runs, key=lambda r: (r["date"] or "")[:10] or "undated"):
        items = list(by_date)
        for cal, by_cal in groupby(sorted(items, key=lambda r: r["calorimeter"] or ""),
                                   key=lambda r: r["calorimeter"] or "—"):
            groups.append({"date": date, "calorimeter": cal, "runs": list(by_cal)})
    return _render(request, "day.html", groups=groups, n_runs=len(runs),
                   filters=filters.to_dict(), calorimeters=calorimeters,
                   kinds=("calibration", "combustion", "electrical", "solution", "blank"),
                   states=("recorded", "approved", "void"))


async def run_page(request: Request) -> HTMLResponse:
    from calwork.rise import METHODS
    from calwork.web.service import thumbnail_points

    bench = request.app.state.bench
    run = request.path_params["run"]
    data = await run_in_threadpool(lambda: bench.run(run, readings=False))
    chart = {k: data.get(k) for k in ("run", "display", "periods", "events", "version",
                                      "state", "time_origin")}
    static_points = ""
    if data.get("display"):
        import numpy as np

        static_points = thumbnail_points(np.asarray(data["display"]["t_s"]),
                                         np.asarray(data["display"]["T_K"]), 720.0, 240.0)
    return _render(request, "run.html", r=data, chart=chart, methods=list(METHODS),
                   static_points=static_points, simulated=data["simulated"],
                   current_method=data["rise_method"],
                   result_rows=_result_rows(data["result"]))


def _result_rows(result: dict[str, Any]) -> list[tuple[str, str]]:
    names = (("corrected_rise_K", "corrected rise ΔT_c / K"),
             ("energy_equivalent_J_per_K", "energy equivalent ε / (J/K)"),
             ("u_energy_equivalent_J_per_K", "u(ε) / (J/K)"),
             ("massic_energy_J_per_g", "massic energy Δu / (J/g)"),
             ("standard_massic_energy_J_per_g", "standard massic energy Δcu° / (J/g)"),
             ("molar_enthalpy_kJ_per_mol", "molar enthalpy / (kJ/mol)"),
             ("u_molar_enthalpy_kJ_per_mol", "u / (kJ/mol)"),
             ("heater_energy_J", "electrical energy / J"),
             ("reaction_heat_J", "reaction heat / J"))
    rows = [(label, _num(result.get(key), 8)) for key, label in names
            if result.get(key) is not None]
    if result.get("u_corrected_rise_K") is not None:
        rows.insert(1, ("u(ΔT_c)", f"{result['u_corrected_rise_K'] * 1e3:.3f} mK"))
    rows += [(f"correction: {k} / J", _num(v, 6))
             for k, v in (result.get("corrections_J") or {}).items()]
    return rows


async def calibrations(request: Request) -> HTMLResponse:
    bench = request.app.state.bench

    def load() -> list[dict[str, Any]]:
        with bench.book() as book:
            return book.calibrations()

    cals = await run_in_threadpool(load)
    return _render(request, "calibrations.html", cals=cals)


async def calibration(request: Request) -> HTMLResponse:
    bench = request.app.state.bench
    data = await run_in_threadpool(bench.calibration, request.path_params["calorimeter"])
    return _render(request, "calibration.html", c=data, chart=data)


async def samples(request: Request) -> HTMLResponse:
    from calwork.report.html import render_html_sections
    from calwork.report.model import Document, Section
    from calwork.report.summary import calorific_value_blocks
    from calwork.report.texts import component_label

    bench = request.app.state.bench
    items = await run_in_threadpool(bench.samples)

    def fuel_html(sample: dict[str, Any]) -> str:
        if not sample.get("fuel"):
            return ""
        from types import SimpleNamespace

        ns = SimpleNamespace(**sample)
        blocks = calorific_value_blocks(ns, ())
        return render_html_sections(Document(title="", subtitle="", sections=[
            Section("Calorific values", f"fuel-{secrets.token_hex(3)}", blocks)]))

    for s in items:
        s["fuel_html"] = fuel_html(s)
        budget = s.get("budget") or {}
        s["budget_parts"] = [(component_label(str(c.get("name")), str(budget.get("quantity")
                                                                       or "")),
                              float(c["value"]))
                             for c in budget.get("components") or []
                             if isinstance(c.get("value"), int | float)]
        s["budget_unit"] = budget.get("unit") or ""
    return _render(request, "samples.html", samples=items)


async def hess(request: Request) -> HTMLResponse:
    from calwork.report.html import render_html_sections
    from calwork.web.hess import solve_text

    rows, targets, html, error = _EXAMPLE_ROWS, _EXAMPLE_TARGET, "", ""
    if request.method == "POST":
        form = await checked_form(request)
        name = "network.csv"
        try:
            upload = form.get("network_file")
            if upload is not None and getattr(upload, "filename", ""):
                name = Path(str(upload.filename)).name
                try:
                    rows = (await upload.read()).decode("utf-8-sig")
                except UnicodeDecodeError:
                    rows = ""
                    error = f"{name}: not UTF-8 text"
            else:
                rows = str(form.get("rows") or "")
        finally:
            await form.close()
        targets = str(form.get("targets") or "")
        try:
            if error:
                raise ValueCellError(error)
            out = await run_in_threadpool(lambda: solve_text(rows, targets.splitlines(),
                                                             name=name))
        except CalworkError as exc:
            error = str(exc)
        else:
            html = "\n".join(render_html_sections(d) for d in
                             (out["document"], *out["more_documents"]))
    return _render(request, "hess.html", rows=rows, targets=targets, result_html=html,
                   error=error)


#: The Hess page's starting example: invented round numbers of our own, to be replaced.
_EXAMPLE_ROWS = """id,equation,delta_r_H_kJ_per_mol,u_delta_r_H_kJ_per_mol,source
a,C2H2(g) + H2(g) = C2H4(g),-170.0,0.5,invented example
b,C2H4(g) + H2(g) = C2H6(g),-140.0,0.4,invented example
c,C2H2(g) + 2 H2(g) = C2H6(g),-309.2,0.6,invented example
"""
_EXAMPLE_TARGET = "C2H6(g) = C2H2(g) + 2 H2(g)"


async def import_page(request: Request) -> HTMLResponse:
    bench = request.app.state.bench
    sheets = []
    if bench.import_root is not None:
        for pattern in ("*.csv", "*.xlsx", "*.toml"):
            sheets += sorted(p.relative_to(bench.import_root).as_posix()
                             for p in bench.import_root.rglob(pattern)
                             if _looks_like_sheet(p))[:200]
    return _render(request, "import.html", sheets=sorted(sheets), preview=None, staged=None,
                   root=str(bench.import_root) if bench.import_root else None)


def _looks_like_sheet(path: Path) -> bool:
    try:
        head = path.read_bytes()[:4096]
    except OSError:
        return False
    if path.suffix.lower() == ".xlsx":
        return True
    text = head.decode("utf-8", "replace").lower()
    return "run" in text and "kind" in text


def _staged(request: Request) -> OrderedDict[str, dict[str, bytes]]:
    state = request.app.state
    if not hasattr(state, "staged"):
        state.staged = OrderedDict()
    return state.staged


async def _uploaded(form: Any, bench: Any) -> tuple[dict[str, bytes], str]:
    """The files of an import form: an upload (sheet and logs), or a sheet chosen under the
    import folder with the files beside it."""
    files: dict[str, bytes] = {}
    chosen = str(form.get("folder_sheet") or "")
    if chosen:
        if bench.import_root is None:
            raise ValueCellError("no import folder was given at start (--import-root)")
        sheet = (bench.import_root / chosen).resolve()
        if not sheet.is_relative_to(bench.import_root) or not sheet.is_file():
            raise ValueCellError("not a sheet under the import folder", found=chosen)
        files[sheet.name] = sheet.read_bytes()
        for other in sheet.parent.iterdir():
            if other.is_file() and other != sheet and other.stat().st_size < 32 * 2**20:
                files[other.name] = other.read_bytes()
        sheet_name = sheet.name
    else:
        upload = form.get("sheet")
        if upload is None or not getattr(upload, "filename", ""):
            raise ValueCellError("choose a run sheet to upload", column="sheet")
        sheet_name = Path(str(upload.filename)).name
        files[sheet_name] = await upload.read()
        for log in form.getlist("logs"):
            if getattr(log, "filename", ""):
                files[Path(str(log.filename)).name] = await log.read()
    return files, sheet_name


async def import_preview(request: Request) -> HTMLResponse:
    """What the importer sees in an uploaded (or chosen) sheet — nothing is recorded."""
    from calwork.labbook.blobs import safe_relative_path

    bench = request.app.state.bench
    if bench.read_only:
        raise LabbookError("the workbench was started read-only: nothing can be imported")
    form = await checked_form(request)
    try:
        files, sheet_name = await _uploaded(form, bench)
    finally:
        await form.close()
    for name in files:
        safe_relative_path(name)
    key = secrets.token_urlsafe(16)
    staged = _staged(request)
    staged[key] = {"sheet": sheet_name.encode(), **{f"file:{n}": b for n, b in files.items()}}
    while len(staged) > _MAX_STAGED:
        staged.popitem(last=False)
    preview = await run_in_threadpool(_inspect_bundle, sheet_name, files)
    return _render(request, "import.html", sheets=[], preview=preview, staged=key,
                   root=None)


def _inspect_bundle(sheet_name: str, files: dict[str, bytes]) -> dict[str, Any]:
    from calwork.io import load_run_log, read_run_sheet, unknown_columns
    from calwork.labbook.blobs import write_inside
    from calwork.rise import detect_periods

    with tempfile.TemporaryDirectory(prefix="calwork-import-") as tmp:
        root = Path(tmp)
        for name, data in files.items():
            write_inside(root, name, data)
        infos = read_run_sheet(root / sheet_name, strict=False)
        rows = []
        for info in infos:
            row: dict[str, Any] = {"run": info.run, "kind": info.kind,
                                   "sample": info.sample, "calorimeter": info.calorimeter,
                                   "log": info.log, "problems": [str(p) for p in info.problems]}
            if info.log_path is not None and not info.problems:
                try:
                    tg = load_run_log(info)
                    p = detect_periods(tg)
                    row.update(readings=tg.n_points, span_s=tg.time_span_s,
                               columns=", ".join(str(c) for c in (
                                   tg.metadata.get("time_column"),
                                   tg.metadata.get("temperature_column")) if c),
                               units=", ".join(str(u) for u in (
                                   tg.metadata.get("time_unit"),
                                   tg.metadata.get("temperature_unit")) if u),
                               fire_time_s=p.fire_time_s, main_end_s=p.main_end_s)
                except CalworkError as exc:
                    row["problems"].append(str(exc))
            rows.append(row)
        return {"sheet": sheet_name, "rows": rows, "unknown_columns": unknown_columns(infos),
                "files": sorted(files)}


async def import_record(request: Request) -> Response:
    from calwork.labbook.blobs import write_inside

    bench = request.app.state.bench
    if bench.read_only:
        raise LabbookError("the workbench was started read-only: nothing can be imported")
    form = await checked_form(request)
    bundle = _staged(request).pop(str(form.get("staged") or ""), None)
    if bundle is None:
        raise ValueCellError("this upload is no longer staged: upload it again")
    sheet_name = bundle["sheet"].decode()
    user = request_user(request)

    def record() -> Any:
        tmp = Path(tempfile.mkdtemp(prefix="calwork-import-"))
        try:
            for key, data in bundle.items():
                if key.startswith("file:"):
                    write_inside(tmp, key[5:], data)
            with bench.book(user) as book:
                return book.add_sheet(tmp / sheet_name)
        finally:
            shutil.rmtree(tmp, ignore_errors=True)

    result = await run_in_threadpool(record)
    return RedirectResponse(f"/?recorded={result.sheet_id}", status_code=303)


async def export_page(request: Request) -> HTMLResponse:
    bench = request.app.state.bench
    calorimeters = await run_in_threadpool(bench.calorimeters)
    return _render(request, "export.html", calorimeters=calorimeters,
                   query=str(request.url.query))


_EXPORTS = {"workbook.xlsx": "application/vnd.openxmlformats-officedocument."
                             "spreadsheetml.sheet",
            "report.html": "text/html", "report.pdf": "application/pdf"}


async def export_file(request: Request) -> Response:
    from calwork.report import write_report, write_workbook

    name = request.path_params["name"]
    if name not in _EXPORTS:
        raise ValueCellError("unknown export", found=name, expected=list(_EXPORTS))
    bench = request.app.state.bench
    filters = filters_of(request.query_params)

    def build() -> bytes:
        with bench.book() as book:
            reduction = book.reduction(filters)
        if not reduction.runs:
            raise InputFileError("no active runs match the selection; nothing to export")
        with tempfile.TemporaryDirectory(prefix="calwork-export-") as tmp:
            path = Path(tmp) / name
            (write_workbook if name.endswith(".xlsx") else write_report)(reduction, path)
            return path.read_bytes()

    data = await run_in_threadpool(build)
    return Response(data, media_type=_EXPORTS[name],
                    headers={"Content-Disposition": f'attachment; filename="calwork-{name}"'})


# --- actions (plain forms; the same service as the API) ---------------------------------------
async def run_action(request: Request) -> Response:
    bench = request.app.state.bench
    run = request.path_params["run"]
    action = request.path_params["action"]
    form = await checked_form(request)
    user = request_user(request)
    reason = str(form.get("reason") or "")
    if action == "amend":
        cells = {name: str(form.get(name) or "") for name in
                 ("fore_start_s", "fire_time_s", "main_end_s", "after_end_s")
                 if form.get(f"{name}__changed") == "1"}
        method = str(form.get("rise_method") or "")
        if method and method != str(form.get("rise_method__was") or ""):
            cells["rise_method"] = method
        event = str(form.get("event") or "")
        if event and event != str(form.get("event__was") or ""):
            cells["event"] = event
        for line in str(form.get("cells") or "").splitlines():
            if line.strip():
                key, sep, value = line.partition("=")
                if not sep:
                    raise ValueCellError("each extra cell is COLUMN=VALUE", found=line)
                cells[key.strip()] = value.strip()
        await run_in_threadpool(lambda: bench.amend(run, cells, reason=reason,
                                                    version=form.get("version"), user=user))
    elif action == "approve":
        await run_in_threadpool(lambda: bench.approve(run, version=form.get("version"),
                                                      note=str(form.get("note") or ""),
                                                      user=user))
    elif action == "void":
        await run_in_threadpool(lambda: bench.void(run, reason=reason, user=user))
    elif action == "restore":
        await run_in_threadpool(lambda: bench.restore(run, reason=reason, user=user))
    else:
        raise ValueCellError("unknown action", found=action,
                             expected=["amend", "approve", "void", "restore"])
    return RedirectResponse(f"/runs/{run}", status_code=303)


async def login(request: Request) -> Response:
    import hmac

    message = ""
    if request.method == "POST":
        form = await request.form()
        given = str(form.get("token") or "")
        tokens = request.app.state.settings["tokens"]
        if any(given and hmac.compare_digest(t, given) for t in tokens):
            response = RedirectResponse("/", status_code=303)
            response.set_cookie("calwork_token", given, httponly=True, samesite="strict")
            return response
        message = "that token is not valid"
    html = request.app.state.templates.get_template("login.html").render(
        message=message, safety=SAFETY_NOTE)
    return HTMLResponse(html, status_code=401 if message else 200)


def routes() -> list[Route]:
    """The page routes."""
    return [
        Route("/", day),
        Route("/favicon.ico", lambda request: Response(status_code=204)),
        Route("/login", login, methods=["GET", "POST"]),
        Route("/runs/{run:path}/{action:str}", run_action, methods=["POST"]),
        Route("/runs/{run:path}", run_page),
        Route("/calibrations", calibrations),
        Route("/calibrations/{calorimeter:path}", calibration),
        Route("/samples", samples),
        Route("/hess", hess, methods=["GET", "POST"]),
        Route("/import", import_page),
        Route("/import/preview", import_preview, methods=["POST"]),
        Route("/import/record", import_record, methods=["POST"]),
        Route("/export", export_page),
        Route("/export/{name:str}", export_file),
    ]


