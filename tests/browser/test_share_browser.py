"""Sharing in headless Chromium: the key page, a reviewer's read-only link with sign-off, two people on one sheet,
and export and import through the pages."""

from __future__ import annotations

import json
import re
import urllib.request

import pytest
from browsertools import LiveServer, shot
from playwright.sync_api import expect
from servertools import PASSWORD, account_for


def _console(page) -> list:
    errors: list = []
    expected = ("status of 409", "status of 422", "status of 401")
    page.on("console", lambda m: m.type == "error" and not any(e in m.text for e in expected) and errors.append(m.text))
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.set_default_timeout(10_000)
    return errors


@pytest.fixture
def shared(tmp_path):
    with LiveServer(tmp_path / "data", share=True) as server:
        server.key = server.app.state.sharing.keys.read()
        yield server


def _api(live, path: str, key: str | None = None) -> dict:
    request = urllib.request.Request(live.url + path, headers={"X-Headsheet-Key": key} if key else {})
    with urllib.request.urlopen(request) as response:
        return json.loads(response.read())


def test_the_key_page_lets_a_colleague_in_and_the_sheet_then_works(browser, shared):
    context = browser.new_context(viewport={"width": 1400, "height": 1000})
    page = context.new_page()
    errors = _console(page)
    try:
        page.goto(f"{shared.url}/sheets/1")
        expect(page.locator("h1")).to_have_text("Access key")
        page.locator("#key").fill("wrong-key-123")
        page.get_by_role("button", name="Open").click()
        expect(page.locator(".notice-error")).to_contain_text("not the access key")
        shot(page, "20-key-page")
        page.locator("#key").fill(shared.key.upper())
        page.get_by_role("button", name="Open").click()
        expect(page).to_have_url(f"{shared.url}/sheets/1")
        # The live form works behind the key: htmx carries the form token, the page policy allows it.
        page.locator("#f-header-project").fill("Typed behind the key")
        expect(page.locator("#save-status")).to_have_attribute("data-save", "2")
        assert _api(shared, "/api/sheets/1", shared.key)["document"]["header"]["project"] == "Typed behind the key"
        assert errors == []
    finally:
        context.close()


def test_a_reviewer_opens_a_read_only_link_prints_and_signs(browser, shared):
    owner_context = browser.new_context(extra_http_headers={"X-Headsheet-Key": shared.key})
    owner = owner_context.new_page()
    reviewer_context = browser.new_context(viewport={"width": 1400, "height": 1000})
    reviewer = reviewer_context.new_page()
    errors = _console(owner) + _console(reviewer)
    try:
        owner.goto(f"{shared.url}/sheets/2")
        owner.locator("#links summary").click()
        # The reviewer has an account on the server; the link is made for her, to sign as preparer.
        account_for(shared.app, "Rita Reviewer", roles=("preparer", "checker"))
        owner.reload()
        owner.locator("#links summary").click()
        owner.locator("#link-note").fill("the checker")
        owner.locator("#link-reviewer").select_option("rita-reviewer preparer")
        owner.get_by_role("button", name="Make a read-only link").click()
        link = owner.locator("code.link-url").first.inner_text()
        assert link.startswith(f"{shared.url}/view/")

        reviewer.goto(link)
        expect(reviewer.locator("h1")).to_contain_text("(read only)")
        expect(reviewer.locator("form")).to_have_count(0)
        expect(reviewer.locator("#f-header-title")).to_have_attribute("readonly", "")
        expect(reviewer.locator("#result-flow")).to_be_visible()
        shot(reviewer, "21-read-only-link")
        reviewer.get_by_role("link", name="Record, print and sign").click()
        expect(reviewer.locator(".sign-form")).to_be_visible()
        expect(reviewer.locator("#sign-login")).to_have_value("rita-reviewer")
        reviewer.locator("#sign-password").fill("not her password")
        reviewer.get_by_role("button", name="Sign as preparer").click()
        expect(reviewer.locator("#sign-message")).to_contain_text("do not match")
        reviewer.locator("#sign-password").fill(PASSWORD)
        reviewer.get_by_role("button", name="Sign as preparer").click()
        expect(reviewer.locator("table.signatures")).to_contain_text("Rita Reviewer")
        expect(reviewer.locator("table.signatures")).to_contain_text("password confirmed at signing")
        assert "/view/" in reviewer.url
        signatures = _api(shared, "/api/sheets/2/revisions/1/record", shared.key)["signatures"]
        assert [s["name"] for s in signatures] == ["Rita Reviewer"]

        # Revoked, the link opens nothing more.
        owner.reload()
        owner.get_by_role("button", name="Revoke").click()
        reviewer.goto(link)
        expect(reviewer.locator("h1")).to_have_text("Link not working")
        assert errors == []
    finally:
        owner_context.close()
        reviewer_context.close()


def test_two_people_on_one_sheet_see_who_changed_what_and_lose_nothing(browser, live):
    one, two = browser.new_context(), browser.new_context()
    ann, bob = one.new_page(), two.new_page()
    errors = _console(ann) + _console(bob)
    try:
        ann.goto(f"{live.url}/sheets/1")
        bob.goto(f"{live.url}/sheets/1")
        ann.locator("#author").fill("Ann")
        ann.locator("#f-header-project").fill("Ann's change")
        expect(ann.locator("#save-status")).to_have_attribute("data-save", "2")
        bob.locator("#f-header-title").fill("Bob's title")
        banner = bob.locator(".banner.conflict")
        expect(banner).to_contain_text("Not saved")
        expect(banner).to_contain_text("Revision A.2: Ann")
        expect(banner).to_contain_text("Ann's change")
        expect(banner).to_contain_text("Bob's title")
        shot(bob, "22-conflict")
        bob.get_by_role("button", name="Apply my changes to revision A.2").click()
        expect(bob.locator("h1")).to_have_text("Bob's title")
        doc = json.loads(urllib.request.urlopen(f"{live.url}/api/sheets/1").read())["document"]
        assert doc["header"]["title"] == "Bob's title" and doc["header"]["project"] == "Ann's change"
        assert errors == []
    finally:
        one.close()
        two.close()


def test_export_and_import_through_the_pages(page, live, tmp_path):
    page.goto(f"{live.url}/sheets/3/history")
    with page.expect_download() as info:
        page.get_by_role("link", name=re.compile("Export this sheet")).click()
    path = tmp_path / "exported.json"
    info.value.save_as(path)
    assert json.loads(path.read_text())["format"] == "headsheet-sheet-export"
    page.goto(f"{live.url}/")
    page.locator("#import-file").set_input_files(str(path))
    page.get_by_role("button", name="Import", exact=True).click()
    expect(page).to_have_url(re.compile(r"/sheets/5$"))
    expect(page.locator("h1")).to_have_text(json.loads(path.read_text())["revisions"][-1]["document"]["header"]["title"])
    assert page.console_errors == []
