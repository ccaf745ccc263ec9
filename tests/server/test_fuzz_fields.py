"""Property tests: random and hostile values in every form field and every API field never cause a server error,
every refusal says why, and a refused edit leaves the stored sheet exactly as it was."""

from __future__ import annotations

import copy
import json
import re
import tempfile
from pathlib import Path
from urllib.parse import quote

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from linetools import gravity_line
from servertools import FIGURES, HX, BrowserClient, form_fields

from calc.model import sheet as calc_sheet
from server.app import create_app
from server.editing import is_bare_number, related, split_path
from server.form import FormView
from server.pages import placeholder_units

OK_FORM = {200, 303, 409, 422}
HOSTILE = [
    "", " ", "\t", "0", "-0 m", "-1 m", "1e309 m", "1e-400 m", "nan m", "inf", "-inf m", "NaN", "1/0", "0x10",
    "1,5 m", "1 000 m", "12 degF", "-273.16 degC", "1e6 degC", "3 kg", "1 parsec", "10 m/s", "10 L/s", "85 %",
    "150 mm", "6 in", "SDR11", "40", "true", "null", "None", "[]", "{}", "💧", "\x00", "\u202e", "\ufeff12 m",
    "<script>x(1)</script>", "' OR 1=1 --", "%00", "../../etc/passwd", "{{7*7}}", "a" * 6000, "9" * 400,
    "entrance-sharp", "k", "2k", "3k", "curve", "power", "head", "jet", "pressure", "reservoir", "pipe", "pump",
    "US", "SI", "letters", "custom", "water", "asme-b36.10m", "pe-iso4427",
]
values = st.one_of(
    st.sampled_from(HOSTILE),
    st.text(max_size=40),
    st.floats(allow_nan=True, allow_infinity=True).map(str),
    st.tuples(st.floats(allow_nan=False, allow_infinity=False, width=32).map(str),
              st.sampled_from(["m", "mm", "ft", "in", "L/s", "gpm", "kPa", "bar", "psi", "kW", "hp", "degC", "%", ""]))
    .map(" ".join),
)
json_values = st.recursive(
    st.one_of(st.none(), st.booleans(), st.integers(), st.integers(min_value=2**63, max_value=2**70),
              st.floats(allow_nan=False, allow_infinity=False), st.text(max_size=30), st.sampled_from(HOSTILE)),
    lambda children: st.lists(children, max_size=4) | st.dictionaries(st.text(max_size=8), children, max_size=4),
    max_leaves=12,
)
# Bounded, so the suite stays quick; the figures printed at the end count every input tried.
FUZZ = settings(max_examples=100, deadline=None, suppress_health_check=list(HealthCheck), database=None)


@pytest.fixture(scope="module")
def fuzz_client():
    # One store for the module: each example reads the sheet as it is now, so examples need no reset.
    with tempfile.TemporaryDirectory() as folder, BrowserClient(create_app(Path(folder))) as client:
        yield client


def _latest(client, sheet_id: int) -> tuple[int, str]:
    revs = client.get(f"/api/sheets/{sheet_id}/revisions").json()["revisions"]
    return revs[0]["number"], revs[0]["digest"]


def _places(doc) -> list[tuple]:
    """Every place in a document (values and the groups and lists holding them) as a tuple of keys."""
    out, stack = [], [((), doc)]
    while stack:
        path, node = stack.pop()
        if path:
            out.append(path)
        if isinstance(node, dict):
            stack.extend(((*path, k), v) for k, v in node.items())
        elif isinstance(node, list):
            stack.extend(((*path, i), v) for i, v in enumerate(node))
    return sorted(out, key=repr)


def _messages(html: str) -> list[tuple[str, str]]:
    """(path, text) of every message slot in a page or fragment (a request is a span inside its slot)."""
    return [(m.group(1).replace("-", "."), re.sub(r"<[^>]+>", "", m.group(2)).strip())
            for m in re.finditer(r'<p[^>]*id="m-([A-Za-z0-9_-]+)"[^>]*>(.*?)</p>', html, re.S)]


@FUZZ
@given(data=st.data())
def test_any_value_in_any_form_field(fuzz_client, data):
    client = fuzz_client
    sheet_id = data.draw(st.sampled_from([1, 2, 3, 4]), label="sheet")
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    doc = json.loads(fields["doc"])
    names = [f.path for f in FormView(doc).all_fields()] + ["base", "doc", "action", "author", "shown_errors"]
    # An index, not the name itself: what is drawn must not depend on the sheet's present state.
    name = names[data.draw(st.integers(min_value=0, max_value=10**6), label="field index") % len(names)]
    value = data.draw(values, label="value")
    htmx = data.draw(st.booleans(), label="htmx")
    before = _latest(client, sheet_id)
    stored_before = client.get(f"/api/sheets/{sheet_id}").json()["document"]
    fields[name] = value
    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=HX if htmx else {}, follow_redirects=False)
    FIGURES["fuzz: form field values tried"] += 1
    assert response.status_code in OK_FORM, (name, value, response.status_code)
    after = _latest(client, sheet_id)
    stored = client.get(f"/api/sheets/{sheet_id}").json()["document"]
    assert calc_sheet.parse(stored).ok, "the stored sheet is always a valid one"
    if response.status_code in (409, 422):
        assert after == before and stored == stored_before, "a refused edit changes nothing"
        text = response.text
        if response.status_code == 409:
            assert "Not saved" in text
        elif split_path(name) is not None:
            # The summary says so, and a message stands in the field's own group: at the field, beside it
            # (a changed kind can make a neighbour required), or under the group or part it belongs to.
            assert "correcting" in text
            group = name.rsplit(".", 1)[0]
            shown = [p for p, words in _messages(text) if words]
            assert any(related(p, group) for p in shown), (name, shown)
    elif after != before and split_path(name) is not None and len(value) <= 5000:
        # Saved: the field holds what was typed (counts become numbers, and a bare number in a quantity
        # field takes the unit its placeholder shows).
        node = stored
        for part in split_path(name):
            node = node[part]
        unit = placeholder_units(doc).get(name)
        assert str(node) == value or (isinstance(node, int) and int(value) == node) or (
            unit and is_bare_number(value) and node == f"{value.strip()} {unit}"), (name, value, node)
    assert client.get(f"/sheets/{sheet_id}").status_code == 200


@FUZZ
@given(data=st.data())
def test_any_json_at_any_place_of_an_api_document(fuzz_client, data):
    client = fuzz_client
    sheet_id = data.draw(st.sampled_from([1, 2, 3, 4]), label="sheet")
    current = client.get(f"/api/sheets/{sheet_id}").json()
    doc = copy.deepcopy(current["document"])
    places = _places(doc)
    where = places[data.draw(st.integers(min_value=0, max_value=10**6), label="place index") % len(places)]
    value = data.draw(json_values, label="value")
    node = doc
    for part in where[:-1]:
        node = node[part]
    node[where[-1]] = value
    before = _latest(client, sheet_id)
    body = {"document": doc, "base_revision": current["revision"],
            "note": data.draw(st.one_of(st.text(max_size=20), st.just("x" * 600)), label="note"),
            "author": data.draw(st.text(max_size=120), label="author")}
    response = client.put(f"/api/sheets/{sheet_id}", content=json.dumps(body), headers={"content-type": "application/json"})
    FIGURES["fuzz: API documents tried"] += 1
    assert response.status_code in (200, 409, 422), (where, value, response.status_code)
    if response.status_code != 200:
        answer = response.json()
        assert answer["ok"] is False and answer["message"]
        if response.status_code == 422:
            assert answer["errors"] and all(e["message"] for e in answer["errors"])
        assert _latest(client, sheet_id) == before
    else:
        assert calc_sheet.parse(client.get(f"/api/sheets/{sheet_id}").json()["document"]).ok
    for url in ("/api/solve", "/api/sheets"):
        other = client.post(url, json={"document": doc})
        assert other.status_code in (200, 201, 422), (url, other.status_code)
        if other.status_code == 422:
            assert other.json()["errors"] or other.json().get("message")
        FIGURES["fuzz: API documents tried"] += 1


@FUZZ
@given(base=json_values,
       sheet=st.one_of(st.integers(), st.just("99999999999999999999999"),
                       # "." and ".." are path steps the client resolves before sending, not sheet numbers
                       st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=12)
                       .filter(lambda t: t not in (".", ".."))),
       extra=st.dictionaries(st.text(max_size=10), json_values, max_size=3))
def test_any_value_in_the_api_envelope(fuzz_client, base, sheet, extra):
    client = fuzz_client
    document = gravity_line()
    body = {"document": document, "base_revision": base, **extra}
    before = client.get("/api/sheets").json()
    response = client.put(f"/api/sheets/{quote(str(sheet), safe='')}", content=json.dumps(body),
                          headers={"content-type": "application/json"})
    FIGURES["fuzz: API envelopes tried"] += 1
    assert response.status_code in (200, 404, 409, 422), response.status_code
    if response.status_code != 200:
        assert response.json()["message"]
        assert client.get("/api/sheets").json() == before


@FUZZ
@given(data=st.data())
def test_any_value_in_the_other_forms(fuzz_client, data):
    client = fuzz_client
    routes = [("/sheets", ["demo"]), ("/sheets/2/duplicate", []), ("/sheets/2/revisions/1/restore", ["base"]),
              ("/sheets/3/links", ["note"]), ("/sheets/3/links/revoke", ["token"]), ("/key", ["key", "next"]),
              ("/sheets/4/revisions/1/signatures", ["role", "login", "password", "comment", "fingerprint"]),
              ("/accounts", ["action", "login", "name", "initials", "password", "admin_login", "admin_password"])]
    url, names = data.draw(st.sampled_from(routes), label="route")
    form = {n: data.draw(values, label=n) for n in names}
    response = client.post(url, data=form, follow_redirects=False)
    FIGURES["fuzz: other form values tried"] += 1
    assert response.status_code in (200, 303, 401, 403, 404, 409, 422, 429), (url, form, response.status_code)
    if response.status_code in (404, 409, 422):
        assert re.search(r'class="(lead|notice[^"]*)"[^>]*>\s*\S', response.text), "the refusal says why"


@settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck), database=None)
@given(raw=st.one_of(st.binary(max_size=300), json_values.map(lambda v: json.dumps(v).encode())))
def test_any_file_given_to_the_import(fuzz_client, raw):
    before = len(fuzz_client.get("/api/sheets").json()["sheets"])
    response = fuzz_client.post("/sheets/import", files={"file": ("x.json", raw, "application/json")})
    FIGURES["fuzz: import files tried"] += 1
    assert response.status_code == 422 and "Nothing was imported" in response.text
    assert len(fuzz_client.get("/api/sheets").json()["sheets"]) == before
