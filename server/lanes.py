"""The work lane: a second server process, at lower CPU priority, that answers the costly requests.

Python runs one thread at a time in a process. A request that solves or draws a very large sheet
holds that one thread for seconds, and every person editing a small sheet waits behind it: one
client asking for the largest sheet the program stores, over and over, made the editors' answers
take seconds instead of tens of milliseconds (benchmarks/load.py --hostile). So `headsheet serve`
starts a second process over the same store, the *work lane* (server/main.py ``Lane``), listening on a Unix socket only this
user can open, and the front process passes it:

- every request whose body is larger than ``HEAVY_BYTES`` (a large document to solve or store, an
  import), and
- every request for a sheet whose stored document is larger than ``HEAVY_BYTES``, and
- every record, PDF, comparison and export, whatever the sheet's size (they read and draw the whole
  history or the whole record, and are asked for rarely).

The front keeps everything else: the pages and edits of ordinary sheets, sign-off, accounts, links,
the key page. The work lane runs the same application on the same store, so it answers exactly as
the front would; its responses carry ``X-Headsheet-Lane: work``. The gate runs in the front first
(nothing reaches the lane that the front would refuse) and again in the lane. Should the lane be
gone, the front answers the request itself, and says so in its log.

The lane is niced (``LANE_NICE``): on a machine with fewer cores than requests, the editors' process
is given the processor first.
"""

from __future__ import annotations

import logging
import re
import time

import httpx
from starlette.concurrency import run_in_threadpool

from server.web import replay_body

log = logging.getLogger("headsheet.lanes")

#: A document (stored or posted) larger than this is solved and drawn in the work lane [bytes].
#: The demo sheets are 3-12 kB; a 60-run line with a surveyed profile is about 100 kB.
HEAVY_BYTES = 64_000
#: How much lower the work lane's CPU priority is than the front's (os.nice).
LANE_NICE = 10
#: Longest the front waits for the lane to answer one request [s]: a PDF may take two minutes.
LANE_TIMEOUT_S = 300.0
#: Longest the front waits for the lane to start answering [s].
LANE_START_S = 60.0
LANE_HEADER = "X-Headsheet-Lane"
#: What the front tells the lane about the request it passes on (the lane listens on a socket only
#: this user can open, so nobody else can send these; the front drops them from what it receives).
_SCHEME = b"x-headsheet-front-scheme"
_CLIENT = b"x-headsheet-front-client"
_SERVER = b"x-headsheet-front-server"
_CSRF = b"x-headsheet-front-csrf"
_TOLD = (_SCHEME, _CLIENT, _SERVER, _CSRF)

#: Requests for one sheet: its page and edits, a revision, its record and PDF, comparison, export,
#: plots; with or without a read-only link's prefix (the gate gives the path behind it as route_path).
_SHEET = re.compile(r"^/(?:api/)?sheets/(?P<id>\d+)(?:/revisions/(?P<n>\d+))?(?P<rest>/[^?]*)?$")
#: What goes to the lane whatever the sheet's size.
_ALWAYS = re.compile(r"/(?:record|record\.pdf|compare|export\.json|sizes|transient)$")
#: What never goes to the lane: sign-off and the small changes to a sheet's standing.
_NEVER = re.compile(r"/(?:signatures|links|links/revoke|archive|unarchive|duplicate|restore)$")
_HOP = {b"connection", b"keep-alive", b"transfer-encoding", b"te", b"upgrade", b"proxy-connection",
        b"content-length", b"trailer"}


def route_of(scope: dict) -> str:
    return (scope.get("headsheet") or {}).get("route_path") or scope.get("path", "")


def classify(path: str, body_size: int, sheet_size) -> bool:
    """Whether a request goes to the work lane. ``sheet_size(sheet_id, number)`` gives a stored
    document's size in bytes (0 when there is none); it is only asked for a sheet's own routes."""
    if path == "/sheets/import":
        return body_size > 0
    if body_size > HEAVY_BYTES:
        return True
    found = _SHEET.match(path)
    if not found:
        return False
    rest = found.group("rest") or ""
    if _NEVER.search(rest):
        return False
    if _ALWAYS.search(rest):
        return True
    number = int(found.group("n")) if found.group("n") else None
    return sheet_size(int(found.group("id")), number) > HEAVY_BYTES


class WorkLane:
    """Front-process ASGI middleware: passes the costly requests to the lane at ``socket_path``.

    It sits inside the body limit (a refused body never reaches the lane) and the gate."""

    def __init__(self, app, socket_path: str, store):
        self.app = app
        self.socket_path = socket_path
        self.store = store
        self.client = httpx.AsyncClient(transport=httpx.AsyncHTTPTransport(uds=socket_path),
                                        timeout=httpx.Timeout(LANE_TIMEOUT_S, connect=5.0))
        self.down_since: float | None = None

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http" or scope["path"].startswith("/static/"):
            await self.app(scope, receive, send)
            return
        body, more = b"", True
        if scope["method"] not in ("GET", "HEAD"):
            parts = []
            while more:  # the body limit in front has already bounded it
                message = await receive()
                if message["type"] == "http.disconnect":
                    return
                parts.append(message.get("body", b""))
                more = message.get("more_body", False)
            body = b"".join(parts)
        try:
            heavy = await run_in_threadpool(classify, route_of(scope), len(body), self.store.document_size)
        except Exception:  # a store too busy to say a sheet's size: this process answers, as without a lane
            log.warning("could not tell whether %s is costly; answering it here", scope["path"], exc_info=True)
            heavy = False
        if heavy and await self._forward(scope, body, send):
            return
        await self.app(scope, replay_body(body, receive), send)

    async def _forward(self, scope: dict, body: bytes, send) -> bool:
        """Answer from the lane; False (nothing sent) when the lane cannot be reached."""
        headers = [(k, v) for k, v in scope.get("headers") or []
                   if k.lower() not in _HOP and k.lower() not in _TOLD]
        headers.append((_SCHEME, scope.get("scheme", "http").encode()))
        for name, where in ((_CLIENT, scope.get("client")), (_SERVER, scope.get("server"))):
            if where and len(where) == 2:
                headers.append((name, f"{where[0]} {where[1]}".encode("latin-1")))
        info = scope.get("headsheet") or {}
        if info.get("fresh") and info.get("csrf"):  # the form token the front sets on this answer
            headers.append((_CSRF, info["csrf"].encode("latin-1")))
        url = scope.get("raw_path") or scope["path"].encode()
        if scope.get("query_string"):
            url += b"?" + scope["query_string"]
        request = self.client.build_request(scope["method"], "http://lane" + url.decode("latin-1"),
                                            headers=headers, content=body)
        try:
            response = await self.client.send(request, stream=True)
        except httpx.TransportError as exc:
            if self.down_since is None:
                log.warning("the work lane does not answer (%s); this process answers its requests", exc)
                self.down_since = time.monotonic()
            return False
        self.down_since = None
        try:
            out = [(k, v) for k, v in response.headers.raw if k.lower() not in _HOP]
            await send({"type": "http.response.start", "status": response.status_code, "headers": out})
            async for chunk in response.aiter_raw():
                await send({"type": "http.response.body", "body": chunk, "more_body": True})
            await send({"type": "http.response.body", "body": b"", "more_body": False})
        finally:
            await response.aclose()
        return True


class LaneMark:
    """Lane-process ASGI middleware, outermost: the request as the front received it (its scheme and
    client, which the gate's origin check, cookies and limits need), and every answer marked."""

    def __init__(self, app):
        self.app = app

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        told = dict(scope.get("headers") or [])
        scope = {**scope, "headers": [(k, v) for k, v in scope.get("headers") or [] if k not in _TOLD]}
        if told.get(_SCHEME) in (b"http", b"https"):
            scope["scheme"] = told[_SCHEME].decode()
        for name, key in ((_CLIENT, "client"), (_SERVER, "server")):  # the port names the cookies
            host, _, port = told.get(name, b"").decode("latin-1").partition(" ")
            scope[key] = (host, int(port)) if host and port.isdigit() else None
        if _CSRF in told:
            scope["lane_csrf"] = told[_CSRF].decode("latin-1")

        async def marked(message):
            if message["type"] == "http.response.start":
                message = {**message, "headers": [*message.get("headers", []), (LANE_HEADER.lower().encode(), b"work")]}
            await send(message)

        await self.app(scope, receive, marked)
