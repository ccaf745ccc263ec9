"""The pages on a phone, 400 px wide, in headless Chromium: nothing scrolls the page sideways, a curve table
shows its headings and values whole (scrolling in its own box, the point number fixed), and the results are
one tap away from any field."""

from __future__ import annotations

import json
import urllib.request

from browsertools import shot
from playwright.sync_api import expect

WIDTH = 400


def _api(live, path: str) -> dict:
    with urllib.request.urlopen(live.url + path) as response:
        return json.loads(response.read())


def _sheets(live) -> list[int]:
    return sorted(s["id"] for s in _api(live, "/api/sheets")["sheets"])


def _phone(browser):
    context = browser.new_context(viewport={"width": WIDTH, "height": 800})
    page = context.new_page()
    page.console_errors = []
    page.on("pageerror", lambda e: page.console_errors.append(str(e)))
    return context, page


def _no_sideways_scroll(page, what: str) -> None:
    width = page.evaluate("document.documentElement.scrollWidth")
    wide = page.evaluate("""w => [...document.querySelectorAll('body *')]
        .filter(e => e.getBoundingClientRect().right > w + 0.5 && !e.closest('.table-wrap, .table-scroll'))
        .slice(0, 5).map(e => e.tagName + '#' + e.id + '.' + e.className)""", WIDTH)
    assert width <= WIDTH, (what, width, wide)


def test_home_and_every_demo_sheet_fit_a_400_px_screen(browser, live):
    context, page = _phone(browser)
    try:
        page.goto(live.url + "/")
        expect(page.locator("#first-step")).to_contain_text("Open a sheet below")
        _no_sideways_scroll(page, "home")
        # Each sheet of the list is shown whole: its title, its actions, its date on one line.
        for row in page.locator("table.list.sheets tbody tr").all():
            box = row.bounding_box()
            assert box["x"] >= 0 and box["x"] + box["width"] <= WIDTH + 0.5, box
            stamp = row.locator("time.stamp")
            line = stamp.evaluate("e => parseFloat(getComputedStyle(e).lineHeight)")
            assert stamp.bounding_box()["height"] <= line + 1
        shot(page, "50-home-400")
        for sheet_id in _sheets(live):
            page.goto(f"{live.url}/sheets/{sheet_id}")
            expect(page.locator("#results")).to_be_visible()
            _no_sideways_scroll(page, f"sheet {sheet_id}")
            # The form bar and the form for a read-only link lie inside the screen too.
            page.locator("#links summary").click()
            for selector in (".form-bar", ".form-bar .author input", "form.new-link", "form.new-link button"):
                box = page.locator(selector).bounding_box()
                assert box["x"] >= 0 and box["x"] + box["width"] <= WIDTH + 0.5, (sheet_id, selector, box)
            _no_sideways_scroll(page, f"sheet {sheet_id} with its links open")
        shot(page, "51-sheet-400")
        # A new blank sheet too.
        page.goto(live.url + "/")
        page.get_by_role("button", name="New blank sheet").click()
        expect(page.locator("#sheet-form")).to_be_visible()
        _no_sideways_scroll(page, "a new blank sheet")
        assert page.console_errors == []
    finally:
        context.close()


def test_the_first_step_is_said_on_an_empty_home_page(browser, live):
    context, page = _phone(browser)
    try:
        page.goto(live.url + "/")
        # Archive every sheet: the list is empty and the page says what to do first.
        archive = page.locator(".row-actions button", has_text="Archive")
        for _ in range(len(_sheets(live))):
            archive.first.click()
            page.wait_for_load_state()
        expect(archive).to_have_count(0)
        expect(page.locator("#first-step")).to_contain_text("First step: start a sheet")
        _no_sideways_scroll(page, "home with no sheets")
        shot(page, "52-home-empty-400")
    finally:
        context.close()


def test_a_curve_table_shows_its_headings_and_values_whole(browser, live):
    context, page = _phone(browser)
    try:
        checked = 0
        for sheet_id in _sheets(live):
            page.goto(f"{live.url}/sheets/{sheet_id}")
            for table in page.locator("table.curve-table").all():
                checked += 1
                headings = table.locator("thead th").evaluate_all(
                    "ths => ths.map(t => [t.textContent.trim(), t.scrollWidth, t.clientWidth])")
                for text, scroll, client in headings:
                    assert scroll <= client + 1, (sheet_id, text, scroll, client)
                values = table.locator("tbody input").evaluate_all(
                    "es => es.filter(e => e.value).map(e => [e.value, e.scrollWidth, e.clientWidth])")
                assert values
                for value, scroll, client in values:
                    assert scroll <= client + 1, (sheet_id, value, scroll, client)  # the unit is not cut
                # The table scrolls in its own box; the point number stays where it is.
                box = table.locator("xpath=..")
                assert box.evaluate("e => getComputedStyle(e).overflowX") == "auto"
                number = table.locator("tbody td.idx").first
                left = number.bounding_box()["x"]
                box.evaluate("e => { e.scrollLeft = e.scrollWidth; }")
                page.wait_for_timeout(50)
                assert abs(number.bounding_box()["x"] - left) < 1
                box.scroll_into_view_if_needed()
                shot(page, f"53-curve-table-400-sheet-{sheet_id}")
                box.evaluate("e => { e.scrollLeft = 0; }")
        assert checked >= 1, "no demo sheet has a curve table"
    finally:
        context.close()


def test_the_results_are_one_tap_from_any_field(browser, live):
    context, page = _phone(browser)
    try:
        sheet_id = _sheets(live)[-1]
        page.goto(f"{live.url}/sheets/{sheet_id}")
        bar = page.locator("#jump-results")
        flow = page.locator("#result-flow").inner_text()
        expect(bar).to_contain_text(flow)  # the headline figure, where the eye is
        for field in ("#f-header-title", "#f-end-kind", "#f-elements-0-length"):
            page.locator(field).scroll_into_view_if_needed()
            page.locator(field).focus()
            expect(bar).to_be_visible()
            box = bar.bounding_box()
            assert box["y"] >= 0 and box["y"] + box["height"] <= 800 + 0.5, box  # on screen, wherever one is
            assert box["width"] <= WIDTH + 0.5
        shot(page, "54-jump-bar-400")
        bar.click()
        title = page.locator("#results-title")
        expect(title).to_be_in_viewport()
        # The bar follows a change: a new length, a new flow.
        page.goto(f"{live.url}/sheets/{sheet_id}")
        before = page.locator("#result-flow").inner_text()
        length = page.locator("#f-elements-0-length")
        number, unit = length.input_value().split()
        length.fill(f"{float(number) * 3:.6g} {unit}")
        page.keyboard.press("Tab")
        expect(page.locator("#result-flow")).not_to_have_text(before)
        expect(bar).to_contain_text(page.locator("#result-flow").inner_text())
        assert page.console_errors == []
    finally:
        context.close()
    # Where the results are beside the form, there is no bar.
    context = browser.new_context(viewport={"width": 1366, "height": 900})
    page = context.new_page()
    try:
        page.goto(f"{live.url}/sheets/{sheet_id}")
        expect(page.locator("#results")).to_be_visible()
        expect(page.locator("#jump-results")).to_be_hidden()
        shot(page, "55-sheet-1366")
    finally:
        context.close()
