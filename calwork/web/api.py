"""The workbench's JSON API under ``/api/`` (what the pages use; scripts and a laboratory
information system can call it too). Errors are ``{"error": "..."}`` with a 4xx status; a
stale ``version`` answers 409. See the README for curl examples."""

from __future__ import annotations

from typing import Any

from starlette.concurrency import run_in_threadpool
from starlette.requests import Request
from starlette.responses import JSONResponse
from starlette.routing import Route

from calwork.core.errors import ValueCellError
from calwork.core.results import jsonable
from calwork.web.http import checked_json, request_user

__all__ = ["routes"]


def _json(data: Any, status: int = 200) -> JSONResponse:
    return JSONResponse(jsonable(data), status_code=status)


def filters_of(params: Any) -> Any:
    """Lab-book filters from query parameters (calorimeter, sample, kind, state, since,
    until); a bad value is a 400."""
    from calwork.labbook import Filters

    return Filters(**{k: params.get(k) or None for k in
                      ("calorimeter", "sample", "kind", "state", "since", "until")})


async def session(request: Request) -> JSONResponse:
    settings = request.app.state.settings
    return _json({"user": request_user(request), "csrf_token": settings["csrf"],
                  "read_only": settings["read_only"],
                  "labbook": str(request.app.state.bench.path)})


_LIST_KEYS = ("run", "kind", "sample", "calorimeter", "date", "state", "version",
              "approved_by", "approval_lapsed", "corrected_rise_K",
              "energy_equivalent_J_per_K", "massic_energy_J_per_g",
              "molar_enthalpy_kJ_per_mol", "error", "warnings", "sheet_id")


async def runs(request: Request) -> JSONResponse:
    filters = filters_of(request.query_params)
    rows = await run_in_threadpool(request.app.state.bench.runs, filters, thumbnails=False)
    return _json({"runs": [{k: r.get(k) for k in _LIST_KEYS} for r in rows]})


async def run(request: Request) -> JSONResponse:
    data = await run_in_threadpool(request.app.state.bench.run, request.path_params["run"])
    data.pop("display", None)
    return _json(data)


def _reason(body: dict[str, Any], required: bool = True) -> str:
    reason = body.get("reason")
    if required and not (isinstance(reason, str) and reason.strip()):
        raise ValueCellError("a reason is required", column="reason",
                             expected='{"reason": "why"}')
    return str(reason or "")


async def preview(request: Request) -> JSONResponse:
    body = await checked_json(request)
    data = await run_in_threadpool(request.app.state.bench.preview,
                                   request.path_params["run"], body)
    return _json(data)


async def amend(request: Request) -> JSONResponse:
    body = await checked_json(request)
    bench = request.app.state.bench
    data = await run_in_threadpool(
        lambda: bench.amend(request.path_params["run"], body.get("set") or {},
                            reason=_reason(body), version=body.get("version"),
                            user=request_user(request)))
    return _json(data)


async def approve(request: Request) -> JSONResponse:
    body = await checked_json(request)
    bench = request.app.state.bench
    data = await run_in_threadpool(
        lambda: bench.approve(request.path_params["run"], version=body.get("version"),
                              note=str(body.get("note") or ""), user=request_user(request)))
    return _json(data)


def _reasoned(action: str):
    """The route of a change that takes only a reason (``void``, ``restore``)."""

    async def route(request: Request) -> JSONResponse:
        body = await checked_json(request)
        change = getattr(request.app.state.bench, action)
        data = await run_in_threadpool(
            lambda: change(request.path_params["run"], reason=_reason(body),
                           user=request_user(request)))
        return _json(data)

    return route


async def calibration(request: Request) -> JSONResponse:
    data = await run_in_threadpool(request.app.state.bench.calibration,
                                   request.path_params["calorimeter"])
    return _json(data)


async def samples(request: Request) -> JSONResponse:
    data = await run_in_threadpool(request.app.state.bench.samples)
    return _json({"samples": data})


async def network(request: Request) -> JSONResponse:
    body = await checked_json(request)
    from calwork.web.hess import solve_text

    data = await run_in_threadpool(solve_text, str(body.get("rows") or ""),
                                   [str(t) for t in body.get("targets") or []])
    data.pop("document", None)
    data.pop("more_documents", None)
    return _json(data)


def routes() -> list[Route]:
    """The API routes."""
    return [
        Route("/api/session", session),
        Route("/api/runs", runs),
        Route("/api/runs/{run:path}/preview", preview, methods=["POST"]),
        Route("/api/runs/{run:path}/amend", amend, methods=["POST"]),
        Route("/api/runs/{run:path}/approve", approve, methods=["POST"]),
        Route("/api/runs/{run:path}/void", _reasoned("void"), methods=["POST"]),
        Route("/api/runs/{run:path}/restore", _reasoned("restore"), methods=["POST"]),
        Route("/api/runs/{run:path}", run),
        Route("/api/calibrations/{calorimeter:path}", calibration),
        Route("/api/samples", samples),
        Route("/api/network", network, methods=["POST"]),
    ]
