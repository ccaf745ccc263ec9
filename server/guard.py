"""The gate every request passes: the access key when shared, read-only links, cross-site request checks, page headers.

Pure ASGI, outside the routes, so it covers every route there is or will be (pages, API,
records, PDFs, static files) without any route having to remember it.

- **Access key** (share mode): a request needs the access cookie (set by the key page), or the
  key in an ``X-Headsheet-Key`` or ``Authorization: Bearer`` header (for scripts). Without it,
  only the key page and its stylesheet are served: pages redirect to the key page, the API
  answers 401 in JSON, everything else 401.
- **Read-only links**: ``/view/<token>/...`` serves one sheet's pages, records and PDFs, and
  its sign-off, under that prefix (it becomes the root path, so every link on those pages stays
  inside it). Anything else under the prefix is refused; no key is needed.
- **Cross-site requests**: a state-changing request with a foreign ``Origin`` or ``Referer``, or
  marked ``Sec-Fetch-Site: cross-site``, is refused. Forms must carry the form token (field
  ``csrf_token``, or header ``X-CSRF-Token`` as htmx sends it), equal to the signed cookie the
  server set; the JSON API instead requires ``Content-Type: application/json``, which a
  cross-site form cannot send without the browser asking first (and the server never agrees).
- **Page headers**: every HTML page gets the one content policy (no evaluated script), and over
  HTTPS every cookie, whichever route set it, is marked ``Secure``.
"""

from __future__ import annotations

import hmac
import re
import sqlite3
from typing import Awaitable, Callable
from urllib.parse import quote, unquote_plus, urlsplit

from starlette.concurrency import run_in_threadpool
from starlette.datastructures import Headers, MutableHeaders
from starlette.requests import Request, cookie_parser
from starlette.responses import JSONResponse, RedirectResponse, Response

from server.access import Sharing, normalise_key, same_key
from server.web import (
    ACCESS_DAYS,
    BUSY_MESSAGE,
    BUSY_RETRY_S,
    BUSY_TITLE,
    CSRF_FIELD,
    KEY_PATH,
    VIEW_PREFIX,
    content_security_policy,
    cookie_name,
    error_response,
    host_name,
    is_api,
    replay_body,
    store_busy,
)

UNSAFE = {"POST", "PUT", "PATCH", "DELETE"}
#: What a visitor without the key may load: the key page and what it needs to look right.
OPEN_PATHS = {KEY_PATH, "/static/css/headsheet.css", "/static/favicon.svg"}
CSRF_HEADER = "x-csrf-token"
KEY_HEADER = "x-headsheet-key"

# Pages a read-only link may open (GET), and the posts it may make (sign-off only). The sheet
# number in the path must be the link's own.
_VIEW_GET = [re.compile(p) for p in (
    r"^/sheets/(\d+)$", r"^/sheets/(\d+)/history$", r"^/sheets/(\d+)/revisions/\d+$",
    r"^/sheets/(\d+)/record$", r"^/sheets/(\d+)/revisions/\d+/record$", r"^/sheets/(\d+)/revisions/\d+/record\.pdf$",
    r"^/sheets/(\d+)/compare$", r"^/sheets/(\d+)/export\.json$", r"^/sheets/(\d+)/revisions/\d+/plots/[a-z]+(?:-[0-9]{1,2})?\.svg$",
    r"^/sheets/(\d+)/revisions/\d+/system-curve\.csv$", r"^/sheets/(\d+)/revisions/\d+/sizes$",
    r"^/sheets/(\d+)/revisions/\d+/transient$", r"^/api/sheets/(\d+)/revisions/\d+/transient$",
    r"^/api/sheets/(\d+)$", r"^/api/sheets/(\d+)/revisions$", r"^/api/sheets/(\d+)/revisions/\d+$",
    r"^/api/sheets/(\d+)/revisions/\d+/record$",
)]
_VIEW_POST = [re.compile(p) for p in (
    r"^/sheets/(\d+)/revisions/\d+/signatures$", r"^/api/sheets/(\d+)/revisions/\d+/signatures$",
)]
_FORM_TOKEN = re.compile(rb"(?:^|&)csrf_token=([^&]*)")
#: GET routes that cost real work (a PDF render, a scan of every revision): never for other sites.
EXPENSIVE_GET = re.compile(r"^/sheets/\d+/(revisions/\d+/)?record\.pdf$|^/verify(/.*)?$|^/api/verify(/.*)?$")

#: Every HTML page's policy (see server.web.content_security_policy): scripts only from this server,
#: never evaluated text. A page with an inline script of its own (the API page) sends the same
#: policy with that script's hash added, and the gate keeps it.
CSP = content_security_policy()


def secure_cookies(raw: list[tuple[bytes, bytes]]) -> None:
    """Mark every cookie in response headers ``raw`` Secure (in place), so a browser sends it over HTTPS only.

    Only for a server answering over HTTPS: a browser drops a Secure cookie that comes over plain
    HTTP, and the form token with it. Every cookie passes here, whichever route set it.
    """
    for i, (name, value) in enumerate(raw):
        if name.lower() != b"set-cookie":
            continue
        attributes = {part.split(b"=", 1)[0].strip().lower() for part in value.split(b";")[1:]}
        if b"secure" not in attributes:
            raw[i] = (name, value + b"; Secure")


def viewer_may(method: str, path: str, sheet_id: int) -> str:
    """What a read-only link to ``sheet_id`` may do at ``path``: 'ok', 'not part' (GET) or 'read only'."""
    if method in ("GET", "HEAD") and path.startswith("/static/"):
        return "ok"
    for pattern in (_VIEW_POST if method == "POST" else _VIEW_GET if method in ("GET", "HEAD") else []):
        m = pattern.match(path)
        if m and int(m.group(1)) == sheet_id:
            return "ok"
    return "read only" if method in UNSAFE else "not part"


def foreign_origin(headers: Headers, scope: dict) -> str | None:
    """Why a state-changing request looks cross-site, or None if it does not."""
    host = headers.get("host", "")
    own = f"{scope.get('scheme', 'http')}://{host}".lower()
    site = headers.get("sec-fetch-site")
    if site in ("cross-site", "same-site"):
        return "it was sent by a page of another site"
    origin = headers.get("origin")
    if origin is not None:
        return None if origin.lower() == own else "it came from a page of another site"
    referer = headers.get("referer")
    if referer:
        parts = urlsplit(referer)
        if f"{parts.scheme}://{parts.netloc}".lower() != own:
            return "it came from a page of another site"
    return None


async def read_body(receive: Callable[[], Awaitable[dict]], limit: int) -> bytes | None:
    """The whole request body, or None if it is larger than ``limit`` bytes (or the client went away)."""
    chunks, size = [], 0
    while True:
        message = await receive()
        if message["type"] == "http.disconnect":
            return None
        chunk = message.get("body", b"")
        size += len(chunk)
        if size > limit:
            return None
        chunks.append(chunk)
        if not message.get("more_body", False):
            return b"".join(chunks)


async def form_token(scope: dict, headers: Headers, body: bytes, receive) -> str | None:
    """The form token in a posted body (url-encoded or multipart), or None."""
    kind = headers.get("content-type", "").split(";")[0].strip().lower()
    if kind == "application/x-www-form-urlencoded":
        m = _FORM_TOKEN.search(body)
        return unquote_plus(m.group(1).decode("latin-1")) if m else None
    if kind == "multipart/form-data":
        request = Request(scope, replay_body(body, receive))
        try:
            form = await request.form(max_files=4, max_fields=100)
        except Exception:  # the multipart parser raises its own assorted errors on garbage
            return None
        try:
            value = form.get(CSRF_FIELD)
            return value if isinstance(value, str) else None
        finally:
            await form.close()
    return None


class Guard:
    """The gate (see the module docstring). ``state`` is the app's state: its store and templates."""

    def __init__(self, app, sharing: Sharing, state, limit_for: Callable[[str], int]):
        self.app = app
        self.sharing = sharing
        self.state = state
        self.limit_for = limit_for

    async def __call__(self, scope, receive, send):
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        scope = dict(scope)
        headers = Headers(scope=scope)
        cookies = cookie_parser(headers.get("cookie", ""))
        path, method = scope["path"], scope["method"]
        signer = self.sharing.signer
        csrf_cookie = cookies.get(cookie_name("csrf", scope))
        fresh = not signer.valid("csrf", csrf_cookie)
        # In the work lane (server/lanes.py) a fresh browser's form token is the one the front made
        # and sets: the page drawn here must carry the same token as the cookie the front sends.
        told = scope.get("lane_csrf")
        made_in_front = fresh and told is not None and signer.valid("csrf", told)
        info = {"share": self.sharing.share, "viewer": None, "view_prefix": "", "fresh": fresh,
                "csrf": told if made_in_front else signer.token("csrf") if fresh else csrf_cookie,
                "route_path": path, "cookie_set_in_front": made_in_front}
        scope["headsheet"] = info
        route_path = path

        name = host_name(headers.get("host", ""))
        if name not in self.state.host_names:
            # DNS rebinding: another site's name made to resolve to this computer. Answer nothing.
            await self._refuse(scope, receive, send, 421, "Unknown host name",
                               f"This server answers only to the names it serves, not to '{name[:60]}'. "
                               "If that is your own name for this computer, start the server with "
                               "--host-name for it.")
            return

        if path.startswith(VIEW_PREFIX) or path == VIEW_PREFIX.rstrip("/"):
            token, _, rest = path[len(VIEW_PREFIX):].partition("/")
            try:
                # A store call waits for SQLite: in the threadpool, never on the event loop.
                sheet_id = await run_in_threadpool(self.state.store.view_link_sheet, token)
            except sqlite3.OperationalError as exc:
                if not store_busy(exc):
                    raise
                await self._refuse(scope, receive, send, 503, BUSY_TITLE, BUSY_MESSAGE,
                                   path="/" + rest, headers={"Retry-After": str(BUSY_RETRY_S)})
                return
            if sheet_id is None:
                await self._refuse(scope, receive, send, 404, "Link not working",
                                   "This read-only link does not work: it was revoked, or only part of it was "
                                   "copied. Ask the person who sent it for a new one.")
                return
            prefix = VIEW_PREFIX + token
            route_path = info["route_path"] = "/" + rest
            if route_path == "/":
                await RedirectResponse(f"{prefix}/sheets/{sheet_id}", status_code=303)(scope, receive, send)
                return
            verdict = viewer_may(method, route_path, sheet_id)
            if verdict != "ok":
                status, title = (403, "Read-only link") if verdict == "read only" else (404, "Not part of this link")
                message = ("This read-only link lets you view, print and sign this sheet, not change it."
                           if verdict == "read only" else
                           "A read-only link opens one sheet, its history and its records; this page is not part of it.")
                await self._refuse(scope, receive, send, status, title, message, path=route_path)
                return
            info.update(viewer=sheet_id, view_prefix=prefix)
            # The prefix becomes the root path: routing sees the rest, and every link the pages
            # build stays under the prefix. Absolute addresses (the verify address printed on a
            # record) keep the real root, so a printed page never carries the link's token.
            root = scope.get("root_path", "")
            scope["app_root_path"] = scope.get("app_root_path", root)
            scope["root_path"] = root + prefix
        elif self.sharing.share and path not in OPEN_PATHS:
            refused = self._check_key(scope, headers, cookies)
            if refused is not None:
                await self._key_needed(scope, receive, send, *refused)
                return

        if method in ("GET", "HEAD") and EXPENSIVE_GET.match(route_path) and \
                headers.get("sec-fetch-site") in ("cross-site", "same-site"):
            # An <img> or link on any web page could make this server render PDFs or scan for
            # fingerprints; the browser says where the request came from, and only our pages may.
            await self._refuse(scope, receive, send, 403, "Request refused",
                               "This address does real work (a PDF, a scan of every record), so it is served only "
                               "when opened directly (typed, or from a bookmark) or from Headsheet's own pages, not "
                               "from another site's page. Open it directly.",
                               path=route_path)
            return

        if method in UNSAFE:
            why = foreign_origin(headers, scope)
            if why:
                await self._refuse(scope, receive, send, 403, "Request refused",
                                   f"This change was refused because {why}. Nothing was changed. If you sent it "
                                   "from Headsheet itself, reload the page and try again.", path=route_path)
                return
            if is_api(route_path):
                kind = headers.get("content-type", "").split(";")[0].strip().lower()
                # No body at all carries nothing to act on: the route says what is missing.
                empty = not kind and headers.get("content-length", "0") == "0" and "transfer-encoding" not in headers
                json_kind = kind == "application/json" or (kind.startswith("application/") and kind.endswith("+json"))
                if not (json_kind or empty):
                    await self._refuse(scope, receive, send, 415, "Unsupported media type",
                                       "Send the request body as JSON with the header Content-Type: application/json.",
                                       path=route_path)
                    return
            else:
                token = headers.get(CSRF_HEADER)
                if token is None:
                    body = await read_body(receive, self.limit_for(route_path))
                    if body is None:
                        limit = self.limit_for(route_path)
                        await self._refuse(scope, receive, send, 413, "Request too large",
                                           f"A request may carry at most {limit // 1000} kB.", path=route_path)
                        return
                    token = await form_token(scope, headers, body, receive)
                    receive = replay_body(body, receive)
                if fresh or not token or not hmac.compare_digest(token.encode(), info["csrf"].encode()):
                    await self._refuse(scope, receive, send, 403, "Form refused",
                                       "This form was refused because it did not carry this server's form token "
                                       "(the page may be from before the server restarted or the key changed, or "
                                       "the form was sent from another site). Nothing was changed: reload the "
                                       "page and try again.", path=route_path)
                    return

        await self.app(scope, receive, self._sender(send, scope))

    # -- the key ----------------------------------------------------------------------------------

    def _check_key(self, scope: dict, headers: Headers, cookies: dict) -> tuple[int, str, float] | None:
        """None if the request carries the key; else (status, message, seconds to wait) for the refusal."""
        key = self.sharing.key()
        if not key:
            return 401, "This server is shared, but no access key is set: run `headsheet key --new` on it.", 0
        if self.sharing.signer.valid_timed("access", cookies.get(cookie_name("key", scope)), ACCESS_DAYS * 86400,
                                           normalise_key(key)):
            return None
        typed = headers.get(KEY_HEADER)
        auth = headers.get("authorization", "")
        if typed is None and auth[:7].lower() == "bearer ":
            typed = auth[7:]
        if typed is None:
            return 401, ("This server is shared with an access key. Open the key page, or send the key in the "
                         "X-Headsheet-Key header."), 0
        client = (scope.get("client") or ("?", 0))[0]
        # The right key always works, so one person's wrong guesses never lock out everyone who shares
        # their address (an office behind one router); only wrong keys wait. With a 79-bit key the
        # limit is a second line: guessing it is hopeless at any speed a server answers.
        if same_key(typed, key):
            self.sharing.attempts.succeeded(client)
            return None
        wait = self.sharing.attempts.wait(client)
        if wait > 0:
            return 429, f"Too many wrong keys from this computer; wait {int(wait) + 1} s and try again.", wait
        self.sharing.attempts.failed(client)
        return 401, "That is not this server's access key.", 0

    async def _key_needed(self, scope, receive, send, status: int, message: str, wait: float) -> None:
        path = scope["path"]
        if status == 401 and scope["method"] in ("GET", "HEAD") and not is_api(path) and not path.startswith("/static/"):
            query = scope.get("query_string", b"").decode("latin-1")
            target = path + (f"?{query}" if query else "")
            await RedirectResponse(f"{KEY_PATH}?next={quote(target, safe='')}", status_code=303)(scope, receive, send)
            return
        headers = {"Retry-After": str(int(wait) + 1)} if status == 429 else {}
        if is_api(path):
            await self._refuse(scope, receive, send, status, "Access key needed" if status == 401 else "Too many tries",
                               message, headers=headers)
            return
        # Anything else gets the key page itself: it loads nothing that needs the key.
        request = Request(scope, receive)
        response = self.state.templates.TemplateResponse(request, "key.html", {"next": "/", "message": message},
                                                         status_code=status, headers=headers)
        await response(scope, receive, self._sender(send, scope))

    # -- answers ----------------------------------------------------------------------------------

    async def _refuse(self, scope, receive, send, status: int, title: str, message: str,
                      path: str | None = None, headers: dict | None = None) -> None:

        path = scope["path"] if path is None else path
        if is_api(path):
            response: Response = JSONResponse({"ok": False, "status": status, "title": title, "message": message,
                                               "errors": []}, status_code=status)
        else:
            response = error_response(path, status, title, message, request=Request(scope, receive))
        response.headers.update(headers or {})
        await response(scope, receive, self._sender(send, scope))

    def _sender(self, send, scope: dict):
        info = scope["headsheet"]
        # A new form token goes out with pages (which show it in their forms), not with API answers.
        set_csrf = info["fresh"] and not is_api(info["route_path"]) and not info.get("cookie_set_in_front")
        csrf_name = cookie_name("csrf", scope)
        https = scope.get("scheme") == "https"

        async def wrapped(message):
            if message["type"] == "http.response.start":
                h = MutableHeaders(scope=message)
                h.setdefault("X-Content-Type-Options", "nosniff")
                h.setdefault("X-Frame-Options", "DENY")
                h.setdefault("Referrer-Policy", "same-origin")
                if not scope["path"].startswith("/static/"):
                    # Sheets, records, PDFs, exports and API answers are not to be kept by browsers
                    # or proxies (a shared office computer, a read-only link's pages).
                    h["Cache-Control"] = "no-store"
                if h.get("content-type", "").startswith("text/html"):
                    h.setdefault("Content-Security-Policy", CSP)
                if set_csrf:
                    h.append("Set-Cookie", f"{csrf_name}={info['csrf']}; Path=/; HttpOnly; SameSite=Strict")
                if https:
                    secure_cookies(h.raw)
            await send(message)

        return wrapped
