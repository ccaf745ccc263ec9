"""The JSON API through the ASGI app: list, read, create, replace (with conflicts), revisions, solve, schema."""

from __future__ import annotations

import copy
import json

import pytest
from linetools import gravity_line
from servertools import BrowserClient, demo_files

from calc.model.schema import SCHEMA
from server.app import create_app


def _error_shape(body: dict, status: int) -> None:
    assert body["ok"] is False and body["status"] == status
    assert isinstance(body["title"], str) and isinstance(body["message"], str) and body["message"]
    assert isinstance(body["errors"], list)


def test_list(client):
    body = client.get("/api/sheets").json()
    assert len(body["sheets"]) == len(demo_files())
    first = body["sheets"][0]
    assert set(first) == {"id", "title", "calc_number", "project", "revision", "changed", "created", "archived"}
    assert client.get("/api/sheets", params={"archived": "true"}).json() == {"sheets": []}


def test_read(client):
    body = client.get("/api/sheets/1").json()
    assert body["id"] == 1 and body["revision"] == 1 and body["archived"] is False
    assert body["document"] == json.loads(demo_files()[0].read_text())


def test_create_and_read_back(client):
    doc = gravity_line()
    doc["header"]["title"] = "Made by a script"
    response = client.post("/api/sheets", json={"document": doc, "note": "from a test"})
    assert response.status_code == 201
    created = response.json()
    assert created["revision"] == 1 and created["added"] is True
    assert client.get(f"/api/sheets/{created['id']}").json()["document"] == doc
    revisions = client.get(f"/api/sheets/{created['id']}/revisions").json()["revisions"]
    assert revisions[0]["note"] == "from a test"


def test_create_refuses_an_invalid_sheet_with_messages_per_path(client):
    doc = gravity_line()
    doc["elements"][0]["length"] = "ten metres"
    doc["liquid"]["temperature"] = ""
    response = client.post("/api/sheets", json={"document": doc})
    assert response.status_code == 422
    body = response.json()
    _error_shape(body, 422)
    paths = {e["path"] for e in body["errors"]}
    assert paths == {"elements.0.length", "liquid.temperature"}
    assert all(e["message"] for e in body["errors"])
    assert len(client.get("/api/sheets").json()["sheets"]) == len(demo_files())


@pytest.mark.parametrize("body", [
    None, [], "text", {"document": "not an object"}, {"document": []}, {"doc": {}},
    {"document": {}, "note": "x" * 5000}, {"document": {}, "note": 5},
])
def test_create_with_a_malformed_body_is_422_json(client, body):
    response = client.post("/api/sheets", json=body)
    assert response.status_code == 422
    _error_shape(response.json(), 422)


@pytest.mark.parametrize("raw", [b"", b"{", b"\xff\xfe", b'{"document": {"a": NaN}}', b"[" * 100000])
def test_broken_json_is_a_client_error(client, raw):
    response = client.post("/api/sheets", content=raw, headers={"content-type": "application/json"})
    assert 400 <= response.status_code < 500
    _error_shape(response.json(), response.status_code)


def test_replace(client):
    doc = client.get("/api/sheets/1").json()["document"]
    doc["header"]["project"] = "Replaced by a script"
    response = client.put("/api/sheets/1", json={"base_revision": 1, "document": doc})
    assert response.status_code == 200
    assert response.json() == {"id": 1, "revision": 2, "added": True}
    assert client.get("/api/sheets/1").json()["document"]["header"]["project"] == "Replaced by a script"
    # The same document again adds nothing.
    assert client.put("/api/sheets/1", json={"base_revision": 2, "document": doc}).json()["added"] is False


def test_replace_on_a_stale_revision_is_409_and_stores_nothing(client):
    doc = client.get("/api/sheets/1").json()["document"]
    assert client.put("/api/sheets/1", json={"base_revision": 1, "document": {**doc, "header": {
        **doc["header"], "title": "first"}}}).status_code == 200
    response = client.put("/api/sheets/1", json={"base_revision": 1, "document": doc})
    assert response.status_code == 409
    body = response.json()
    _error_shape(body, 409)
    assert body["current_revision"] == 2 and "revision 2" in body["message"]
    assert client.get("/api/sheets/1").json()["document"]["header"]["title"] == "first"


def test_replace_with_an_invalid_sheet_is_422(client):
    doc = client.get("/api/sheets/1").json()["document"]
    doc["elements"] = []
    response = client.put("/api/sheets/1", json={"base_revision": 1, "document": doc})
    assert response.status_code == 422
    assert [e["path"] for e in response.json()["errors"]] == ["elements"]
    assert client.get("/api/sheets/1").json()["revision"] == 1


@pytest.mark.parametrize("url", ["/api/sheets/999", "/api/sheets/999/revisions", "/api/sheets/1/revisions/999",
                                 "/api/sheets/99999999999999999999999"])
def test_missing_is_404_json(client, url):
    response = client.get(url)
    assert response.status_code == 404
    _error_shape(response.json(), 404)


def test_replace_missing_sheet_is_404(client):
    response = client.put("/api/sheets/999", json={"base_revision": 1, "document": gravity_line()})
    assert response.status_code == 404


def test_ids_that_are_not_numbers_are_422(client):
    response = client.get("/api/sheets/abc")
    assert response.status_code == 422
    assert response.json()["errors"][0]["path"] == "sheet_id"


def test_revisions(client):
    doc = client.get("/api/sheets/1").json()["document"]
    client.put("/api/sheets/1", json={"base_revision": 1, "document": {**doc, "site": {
        "atmospheric_pressure": "95 kPa"}}, "note": "site at altitude"})
    revisions = client.get("/api/sheets/1/revisions").json()["revisions"]
    assert [r["number"] for r in revisions] == [2, 1]
    assert revisions[0]["base"] == 1 and revisions[0]["note"] == "site at altitude"
    one = client.get("/api/sheets/1/revisions/1").json()
    assert one["document"] == doc and one["number"] == 1


def test_solve_without_storing(client):
    before = client.get("/api/sheets").json()
    doc = gravity_line()
    response = client.post("/api/solve", json={"document": doc})
    assert response.status_code == 200
    body = response.json()
    assert body["ok"] is True and body["errors"] == []
    sol = body["solution"]
    assert sol["status"] == "solved" and sol["points"][sol["design_index"]]["Q"] > 0
    assert client.get("/api/sheets").json() == before


def test_solve_reports_errors_by_path(client):
    doc = gravity_line()
    doc["elements"][0]["diameter"] = "wide"
    response = client.post("/api/solve", json={"document": doc})
    assert response.status_code == 422
    body = response.json()
    assert body["ok"] is False and body["solution"] is None
    assert [e["path"] for e in body["errors"]] == ["elements.0.diameter"]


def test_schema_and_openapi(client):
    assert client.get("/api/schema").json() == SCHEMA
    spec = client.get("/api/openapi.json").json()
    paths = set(spec["paths"])
    assert {"/api/sheets", "/api/sheets/{sheet_id}", "/api/sheets/{sheet_id}/revisions",
            "/api/sheets/{sheet_id}/revisions/{number}", "/api/solve", "/api/schema"} <= paths
    assert not any(p.startswith("/sheets") for p in paths)  # pages are not part of the API
    assert "409" in spec["paths"]["/api/sheets/{sheet_id}"]["put"]["responses"]
    assert client.get("/api/docs").status_code == 200


def test_a_stored_sheet_survives_a_restart_byte_for_byte(data_dir):
    doc = copy.deepcopy(gravity_line())
    doc["header"]["title"] = "Kept exactly — ünïcode, 6 in, 12 °C"
    doc["header"]["purpose"] = "Line one.\nLine two with \"quotes\" and a tab\t."
    with BrowserClient(create_app(data_dir)) as first:
        sheet_id = first.post("/api/sheets", json={"document": doc}).json()["id"]
        before = first.get(f"/api/sheets/{sheet_id}").content
        page_before = first.get(f"/sheets/{sheet_id}").text
        cookies = dict(first.cookies)
    # The same browser after a restart: its form token still holds (the secret is in the store).
    with BrowserClient(create_app(data_dir), cookies=cookies) as second:
        after = second.get(f"/api/sheets/{sheet_id}").content
        page_after = second.get(f"/sheets/{sheet_id}").text
        # Seeding happens on the first start only: no second copy of the demos.
        assert len(second.get("/api/sheets").json()["sheets"]) == len(demo_files()) + 1
    assert after == before
    assert json.loads(after)["document"] == doc
    assert page_after == page_before


def test_body_over_the_limit_is_refused(client):
    big = {"document": gravity_line(), "note": "", "padding": "x" * 1_100_000}
    response = client.post("/api/sheets", json=big)
    assert response.status_code == 413
    _error_shape(response.json(), 413)
    response = client.post("/sheets/1", data={"doc": "x" * 1_100_000})
    assert response.status_code == 413


def test_openapi_page_needs_no_network(client):
    # The page must work on a site network with no internet: every script and style is ours.
    import re

    page = client.get("/api/docs")
    assert page.status_code == 200
    refs = re.findall(r'(?:src|href)="([^"]+)"', page.text)
    assert refs and all(r.startswith("/static/") for r in refs)
    for r in refs:
        assert client.get(r).status_code == 200
    assert client.get("/api/openapi.json").json()["info"]["title"] == "Headsheet"
