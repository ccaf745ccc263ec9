"""The sheet with the keyboard and a screen reader, in headless Chromium: an element's fields come before its
move and remove buttons, a removal can be undone, an invalid field is marked and its message announced once,
and arrow keys in a select are never undone by the answer to an earlier key."""

from __future__ import annotations

import json
import time
import urllib.request

from browsertools import shot
from playwright.sync_api import expect

from calc.model.sheet import ensure_ids


def _api(live, path: str) -> dict:
    with urllib.request.urlopen(live.url + path) as response:
        return json.loads(response.read())


def _doc(live, sheet_id: int) -> dict:
    return ensure_ids(_api(live, f"/api/sheets/{sheet_id}")["document"])


def _find(live, kind: str, plain: bool = False) -> tuple[int, int]:
    """(sheet id, element index) of the first demo sheet with an element of ``kind`` (``plain``: a pipe
    run without a ground profile)."""
    for s in sorted(_api(live, "/api/sheets")["sheets"], key=lambda s: s["id"]):
        for i, e in enumerate(_doc(live, s["id"])["elements"]):
            if e["kind"] == kind and not (plain and e.get("profile")):
                return s["id"], i
    raise AssertionError(f"no demo sheet has a {kind}")


def _slow_solves(live, seconds: float):
    """Make each solve take ``seconds`` longer, so keys land while earlier ones are in flight; returns the undo."""
    solver = live.app.state.solver
    original = solver.solve

    def slow(*args, **kwargs):
        time.sleep(seconds)
        return original(*args, **kwargs)

    solver.solve = slow
    return lambda: setattr(solver, "solve", original)


def _quiet(page) -> None:
    page.wait_for_load_state("networkidle")
    # A function, not a bare expression: Playwright polls a bare expression with eval, which the
    # page's policy (script-src 'self') refuses whenever the first look does not already pass.
    page.wait_for_function("() => !document.querySelector('#busy.htmx-request')")
    page.wait_for_timeout(800)  # anything queued behind the last answer has gone too


def _tab_order(page, start: str, stop: str, limit: int = 300) -> list[str]:
    """The ids the focus visits with Tab from ``start`` up to and including ``stop``."""
    page.locator(start).focus()
    seen = [page.evaluate("document.activeElement.id")]
    while seen[-1] != stop:
        assert len(seen) < limit, f"Tab from {start} never reached {stop}: {seen[-8:]}"
        page.keyboard.press("Tab")
        seen.append(page.evaluate("document.activeElement.id"))
    return seen


def test_an_elements_fields_come_before_its_move_and_remove_buttons(page, live):
    for kind in ("pipe", "pump"):
        sheet_id, i = _find(live, kind)
        page.goto(f"{live.url}/sheets/{sheet_id}")
        fields = page.eval_on_selector(
            f"#f-elements-{i}",
            """f => [...f.querySelectorAll('input:not([type=hidden]):not([disabled]), select:not([disabled]), textarea')]
                     .filter(e => e.getClientRects().length && e.type !== 'file').map(e => e.id)""")
        assert len(fields) >= 3, fields
        up, down, remove = (f"b-{verb}-elements-{i}" for verb in ("up", "down", "remove"))
        order = _tab_order(page, f"#{fields[0]}", remove)
        visited = set(order)
        assert set(fields) <= visited, set(fields) - visited  # every field of the element, on the way
        last_field = max(order.index(f) for f in fields)
        for button in (up, down):
            if button in visited:  # the first element has no Up, the last no Down (disabled, skipped)
                assert order.index(button) > last_field, (button, order)
        assert order.index(remove) > last_field
        # Nothing of the next element comes between an element's fields and its buttons.
        assert not any(o.startswith(f"f-elements-{i + 1}-") for o in order), order
    page.locator(f"#b-remove-elements-{i}").scroll_into_view_if_needed()
    shot(page, "40-element-buttons-after-fields")
    assert page.console_errors == []


def test_a_removed_element_comes_back_with_undo(page, live):
    sheet_id, i = _find(live, "pipe")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    before = _doc(live, sheet_id)
    label = before["elements"][i]["label"]
    page.locator(f"#b-remove-elements-{i}").focus()
    page.keyboard.press("Enter")
    notice = page.locator("#undo-notice")
    expect(notice).to_contain_text(f"Removed pipe run «{label}».")
    expect(notice).to_have_attribute("role", "status")
    assert len(_doc(live, sheet_id)["elements"]) == len(before["elements"]) - 1
    # The screen reader is told what went, once the answer is in.
    expect(page.locator("#announce")).to_contain_text(f"Removed pipe run «{label}».")
    shot(page, "41-removed-with-undo")
    page.locator("#b-undo").focus()
    page.keyboard.press("Enter")
    expect(page.locator("#undo-notice")).to_have_count(0)
    expect(page.locator(f"#f-elements-{i}-label")).to_have_value(label)
    assert _doc(live, sheet_id) == before  # back where it was, as it was
    assert _api(live, f"/api/sheets/{sheet_id}/revisions")["revisions"][0]["note"].startswith("undid a removal")
    assert page.console_errors == []


def test_a_removed_curve_point_comes_back_in_its_row(page, live):
    sheet_id, p = _find(live, "pump")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    before = _doc(live, sheet_id)["elements"][p]["curve"]
    page.locator(f"#b-remove-elements-{p}-curve-1").click()
    expect(page.locator("#undo-notice")).to_contain_text("Removed curve point 2 of")
    expect(page.locator(f"#f-elements-{p}-curve tbody tr")).to_have_count(len(before) - 1)
    page.locator("#b-undo").click()
    expect(page.locator(f"#f-elements-{p}-curve tbody tr")).to_have_count(len(before))
    assert _doc(live, sheet_id)["elements"][p]["curve"] == before
    expect(page.locator(f"#f-elements-{p}-curve-1-flow")).to_have_value(before[1]["flow"])
    assert page.console_errors == []


def test_remove_and_undo_without_javascript(browser, live):
    context = browser.new_context(java_script_enabled=False, viewport={"width": 1366, "height": 900})
    page = context.new_page()
    try:
        sheet_id, i = _find(live, "pipe")
        page.goto(f"{live.url}/sheets/{sheet_id}")
        before = _doc(live, sheet_id)
        page.locator(f"#b-remove-elements-{i}").click()
        expect(page.locator("#undo-notice")).to_contain_text("Removed pipe run")
        assert len(_doc(live, sheet_id)["elements"]) == len(before["elements"]) - 1
        page.locator("#b-undo").click()
        expect(page.locator("#undo-notice")).to_have_count(0)
        assert _doc(live, sheet_id) == before
    finally:
        context.close()


def test_an_invalid_field_is_marked_and_its_message_announced_once(page, live):
    sheet_id, i = _find(live, "pipe", plain=True)
    page.goto(f"{live.url}/sheets/{sheet_id}")
    length = page.locator(f"#f-elements-{i}-length")
    expect(length).not_to_have_attribute("aria-invalid", "true")
    # Count what the live region says while a wrong unit is typed slowly (each key past the typing pause,
    # so each is solved and answered with a message that changes as the unit grows).
    page.evaluate("""() => {
        window.said = [];
        new MutationObserver(() => { const t = document.getElementById('announce').textContent.trim();
            if (t) window.said.push(t); }).observe(document.getElementById('announce'),
            {childList: true, characterData: true, subtree: true});
    }""")
    length.fill("")
    length.press_sequentially("120 parsnips", delay=260)
    page.keyboard.press("Tab")
    message = page.locator(f"#m-elements-{i}-length")
    expect(message).to_contain_text("not a unit we know")
    expect(length).to_have_attribute("aria-invalid", "true")
    described = length.get_attribute("aria-describedby").split()
    assert f"m-elements-{i}-length" in described  # the field points at its message
    live_region = page.locator("#announce")
    expect(live_region).to_have_attribute("role", "status")
    expect(live_region).to_have_attribute("aria-live", "polite")
    expect(live_region).to_contain_text("Length: ")
    expect(live_region).to_contain_text("not a unit we know")
    _quiet(page)
    said = page.evaluate("window.said")
    assert len(said) == 1, said  # said once, after typing stopped: no storm of announcements
    shot(page, "42-invalid-field-announced")
    # Corrected, the mark goes.
    length.fill("120 m")
    page.keyboard.press("Tab")
    expect(message).to_have_text("")
    expect(length).not_to_have_attribute("aria-invalid", "true")
    # The server marks it too: a reload that restores invalid text (the draft) draws it marked.
    length.fill("121 parsnips")
    page.keyboard.press("Tab")
    expect(length).to_have_attribute("aria-invalid", "true")
    page.on("dialog", lambda dialog: dialog.accept())
    page.reload()
    expect(page.locator(f"#f-elements-{i}-length")).to_have_value("121 parsnips")
    expect(page.locator(f"#f-elements-{i}-length")).to_have_attribute("aria-invalid", "true")
    assert page.console_errors == []


def _watch_select(page, select_id: str) -> None:
    """Record the select's value and the focused id at every frame (the select may be redrawn)."""
    page.evaluate("""id => {
        window.frames_seen = [];
        const tick = () => { const el = document.getElementById(id);
            window.frames_seen.push([el ? el.value : null, document.activeElement && document.activeElement.id]);
            requestAnimationFrame(tick); };
        requestAnimationFrame(tick);
    }""", select_id)


def _check_frames(page, select_id: str, options: list[str], start: int) -> None:
    frames = page.evaluate("window.frames_seen")
    assert frames, "no frames recorded"
    places = [options.index(v) for v, _ in frames if v is not None]
    # Never back: no answer to an earlier key put an earlier choice back on screen.
    assert all(b >= a for a, b in zip(places, places[1:])), places
    assert places[-1] > start
    lost = [f for v, f in frames if f != select_id]
    assert not lost, f"focus left the select in {len(lost)} frames: {lost[:5]}"


def test_arrow_keys_in_a_select_keep_their_value_and_the_focus(page, live):
    sheet_id, i = _find(live, "pipe", plain=True)
    page.goto(f"{live.url}/sheets/{sheet_id}")
    restore = _slow_solves(live, 0.3)
    try:
        select_id = f"f-elements-{i}-material"
        material = page.locator(f"#{select_id}")
        options = material.locator("option").evaluate_all("os => os.map(o => o.value)")
        start = options.index(material.input_value())
        assert start + 3 < len(options), "the test needs three materials below the one chosen"
        material.focus()
        _watch_select(page, select_id)
        for _ in range(3):
            page.keyboard.press("ArrowDown")
            page.wait_for_timeout(120)  # a key while the answer to the last is on its way
        _quiet(page)
        _check_frames(page, select_id, options, start)
        expect(material).to_have_value(options[start + 3])
        expect(material).to_be_focused()
        assert _doc(live, sheet_id)["elements"][i]["material"] == options[start + 3]
    finally:
        restore()
    assert page.console_errors == []


def test_arrow_keys_in_a_select_that_redraws_the_form_keep_their_value_and_the_focus(page, live):
    sheet_id, t = _find(live, "turbine")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    restore = _slow_solves(live, 0.3)
    try:
        select_id = f"f-elements-{t}-mode"
        mode = page.locator(f"#{select_id}")
        options = mode.locator("option").evaluate_all("os => os.map(o => o.value)")
        start = options.index(mode.input_value())
        steps = len(options) - 1 - start
        assert steps >= 2, options
        mode.focus()
        _watch_select(page, select_id)
        for _ in range(steps):
            page.keyboard.press("ArrowDown")
            page.wait_for_timeout(120)
        _quiet(page)
        _check_frames(page, select_id, options, start)
        expect(page.locator(f"#{select_id}")).to_have_value(options[-1])
        expect(page.locator(f"#{select_id}")).to_be_focused()
    finally:
        restore()
    assert page.console_errors == []
