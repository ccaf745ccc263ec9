"""User text comes back escaped everywhere it is shown (pages, fragments, records, messages), and PDFs load only our files."""

from __future__ import annotations

import io
import json

import pytest
from linetools import gravity_line
from pypdf import PdfReader
from servertools import FIGURES, HX, PASSWORD, account_for, form_fields

from server import pdf
from server.form import FormView

#: Markup that would run or load something if it reached a page unescaped.
PAYLOADS = [
    '<script>x(1)</script>',
    '"><img src=x onerror=y(1)>',
    "'><svg onload=z(1)>",
    '</textarea><script>x(2)</script>',
    '<link rel=stylesheet href="http://127.0.0.1:9/evil.css">',
    '<img src="file:///etc/passwd">',
]
RAW = ["<script>x(", "<img src=x", "<svg onload", '<link rel=stylesheet href="http', '<img src="file:']


def _clean(text: str, where: str) -> None:
    for marker in RAW:
        assert marker not in text, (where, marker)


def _every_field(doc: dict) -> list[str]:
    return [f.path for f in FormView(doc).all_fields()]


def _pages(client, sheet_id: int) -> dict[str, str]:
    out = {}
    for url in ("/", f"/sheets/{sheet_id}", f"/sheets/{sheet_id}/history", f"/sheets/{sheet_id}/revisions/1",
                f"/sheets/{sheet_id}/record", f"/sheets/{sheet_id}/compare"):
        response = client.get(url)
        assert response.status_code == 200, url
        out[url] = response.text
    # The export is data for another Headsheet, sent as a JSON download a browser never renders.
    export = client.get(f"/sheets/{sheet_id}/export.json")
    assert export.headers["content-type"].startswith("application/json")
    assert export.headers["content-disposition"].startswith("attachment")
    assert export.headers["x-content-type-options"] == "nosniff"
    latest = client.get(f"/api/sheets/{sheet_id}").json()["revision"]
    out["record"] = client.get(f"/sheets/{sheet_id}/revisions/{latest}/record").text
    return out


@pytest.mark.parametrize("sheet_id", [1, 2, 3, 4])
def test_payloads_typed_into_every_field_come_back_escaped(client, sheet_id):
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    doc = json.loads(fields["doc"])
    form = FormView(doc)
    paths = [f.path for f in form.all_fields()]
    # Free text: titles, labels, purpose (a size's nominal and class are text fields with a fixed list).
    text_paths = [f.path for f in form.all_fields() if f.spec.kind in ("text", "textarea") and ".size." not in f.path]
    assert len(paths) > 20 and text_paths
    checked = 0
    # Every field at once: most are refused (422) and come back, with their messages, as typed.
    hostile = dict(fields)
    for i, path in enumerate(paths):
        hostile[path] = PAYLOADS[i % len(PAYLOADS)] + f" #{i}"
    hostile["author"] = PAYLOADS[0]
    for headers in (HX, {}):  # the htmx fragment and the whole page
        response = client.post(f"/sheets/{sheet_id}", data=hostile, headers=headers)
        assert response.status_code in (200, 409, 422), response.status_code
        _clean(response.text, f"edit response {headers}")
        assert "&lt;script&gt;x(1)&lt;/script&gt;" in response.text
        checked += 1
    # The free-text fields alone are valid, so they are stored and reach every page and the record.
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    for i, path in enumerate(text_paths):
        fields[path] = PAYLOADS[i % 4] + f" #{i}"
    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)
    assert response.status_code == 200
    _clean(response.text, "text fields saved")
    stored = json.dumps(client.get(f"/api/sheets/{sheet_id}").json()["document"])
    assert "<script>x(1)" in stored or "onerror=y(1)" in stored
    for url, text in _pages(client, sheet_id).items():
        _clean(text, url)
        checked += 1
    FIGURES["XSS: fields given hostile markup"] += len(paths) + len(text_paths)
    FIGURES["XSS: pages and fragments checked"] += checked


def test_payloads_from_the_api_come_back_escaped_in_pages_records_and_messages(client):
    doc = gravity_line()
    for key in ("title", "project", "calc_number", "purpose"):
        doc["header"][key] = PAYLOADS[0] + PAYLOADS[1]
    doc["elements"][0]["label"] = PAYLOADS[2]
    created = client.post("/api/sheets", json={"document": doc, "author": PAYLOADS[1], "note": PAYLOADS[3]})
    assert created.status_code == 201, created.text
    sheet_id = created.json()["id"]
    signed = client.post(f"/api/sheets/{sheet_id}/revisions/1/signatures",
                         json={"role": "preparer", "login": account_for(client.app, PAYLOADS[1][:90]),
                               "password": PASSWORD, "comment": PAYLOADS[0]})
    assert signed.status_code == 201
    for url, text in _pages(client, sheet_id).items():
        _clean(text, url)
    # A value that does not parse is echoed in the message, escaped.
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    fields["elements.0.length"] = PAYLOADS[1]
    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)
    assert response.status_code == 422
    _clean(response.text, "error message")
    # The JSON API returns text as data, never as markup.
    assert client.get(f"/api/sheets/{sheet_id}").headers["content-type"].startswith("application/json")


def test_conflict_messages_escape_names_and_typed_values(client):
    first = form_fields(client.get("/sheets/1").text)
    second = dict(first)
    client.post("/sheets/1", data={**first, "author": PAYLOADS[1], "header.project": PAYLOADS[0]}, headers=HX)
    response = client.post("/sheets/1", data={**second, "author": PAYLOADS[2], "header.title": PAYLOADS[3]},
                           headers=HX)
    assert response.status_code == 409
    _clean(response.text, "conflict")
    assert "&lt;script&gt;x(1)&lt;/script&gt;" in response.text  # their change, shown escaped
    page = client.get("/sheets/1/history").text
    _clean(page, "history")


def test_link_notes_and_the_key_page_escape_what_they_show(data_dir):
    from servertools import BrowserClient

    from server.app import create_app

    app = create_app(data_dir, share=True)
    key = app.state.sharing.keys.read()
    with BrowserClient(app, headers={"X-Headsheet-Key": key}) as owner:
        owner.post("/sheets/1/links", data={"note": PAYLOADS[1]})
        _clean(owner.get("/sheets/1").text, "link note")
    with BrowserClient(app, follow_redirects=False) as anyone:
        page = anyone.get("/key", params={"next": '/x"><script>x(1)</script>'}).text
        _clean(page, "key page")


def test_the_pdf_renderer_asks_only_for_the_programs_own_files(client, monkeypatch):
    # Markup that would make a careless renderer load a local file or reach the network.
    doc = gravity_line()
    doc["header"]["title"] = PAYLOADS[4] + PAYLOADS[5]
    doc["header"]["purpose"] = '<iframe src="http://127.0.0.1:9/"></iframe><style>@import "file:///etc/passwd";</style>'
    doc["elements"][0]["label"] = '<object data="file:///etc/hostname"></object>'
    sheet_id = client.post("/api/sheets", json={"document": doc}).json()["id"]
    asked: list[str] = []
    fetch = pdf.StaticFetcher.fetch

    def watched(self, url, headers=None):
        asked.append(url)
        return fetch(self, url, headers)

    monkeypatch.setattr(pdf.StaticFetcher, "fetch", watched)
    response = client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf")
    assert response.status_code == 200 and response.content.startswith(b"%PDF")
    assert asked, "the record loads its stylesheet through the fetcher"
    for url in asked:
        assert url.startswith(pdf.ASSET_ORIGIN + "/static/"), url
    # And what it would refuse if asked: anything but our own static files.
    fetcher = pdf.StaticFetcher(pdf.Path(__file__).resolve().parents[2] / "static")
    for url in ("file:///etc/passwd", "http://127.0.0.1:9/evil.css", pdf.ASSET_ORIGIN + "/static/../server/app.py",
                pdf.ASSET_ORIGIN + "/etc/passwd", "data:text/css,body{}"):
        with pytest.raises(pdf.FetchRefused):
            fetcher.resolve(url)
    assert len(PdfReader(io.BytesIO(response.content)).pages) >= 1
