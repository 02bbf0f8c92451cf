"""``calwork serve``: the review workbench in the browser, over a lab book."""

from __future__ import annotations

import argparse
import ipaddress
import secrets

from calwork.cli._common import with_safety_note
from calwork.core.errors import CalworkError

__all__ = ["register"]

_HELP = """\
Serve the review workbench: a local web application over the lab book where a day's runs are
reviewed — thermograms with the periods shaded and boundaries that can be dragged or typed
(previewed live, nothing stored until you amend), approve / amend / void / restore with a
reason (each audited in the lab book), the calibration control charts, the samples with
their uncertainty budgets, Hess's-law derivations, import and export.

It listens on 127.0.0.1 (this computer only) unless --host says otherwise; any other address
needs an access token (--token, or one is generated and printed), which every request must
carry. Changes are recorded under the token's user (--token USER=TOKEN), else --user, else
$CALWORK_USER, else the login name. --read-only refuses every change.
"""


def register(subparsers: argparse._SubParsersAction) -> None:
    """Add the ``serve`` subcommand."""
    p = subparsers.add_parser("serve", help="review workbench in the browser (local web app)",
                              description=with_safety_note(_HELP),
                              formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--labbook", metavar="PATH",
                   help="lab book file (default $CALWORK_LABBOOK, else "
                        "./calwork-labbook.sqlite)")
    p.add_argument("--host", default="127.0.0.1", help="address to listen on (default "
                   "127.0.0.1, this computer only)")
    p.add_argument("--port", type=int, default=8765, help="port (default 8765)")
    p.add_argument("--read-only", action="store_true", help="refuse every change")
    p.add_argument("--open", action="store_true", help="open the day view in a browser")
    p.add_argument("--token", action="append", metavar="[USER=]TOKEN",
                   help="access token (repeat for several users); required off loopback")
    p.add_argument("--user", metavar="NAME", help="user for changes when no token names one")
    p.add_argument("--import-root", metavar="DIR",
                   help="folder whose run sheets the Import page may list and record")
    p.set_defaults(func=run)


def _loopback(host: str) -> bool:
    if host in ("localhost",):
        return True
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return False


def parse_tokens(items: list[str] | None, default_user: str) -> dict[str, str]:
    """``--token`` values as token → user (``USER=TOKEN``, or ``TOKEN`` for the default
    user); tokens must be at least 16 characters."""
    out: dict[str, str] = {}
    for item in items or []:
        user, sep, token = item.rpartition("=")
        user = user.strip() if sep else default_user
        token = token.strip()
        if len(token) < 16:
            raise CalworkError("an access token must be at least 16 characters",
                               column="--token", expected="e.g. a value from "
                               "`python -c 'import secrets; print(secrets.token_urlsafe())'`")
        out[token] = user or default_user
    return out


def run(args: argparse.Namespace) -> int:
    from calwork.labbook.audit import current_user
    from calwork.labbook.store import resolve_labbook_path
    from calwork.web import create_app

    user = current_user(args.user)
    tokens = parse_tokens(args.token, user)
    if not _loopback(args.host) and not tokens:
        token = secrets.token_urlsafe(24)
        tokens = {token: user}
        print(f"access token for {user}: {token}  (give it at /login or as "
              "'Authorization: Bearer TOKEN')", flush=True)
    path = resolve_labbook_path(args.labbook)
    hosts = (sorted({args.host, "127.0.0.1", "localhost", "::1", "[::1]"})
             if _loopback(args.host) else None)
    app = create_app(path, read_only=args.read_only, tokens=tokens, user=user,
                     import_root=args.import_root, allowed_hosts=hosts)
    url = f"http://{args.host}:{args.port}/"
    print(f"calwork review bench on {url} over {path}"
          + (" (read-only)" if args.read_only else "") + "; Ctrl-C stops it", flush=True)
    if args.open:
        import threading
        import webbrowser

        threading.Timer(1.0, webbrowser.open, args=(url,)).start()
    import uvicorn

    uvicorn.run(app, host=args.host, port=args.port, log_level="warning")
    return 0
