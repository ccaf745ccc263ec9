"""Merging a posted form into a sheet: paths, list actions, and keeping only the valid changes."""

from __future__ import annotations

import copy

import pytest

from calc.model import sheet as calc_sheet
from calc.model.sheet import blank_sheet, parse
from server import editing
from server.editing import apply_action, edit, get_path, set_field, split_path, too_deep


def test_split_path():
    assert split_path("elements.2.length") == ("elements", 2, "length")
    assert split_path("elements.0.fittings.1.K") == ("elements", 0, "fittings", 1, "K")
    for bad in ("base", "doc", "action", "elements..length", "elements.-1.length", "elements.01.x",
                "header.__class__x!", "elements.999999.length"):
        assert split_path(bad) is None, bad


def test_set_field_writes_only_into_existing_places():
    doc = blank_sheet()
    assert set_field(doc, "elements.0.length", "250 m")
    assert doc["elements"][0]["length"] == "250 m"
    # No list grows and no structure appears from a posted name.
    before = copy.deepcopy(doc)
    for path in ("elements.1.length", "elements.0.fittings.9.count", "nowhere.x", "elements.0.fittings"):
        assert not set_field(doc, path, "1")
    assert doc == before


def test_set_field_keeps_text_as_typed_and_counts_as_numbers():
    doc = blank_sheet()
    set_field(doc, "elements.0.diameter", " 6 in ")
    assert doc["elements"][0]["diameter"] == " 6 in "
    set_field(doc, "elements.0.fittings.0.count", "3")
    assert doc["elements"][0]["fittings"][0]["count"] == 3
    set_field(doc, "elements.0.fittings.0.count", "three")
    assert doc["elements"][0]["fittings"][0]["count"] == "three"


def test_empty_text_does_not_add_an_absent_field():
    doc = blank_sheet()
    assert "rating" not in doc["elements"][0]
    assert not set_field(doc, "elements.0.rating", "")
    assert "rating" not in doc["elements"][0]
    assert set_field(doc, "elements.0.rating", "16 bar")


def test_size_group_is_created_when_a_size_is_chosen():
    doc = blank_sheet()
    doc["elements"][0]["size"] = None
    assert set_field(doc, "elements.0.size.standard", "pe-iso4427")
    assert doc["elements"][0]["size"] == {"standard": "pe-iso4427"}


def test_too_deep():
    deep: dict = {}
    node = deep
    for _ in range(5000):
        node["a"] = {}
        node = node["a"]
    assert too_deep(deep)
    assert not too_deep(blank_sheet())


def test_add_element_from_template_with_a_numbered_label():
    result = apply_action(blank_sheet(), "add:elements:pipe")
    assert result.message is None
    new = result.doc["elements"][-1]
    assert new["kind"] == "pipe" and new["label"].endswith(" 2")
    assert result.focus == "elements.1.label"
    assert parse(result.doc).ok


def test_a_new_pipe_run_carries_on_from_the_last_one():
    doc = blank_sheet()
    last = doc["elements"][0]
    last.update(diameter="6 in", end_elevation="42 ft", material="pvc-u")
    new = apply_action(doc, "add:elements:pipe").doc["elements"][-1]
    assert (new["diameter"], new["end_elevation"], new["material"]) == ("6 in", "42 ft", "pvc-u")
    assert new["length"] == calc_sheet.ELEMENT_TEMPLATES["pipe"]["length"]
    assert new["fittings"] == calc_sheet.ELEMENT_TEMPLATES["pipe"]["fittings"]


@pytest.mark.parametrize("kind", ["pipe", "turbine", "pump", "valve"])
def test_every_kind_can_be_added(kind):
    result = apply_action(blank_sheet(), f"add:elements:{kind}")
    assert result.message is None and result.doc["elements"][-1]["kind"] == kind


def test_move_and_remove():
    doc = apply_action(apply_action(blank_sheet(), "add:elements:valve").doc, "add:elements:pipe").doc
    kinds = lambda d: [e["kind"] for e in d["elements"]]  # noqa: E731
    assert kinds(doc) == ["pipe", "valve", "pipe"]
    assert kinds(apply_action(doc, "up:elements.1").doc) == ["valve", "pipe", "pipe"]
    assert kinds(apply_action(doc, "down:elements.1").doc) == ["pipe", "pipe", "valve"]
    assert kinds(apply_action(doc, "remove:elements.1").doc) == ["pipe", "pipe"]
    # Moving the first up or the last down changes nothing.
    assert apply_action(doc, "up:elements.0").doc == doc
    assert apply_action(doc, "down:elements.2").doc == doc


def test_fittings_profile_and_curve_points():
    doc = blank_sheet()
    n = len(doc["elements"][0]["fittings"])
    doc = apply_action(doc, "add:elements.0.fittings").doc
    assert len(doc["elements"][0]["fittings"]) == n + 1
    doc = apply_action(doc, "remove:elements.0.fittings.0").doc
    assert len(doc["elements"][0]["fittings"]) == n
    doc = apply_action(doc, "add:elements.0.profile").doc
    assert len(doc["elements"][0]["profile"]) == 1
    doc = apply_action(doc, "add:elements:pump").doc
    before = len(doc["elements"][1]["curve"])
    assert len(apply_action(doc, "add:elements.1.curve").doc["elements"][1]["curve"]) == before + 1


def test_list_limits_are_enforced():
    doc = blank_sheet()
    doc["elements"] = [copy.deepcopy(doc["elements"][0]) for _ in range(calc_sheet.MAX_ELEMENTS)]
    result = apply_action(doc, "add:elements:pipe")
    assert result.message and str(calc_sheet.MAX_ELEMENTS) in result.message
    assert len(result.doc["elements"]) == calc_sheet.MAX_ELEMENTS
    doc = blank_sheet()
    doc["elements"][0]["fittings"] = [dict(calc_sheet.FITTING_TEMPLATE)] * calc_sheet.MAX_FITTINGS
    assert apply_action(doc, "add:elements.0.fittings").message


@pytest.mark.parametrize("action", ["add:elements:boat", "remove:elements.7", "up:header.title", "add:header",
                                    "explode:elements.0", "add:elements.0.length", "remove:nonsense"])
def test_unknown_actions_change_nothing(action):
    doc = blank_sheet()
    result = apply_action(doc, action)
    assert result.message and result.doc == doc


def test_edit_keeps_valid_fields_and_leaves_invalid_ones_at_their_stored_value():
    stored = blank_sheet()
    fields = {"elements.0.length": "750 m", "elements.0.diameter": "12 parsnips"}
    result = edit(stored, stored, fields, None)
    assert result.display["elements"][0]["diameter"] == "12 parsnips"  # what was typed stays on screen
    assert result.keep["elements"][0]["diameter"] == stored["elements"][0]["diameter"]
    assert result.keep["elements"][0]["length"] == "750 m"
    assert [e.path for e in result.errors] == ["elements.0.diameter"]
    assert result.keep_parsed.ok and result.stale


def test_edit_with_errors_it_cannot_pin_down_keeps_the_stored_sheet():
    stored = blank_sheet()
    # Each value is fine alone; together the pipe connection would sit above the water surface.
    fields = {"start.elevation": "50 m", "start.outlet_elevation": "60 m"}
    result = edit(stored, stored, fields, None)
    assert not parse(result.display).ok
    assert parse(result.keep).ok


def test_edit_when_lists_on_screen_differ_from_the_store_keeps_the_stored_sheet():
    stored = blank_sheet()
    on_screen = copy.deepcopy(stored)
    on_screen["elements"][0]["fittings"].append({"type": "k", "K": "", "count": 1})
    result = edit(stored, on_screen, {"elements.0.fittings.2.K": "abc"}, None)
    assert result.keep == stored
    assert len(result.display["elements"][0]["fittings"]) == 3


def test_edit_with_action_applies_it_to_what_is_kept():
    stored = blank_sheet()
    result = edit(stored, stored, {"elements.0.length": "bad"}, "add:elements:valve")
    assert [e["kind"] for e in result.keep["elements"]] == ["pipe", "valve"]
    assert result.keep["elements"][0]["length"] == stored["elements"][0]["length"]
    assert result.switched and result.focus == "elements.1.label"


def test_form_document_falls_back_to_the_stored_one():
    stored = blank_sheet()
    for text in (None, "", "not json", "[1, 2]", "{" * 100000, '{"a":' * 50 + "1" + "}" * 50):
        assert editing.form_document(text, stored) == stored


def test_get_path_missing():
    doc = blank_sheet()
    assert editing.is_missing(get_path(doc, "elements.5.length"))
    assert editing.is_missing(get_path(doc, "elements.0.length.x"))
    assert get_path(doc, "elements.0.length") == doc["elements"][0]["length"]
