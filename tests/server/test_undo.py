"""Undoing a removal: the notice after a remove, its Undo button (with htmx and as a plain post), and a
clean refusal once the sheet has moved on or the item posted back is not the one removed."""

from __future__ import annotations

import json
import re

from servertools import HX, form_fields

from calc.model.sheet import ensure_ids
from server.editing import document_digest


def _doc(client, sheet_id: int) -> dict:
    """The stored document, with the element ids the form gives a sheet on its first edit."""
    return ensure_ids(client.get(f"/api/sheets/{sheet_id}").json()["document"])


def _notes(client, sheet_id: int) -> list[str]:
    return [r["note"] for r in client.get(f"/api/sheets/{sheet_id}/revisions").json()["revisions"]]


def _sheet_with(client, kind: str) -> tuple[int, int]:
    """(sheet id, index) of the first element of ``kind`` among the demo sheets."""
    for s in sorted(client.get("/api/sheets").json()["sheets"], key=lambda s: s["id"]):
        for i, e in enumerate(_doc(client, s["id"])["elements"]):
            if e["kind"] == kind and (kind != "pump" or len(e.get("curve") or []) >= 3):
                return s["id"], i
    raise AssertionError(f"no demo sheet has a {kind}")


def _undo_button(html: str) -> str:
    found = re.findall(r'name="action" value="(undo:[^"]+)"', html)
    assert len(found) == 1, "one Undo button after a removal"
    return found[0]


def _notice(html: str) -> str:
    m = re.search(r'<div class="undo-notice" id="undo-notice" role="status">\s*<span>([^<]*)</span>', html)
    assert m, "the removal is answered with an undo notice"
    return m.group(1)


def test_an_element_removed_comes_back_where_it_was_with_htmx(client, sheet_form):
    sheet, i = _sheet_with(client, "pipe")
    before = _doc(client, sheet)
    label = before["elements"][i]["label"]
    response = client.post(f"/sheets/{sheet}", data={**sheet_form(sheet), "action": f"remove:elements.{i}"},
                           headers=HX)
    assert response.status_code == 200
    assert _notice(response.text) == f"Removed pipe run «{label}»."
    assert len(_doc(client, sheet)["elements"]) == len(before["elements"]) - 1
    # What the page now holds: the fields redrawn, the new base, the notice's own hidden fields.
    form = form_fields(response.text)
    assert json.loads(form["undo_item"]) == before["elements"][i]
    action = _undo_button(response.text)
    assert action == f"undo:elements.{i}"
    response = client.post(f"/sheets/{sheet}", data={**form, "action": action}, headers=HX)
    assert response.status_code == 200
    assert _doc(client, sheet) == before  # the same element (id and all) in the same place
    assert 'id="undo-notice"' not in response.text  # nothing left to undo
    assert f'id="f-elements-{i}" tabindex="-1" autofocus' in response.text  # the cursor goes to it
    assert _notes(client, sheet)[0].startswith(f"undid a removal: put back Element {i + 1} ({label})")


def test_a_curve_row_removed_comes_back_in_its_row(client, sheet_form):
    sheet, p = _sheet_with(client, "pump")
    before = _doc(client, sheet)
    response = client.post(f"/sheets/{sheet}", data={**sheet_form(sheet), "action": f"remove:elements.{p}.curve.1"},
                           headers=HX)
    owner = before["elements"][p]["label"]
    assert _notice(response.text) == f"Removed curve point 2 of «{owner}»."
    assert len(_doc(client, sheet)["elements"][p]["curve"]) == len(before["elements"][p]["curve"]) - 1
    form = form_fields(response.text)
    client.post(f"/sheets/{sheet}", data={**form, "action": _undo_button(response.text)}, headers=HX)
    assert _doc(client, sheet)["elements"][p]["curve"] == before["elements"][p]["curve"]


def test_undo_refuses_cleanly_once_the_sheet_has_moved_on(client, sheet_form):
    sheet, i = _sheet_with(client, "pipe")
    response = client.post(f"/sheets/{sheet}", data={**sheet_form(sheet), "action": f"remove:elements.{i}"},
                           headers=HX)
    undo_form = form_fields(response.text)
    action = _undo_button(response.text)
    # Another change is saved after the removal (another tab, or this one typing on).
    fields = sheet_form(sheet)
    fields["header.title"] = "Renamed after the removal"
    assert client.post(f"/sheets/{sheet}", data=fields, headers=HX).status_code == 200
    moved_on = _doc(client, sheet)
    undo_form["base"] = fields["base"] = str(client.get(f"/api/sheets/{sheet}/revisions").json()["revisions"][0]["number"])
    undo_form["header.title"] = "Renamed after the removal"
    undo_form["doc"] = form_fields(client.get(f"/sheets/{sheet}").text)["doc"]
    response = client.post(f"/sheets/{sheet}", data={**undo_form, "action": action}, headers=HX)
    assert response.status_code == 200
    assert "cannot put it back where it was" in response.text
    assert _doc(client, sheet) == moved_on  # nothing put back, nothing else lost


def test_undo_refuses_an_item_that_is_not_the_one_removed(client, sheet_form):
    sheet, i = _sheet_with(client, "pipe")
    response = client.post(f"/sheets/{sheet}", data={**sheet_form(sheet), "action": f"remove:elements.{i}"},
                           headers=HX)
    after = _doc(client, sheet)
    form = form_fields(response.text)
    action = _undo_button(response.text)
    item = json.loads(form["undo_item"])
    item["length"] = "1 m"
    for bad in (json.dumps(item), "not json", "[1, 2]", ""):
        response = client.post(f"/sheets/{sheet}", data={**form, "undo_item": bad, "action": action}, headers=HX)
        assert response.status_code == 200, bad
        assert "cannot put it back where it was" in response.text, bad
        assert _doc(client, sheet) == after, bad
    # Into a place the sheet does not have, with a check that matches nothing: refused the same way.
    response = client.post(f"/sheets/{sheet}", data={**form, "action": "undo:elements.40"}, headers=HX)
    assert "cannot put it back where it was" in response.text and _doc(client, sheet) == after
    # The check is the digest of the stored sheet with the item put back, so it is not the sheet's own.
    assert form["undo_check"] != document_digest(after)


def test_remove_and_undo_work_without_javascript(client, sheet_form):
    sheet, i = _sheet_with(client, "pipe")
    before = _doc(client, sheet)
    # A plain post of a removal answers with the page itself, so the notice and its button are there.
    response = client.post(f"/sheets/{sheet}", data={**sheet_form(sheet), "action": f"remove:elements.{i}"},
                           follow_redirects=False)
    assert response.status_code == 200
    assert _notice(response.text).startswith("Removed pipe run")
    assert 'form="sheet-form" name="action"' in response.text  # the button belongs to the sheet form
    form = form_fields(response.text)
    response = client.post(f"/sheets/{sheet}", data={**form, "action": _undo_button(response.text)},
                           follow_redirects=False)
    assert response.status_code == 303
    assert response.headers["location"] == f"/sheets/{sheet}#f-elements-{i}"
    assert _doc(client, sheet) == before


def test_a_row_only_on_screen_is_removed_without_an_undo(client, sheet_form):
    sheet, p = _sheet_with(client, "pump")
    stored = _doc(client, sheet)["elements"][p]["curve"]
    n = len(stored)
    # A pasted table with one bad cell stays on screen only (half a maker's curve is no curve).
    rows = [f"{q}\t{90 - q}" for q in range(0, 10 * (n + 3), 10)]
    rows[1] = "ten\t80"
    response = client.post(f"/sheets/{sheet}", headers=HX, data={
        **sheet_form(sheet), "action": f"paste:elements.{p}.curve.0.flow",
        "paste": "Flow (L/s)\tHead (m)\n" + "\n".join(rows) + "\n"})
    form = form_fields(response.text)
    assert len(json.loads(form["doc"])["elements"][p]["curve"]) == n + 3
    assert _doc(client, sheet)["elements"][p]["curve"] == stored
    response = client.post(f"/sheets/{sheet}", data={**form, "action": f"remove:elements.{p}.curve.{n + 1}"},
                           headers=HX)
    assert response.status_code in (200, 422)
    assert 'id="undo-notice"' not in response.text  # nothing stored was removed, so nothing to put back
    assert _doc(client, sheet)["elements"][p]["curve"] == stored
