"""The results panel in headless Chromium: the headline figures at phone width, the bore beside a size field,
dates on one line, and the address after a refused signature."""

from __future__ import annotations

from browsertools import shot
from playwright.sync_api import expect
from servertools import PASSWORD, account_for

PUMPED_MAIN, PENSTOCK = 3, 2  # the demo sheets, as the store seeds them


def _fits(page, selector: str, width: int) -> None:
    """Every box of ``selector`` lies inside the viewport and scrolls nothing sideways."""
    boxes = page.eval_on_selector_all(selector, """els => els.map(e => {
        const r = e.getBoundingClientRect();
        return {left: r.left, right: r.right, scroll: e.scrollWidth, client: e.clientWidth, id: e.id || e.className};
    })""")
    assert boxes, selector
    for b in boxes:
        assert b["left"] >= 0 and b["right"] <= width + 0.5, (selector, b)
        assert b["scroll"] <= b["client"] + 1, (selector, b)


def test_the_headline_figures_fit_a_400_px_screen(browser, live):
    context = browser.new_context(viewport={"width": 400, "height": 900})
    page = context.new_page()
    try:
        for sheet in (PUMPED_MAIN, PENSTOCK):
            page.goto(f"{live.url}/sheets/{sheet}")
            expect(page.locator("#headline")).to_be_visible()
            _fits(page, "#headline", 400)
            _fits(page, "#headline .keyfigures > div", 400)
            _fits(page, "#headline .duty", 400)
            _fits(page, "#headline dd", 400)
            # The headline comes first: its top is above the plots and the checks.
            top = page.eval_on_selector("#headline", "e => e.getBoundingClientRect().top")
            assert top < page.eval_on_selector("#findings", "e => e.getBoundingClientRect().top")
            page.locator("#results").screenshot(path=str(_shots() / f"30-results-400-sheet-{sheet}.png"))
        expect(page.locator("#duty-3")).to_contain_text("Gross head lost in the line")
        shot(page, "31-penstock-400")
    finally:
        context.close()


def test_the_results_panel_at_1366_px(browser, live):
    context = browser.new_context(viewport={"width": 1366, "height": 900})
    page = context.new_page()
    try:
        page.goto(f"{live.url}/sheets/{PUMPED_MAIN}")
        _fits(page, "#headline", 1366)
        duty = page.locator("#duty-1")
        expect(duty).to_contain_text("NPSH margin")
        expect(duty).to_contain_text("Of best-efficiency flow")
        # The general cautions are one line, folded; opening it shows them.
        general = page.locator("#general-cautions")
        expect(general.locator("summary")).to_have_text("7 general cautions that apply to every line")
        assert general.locator("summary").evaluate("e => e.getClientRects().length") == 1
        expect(general.get_by_text("Confined spaces and water")).to_be_hidden()
        page.locator("#results").screenshot(path=str(_shots() / "32-results-1366-pumped-main.png"))
        general.locator("summary").click()
        expect(general.get_by_text("Confined spaces and water")).to_be_visible()
    finally:
        context.close()


def test_the_bore_of_a_size_follows_the_nominal_size_as_it_is_typed(page, live):
    page.goto(f"{live.url}/sheets/{PUMPED_MAIN}")
    bore = page.locator("#bore-elements-0")
    expect(bore).to_contain_text("202.7 mm")  # ASME B36.10M NPS 8 Schedule 40
    page.locator("#f-elements-0-size-nominal").fill("10")
    expect(bore).to_contain_text("254.5 mm")  # NPS 10 Schedule 40: 273.1 mm outside, 9.27 mm wall
    page.locator("#f-elements-0-size-nominal").scroll_into_view_if_needed()
    shot(page, "33-bore-beside-the-size")
    assert page.console_errors == []


def test_dates_in_the_history_stay_on_one_line(browser, live):
    for width, lines in ((1366, 1), (400, 2)):
        context = browser.new_context(viewport={"width": width, "height": 800})
        page = context.new_page()
        try:
            page.goto(f"{live.url}/sheets/{PUMPED_MAIN}/history")
            stamp = page.locator("time.stamp").first
            height = stamp.evaluate("e => e.getBoundingClientRect().height")
            line = stamp.evaluate("e => parseFloat(getComputedStyle(e).lineHeight)")
            assert height <= lines * line + 1, (width, height, line)
            page.goto(f"{live.url}/")
            expect(page.locator("#how-to-begin")).to_contain_text("Type the line in flow order")
            shot(page, f"34-home-{width}")
        finally:
            context.close()


def test_a_refused_signature_leaves_the_record_address_in_the_bar(page, live):
    login = account_for(live.app, "Ada Preparer")
    record = f"{live.url}/sheets/{PUMPED_MAIN}/revisions/1/record"
    page.goto(record)
    page.locator("#sign-login").fill(login)
    page.locator("#sign-password").fill("not the pass phrase")
    page.locator("#sign-comment").fill("Checked the NPSH by hand")
    methods: list = []
    page.on("request", lambda r: r.is_navigation_request() and methods.append((r.method, r.url)))
    page.get_by_role("button", name="Sign as preparer").click()
    message = page.locator("#sign-message")
    expect(message).to_contain_text("do not match")
    assert page.url == record + "#sign-off"  # the record's own GET address, never the POST's
    expect(page.locator("#sign-password")).to_have_attribute("aria-invalid", "true")
    expect(page.locator("#sign-comment")).to_have_value("Checked the NPSH by hand")  # what was typed stays
    expect(page.locator("#sign-login")).to_have_value(login)
    # The message sits beside the fields that caused it, inside the sign-off form.
    assert message.evaluate("e => !!e.closest('form.sign-form')")
    shot(page, "35-signature-refused")
    # A reload asks nothing and posts nothing: it shows the record again, the refusal said once.
    methods.clear()
    page.reload()
    assert [m for m, _ in methods] == ["GET"]
    expect(page.locator("#sign-message")).to_have_count(0)
    assert page.url == record + "#sign-off"
    # Signing with the right pass phrase still works from there.
    page.locator("#sign-login").fill(login)
    page.locator("#sign-password").fill(PASSWORD)
    page.get_by_role("button", name="Sign as preparer").click()
    expect(page.locator("table.signatures")).to_contain_text("Ada Preparer")
    assert page.url == record + "#sign-off"
    assert page.console_errors == []


def _shots():
    from browsertools import SHOTS

    SHOTS.mkdir(parents=True, exist_ok=True)
    return SHOTS
