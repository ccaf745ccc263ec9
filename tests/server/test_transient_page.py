"""Transients through the server: the form's Transients part writes the document, a short run sits in the
results panel and the plots, a long one is deferred to the transient page and its API (both in the work
lane), a bad event value comes back beside its field with the last good results kept, and the read-only
link may open the transient page. The numbers themselves are checked against independent calculations in
tests/calc/transient/; here each figure the server shows is the analysis's own."""

from __future__ import annotations

import json

from servertools import HX, demo_files, form_fields

from calc.analysis import analyse
from calc.model.ids import ensure_ids
from server.lanes import classify


def _penstock() -> dict:
    return json.loads(next(p for p in demo_files() if p.stem == "hydro-penstock").read_text())


def _create(client, doc) -> int:
    r = client.post("/api/sheets", json={"document": doc})
    assert r.status_code == 201, r.text
    return r.json()["id"]


def test_a_short_run_is_in_the_results_and_the_plots(client):
    doc = _penstock()
    sid = _create(client, doc)
    page = client.get(f"/sheets/{sid}").text
    assert 'id="transient-results"' in page and 'id="plot-envelope-1"' in page and 'id="plot-history-1"' in page
    s = analyse(doc).transients[0].summary
    # the highest pressure of the upper run as the analysis gives it, in the sheet's units
    assert f"{s['runs'][0]['p_max'] / 1000:.1f} kPa" in page
    svg = client.get(f"/sheets/{sid}/revisions/1/plots/envelope-1.svg")
    assert svg.status_code == 200 and "Highest head" in svg.text


def test_the_api_gives_every_run_and_solve_gives_the_short_ones(client):
    doc = _penstock()
    sid = _create(client, doc)
    r = client.get(f"/api/sheets/{sid}/revisions/1/transient")
    assert r.status_code == 200
    body = r.json()
    assert body["transients"][0]["case"] == "Base"
    expected = analyse(doc).transients[0].summary["runs"][1]["p_max"]
    assert body["transients"][0]["summary"]["runs"][1]["p_max"] == expected
    solved = client.post("/api/solve", json={"document": doc}).json()
    assert solved["transients"][0]["summary"]["runs"][1]["p_max"] == expected


def test_a_long_run_is_deferred_to_the_transient_page(client):
    doc = _penstock()
    doc["transient"].update(duration="150 s", reaches="300")
    sid = _create(client, doc)
    page = client.get(f"/sheets/{sid}").text
    assert "run on request" in page and f"/sheets/{sid}/revisions/1/transient" in page
    assert 'id="plot-envelope-1"' not in page
    full = client.get(f"/sheets/{sid}/revisions/1/transient")
    assert full.status_code == 200 and 'id="plot-envelope-1"' in full.text
    assert classify(f"/sheets/{sid}/revisions/1/transient", 0, lambda *a: 10) is True
    assert classify(f"/api/sheets/{sid}/revisions/1/transient", 0, lambda *a: 10) is True


def test_a_bad_event_value_stays_beside_its_field_and_the_last_results_stay(client):
    sid = _create(client, _penstock())
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    fields["transient.events.0.time"] = "3 parsecs"
    r = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert r.status_code == 422
    assert "must be a time" in r.text and 'class="results stale"' in r.text
    stored = client.get(f"/api/sheets/{sid}").json()["document"]
    assert stored["transient"]["events"][0]["time"] == "6 s"


def test_the_form_adds_an_event_and_a_device_and_the_run_follows(client):
    doc = ensure_ids(_penstock())
    doc.pop("transient")
    sid = _create(client, doc)
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    r = client.post(f"/sheets/{sid}", data={**fields, "action": "add:transient.events"}, headers=HX)
    assert r.status_code == 200
    page = client.get(f"/sheets/{sid}").text
    assert 'name="transient.events.0.element"' in page
    fields = form_fields(page)
    fields.update({"transient.events.0.kind": "valve", "transient.events.0.element": "valve-1",
                   "transient.events.0.time": "5 s"})
    r = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert r.status_code == 200, r.text[:500]
    stored = client.get(f"/api/sheets/{sid}").json()["document"]
    assert stored["transient"]["events"][0]["element"] == "valve-1"
    before = analyse(stored).transients[0].summary["runs"][0]["p_max"]
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    client.post(f"/sheets/{sid}", data={**fields, "action": "add:transient.devices"}, headers=HX)
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    # (near the valve: the flow of the line stops at the valve in the last of its travel, and a vessel
    # further up leaves the steel run below it to take that stop)
    fields.update({"transient.devices.0.kind": "air_vessel", "transient.devices.0.chainage": "800 m",
                   "transient.devices.0.volume": "4 m^3", "transient.devices.0.gas_volume": "2 m^3",
                   "transient.devices.0.connection_diameter": "200 mm"})
    r = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert r.status_code == 200, r.text[:500]
    stored = client.get(f"/api/sheets/{sid}").json()["document"]
    after = analyse(stored).transients[0].summary
    assert after["devices"][0]["kind"] == "air_vessel"
    assert after["runs"][0]["p_max"] < before  # the vessel takes the rise down


def test_a_read_only_link_may_open_the_transient_page(client, app):
    sid = _create(client, _penstock())
    token = app.state.store.create_view_link(sid, "checker").token
    r = client.get(f"/view/{token}/sheets/{sid}/revisions/1/transient")
    assert r.status_code == 200 and "Transient envelope" in r.text


def test_the_cli_runs_the_transients_and_the_record_carries_them(client, tmp_path, capsys):
    from server.cli import main

    doc = _penstock()
    path = tmp_path / "penstock.json"
    path.write_text(json.dumps(doc))
    s = analyse(doc).transients[0].summary
    assert main(["transient", str(path)]) == 0
    out = capsys.readouterr().out
    assert "Turbine-generator rejects its load" in out and f"{s['reaches']} reaches" in out
    assert f"{s['runs'][1]['p_max'] / 1000:.4g} kPa" in out
    assert main(["transient", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data[0]["summary"]["runs"][1]["p_max"] == s["runs"][1]["p_max"]
    sid = _create(client, doc)
    record = client.get(f"/sheets/{sid}/record").text
    assert "Transient pressures, case Base" in record and "Fluid Transients in Systems" in record
    assert 'id="plot-envelope-1"' in record


def test_a_case_without_events_is_refused_by_the_cli(tmp_path, capsys):
    from server.cli import main

    path = tmp_path / "main.json"
    path.write_text(next(p for p in demo_files() if p.stem == "pumped-main").read_text())
    try:
        main(["transient", str(path)])
    except SystemExit as e:
        assert "no transient events" in str(e.code)
    else:
        raise AssertionError("a sheet without events ran")
