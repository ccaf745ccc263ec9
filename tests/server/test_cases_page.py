"""Operating cases on the sheet page and in the API: the case table in the form, the starting sets, a
case's error beside its field, each case's figures and governing cases in the results.

Each case's figures on the page are checked against an independent analysis of the same sheet with
the case's change typed into the base (``calc.analysis.analyse`` of that one-case document), itself
checked against Darcy-Weisbach and Colebrook in tests/calc/model/test_cases.py.
"""

from __future__ import annotations

import copy
import html
import re

from linetools import gravity_line, pump_curve
from servertools import HX, form_fields

from calc.analysis import analyse
from calc.model.sheet import form_ready
from server.results import quantity


def _create(client, doc: dict) -> int:
    r = client.post("/api/sheets", json={"document": doc})
    assert r.status_code == 201, r.text
    return r.json()["id"]


def _doc(client, sid: int) -> dict:
    return client.get(f"/api/sheets/{sid}").json()["document"]


def _pump_doc(units: int = 1, standby: int = 0) -> dict:
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "80 m", "95 m"
    doc["elements"][0]["end_elevation"] = "93 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "Lift", "mode": "curve", "units": units, "standby": standby,
                               "curve": pump_curve(((0, 40), (20, 36), (40, 25), (60, 8)))})
    return form_ready(doc)


def _cell(page: str, path: str) -> str:
    m = re.search(rf'<input type="text" id="f-{re.escape(path.replace(".", "-"))}"[^>]*>', page)
    assert m, path
    return m.group(0)


def _figure_row(page: str, label: str) -> list[str]:
    table = re.search(r'<table class="data case-figures">.*?</table>', page, re.S).group(0)
    row = re.search(rf'<th scope="row">{re.escape(label)}</th>(.*?)</tr>', table, re.S).group(1)
    return [html.unescape(re.sub(r"<small.*?</small>", "", c)).strip() for c in re.findall(r"<td[^>]*>(.*?)</td>", row, re.S)]


def test_the_starting_sets_add_cases_and_a_typed_case_value_is_solved(client):
    sid = _create(client, _pump_doc())
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    r = client.post(f"/sheets/{sid}", data={**fields, "action": "preset:cases:condition"}, headers=HX)
    assert r.status_code == 200
    r = client.post(f"/sheets/{sid}", data={**form_fields(client.get(f"/sheets/{sid}").text),
                                            "action": "preset:cases:levels"}, headers=HX)
    assert r.status_code == 200
    doc = _doc(client, sid)
    assert [c["name"] for c in doc["cases"]] == ["New pipe", "Aged pipe", "Low levels", "High levels"]
    assert doc["cases"][1]["pipes"]["condition"] == "aged"
    # the levels are copied from the base for the designer to change: no level is invented
    assert doc["cases"][2]["end"]["elevation"] == "95 m" == doc["end"]["elevation"]

    page = client.get(f"/sheets/{sid}").text
    assert 'placeholder="as base: 80 m"' in _cell(page, "cases.0.start.elevation")
    fields = form_fields(page)
    fields["cases.3.end.elevation"] = "90"  # a bare number takes the unit the field shows
    r = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert r.status_code == 200, r.text
    assert _doc(client, sid)["cases"][3]["end"]["elevation"] == "90 m"

    page = client.get(f"/sheets/{sid}").text
    alone = copy.deepcopy(_doc(client, sid))
    alone.pop("cases")
    alone["end"]["elevation"] = "90 m"
    expected = analyse(alone).solution.design["Q"]
    flows = _figure_row(page, "Flow")
    assert flows[4] == quantity(expected, "flow")
    assert flows[0] == quantity(analyse(_doc(client, sid)).solution.design["Q"], "flow")
    # the governing table names a case for the highest velocity: the one with the most flow
    gov = re.search(r'<table class="data governing">.*?</table>', page, re.S).group(0)
    fastest = re.search(r'Highest velocity</th><td>([^<]+)</td>', gov).group(1)
    q = {c.name: c.solution.design["Q"] for c in analyse(_doc(client, sid)).cases}
    assert fastest == max(q, key=q.get)


def test_the_standby_set_runs_the_duty_units_then_all(client):
    sid = _create(client, _pump_doc())
    r = client.post(f"/sheets/{sid}", data={**form_fields(client.get(f"/sheets/{sid}").text),
                                            "action": "preset:cases:standby"}, headers=HX)
    assert "No pump has standby units" in html.unescape(r.text)
    assert not _doc(client, sid).get("cases")

    sid = _create(client, _pump_doc(units=3, standby=1))
    client.post(f"/sheets/{sid}", data={**form_fields(client.get(f"/sheets/{sid}").text),
                                        "action": "preset:cases:standby"}, headers=HX)
    doc = _doc(client, sid)
    assert [row["running"] for c in doc["cases"] for row in c["elements"]] == [2, 3]
    page = client.get(f"/sheets/{sid}").text
    assert 'id="f-cases-0-elements-0-running"' in page
    q = {c.name: c.solution.design["Q"] for c in analyse(doc).cases}
    assert q["Base"] == q["Duty units only"] < q["Duty plus standby"]


def test_a_wrong_case_value_is_refused_beside_its_field_and_the_rest_is_kept(client):
    doc = _pump_doc()
    doc["cases"] = [{"name": "High", "end": {"elevation": "97 m"}}]
    sid = _create(client, form_ready(doc))
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    fields["cases.0.end.elevation"] = "97 parsec"
    fields["cases.0.note"] = "tank at overflow"
    r = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert r.status_code == 422
    slot = re.search(r'<p id="m-cases-0-end-elevation"[^>]*>(.*?)</p>', r.text, re.S).group(1)
    assert "beyond any elevation on earth" in html.unescape(slot)
    # the last good results stay, marked stale (the browser keeps what was typed in its field)
    assert 'class="results stale"' in r.text
    stored = _doc(client, sid)["cases"][0]
    assert stored["end"]["elevation"] == "97 m" and stored["note"] == "tank at overflow"


def test_a_case_can_be_removed_and_its_rows_follow_the_elements(client):
    doc = _pump_doc()
    doc["elements"].append({"kind": "valve", "label": "Throttle", "K": "5"})
    doc = form_ready(doc)
    doc["cases"] = [{"name": "Throttled", "elements": [{"id": "valve-1", "K": "40"}]}, {"name": "Other"}]
    sid = _create(client, form_ready(doc))
    page = client.get(f"/sheets/{sid}").text
    assert 'placeholder="as base: 5"' in _cell(page, "cases.1.elements.1.K")
    r = client.post(f"/sheets/{sid}", data={**form_fields(page), "action": "remove:elements.2"}, headers=HX)
    assert "Its changes in 1 case went with it" in html.unescape(r.text)
    doc = _doc(client, sid)
    assert [e["kind"] for e in doc["elements"]] == ["pump", "pipe"]
    assert [[row["id"] for row in c["elements"]] for c in doc["cases"]] == [["pump-1"], ["pump-1"]]

    r = client.post(f"/sheets/{sid}", data={**form_fields(client.get(f"/sheets/{sid}").text),
                                            "action": "remove:cases.0"}, headers=HX)
    assert r.status_code == 200
    assert [c["name"] for c in _doc(client, sid)["cases"]] == ["Other"]
    assert "case «Throttled»" in html.unescape(r.text)


def test_a_row_naming_no_element_is_refused_at_its_field(client):
    doc = _pump_doc()
    doc["cases"] = [{"name": "Typo", "elements": [{"id": "pump-1"}, {"id": "pump-9", "speed_ratio": "0.9"}]}]
    sid = _create(client, gravity_line())
    r = client.put(f"/api/sheets/{sid}", json={"document": doc, "base_revision": 1})
    assert r.status_code == 422
    assert {"path": "cases.0.elements.1.id"} .items() <= next(
        e for e in r.json()["errors"] if e["path"] == "cases.0.elements.1.id").items()
    assert "names no element" in r.text


def test_the_api_solves_every_case(client):
    doc = _pump_doc(units=2)
    doc["cases"] = [{"name": "One unit", "elements": [{"id": "pump-1", "running": 1}]}]
    r = client.post("/api/solve", json={"document": doc})
    assert r.status_code == 200, r.text
    body = r.json()
    assert [c["name"] for c in body["cases"]] == ["Base", "One unit"]
    q = [c["solution"]["points"][c["solution"]["design_index"]]["Q"] for c in body["cases"]]
    assert q[1] < q[0]
    assert body["governing"] and body["findings"]
    assert body["cases"][1]["changes"] == [{"field": "cases.0.elements.0.running", "what": "Lift: units running",
                                            "value": 1}]


def test_the_system_curve_downloads_as_csv_with_every_case(client):
    doc = _pump_doc()
    doc["cases"] = [{"name": "Tank high", "end": {"elevation": "98 m"}}]
    sid = _create(client, form_ready(doc))
    page = client.get(f"/sheets/{sid}").text
    link = re.search(r'href="([^"]*system-curve\.csv)"', page).group(1)
    r = client.get(link)
    assert r.status_code == 200 and r.headers["content-type"].startswith("text/csv")
    assert "attachment" in r.headers["content-disposition"]
    lines = r.text.splitlines()
    assert lines[1].startswith("Flow (L/s),Base: head needed from the pumps (m),Tank high:")
    assert client.get(f"/sheets/{sid}/revisions/99/system-curve.csv").status_code == 404


def test_energy_over_a_year_on_the_page_in_the_record_and_the_cli(client, tmp_path, capsys):
    doc = _pump_doc()
    for pt, eta in zip(doc["elements"][0]["curve"], ("0", "0.6", "0.75", "0.5")):
        pt["efficiency"] = eta
    sid = _create(client, form_ready(doc))
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    fields.update({"energy.hours": "3000", "energy.tariff": "0.2", "energy.currency": "EUR"})
    r = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert r.status_code == 200, r.text
    stored = _doc(client, sid)
    assert stored["energy"]["hours"] == "3000"
    energy = analyse(stored).energy["pumping"][0]
    page = client.get(f"/sheets/{sid}").text
    assert 'id="energy-results"' in page and f"{energy['energy_Wh'] / 1000:,.0f} kWh" in page
    assert f"{energy['cost']:,.0f} EUR" in page
    record = client.get(f"/sheets/{sid}/record").text
    assert "Pumping energy and cost" in record and f"{energy['energy_Wh'] / 1000:,.0f} kWh" in record
    path = tmp_path / "energy.json"
    path.write_text(__import__("json").dumps(stored))
    from server.cli import main
    assert main(["solve", str(path)]) == 0
    assert "pumping 3,000 h" in capsys.readouterr().out


def test_a_flow_duration_table_is_built_on_the_page(client):
    doc = gravity_line()
    doc["elements"].append({"kind": "turbine", "label": "T", "mode": "flow", "flow": "30 L/s", "efficiency": "0.85"})
    sid = _create(client, form_ready(doc))
    for _ in range(2):
        client.post(f"/sheets/{sid}", data={**form_fields(client.get(f"/sheets/{sid}").text),
                                            "action": "add:energy.flow_duration"}, headers=HX)
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    fields.update({"energy.flow_duration.0.exceedance": "10 %", "energy.flow_duration.0.flow": "50 L/s",
                   "energy.flow_duration.1.exceedance": "90 %", "energy.flow_duration.1.flow": "10 L/s"})
    r = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert r.status_code == 200, r.text
    stored = _doc(client, sid)
    assert len(stored["energy"]["flow_duration"]) == 2
    (h,) = analyse(stored).energy["hydro"]
    assert h["energy_Wh"] > 0
    assert "Turbine energy from the flow-duration table" in client.get(f"/sheets/{sid}").text


def test_the_sizes_page_compares_every_size_for_every_case(client):
    doc = _pump_doc()
    doc["cases"] = [{"name": "Tank high", "end": {"elevation": "98 m"}}]
    sid = _create(client, form_ready(doc))
    page = client.get(f"/sheets/{sid}").text
    link = html.unescape(re.search(r'href="([^"]*/sizes)"', page).group(1))
    assert client.get(link).status_code == 200
    r = client.get(link, params={"go": "1", "standard": "pe-iso4427", "class": "SDR11", "from": "140", "to": "200",
                                 "runs": "2", "costs": "140=30, 160=38, 180=47, 200=58", "life": "25"})
    assert r.status_code == 200, r.text
    table = re.search(r'<table class="data sizes-table">.*?</table>', r.text, re.S).group(0)
    from calc.sizing import compare
    expected = compare(_doc(client, sid), "pe-iso4427", "SDR11", [1], "140", "200",
                       {"140": 30, "160": 38, "180": 47, "200": 58}, 25)
    for row in expected["rows"]:
        assert f'<th scope="row">{row["nominal"]}</th>' in table
        assert quantity(row["cases"][1]["Q"], "flow") in table
    assert f'<tr class="design"><th scope="row">{expected["cheapest"]}</th>' in table
    bad = client.get(link, params={"go": "1", "standard": "pe-iso4427", "class": "SDR11", "costs": "lots"})
    assert bad.status_code == 200 and "is not a nominal size and a cost" in html.unescape(bad.text)
    assert client.get(link, params={"go": "1", "standard": "nope"}).status_code == 200
