"""Revisions that mean something: a burst of edits by one person is one revision (until a pause, another
person's edit or a sign-off), named in one numbering (A.1, A.2… then A once signed, then B.1) on the
page, the history, the comparison and the record; every save is still kept (append-only)."""

from __future__ import annotations

import sqlite3
from datetime import datetime, timedelta, timezone

import pytest
from servertools import HX, BrowserClient, form_fields

from server import revisions, transfer
from server import store as store_module
from server.store import Store
from server.store_accounts import Account

DOC = {"header": {"title": "t"}, "elements": []}  # the store keeps any JSON; the sheet parser is not involved


class Clock:
    """The store's clock, moved by hand, so the pause between saves is exact."""

    def __init__(self):
        self.t = datetime(2026, 12, 3, 9, 0, tzinfo=timezone.utc)

    def __call__(self) -> str:
        return self.t.isoformat(timespec="milliseconds")

    def wait(self, seconds: float) -> None:
        self.t += timedelta(seconds=seconds)


@pytest.fixture
def clock(monkeypatch):
    c = Clock()
    monkeypatch.setattr(store_module, "_now", c)
    return c


def _save(store, sid, title, editor="browser-1", author="Ann"):
    latest = store.latest(sid)
    return store.add_revision(sid, {**DOC, "header": {"title": title}}, latest.number, author, f"set {title}",
                              editor=editor)[0]


def _labels(store, sid):
    return [(g.label, [m.number for m in g.saves]) for g in revisions.group(store.marks(sid))]


def test_a_burst_by_one_person_is_one_revision_until_a_pause_another_person_or_a_signature(tmp_path, clock):
    store = Store(tmp_path)
    sid = store.create_sheet(DOC, "Ann", "created").sheet_id   # created outside the form: its own revision
    for i in range(4):
        clock.wait(20)
        _save(store, sid, f"typing {i}")
    assert _labels(store, sid) == [("A.1", [1]), ("A.2", [2, 3, 4, 5])]
    clock.wait(revisions.PAUSE - 1)  # just inside the pause: still the same revision
    _save(store, sid, "after a think")
    clock.wait(revisions.PAUSE + 1)  # a longer pause starts the next revision
    _save(store, sid, "after lunch")
    clock.wait(5)
    _save(store, sid, "Bob's edit", editor="browser-2", author="Bob")  # another person
    clock.wait(5)
    _save(store, sid, "Ann again")  # and Ann after him is a new revision again
    assert _labels(store, sid) == [("A.1", [1]), ("A.2", [2, 3, 4, 5, 6]), ("A.3", [7]), ("A.4", [8]), ("A.5", [9])]
    # Same browser, another name typed in the author field: another person as far as anyone can tell.
    clock.wait(5)
    _save(store, sid, "renamed", author="Ann B.")
    assert _labels(store, sid)[-1] == ("A.6", [10])


def test_a_signature_ends_the_revision_and_issues_it(tmp_path, clock):
    store = Store(tmp_path)
    sid = store.create_sheet(DOC, "Ann", "created").sheet_id
    clock.wait(10)
    last = _save(store, sid, "ready")
    signer = Account(1, "ann", "Ann Example", "AE", ("preparer",), False, "", "test", None)
    store.sign(sid, last.number, "preparer", signer, "", "fp", "v", "valid")
    clock.wait(10)
    _save(store, sid, "after the issue")  # same person, seconds later: but A is signed, so B.1 begins
    clock.wait(10)
    _save(store, sid, "more")
    assert _labels(store, sid) == [("A.1", [1]), ("A", [2]), ("B.1", [3, 4])]
    groups = revisions.group(store.marks(sid), "numbers")
    assert [g.label for g in groups] == ["0.1", "0", "1.1"]
    assert revisions.save_label(groups, 3) == "1.1 (save 1 of 2)" and revisions.save_label(groups, 4) == "1.1"


def test_saves_without_an_editor_never_join_and_every_save_is_kept(tmp_path, clock):
    store = Store(tmp_path)
    sid = store.create_sheet(DOC).sheet_id
    for i in range(3):
        clock.wait(1)
        _save(store, sid, f"api {i}", editor="")  # the API, a restore, an import
    assert _labels(store, sid) == [("A.1", [1]), ("A.2", [2]), ("A.3", [3]), ("A.4", [4])]
    assert [r.number for r in store.revisions(sid)] == [4, 3, 2, 1]


def test_the_grouping_is_fixed_when_stored(tmp_path, clock):
    store = Store(tmp_path)
    sid = store.create_sheet(DOC).sheet_id
    clock.wait(1)
    _save(store, sid, "x")
    con = sqlite3.connect(store.path)
    for sql in ("UPDATE revisions SET joins = 1 WHERE number = 2", "UPDATE revisions SET editor = 'x'"):
        with pytest.raises(sqlite3.IntegrityError, match="append-only"):
            con.execute(sql)
    con.close()


def test_a_store_from_before_grouping_gains_the_columns_and_reads_each_save_as_a_revision(tmp_path):
    store = Store(tmp_path)
    sid = store.create_sheet(DOC).sheet_id
    store.add_revision(sid, {**DOC, "header": {"title": "2"}}, 1)
    store.close()
    con = sqlite3.connect(tmp_path / store_module.DB_NAME)
    con.execute("DROP TRIGGER revisions_grouping_fixed")
    con.execute("ALTER TABLE revisions DROP COLUMN joins")
    con.execute("ALTER TABLE revisions DROP COLUMN editor")
    con.commit()
    con.close()
    again = Store(tmp_path)
    assert _labels(again, sid) == [("A.1", [1]), ("A.2", [2])]


# -- through the pages -------------------------------------------------------------------------------

def _post(client, sid, field, value):
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    fields[field] = value
    response = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert response.status_code == 200, response.text[:400]
    return response


def test_typing_in_one_browser_makes_one_revision_and_another_browser_the_next(app):
    with BrowserClient(app) as ann, BrowserClient(app) as bob:
        for title in ("First", "Second", "Third"):
            _post(ann, 1, "header.title", title)
        page = ann.get("/sheets/1").text
        assert "Revision A.2, last changed" in page and 'data-save="4"' in page
        _post(bob, 1, "header.project", "Bob's project")
        history = ann.get("/sheets/1/history")
        rows = [(r["group"].label, len(r["group"].saves)) for r in history.context["rows"]]
        assert rows == [("A.3", 1), ("A.2", 3), ("A.1", 1)]
        text = history.text
        assert "3 saves since" in text and "Record of revision A.2" in text
        # Compare is one click from the history: each revision against the one before it.
        assert "/sheets/1/compare?a=4&amp;b=5" in text and 'class="compare-pick"' in text
        compare = ann.get("/sheets/1/compare", params={"a": 4, "b": 5})
        assert compare.status_code == 200 and "Revision A.2 against revision A.3" in compare.text
        assert [c["where"] for c in compare.context["changes"]] == ["header › project"]
        # A save inside a revision (from its address) is named as such.
        inside = ann.get("/sheets/1/revisions/2")
        assert inside.status_code == 200 and "Revision A.2 (save 1 of 3)" in inside.text


def test_moving_an_element_compares_as_one_change_with_its_words(client, sheet_form):
    fields = sheet_form(1)
    fields["header.title"] = "Before the move"
    client.post("/sheets/1", data=fields, headers=HX)  # the form gives the elements their ids
    before = client.get("/api/sheets/1").json()
    ids = [e["id"] for e in before["document"]["elements"]]
    assert len(ids) == len(set(ids)) >= 2 and all(ids)
    fields = sheet_form(1)
    fields["action"] = "up:elements.1"
    moved = client.post("/sheets/1", data=fields, headers=HX)
    assert moved.status_code == 200, moved.text[:300]
    after = client.get("/api/sheets/1").json()
    assert [e["id"] for e in after["document"]["elements"]][:2] == [ids[1], ids[0]]  # ids travel with elements
    compare = client.get("/sheets/1/compare", params={"a": before["revision"], "b": after["revision"]})
    changes = compare.context["changes"]
    assert len(changes) == 1 and "moved to position" in changes[0]["after"], changes
    assert "elements." in changes[0]["path"] and "<code>" not in compare.text


def test_the_api_names_each_save_as_the_pages_do(client, sheet_form):
    for title in ("One", "Two"):
        fields = sheet_form(1)
        fields["header.title"] = title
        client.post("/sheets/1", data=fields, headers=HX)
    listed = client.get("/api/sheets/1/revisions").json()["revisions"]
    assert [(r["number"], r["label"]) for r in listed] == [(3, "A.2"), (2, "A.2 (save 1 of 2)"), (1, "A.1")]
    assert client.get("/api/sheets/1/revisions/3").json()["label"] == "A.2"


def test_an_export_carries_the_grouping_so_the_import_names_revisions_alike(app):
    with BrowserClient(app) as ann:
        for title in ("One", "Two", "Three"):
            _post(ann, 1, "header.title", title)
        before = [r["label"] for r in ann.get("/api/sheets/1/revisions").json()["revisions"]]
        exported = ann.get("/sheets/1/export.json")
        assert exported.status_code == 200 and [r["joins"] for r in exported.json()["revisions"]] == [
            False, False, True, True]
        new_id = transfer.import_sheet(app.state.store, exported.content)
        after = [r["label"] for r in ann.get(f"/api/sheets/{new_id}/revisions").json()["revisions"]]
        assert after == before == ["A.2", "A.2 (save 2 of 3)", "A.2 (save 1 of 3)", "A.1"]
