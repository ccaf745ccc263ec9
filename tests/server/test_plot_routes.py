"""The plots beside the results through the app: on the sheet page and its edit fragments, each downloadable as
an SVG file (no-store, attachment), on revision pages and through a read-only link, and nothing for what has none."""

from __future__ import annotations

import copy
import re
import xml.etree.ElementTree as ET

from servertools import HX, form_fields

NS = "{http://www.w3.org/2000/svg}"


def _sheet_id(client, title_part: str) -> int:
    sheets = client.get("/api/sheets").json()["sheets"]
    return next(s["id"] for s in sheets if title_part in s["title"])


def _figures(html: str) -> list[str]:
    return re.findall(r'<figure class="plot" id="plot-([a-z]+)">', html)


def test_the_sheet_page_shows_every_plot_with_a_download_link(client):
    sid = _sheet_id(client, "rising main")
    html = client.get(f"/sheets/{sid}").text
    assert _figures(html) == ["profile", "curves", "efficiency", "npsh"]
    assert html.count('<svg xmlns="http://www.w3.org/2000/svg"') >= 4
    for key in ("profile", "curves", "efficiency", "npsh"):
        assert f'href="/sheets/{sid}/revisions/1/plots/{key}.svg"' in html
    assert "Flow [L/s]" in html and "Chainage along the line [m]" in html
    assert '<script src="/static/js/plots.js" defer></script>' in html
    # The plots come after the headline figures and before the checks.
    assert html.index('id="plots"') < html.index('id="findings"')
    # They name their revision as the results do (this demo numbers its issues: 0.1), not by its save number.
    label = client.get(f"/api/sheets/{sid}/revisions").json()["revisions"][0]["label"]
    assert label == "0.1"
    assert f'<h3 id="plots-title">Plots <small>at revision {label}</small>' in html
    assert f"for revision {label}" in html


def test_a_plot_downloads_as_an_svg_file(client):
    sid = _sheet_id(client, "rising main")
    response = client.get(f"/sheets/{sid}/revisions/1/plots/curves.svg")
    assert response.status_code == 200
    assert response.headers["content-type"].startswith("image/svg+xml")
    assert response.headers["cache-control"] == "no-store"
    assert response.headers["content-disposition"] == 'attachment; filename="RW-PM-011-rev-1-curves.svg"'
    root = ET.fromstring(response.text.split("\n", 1)[1])
    assert root.tag == f"{NS}svg" and root.get("width") and root.find(f"{NS}desc") is not None
    assert "Head [m]" in response.text


def test_a_plot_a_sheet_has_not_is_not_found(client):
    hydro = _sheet_id(client, "enstock")
    assert client.get(f"/sheets/{hydro}/revisions/1/plots/power.svg").status_code == 200
    for path in (f"/sheets/{hydro}/revisions/1/plots/npsh.svg", f"/sheets/{hydro}/revisions/1/plots/nothing.svg",
                 f"/sheets/{hydro}/revisions/1/plots/Curves.svg", f"/sheets/{hydro}/revisions/99/plots/curves.svg",
                 "/sheets/999/revisions/1/plots/curves.svg", f"/sheets/{hydro}/revisions/1/plots/..%2Fcurves.svg"):
        response = client.get(path)
        assert response.status_code == 404, path
        assert "<svg" not in response.text


def test_an_edit_answers_with_the_plots_of_the_new_revision(client):
    sid = _sheet_id(client, "rising main")
    fields = form_fields(client.get(f"/sheets/{sid}").text)
    path = next(k for k, v in fields.items() if k.endswith(".length") and v == "2100 m")
    fields[path] = "2400 m"
    response = client.post(f"/sheets/{sid}", data=fields, headers=HX)
    assert response.status_code == 200
    assert _figures(response.text) == ["profile", "curves", "efficiency", "npsh"]
    assert f'href="/sheets/{sid}/revisions/2/plots/profile.svg"' in response.text
    before = client.get(f"/sheets/{sid}/revisions/1/plots/profile.svg").text
    after = client.get(f"/sheets/{sid}/revisions/2/plots/profile.svg").text
    assert before != after


def test_a_sheet_with_no_operating_point_still_plots_its_curves(client):
    hydro = _sheet_id(client, "enstock")
    doc = copy.deepcopy(client.get(f"/api/sheets/{hydro}").json()["document"])
    doc["elements"][-1]["power"] = "400 kW"  # more than the line can give
    sid = client.post("/api/sheets", json={"document": doc}).json()["id"]
    assert _figures(client.get(f"/sheets/{sid}").text) == ["curves", "power"]
    assert client.get(f"/sheets/{sid}/revisions/1/plots/profile.svg").status_code == 404


def test_a_sheet_that_does_not_parse_shows_no_plots(client, app):
    hydro = _sheet_id(client, "enstock")
    doc = copy.deepcopy(client.get(f"/api/sheets/{hydro}").json()["document"])
    doc["elements"][0]["length"] = "-3 m"  # stored as it came (an import of an old file may be so)
    sid = app.state.store.create_sheet(doc).sheet_id
    html = client.get(f"/sheets/{sid}").text
    assert 'id="plots"' not in html
    assert client.get(f"/sheets/{sid}/revisions/1/plots/curves.svg").status_code == 404


def test_a_revision_page_and_a_read_only_link_show_the_same_plots(client, app):
    sid = _sheet_id(client, "rising main")
    assert _figures(client.get(f"/sheets/{sid}/revisions/1").text) == ["profile", "curves", "efficiency", "npsh"]
    token = app.state.store.create_view_link(sid, "plots").token
    page = client.get(f"/view/{token}/sheets/{sid}")
    assert page.status_code == 200
    assert _figures(page.text) == ["profile", "curves", "efficiency", "npsh"]
    link = f"/view/{token}/sheets/{sid}/revisions/1/plots/npsh.svg"
    assert f'href="{link}"' in page.text
    response = client.get(link)
    assert response.status_code == 200 and response.headers["content-type"].startswith("image/svg+xml")
    # The link reaches its own sheet's plots only.
    other = _sheet_id(client, "enstock")
    assert client.get(f"/view/{token}/sheets/{other}/revisions/1/plots/curves.svg").status_code == 404
