"""Small request helpers shared by the workbench's pages and API."""

from __future__ import annotations

import hmac
import json
from typing import Any

from starlette.exceptions import HTTPException
from starlette.requests import Request
from starlette.responses import JSONResponse

__all__ = ["checked_form", "checked_json", "problem", "request_user"]


def problem(status: int, message: str) -> JSONResponse:
    """An API error: ``{"error": message}`` with a 4xx status."""
    return JSONResponse({"error": message}, status_code=status)


def request_user(request: Request) -> str:
    """The user the request acts as (the token's, else the server's)."""
    return request.scope.get("state", {}).get("user") or request.app.state.settings["user"]


async def checked_form(request: Request) -> Any:
    """The form of a POST, after checking its CSRF field when the header did not carry it."""
    form = await request.form()
    if request.scope.get("state", {}).get("csrf_from_form"):
        given = str(form.get("csrf_token") or "")
        if not (given and hmac.compare_digest(given, request.app.state.settings["csrf"])):
            raise HTTPException(403, "missing or wrong CSRF token (reload the page)")
    return form


async def checked_json(request: Request) -> dict[str, Any]:
    """The JSON object of a POST (a form post to an API route is refused)."""
    if request.scope.get("state", {}).get("csrf_from_form"):
        raise HTTPException(403, "missing or wrong CSRF token (X-CSRF-Token header)")
    body = await request.body()
    if not body:
        return {}
    try:
        data = json.loads(body)
    except (ValueError, UnicodeDecodeError) as exc:
        raise HTTPException(400, f"the request body is not JSON ({exc})") from None
    if not isinstance(data, dict):
        raise HTTPException(400, "the request body must be a JSON object")
    return data

