"""Typed work is never lost, and the sheet behaves like a spreadsheet, in headless Chromium: paste rows into a
curve, import a profile, reload or leave with an invalid field, re-solve at once on Tab and Enter, and no arrow
key in a select lost while the one before it is being solved."""

from __future__ import annotations

import json
import time
import urllib.request

from browsertools import shot
from playwright.sync_api import expect

# A maker's curve as a data sheet gives it, header units in brackets (values of our own invention).
MAKER = [("0", "100", "0"), ("10", "98", "50"), ("20", "93", "66"), ("30", "85", "73"),
         ("40", "74", "72"), ("50", "60", "64"), ("60", "42", "50"), ("70", "20", "30")]


def _api(live, path: str) -> dict:
    with urllib.request.urlopen(live.url + path) as response:
        return json.loads(response.read())


def _doc(live, sheet_id: int) -> dict:
    return _api(live, f"/api/sheets/{sheet_id}")["document"]


def _find(live, kind: str, plain: bool = False) -> tuple[int, int]:
    """(sheet id, element index) of the first sheet with an element of ``kind`` (``plain``: a pipe run
    without a ground profile, whose length may be typed freely)."""
    for s in sorted(_api(live, "/api/sheets")["sheets"], key=lambda s: s["id"]):
        for i, e in enumerate(_doc(live, s["id"])["elements"]):
            if e["kind"] == kind and not (plain and e.get("profile")):
                return s["id"], i
    raise AssertionError(f"no sheet has a {kind}")


def _revision(live, sheet_id: int) -> int:
    return _api(live, f"/api/sheets/{sheet_id}/revisions")["revisions"][0]["number"]


def _paste(page, selector: str, text: str) -> None:
    """Paste ``text`` into the element at ``selector`` with the keyboard, as a user does (Ctrl+V)."""
    page.context.grant_permissions(["clipboard-read", "clipboard-write"])
    page.evaluate("text => navigator.clipboard.writeText(text)", text)
    page.locator(selector).focus()
    page.keyboard.press("Control+V")


def test_paste_rows_into_a_pump_curve_fills_the_table(page, live):
    sheet_id, p = _find(live, "pump")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    rows_before = len(_doc(live, sheet_id)["elements"][p]["curve"])
    assert rows_before < len(MAKER)
    text = "Flow (L/s)\tHead (m)\tEfficiency (%)\n" + "\n".join("\t".join(r) for r in MAKER) + "\n"
    _paste(page, f"#f-elements-{p}-curve-0-flow", text)
    table = page.locator(f"#f-elements-{p}-curve tbody tr")
    expect(table).to_have_count(len(MAKER))
    for j, (q, h, eta) in enumerate(MAKER):
        expect(page.locator(f"#f-elements-{p}-curve-{j}-flow")).to_have_value(f"{q} L/s")
        expect(page.locator(f"#f-elements-{p}-curve-{j}-head")).to_have_value(f"{h} m")
        expect(page.locator(f"#f-elements-{p}-curve-{j}-efficiency")).to_have_value(f"{eta} %")
    expect(page.locator("#form-message")).to_contain_text(f"Pasted {len(MAKER)} rows")
    stored = _doc(live, sheet_id)["elements"][p]["curve"]
    assert [(pt["flow"], pt["head"], pt["efficiency"]) for pt in stored] == \
        [(f"{q} L/s", f"{h} m", f"{e} %") for q, h, e in MAKER]
    expect(page.locator(".stale-mark")).to_have_count(0)
    page.locator(f"#f-elements-{p}-curve").scroll_into_view_if_needed()
    shot(page, "30-curve-pasted")
    assert page.console_errors == []


def test_a_ground_profile_imports_from_a_csv_file(page, live, tmp_path):
    sheet_id, i = _find(live, "pipe")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    length = page.locator(f"#f-elements-{i}-length").input_value()
    unit = length.split()[1]
    csv_file = tmp_path / "ground.csv"
    csv_file.write_text(f"Chainage ({unit}),Elevation ({unit})\n0,4\n10,5.5\n20,3\n")
    picker = page.locator(f"#i-elements-{i}-profile")
    expect(picker).to_be_visible()  # shown once the script runs
    picker.set_input_files(str(csv_file))
    expect(page.locator(f"#f-elements-{i}-profile tbody tr")).to_have_count(3)
    expect(page.locator(f"#f-elements-{i}-profile-1-elevation")).to_have_value(f"5.5 {unit}")
    assert _doc(live, sheet_id)["elements"][i]["profile"][2] == {"chainage": f"20 {unit}", "elevation": f"3 {unit}"}
    assert page.console_errors == []


def test_reload_with_an_invalid_field_keeps_the_invalid_text(page, live):
    sheet_id, i = _find(live, "pipe")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    good = _doc(live, sheet_id)["elements"][i]["length"]
    page.locator(f"#f-elements-{i}-length").fill("120 parsnips")
    expect(page.locator(f"#m-elements-{i}-length")).to_contain_text("not a unit we know")
    # A valid change beside it is saved although the length stays invalid.
    page.locator("#f-header-project").fill("Saved beside")
    page.keyboard.press("Tab")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "2")
    assert _doc(live, sheet_id)["header"]["project"] == "Saved beside"
    assert _doc(live, sheet_id)["elements"][i]["length"] == good
    expect(page.locator("#unapplied")).to_contain_text("Length")

    page.on("dialog", lambda dialog: dialog.accept())  # "leave this page?" is answered yes
    page.reload()
    expect(page.locator(f"#f-elements-{i}-length")).to_have_value("120 parsnips")
    expect(page.locator(f"#m-elements-{i}-length")).to_contain_text("not a unit we know")
    expect(page.locator("#form-message")).to_contain_text("Restored what was typed in this browser")
    expect(page.locator(".stale-mark")).to_be_visible()
    shot(page, "31-reloaded-with-invalid-text")

    # Corrected (a tenth longer than it was), it is saved, and nothing is kept for the next reload.
    number, unit = good.split()
    longer = f"{float(number) * 1.1:.6g} {unit}"
    page.locator(f"#f-elements-{i}-length").fill(longer)
    page.keyboard.press("Tab")
    expect(page.locator(f"#m-elements-{i}-length")).to_have_text("")
    expect(page.locator(".stale-mark")).to_have_count(0)
    expect(page.locator("#unapplied")).to_have_text("")
    assert _doc(live, sheet_id)["elements"][i]["length"] == longer
    page.wait_for_function(f"() => localStorage.getItem('headsheet:draft:{sheet_id}') === null")
    page.reload()
    expect(page.locator(f"#f-elements-{i}-length")).to_have_value(longer)
    expect(page.locator("#form-message")).to_have_text("")
    assert page.console_errors == []


def test_curve_points_typed_into_a_new_row_survive_a_reload(page, live):
    # The case that lost nine typed values: rows added to a pump curve, typed into, not valid yet.
    sheet_id, p = _find(live, "pump")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    n = len(_doc(live, sheet_id)["elements"][p]["curve"])
    page.get_by_role("button", name=f"Add a curve point to element {p + 1}").click()
    flow = page.locator(f"#f-elements-{p}-curve-{n}-flow")
    expect(flow).to_be_visible()
    flow.fill("75 L/s")
    page.locator(f"#f-elements-{p}-curve-{n}-head").fill("12 parsnips")
    page.locator(f"#f-elements-{p}-curve-{n}-efficiency").fill("0.3")
    expect(page.locator(f"#m-elements-{p}-curve-{n}-head")).to_contain_text("not a unit we know")

    page.on("dialog", lambda dialog: dialog.accept())
    page.reload()
    expect(page.locator(f"#f-elements-{p}-curve-{n}-flow")).to_have_value("75 L/s")
    expect(page.locator(f"#f-elements-{p}-curve-{n}-head")).to_have_value("12 parsnips")
    expect(page.locator(f"#f-elements-{p}-curve-{n}-efficiency")).to_have_value("0.3")
    expect(page.locator(f"#m-elements-{p}-curve-{n}-head")).to_contain_text("not a unit we know")
    # Corrected, the row is stored with all it holds.
    page.locator(f"#f-elements-{p}-curve-{n}-head").fill("12 m")
    page.keyboard.press("Tab")
    expect(page.locator("#unapplied")).to_have_text("")
    stored = _doc(live, sheet_id)["elements"][p]["curve"]
    assert len(stored) == n + 1 and stored[n]["flow"] == "75 L/s" and stored[n]["head"] == "12 m"
    assert stored[n]["efficiency"] == "0.3"
    assert page.console_errors == []


def test_leaving_with_an_invalid_field_asks_first(page, live):
    sheet_id, i = _find(live, "pipe")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    page.locator(f"#f-elements-{i}-length").fill("12 parsnips")
    expect(page.locator(f"#m-elements-{i}-length")).to_contain_text("not a unit we know")
    asked = []

    def stay(dialog):
        asked.append(dialog.type)
        dialog.dismiss()

    page.on("dialog", stay)
    page.close(run_before_unload=True)
    deadline = time.monotonic() + 10
    while not asked and not page.is_closed() and time.monotonic() < deadline:
        page.wait_for_timeout(50)
    assert asked == ["beforeunload"]
    assert not page.is_closed()
    expect(page.locator(f"#f-elements-{i}-length")).to_have_value("12 parsnips")


def test_a_saved_sheet_leaves_without_asking(page, live):
    sheet_id, _ = _find(live, "pipe")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    page.locator("#f-header-project").fill("All valid")
    page.keyboard.press("Tab")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "2")
    asked = []
    page.on("dialog", lambda dialog: (asked.append(dialog.type), dialog.dismiss()))
    page.close(run_before_unload=True)
    page.wait_for_event("close")
    assert asked == [] and page.is_closed()


def test_tab_and_enter_re_solve_at_once(page, live):
    sheet_id, i = _find(live, "pipe", plain=True)
    page.goto(f"{live.url}/sheets/{sheet_id}")
    # The pause after typing is made a minute long: only Tab or Enter can send the change.
    page.evaluate("document.getElementById('sheet-form').setAttribute('data-typing-pause', '60000')")
    elements = len(_doc(live, sheet_id)["elements"])
    unit = page.locator(f"#f-elements-{i}-length").input_value().split()[1]
    page.locator(f"#f-elements-{i}-length").fill(f"222 {unit}")
    page.wait_for_timeout(600)
    assert _revision(live, sheet_id) == 1, "typing alone waits for the pause"
    page.keyboard.press("Tab")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "2")
    assert _doc(live, sheet_id)["elements"][i]["length"] == f"222 {unit}"

    page.locator(f"#f-elements-{i}-length").fill(f"223 {unit}")
    page.wait_for_timeout(300)
    assert _revision(live, sheet_id) == 2
    page.keyboard.press("Enter")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "3")
    assert _doc(live, sheet_id)["elements"][i]["length"] == f"223 {unit}"
    # Enter is the field's: it presses no button of the form (the first ones move and remove elements).
    assert len(_doc(live, sheet_id)["elements"]) == elements
    assert _api(live, f"/api/sheets/{sheet_id}/revisions")["revisions"][0]["note"].startswith("changed")
    assert page.console_errors == []


def test_a_bare_number_takes_the_unit_of_the_placeholder_on_tab(page, live):
    sheet_id, i = _find(live, "pipe", plain=True)
    page.goto(f"{live.url}/sheets/{sheet_id}")
    field = page.locator(f"#f-elements-{i}-length")
    unit = field.get_attribute("placeholder").split()[-1]
    field.fill("321")
    page.keyboard.press("Tab")
    expect(field).to_have_value(f"321 {unit}")
    expect(page.locator("#save-status")).to_have_attribute("data-save", "2")
    assert _doc(live, sheet_id)["elements"][i]["length"] == f"321 {unit}"


def _slow_solves(live, seconds: float):
    """Make each solve of the live server take ``seconds`` longer, so that keys land while earlier ones are in
    flight; returns the function that puts it back."""
    solver = live.app.state.solver
    original = solver.solve

    def slow(*args, **kwargs):
        time.sleep(seconds)
        return original(*args, **kwargs)

    solver.solve = slow
    return lambda: setattr(solver, "solve", original)


def _settle(page, live, sheet_id: int, check) -> None:
    deadline = time.monotonic() + 20
    while time.monotonic() < deadline and not check(_doc(live, sheet_id)):
        page.wait_for_timeout(100)
    page.wait_for_load_state("networkidle")
    page.wait_for_timeout(1000)  # any request still queued behind the last one has gone too


def test_an_arrow_key_in_a_select_is_not_lost(page, live):
    sheet_id, i = _find(live, "pipe", plain=True)
    page.goto(f"{live.url}/sheets/{sheet_id}")
    restore = _slow_solves(live, 0.35)
    try:
        material = page.locator(f"#f-elements-{i}-material")
        options = material.locator("option").evaluate_all("os => os.map(o => o.value)")
        start = options.index(material.input_value())
        presses = 3 if start + 3 < len(options) else -3
        material.focus()
        for _ in range(abs(presses)):
            page.keyboard.press("ArrowDown" if presses > 0 else "ArrowUp")
        final = options[start + presses]
        _settle(page, live, sheet_id, lambda d: d["elements"][i]["material"] == final)
        assert _doc(live, sheet_id)["elements"][i]["material"] == final
        expect(material).to_have_value(final)
        expect(material).to_be_focused()
    finally:
        restore()
    assert page.console_errors == []


def test_an_arrow_key_in_a_select_that_redraws_the_form_is_not_undone(page, live):
    sheet_id, t = _find(live, "turbine")
    page.goto(f"{live.url}/sheets/{sheet_id}")
    restore = _slow_solves(live, 0.35)
    try:
        # Each answer redraws the fields (the turbine's mode changes which ones it shows); the one
        # drawn for the first key must not undo the second.
        mode = page.locator(f"#f-elements-{t}-mode")
        options = mode.locator("option").evaluate_all("os => os.map(o => o.value)")
        start = options.index(mode.input_value())
        assert len(options) - 1 - start >= 2, options
        mode.focus()
        for _ in range(len(options) - 1 - start):
            page.keyboard.press("ArrowDown")
        final = options[-1]
        _settle(page, live, sheet_id, lambda d: False)
        expect(page.locator(f"#f-elements-{t}-mode")).to_have_value(final)
        expect(page.locator(f"#f-elements-{t}-mode")).to_be_focused()
        if final == "curve":  # the form drawn is the one of the last choice
            expect(page.locator(f"#b-add-elements-{t}-curve")).to_be_visible()
        # A mode that still needs its figures is kept on screen, named as not applied yet.
        if _doc(live, sheet_id)["elements"][t]["mode"] != final:
            expect(page.locator("#unapplied")).to_contain_text("given as")
    finally:
        restore()
    assert page.console_errors == []
