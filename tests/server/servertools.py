"""Helpers for the route tests: a browser-like test client, the htmx header, the demo files, reading a form."""

from __future__ import annotations

import warnings
from collections import Counter
from html.parser import HTMLParser
from pathlib import Path

from server.app import EXAMPLES
from server.web import cookie_name

with warnings.catch_warnings():
    warnings.simplefilter("ignore")  # starlette's note about httpx versions is not ours to fix
    from fastapi.testclient import TestClient

HX = {"HX-Request": "true"}
#: Figures the robustness tests report at the end of the run (inputs tried, edits sent, ...).
FIGURES: Counter = Counter()


class BrowserClient(TestClient):
    """A test client that sends the form token as the pages' htmx does (header X-CSRF-Token).

    It reads the token from the cookie the server set on the first page, like a browser would
    from the page; tests of the token itself use a plain TestClient.
    """

    def request(self, method, url, *args, **kwargs):
        if method.upper() in ("POST", "PUT", "PATCH", "DELETE"):
            name = cookie_name("csrf", {"server": ("testserver", 80)})
            if name not in self.cookies:
                super().request("GET", "/static/favicon.svg")
            headers = dict(kwargs.pop("headers", None) or {})
            if not any(k.lower() == "x-csrf-token" for k in headers):
                headers["X-CSRF-Token"] = self.cookies.get(name, "")
            kwargs["headers"] = headers
        return super().request(method, url, *args, **kwargs)


def demo_files() -> list[Path]:
    return sorted(EXAMPLES.glob("*.json"))


class _FormReader(HTMLParser):
    """Reads the named controls of a page the way a browser would submit them (no submit buttons)."""

    def __init__(self):
        super().__init__()
        self.fields: dict[str, str] = {}
        self._select: str | None = None
        self._textarea: str | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        name = a.get("name")
        if tag == "input" and name and a.get("type", "text") in ("text", "hidden"):
            self.fields[name] = a.get("value") or ""
        elif tag == "select" and name:
            self._select = name
        elif tag == "option" and self._select:
            if "selected" in a or self._select not in self.fields:
                self.fields[self._select] = a.get("value") or ""
        elif tag == "textarea" and name:
            self._textarea = name
            self.fields[name] = ""

    def handle_endtag(self, tag):
        if tag == "select":
            self._select = None
        elif tag == "textarea":
            self._textarea = None

    def handle_data(self, data):
        if self._textarea:
            self.fields[self._textarea] += data


def form_fields(html: str) -> dict[str, str]:
    reader = _FormReader()
    reader.feed(html)
    return reader.fields


def route_table(app) -> list[tuple[str, str]]:
    """(method, path template) of every route the app serves, the record's router included."""
    from starlette.routing import Mount

    out: list[tuple[str, str]] = []

    def walk(routes):
        for r in routes:
            inner = getattr(r, "original_router", None)  # FastAPI's wrapper of an included router
            if inner is not None:
                walk(inner.routes)
            elif isinstance(r, Mount):
                out.append(("GET", r.path + "/{path}"))
            else:
                for method in sorted(getattr(r, "methods", None) or []):
                    if method != "HEAD":
                        out.append((method, r.path))

    walk(app.routes)
    return out


def fill(path: str, sheet_id: int = 1, number: int = 1, static: str = "css/headsheet.css") -> str:
    """A route template with real values: ``/sheets/{sheet_id:int}`` -> ``/sheets/1``."""
    import re

    values = {"sheet_id": str(sheet_id), "number": str(number), "token": "not-a-link", "fingerprint": "0" * 64,
              "path": static, "name": "curves"}
    return re.sub(r"\{(\w+)(?::\w+)?\}", lambda m: values[m.group(1)], path)


def free_port() -> int:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class LiveServer:
    """The app served by uvicorn on a free loopback port in a thread, for tests with real concurrent clients."""

    def __init__(self, app):
        import threading

        import uvicorn

        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=self.port, log_level="warning"))
        self.thread = threading.Thread(target=self.server.run, daemon=True)

    def __enter__(self):
        import time

        self.thread.start()
        deadline = time.monotonic() + 20
        while not self.server.started:
            if time.monotonic() > deadline or not self.thread.is_alive():
                raise RuntimeError("the test server did not start")
            time.sleep(0.02)
        return self

    def __exit__(self, *exc):
        self.server.should_exit = True
        self.thread.join(timeout=10)


# -- accounts for signing ---------------------------------------------------------------------------

PASSWORD = "a long enough pass phrase"


def login_for(name: str) -> str:
    """A login made from a person's name (the tests give each distinct name its own account)."""
    import hashlib
    import re

    slug = re.sub(r"[^a-z0-9]+", "-", " ".join(name.split()).casefold()).strip("-")[:30]
    if len(slug) < 2:
        slug = "u-" + hashlib.sha256(" ".join(name.split()).casefold().encode()).hexdigest()[:10]
    return slug


def account_for(app, name: str, roles=("preparer", "checker", "approver"), password: str = PASSWORD,
                admin: bool = False, login: str = "") -> str:
    """The login of an account for ``name`` on ``app``'s server, made if there is none yet."""
    from server.accounts import Accounts, NewAccount

    login = login or login_for(name)
    accounts = Accounts(app.state.store)
    if app.state.store.account(login) is None:
        words = [w for w in name.split() if w[:1].isalpha()]
        initials = "".join(w[0] for w in words)[:3] or "X"
        accounts.create(NewAccount(login, " ".join(name.split())[:100] or "X", initials, tuple(roles), admin),
                        password, "test")
    return login


def cheap_hashes(monkeypatch) -> None:
    """Argon2 at its lowest cost: the tests hash hundreds of passwords, the rules are the same."""
    from server import accounts

    monkeypatch.setattr(accounts, "HASH_TIME_COST", 1)
    monkeypatch.setattr(accounts, "HASH_MEMORY_KIB", 8)
    monkeypatch.setattr(accounts, "HASH_PARALLELISM", 1)
    accounts._DECOY.clear()
