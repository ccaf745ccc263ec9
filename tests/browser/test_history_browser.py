"""Revisions in the browser: typing makes one revision, the history names it as the page does, the
comparison is one click away and names what changed in words, and the history fits a phone."""

from __future__ import annotations

from browsertools import shot
from playwright.sync_api import expect


def _type(page, selector: str, text: str) -> None:
    field = page.locator(selector)
    field.fill(text)
    field.press("Tab")


def test_typing_is_one_revision_and_history_compares_it(page, live):
    page.goto(live.url + "/sheets/1")
    start = int(page.locator("#save-status").get_attribute("data-save"))
    for i, title in enumerate(("Ridge main, draft", "Ridge main, second try", "Ridge main")):
        _type(page, "#f-header-title", title)
        expect(page.locator("#save-status")).to_have_attribute("data-save", str(start + i + 1))
    # Three saves, one revision: the page names it as the history will.
    expect(page.locator("#save-status")).to_contain_text("Revision A.2")
    page.get_by_role("link", name="History").click()
    rows = page.locator("table.revisions tbody tr")
    expect(rows).to_have_count(2)
    expect(rows.first).to_contain_text("A.2")
    expect(rows.first).to_contain_text("3 saves since")
    shot(page, "history-1366")
    page.get_by_role("link", name="Compare revision A.2 with A.1").click()
    expect(page.locator("h1")).to_contain_text("Compare revisions")
    expect(page.locator("table.changes")).to_contain_text("header › title")
    assert "<code>" not in page.content()


def test_history_and_compare_fit_a_phone(browser, live):
    context = browser.new_context(viewport={"width": 400, "height": 800})
    try:
        page = context.new_page()
        page.set_default_timeout(10_000)
        page.goto(live.url + "/sheets/1")
        _type(page, "#f-header-title", "A narrow look")
        expect(page.locator("#save-status")).to_contain_text("A.2")
        for path in ("/sheets/1/history", "/sheets/1/compare"):
            page.goto(live.url + path)
            width = page.evaluate("document.documentElement.scrollWidth")
            assert width <= 400, f"{path} is {width} px wide at 400 px"
        page.goto(live.url + "/sheets/1/history")
        shot(page, "history-400")
    finally:
        context.close()
