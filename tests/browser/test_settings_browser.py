"""In headless Chromium: the check limits, friction method and pipe condition are on the form and editable;
a new pump shows empty curve cells that ask for their values; a new blank sheet asks for what it needs and
shows no number it invented (issue 12)."""

from __future__ import annotations

import json
import re
import urllib.request

from browsertools import shot
from linetools import gravity_line
from playwright.sync_api import expect


def _doc(live, sheet_id: int) -> dict:
    with urllib.request.urlopen(f"{live.url}/api/sheets/{sheet_id}") as response:
        return json.loads(response.read())["document"]


def _sheet(live, doc: dict) -> int:
    return live.app.state.store.create_sheet(doc, "", "test sheet").sheet_id


def test_check_limits_are_on_the_form_and_editable(page, live):
    sheet_id = _sheet(live, gravity_line())
    page.goto(f"{live.url}/sheets/{sheet_id}")
    group = page.locator("#f-settings-checks")
    group.scroll_into_view_if_needed()
    expect(group.locator("legend")).to_have_text("Check limits")
    limit = page.get_by_label("Highest velocity", exact=True)
    expect(limit).to_be_visible()
    expect(limit).to_have_value("")
    expect(limit).to_have_attribute("placeholder", "default: 3 m/s")
    expect(page.locator("#f-settings-checks-velocity_max-help")).to_have_text("default from common practice")
    expect(page.locator("#f-settings-checks-velocity_max-help")).to_have_attribute(
        "title", re.compile("mains 0.5-2 m/s"))
    # A bare number takes the unit the placeholder shows, and the checks apply it at once.
    limit.fill("2")
    limit.press("Tab")
    expect(page.locator("#findings")).to_contain_text("velocity high")
    assert _doc(live, sheet_id)["settings"]["checks"]["velocity_max"] == "2 m/s"
    # An invalid limit is told beside its field; the stored limit stays.
    low = page.get_by_label("Preferred flow, low end (of best-efficiency flow)")
    low.fill("150 %")
    low.press("Tab")
    expect(page.locator("#m-settings-checks-bep_low")).to_contain_text("must be above 0 % and at most 100 %")
    assert not _doc(live, sheet_id)["settings"]["checks"].get("bep_low")
    shot(page, "40-check-limits")
    # The friction method is chosen by its name, and the panel gives that name.
    method = page.locator("#f-settings-friction_method")
    expect(method.locator("option:checked")).to_have_text(re.compile(r"^Colebrook \("))
    method.select_option("haaland_1983")
    expect(page.locator("#results .method")).to_have_text("Haaland")
    # Each pipe run has its condition; aged takes the material's aged roughness.
    condition = page.locator("#f-elements-0-condition")
    expect(condition).to_be_visible()
    condition.select_option("aged")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "4")  # limit, method, condition
    assert _doc(live, sheet_id)["elements"][0]["condition"] == "aged"
    assert page.console_errors == []


def test_a_new_pump_shows_empty_curve_cells_that_ask_for_their_values(page, live):
    sheet_id = _sheet(live, gravity_line())
    page.goto(f"{live.url}/sheets/{sheet_id}")
    page.get_by_role("button", name="Add a pump at the end of the line").click()
    rows = page.locator("#f-elements-1-curve tbody tr")
    expect(rows).to_have_count(3)
    for j in range(3):
        for key in ("flow", "head"):
            cell = page.locator(f"#f-elements-1-curve-{j}-{key}")
            expect(cell).to_have_value("")
            expect(page.locator(f"#m-elements-1-curve-{j}-{key} .request")).to_have_text(f"Give the point's {key}")
        expect(page.locator(f"#f-elements-1-curve-{j}-efficiency")).to_have_value("")
        expect(page.locator(f"#m-elements-1-curve-{j}-efficiency")).to_be_empty()
    # The results say plainly what the line waits for, each a link to its field.
    needed = page.locator("#needed")
    expect(needed).to_contain_text("The line cannot be solved until these are given")
    links = needed.locator("a")
    expect(links).to_have_count(6)
    expect(links.first).to_have_attribute("href", "#f-elements-1-curve-0-flow")
    # A request reads as a request: the accent colour, not the error red.
    colour = page.locator("#m-elements-1-curve-0-flow").evaluate("e => getComputedStyle(e).color")
    error = page.locator("body").evaluate("e => getComputedStyle(e).getPropertyValue('--error')")
    assert colour != error and colour != "rgb(179, 38, 30)"
    page.locator("#f-elements-1-curve").scroll_into_view_if_needed()
    shot(page, "41-new-pump-asks")
    assert page.console_errors == []


def test_the_blank_sheet_asks_for_its_values_and_shows_no_number_it_invented(page, live):
    page.goto(live.url + "/")
    page.get_by_role("button", name="New blank sheet").click()
    expect(page.locator("h1")).to_have_text("New sheet")
    # No number anywhere in the form's values: every quantity is empty until the engineer gives it.
    values = page.locator("#sheet-fields input[type=text]:not([name$='.label'])").evaluate_all(
        "els => els.map(e => [e.name, e.value])")
    assert len(values) > 10 and [v for v in values if re.search(r"\d", v[1])] == []
    asked = {"#m-liquid-temperature": "Give the water's temperature",
             "#m-start-elevation": "Give the water surface elevation",
             "#m-end-elevation": "Give the water surface elevation",
             "#m-elements-0-length": "Give the run's length",
             "#m-elements-0-diameter": "Give the run's inner diameter, or choose a size from a table",
             "#m-elements-0-end_elevation": "Give the elevation at the run's end"}
    for slot, words in asked.items():
        expect(page.locator(f"{slot} .request")).to_have_text(words)
    expect(page.locator(".error-summary")).to_have_count(0)
    expect(page.locator("#result-flow")).to_have_count(0)
    expect(page.locator("#needed a")).to_have_count(len(asked))
    shot(page, "42-blank-sheet-asks")
    # A link in the list goes to its field.
    page.locator("#needed a", has_text="Length").click()
    assert page.url.endswith("#f-elements-0-length")
    # Given the values one by one, each is saved, and the line solves once the last is in.
    for field, value in (("#f-liquid-temperature", "15 degC"), ("#f-start-elevation", "100 m"),
                         ("#f-end-elevation", "80 m"), ("#f-elements-0-length", "500 m"),
                         ("#f-elements-0-diameter", "150 mm"), ("#f-elements-0-end_elevation", "78 m")):
        page.locator(field).fill(value)
        page.locator(field).press("Tab")
        expect(page.locator(field.replace("#f-", "#m-") + " .request")).to_have_count(0)
    expect(page.locator("#result-flow")).to_contain_text("L/s")
    expect(page.locator("#needed")).to_have_count(0)
    shot(page, "43-blank-sheet-given")
    assert page.console_errors == []
