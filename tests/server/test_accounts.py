"""Signatures are a person's own act: accounts with Argon2id-hashed passwords, confirmed at each signature.

The attacks from the issue, each reproduced: anyone signing under any name, the preparer and
checker told apart by a string compare ('A. Smith' against 'A Smith'), a read-only link signing as
anyone. Password hashing is Argon2id (RFC 9106) through argon2-cffi; the tests lower its cost.
"""

from __future__ import annotations

import sqlite3

import pytest
from linetools import gravity_line
from servertools import FIGURES, PASSWORD, BrowserClient, account_for, form_fields

from server import cli
from server.store import DB_NAME

LOCAL = ("127.0.0.1", 50123)


def _sheet(client) -> int:
    return client.post("/api/sheets", json={"document": gravity_line()}).json()["id"]


def _sign(client, sheet_id, role, login, password=PASSWORD, number=1):
    return client.post(f"/api/sheets/{sheet_id}/revisions/{number}/signatures",
                       json={"role": role, "login": login, "password": password})


def test_signing_without_identity_is_refused(client):
    sid = _sheet(client)
    # The old way: a typed name and nothing else.
    typed = client.post(f"/api/sheets/{sid}/revisions/1/signatures", json={"role": "preparer", "name": "A. Smith"})
    assert typed.status_code == 422
    none_yet = _sign(client, sid, "preparer", "asmith")
    assert none_yet.status_code == 409 and "needs an account" in none_yet.json()["message"]
    account_for(client.app, "A Smith")
    wrong = _sign(client, sid, "preparer", "a-smith", "a wrong pass phrase")
    assert wrong.status_code == 401
    nobody = _sign(client, sid, "preparer", "no-such-person")
    assert nobody.status_code == 401 and nobody.json()["message"] == wrong.json()["message"]
    assert client.get(f"/api/sheets/{sid}/revisions/1/record").json()["signatures"] == []
    FIGURES["signatures without identity refused"] += 3


def test_the_same_account_cannot_sign_twice_under_another_spelling(client):
    sid = _sheet(client)
    login = account_for(client.app, "A. Smith")
    assert _sign(client, sid, "preparer", login).status_code == 201
    again = _sign(client, sid, "checker", login.upper())  # logins compare without case
    assert again.status_code == 422 and "three different people" in again.json()["message"]
    other = account_for(client.app, "A Smith", login="asmith2")  # another account, however alike the name
    assert other != login and _sign(client, sid, "checker", other).status_code == 201
    sigs = client.get(f"/api/sheets/{sid}/revisions/1/record").json()["signatures"]
    assert [(s["login"], s["status"]) for s in sigs] == [(login, "valid"), (other, "valid")]
    assert "password confirmed at signing" in sigs[0]["identified"]


def test_an_account_signs_only_in_its_roles_and_not_once_disabled(client, app):
    sid = _sheet(client)
    checker_only = account_for(app, "Cat Checker", roles=("checker",))
    refused = _sign(client, sid, "preparer", checker_only)
    assert refused.status_code == 403 and "not as preparer" in refused.json()["message"]
    prep = account_for(app, "Pat Preparer")
    assert _sign(client, sid, "preparer", prep).status_code == 201
    assert cli.main(["accounts", "disable", checker_only, "--data", str(app.state.store.data_dir)]) == 0
    gone = _sign(client, sid, "checker", checker_only)
    assert gone.status_code == 403 and "disabled" in gone.json()["message"]


def test_wrong_passwords_are_limited_per_client_and_account(client, app):
    sid = _sheet(client)
    login = account_for(app, "Guessed Person")
    for _ in range(5):
        assert _sign(client, sid, "preparer", login, "wrong wrong wrong").status_code == 401
    limited = _sign(client, sid, "preparer", login)  # even the right password waits now
    assert limited.status_code == 429 and "wait" in limited.json()["message"]
    assert _sign(client, sid, "preparer", account_for(app, "Someone Else")).status_code == 201


def test_passwords_are_kept_only_as_argon2id_hashes(client, app, data_dir):
    account_for(app, "Hash Person")
    with sqlite3.connect(data_dir / DB_NAME) as con:
        (stored,) = con.execute("SELECT password FROM accounts WHERE login = 'hash-person'").fetchone()
    assert stored.startswith("$argon2id$") and PASSWORD not in stored
    listed = client.get("/api/accounts").json()["accounts"]
    assert listed and all("password" not in a for a in listed) and "$argon2" not in str(listed)


def test_the_first_account_is_made_only_from_this_computer(app):
    new = {"login": "first", "name": "First Person", "initials": "FP", "roles": ["preparer"], "password": PASSWORD}
    with BrowserClient(app) as remote:  # the test client's address is not a loopback one
        assert remote.post("/api/accounts", json=new).status_code == 403
    with BrowserClient(app, client=LOCAL) as local:
        made = local.post("/api/accounts", json=new)
        assert made.status_code == 201 and made.json()["admin"] is True
        # Now an administrator confirms each new account, even from this computer.
        second = {**new, "login": "second", "name": "Second Person"}
        assert local.post("/api/accounts", json=second).status_code == 422
        assert local.post("/api/accounts", json={**second, "admin_login": "first",
                                                 "admin_password": "not it at all"}).status_code == 401
        ok = local.post("/api/accounts", json={**second, "admin_login": "first", "admin_password": PASSWORD})
        assert ok.status_code == 201 and ok.json()["created_by"] == "first"
        third = {**new, "login": "third", "name": "Third", "admin_login": "second", "admin_password": PASSWORD}
        assert local.post("/api/accounts", json=third).status_code == 403, "second is not an administrator"


def test_the_accounts_page_adds_an_account_and_keeps_typed_values_on_an_error(app):
    with BrowserClient(app, client=LOCAL) as local:
        page = local.get("/accounts")
        assert page.status_code == 200 and "Make the first account" in page.text
        fields = form_fields(page.text)
        fields.update(login="lead", name="Lee Lead", initials="LL", password="short", roles_checker="1")
        short = local.post("/accounts", data=fields)
        assert short.status_code == 422 and "at least 10 characters" in short.text
        assert 'value="Lee Lead"' in short.text and "short" not in form_fields(short.text).get("password", "")
        fields["password"] = PASSWORD
        made = local.post("/accounts", data=fields)
        assert made.status_code == 200 and "Account &#39;lead&#39; (Lee Lead) added" in made.text
        assert "<code>lead</code> (administrator)" in made.text


def test_cli_adds_lists_and_resets_accounts(app, data_dir, capsys, monkeypatch):
    import io

    monkeypatch.setattr("sys.stdin", io.StringIO(PASSWORD + "\n"))
    assert cli.main(["accounts", "add", "Mo", "--name", "Mo Approver", "--initials", "MA", "--roles",
                     "checker,approver", "--admin", "--password-stdin", "--data", str(data_dir)]) == 0
    assert cli.main(["accounts", "list", "--data", str(data_dir)]) == 0
    out = capsys.readouterr().out
    assert "mo" in out and "checker, approver" in out and "administrator" in out
    with BrowserClient(app) as client:
        sid = _sheet(client)
        assert _sign(client, sid, "preparer", account_for(app, "Pat")).status_code == 201
        assert _sign(client, sid, "checker", "mo").status_code == 201


def test_a_signature_made_before_accounts_shows_as_typed(client, app, data_dir):
    sid = _sheet(client)
    fingerprint = client.get(f"/api/sheets/{sid}/revisions/1/record").json()["fingerprint"]
    with sqlite3.connect(data_dir / DB_NAME) as con:  # as an earlier version stored it
        con.execute("UPDATE revisions SET frozen = 1 WHERE sheet_id = ?", (sid,))
        con.execute("INSERT INTO signatures (sheet_id, number, role, name, comment, signed, fingerprint) "
                    "VALUES (?, 1, 'preparer', 'Old Hand', '', '2026-01-01T00:00+00:00', ?)", (sid, fingerprint))
    (sig,) = client.get(f"/api/sheets/{sid}/revisions/1/record").json()["signatures"]
    assert sig["status"] == "typed" and "not confirmed" in sig["identified"]
    page = client.get(f"/sheets/{sid}/revisions/1/record").text
    assert "name typed, identity not confirmed" in page


@pytest.mark.parametrize("field,value,says", [
    ("login", "x", "2 to 40 characters"), ("initials", "12", "letters"), ("roles", [], "at least one role")])
def test_a_new_account_with_a_bad_field_says_which(app, field, value, says):
    new = {"login": "okname", "name": "Ok", "initials": "OK", "roles": ["checker"], "password": PASSWORD,
           field: value}
    with BrowserClient(app, client=LOCAL) as local:
        refused = local.post("/api/accounts", json=new)
    assert refused.status_code == 422 and says in refused.json()["message"]
    assert refused.json()["errors"][0]["path"] == field
