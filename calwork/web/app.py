"""The review workbench as an ASGI application (Starlette): pages rendered on the server with
Jinja2 (autoescaped), interactive charts with the Plotly library shipped by the ``plotly``
package (served from this application, nothing fetched from the internet), and a JSON API.

Security (a lab network is not a safe place):

* every request needs the access token when one is set (``Authorization: Bearer TOKEN``, or
  the cookie that ``/login`` sets); ``calwork serve`` refuses a non-loopback address without
  one;
* every state-changing request is a POST carrying the session's CSRF token (header
  ``X-CSRF-Token``, or the form field ``csrf_token``); a cross-site page can neither read nor
  guess it;
* the user written to the audit trail is the token's user (or the user the server was
  started as), never a value from the request;
* uploads are limited in size and staged only in a private temporary folder under names that
  cannot leave it; every text shown is escaped;
* ``read_only`` refuses every change.
"""

from __future__ import annotations

import contextlib
import hmac
import json
import os
import secrets
import threading
from collections.abc import AsyncIterator, Mapping
from pathlib import Path
from typing import Any

from starlette.applications import Starlette
from starlette.exceptions import HTTPException
from starlette.middleware import Middleware
from starlette.middleware.trustedhost import TrustedHostMiddleware
from starlette.requests import Request
from starlette.responses import (
    FileResponse,
    RedirectResponse,
    Response,
)
from starlette.routing import Mount, Route
from starlette.staticfiles import StaticFiles

from calwork.core.errors import CalworkError, LabbookBusyError
from calwork.web.http import problem
from calwork.web.service import StaleVersionError, Workbench

__all__ = ["DEFAULT_MAX_UPLOAD_BYTES", "create_app"]

#: Largest request body accepted (an upload of a run sheet and its logs), bytes.
DEFAULT_MAX_UPLOAD_BYTES = 64 * 2**20
_HERE = Path(__file__).resolve().parent
_COOKIE = "calwork_token"
#: Requests that do not need the access token (the login page itself, the style sheet).
_OPEN_PATHS = ("/login", "/static/app.css")


def _plotly_js() -> Path:
    import plotly

    return Path(plotly.__file__).resolve().parent / "package_data" / "plotly.min.js"


class _Guard:
    """ASGI middleware: access token, CSRF token on every POST, request-body limit."""

    def __init__(self, app: Any, *, settings: Mapping[str, Any]) -> None:
        self.app = app
        self.settings = settings

    async def __call__(self, scope: Any, receive: Any, send: Any) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        request = Request(scope)
        tokens: Mapping[str, str] = self.settings["tokens"]
        user = self.settings["user"]
        path = scope["path"]
        if tokens and not path.startswith(_OPEN_PATHS):
            given = _bearer(request) or request.cookies.get(_COOKIE, "")
            match = next((u for t, u in tokens.items()
                          if given and hmac.compare_digest(t, given)), None)
            if match is None:
                response = problem(401, "an access token is required (Authorization: "
                                    "Bearer TOKEN, or sign in at /login)") \
                    if path.startswith("/api/") else RedirectResponse("/login", 303)
                await response(scope, receive, send)
                return
            user = match
        scope.setdefault("state", {})["user"] = user
        if scope["method"] not in ("GET", "HEAD", "OPTIONS") and path != "/login":
            length = int(request.headers.get("content-length") or 0)
            if length > self.settings["max_upload_bytes"]:
                await problem(413, f"request too large ({length} bytes; the limit is "
                               f"{self.settings['max_upload_bytes']} bytes)")(
                    scope, receive, send)
                return
            header = request.headers.get("x-csrf-token", "")
            if not (header and hmac.compare_digest(header, self.settings["csrf"])):
                if request.headers.get("content-type", "").startswith(
                        ("application/x-www-form-urlencoded", "multipart/form-data")):
                    scope["state"]["csrf_from_form"] = True  # checked with the form
                else:
                    await problem(403, "missing or wrong CSRF token (X-CSRF-Token header; "
                                   "GET /api/session gives it)")(scope, receive, send)
                    return
        await self.app(scope, receive, send)


def _bearer(request: Request) -> str:
    auth = request.headers.get("authorization", "")
    return auth[7:].strip() if auth.lower().startswith("bearer ") else ""


def status_of(exc: CalworkError) -> int:
    """The HTTP status of a calwork error: 409 for a stale version or a busy lab book, 404
    for an unknown run, 403 for a refused change, 400 for anything else the user gave."""
    if isinstance(exc, StaleVersionError | LabbookBusyError):
        return 409
    text = str(exc)
    if "not in the lab book" in text or "no calorimeter" in text or "no runs of" in text:
        return 404
    if "read-only" in text:
        return 403
    return 400


def create_app(labbook: str | os.PathLike[str], *, read_only: bool = False,
               tokens: Mapping[str, str] | None = None, user: str | None = None,
               import_root: str | os.PathLike[str] | None = None,
               max_upload_bytes: int = DEFAULT_MAX_UPLOAD_BYTES,
               allowed_hosts: list[str] | None = None) -> Starlette:
    """The workbench application over the lab book ``labbook``.

    Parameters
    ----------
    labbook
        An existing lab book file.
    read_only
        Refuse every change (amend, approve, void, restore, import).
    tokens
        Access token → user name. Empty: no token is asked for (loopback use only).
    user
        The user changes are recorded under when no token names one (default: the login
        name, as the command line records it).
    import_root
        A folder whose run sheets the Import page lists.
    max_upload_bytes
        Largest request body, bytes.
    allowed_hosts
        Host names a request may address (its ``Host`` header); ``None``: any. ``calwork
        serve`` on loopback allows only the loopback names, so that a page elsewhere cannot
        reach the workbench through a name of its own that resolves to this computer (DNS
        rebinding).
    """
    from calwork.labbook.audit import current_user
    from calwork.web import api, pages

    bench = Workbench(labbook, read_only=read_only, import_root=import_root)
    with bench.book():  # refuse a missing or foreign file now, not at the first request
        pass
    settings = {"tokens": dict(tokens or {}), "user": current_user(user),
                "csrf": secrets.token_urlsafe(32), "max_upload_bytes": int(max_upload_bytes),
                "read_only": read_only}

    async def on_calwork_error(request: Request, exc: CalworkError) -> Response:
        status = status_of(exc)
        if request.url.path.startswith("/api/"):
            return problem(status, str(exc))
        return pages.error_page(request, status, str(exc))

    async def on_http_error(request: Request, exc: HTTPException) -> Response:
        if request.url.path.startswith("/api/"):
            return problem(exc.status_code, str(exc.detail))
        return pages.error_page(request, exc.status_code, str(exc.detail))

    async def on_value_error(request: Request, exc: Exception) -> Response:
        message = f"bad request: {exc}"
        if request.url.path.startswith("/api/"):
            return problem(400, message)
        return pages.error_page(request, 400, message)

    async def plotly_js(request: Request) -> Response:
        return FileResponse(_plotly_js(), media_type="text/javascript",
                            headers={"Cache-Control": "public, max-age=86400"})

    @contextlib.asynccontextmanager
    async def lifespan(app: Starlette) -> AsyncIterator[None]:
        stop = threading.Event()
        warm = threading.Thread(target=bench.warm, args=(stop,), daemon=True,
                                name="calwork-thumbnails")
        warm.start()
        try:
            yield
        finally:
            stop.set()
            warm.join(timeout=10)

    routes = [
        *api.routes(),
        *pages.routes(),
        Route("/static/plotly.min.js", plotly_js),
        Mount("/static", StaticFiles(directory=_HERE / "static"), name="static"),
    ]
    app = Starlette(
        routes=routes,
        middleware=[*([Middleware(TrustedHostMiddleware, allowed_hosts=allowed_hosts)]
                      if allowed_hosts else []),
                    Middleware(_Guard, settings=settings)],
        exception_handlers={CalworkError: on_calwork_error, HTTPException: on_http_error,
                            ValueError: on_value_error, json.JSONDecodeError: on_value_error},
        max_body_size=int(max_upload_bytes),
        lifespan=lifespan,
    )
    app.state.bench = bench
    app.state.settings = settings
    app.state.templates = pages.templates()
    return app
