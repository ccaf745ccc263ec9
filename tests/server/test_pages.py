"""The HTML pages through the ASGI app: list, create, sheet form (plain post and htmx), history, errors."""

from __future__ import annotations

import json
import re

import pytest
from servertools import HX, demo_files, form_fields

from calc.model import sheet as calc_sheet
from calc.steady import series as calc_solve
from server.results import quantity


def _flow_shown(html: str) -> str:
    found = re.findall(r'id="result-flow">([^<]*)<', html)
    assert len(found) == 1, "the results panel shows one design flow"
    return found[0]


def _expected_flow(doc: dict) -> str:
    parsed = calc_sheet.parse(doc)
    assert parsed.ok, parsed.errors
    sol = calc_solve.solve(parsed.line).to_dict()
    point = sol["points"][sol["design_index"]]
    return quantity(point["Q"], "flow", doc["header"]["units"])


def _doc(client, sheet_id: int) -> dict:
    return client.get(f"/api/sheets/{sheet_id}").json()["document"]


def _first_pipe(doc: dict) -> int:
    return next(i for i, e in enumerate(doc["elements"]) if e["kind"] == "pipe")


def _revisions(client, sheet_id: int) -> list[int]:
    return [r["number"] for r in client.get(f"/api/sheets/{sheet_id}/revisions").json()["revisions"]]


# -- home ----------------------------------------------------------------------------------------

def test_home_lists_the_seeded_demos(client):
    response = client.get("/")
    assert response.status_code == 200
    assert response.template.name == "home.html"
    titles = [json.loads(p.read_text())["header"]["title"] for p in demo_files()]
    assert len(titles) >= 1
    listed = [s.title for s in response.context["sheets"]]
    assert sorted(listed) == sorted(titles)
    for title in titles:
        assert title in response.text


def test_home_makes_no_change(client):
    before = client.get("/api/sheets").json()
    client.get("/")
    client.get("/sheets/1")
    client.get("/sheets/1/history")
    assert client.get("/api/sheets").json() == before


def test_new_blank_sheet(client):
    response = client.post("/sheets", data={}, follow_redirects=False)
    assert response.status_code == 303
    page = client.get(response.headers["location"])
    assert page.status_code == 200 and page.template.name == "sheet.html"
    assert _doc(client, page.context["sheet"].id) == calc_sheet.blank_sheet()


def test_new_sheet_from_a_demo(client):
    path = demo_files()[0]
    response = client.post("/sheets", data={"demo": path.stem}, follow_redirects=False)
    sheet_id = int(response.headers["location"].rsplit("/", 1)[1])
    assert _doc(client, sheet_id) == json.loads(path.read_text())


def test_new_sheet_from_an_unknown_demo_is_not_found(client):
    response = client.post("/sheets", data={"demo": "no-such-demo"})
    assert response.status_code == 404
    assert "no demo sheet" in response.text


def test_duplicate(client):
    response = client.post("/sheets/1/duplicate", follow_redirects=False)
    assert response.status_code == 303
    new_id = int(response.headers["location"].rsplit("/", 1)[1])
    original, copy = _doc(client, 1), _doc(client, new_id)
    assert copy["header"]["title"] == original["header"]["title"] + " (copy)"
    copy["header"]["title"] = original["header"]["title"]
    assert copy == original


def test_archive_and_restore_from_the_archive(client):
    assert client.post("/sheets/1/archive", follow_redirects=False).status_code == 303
    home = client.get("/")
    assert 1 not in [s.id for s in home.context["sheets"]]
    assert 1 in [s.id for s in home.context["archived"]]
    assert client.get("/sheets/1").status_code == 200  # archived, not gone
    client.post("/sheets/1/unarchive")
    assert 1 in [s.id for s in client.get("/").context["sheets"]]


# -- the sheet page ------------------------------------------------------------------------------

@pytest.mark.parametrize("index", range(len(demo_files())))
def test_sheet_page_shows_every_part_and_the_solved_flow(client, index):
    sheet_id = index + 1
    response = client.get(f"/sheets/{sheet_id}")
    assert response.status_code == 200
    assert response.headers["vary"] == "HX-Request"
    doc = _doc(client, sheet_id)
    for part in ("f-header", "f-liquid", "f-start", "f-elements", "f-end", "results", "findings"):
        assert f'id="{part}"' in response.text
    for i, element in enumerate(doc["elements"]):
        assert f'id="f-elements-{i}"' in response.text
        assert f'name="elements.{i}.label" value="{element["label"]}"' in response.text
    assert _flow_shown(response.text) == _expected_flow(doc)
    assert response.context["outcome"].ok
    fields = form_fields(response.text)
    assert fields["base"] == str(_revisions(client, sheet_id)[0])


def test_every_field_has_a_label_and_a_message_slot(client):
    html = client.get("/sheets/1").text
    ids = re.findall(r'<(?:input|select|textarea)[^>]*\bid="(f-[^"]+)"', html)
    assert ids
    for field_id in ids:
        labelled = f'for="{field_id}"' in html or re.search(rf'id="{field_id}"[^>]*aria-label=', html)
        assert labelled, field_id
        assert f'id="m-{field_id[2:]}"' in html, field_id


@pytest.mark.parametrize("index", range(len(demo_files())))
def test_ids_on_the_sheet_page_are_unique(client, index):
    html = client.get(f"/sheets/{index + 1}").text
    ids = re.findall(r'\sid="([^"]+)"', html)
    assert len(ids) == len(set(ids))
    # Every link inside the page points at something on it.
    for target in re.findall(r'href="#([^"]+)"', html):
        assert target in ids or target == "main", target


def test_units_of_the_results_follow_the_header(client, sheet_form):
    fields = sheet_form(1)
    for system, unit in (("SI", "L/s"), ("US", "gpm")):
        fields["header.units"] = system
        response = client.post("/sheets/1", data=fields, headers=HX)
        assert response.status_code == 200
        assert _flow_shown(response.text).endswith(unit)
        fields["base"] = str(_revisions(client, 1)[0])


def test_htmx_edit_saves_a_revision_and_answers_with_the_results(client, sheet_form):
    fields = sheet_form(1)
    doc = _doc(client, 1)
    i = _first_pipe(doc)
    fields[f"elements.{i}.diameter"] = "250 mm"
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 200
    assert response.template.name == "fragments/edit_response.html"
    assert response.headers["vary"] == "HX-Request"
    stored = _doc(client, 1)
    assert stored["elements"][i]["diameter"] == "250 mm"
    assert _flow_shown(response.text) == _expected_flow(stored)
    assert _revisions(client, 1) == [2, 1]
    assert 'id="base" value="2" hx-swap-oob="true"' in response.text
    assert 'id="results"' in response.text and "Out of date" not in response.text


def test_bad_value_is_not_stored_and_the_page_says_why(client, sheet_form):
    fields = sheet_form(1)
    doc = _doc(client, 1)
    i = _first_pipe(doc)
    good_length = doc["elements"][i]["length"]
    fields[f"elements.{i}.length"] = "12 parsnips"
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 422
    assert _doc(client, 1)["elements"][i]["length"] == good_length
    assert _revisions(client, 1) == [1]
    slot = re.search(rf'<p id="m-elements-{i}-length" hx-swap-oob="innerHTML">([^<]*)</p>', response.text)
    assert slot and "not a unit we know" in slot.group(1)
    assert "Out of date" in response.text and 'class="results stale"' in response.text
    # The last good results stay on screen: those of the stored sheet.
    assert _flow_shown(response.text) == _expected_flow(doc)
    assert f'id="shown-errors" value="elements.{i}.length"' in response.text

    # Correcting it clears the message and the stale mark.
    fields[f"elements.{i}.length"] = "300 m"
    fields["shown_errors"] = f"elements.{i}.length"
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 200
    assert f'<p id="m-elements-{i}-length" hx-swap-oob="innerHTML"></p>' in response.text
    assert "Out of date" not in response.text
    assert _doc(client, 1)["elements"][i]["length"] == "300 m"


def test_valid_fields_are_kept_beside_an_invalid_one(client, sheet_form):
    fields = sheet_form(1)
    i = _first_pipe(_doc(client, 1))
    fields["header.project"] = "Changed project"
    fields[f"elements.{i}.length"] = ""
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 422
    stored = _doc(client, 1)
    assert stored["header"]["project"] == "Changed project"
    assert stored["elements"][i]["length"] != ""
    # An emptied length is asked for again beside its field; the stored one stays until it is given.
    assert "Give the run" in response.text and "length" in response.text


def test_reload_after_a_bad_value_shows_the_last_valid_sheet(client, sheet_form):
    fields = sheet_form(1)
    i = _first_pipe(_doc(client, 1))
    fields[f"elements.{i}.length"] = "-5 m"
    client.post("/sheets/1", data=fields, headers=HX)
    page = client.get("/sheets/1")
    assert "-5 m" not in page.text
    assert not page.context["error_list"] and "Out of date" not in page.text


def test_stale_base_is_a_conflict_and_nothing_is_stored(client, sheet_form):
    fields = sheet_form(1)
    other = dict(fields)
    other["header.project"] = "saved first elsewhere"
    assert client.post("/sheets/1", data=other, headers=HX).status_code == 200
    fields["header.project"] = "mine, based on revision 1"
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 409
    assert "changed elsewhere" in response.text
    assert _doc(client, 1)["header"]["project"] == "saved first elsewhere"
    assert _revisions(client, 1) == [2, 1]
    # Without JavaScript, the whole page comes back with the same message and the typed value.
    response = client.post("/sheets/1", data=fields)
    assert response.status_code == 409 and response.template.name == "sheet.html"
    assert "mine, based on revision 1" in response.text and "changed elsewhere" in response.text


def test_plain_post_redirects_to_the_page_and_errors_render_the_page(client, sheet_form):
    fields = sheet_form(1)
    fields["header.title"] = "Posted without JavaScript"
    response = client.post("/sheets/1", data=fields, follow_redirects=False)
    assert response.status_code == 303
    assert response.headers["location"] == "/sheets/1"
    assert "Posted without JavaScript" in client.get("/sheets/1").text
    fields = sheet_form(1)
    fields["liquid.temperature"] = "hot"
    response = client.post("/sheets/1", data=fields)
    assert response.status_code == 422 and response.template.name == "sheet.html"
    assert 'value="hot"' in response.text and "Out of date" in response.text
    assert re.search(r'id="m-liquid-temperature">[^<]+<', response.text)


@pytest.mark.parametrize("kind", ["pipe", "turbine", "pump", "valve"])
def test_add_an_element(client, sheet_form, kind):
    fields = sheet_form(1)
    n = len(_doc(client, 1)["elements"])
    response = client.post("/sheets/1", data={**fields, "action": f"add:elements:{kind}"}, headers=HX)
    stored = _doc(client, 1)
    assert len(stored["elements"]) == n + 1 and stored["elements"][-1]["kind"] == kind
    # The form is sent whole (its shape changed), with the cursor put in the new element.
    assert 'id="sheet-fields" class="sheet-fields" hx-swap-oob="true"' in response.text
    assert re.search(rf'id="f-elements-{n}-label"[^>]*autofocus', response.text)
    assert response.status_code in (200, 422)


def test_add_a_pipe_run_without_javascript(client, sheet_form):
    fields = sheet_form(1)
    n = len(_doc(client, 1)["elements"])
    response = client.post("/sheets/1", data={**fields, "action": "add:elements:pipe"}, follow_redirects=False)
    assert response.status_code == 303
    assert response.headers["location"] == f"/sheets/1#f-elements-{n}-label"
    assert len(_doc(client, 1)["elements"]) == n + 1


def test_move_and_remove_elements(client, sheet_form):
    doc = _doc(client, 1)
    labels = [e["label"] for e in doc["elements"]]
    client.post("/sheets/1", data={**sheet_form(1), "action": "down:elements.0"}, headers=HX)
    assert [e["label"] for e in _doc(client, 1)["elements"]] == [labels[1], labels[0], *labels[2:]]
    client.post("/sheets/1", data={**sheet_form(1), "action": "up:elements.1"}, headers=HX)
    assert [e["label"] for e in _doc(client, 1)["elements"]] == labels
    client.post("/sheets/1", data={**sheet_form(1), "action": f"remove:elements.{len(labels) - 1}"}, headers=HX)
    assert [e["label"] for e in _doc(client, 1)["elements"]] == labels[:-1]
    notes = [r["note"] for r in client.get("/api/sheets/1/revisions").json()["revisions"]]
    assert notes[0].startswith("removed Element") and notes[1].startswith("moved up")


def test_add_and_remove_fittings(client, sheet_form):
    i = _first_pipe(_doc(client, 1))
    n = len(_doc(client, 1)["elements"][i]["fittings"])
    client.post("/sheets/1", data={**sheet_form(1), "action": f"add:elements.{i}.fittings"}, headers=HX)
    fittings = _doc(client, 1)["elements"][i]["fittings"]
    assert len(fittings) == n + 1 and fittings[-1] == calc_sheet.FITTING_TEMPLATE
    client.post("/sheets/1", data={**sheet_form(1), "action": f"remove:elements.{i}.fittings.{n}"}, headers=HX)
    assert len(_doc(client, 1)["elements"][i]["fittings"]) == n


def test_changing_a_mode_sends_the_form_back_with_the_new_fields(client, sheet_form):
    fields = sheet_form(1)
    response = client.post("/sheets/1", data={**fields, "action": "add:elements:turbine"}, headers=HX)
    n = len(_doc(client, 1)["elements"]) - 1
    fields = sheet_form(1)
    fields[f"elements.{n}.mode"] = "head"
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert 'hx-swap-oob="true"' in response.text and f'name="elements.{n}.head"' in response.text
    assert f'name="elements.{n}.power"' not in response.text


def test_refused_action_says_why(client, sheet_form):
    response = client.post("/sheets/1", data={**sheet_form(1), "action": "remove:elements.99"}, headers=HX)
    assert response.status_code == 200
    assert "not on this sheet any more" in response.text
    assert _revisions(client, 1) == [1]


# -- history -------------------------------------------------------------------------------------

def test_history_view_and_restore(client, sheet_form):
    original = _doc(client, 1)
    fields = sheet_form(1)
    fields["header.title"] = "Second title"
    client.post("/sheets/1", data=fields, headers=HX)
    history = client.get("/sheets/1/history")
    assert history.status_code == 200 and history.template.name == "history.html"
    assert [row["group"].number for row in history.context["rows"]] == [2, 1]
    view = client.get("/sheets/1/revisions/1")
    assert view.status_code == 200 and view.template.name == "revision.html"
    assert original["header"]["title"] in view.text and "readonly" in view.text
    assert 'name="doc"' not in view.text  # a read-only view is not a form
    response = client.post("/sheets/1/revisions/1/restore", data={"base": "2"}, follow_redirects=False)
    assert response.status_code == 303
    assert _revisions(client, 1) == [3, 2, 1]
    assert _doc(client, 1) == original
    notes = [r["note"] for r in client.get("/api/sheets/1/revisions").json()["revisions"]]
    assert notes[0] == "restored revision A.1"


def test_restore_from_a_stale_history_page_is_a_conflict(client, sheet_form):
    fields = sheet_form(1)
    fields["header.title"] = "Second"
    client.post("/sheets/1", data=fields, headers=HX)
    response = client.post("/sheets/1/revisions/1/restore", data={"base": "1"})
    assert response.status_code == 409
    assert _revisions(client, 1) == [2, 1]


# -- what is not there ---------------------------------------------------------------------------

@pytest.mark.parametrize("url", ["/sheets/999", "/sheets/999/history", "/sheets/1/revisions/999",
                                 "/sheets/abc", "/nowhere", "/sheets/99999999999999999999999"])
def test_not_found_pages(client, url):
    response = client.get(url)
    assert response.status_code == 404
    assert response.template.name == "error.html"
    assert "text/html" in response.headers["content-type"]


@pytest.mark.parametrize("url", ["/sheets/999", "/sheets/999/duplicate", "/sheets/999/archive",
                                 "/sheets/999/unarchive", "/sheets/1/revisions/999/restore"])
def test_posts_to_missing_sheets_are_not_found(client, url):
    assert client.post(url, data={"base": "1"}).status_code == 404


def test_wrong_method(client):
    response = client.delete("/sheets/1")
    assert response.status_code == 405
    assert client.get("/sheets/1").status_code == 200


def test_static_assets_are_served_locally(client):
    page = client.get("/sheets/1").text
    script = re.search(r'<script src="([^"]+htmx[^"]+)"', page).group(1)
    assert script.startswith("/static/vendor/htmx-2.")
    assert client.get(script).status_code == 200
    css = re.search(r'<link rel="stylesheet" href="([^"]+)"', page).group(1)
    assert client.get(css).status_code == 200
    assert "http" not in script + css


def test_results_panel_uses_the_sheets_check_limits_and_shows_the_range(client):
    # The page shows the same analysis as the record: the user's own limits and the uncertainty band.
    import copy
    import json
    from pathlib import Path

    doc = json.loads((Path(__file__).resolve().parents[2] / "examples" / "hydro-penstock.json").read_text())
    sid = client.post("/api/sheets", json={"document": doc}).json()["id"]
    page = client.get(f"/sheets/{sid}").text
    assert 'class="band"' in page and "range" in page
    assert "velocity high" not in page
    strict = copy.deepcopy(doc)
    strict.setdefault("settings", {})["checks"] = {"velocity_max": "1 m/s"}
    client.put(f"/api/sheets/{sid}", json={"document": strict, "base_revision": 1})
    assert "velocity high" in client.get(f"/sheets/{sid}").text


# -- typed work is never lost ------------------------------------------------------------------------

def test_a_later_valid_change_is_saved_while_an_earlier_field_stays_invalid(client, sheet_form):
    fields = sheet_form(1)
    i = _first_pipe(_doc(client, 1))
    good_length = _doc(client, 1)["elements"][i]["length"]
    fields[f"elements.{i}.length"] = "12 parsnips"
    first = client.post("/sheets/1", data=fields, headers=HX)
    assert first.status_code == 422 and _revisions(client, 1) == [1]
    # The next post still carries the invalid text, and a valid change elsewhere: that one is stored.
    fields["header.project"] = "Saved beside an invalid length"
    fields["base"] = "1"
    fields["shown_errors"] = f"elements.{i}.length"
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 422
    stored = _doc(client, 1)
    assert stored["header"]["project"] == "Saved beside an invalid length"
    assert stored["elements"][i]["length"] == good_length
    assert _revisions(client, 1) == [2, 1]
    # The message stays beside the field, the form names what is not applied, and the results (of
    # the stored revision, with the valid change) are marked stale for it.
    slot = re.search(rf'<p id="m-elements-{i}-length" hx-swap-oob="innerHTML">([^<]*)</p>', response.text)
    assert slot and "not a unit we know" in slot.group(1)
    unapplied = re.search(r'<div id="unapplied"[^>]*data-count="(\d+)"[^>]*>(.*?)</div>', response.text, re.DOTALL)
    assert unapplied and unapplied.group(1) == "1" and "Length" in unapplied.group(2)
    assert f'href="#f-elements-{i}-length"' in unapplied.group(2)
    assert 'class="results stale"' in response.text
    assert _flow_shown(response.text) == _expected_flow(stored)
    # Without JavaScript the page comes back with the invalid text in its field and the message beside it.
    fields["base"] = "2"
    page = client.post("/sheets/1", data=fields)
    assert page.status_code == 422
    assert form_fields(page.text)[f"elements.{i}.length"] == "12 parsnips"
    assert re.search(rf'id="m-elements-{i}-length">[^<]*not a unit we know', page.text)


def test_a_bare_number_through_the_form_takes_the_placeholder_unit(client, sheet_form):
    fields = sheet_form(1)
    i = _first_pipe(_doc(client, 1))
    page = client.get("/sheets/1").text
    placeholder = re.search(rf'id="f-elements-{i}-length"[^>]*placeholder="e\.g\. [\d.]+ (\S+)"', page)
    assert placeholder, "the length field shows an example with its unit"
    fields[f"elements.{i}.length"] = "321"
    assert client.post("/sheets/1", data=fields, headers=HX).status_code == 200
    assert _doc(client, 1)["elements"][i]["length"] == f"321 {placeholder.group(1)}"


def test_a_draft_restored_on_the_same_revision_comes_back_whole_with_its_messages(client, sheet_form):
    fields = sheet_form(1)
    i = _first_pipe(_doc(client, 1))
    draft = {**fields, f"elements.{i}.length": "9 parsnips", "header.project": "From the draft",
             "action": "restore"}
    response = client.post("/sheets/1", data=draft, headers=HX)
    assert response.status_code == 422
    assert 'id="sheet-fields" class="sheet-fields" hx-swap-oob="true"' in response.text  # the whole form
    assert f'name="elements.{i}.length" value="9 parsnips"' in response.text
    assert "Restored what was typed in this browser" in response.text
    assert _doc(client, 1)["header"]["project"] == "From the draft"


def test_a_draft_of_an_older_revision_goes_onto_the_latest_when_nothing_clashes(client, sheet_form):
    fields = sheet_form(1)
    i = _first_pipe(_doc(client, 1))
    other = {**fields, "header.title": "Changed elsewhere"}
    assert client.post("/sheets/1", data=other, headers=HX).status_code == 200
    draft = {**fields, f"elements.{i}.length": "9 parsnips", "action": "restore"}  # base 1, latest 2
    response = client.post("/sheets/1", data=draft, headers=HX)
    assert response.status_code == 422
    assert "onto revision 2" in response.text
    assert f'name="elements.{i}.length" value="9 parsnips"' in response.text
    assert 'name="header.title" value="Changed elsewhere"' in response.text  # their change is kept
    # A draft touching a field changed elsewhere is a conflict, shown with both values.
    clash = {**fields, "header.title": "Mine", "action": "restore"}
    response = client.post("/sheets/1", data=clash, headers=HX)
    assert response.status_code == 409 and "Mine" in response.text and "Changed elsewhere" in response.text
    assert _doc(client, 1)["header"]["title"] == "Changed elsewhere"
