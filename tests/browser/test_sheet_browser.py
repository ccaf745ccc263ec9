"""The sheet page in headless Chromium: live re-solve, adding elements, bad input, reload, keyboard and no-JavaScript use."""

from __future__ import annotations

import json
import re
import urllib.request

from browsertools import shot
from playwright.sync_api import expect

from calc.model import sheet as calc_sheet
from calc.steady import series as calc_solve
from server.results import quantity


def _api(live, path: str) -> dict:
    with urllib.request.urlopen(live.url + path) as response:
        return json.loads(response.read())


def _doc(live, sheet_id: int = 1) -> dict:
    return _api(live, f"/api/sheets/{sheet_id}")["document"]


def _expected_flow(doc: dict) -> str:
    """The design flow the core computes for a document, formatted as the page formats it."""
    parsed = calc_sheet.parse(doc)
    assert parsed.ok, parsed.errors
    sol = calc_solve.solve(parsed.line).to_dict()
    return quantity(sol["points"][sol["design_index"]]["Q"], "flow", doc["header"]["units"])


def _first_pipe(doc: dict) -> int:
    return next(i for i, e in enumerate(doc["elements"]) if e["kind"] == "pipe")


def test_changing_a_pipe_diameter_changes_the_flow(page, live):
    page.goto(f"{live.url}/sheets/1")
    doc = _doc(live)
    flow = page.locator("#result-flow")
    expect(flow).to_have_text(_expected_flow(doc))
    before = flow.inner_text()
    shot(page, "01-demo-sheet")

    i = _first_pipe(doc)
    diameter = page.locator(f"#f-elements-{i}-diameter")
    new = "150 mm" if diameter.input_value().strip() != "150 mm" else "200 mm"
    diameter.fill(new)
    expect(flow).not_to_have_text(before)
    stored = _doc(live)
    assert stored["elements"][i]["diameter"] == new
    expect(flow).to_have_text(_expected_flow(stored))
    expect(page.locator("#save-status")).to_have_attribute("data-save", "2")
    expect(page.locator(".stale-mark")).to_have_count(0)
    shot(page, "02-diameter-changed")
    assert page.console_errors == []


def test_a_choice_re_solves_at_once_under_a_policy_that_forbids_eval(page, live):
    # The page's security policy has no 'unsafe-eval' (no evaluated text can run), and a choice in a
    # select (here the results' units) re-solves without typing anything.
    response = page.goto(f"{live.url}/sheets/1")
    assert "unsafe-eval" not in response.headers["content-security-policy"]
    flow = page.locator("#result-flow")
    before = flow.inner_text()
    units = page.locator("#f-header-units")
    units.select_option("US" if "L/s" in before else "SI")
    expect(flow).not_to_have_text(before)
    assert ("gpm" in flow.inner_text()) == ("L/s" in before)
    expect(page.locator("#save-status")).to_have_attribute("data-save", "2")
    assert page.console_errors == []


def test_add_a_pipe_run(page, live):
    page.goto(f"{live.url}/sheets/1")
    n = len(_doc(live)["elements"])
    page.get_by_role("button", name="Add a pipe run at the end of the line").click()
    new_label = page.locator(f"#f-elements-{n}-label")
    expect(new_label).to_be_visible()
    expect(new_label).to_be_focused()  # the cursor goes to the new run
    stored = _doc(live)
    assert len(stored["elements"]) == n + 1 and stored["elements"][-1]["kind"] == "pipe"
    # The new run carries no invented length or end elevation: the results ask for them, each a link.
    needed = page.locator("#needed")
    expect(needed).to_contain_text("length")
    expect(needed).to_contain_text("elevation at the run's end")
    # The new run's fields are live at once; given its numbers, the line solves again.
    last_end = next(e["end_elevation"] for e in reversed(stored["elements"][:-1]) if e["kind"] == "pipe")
    page.locator(f"#f-elements-{n}-length").fill("80 m")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "3")
    end = page.locator(f"#f-elements-{n}-end_elevation")
    end.fill(last_end)
    end.press("Tab")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "4")
    stored = _doc(live)
    assert stored["elements"][n]["length"] == "80 m" and stored["elements"][n]["end_elevation"] == last_end
    expect(page.locator("#result-flow")).to_have_text(_expected_flow(stored))
    new_label.scroll_into_view_if_needed()
    shot(page, "03-pipe-run-added")
    assert page.console_errors == []


def test_bad_unit_shows_a_message_and_the_stale_mark_and_reload_keeps_what_was_typed(page, live):
    page.goto(f"{live.url}/sheets/1")
    doc = _doc(live)
    i = _first_pipe(doc)
    good = doc["elements"][i]["length"]
    flow_before = page.locator("#result-flow").inner_text()

    length = page.locator(f"#f-elements-{i}-length")
    length.fill("120 parsnips")
    message = page.locator(f"#m-elements-{i}-length")
    expect(message).to_contain_text("not a unit we know")
    expect(page.locator(".stale-mark")).to_be_visible()
    expect(page.locator(".stale-mark")).to_contain_text("Out of date")
    expect(length).to_have_value("120 parsnips")  # what was typed stays
    expect(page.locator("#result-flow")).to_have_text(flow_before)  # the last good result stays
    expect(page.locator(".error-summary a")).to_have_attribute("href", f"#f-elements-{i}-length")
    assert _doc(live)["elements"][i]["length"] == good
    shot(page, "04-bad-unit")

    # A reload asks first, and brings back what was typed (kept in this browser), with its message.
    page.once("dialog", lambda dialog: dialog.accept())
    page.reload()
    expect(page.locator(f"#f-elements-{i}-length")).to_have_value("120 parsnips")
    expect(page.locator(f"#m-elements-{i}-length")).to_contain_text("not a unit we know")
    expect(page.locator(".stale-mark")).to_be_visible()
    assert _doc(live)["elements"][i]["length"] == good
    shot(page, "05-reloaded")

    # Correcting the value clears the message and the mark.
    page.locator(f"#f-elements-{i}-length").fill("bad")
    expect(page.locator(".stale-mark")).to_be_visible()
    page.locator(f"#f-elements-{i}-length").fill("250 m")
    expect(page.locator(f"#m-elements-{i}-length")).to_have_text("")
    expect(page.locator(".stale-mark")).to_have_count(0)
    assert _doc(live)["elements"][i]["length"] == "250 m"
    assert page.console_errors == []


def test_typing_slowly_sends_every_change_in_order_without_conflicts(page, live):
    page.goto(f"{live.url}/sheets/1")
    title = page.locator("#f-header-title")
    title.fill("")
    # Pauses longer than the debounce, so each keystroke is its own post and posts overlap.
    title.press_sequentially("Line B", delay=430)
    expect(page.locator("h1")).to_have_text("Line B")
    assert _doc(live)["header"]["title"] == "Line B"
    expect(page.locator(".banner.conflict")).to_have_count(0)
    notes = [r["note"] for r in _api(live, "/api/sheets/1/revisions")["revisions"]]
    assert len(notes) >= 3 and all("Title" in n for n in notes[:-1])
    assert page.console_errors == []


def test_move_remove_and_fittings_with_the_keyboard(page, live):
    page.goto(f"{live.url}/sheets/1")
    doc = _doc(live)
    labels = [e["label"] for e in doc["elements"]]
    i = _first_pipe(doc)
    fittings = len(doc["elements"][i]["fittings"])

    page.get_by_role("button", name="Move element 1 down").focus()
    page.keyboard.press("Enter")
    expect(page.locator("#f-elements-0-label")).to_have_value(labels[1])
    assert [e["label"] for e in _doc(live)["elements"]][:2] == [labels[1], labels[0]]

    page.get_by_role("button", name="Move element 2 up").focus()
    page.keyboard.press("Space")
    expect(page.locator("#f-elements-0-label")).to_have_value(labels[0])

    page.get_by_role("button", name=f"Add a fitting to element {i + 1}").focus()
    page.keyboard.press("Enter")
    expect(page.locator(f"#f-elements-{i}-fittings-{fittings}-type")).to_be_visible()
    assert len(_doc(live)["elements"][i]["fittings"]) == fittings + 1

    page.get_by_role("button", name=f"Remove element {len(labels)}").focus()
    page.keyboard.press("Enter")
    expect(page.locator(f"#f-elements-{len(labels) - 1}")).to_have_count(0)
    assert len(_doc(live)["elements"]) == len(labels) - 1

    # Enter in a field saves; it does not press the first button of the form.
    page.locator("#f-header-project").fill("Keyboard project")
    page.keyboard.press("Enter")
    expect(page.locator(".sheet-head .meta")).to_contain_text("Keyboard project")
    assert len(_doc(live)["elements"]) == len(labels) - 1
    assert page.console_errors == []


def test_the_form_works_without_javascript(browser, live):
    context = browser.new_context(java_script_enabled=False, viewport={"width": 1400, "height": 1000})
    page = context.new_page()
    try:
        page.goto(f"{live.url}/sheets/1")
        doc = _doc(live)
        i = _first_pipe(doc)
        page.locator(f"#f-elements-{i}-length").fill("333 m")
        page.get_by_role("button", name="Save and solve").click()
        page.wait_for_load_state()
        assert _doc(live)["elements"][i]["length"] == "333 m"
        expect(page.locator("#result-flow")).to_have_text(_expected_flow(_doc(live)))

        page.locator(f"#f-elements-{i}-length").fill("333 parsnips")
        page.get_by_role("button", name="Save and solve").click()
        expect(page.locator(f"#m-elements-{i}-length")).to_contain_text("not a unit we know")
        expect(page.locator(".stale-mark")).to_be_visible()
        expect(page.locator(f"#f-elements-{i}-length")).to_have_value("333 parsnips")
        assert _doc(live)["elements"][i]["length"] == "333 m"

        n = len(doc["elements"])
        page.locator(f"#f-elements-{i}-length").fill("334 m")
        page.get_by_role("button", name="Add a valve at the end of the line").click()
        page.wait_for_load_state()
        stored = _doc(live)
        assert len(stored["elements"]) == n + 1 and stored["elements"][i]["length"] == "334 m"
        assert re.search(rf"#f-elements-{n}-label$", page.url)
        shot(page, "06-no-javascript")
    finally:
        context.close()


def test_home_history_and_restore(page, live):
    page.goto(live.url + "/")
    shot(page, "07-home")
    page.get_by_role("button", name="New blank sheet").click()
    expect(page.locator("h1")).to_have_text(calc_sheet.blank_sheet()["header"]["title"])
    sheet_url = page.url
    page.locator("#f-header-title").fill("Renamed")
    expect(page.locator("h1")).to_have_text("Renamed")
    page.get_by_role("link", name="History").click()
    expect(page.locator("table.revisions tbody tr")).to_have_count(2)
    shot(page, "08-history")
    page.get_by_role("button", name="Restore revision A.1").click()
    expect(page.locator("h1")).to_have_text(calc_sheet.blank_sheet()["header"]["title"])
    assert page.url == sheet_url
    page.get_by_role("link", name="History").click()
    expect(page.locator("table.revisions tbody tr")).to_have_count(3)
    page.get_by_role("link", name="View revision A.2").click()
    expect(page.locator("#f-header-title")).to_have_value("Renamed")
    expect(page.locator("#f-header-title")).to_have_attribute("readonly", "")
    shot(page, "09-revision")
    assert page.console_errors == []


def test_print_layout(page, live):
    page.goto(f"{live.url}/sheets/2")
    page.emulate_media(media="print")
    expect(page.locator(".form-bar")).to_be_hidden()
    expect(page.locator("#results")).to_be_visible()
    shot(page, "10-print")
