"""Two people on one sheet: a stale edit is refused with who changed what, nothing is lost, and races lose no update."""

from __future__ import annotations

import html
import re
import threading
import time

import httpx
from servertools import FIGURES, HX, BrowserClient, LiveServer, form_fields

from server.store import digest_of, dump_document


def _banner(text: str) -> str:
    m = re.search(r'<div class="banner conflict".*?</form>|<div class="banner conflict".*?</div>', text, re.S)
    assert m, "the conflict banner is shown"
    return html.unescape(re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", m.group(0))))


def test_a_stale_edit_says_who_changed_what_and_keeps_what_was_typed(app):
    with BrowserClient(app) as ann, BrowserClient(app) as bob:
        a, b = form_fields(ann.get("/sheets/1").text), form_fields(bob.get("/sheets/1").text)
        assert a["base"] == b["base"] == "1"
        ann.post("/sheets/1", data={**a, "author": "Ann Example", "header.project": "Ann's project",
                                    "elements.0.length": "321 ft"}, headers=HX)
        response = bob.post("/sheets/1", data={**b, "author": "Bob", "header.title": "Bob's title",
                                               "header.project": "Bob's project"}, headers=HX)
        assert response.status_code == 409
        words = _banner(response.text)
        assert "Not saved" in words and "now at revision A.2" in words and "based on revision A.1" in words
        assert "Revision A.2: Ann Example" in words
        assert re.search(r"Ann Example, \d{4}-\d\d-\d\d \d\d:\d\d", words)
        # What changed there, field by field, was and now.
        assert "Header › Project Hollins Mill process plant Ann's project" in words
        assert "› Length 115 ft 321 ft" in words
        # What Bob typed, with the field Ann changed too marked.
        assert "Header › Project (also changed there) Bob's project" in words and "Header › Title Bob's title" in words
        assert "Reload revision A.2" in words
        # The form stays on revision 1, so Bob typing on cannot undo Ann's change.
        assert re.search(r'id="base" value="1"', response.text)
        b = {**b, "author": "Bob", "header.title": "Bob's title, again"}
        assert bob.post("/sheets/1", data=b, headers=HX).status_code == 409
        doc = ann.get("/api/sheets/1").json()["document"]
        assert doc["header"]["project"] == "Ann's project" and doc["elements"][0]["length"] == "321 ft"
        # Without JavaScript: the whole page, the same account, and the typed values in the form.
        page = bob.post("/sheets/1", data=b)
        assert page.status_code == 409 and "Revision A.2: Ann Example" in _banner(page.text)
        assert form_fields(page.text)["header.title"] == "Bob's title, again"


def test_the_typed_changes_can_be_applied_to_the_new_revision(app):
    with BrowserClient(app) as ann, BrowserClient(app) as bob:
        a, b = form_fields(ann.get("/sheets/1").text), form_fields(bob.get("/sheets/1").text)
        ann.post("/sheets/1", data={**a, "elements.0.length": "321 ft"}, headers=HX)
        response = bob.post("/sheets/1", data={**b, "header.title": "Bob's title"}, headers=HX)
        form = re.search(r'<form method="post" action="/sheets/1" class="reapply">(.*?)</form>', response.text, re.S)
        fields = {k: html.unescape(v) for k, v in re.findall(r'name="([^"]+)" value="([^"]*)"', form.group(1))}
        assert fields["base"] == "2" and fields["header.title"] == "Bob's title"
        assert bob.post("/sheets/1", data=fields, follow_redirects=False).status_code == 303
        doc = bob.get("/api/sheets/1").json()["document"]
        assert doc["header"]["title"] == "Bob's title" and doc["elements"][0]["length"] == "321 ft"


def test_no_offer_to_reapply_when_the_lists_changed(app):
    with BrowserClient(app) as ann, BrowserClient(app) as bob:
        a, b = form_fields(ann.get("/sheets/1").text), form_fields(bob.get("/sheets/1").text)
        ann.post("/sheets/1", data={**a, "action": "add:elements:valve"}, headers=HX)
        response = bob.post("/sheets/1", data={**b, "header.title": "Bob's title"}, headers=HX)
        assert response.status_code == 409
        assert 'class="reapply"' not in response.text and "Reload revision A.2" in _banner(response.text)
        assert "added a valve" in _banner(response.text)


def test_api_conflict_is_409_with_the_current_revision(client):
    doc = client.get("/api/sheets/1").json()["document"]
    client.put("/api/sheets/1", json={"document": {**doc, "header": {**doc["header"], "title": "A"}},
                                      "base_revision": 1})
    response = client.put("/api/sheets/1", json={"document": doc, "base_revision": 1})
    body = response.json()
    assert response.status_code == 409 and body["current_revision"] == 2
    assert "was changed after revision 1" in body["message"] and "reload" in body["message"]


def _api_editor(url: str, name: str, mutate, acked: list, refusals: list, stop: threading.Event) -> None:
    with httpx.Client(base_url=url, timeout=30) as http:
        i = 0
        while not stop.is_set():
            current = http.get("/api/sheets/1").json()
            doc = current["document"]
            mutate(doc, i)
            response = http.put("/api/sheets/1", json={"document": doc, "base_revision": current["revision"],
                                                       "author": name})
            if response.status_code == 200 and response.json()["added"]:
                acked.append((response.json()["revision"], digest_of(dump_document(doc)), name, i))
                i += 1
            else:
                refusals.append((response.status_code, response.json().get("message", "")))


def _form_editor(url: str, name: str, path: str, value, acked: list, refusals: list, stop: threading.Event) -> None:
    with httpx.Client(base_url=url, timeout=30) as http:
        fields = form_fields(http.get("/sheets/1").text)
        i = 0
        while not stop.is_set():
            fields[path] = value(i)
            fields["author"] = name
            response = http.post("/sheets/1", data=fields, headers={**HX, "X-CSRF-Token": fields["csrf_token"]})
            if response.status_code == 200:
                rev = int(re.search(r'id="base" value="(\d+)"', response.text).group(1))
                acked.append((rev, path, fields[path], name))
                fields["base"] = str(rev)
                i += 1
            else:
                refusals.append((response.status_code, _banner(response.text) if response.status_code == 409 else ""))
                fields = form_fields(http.get("/sheets/1").text)  # reload, as the banner offers


def _run(threads, seconds: float, done, limit: float = 30.0) -> None:
    """Let the editors race for ``seconds``, and on until ``done()`` (both have saved and one was refused),
    for at most ``limit`` seconds more: on a loaded machine 2.5 s may hold too few posts to collide."""
    for t in threads:
        t.start()
    time.sleep(seconds)
    end = time.monotonic() + limit
    while time.monotonic() < end and not done():
        time.sleep(0.1)


def test_two_api_clients_in_a_tight_loop_lose_no_update(app):
    acked: list = []
    refusals: list = []
    stop = threading.Event()

    def ann(doc, i):
        doc["elements"][0]["length"] = f"{100 + i} ft"

    def bob(doc, i):
        doc["header"]["title"] = f"Bob {i}"

    with LiveServer(app) as live:
        threads = [threading.Thread(target=_api_editor, args=(live.url, n, f, acked, refusals, stop))
                   for n, f in (("ann", ann), ("bob", bob))]
        try:
            # acked holds (revision, digest, name, i)
            _run(threads, 2.5, lambda: refusals and {a[2] for a in acked} == {"ann", "bob"})
        finally:
            stop.set()
            for t in threads:
                t.join()
    store = app.state.store
    revisions = {r.number: r for r in store.revisions(1)}
    assert len({n for n, _, _, _ in acked}) == len(acked)
    assert len(revisions) == len(acked) + 1  # every acknowledged edit is one revision, and nothing else
    for number, digest, _, _ in acked:
        assert revisions[number].digest == digest  # stored exactly as sent
    # Each edit was made on top of the other's: every revision holds both editors' latest values.
    last = {"ann": None, "bob": None}
    for number in sorted(revisions)[1:]:
        doc = revisions[number].document
        who = next(name for n, _, name, _ in acked if n == number)
        i = next(i for n, _, _, i in acked if n == number)
        last[who] = i
        if last["ann"] is not None:
            assert doc["elements"][0]["length"] == f"{100 + last['ann']} ft"
        if last["bob"] is not None:
            assert doc["header"]["title"] == f"Bob {last['bob']}"
    assert all(status == 409 and "reload" in message for status, message in refusals)
    assert {name for _, _, name, _ in acked} == {"ann", "bob"}
    FIGURES["concurrency (API): edits acknowledged"] += len(acked)
    FIGURES["concurrency (API): conflicts refused with 409"] += len(refusals)


def test_two_browsers_posting_the_form_in_a_tight_loop_lose_no_update(app):
    acked: list = []
    refusals: list = []
    stop = threading.Event()
    with LiveServer(app) as live:
        threads = [
            threading.Thread(target=_form_editor, args=(live.url, "ann", "elements.0.length", lambda i: f"{200 + i} ft",
                                                        acked, refusals, stop)),
            threading.Thread(target=_form_editor, args=(live.url, "bob", "header.project", lambda i: f"Bob {i}",
                                                        acked, refusals, stop)),
        ]
        try:
            # acked holds (revision, path, value, name)
            _run(threads, 2.5, lambda: refusals and {a[3] for a in acked} == {"ann", "bob"})
        finally:
            stop.set()
            for t in threads:
                t.join()
    revisions = {r.number: r for r in app.state.store.revisions(1)}
    assert len(revisions) == len(acked) + 1
    for number, path, value, name in acked:
        doc = revisions[number].document
        node = doc
        for part in path.split("."):
            node = node[int(part)] if part.isdigit() else node[part]
        assert node == value, (number, path)
        assert revisions[number].author == name
    assert refusals and all(status == 409 and "Revision" in words and "Reload" in words for status, words in refusals)
    FIGURES["concurrency (forms): edits acknowledged"] += len(acked)
    FIGURES["concurrency (forms): conflicts refused with 409"] += len(refusals)
