"""Share mode: without the access key nothing but the key page is served, on every route; with it, everything is."""

from __future__ import annotations

import re
from pathlib import Path

import pytest
from servertools import FIGURES, BrowserClient, fill, route_table

from server.access import Attempts, normalise_key, same_key
from server.app import STATIC, create_app

with __import__("warnings").catch_warnings():
    __import__("warnings").simplefilter("ignore")
    from fastapi.testclient import TestClient

OPEN = {"/key", "/static/css/headsheet.css", "/static/favicon.svg"}


@pytest.fixture
def shared(data_dir):
    return create_app(data_dir, share=True)


@pytest.fixture
def key(shared) -> str:
    return shared.state.sharing.keys.read()


def _static_files() -> list[str]:
    return sorted("/static/" + p.relative_to(STATIC).as_posix() for p in STATIC.rglob("*") if p.is_file())


def _requests(app) -> list[tuple[str, str]]:
    """Every route with sample values, every static file, and the record and PDF of a real revision."""
    out = [(m, fill(p)) for m, p in route_table(app)]
    out += [("GET", f) for f in _static_files()]
    out += [("GET", "/sheets/1/revisions/1/record.pdf?paper=letter"), ("GET", "/nowhere"), ("GET", "/api/nowhere"),
            ("DELETE", "/api/sheets/1"), ("GET", "/sheets/1/export.json")]
    return out


def _refused(response, method: str, path: str) -> None:
    assert response.status_code in (303, 401), (method, path, response.status_code)
    if response.status_code == 303:
        assert response.headers["location"].startswith("/key?next="), (method, path)
    else:
        assert "Access key" in response.text or "access key" in response.text
    for secret in ("Hollins Mill", "HM-CW-207", "htmx.org", "<svg", "<script"):  # nothing of sheets or assets
        assert secret not in response.text, (method, path, secret)


def test_without_the_key_every_route_static_file_record_and_pdf_is_refused(shared):
    requests = _requests(shared)
    assert len(requests) > 40
    with TestClient(shared, follow_redirects=False) as anyone:
        served = set()
        for method, path in requests:
            base = path.split("?")[0]
            body = {"json": {"document": {}}} if base.startswith("/api/") else {"data": {"x": "1"}}
            response = anyone.request(method, path, **(body if method != "GET" else {}))
            if base in OPEN and method == "GET":
                assert response.status_code == 200, path
                served.add(base)
                continue
            if base.startswith("/view/"):  # not a working read-only link: nothing but that is said
                assert response.status_code == 404 and "does not work" in response.text
                continue
            if (method, base) == ("POST", "/key"):  # open, but only with the key page's own form token
                assert response.status_code == 403 and "form token" in response.text
                continue
            _refused(response, method, path)
        # The only things served without the key: the key page, its stylesheet and its icon.
        assert served == OPEN
        # Nothing was changed by any of those posts.
        assert len(shared.state.store.list_sheets()) == 4 and shared.state.store.latest(1).number == 1
    FIGURES["share mode: requests refused without the key"] += len(requests) - 5


def test_the_api_answers_401_json_and_pages_send_the_browser_to_the_key_page(shared):
    with TestClient(shared, follow_redirects=False) as anyone:
        api = anyone.get("/api/sheets")
        assert api.status_code == 401 and api.headers["content-type"].startswith("application/json")
        assert api.json()["ok"] is False and "X-Headsheet-Key" in api.json()["message"]
        page = anyone.get("/sheets/1/history?x=1")
        assert page.status_code == 303 and page.headers["location"] == "/key?next=%2Fsheets%2F1%2Fhistory%3Fx%3D1"
        key_page = anyone.get(page.headers["location"])
        assert key_page.status_code == 200 and 'type="password"' in key_page.text
        assert 'name="next" value="/sheets/1/history?x=1"' in key_page.text
        # The key page loads nothing that needs the key.
        for url in re.findall(r'<(?:link|script|img)[^>]*(?:href|src)="([^"]*)"', key_page.text):
            assert url.split("?")[0] in OPEN, url


def test_the_key_page_sets_a_cookie_that_keeps_the_key(shared, key):
    with TestClient(shared, follow_redirects=False) as browser:
        page = browser.get("/key", params={"next": "/sheets/2"}).text
        token = re.search(r'name="csrf_token" value="([^"]+)"', page).group(1)
        wrong = browser.post("/key", data={"key": "not-the-key", "next": "/sheets/2", "csrf_token": token})
        assert wrong.status_code == 401 and "not the access key" in wrong.text
        # Typed with other case, spaces and dashes, it is the same key.
        typed = " " + key.upper().replace("-", " ") + " "
        right = browser.post("/key", data={"key": typed, "next": "/sheets/2", "csrf_token": token})
        assert right.status_code == 303 and right.headers["location"] == "/sheets/2"
        cookie = right.headers["set-cookie"]
        assert "HttpOnly" in cookie and "SameSite=strict" in cookie.replace("Strict", "strict")
        assert key not in cookie and normalise_key(key) not in cookie
        assert browser.get("/sheets/2").status_code == 200
        assert browser.get("/api/sheets").status_code == 200
        assert browser.get("/static/vendor/htmx-2.0.11.min.js").status_code == 200


def test_the_next_address_never_leaves_the_server(shared, key):
    with TestClient(shared, follow_redirects=False) as browser:
        token = re.search(r'name="csrf_token" value="([^"]+)"', browser.get("/key").text).group(1)
        for target in ("//evil.example/x", "https://evil.example/", "/\\evil.example", "javascript:alert(1)", ""):
            response = browser.post("/key", data={"key": key, "next": target, "csrf_token": token})
            assert response.headers["location"] == "/", target


def test_scripts_send_the_key_in_a_header(shared, key):
    with TestClient(shared) as script:
        assert script.get("/api/sheets", headers={"X-Headsheet-Key": key}).status_code == 200
        assert script.get("/api/sheets", headers={"Authorization": f"Bearer {key}"}).status_code == 200
        created = script.post("/api/sheets", headers={"X-Headsheet-Key": key},
                              json={"document": script.get("/api/sheets/1", headers={"X-Headsheet-Key": key})
                                    .json()["document"]})
        assert created.status_code == 201
        assert script.get("/api/sheets", headers={"X-Headsheet-Key": key + "x"}).status_code == 401


def test_wrong_keys_are_limited_mildly_per_computer(shared, key):
    shared.state.sharing.attempts = Attempts(limit=5, window=60)
    with TestClient(shared) as guesser:
        statuses = [guesser.get("/api/sheets", headers={"X-Headsheet-Key": f"guess-{i}"}).status_code
                    for i in range(8)]
        assert statuses == [401] * 5 + [429] * 3
        blocked = guesser.get("/api/sheets", headers={"X-Headsheet-Key": "one more guess"})
        assert blocked.status_code == 429 and "wait" in blocked.json()["message"]
        assert 0 < int(blocked.headers["Retry-After"]) <= 61
        token = re.search(r'name="csrf_token" value="([^"]+)"', guesser.get("/key").text).group(1)
        page = guesser.post("/key", data={"key": "still guessing", "csrf_token": token}, follow_redirects=False)
        assert page.status_code == 429 and "Wait" in page.text
    # A colleague behind the same address who has the key is never locked out by someone's guesses.
    with TestClient(shared) as colleague:
        assert colleague.get("/api/sheets", headers={"X-Headsheet-Key": key}).status_code == 200
        token = re.search(r'name="csrf_token" value="([^"]+)"', colleague.get("/key").text).group(1)
        page = colleague.post("/key", data={"key": key, "csrf_token": token}, follow_redirects=False)
        assert page.status_code == 303


def test_the_access_cookie_expires_on_the_server_not_only_in_the_browser(shared, key):
    # A copied cookie must not open the server for ever: the server checks the time it signed into it.
    import time as _time

    from server.access import normalise_key
    from server.web import ACCESS_DAYS, cookie_name

    signer = shared.state.sharing.signer
    name = cookie_name("key", {"server": ("testserver", 80)})
    fresh = signer.timed_token("access", normalise_key(key))
    old = signer.timed_token("access", normalise_key(key), now=_time.time() - ACCESS_DAYS * 86400 - 60)
    untimed = signer.token("access", normalise_key(key))  # the old form, with no time in it
    for value, status in ((fresh, 200), (old, 401), (untimed, 401)):
        with TestClient(shared, cookies={name: value}) as browser:
            assert browser.get("/api/sheets").status_code == status


def test_attempts_forget_old_failures():
    attempts = Attempts(limit=3, window=10)
    for t in (0, 1, 2):
        attempts.failed("a", now=t)
    assert attempts.wait("a", now=3) == pytest.approx(7)
    assert attempts.wait("b", now=3) == 0
    assert attempts.wait("a", now=10.5) == 0  # the first failure has left the window


def test_a_new_key_takes_effect_at_once_and_signs_browsers_out(shared, key, data_dir):
    with BrowserClient(shared, follow_redirects=False) as browser:
        browser.headers["X-Headsheet-Key"] = key
        browser.post("/key", data={"key": key})
        del browser.headers["X-Headsheet-Key"]
        assert browser.get("/sheets/1").status_code == 200  # by the cookie alone
        shared.state.sharing.keys.write("a-new-office-key-2")
        assert browser.get("/sheets/1").status_code == 303  # the old cookie no longer opens anything
        assert browser.get("/api/sheets", headers={"X-Headsheet-Key": key}).status_code == 401
        assert browser.get("/api/sheets", headers={"X-Headsheet-Key": "A NEW office key 2"}).status_code == 200
    assert (Path(data_dir) / "access-key.txt").read_text().strip() == "a-new-office-key-2"
    assert oct((Path(data_dir) / "access-key.txt").stat().st_mode & 0o777) == "0o600"


def test_a_key_cookie_from_another_store_opens_nothing(shared, key, tmp_path):
    other = create_app(tmp_path / "other", share=True)
    other.state.sharing.keys.write(key)  # even with the same key, the other store signs differently
    with TestClient(other, follow_redirects=False) as browser:
        token = re.search(r'name="csrf_token" value="([^"]+)"', browser.get("/key").text).group(1)
        browser.post("/key", data={"key": key, "csrf_token": token})
        cookies = dict(browser.cookies)
    with TestClient(shared, follow_redirects=False, cookies=cookies) as browser:
        assert browser.get("/sheets/1").status_code == 303


def test_on_loopback_without_share_no_key_is_needed(client):
    assert client.get("/sheets/1").status_code == 200
    assert client.get("/api/sheets").status_code == 200
    response = client.get("/key", params={"next": "/sheets/1"}, follow_redirects=False)
    assert response.status_code == 303 and response.headers["location"] == "/sheets/1"


def test_keys_compare_whatever_the_case_spaces_and_dashes():
    assert same_key(" AbCd-EFgh 2345 ", "abcdefgh2345")
    assert not same_key("abcdefgh2346", "abcdefgh2345")
    assert not same_key("", "abcdefgh2345")
