"""Unknown keys in a sheet document are refused, each with a message at its own path.

A stored revision is kept forever, so a key the program does not read would be stored forever
too (a 90,000-item junk key, say). Which keys exist is the program's own definition; the checks
here are that every place refuses what it does not know, that the refusal stays small and fast
for a huge document, and that the published schema and the parser agree (common practice: a
schema that says more or less than the parser reads misleads whoever writes to the API).
"""

import json
from pathlib import Path

import pytest
from linetools import gravity_line

from calc.model import schema as sheet_schema
from calc.model import sheet as cs
from calc.model.sheet import parse

EXAMPLES = sorted((Path(__file__).resolve().parents[3] / "examples").glob("*.json"))


def _example(name: str) -> dict:
    return json.loads(next(p for p in EXAMPLES if p.stem == name).read_text())


def _first(doc, kind):
    return next(e for e in doc["elements"] if e["kind"] == kind)


def _with_junk(where: str) -> tuple[dict, str]:
    """A demo sheet with one key ``junk`` added at ``where``; returns it and the path of the key."""
    doc = _example("hydro-penstock" if where in ("valve", "turbine") else "pumped-main")
    if where == "top":
        doc["junk"] = 1
        return doc, "junk"
    if where in ("header", "liquid", "site", "settings", "start", "end"):
        doc.setdefault(where, {})["junk"] = 1
        return doc, f"{where}.junk"
    if where == "checks":
        doc.setdefault("settings", {}).setdefault("checks", {})["junk"] = 1
        return doc, "settings.checks.junk"
    for i, e in enumerate(doc["elements"]):
        if where == e["kind"]:
            e["junk"] = 1
            return doc, f"elements.{i}.junk"
        if where == "fitting" and e.get("fittings"):
            e["fittings"][0]["junk"] = 1
            return doc, f"elements.{i}.fittings.0.junk"
        if where == "curve point" and e["kind"] == "pump":
            e["curve"][0]["junk"] = 1
            return doc, f"elements.{i}.curve.0.junk"
    raise AssertionError(where)


@pytest.mark.parametrize("where", ["top", "header", "liquid", "site", "settings", "checks", "start", "end",
                                   "pipe", "pump", "valve", "turbine", "fitting", "curve point"])
def test_a_key_the_program_does_not_know_is_refused_at_its_path(where):
    doc, path = _with_junk(where)
    errors = parse(doc).errors_by_path()
    assert path in errors, (path, list(errors))
    assert "not a field of" in errors[path]


def test_a_key_of_another_element_kind_names_the_kind_it_belongs_to():
    doc = _example("pumped-main")
    _first(doc, "pump")["length"] = "100 m"
    i = doc["elements"].index(_first(doc, "pump"))
    message = parse(doc).errors_by_path()[f"elements.{i}.length"]
    assert "a pipe run" in message and "not of a pump" in message


def test_a_huge_junk_key_is_refused_quickly_with_few_messages():
    # The attack in the issue: 90,000 junk items would be stored forever. One key holding them is
    # one message; 90,000 junk keys are at most MAX_UNKNOWN_REPORTED messages and one count.
    doc = gravity_line()
    doc["junk"] = list(range(90_000))
    errors = parse(doc).errors
    assert [e.path for e in errors] == ["junk"]
    many = gravity_line()
    many["header"] = {f"k{i}": i for i in range(90_000)}
    errors = parse(many).errors
    assert len(errors) == cs.MAX_UNKNOWN_REPORTED + 1
    assert "89980 more fields" in errors[-1].message and errors[-1].path == "header"


def test_a_very_long_key_is_shown_shortened():
    doc = gravity_line()
    doc["header"]["x" * 10_000] = 1
    (error,) = parse(doc).errors
    assert len(error.path) < 100 and error.path.endswith("…")


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_every_demo_sheet_and_the_blank_sheet_still_parse(path):
    assert parse(json.loads(path.read_text())).ok
    # The blank sheet holds no key the parser refuses: all it lacks is the values it asks for.
    blank = parse(cs.blank_sheet())
    assert blank.requests and not blank.mistakes


def test_element_templates_have_only_their_own_kinds_keys():
    for kind, template in cs.ELEMENT_TEMPLATES.items():
        assert set(template) <= set(cs.ELEMENT_FIELDS[kind]), kind
    assert set(cs.FITTING_TEMPLATE) <= set(cs.FITTING_FIELDS)
    assert set(cs.CURVE_POINT_TEMPLATE) <= set(cs.CURVE_POINT_FIELDS)
    assert set(cs.PROFILE_POINT_TEMPLATE) <= set(cs.PROFILE_POINT_FIELDS)


def _props(group: dict) -> set:
    assert group["additionalProperties"] is False
    return set(group["properties"])


def test_the_published_schema_lists_exactly_the_keys_the_parser_reads():
    s = sheet_schema.SCHEMA
    defs = s["$defs"]
    assert set(s["properties"]) == set(cs.SHEET_FIELDS)
    assert s["additionalProperties"] is False
    assert _props(s["properties"]["header"]) == set(cs.HEADER_KEYS)
    assert _props(s["properties"]["liquid"]) == set(cs.LIQUID_FIELDS)
    assert _props(s["properties"]["site"]) == set(cs.SITE_FIELDS)
    assert _props(s["properties"]["settings"]) == set(cs.SETTINGS_FIELDS)
    assert _props(s["properties"]["settings"]["properties"]["checks"]) == set(cs.CHECK_FIELDS)
    for which in ("start", "end"):
        assert _props(defs[which]) == set(cs.NODE_FIELDS[which])
    for kind, fields in cs.ELEMENT_FIELDS.items():
        assert _props(defs[kind]) == set(fields), kind
    assert _props(defs["size"]) == set(cs.SIZE_FIELDS)
    assert _props(defs["fitting"]) == set(cs.FITTING_FIELDS)
    assert _props(defs["profile_point"]) == set(cs.PROFILE_POINT_FIELDS)
    assert _props(defs["curve_point"]) == set(cs.CURVE_POINT_FIELDS)
    assert _props(s["properties"]["energy"]) == set(cs.ENERGY_FIELDS)
    assert _props(s["properties"]["energy"]["properties"]["flow_duration"]["items"]) == set(cs.FDC_POINT_FIELDS)
    case = defs["case"]
    assert _props(case) == set(cs.CASE_FIELDS)
    for which in ("start", "end"):
        assert _props(case["properties"][which]) == set(cs.CASE_NODE_FIELDS)
    assert _props(case["properties"]["liquid"]) == set(cs.CASE_LIQUID_FIELDS)
    assert _props(case["properties"]["pipes"]) == set(cs.CASE_PIPES_FIELDS)
    row = case["properties"]["elements"]["items"]
    assert _props(row) == {"id"} | {k for f in cs.CASE_ELEMENT_FIELDS.values() for k in f}


def test_a_group_switched_on_the_form_keeps_its_other_kinds_keys():
    # The form never deletes a key: a liquid switched from water to a typed liquid and back, or an
    # end switched from a reservoir to a jet, still parses with the other kind's values in it.
    doc = _example("pumped-main")
    doc["liquid"].update({"kind": "water", "name": "brine", "density": "1030 kg/m^3"})
    doc["end"].update({"nozzle_diameter": "", "velocity_coefficient": ""})
    assert parse(doc).ok, parse(doc).errors
    pump = _first(doc, "pump")
    pump.update({"mode": "head", "head": "30 m"})  # the curve's points stay on the pump
    assert pump["curve"] and parse(doc).ok, parse(doc).errors
