"""Read-only links: a reviewer may view, print and sign one sheet, change nothing, and the link can be revoked."""

from __future__ import annotations

import io
import re

import pytest
from pypdf import PdfReader
from servertools import FIGURES, PASSWORD, BrowserClient, account_for, fill, form_fields, route_table

from server.app import create_app
from server.guard import viewer_may


def _make_link(owner, sheet_id: int = 1, note: str = "", reviewer: str = "") -> str:
    response = owner.post(f"/sheets/{sheet_id}/links", data={"note": note, "reviewer": reviewer},
                          follow_redirects=False)
    assert response.status_code == 303 and response.headers["location"].endswith("#links")
    page = owner.get(f"/sheets/{sheet_id}").text
    urls = re.findall(r'<code class="link-url">([^<]+)</code>', page)
    assert urls
    return urls[0].split("/view/", 1)[1]


def _state(app) -> tuple:
    store = app.state.store
    return tuple((s.id, s.revision, s.archived) for s in store.list_sheets() + store.list_sheets(archived=True))


@pytest.fixture
def shared(data_dir):
    return create_app(data_dir, share=True)


@pytest.fixture
def owner(shared):
    with BrowserClient(shared, headers={"X-Headsheet-Key": shared.state.sharing.keys.read()}) as c:
        yield c


@pytest.fixture
def reviewer(shared):
    """Someone with the link but without the access key."""
    with BrowserClient(shared, follow_redirects=False) as c:
        yield c


def test_the_link_opens_the_sheet_without_the_key_and_without_edit_controls(owner, reviewer):
    token = _make_link(owner, 1, "the checker")
    assert "for the checker" in owner.get("/sheets/1").text
    response = reviewer.get(f"/view/{token}")
    assert response.status_code == 303 and response.headers["location"] == f"/view/{token}/sheets/1"
    page = reviewer.get(response.headers["location"])
    assert page.status_code == 200 and page.template.name == "view.html"
    html = page.text
    assert "Condenser 3 cooling-water" in html and 'id="result-flow"' in html
    assert "<form" not in html and "hx-post" not in html and 'name="doc"' not in html
    assert "<button" not in html
    controls = re.findall(r"<(?:input|select|textarea)\b[^>]*>", html)
    assert controls and all(" readonly" in c or " disabled" in c for c in controls)
    # Every link on the page stays inside the read-only link.
    for url in re.findall(r'(?:href|src)="(/[^"]*)"', html):
        assert url.startswith(f"/view/{token}/"), url
    for url in re.findall(r'href="(/[^"#]*)"', html):
        assert reviewer.get(url).status_code in (200, 303), url
    # The key is still needed everywhere else.
    assert reviewer.get("/sheets/1").status_code == 303


def test_every_route_that_changes_anything_refuses_the_link(shared, owner, reviewer):
    token = _make_link(owner)
    before = _state(shared)
    tried = 0
    for method, path in route_table(shared):
        if method == "GET" or path.endswith("/signatures"):
            continue
        url = f"/view/{token}" + fill(path)
        kwargs = {"json": {"document": {}, "base_revision": 1}} if "/api/" in path else {
            "data": {"base": "1", "header.title": "changed by a reviewer"}}
        response = reviewer.request(method, url, **kwargs)
        assert response.status_code == 403, (method, path, response.status_code)
        assert "read-only link" in response.text and "not change it" in response.text
        tried += 1
    assert tried >= 13
    assert _state(shared) == before
    # A reviewer who forges a post to the sheet's own address (no key) is refused too.
    fields = form_fields(owner.get("/sheets/1").text)
    assert reviewer.post("/sheets/1", data={**fields, "header.title": "x"}).status_code == 401
    assert _state(shared) == before
    FIGURES["read-only link: changing routes refused"] += tried


def test_the_link_opens_only_its_own_sheet(owner, reviewer):
    token = _make_link(owner, 2)
    home = reviewer.get(f"/view/{token}/")
    assert home.status_code == 303 and home.headers["location"] == f"/view/{token}/sheets/2"
    for path in ("/sheets/1", "/sheets/1/history", "/sheets/1/revisions/1/record", "/api/sheets",
                 "/api/sheets/1", "/verify", "/api/openapi.json", "/key"):
        response = reviewer.get(f"/view/{token}{path}")
        assert response.status_code == 404, path
        assert "not part of it" in response.text or "not part of it" in response.json()["message"]
    for path in ("/sheets/2", "/sheets/2/history", "/sheets/2/revisions/1", "/sheets/2/record", "/sheets/2/compare",
                 "/sheets/2/revisions/1/record", "/api/sheets/2", "/api/sheets/2/revisions", "/sheets/2/export.json",
                 "/api/sheets/2/revisions/1/record", "/static/css/headsheet.css"):
        response = reviewer.get(f"/view/{token}{path}")
        assert response.status_code in (200, 303), path


def test_the_reviewer_can_print_and_sign(owner, reviewer):
    token = _make_link(owner)
    prefix = f"/view/{token}"
    record = reviewer.get(f"{prefix}/sheets/1/revisions/1/record")
    assert record.status_code == 200
    # The verify address printed on the record never carries the link's token.
    assert token not in record.context["r"].verify_url
    pdf = reviewer.get(f"{prefix}/sheets/1/revisions/1/record.pdf")
    assert pdf.status_code == 200 and pdf.headers["content-type"] == "application/pdf"
    text = "".join(page.extract_text() for page in PdfReader(io.BytesIO(pdf.content)).pages)
    assert token not in text and "/view/" not in text
    # A link made for nobody is for viewing: no form, and a signature posted anyway is refused.
    assert 'class="sign-form"' not in record.text and "nobody signs through it" in record.text
    account_for(owner.app, "Carl Checker")
    refused = reviewer.post(f"{prefix}/api/sheets/1/revisions/1/signatures",
                            json={"role": "preparer", "login": "carl-checker", "password": PASSWORD})
    assert refused.status_code == 403 and "for viewing" in refused.json()["message"]
    # A link made for Rita as preparer signs only as Rita, in that role, with Rita's own password.
    account_for(owner.app, "Rita Reviewer")
    token = _make_link(owner, reviewer="rita-reviewer preparer")
    prefix = f"/view/{token}"
    record = reviewer.get(f"{prefix}/sheets/1/revisions/1/record")
    fields = form_fields(record.text)
    action = re.search(r'<form class="sign-form" method="post" action="([^"]+)"', record.text).group(1)
    assert action == f"{prefix}/sheets/1/revisions/1/signatures"
    assert fields["login"] == "rita-reviewer"
    wrong = reviewer.post(action, data={**fields, "password": "not her password"})
    # Refused: back to the record page's own address under the link, the message beside the password.
    assert wrong.status_code == 303 and wrong.headers["location"] == f"{prefix}/sheets/1/revisions/1/record#sign-off"
    shown = reviewer.get(wrong.headers["location"])
    assert shown.status_code == 200 and 'id="sign-message"' in shown.text and "do not match" in shown.text
    as_carl = reviewer.post(f"{prefix}/api/sheets/1/revisions/1/signatures",
                            json={"role": "preparer", "login": "carl-checker", "password": PASSWORD})
    assert as_carl.status_code == 403 and "signs only as that person" in as_carl.json()["message"]
    signed = reviewer.post(action, data={**fields, "password": PASSWORD, "comment": "looked at it"})
    assert signed.status_code == 303 and signed.headers["location"].startswith(prefix)
    signatures = owner.get("/api/sheets/1/revisions/1/record").json()["signatures"]
    assert [(s["role"], s["name"], s["status"]) for s in signatures] == [("preparer", "Rita Reviewer", "valid")]
    checker = reviewer.post(f"{prefix}/api/sheets/1/revisions/1/signatures",
                            json={"role": "checker", "login": "rita-reviewer", "password": PASSWORD})
    assert checker.status_code == 403, "the link's role only"


def test_revoking_stops_the_link_at_once(owner, reviewer):
    token = _make_link(owner)
    other = _make_link(owner)
    assert reviewer.get(f"/view/{token}/sheets/1").status_code == 200
    page = owner.get("/sheets/1").text
    assert page.count('class="link-url"') == 2
    response = owner.post("/sheets/1/links/revoke", data={"token": token}, follow_redirects=False)
    assert response.status_code == 303
    for path in ("", "/sheets/1", "/sheets/1/revisions/1/record", "/static/css/headsheet.css"):
        gone = reviewer.get(f"/view/{token}{path}")
        assert gone.status_code == 404 and "revoked" in gone.text, path
    assert reviewer.get(f"/view/{other}/sheets/1").status_code == 200
    assert owner.get("/sheets/1").text.count('class="link-url"') == 1
    # Revoking again, or another sheet's link, says there is no such link.
    assert owner.post("/sheets/1/links/revoke", data={"token": token}).status_code == 404
    assert owner.post("/sheets/2/links/revoke", data={"token": other}).status_code == 404


def test_links_work_without_share_mode_too(client):
    token = _make_link(client)
    page = client.get(f"/view/{token}/sheets/1")
    assert page.status_code == 200 and "<form" not in page.text
    assert client.post(f"/view/{token}/sheets/1", data={"base": "1"}).status_code == 403


def test_the_history_and_revision_pages_of_a_link_offer_no_restore(owner, reviewer):
    fields = form_fields(owner.get("/sheets/1").text)
    owner.post("/sheets/1", data={**fields, "header.project": "second"})
    token = _make_link(owner)
    for path in ("/sheets/1/history", "/sheets/1/revisions/1"):
        page = reviewer.get(f"/view/{token}{path}")
        assert page.status_code == 200 and "Restore" not in page.text and "<form" not in page.text, path
    assert "Restore" in owner.get("/sheets/1/history").text


def test_unknown_links_and_what_a_viewer_may_do():
    assert viewer_may("GET", "/sheets/3", 3) == "ok"
    assert viewer_may("GET", "/sheets/30", 3) == "not part"
    assert viewer_may("POST", "/sheets/3/revisions/2/signatures", 3) == "ok"
    assert viewer_may("POST", "/sheets/3", 3) == "read only"
    assert viewer_may("PUT", "/api/sheets/3", 3) == "read only"
    assert viewer_may("DELETE", "/api/sheets/3/revisions/1/signatures", 3) == "read only"
    assert viewer_may("GET", "/sheets/3/revisions/1/record.pdf", 3) == "ok"
    assert viewer_may("GET", "/sheets/3/revisions/1/recordXpdf", 3) == "not part"
