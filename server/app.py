"""The web application: one route table, the error pages and JSON errors, and the request size limit."""

from __future__ import annotations

import json
import logging
import sqlite3
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import jinja2
from fastapi import FastAPI, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import HTMLResponse
from fastapi.staticfiles import StaticFiles
from fastapi.templating import Jinja2Templates
from markupsafe import Markup, escape
from starlette.exceptions import HTTPException as StarletteHTTPException

from server import (
    account_pages,  # who may sign: accounts page and API
    api,
    lanes,  # the work lane: costly requests answered by a second process
    pages,
    plot_routes,  # each plot as an SVG file
    record,  # the calculation record: record, PDF, sign-off, verify, compare
    sharing,
    sizes_page,  # every standard size in a range, on request
    transient_page,  # the transient runs in full, on request
)
from server.access import KeyFile, Sharing, Signer
from server.form import message_id
from server.guard import Guard
from server.results import SolveCache, lowest_pressure, number, quantity
from server.store import SheetNotFound, Store
from server.web import (
    CSRF_FIELD,
    allowed_host_names,
    busy_response,
    error_response,
    replay_body,
    store_busy,
)

log = logging.getLogger("headsheet.server")

ROOT = Path(__file__).resolve().parents[1]
TEMPLATES = ROOT / "templates"
STATIC = ROOT / "static"
EXAMPLES = ROOT / "examples"
HTMX = "vendor/htmx-2.0.11.min.js"
#: Largest request body accepted [bytes]: a sheet at its list limits is far smaller.
MAX_BODY = 1_000_000

# One route table: (path, name, methods, endpoint, shown in the OpenAPI page).
ROUTES: list[tuple[str, str, list[str], Any, bool]] = [
    ("/", "home", ["GET"], pages.home, False),
    ("/sheets", "sheet_create", ["POST"], pages.create_sheet, False),
    ("/sheets/{sheet_id:int}", "sheet", ["GET"], pages.sheet_page, False),
    ("/sheets/{sheet_id:int}", "sheet_edit", ["POST"], pages.sheet_edit, False),
    ("/sheets/{sheet_id:int}/duplicate", "sheet_duplicate", ["POST"], pages.duplicate_sheet, False),
    ("/sheets/{sheet_id:int}/archive", "sheet_archive", ["POST"], pages.archive_sheet, False),
    ("/sheets/{sheet_id:int}/unarchive", "sheet_unarchive", ["POST"], pages.unarchive_sheet, False),
    ("/sheets/{sheet_id:int}/history", "history", ["GET"], pages.history, False),
    ("/sheets/{sheet_id:int}/revisions/{number:int}", "revision", ["GET"], pages.revision_page, False),
    ("/sheets/{sheet_id:int}/revisions/{number:int}/restore", "revision_restore", ["POST"],
     pages.restore_revision, False),
    ("/api/sheets", "api_list", ["GET"], api.list_sheets, True),
    ("/api/sheets", "api_create", ["POST"], api.create_sheet, True),
    ("/api/sheets/{sheet_id}", "api_read", ["GET"], api.read_sheet, True),
    ("/api/sheets/{sheet_id}", "api_replace", ["PUT"], api.replace_sheet, True),
    ("/api/sheets/{sheet_id}/revisions", "api_revisions", ["GET"], api.list_revisions, True),
    ("/api/sheets/{sheet_id}/revisions/{number}", "api_revision", ["GET"], api.read_revision, True),
    ("/api/solve", "api_solve", ["POST"], api.solve, True),
    ("/api/schema", "api_schema", ["GET"], api.schema, True),
    ("/api/docs", "api_docs", ["GET"], api.docs_page, False),
] + [(path, name, methods, endpoint, False) for path, name, methods, endpoint in sharing.ROUTES]


def body_limit(path: str) -> int:
    """Largest request body for a path [bytes]: MAX_BODY, except the import page's file upload."""
    return sharing.import_limit(path) or MAX_BODY


@dataclass
class Demo:
    """A demo sheet from the examples folder."""

    name: str
    title: str
    document: dict


def load_demos(folder: Path = EXAMPLES) -> list[Demo]:
    demos = []
    for path in sorted(folder.glob("*.json")) if folder.is_dir() else []:
        try:
            doc = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            log.warning("demo sheet %s skipped: %s", path.name, exc)
            continue
        if isinstance(doc, dict):
            header = doc.get("header") if isinstance(doc.get("header"), dict) else {}
            demos.append(Demo(path.stem, str(header.get("title") or path.stem), doc))
    return demos


class BodyLimit:
    """Refuses request bodies over ``limit`` bytes with 413 before any parsing (pure ASGI, so it sees every route)."""

    def __init__(self, app, limit: int = MAX_BODY, limit_for=None):
        self.app = app
        self.limit = limit
        self.limit_for = limit_for

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http" or scope["method"] in ("GET", "HEAD", "OPTIONS"):
            await self.app(scope, receive, send)
            return
        limit = self.limit
        if self.limit_for is not None:
            limit = self.limit_for((scope.get("headsheet") or {}).get("route_path", scope.get("path", "")))
        declared = dict(scope.get("headers") or []).get(b"content-length")
        too_big = False
        if declared is not None:
            try:
                too_big = int(declared) > limit
            except ValueError:
                too_big = True
        chunks: list[bytes] = []
        size = 0
        more = not too_big
        while more:
            message = await receive()
            if message["type"] == "http.disconnect":
                return
            chunk = message.get("body", b"")
            size += len(chunk)
            if size > limit:
                too_big = True
                break
            chunks.append(chunk)
            more = message.get("more_body", False)
        if too_big:
            response = error_response(scope.get("path", ""), 413, "Request too large",
                                      f"A request may carry at most {limit // 1000} kB.", scope=scope)
            await response(scope, receive, send)
            return
        body = b"".join(chunks)
        await self.app(scope, replay_body(body, receive), send)


_TITLES = {400: "Bad request", 401: "Access key needed", 403: "Refused", 404: "Not found",
           405: "Method not allowed", 409: "Conflict", 413: "Request too large", 415: "Unsupported media type",
           422: "Invalid input", 429: "Too many tries", 500: "Internal error"}


async def _http_error(request: Request, exc: StarletteHTTPException):
    detail = exc.detail if isinstance(exc.detail, str) else _TITLES.get(exc.status_code, "Error")
    if exc.status_code == 404 and detail == "Not Found":
        detail = "There is nothing at this address."
    return error_response(request.url.path, exc.status_code, _TITLES.get(exc.status_code, "Error"), detail,
                          request=request)


async def _validation_error(request: Request, exc: RequestValidationError):
    errors = []
    for e in exc.errors():
        loc = [str(p) for p in e.get("loc", ())]
        if loc and loc[0] in ("body", "query", "path"):
            loc = loc[1:]
        errors.append({"path": ".".join(loc), "message": e.get("msg", "is not valid")})
    return error_response(request.url.path, 422, "Invalid input",
                          "The request does not have the expected shape; see errors.", errors, request=request)


async def _not_found(request: Request, exc: SheetNotFound):
    return error_response(request.url.path, 404, "Not found", str(exc), request=request)


def _route_path(request: Request) -> str:
    """The path the routes saw (under a read-only link, the part after its prefix)."""
    return (request.scope.get("headsheet") or {}).get("route_path", request.url.path)


async def _database_error(request: Request, exc: sqlite3.OperationalError):
    if store_busy(exc):
        # Another connection held the write lock past the busy timeout: this request stored
        # nothing, and the same request will go through once that write is done.
        log.warning("store busy on %s: %s", request.url.path, exc)
        return busy_response(_route_path(request), request=request)
    return await _unexpected(request, exc)


async def _unexpected(request: Request, exc: Exception):
    if store_busy(exc):  # raised outside the routes (a middleware): the same answer as from a route
        return await _database_error(request, exc)
    log.exception("unhandled error on %s", request.url.path)
    return error_response(request.url.path, 500, "Internal error",
                          "Something went wrong in the program; nothing was saved by this request.",
                          request=request)


def _templates() -> Jinja2Templates:
    env = jinja2.Environment(loader=jinja2.FileSystemLoader(str(TEMPLATES)), autoescape=True,
                             undefined=jinja2.ChainableUndefined, trim_blocks=True, lstrip_blocks=True)
    templates = Jinja2Templates(env=env)

    @jinja2.pass_context
    def url_for(context, name: str, /, **params) -> str:
        # Paths rather than absolute URLs: the page works behind any host name the office uses.
        request: Request = context["request"]
        return request.scope.get("root_path", "") + str(request.app.url_path_for(name, **params))

    @jinja2.pass_context
    def csrf_token(context) -> str:
        request = context.get("request")
        info = request.scope.get("headsheet") if request is not None else None
        return info["csrf"] if info else ""

    @jinja2.pass_context
    def csrf_field(context) -> Markup:
        """The hidden form token every posting form carries (server.guard checks it)."""
        return Markup(f'<input type="hidden" name="{CSRF_FIELD}" value="{escape(csrf_token(context))}">')

    @jinja2.pass_context
    def view_prefix(context) -> str:
        request = context.get("request")
        info = request.scope.get("headsheet") if request is not None else None
        return info["view_prefix"] if info else ""

    env.globals["url_for"] = url_for
    env.globals["csrf_token"] = csrf_token
    env.globals["csrf_field"] = csrf_field
    env.globals["view_prefix"] = view_prefix
    env.globals["htmx_path"] = HTMX
    env.filters["q"] = quantity
    env.filters["num"] = number
    env.filters["when"] = pages.when
    env.globals["lowest_pressure"] = lowest_pressure
    env.globals["message_id"] = message_id
    return templates


def create_app(data_dir: Path, demos: list[Demo] | None = None, share: bool = False,
               addresses: list[str] | None = None, host_names: list[str] | None = None,
               work_lane: str | None = None, lane: bool = False) -> FastAPI:
    """The application over the store in ``data_dir``; demo sheets are seeded when the store is new.

    With ``share``, every request needs the access key kept in the data folder (made now if there
    is none); ``addresses`` are the network addresses the server is reachable at, for the links it shows.
    The server answers only to loopback names, those addresses and ``host_names`` (and the names in
    HEADSHEET_HOST_NAMES), so a web page whose name is made to resolve to this computer gets nothing.

    ``work_lane`` is the socket of a work lane (server/lanes.py) this app passes its costly requests
    to; ``lane`` makes this app that lane.
    """
    app = FastAPI(
        title="Headsheet",
        summary="Pressurised water line calculation sheets: store, solve and read them.",
        description=("The JSON API of a Headsheet server. Sheet documents follow the format in "
                     "docs/sheet-format.md (also served at /api/schema). Every change is kept as a "
                     "revision; a replace names the revision it was based on and is refused with 409 "
                     "if the sheet has moved on."),
        version="1",
        openapi_url="/api/openapi.json",
        docs_url=None,  # served by api.docs_page from the vendored Swagger UI, not a CDN
        redoc_url=None,
    )
    app.state.store = Store(data_dir)
    app.state.demos = load_demos() if demos is None else demos
    app.state.solver = SolveCache()
    app.state.templates = _templates()
    app.state.store.seed_once([(d.name, d.document) for d in app.state.demos])
    app.state.sharing = Sharing(KeyFile(data_dir), Signer(app.state.store.secret()), share=share)
    app.state.addresses = list(addresses or [])
    app.state.host_names = allowed_host_names(app.state.addresses, host_names or [])
    if share:
        app.state.sharing.keys.ensure()
    for path, name, methods, endpoint, in_schema in ROUTES:
        kwargs: dict[str, Any] = {"name": name, "methods": methods, "include_in_schema": in_schema}
        if in_schema:
            kwargs.update(api.ROUTE_DOCS.get(name, {}))
        else:
            kwargs["response_class"] = HTMLResponse
        app.add_api_route(path, endpoint, **kwargs)
    app.include_router(record.router)
    app.include_router(plot_routes.router)
    app.include_router(sizes_page.router)
    app.include_router(transient_page.router)
    app.include_router(account_pages.router)
    app.mount("/static", StaticFiles(directory=str(STATIC)), name="static")
    app.add_exception_handler(StarletteHTTPException, _http_error)
    app.add_exception_handler(RequestValidationError, _validation_error)
    app.add_exception_handler(SheetNotFound, _not_found)
    app.add_exception_handler(sqlite3.OperationalError, _database_error)
    app.add_exception_handler(Exception, _unexpected)
    if work_lane:  # inside the body limit and the gate: only what the front would serve is passed on
        app.add_middleware(lanes.WorkLane, socket_path=work_lane, store=app.state.store)
    app.add_middleware(BodyLimit, limit=MAX_BODY, limit_for=body_limit)
    # Added last, so it runs first: nothing is read or parsed for a request that may not be served.
    app.add_middleware(Guard, sharing=app.state.sharing, state=app.state, limit_for=body_limit)
    if lane:
        app.add_middleware(lanes.LaneMark)
    return app
