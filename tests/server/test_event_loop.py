"""A store busy with another write: the routes wait for it off the event loop, and say 503 when it stays busy."""

from __future__ import annotations

import asyncio
import concurrent.futures
import sqlite3
import threading
from contextlib import contextmanager

import httpx
import pytest
from servertools import HX, BrowserClient, form_fields

from server import api, pages
from server.store import Store
from server.web import BUSY_MESSAGE

#: The store's wait for the write lock in these tests [ms] (10 s in use).
QUICK_BUSY_MS = 50
#: Longest a held request waits to be let go [s]: only a guard against a hung run, never a measure.
HOLD_S = 10


@pytest.fixture
def quick_busy(monkeypatch):
    """Every store connection gives up on a held write lock after QUICK_BUSY_MS rather than 10 s."""
    original = Store._connect

    @contextmanager
    def connect(self):
        with original(self) as con:
            con.execute(f"PRAGMA busy_timeout={QUICK_BUSY_MS}")
            yield con

    monkeypatch.setattr(Store, "_connect", connect)


@contextmanager
def write_lock(store: Store):
    """Another program's write transaction on the store file, holding the write lock until the block ends."""
    con = sqlite3.connect(store.path, isolation_level=None)
    try:
        con.execute("BEGIN IMMEDIATE")
        yield
        con.execute("ROLLBACK")
    finally:
        con.close()


def _revision(client, sheet_id: int = 1) -> int:
    return client.get(f"/api/sheets/{sheet_id}").json()["revision"]


def _says_busy(response) -> None:
    assert response.status_code == 503
    assert int(response.headers["retry-after"]) > 0


@pytest.mark.parametrize("htmx", [True, False], ids=["htmx", "plain"])
def test_a_page_save_on_a_busy_store_is_a_503_and_the_same_save_goes_through_later(
        app, client, sheet_form, quick_busy, htmx):
    fields = sheet_form(1)
    fields["header.title"] = "Saved once the store is free"
    headers = HX if htmx else {}
    with write_lock(app.state.store):
        refused = client.post("/sheets/1", data=fields, headers=headers, follow_redirects=False)
        _says_busy(refused)
        assert refused.headers["content-type"].startswith("text/html")
        assert refused.template.name == "error.html"
        # The message sits where the pages' script reads it (.lead) for an htmx request.
        assert f'<p class="lead">{BUSY_MESSAGE}</p>' in refused.text
    assert _revision(client) == 1  # nothing was stored
    saved = client.post("/sheets/1", data=fields, headers=headers, follow_redirects=False)
    assert saved.status_code == (200 if htmx else 303)
    assert _revision(client) == 2
    assert client.get("/api/sheets/1").json()["document"]["header"]["title"] == "Saved once the store is free"


def test_an_api_replace_on_a_busy_store_is_a_503_in_json_and_the_same_request_goes_through_later(
        app, client, quick_busy):
    doc = client.get("/api/sheets/1").json()["document"]
    doc["header"]["title"] = "Replaced once the store is free"
    body = {"document": doc, "base_revision": 1}
    with write_lock(app.state.store):
        refused = client.put("/api/sheets/1", json=body)
        _says_busy(refused)
        assert refused.json() == {"ok": False, "status": 503, "title": "Store busy", "message": BUSY_MESSAGE,
                                  "errors": []}
        # Reading goes on during another's write.
        assert client.get("/api/sheets/1").status_code == 200
    assert _revision(client) == 1
    replaced = client.put("/api/sheets/1", json=body)
    assert replaced.status_code == 200 and replaced.json()["revision"] == 2


def test_a_busy_store_at_the_read_only_link_gate_is_a_503_and_other_database_faults_stay_500(app, monkeypatch):
    token = app.state.store.create_view_link(1).token
    store = app.state.store
    with BrowserClient(app, raise_server_exceptions=False, follow_redirects=False) as c:
        assert c.get(f"/view/{token}/sheets/1").status_code == 200

        def busy(token):
            raise sqlite3.OperationalError("database is locked")

        monkeypatch.setattr(store, "view_link_sheet", busy)
        page = c.get(f"/view/{token}/sheets/1")
        _says_busy(page)
        assert BUSY_MESSAGE in page.text
        answer = c.get(f"/view/{token}/api/sheets/1")
        _says_busy(answer)
        assert answer.json()["message"] == BUSY_MESSAGE

        # Only a lock held elsewhere is "busy": any other database fault is the program's, said as one.
        def broken(*args, **kwargs):
            raise sqlite3.OperationalError("no such table: revisions")

        monkeypatch.setattr(store, "latest", broken)
        fault = c.get("/api/sheets/1")
        assert fault.status_code == 500 and "retry-after" not in fault.headers


# Each case: a request, and the blocking call it makes that is held to see whether the rest go on.
CASES = {
    "duplicate": ("POST", "/sheets/1/duplicate", None, "store.latest"),
    "archive": ("POST", "/sheets/1/archive", None, "store.set_archived"),
    "unarchive": ("POST", "/sheets/1/unarchive", None, "store.set_archived"),
    "restore": ("POST", "/sheets/1/revisions/1/restore", {"base": "1"}, "store.add_revision"),
    "read-only link": ("GET", "/view/{token}/sheets/1", None, "store.view_link_sheet"),
    "sheet edit": ("POST", "/sheets/1", "form", "pages._render"),
    "api solve": ("POST", "/api/solve", "document", "api.json_problem"),
}


@pytest.mark.parametrize("case", list(CASES))
def test_a_request_held_in_a_blocking_call_holds_up_no_other_request(app, monkeypatch, case):
    method, path, body, where = CASES[case]
    store = app.state.store
    token = store.create_view_link(1).token
    document = store.latest(1).document
    owner, name = {"store": store, "pages": pages, "api": api}[where.split(".")[0]], where.split(".")[1]
    original = getattr(owner, name)
    entered, release = threading.Event(), threading.Event()

    def held(*args, **kwargs):
        entered.set()
        release.wait(HOLD_S)
        return original(*args, **kwargs)

    async def run():
        transport = httpx.ASGITransport(app=app)
        async with httpx.AsyncClient(transport=transport, base_url="http://testserver") as c:
            form = (await c.get("/sheets/1")).text  # sets the form token cookie, as a browser's first page
            csrf = next(v for k, v in c.cookies.items() if k.startswith("hs_csrf_"))
            kwargs: dict = {"headers": {"X-CSRF-Token": csrf, **HX}}
            if body == "form":
                kwargs["data"] = {**form_fields(form), "header.title": "Edited while others read"}
            elif body == "document":
                kwargs["json"] = {"document": document}
            elif body:
                kwargs["data"] = body
            monkeypatch.setattr(owner, name, held)
            slow = asyncio.create_task(c.request(method, path.format(token=token), **kwargs))
            await asyncio.to_thread(entered.wait, HOLD_S)
            other = await c.get("/static/favicon.svg")
            slow_still_held = not slow.done()
            release.set()
            return other, slow_still_held, await slow

    # A fresh thread owns its own event loop: a browser test earlier in the run may leave one
    # running on the main thread, where asyncio.run() refuses to start.
    with concurrent.futures.ThreadPoolExecutor(1) as pool:
        other, slow_still_held, slow = pool.submit(asyncio.run, run()).result()
    assert other.status_code == 200
    # The other request was answered while the first still waited: the wait was not on the event loop.
    assert slow_still_held
    assert slow.status_code in (200, 303), slow.text[:300]
