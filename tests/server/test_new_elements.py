"""New sheets and new elements carry no invented numbers: they ask for every value the line needs, beside
its field, and the results say the line waits for those values (issue 12, "traps in new elements")."""

from __future__ import annotations

import html
import re

import pytest
from linetools import gravity_line
from servertools import HX, form_fields

from calc.model import sheet as calc_sheet
from calc.model.sheet import is_request, parse

#: The keys of a document that hold a choice, a count or an identifier, not a number anyone has to give.
_CHOICES = {"format", "version", "id", "kind", "mode", "type", "material", "condition", "units", "revision_scheme",
            "friction_method", "count", "label", "title"}


def _doc(client, sheet_id: int) -> dict:
    return client.get(f"/api/sheets/{sheet_id}").json()["document"]


def _numbers(node, key: str = "") -> list[tuple[str, object]]:
    """Every value in a document that holds a digit, outside the keys that hold choices and counts."""
    if isinstance(node, dict):
        return [x for k, v in node.items() for x in _numbers(v, k)]
    if isinstance(node, list):
        return [x for v in node for x in _numbers(v, key)]
    if key in _CHOICES:
        return []
    return [(key, node)] if re.search(r"\d", str(node)) and node is not None else []


def _requests(page: str) -> dict[str, str]:
    """The requests beside the fields of a page: message slot id -> what it asks for."""
    return {m.group(1): html.unescape(m.group(2)) for m in
            re.finditer(r'id="(m-[^"]+)"[^>]*><span class="request">([^<]*)</span>', page)}


def _needed(page: str) -> list[tuple[str, str]]:
    """The results panel's list of what the line waits for: (link target, words)."""
    block = re.search(r'<div class="banner needed" id="needed".*?</div>', page, re.S)
    if block is None:
        return []
    return [(m.group(1), html.unescape(re.sub(r"<[^>]+>", "", m.group(2))))
            for m in re.finditer(r'<li><a href="#([^"]+)">(.*?)</li>', block.group(0), re.S)]


def _new_sheet(client) -> tuple[int, str]:
    response = client.post("/sheets", data={}, follow_redirects=False)
    assert response.status_code == 303
    sheet_id = int(response.headers["location"].rsplit("/", 1)[1])
    page = client.get(f"/sheets/{sheet_id}")
    assert page.status_code == 200
    return sheet_id, page.text


def _sheet_of(client, doc: dict) -> int:
    response = client.post("/api/sheets", json={"document": doc})
    assert response.status_code == 201, response.text
    return response.json()["id"]


# -- the blank sheet ---------------------------------------------------------------------------

def test_a_new_blank_sheet_invents_no_number(client):
    sheet_id, page = _new_sheet(client)
    doc = _doc(client, sheet_id)
    assert doc == calc_sheet.blank_sheet()
    assert _numbers(doc) == []
    # Its old trap is gone with its numbers: no outlet above the end tank, nothing solved from guesses.
    assert 'id="result-flow"' not in page
    for name in ("liquid.temperature", "start.elevation", "end.elevation", "elements.0.length",
                 "elements.0.diameter", "elements.0.end_elevation"):
        assert form_fields(page)[name] == ""


def test_the_blank_sheet_asks_for_each_value_beside_its_field_and_the_results_list_them(client):
    _, page = _new_sheet(client)
    asked = _requests(page)
    assert asked == {
        "m-liquid-temperature": "Give the water's temperature",
        "m-start-elevation": "Give the water surface elevation",
        "m-end-elevation": "Give the water surface elevation",
        "m-elements-0-length": "Give the run's length",
        "m-elements-0-diameter": "Give the run's inner diameter, or choose a size from a table",
        "m-elements-0-end_elevation": "Give the elevation at the run's end",
    }
    # Requests, not a wall of errors: no "entries need correcting", and no fault banner.
    assert "need correcting" not in page and "needs correcting" not in page
    assert "banner fault" not in page
    assert "The line cannot be solved until these are given" in page
    needed = _needed(page)
    assert [target for target, _ in needed] == ["f-liquid-temperature", "f-start-elevation", "f-end-elevation",
                                                "f-elements-0-length", "f-elements-0-diameter",
                                                "f-elements-0-end_elevation"]
    for target, words in needed:
        assert f'id="{target}"' in page  # each link goes to its field
        assert "give" in words


def test_each_value_given_on_the_blank_sheet_is_saved_and_the_line_solves_once_all_are(client):
    sheet_id, page = _new_sheet(client)
    fields = form_fields(page)
    fields["start.elevation"] = "100 m"
    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)
    assert response.status_code == 200  # only values not given yet: not a refusal
    assert _doc(client, sheet_id)["start"]["elevation"] == "100 m"
    assert "f-start-elevation" not in [t for t, _ in _needed(response.text)]
    assert "m-start-elevation" not in _requests(response.text)
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    fields.update({"liquid.temperature": "15 degC", "end.elevation": "80 m", "elements.0.length": "500 m",
                   "elements.0.diameter": "150 mm", "elements.0.end_elevation": "78 m"})
    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)
    assert response.status_code == 200
    assert parse(_doc(client, sheet_id)).ok
    assert 'id="result-flow"' in response.text and not _needed(response.text)


def test_a_value_given_wrongly_is_an_error_beside_its_field_not_a_request(client):
    sheet_id, page = _new_sheet(client)
    fields = form_fields(page)
    fields["elements.0.length"] = "abc"
    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)
    assert response.status_code == 422
    assert _doc(client, sheet_id)["elements"][0]["length"] == ""
    slot = re.search(r'<p id="m-elements-0-length"[^>]*>(.*?)</p>', response.text, re.S).group(1)
    assert "must start with a number" in slot and "request" not in slot
    assert "1 entry needs correcting" in response.text


# -- new elements, fittings and points -----------------------------------------------------------

#: What each new element asks for (paths inside it), and nothing else.
ASKED = {
    "pipe": {"length", "end_elevation"},  # its bore carries on from the run before it
    "turbine": {"power", "efficiency"},
    "pump": {f"curve.{j}.{k}" for j in range(3) for k in ("flow", "head")},
    "valve": {"K"},
}


@pytest.mark.parametrize("kind", sorted(ASKED))
def test_a_new_element_carries_no_invented_numbers_and_asks_for_what_it_needs(client, kind):
    sheet_id = _sheet_of(client, gravity_line())
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    response = client.post(f"/sheets/{sheet_id}", data={**fields, "action": f"add:elements:{kind}"}, headers=HX)
    assert response.status_code == 200
    stored = _doc(client, sheet_id)["elements"]
    assert len(stored) == 2 and stored[1]["kind"] == kind
    carried = {"diameter"} if kind == "pipe" else set()  # the engineer's own bore, not an invented one
    assert [k for k, _ in _numbers(stored[1]) if k not in carried] == []
    errors = parse(_doc(client, sheet_id)).errors
    assert errors and all(is_request(e) for e in errors)
    assert {e.path.split(".", 2)[2] for e in errors} == ASKED[kind]
    asked = _requests(response.text)
    for path in ASKED[kind]:
        slot = "m-elements-1-" + path.replace(".", "-")
        assert asked.get(slot, "").startswith("Give "), (slot, asked)
    assert {t for t, _ in _needed(response.text)} == {"f-elements-1-" + p.replace(".", "-") for p in ASKED[kind]}


def test_a_new_pump_shows_three_empty_curve_rows_that_ask_for_their_values(client):
    sheet_id = _sheet_of(client, gravity_line())
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    response = client.post(f"/sheets/{sheet_id}", data={**fields, "action": "add:elements:pump"}, headers=HX)
    shown = form_fields(response.text)
    for j in range(3):
        for key in ("flow", "head", "efficiency", "npsh_required"):
            assert shown[f"elements.1.curve.{j}.{key}"] == ""
    asked = _requests(response.text)
    assert asked["m-elements-1-curve-0-flow"] == "Give the point's flow"
    assert asked["m-elements-1-curve-2-head"] == "Give the point's head"
    # Efficiency and NPSH required are optional: nothing asks for them.
    assert "m-elements-1-curve-0-efficiency" not in asked


@pytest.mark.parametrize("target,template,asked", [
    ("elements.0.fittings", calc_sheet.FITTING_TEMPLATE, {"K": "Give the fitting's K"}),
    ("elements.0.profile", calc_sheet.PROFILE_POINT_TEMPLATE,
     {"chainage": "Give the point's chainage", "elevation": "Give the ground elevation at the point"}),
])
def test_a_new_fitting_or_profile_point_asks_for_its_values(client, target, template, asked):
    sheet_id = _sheet_of(client, gravity_line())
    before = len(_doc(client, sheet_id)["elements"][0][target.rsplit(".", 1)[1]])
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    response = client.post(f"/sheets/{sheet_id}", data={**fields, "action": f"add:{target}"}, headers=HX)
    assert response.status_code == 200
    items = _doc(client, sheet_id)["elements"][0][target.rsplit(".", 1)[1]]
    assert len(items) == before + 1 and items[-1] == template
    assert _numbers(items[-1]) == []  # '+ Fitting' no longer adds a K of 0.5
    slots = _requests(response.text)
    for key, words in asked.items():
        assert slots[f"m-{target.replace('.', '-')}-{before}-{key}"] == words


def test_a_new_curve_point_on_a_working_pump_asks_for_its_flow_and_head(client):
    doc = gravity_line()
    doc["end"]["elevation"] = "110 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve", "curve": [
        {"flow": "0 L/s", "head": "40 m"}, {"flow": "20 L/s", "head": "36 m"}, {"flow": "40 L/s", "head": "25 m"}]})
    doc["elements"][1]["end_elevation"] = "108 m"
    assert parse(doc).ok
    sheet_id = _sheet_of(client, doc)
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    response = client.post(f"/sheets/{sheet_id}", data={**fields, "action": "add:elements.0.curve"}, headers=HX)
    point = _doc(client, sheet_id)["elements"][0]["curve"][3]
    assert point == calc_sheet.CURVE_POINT_TEMPLATE  # no point at 0 L/s and 0 m
    assert [t for t, _ in _needed(response.text)] == ["f-elements-0-curve-3-flow", "f-elements-0-curve-3-head"]


# -- nothing breaks on empty fields --------------------------------------------------------------

def test_nothing_fails_on_a_sheet_with_empty_fields(client):
    sheet_id, _ = _new_sheet(client)
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    for kind in ("turbine", "pump", "valve", "pipe"):
        client.post(f"/sheets/{sheet_id}", data={**fields, "action": f"add:elements:{kind}"}, headers=HX)
        fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    client.post(f"/sheets/{sheet_id}", data={**fields, "action": "add:elements.0.fittings"}, headers=HX)
    doc = _doc(client, sheet_id)
    assert [e["kind"] for e in doc["elements"]] == ["pipe", "turbine", "pump", "valve", "pipe"]
    latest = client.get(f"/api/sheets/{sheet_id}/revisions").json()["revisions"][0]["number"]
    for url in (f"/sheets/{sheet_id}", f"/sheets/{sheet_id}/history", f"/sheets/{sheet_id}/revisions/{latest}",
                f"/sheets/{sheet_id}/record", f"/sheets/{sheet_id}/revisions/{latest}/record",
                f"/api/sheets/{sheet_id}/revisions/{latest}/record", f"/sheets/{sheet_id}/export.json", "/"):
        response = client.get(url)
        assert response.status_code in (200, 422), (url, response.status_code)
    # The record of a sheet that lacks values says so; its PDF is refused, with why, not failed.
    pdf = client.get(f"/sheets/{sheet_id}/revisions/{latest}/record.pdf")
    assert pdf.status_code == 422 and "no record" in pdf.text.lower()
    # The API takes only whole sheets: a blank one is refused with each value it lacks, by path.
    response = client.post("/api/sheets", json={"document": calc_sheet.blank_sheet()})
    assert response.status_code == 422
    paths = {e["path"] for e in response.json()["errors"]}
    assert {"liquid.temperature", "elements.0.length", "elements.0.diameter"} <= paths
    solved = client.post("/api/solve", json={"document": doc})
    assert solved.status_code == 422 and solved.json()["errors"]


# -- a US-customary sheet suggests its own units -------------------------------------------------

def _us_sheet(client) -> int:
    doc = gravity_line()
    doc["header"]["units"] = "US"
    return _sheet_of(client, doc)


def test_a_us_sheet_suggests_inches_and_feet_not_millimetres(client):
    sheet_id = _us_sheet(client)
    page = client.get(f"/sheets/{sheet_id}").text
    assert re.search(r'name="elements.0.diameter"[^>]*placeholder="e.g. 12 in"', page)
    assert re.search(r'name="elements.0.length"[^>]*placeholder="e.g. 1400 ft"', page)
    fields = form_fields(page)
    fields["elements.0.diameter"] = "6 kg"
    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)
    message = re.search(r'<p id="m-elements-0-diameter"[^>]*>(.*?)</p>', response.text, re.S).group(1)
    assert "must be a length, e.g. 6 in" in message and "mm" not in message
    # A bare number takes the unit the placeholder shows: inches here.
    fields["elements.0.diameter"] = "6"
    client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)
    assert _doc(client, sheet_id)["elements"][0]["diameter"] == "6 in"


def test_a_us_sheet_pasted_with_a_wrong_unit_is_told_a_us_unit(client):
    doc = gravity_line()
    doc["header"]["units"] = "US"
    doc["elements"].append(calc_sheet.ELEMENT_TEMPLATES["pump"] | {"label": "P"})
    sheet_id = _sheet_of_any(client, doc)
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    response = client.post(f"/sheets/{sheet_id}", headers=HX, data={
        **fields, "action": "paste:elements.1.curve.0.flow", "paste": "Flow (kg)\tHead (ft)\n0\t100\n"})
    assert "Flow (gpm)" in html.unescape(response.text) and "Flow (L/s)" not in html.unescape(response.text)


def _sheet_of_any(client, doc: dict) -> int:
    """A sheet holding ``doc`` even while it lacks values (made blank on the page, then given the document)."""
    sheet_id, page = _new_sheet(client)
    store = client.app.state.store
    store.add_revision(sheet_id, doc, 1, "", "test document")
    return sheet_id


# -- what waits and what goes back --------------------------------------------------------------

def test_only_values_the_sheet_already_lacked_wait_a_change_that_makes_one_needed_goes_back():
    from server.edits import edit

    stored = gravity_line()
    # Emptying the material makes the run need a roughness nobody gave: that is not a value waiting
    # to be given but a change that breaks a whole line, so it goes back and the stored line still solves.
    result = edit(stored, stored, {"elements.0.material": ""}, None)
    assert result.keep["elements"][0]["material"] == "steel-commercial" and parse(result.keep).ok
    assert [e.path for e in result.errors] == ["elements.0.roughness"] and result.stale
    # The same on a new run that is not whole yet: its own empty values wait, the change goes back.
    added = edit(stored, stored, {}, "add:elements:pipe")
    assert {e.path for e in added.errors} == {"elements.1.length", "elements.1.end_elevation"}
    again = edit(added.keep, added.display, {"elements.1.material": "", "header.project": "Kept"}, None)
    assert again.keep["header"]["project"] == "Kept"
    assert again.keep["elements"][1]["material"] == "steel-commercial"
    assert not parse(again.keep).mistakes
