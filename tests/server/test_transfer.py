"""Export and import of a sheet with its history and signatures, and backup of the store while it is written to."""

from __future__ import annotations

import json
import sqlite3
import threading

import pytest
from linetools import gravity_line
from servertools import FIGURES, PASSWORD, BrowserClient, account_for, form_fields

from calc.model import sheet as calc_sheet
from server import transfer
from server.cli import main as headsheet
from server.store import DB_NAME, Store


def _history(client, sheet_id: int) -> list[dict]:
    out = []
    for r in reversed(client.get(f"/api/sheets/{sheet_id}/revisions").json()["revisions"]):
        full = client.get(f"/api/sheets/{sheet_id}/revisions/{r['number']}").json()
        out.append({k: full[k] for k in ("number", "created", "author", "note", "base", "frozen", "digest", "document")})
    return out


def _signatures(client, sheet_id: int, number: int) -> list:
    return client.get(f"/api/sheets/{sheet_id}/revisions/{number}/record").json()["signatures"]


@pytest.fixture
def worked(client) -> int:
    """A sheet with three revisions by two people, the second signed by preparer and checker."""
    doc = gravity_line()
    doc["header"]["title"] = "Exported line — ünïcode, 6 in"
    sheet_id = client.post("/api/sheets", json={"document": doc, "author": "Ann", "note": "first"}).json()["id"]
    doc["header"]["project"] = "Second"
    client.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": 1, "author": "Bob"})
    for role, name in (("preparer", "Bob"), ("checker", "Cy")):
        signed = client.post(f"/api/sheets/{sheet_id}/revisions/2/signatures",
                             json={"role": role, "login": account_for(client.app, name), "password": PASSWORD})
        assert signed.status_code == 201, signed.text
    doc["elements"][0]["length"] = "321 m"
    client.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": 2, "author": "Ann"})
    return sheet_id


def test_export_and_import_keep_every_revision_and_signature(client, app, worked):
    raw = client.get(f"/sheets/{worked}/export.json")
    assert raw.status_code == 200
    assert raw.headers["content-disposition"] == f'attachment; filename="headsheet-sheet-{worked}.json"'
    data = raw.json()
    assert data["format"] == transfer.FORMAT and data["version"] == 1 and data["checksum"].startswith("sha256:")
    assert [r["number"] for r in data["revisions"]] == [1, 2, 3]
    sheets_before = len(client.get("/api/sheets").json()["sheets"])
    new_id = transfer.import_sheet(app.state.store, raw.content)
    assert new_id != worked
    assert len(client.get("/api/sheets").json()["sheets"]) == sheets_before + 1
    assert _history(client, new_id) == _history(client, worked)
    words = lambda sigs: [{k: s[k] for k in ("role", "name", "initials", "login", "comment", "signed")}  # noqa: E731
                          for s in sigs]
    assert words(_signatures(client, new_id, 2)) == words(_signatures(client, worked, 2))
    # Made here, a signature is valid; imported, the same words are shown as imported, not as made here.
    assert [s["status"] for s in _signatures(client, worked, 2)] == ["valid", "valid"]
    assert [s["status"] for s in _signatures(client, new_id, 2)] == ["imported", "imported"]
    assert all("not made on this server" in s["identified"] for s in _signatures(client, new_id, 2))
    assert [s["role"] for s in _signatures(client, new_id, 2)] == ["preparer", "checker"]
    # The record of the imported revision has the same fingerprint as the original.
    fingerprint = lambda s: client.get(f"/api/sheets/{s}/revisions/2/record").json()["fingerprint"]  # noqa: E731
    assert fingerprint(new_id) == fingerprint(worked)
    # Importing again makes yet another sheet; nothing existing is touched.
    third = transfer.import_sheet(app.state.store, raw.content)
    assert third not in (worked, new_id) and _history(client, worked) == _history(client, third)


@pytest.mark.parametrize("tamper, says", [
    (lambda d: d["revisions"][1]["document"]["header"].update(project="edited by hand"), "checksum"),
    (lambda d: d.pop("revisions"), "checksum"),
    (lambda d: d.update(version=2), "newer Headsheet"),
    (lambda d: d.update(format="something-else"), "not a Headsheet sheet export"),
])
def test_an_altered_file_is_refused_and_says_why(app, client, worked, tamper, says):
    data = client.get(f"/sheets/{worked}/export.json").json()
    tamper(data)
    before = len(app.state.store.list_sheets())
    with pytest.raises(transfer.ImportRefused, match=says):
        transfer.import_sheet(app.state.store, json.dumps(data))
    assert len(app.state.store.list_sheets()) == before


@pytest.mark.parametrize("tamper, says", [
    (lambda d: d["revisions"][1]["document"]["header"].update(project="x"), "does not match its digest"),
    (lambda d: d["revisions"][1].update(number=5), "numbered 1, 2, 3"),
    (lambda d: d["revisions"][1].update(frozen=False), "signed but not frozen"),
    (lambda d: d["signatures"].append(dict(d["signatures"][0])), "once per revision"),
    (lambda d: d["revisions"][0].update(document=[]), "must be a sheet document"),
    (lambda d: d["revisions"][0].update(author=5), "'author' must be text"),
    (lambda d: d["signatures"][0].update(number=99), "names no revision"),
    (lambda d: d.update(revisions=[]), "no revisions"),
])
def test_a_file_consistent_in_its_checksum_but_wrong_inside_is_refused(app, client, worked, tamper, says):
    data = client.get(f"/sheets/{worked}/export.json").json()
    tamper(data)
    data["checksum"] = transfer.checksum(data)  # as if written by a faulty program, checksum and all
    with pytest.raises(transfer.ImportRefused, match=says):
        transfer.import_sheet(app.state.store, json.dumps(data))


@pytest.mark.parametrize("raw", [b"", b"{", b"[1]", b"\xff\xfe", b'{"format": NaN}', b"[" * 100_000, b"null",
                                 b'{"format": "headsheet-sheet-export", "version": 1, "n": 1e999}'])
def test_garbage_is_refused(app, raw):
    with pytest.raises(transfer.ImportRefused):
        transfer.import_sheet(app.state.store, raw)


def test_import_from_the_home_page(client, worked):
    body = client.get(f"/sheets/{worked}/export.json").content
    home = client.get("/").text
    assert 'enctype="multipart/form-data"' in home and 'name="file"' in home
    token = form_fields(home)["csrf_token"]
    response = client.post("/sheets/import", files={"file": ("sheet.json", body, "application/json")},
                           data={"csrf_token": token}, follow_redirects=False)
    assert response.status_code == 303
    new_id = int(response.headers["location"].rsplit("/", 1)[1])
    assert _history(client, new_id) == _history(client, worked)
    refused = client.post("/sheets/import", files={"file": ("x.json", b'{"format": "other"}', "application/json")},
                          data={"csrf_token": token})
    assert refused.status_code == 422 and "not a Headsheet sheet export" in refused.text
    assert "Nothing was imported" in refused.text
    nothing = client.post("/sheets/import", data={"csrf_token": token})
    assert nothing.status_code == 422 and "Choose" in nothing.text
    # The sheet's page links to its export.
    assert f'href="/sheets/{worked}/export.json"' in client.get(f"/sheets/{worked}").text
    assert f'href="/sheets/{worked}/export.json"' in client.get(f"/sheets/{worked}/history").text


def test_an_export_larger_than_a_form_may_be_but_within_the_import_limit_is_taken(client, app):
    doc = gravity_line()
    doc["elements"] = [dict(doc["elements"][0], label=f"run {i} " + "x" * 90) for i in range(calc_sheet.MAX_ELEMENTS)]
    store = app.state.store
    sheet_id = store.create_sheet(doc).sheet_id
    for n in range(1, 25):  # a long history: every revision carries its whole document
        doc["header"]["title"] = f"step {n}"
        store.add_revision(sheet_id, doc, n)
    body = client.get(f"/sheets/{sheet_id}/export.json").content
    assert len(body) > 1_000_000
    response = client.post("/sheets/import", files={"file": ("big.json", body, "application/json")},
                           follow_redirects=False)
    assert response.status_code == 303
    new_id = int(response.headers["location"].rsplit("/", 1)[1])
    assert store.latest(new_id).digest == store.latest(sheet_id).digest
    # A form post of that size is still refused: only the import takes large bodies.
    assert client.post("/sheets/1", data={"doc": body.decode()}).status_code == 413


def test_cli_export_import_and_backup(app, client, worked, data_dir, tmp_path, capsys):
    out = tmp_path / "sheet.json"
    assert headsheet(["export", "--data", str(data_dir), str(worked), str(out)]) == 0
    assert json.loads(out.read_text())["revisions"][0]["author"] == "Ann"
    with pytest.raises(SystemExit, match="exists"):
        headsheet(["export", "--data", str(data_dir), str(worked), str(out)])
    with pytest.raises(SystemExit, match="no sheet 999"):
        headsheet(["export", "--data", str(data_dir), "999", str(tmp_path / "none.json")])
    # Import into another store (a new one is made), twice: two new sheets, never an overwrite.
    other = tmp_path / "other"
    assert headsheet(["import", "--data", str(other), str(out)]) == 0
    assert headsheet(["import", "--data", str(other), str(out)]) == 0
    assert "as sheet 2" in capsys.readouterr().out
    store = Store(other)
    assert [s.id for s in store.list_sheets()] == [2, 1]
    assert [r.digest for r in store.revisions(1)] == [r.digest for r in app.state.store.revisions(worked)]
    broken = tmp_path / "broken.json"
    broken.write_text(out.read_text().replace('"Ann"', '"Anne"', 1))
    with pytest.raises(SystemExit, match="checksum"):
        headsheet(["import", "--data", str(other), str(broken)])
    backup = tmp_path / "copy.sqlite"
    assert headsheet(["backup", "--data", str(data_dir), str(backup)]) == 0
    with pytest.raises(SystemExit, match="exists"):
        headsheet(["backup", "--data", str(data_dir), str(backup)])
    copy = Store(tmp_path / "restored")
    copy.close()
    (tmp_path / "restored" / DB_NAME).write_bytes(backup.read_bytes())
    assert [r.digest for r in Store(tmp_path / "restored").revisions(worked)] == \
           [r.digest for r in app.state.store.revisions(worked)]


def test_backup_while_the_store_is_being_written_is_consistent(app, data_dir, tmp_path):
    store = app.state.store
    doc = gravity_line()
    sheet_id = store.create_sheet(doc).sheet_id
    stop = threading.Event()
    written = [1]

    def writer():
        n = 1
        while not stop.is_set():
            doc["header"]["purpose"] = f"edit {n}"
            store.add_revision(sheet_id, doc, n)
            n += 1
            written.append(n)

    thread = threading.Thread(target=writer)
    thread.start()
    try:
        copies = []
        for k in range(5):
            out = tmp_path / f"copy-{k}.sqlite"
            store.backup(out)
            copies.append(out)
    finally:
        stop.set()
        thread.join()
    assert len(written) > 5
    previous = 0
    for out in copies:
        assert not (tmp_path / f"{out.name}-wal").exists()  # one self-contained file
        con = sqlite3.connect(out)
        try:
            assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
            assert con.execute("PRAGMA journal_mode").fetchone()[0] == "delete"
            numbers = [n for (n,) in con.execute("SELECT number FROM revisions WHERE sheet_id = ? ORDER BY number",
                                                 (sheet_id,))]
        finally:
            con.close()
        # A snapshot: revisions 1..n with no gap, and each copy at least as new as the one before.
        assert numbers == list(range(1, len(numbers) + 1)) and len(numbers) >= previous
        previous = len(numbers)


def _reexport(client, sheet_id, change):
    """An export of ``sheet_id`` with its last revision's document changed and every digest made to match,
    as a faulty or hostile program would write it."""
    data = json.loads(client.get(f"/sheets/{sheet_id}/export.json").content)
    rev = data["revisions"][-1]
    change(rev["document"])
    rev["digest"] = transfer.digest_of(transfer.dump_document(rev["document"]))
    data["checksum"] = transfer.checksum(data)
    return data


def test_an_import_passes_the_same_limits_as_a_saved_sheet(app, client, worked):
    # 10,000 elements were once imported and drawn; the parser allows 200, as for any saved sheet.
    def many(doc):
        doc["elements"] = doc["elements"] * (400 // len(doc["elements"]) + 1)

    data = _reexport(client, worked, many)
    with pytest.raises(transfer.ImportRefused, match="does not pass the sheet's checks"):
        transfer.import_sheet(app.state.store, json.dumps(data))

    def junk(doc):  # a 90,000-item key nobody reads would be kept forever, since revisions are never deleted
        doc["junk"] = list(range(90_000))

    with pytest.raises(transfer.ImportRefused, match="larger than a sheet may be"):
        transfer.import_sheet(app.state.store, json.dumps(_reexport(client, worked, junk)))

    def small_junk(doc):  # a small unknown key is refused too: the parser knows every key a sheet has
        doc["header"]["colour"] = "red"

    with pytest.raises(transfer.ImportRefused, match="header.colour"):
        transfer.import_sheet(app.state.store, json.dumps(_reexport(client, worked, small_junk)))


def test_a_huge_number_in_an_import_is_refused_with_a_message_not_a_server_error(client, worked):
    body = client.get(f"/sheets/{worked}/export.json").content.replace(b'"count": 1', b'"count": 1e999', 1)
    token = form_fields(client.get("/").text)["csrf_token"]
    response = client.post("/sheets/import", files={"file": ("x.json", body, "application/json")},
                           data={"csrf_token": token})
    assert response.status_code == 422 and "too large to be finite" in response.text


def test_forged_signatures_in_an_import_are_never_shown_as_valid(client, app, worked):
    # The checksum is a plain digest anyone can recompute, so a file can say anything: a signature
    # typed into it shows as imported, and one whose fingerprint is not its revision's as broken.
    data = json.loads(client.get(f"/sheets/{worked}/export.json").content)
    data["signatures"][0].update(name="Chief Engineer", identified="password confirmed at signing")
    data["signatures"][1]["fingerprint"] = "ab" * 32
    data["checksum"] = transfer.checksum(data)
    forged = transfer.import_sheet(app.state.store, json.dumps(data))
    sigs = _signatures(client, forged, 2)
    assert [(s["name"], s["status"]) for s in sigs] == [("Chief Engineer", "imported"), ("Cy", "broken")]
    page = client.get(f"/sheets/{forged}/revisions/2/record").text
    assert "imported, not made on this server" in page and "broken: does not match this revision" in page
    assert "Not every signature above stands as sign-off" in page
    FIGURES["forged imported signatures flagged (imported or broken)"] += len(sigs)


def test_an_export_signed_by_a_trusted_installation_keeps_its_sign_off(tmp_path, capsys):
    # Two servers: A signs a revision fully and exports it; B imports it before and after trusting A.
    from server import cli
    from server.app import create_app

    a, b = create_app(tmp_path / "a"), create_app(tmp_path / "b")
    with BrowserClient(a) as ca, BrowserClient(b) as cb:
        sid = ca.post("/api/sheets", json={"document": gravity_line()}).json()["id"]
        for role, name in (("preparer", "Pia"), ("checker", "Chen"), ("approver", "Abe")):
            assert ca.post(f"/api/sheets/{sid}/revisions/1/signatures",
                           json={"role": role, "login": account_for(a, name), "password": PASSWORD}).status_code == 201
        raw = ca.get(f"/sheets/{sid}/export.json").content
        data = json.loads(raw)
        assert data["signature"].startswith("ed25519:") and transfer.signed_by(data) == data["installation"]["public_key"]
        first = transfer.import_sheet(b.state.store, raw)
        assert {s["status"] for s in _signatures(cb, first, 1)} == {"imported"}
        assert "signed by installation key" in _signatures(cb, first, 1)[0]["identified"]
        assert cli.main(["trust", "show", "--data", str(tmp_path / "a")]) == 0
        key = capsys.readouterr().out.split()[0]
        assert cli.main(["trust", "add", key, "--name", "Hill office", "--data", str(tmp_path / "b")]) == 0
        trusted = transfer.import_sheet(b.state.store, raw)
        sigs = _signatures(cb, trusted, 1)
        assert {s["status"] for s in sigs} == {"trusted"} and "Hill office" in sigs[0]["identified"]
        assert cb.get(f"/api/sheets/{trusted}/revisions/1/record").json()["signed"] is True
        # Changed after signing (a name, then the checksum recomputed): the installation's signature
        # no longer holds, so the file's signatures are shown as imported again.
        data["signatures"][0]["name"] = "Someone Grander"
        data["checksum"] = transfer.checksum(data)
        forged = transfer.import_sheet(b.state.store, json.dumps(data))
        assert {s["status"] for s in _signatures(cb, forged, 1)} == {"imported"}
        assert cb.get(f"/api/sheets/{forged}/revisions/1/record").json()["signed"] is False
    assert oct((tmp_path / "a" / transfer.KEY_FILE).stat().st_mode & 0o777) == "0o600"


def test_a_sheet_still_asking_for_values_exports_and_imports(client, app):
    # The pages store a blank sheet that asks for its values (calc.model.sheet.Missing); its export must
    # come back in, while a value refused (not merely not given yet) still refuses the file.
    response = client.post("/sheets", data={}, follow_redirects=False)
    assert response.status_code == 303
    sheet_id = int(response.headers["location"].rsplit("/", 1)[1])
    stored = client.get(f"/api/sheets/{sheet_id}").json()["document"]
    parsed = calc_sheet.parse(stored)
    assert parsed.requests and not parsed.mistakes
    raw = client.get(f"/sheets/{sheet_id}/export.json").content
    new_id = transfer.import_sheet(app.state.store, raw)
    assert _history(client, new_id) == _history(client, sheet_id)

    def refused(doc):
        doc["liquid"]["temperature"] = "hot"

    with pytest.raises(transfer.ImportRefused, match="does not pass the sheet's checks"):
        transfer.import_sheet(app.state.store, json.dumps(_reexport(client, sheet_id, refused)))
