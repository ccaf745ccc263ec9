"""Cross-site request forgery: forms need the server's form token, foreign origins are refused, the API takes only JSON."""

from __future__ import annotations

import re

import pytest
from linetools import gravity_line
from servertools import FIGURES, HX, account_for, fill, form_fields, route_table

from server.guard import CSP
from server.web import cookie_name

with __import__("warnings").catch_warnings():
    __import__("warnings").simplefilter("ignore")
    from fastapi.testclient import TestClient

FOREIGN = "http://evil.example"


@pytest.fixture
def browser(app):
    """A client that behaves like a browser without htmx: it posts only what the page's forms hold."""
    with TestClient(app, follow_redirects=False) as c:
        yield c


def _state(client) -> tuple:
    sheets = client.get("/api/sheets").json()["sheets"]
    return tuple((s["id"], s["revision"], s["archived"]) for s in sheets)


def test_the_sheet_form_carries_the_token_and_a_plain_post_of_it_is_accepted(browser):
    fields = form_fields(browser.get("/sheets/1").text)
    assert fields["csrf_token"] == browser.cookies[cookie_name("csrf", {"server": ("testserver", 80)})]
    fields["header.project"] = "Posted as the page's form"
    response = browser.post("/sheets/1", data=fields)
    assert response.status_code == 303
    assert browser.get("/api/sheets/1").json()["document"]["header"]["project"] == "Posted as the page's form"


def test_every_form_on_the_pages_carries_the_token(browser):
    browser.post("/sheets/1/links", data={"csrf_token": form_fields(browser.get("/").text)["csrf_token"]})
    fields = form_fields(browser.get("/sheets/1").text)
    browser.post("/sheets/1", data={**fields, "header.project": "a second revision"})
    account_for(browser.app, "Form Checker")  # the sign-off form is shown once someone can sign
    for url in ("/", "/sheets/1", "/sheets/1/history", "/sheets/1/revisions/1", "/sheets/1/revisions/1/record",
                "/accounts"):
        page = browser.get(url).text
        forms = re.findall(r"<form[^>]*method=\"post\"[^>]*>(.*?)</form>", page, re.S)
        assert forms, url
        for body in forms:
            assert 'name="csrf_token"' in body, (url, body[:200])


def test_a_post_without_the_token_is_refused_with_a_message_and_changes_nothing(browser):
    fields = form_fields(browser.get("/sheets/1").text)
    before = _state(browser)
    del fields["csrf_token"]
    fields["header.project"] = "forged"
    for headers in ({}, HX):
        response = browser.post("/sheets/1", data=fields, headers=headers)
        assert response.status_code == 403
        assert "form token" in response.text and "Nothing was changed" in response.text
    response = browser.post("/sheets/1", data={**fields, "csrf_token": "made.up"})
    assert response.status_code == 403
    assert _state(browser) == before


def test_every_state_changing_page_route_refuses_a_post_without_the_token(browser):
    before = _state(browser)
    tried = 0
    for method, path in route_table(browser.app):
        if method == "GET" or path.startswith("/api/"):
            continue
        response = browser.request(method, fill(path), data={"base": "1", "header.title": "x", "demo": ""})
        assert response.status_code == 403, (method, path)
        assert "form token" in response.text
        tried += 1
    assert tried >= 11
    assert _state(browser) == before
    FIGURES["form routes refused without the form token"] += tried


@pytest.mark.parametrize("headers", [
    {"Origin": FOREIGN}, {"Origin": "null"}, {"Referer": FOREIGN + "/page"}, {"Sec-Fetch-Site": "cross-site"},
    {"Origin": "http://testserver:8001"},  # another port of the same host is another site
])
def test_a_cross_site_form_post_is_refused_even_with_the_token(browser, headers):
    fields = form_fields(browser.get("/sheets/1").text)
    fields["header.project"] = "forged from elsewhere"
    before = _state(browser)
    response = browser.post("/sheets/1", data=fields, headers=headers)
    assert response.status_code == 403 and "another site" in response.text
    assert _state(browser) == before


def test_a_same_origin_post_with_origin_and_referer_is_accepted(browser):
    fields = form_fields(browser.get("/sheets/1").text)
    fields["header.project"] = "same origin"
    headers = {"Origin": "http://testserver", "Referer": "http://testserver/sheets/1", "Sec-Fetch-Site": "same-origin"}
    assert browser.post("/sheets/1", data=fields, headers=headers).status_code == 303


def test_what_a_hostile_page_can_send_is_refused(app):
    # A page elsewhere can make the browser post a form (url-encoded, multipart or text/plain) to
    # this server; the browser adds the Origin, and the page cannot read the token or set the header.
    with TestClient(app, follow_redirects=False) as victim:
        victim.get("/")  # the victim has used Headsheet: it holds a form-token cookie
        before = _state(victim)
        attempts = [
            dict(data={"header.title": "pwned", "base": "1"}),
            dict(files={"header.title": (None, "pwned"), "base": (None, "1")}),
            dict(content=b"header.title=pwned", headers={"Content-Type": "text/plain"}),
        ]
        for attempt in attempts:
            for origin in ({"Origin": FOREIGN}, {}):  # also as a browser that sends no Origin at all
                kwargs = {**attempt, "headers": {**attempt.get("headers", {}), **origin}}
                assert victim.post("/sheets/1", **kwargs).status_code == 403
                assert victim.post("/sheets", **kwargs).status_code == 403
        # The JSON API cannot be reached by a form at all: it answers only JSON bodies.
        for kind in ("application/x-www-form-urlencoded", "multipart/form-data; boundary=x", "text/plain"):
            response = victim.post("/api/sheets", content=b'{"document": {}}', headers={"Content-Type": kind})
            assert response.status_code == 415 and "application/json" in response.json()["message"]
        response = victim.post("/api/sheets", json={"document": gravity_line()},
                               headers={"Origin": FOREIGN})
        assert response.status_code == 403
        assert _state(victim) == before


def test_the_json_api_takes_json_without_a_form_token(browser):
    response = browser.post("/api/sheets", json={"document": gravity_line()})
    assert response.status_code == 201
    response = browser.post("/api/sheets", content=b'{"document": {}}',
                            headers={"Content-Type": "application/json; charset=utf-8"})
    assert response.status_code == 422


def test_htmx_sends_the_token_in_a_header_from_the_body(browser):
    page = browser.get("/sheets/1").text
    token = re.search(r"hx-headers='\{&#34;X-CSRF-Token&#34;: &#34;([^&]+)&#34;\}'|hx-headers='\{\"X-CSRF-Token\": \"([^\"]+)\"\}'",
                      page)
    value = token.group(1) or token.group(2)
    fields = form_fields(page)
    del fields["csrf_token"]
    fields["header.project"] = "from htmx"
    response = browser.post("/sheets/1", data=fields, headers={**HX, "X-CSRF-Token": value})
    assert response.status_code == 200 and 'id="results"' in response.text


def test_the_token_cookie_is_httponly_and_same_site_strict(app):
    with TestClient(app) as fresh:
        cookie = fresh.get("/").headers["set-cookie"]
        assert cookie.startswith("hs_csrf_80=") and "HttpOnly" in cookie and "SameSite=Strict" in cookie
        # The JSON API sets no cookie.
        with TestClient(app) as script:
            assert "set-cookie" not in script.get("/api/sheets").headers


def test_pages_forbid_framing_and_foreign_scripts(browser):
    page = browser.get("/sheets/1")
    assert page.headers["content-security-policy"] == CSP
    assert "frame-ancestors 'none'" in CSP and "script-src 'self'" in CSP
    assert page.headers["x-frame-options"] == "DENY"
    assert page.headers["x-content-type-options"] == "nosniff"
    assert page.headers["referrer-policy"] == "same-origin"
    assert "<script>" not in page.text  # no inline script for the policy to have to allow
