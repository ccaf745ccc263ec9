"""The sheet store: append-only revisions, refusal of stale edits, seeding once, and survival across reopening."""

from __future__ import annotations

import sqlite3

import pytest
from linetools import gravity_line

from server.store import DB_NAME, SheetNotFound, StaleRevision, Store, dump_document


def _doc(title: str) -> dict:
    doc = gravity_line()
    doc["header"]["title"] = title
    return doc


def test_create_and_read_back(tmp_path):
    store = Store(tmp_path)
    rev = store.create_sheet(_doc("Line A"), note="first")
    assert (rev.number, rev.base) == (1, None)
    assert store.latest(rev.sheet_id).document == _doc("Line A")
    summary = store.sheet(rev.sheet_id)
    assert (summary.title, summary.revision, summary.archived) == ("Line A", 1, False)


def test_revisions_append_and_never_change(tmp_path):
    store = Store(tmp_path)
    first = store.create_sheet(_doc("v1"))
    second, added = store.add_revision(first.sheet_id, _doc("v2"), base=1, note="retitled")
    assert added and second.number == 2 and second.base == 1
    third, added = store.add_revision(first.sheet_id, _doc("v3"), base=2)
    assert [r.number for r in store.revisions(first.sheet_id)] == [3, 2, 1]
    # The earlier states are still there, word for word.
    assert store.revision(first.sheet_id, 1).document_json == dump_document(_doc("v1"))
    assert store.revision(first.sheet_id, 2).document["header"]["title"] == "v2"
    assert third.number == 3


def test_stale_base_is_refused_and_stores_nothing(tmp_path):
    store = Store(tmp_path)
    first = store.create_sheet(_doc("v1"))
    store.add_revision(first.sheet_id, _doc("v2"), base=1)
    with pytest.raises(StaleRevision) as caught:
        store.add_revision(first.sheet_id, _doc("someone else's"), base=1)
    assert caught.value.current.number == 2
    assert "revision 2" in str(caught.value)
    assert [r.number for r in store.revisions(first.sheet_id)] == [2, 1]


def test_same_document_adds_no_revision(tmp_path):
    store = Store(tmp_path)
    first = store.create_sheet(_doc("v1"))
    again, added = store.add_revision(first.sheet_id, _doc("v1"), base=1)
    assert not added and again.number == 1


def test_database_refuses_rewriting_or_deleting_history(tmp_path):
    store = Store(tmp_path)
    first = store.create_sheet(_doc("v1"))
    con = sqlite3.connect(tmp_path / DB_NAME, isolation_level=None)
    try:
        for sql in ("UPDATE revisions SET document = '{}'", "UPDATE revisions SET note = 'x'",
                    "DELETE FROM revisions", "DELETE FROM sheets"):
            with pytest.raises(sqlite3.DatabaseError):
                con.execute(sql)
        # Freezing (for sign-off, a later issue) is the one change allowed, and only one way.
        con.execute("UPDATE revisions SET frozen = 1 WHERE sheet_id = ?", (first.sheet_id,))
        with pytest.raises(sqlite3.DatabaseError):
            con.execute("UPDATE revisions SET frozen = 0")
    finally:
        con.close()
    assert store.latest(first.sheet_id).frozen
    assert store.latest(first.sheet_id).document == _doc("v1")


def test_write_ahead_log_and_full_sync(tmp_path):
    Store(tmp_path)
    con = sqlite3.connect(tmp_path / DB_NAME)
    try:
        assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
    finally:
        con.close()


def test_seed_once_only(tmp_path):
    store = Store(tmp_path)
    assert len(store.seed_once([("a", _doc("A")), ("b", _doc("B"))])) == 2
    assert store.seed_once([("a", _doc("A"))]) == []
    # A reopened store remembers it was seeded, even after every sheet is archived.
    for s in store.list_sheets():
        store.set_archived(s.id, True)
    assert Store(tmp_path).seed_once([("a", _doc("A"))]) == []
    assert len(Store(tmp_path).list_sheets(archived=True)) == 2


def test_archive_and_restore(tmp_path):
    store = Store(tmp_path)
    a = store.create_sheet(_doc("A"))
    b = store.create_sheet(_doc("B"))
    store.set_archived(a.sheet_id, True)
    assert [s.id for s in store.list_sheets()] == [b.sheet_id]
    assert [s.id for s in store.list_sheets(archived=True)] == [a.sheet_id]
    store.set_archived(a.sheet_id, False)
    assert {s.id for s in store.list_sheets()} == {a.sheet_id, b.sheet_id}


def test_list_is_most_recent_change_first(tmp_path):
    store = Store(tmp_path)
    a = store.create_sheet(_doc("A"))
    b = store.create_sheet(_doc("B"))
    store.add_revision(a.sheet_id, _doc("A2"), base=1)
    assert [s.title for s in store.list_sheets()] == ["A2", "B"]
    assert b.sheet_id != a.sheet_id


def test_survives_reopening_byte_for_byte(tmp_path):
    doc = _doc("Ünïcode — kept as typed: 150 mm, 6 in, 12 °C")
    rev = Store(tmp_path).create_sheet(doc)
    again = Store(tmp_path).latest(rev.sheet_id)
    assert again.document_json == rev.document_json
    assert again.digest == rev.digest


@pytest.mark.parametrize("bad_id", [0, -1, 2**63, 10**30])
def test_ids_out_of_range_are_not_found(tmp_path, bad_id):
    store = Store(tmp_path)
    with pytest.raises(SheetNotFound):
        store.latest(bad_id)
    with pytest.raises(SheetNotFound):
        store.revision(1, bad_id)
    with pytest.raises(SheetNotFound):
        store.add_revision(bad_id, _doc("x"), base=1)


def test_missing_sheet(tmp_path):
    store = Store(tmp_path)
    for call in (lambda: store.latest(5), lambda: store.sheet(5), lambda: store.revisions(5),
                 lambda: store.set_archived(5, True), lambda: store.add_revision(5, _doc("x"), 1)):
        with pytest.raises(SheetNotFound):
            call()
