"""What the gate, the app and the pages share, kept below all of them: paths, cookie names, the one error shape."""

from __future__ import annotations

import sqlite3

from fastapi import APIRouter
from fastapi.responses import HTMLResponse, JSONResponse
from fastapi.templating import Jinja2Templates
from starlette.requests import Request

KEY_PATH = "/key"
VIEW_PREFIX = "/view/"
CSRF_FIELD = "csrf_token"
#: Days an access cookie from the key page lasts.
ACCESS_DAYS = 30
#: Longest name kept for the history of edits [characters].
MAX_AUTHOR = 100
#: The names this computer always answers to; a served address or a name the user adds joins them.
LOOPBACK_NAMES = ("localhost", "127.0.0.1", "::1")
#: More host names to answer to, comma-separated (as `headsheet serve --host-name`).
HOST_NAMES_ENV = "HEADSHEET_HOST_NAMES"
#: Seconds a client is asked to wait (Retry-After) when the store is busy with another write.
BUSY_RETRY_S = 3
BUSY_TITLE = "Store busy"
BUSY_MESSAGE = "The store is busy with another write; nothing was lost — try again in a few seconds."


def content_security_policy(*script_hashes: str) -> str:
    """The one Content-Security-Policy of every HTML page; ``script_hashes`` (base64 SHA-256) let
    the page's own inline scripts with exactly that text run, and nothing else inline.

    Scripts come only from this server and no text is ever evaluated ('unsafe-eval' is never
    given: htmx runs with allowEval off). No framing (a sign-off button must not be clickable
    through someone else's page), and forms post only to this server.
    """
    scripts = " ".join(["'self'", *(f"'sha256-{h}'" for h in script_hashes)])
    return (f"default-src 'self'; script-src {scripts}; style-src 'self' 'unsafe-inline'; "
            "img-src 'self' data:; object-src 'none'; base-uri 'none'; form-action 'self'; frame-ancestors 'none'")


def host_name(header: str) -> str:
    """The name in a Host header, without port, brackets or a final dot, in lower case.

    >>> host_name("LocalHost:8000"), host_name("[::1]:8000"), host_name("sheets.example.")
    ('localhost', '::1', 'sheets.example')
    """
    text = (header or "").strip().lower()
    if text.startswith("["):
        text = text[1:].split("]", 1)[0]
    elif text.count(":") == 1:
        text = text.split(":", 1)[0]
    return text.rstrip(".")


def allowed_host_names(addresses=(), extra=()) -> frozenset[str]:
    """Loopback names, the served addresses, names given and those in HEADSHEET_HOST_NAMES."""
    import os

    env = [n for n in os.environ.get(HOST_NAMES_ENV, "").split(",") if n.strip()]
    return frozenset(host_name(n) for n in (*LOOPBACK_NAMES, *addresses, *extra, *env) if n and n.strip())


def cookie_name(kind: str, scope: dict) -> str:
    """Cookie names carry the port: browsers share cookies between ports of one host, servers must not."""
    server = scope.get("server") or ("", 0)
    return f"hs_{kind}_{server[1] if server and len(server) > 1 else 0}"


def is_api(path: str) -> bool:
    return path.startswith("/api/") or path == "/api"


def safe_next(text: str | None) -> str:
    """A local path to return to after the key page, never another site."""
    if not text or not text.startswith("/") or text.startswith(("//", "/\\")) or len(text) > 2000:
        return "/"
    if any(ord(c) < 33 for c in text):
        return "/"
    return text


def clean_author(text: str) -> str:
    """A name typed for the history: one line, no control characters, at most MAX_AUTHOR characters."""
    return " ".join("".join(c for c in text if c.isprintable()).split())[:MAX_AUTHOR]


def store_busy(exc: BaseException) -> bool:
    """Whether ``exc`` is SQLite giving up on a lock another connection holds (past its busy timeout)."""
    text = str(exc).lower()
    return isinstance(exc, sqlite3.OperationalError) and ("locked" in text or "busy" in text)


def busy_response(path: str, scope: dict | None = None, request: Request | None = None):
    """503 with Retry-After: the store was busy, nothing was stored, the same request will do later."""
    response = error_response(path, 503, BUSY_TITLE, BUSY_MESSAGE, scope=scope, request=request)
    response.headers["Retry-After"] = str(BUSY_RETRY_S)
    return response


def error_response(path: str, status: int, title: str, message: str, errors: list | None = None,
                   scope: dict | None = None, request: Request | None = None, **extra):
    """The one JSON error shape for the API, and the one error page for everything else."""
    if is_api(path):
        body = {"ok": False, "status": status, "title": title, "message": message, "errors": errors or []}
        body.update(extra)
        return JSONResponse(body, status_code=status)
    templates: Jinja2Templates | None = None
    app = (request.app if request is not None else (scope or {}).get("app"))
    if app is not None:
        templates = app.state.templates
    if templates is None or request is None:
        return HTMLResponse(f"<!doctype html><title>{title}</title><h1>{title}</h1><p>{message}</p>",
                            status_code=status)
    return templates.TemplateResponse(request, "error.html", {"status": status, "title": title,
                                                              "message": message, "errors": errors or []},
                                      status_code=status)


def router_of(routes, docs: dict) -> APIRouter:
    """A router from a module's route table: (path, name, methods, endpoint, in the API schema); the
    API routes take their responses and summaries from ``docs`` by route name."""
    router = APIRouter()
    for path, name, methods, endpoint, in_schema in routes:
        router.add_api_route(path, endpoint, name=name, methods=methods, include_in_schema=in_schema,
                             **(docs.get(name, {}) if in_schema else {}))
    return router


def replay_body(body: bytes, receive):
    """An ASGI ``receive`` that gives ``body`` (already read in full) first, then what ``receive`` gives."""
    sent = False

    async def replay():
        nonlocal sent
        if not sent:
            sent = True
            return {"type": "http.request", "body": body, "more_body": False}
        return await receive()

    return replay
