"""No input produces a server error: empty strings, text in number fields, hostile lists, random form posts."""

from __future__ import annotations

import copy
import json
import re
import tempfile
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from linetools import gravity_line
from servertools import FIGURES, HX, BrowserClient, form_fields

from calc.model import sheet as calc_sheet
from server.app import create_app

OK_STATUSES = {200, 303, 409, 422}


def _stored_is_whole(client, sheet_id: int = 1) -> None:
    # The stored sheet never holds a wrong value: it parses, or it lacks only values nobody has given yet
    # (a new element's, which the sheet asks for).
    doc = client.get(f"/api/sheets/{sheet_id}").json()["document"]
    assert not calc_sheet.parse(doc).mistakes, "the stored sheet must never hold a wrong value"


def test_every_field_empty(client, sheet_form):
    fields = {k: ("" if k not in ("base", "doc") else v) for k, v in sheet_form(1).items()}
    for headers in (HX, {}):
        response = client.post("/sheets/1", data=fields, headers=headers)
        assert response.status_code == 422
        # What could be kept was (an empty title is a title); the next post names the revision it made.
        fields["base"] = re.search(r'id="base" value="(\d+)"', response.text).group(1)
    _stored_is_whole(client)


def test_text_in_every_field(client, sheet_form):
    fields = {k: ("twelve" if k not in ("base", "doc") else v) for k, v in sheet_form(1).items()}
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 422
    assert "must start with a number" in response.text
    _stored_is_whole(client)


def test_empty_post_and_garbage_posts(client):
    for data in ({}, {"base": "abc"}, {"base": "1", "doc": "{not json"}, {"base": "99999999999999999999999"},
                 {"base": "1", "action": "add:elements:pipe", "doc": "[]"}):
        for headers in (HX, {}):
            assert client.post("/sheets/1", data=data, headers=headers).status_code in OK_STATUSES
    _stored_is_whole(client)


def test_multipart_and_json_bodies_to_the_form(client):
    assert client.post("/sheets/1", files={"f": ("a.txt", b"x")}).status_code in OK_STATUSES
    assert client.post("/sheets/1", json={"base": 1}).status_code in OK_STATUSES


def test_a_form_copy_of_the_document_with_huge_lists_is_refused_with_a_message(client, sheet_form):
    fields = sheet_form(1)
    doc = json.loads(fields["doc"])
    doc["elements"] = [copy.deepcopy(doc["elements"][0]) for _ in range(calc_sheet.MAX_ELEMENTS + 5)]
    fields["doc"] = json.dumps(doc)
    response = client.post("/sheets/1", data=fields, headers=HX)
    assert response.status_code == 422
    assert f"at most {calc_sheet.MAX_ELEMENTS}" in response.text
    _stored_is_whole(client)


def test_a_form_copy_with_nan_or_deep_nesting_falls_back_to_the_stored_sheet(client, sheet_form):
    fields = sheet_form(1)
    for bad in ('{"header": {"x": NaN}}', '{"a":' * 60 + "1" + "}" * 60):
        response = client.post("/sheets/1", data={**fields, "doc": bad}, headers=HX)
        assert response.status_code in OK_STATUSES
    _stored_is_whole(client)


@pytest.mark.parametrize("mutate", [
    lambda d: d["elements"][0].update(fittings=[{"type": "k", "K": "0.1"}] * (calc_sheet.MAX_FITTINGS + 1)),
    lambda d: d["elements"][0].update(profile=[{"chainage": "1 m", "elevation": "1 m"}] * (calc_sheet.MAX_POINTS + 1)),
    lambda d: d.update(elements=[d["elements"][0]] * (calc_sheet.MAX_ELEMENTS + 1)),
    lambda d: d.update(elements="a pipe"),
    lambda d: d.update(header=["not", "an", "object"]),
    lambda d: d["header"].update(title="x" * 10_000),
    lambda d: d["header"].update(extra=float("nan")),
    lambda d: d["elements"][0].update(length=1e308),
    lambda d: d["elements"][0].update(diameter="0 mm"),
    lambda d: d["elements"][0].update(fittings=[None, 3, "x"]),
    lambda d: d["liquid"].update(temperature="500 degC"),
])
def test_api_hostile_documents_get_422_with_paths(client, mutate):
    doc = gravity_line()
    mutate(doc)
    for method, url, body in (("post", "/api/sheets", {"document": doc}), ("post", "/api/solve", {"document": doc}),
                              ("put", "/api/sheets/1", {"document": doc, "base_revision": 1})):
        response = client.request(method, url, content=json.dumps(body, allow_nan=True),
                                  headers={"content-type": "application/json"})
        assert response.status_code == 422, (url, response.text[:300])
        assert response.json()["errors"], url
    _stored_is_whole(client)


@pytest.mark.parametrize("mutate", [
    lambda d: d["elements"][0].update(length="1e308 m"),
    lambda d: d["elements"][0].update(length="1e-300 m", diameter="1e-300 m"),
    lambda d: d["elements"][0].update(diameter="10 km", length="1 mm"),
    lambda d: d["start"].update(elevation="1e300 m"),
    lambda d: d["end"].update(elevation="1e300 m"),
    lambda d: d["elements"][0].update(fittings=[{"type": "k", "K": "1e300", "count": 1000}]),
    lambda d: d.update(elements=[copy.deepcopy(d["elements"][0]) for _ in range(calc_sheet.MAX_ELEMENTS)]),
])
def test_api_extreme_but_well_formed_documents_never_break_the_server(client, mutate):
    # Physically absurd values are for the checks to flag, not for the server to trip on.
    doc = gravity_line()
    mutate(doc)
    assert client.post("/api/solve", json={"document": doc}).status_code in (200, 422)
    response = client.post("/api/sheets", json={"document": doc})
    assert response.status_code in (201, 422)
    if response.status_code == 201:
        assert client.get(f"/sheets/{response.json()['id']}").status_code == 200


_text = st.one_of(
    st.sampled_from(["", " ", "0", "-1 m", "1e400 m", "nan m", "inf", "12", "150 mm", "3 bar", "85 %", "∞",
                     "10 L/s", "20 degC", "-300 degC", "1/0", "None", "null", "<script>", "a" * 300, "0.0 mm",
                     "SDR11", "110", "entrance-sharp", "k", "2k", "3k", "curve", "head", "power", "jet", "US"]),
    st.text(max_size=30),
)


@settings(max_examples=30, deadline=None)  # test_fuzz_fields.py tries many more, on one store
@given(data=st.data())
def test_random_form_posts_never_break_the_sheet(data):
    # A fresh store per example, so that a failing example replays exactly.
    with tempfile.TemporaryDirectory() as folder, BrowserClient(create_app(Path(folder))) as client:
        fields = form_fields(client.get("/sheets/1").text)
        names = sorted(k for k in fields if k not in ("base", "doc", "shown_errors"))
        chosen = data.draw(st.lists(st.sampled_from(names), min_size=1, max_size=6, unique=True))
        for name in chosen:
            fields[name] = data.draw(_text)
        n = len(json.loads(fields["doc"])["elements"])
        actions = ["", "add:elements:pipe", "add:elements:pump", "add:elements:turbine", "add:elements:valve",
                   f"remove:elements.{n - 1}", "up:elements.1", "down:elements.0", "add:elements.0.fittings",
                   "add:elements.0.profile", "remove:elements.0.fittings.0", "add:elements.1.curve"]
        fields["action"] = data.draw(st.sampled_from(actions))
        headers = data.draw(st.sampled_from([HX, {}]))
        response = client.post("/sheets/1", data=fields, headers=headers, follow_redirects=False)
        assert response.status_code in OK_STATUSES
        _stored_is_whole(client)
        assert client.get("/sheets/1").status_code == 200


UNIT_BOMBS = ["1 m*10**10**10", "1 m**9**9**9", "2 mm**99999999", "1 (m**9)**9**9"]


def test_unit_expression_bombs_are_refused_quickly_through_the_api(client):
    # A 15-character unit expression once froze the whole server: each is now refused by the unit
    # grammar before the unit library runs, with the field's path and a message.
    import time

    slowest = 0.0
    for text in UNIT_BOMBS:
        doc = gravity_line()
        doc["elements"][0]["length"] = text
        t = time.perf_counter()
        parsed = calc_sheet.parse(doc)  # the refusal itself, without the HTTP round trip
        slowest = max(slowest, time.perf_counter() - t)
        assert not parsed.ok
        response = client.post("/api/solve", json={"document": doc})
        assert response.status_code == 422
        errors = response.json()["errors"]
        assert [e["path"] for e in errors] == ["elements.0.length"] and "not a unit" in errors[0]["message"]
    FIGURES["unit-expression bombs refused"] += len(UNIT_BOMBS)
    FIGURES["unit-expression bombs: slowest refusal (parse), ms"] = max(FIGURES["unit-expression bombs: slowest refusal (parse), ms"],
                                                                round(slowest * 1e3, 1))
