"""The record through the app: page and PDF (text, page numbers, draft stamp, paper), sign-off and freezing,
fingerprint and verify, compare, user text shown as text, and a PDF renderer that fetches nothing outside static."""

from __future__ import annotations

import copy
import io
import re
import sqlite3
import subprocess
from pathlib import Path

import pytest
from pypdf import PdfReader
from servertools import PASSWORD, account_for

from calc.model import sheet as calc_sheet
from server import pdf as server_pdf
from server import record as server_record

ROOT = Path(__file__).resolve().parents[2]

# A scenario of our own: a small gravity main with a turbine, used where exact values are checked.
SHEET = {
    "format": "headsheet-sheet", "version": 1,
    "header": {"project": "Test scheme", "calc_number": "TS-001", "title": "Test penstock",
               "purpose": "Check the record.", "revision_scheme": "letters", "units": "SI"},
    "liquid": {"kind": "water", "temperature": "10 degC"},
    "site": {"atmospheric_pressure": "101.325 kPa"},
    "settings": {"friction_method": "colebrook"},
    "start": {"kind": "reservoir", "elevation": "200 m", "pressure": "0 kPa", "outlet_elevation": "198 m"},
    "end": {"kind": "reservoir", "elevation": "120 m", "pressure": "0 kPa"},
    "elements": [
        {"kind": "pipe", "label": "Penstock", "length": "600 m", "diameter": "300 mm", "size": None,
         "material": "steel-commercial", "roughness": "", "end_elevation": "121 m", "rating": "25 bar",
         "profile": [{"chainage": "300 m", "elevation": "170 m"}],
         "fittings": [{"type": "entrance-sharp", "count": 1}, {"type": "k", "K": "0.4", "count": 2, "label": "bends"}]},
        {"kind": "turbine", "label": "Unit 1", "mode": "power", "power": "40 kW", "efficiency": "0.8"},
    ],
}


def new_sheet(client, doc: dict | None = None) -> int:
    response = client.post("/api/sheets", json={"document": doc or copy.deepcopy(SHEET)})
    assert response.status_code == 201, response.text
    return response.json()["id"]


def pdf_pages(content: bytes) -> list[str]:
    """Text of each page as poppler's pdftotext reads it (layout kept)."""
    n = len(PdfReader(io.BytesIO(content)).pages)
    out = []
    for i in range(1, n + 1):
        text = subprocess.run(["pdftotext", "-layout", "-f", str(i), "-l", str(i), "-", "-"], input=content,
                              capture_output=True, check=True).stdout.decode("utf-8")
        out.append(text)
    return out


def sign(client, sheet_id, number, role, name, comment="", api=True, fingerprint=None, password=PASSWORD):
    """Sign as the account of ``name`` (made with every role if it does not exist), confirmed by its password."""
    login = account_for(client.app, name) if name.strip() else ""
    body = {"role": role, "login": login, "password": password, "comment": comment}
    if fingerprint:
        body["fingerprint"] = fingerprint
    if api:
        return client.post(f"/api/sheets/{sheet_id}/revisions/{number}/signatures", json=body)
    body.update(form_token(client, sheet_id, number))
    return client.post(f"/sheets/{sheet_id}/revisions/{number}/signatures", data=body, follow_redirects=False)


def form_token(client, sheet_id, number) -> dict:
    """The hidden fields a browser would post with the sign-off form (the form token, when the server sets one)."""
    page = client.get(f"/sheets/{sheet_id}/revisions/{number}/record").text
    m = re.search(r'name="csrf_token" value="([^"]*)"', page)
    return {"csrf_token": m.group(1)} if m else {}


@pytest.fixture
def sheet_id(client) -> int:
    return new_sheet(client)


# ----------------------------------------------------------------------------- the page

def test_latest_record_redirects_to_the_revision_record(client, sheet_id):
    response = client.get(f"/sheets/{sheet_id}/record", follow_redirects=False)
    assert response.status_code == 303 and response.headers["location"] == f"/sheets/{sheet_id}/revisions/1/record"


def test_record_page_for_every_demo(client):
    for sheet in client.get("/api/sheets").json()["sheets"]:
        response = client.get(f"/sheets/{sheet['id']}/revisions/{sheet['revision']}/record")
        assert response.status_code == 200
        assert response.template.name == "record.html"
        r = response.context["r"]
        assert not r.errors and r.references and r.steps and r.plots
        assert "<svg" in response.text and "foreignObject" not in response.text
        for section in ("purpose", "references", "assumptions", "inputs", "method", "working", "solve-log",
                        "results", "findings", "sign-off"):
            assert f'id="{section}"' in response.text


def test_record_page_shows_key_values(client, sheet_id):
    response = client.get(f"/sheets/{sheet_id}/revisions/1/record")
    r = response.context["r"]
    design = next(p for p in r.results if p["design"])
    assert design["Q"] in response.text and r.fingerprint_grouped in response.text
    assert "does not replace review" in response.text
    # With no account on the server, the page says how to make one instead of offering a form
    # that cannot work (a signature is always an account's).
    assert 'class="sign-form"' not in response.text and "Signing needs an account" in response.text
    account_for(client.app, "Ada Preparer")
    page = client.get(f"/sheets/{sheet_id}/revisions/1/record").text
    assert 'class="sign-form"' in page and 'name="role" value="preparer"' in page
    assert 'name="password"' in page and 'name="login"' in page


def test_missing_sheet_and_bad_paper(client, sheet_id):
    assert client.get("/sheets/999/revisions/1/record").status_code == 404
    assert client.get(f"/sheets/{sheet_id}/revisions/9/record").status_code == 404
    assert client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf", params={"paper": "a3"}).status_code == 422


# ----------------------------------------------------------------------------- the PDF

def test_pdf_text_headers_page_numbers_values_and_draft_stamp(client, sheet_id):
    response = client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf", params={"paper": "a4"})
    assert response.status_code == 200 and response.headers["content-type"] == "application/pdf"
    # Unsigned, the first revision is A.1: the first working revision on the way to issue A.
    assert 'filename="TS-001-rev-A.1.pdf"' in response.headers["content-disposition"]
    pages = pdf_pages(response.content)
    n = len(pages)
    assert n >= 5
    for i, text in enumerate(pages, start=1):
        assert f"page {i} of {n}" in text
        assert "TS-001" in text and "Test penstock" in text and "Revision A" in text
        assert "DRAFT" in text
    context = client.get(f"/sheets/{sheet_id}/revisions/1/record").context
    r = context["r"]
    whole = "\n".join(pages)
    # Key values at the stated precision (4 significant figures), as the page shows them.
    design = next(p for p in r.results if p["design"])
    assert design["Q"] in whole
    turbine = next(g for g in r.steps if g.kind == "turbine")
    for s in turbine.steps:
        assert s.result in whole
    assert r.fingerprint_grouped in re.sub(r"\s+", " ", whole)
    assert "Colebrook" in whole and "IAPWS" in whole
    assert "does not replace review" in re.sub(r"\s+", " ", whole)


def test_pdf_paper_sizes(client, sheet_id):
    # ISO 216 A4 is 210 x 297 mm = 595.3 x 841.9 pt; US Letter is 8.5 x 11 in = 612 x 792 pt.
    a4 = PdfReader(io.BytesIO(client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf").content)).pages[0].mediabox
    letter = PdfReader(io.BytesIO(client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf",
                                             params={"paper": "letter"}).content)).pages[0].mediabox
    assert (float(a4.width), float(a4.height)) == pytest.approx((595.28, 841.89), abs=0.5)
    assert (float(letter.width), float(letter.height)) == pytest.approx((612.0, 792.0), abs=0.5)


def test_draft_stamp_stays_until_all_three_roles_have_signed(client, sheet_id):
    url = f"/sheets/{sheet_id}/revisions/1/record.pdf"
    assert sign(client, sheet_id, 1, "preparer", "Ada Preparer", "prepared").status_code == 201
    assert sign(client, sheet_id, 1, "checker", "Ben Checker", "checked all steps").status_code == 201
    pages = pdf_pages(client.get(url).content)
    assert all("DRAFT" in p for p in pages)
    assert sign(client, sheet_id, 1, "approver", "Cy Approver").status_code == 201
    pages = pdf_pages(client.get(url).content)
    assert not any("DRAFT" in p for p in pages)
    whole = "\n".join(pages)
    for name in ("Ada Preparer", "Ben Checker", "Cy Approver", "checked all steps"):
        assert name in whole
    n = len(pages)
    assert all(f"page {i} of {n}" in p for i, p in enumerate(pages, start=1))


# ----------------------------------------------------------------------------- sign-off and freezing

def test_first_signature_freezes_and_a_later_edit_starts_the_next_revision(client, sheet_id, app):
    before = client.get(f"/api/sheets/{sheet_id}/revisions/1").json()
    assert before["frozen"] is False
    response = sign(client, sheet_id, 1, "preparer", "Ada Preparer")
    assert response.status_code == 201
    body = response.json()
    assert body["frozen"] is True and body["label"] == "A" and body["signed"] is False
    # An edit appends revision 2; revision 1 stays exactly as signed.
    doc = copy.deepcopy(SHEET)
    doc["elements"][0]["length"] = "650 m"
    put = client.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": 1})
    assert put.status_code == 200 and put.json()["revision"] == 2
    after = client.get(f"/api/sheets/{sheet_id}/revisions/1").json()
    assert after["digest"] == before["digest"] and after["document"] == before["document"] and after["frozen"]
    second = client.get(f"/api/sheets/{sheet_id}/revisions/2/record").json()
    assert second["label"] == "B.1" and second["frozen"] is False and second["fingerprint"] != body["fingerprint"]
    page = client.get(f"/sheets/{sheet_id}/revisions/1/record").text
    assert "is signed and frozen: it cannot change" in page and "starts revision B" in page


def test_numbers_scheme_labels(client):
    doc = copy.deepcopy(SHEET)
    doc["header"]["revision_scheme"] = "numbers"
    sid = new_sheet(client, doc)
    assert client.get(f"/api/sheets/{sid}/revisions/1/record").json()["label"] == "0.1"
    assert sign(client, sid, 1, "preparer", "P").status_code == 201
    assert client.get(f"/api/sheets/{sid}/revisions/1/record").json()["label"] == "0"  # issued
    doc["header"]["title"] = "Changed"
    client.put(f"/api/sheets/{sid}", json={"document": doc, "base_revision": 1})
    assert client.get(f"/api/sheets/{sid}/revisions/2/record").json()["label"] == "1.1"


def test_a_frozen_revision_refuses_change(client, sheet_id, app):
    assert sign(client, sheet_id, 1, "preparer", "Ada Preparer").status_code == 201
    again = sign(client, sheet_id, 1, "preparer", "Someone Else")
    assert again.status_code == 409 and again.json()["status"] == 409
    assert "cannot change" in again.json()["message"]
    # The form's refusal answers with the record page's own address, the message carried there once.
    page = sign(client, sheet_id, 1, "preparer", "Someone Else", api=False)
    assert page.status_code == 303 and page.headers["location"] == f"/sheets/{sheet_id}/revisions/1/record#sign-off"
    shown = client.get(page.headers["location"])
    assert shown.status_code == 200 and "cannot change" in shown.text
    assert 'class="notice notice-error" role="alert"' in shown.text  # the refusal itself, not only the frozen notice
    assert 'notice-error' not in client.get(page.headers["location"]).text  # shown once
    # Nothing below the API can rewrite it either: the database refuses.
    con = sqlite3.connect(app.state.store.path)
    with pytest.raises(sqlite3.IntegrityError):
        con.execute("UPDATE revisions SET document = '{}' WHERE sheet_id = ? AND number = 1", (sheet_id,))
    with pytest.raises(sqlite3.IntegrityError):
        con.execute("UPDATE revisions SET frozen = 0 WHERE sheet_id = ? AND number = 1", (sheet_id,))
    with pytest.raises(sqlite3.IntegrityError):
        con.execute("UPDATE signatures SET name = 'X' WHERE sheet_id = ?", (sheet_id,))
    with pytest.raises(sqlite3.IntegrityError):
        con.execute("DELETE FROM signatures WHERE sheet_id = ?", (sheet_id,))
    con.close()
    signatures = client.get(f"/api/sheets/{sheet_id}/revisions/1/record").json()["signatures"]
    assert [s["name"] for s in signatures] == ["Ada Preparer"]


def test_sign_off_rules(client, sheet_id):
    assert sign(client, sheet_id, 1, "checker", "Ben").status_code == 409  # preparer first
    assert sign(client, sheet_id, 1, "owner", "Ben").status_code == 422
    assert sign(client, sheet_id, 1, "preparer", "   ").status_code == 422
    assert sign(client, sheet_id, 1, "preparer", "Ada Lovelace").status_code == 201
    assert sign(client, sheet_id, 1, "approver", "Cy").status_code == 409  # checker before approver
    same = sign(client, sheet_id, 1, "checker", " ada  LOVELACE ")
    assert same.status_code == 422 and "three different people" in same.json()["message"]
    assert sign(client, sheet_id, 1, "checker", "Ben", fingerprint="0" * 64).status_code == 409  # record differs


def test_first_signature_must_be_on_the_latest_revision(client, sheet_id):
    doc = copy.deepcopy(SHEET)
    doc["header"]["title"] = "Second"
    client.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": 1})
    response = sign(client, sheet_id, 1, "preparer", "Ada")
    assert response.status_code == 409 and "superseded" in response.json()["message"]


def test_sign_form_without_javascript(client, sheet_id):
    login = account_for(client.app, "Ada")
    page = client.get(f"/sheets/{sheet_id}/revisions/1/record").text
    fingerprint = re.search(r'name="fingerprint" value="([0-9a-f]{64})"', page).group(1)
    response = client.post(f"/sheets/{sheet_id}/revisions/1/signatures",
                           data={"role": "preparer", "login": login, "password": PASSWORD,
                                 "comment": "ok", "fingerprint": fingerprint,
                                 **form_token(client, sheet_id, 1)},
                           follow_redirects=False)
    assert response.status_code == 303 and response.headers["location"].endswith("/revisions/1/record#sign-off")
    page = client.get(f"/sheets/{sheet_id}/revisions/1/record").text
    assert 'name="role" value="checker"' in page and "Ada" in page


# ----------------------------------------------------------------------------- fingerprint and verify

def test_fingerprint_is_reproducible_and_changes_with_any_input(client, sheet_id):
    one = client.get(f"/api/sheets/{sheet_id}/revisions/1/record").json()["fingerprint"]
    assert client.get(f"/api/sheets/{sheet_id}/revisions/1/record").json()["fingerprint"] == one
    other = new_sheet(client)  # the same document in another sheet: the same fingerprint
    assert client.get(f"/api/sheets/{other}/revisions/1/record").json()["fingerprint"] == one
    doc = copy.deepcopy(SHEET)
    doc["elements"][0]["fittings"][1]["count"] = 3
    client.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": 1})
    assert client.get(f"/api/sheets/{sheet_id}/revisions/2/record").json()["fingerprint"] != one


def test_verify_finds_the_revision_from_a_printed_fingerprint(client, sheet_id):
    body = client.get(f"/api/sheets/{sheet_id}/revisions/1/record").json()
    f = body["fingerprint"]
    assert body["verify_url"].endswith(f"/verify/{f}")
    grouped = " ".join(f[i:i + 4] for i in range(0, 64, 4)).upper()
    for typed in (f, grouped, f[:16]):
        response = client.get("/verify", params={"fingerprint": typed})
        assert response.status_code == 200
        matches = response.context["matches"]
        assert any(m["sheet"].id == sheet_id and m["revision"].number == 1 for m in matches), typed
    assert "Test penstock" in client.get(f"/verify/{f}").text
    missing = client.get("/verify", params={"fingerprint": "f" * 64})
    assert missing.context["matches"] == [] and "No stored revision" in missing.text
    bad = client.get("/verify", params={"fingerprint": "<script>zz</script>"})
    assert bad.context["problem"] and "<script>zz" not in bad.text
    assert client.get("/verify").status_code == 200


def test_verify_finds_a_revision_whose_record_was_never_opened(client):
    from calc.analysis import analyse
    from calc.record import fingerprint as fp

    doc = copy.deepcopy(SHEET)
    doc["header"]["title"] = "Never opened"
    sid = new_sheet(client, doc)
    f = fp.fingerprint(analyse(doc))
    matches = client.get(f"/verify/{f}").context["matches"]
    assert [(m["sheet"].id, m["revision"].number) for m in matches] == [(sid, 1)]


# ----------------------------------------------------------------------------- compare

def test_compare_two_revisions(client, sheet_id):
    assert sign(client, sheet_id, 1, "preparer", "Ada").status_code == 201
    doc = copy.deepcopy(SHEET)
    doc["elements"][0]["length"] = "900 m"
    client.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": 1})
    response = client.get(f"/sheets/{sheet_id}/compare")
    assert response.status_code == 200 and response.template.name == "compare.html"
    ctx = response.context
    assert ctx["a"].number == 1 and ctx["b"].number == 2  # the signed revision against the latest
    assert [c["path"] for c in ctx["changes"]] == ["elements.pipe-1.length"]  # matched by id (given by order)
    assert "600 m" in response.text and "900 m" in response.text
    flow = next(r for r in ctx["results"].rows if r[0] == "Flow at the design point")
    assert flow[1] != flow[2]
    same = client.get(f"/sheets/{sheet_id}/compare", params={"a": 2, "b": 2}).context
    assert same["changes"] == []


# ----------------------------------------------------------------------------- user text

NASTY = '<script>alert("x")</script><img src=x onerror=alert(1)>'
LONG = "W" * 400
GREEK = "Υδροηλεκτρικός αγωγός"
CYRILLIC = "Напорный трубопровод"
HEBREW = "צינור לחץ"


def _nasty_sheet() -> dict:
    doc = copy.deepcopy(SHEET)
    doc["header"].update({"title": f"{NASTY} {GREEK}", "project": f"{CYRILLIC} {HEBREW}", "purpose": LONG,
                          "calc_number": "TS/<b>002</b>"})
    doc["elements"][0]["label"] = f"{NASTY} {CYRILLIC}"
    doc["elements"][0]["fittings"][1]["label"] = LONG[:100]
    return doc


def test_user_text_is_text_in_the_page(client):
    sid = new_sheet(client, _nasty_sheet())
    assert sign(client, sid, 1, "preparer", f"Άννα {NASTY}", comment=NASTY).status_code == 201
    page = client.get(f"/sheets/{sid}/revisions/1/record").text
    assert "<script>alert" not in page and "<img src=x" not in page and "<b>002" not in page
    assert "&lt;script&gt;alert(&#34;x&#34;)&lt;/script&gt;" in page or "&lt;script&gt;alert(&quot;x&quot;)" in page
    for text in (GREEK, CYRILLIC, HEBREW, LONG, "Άννα"):
        assert text in page


def test_user_text_is_text_in_the_pdf_and_stays_on_the_page(client):
    sid = new_sheet(client, _nasty_sheet())
    assert sign(client, sid, 1, "preparer", "Άννα Preparer", comment=NASTY).status_code == 201
    response = client.get(f"/sheets/{sid}/revisions/1/record.pdf")
    assert response.status_code == 200
    assert re.fullmatch(r'attachment; filename="[A-Za-z0-9._-]+\.pdf"', response.headers["content-disposition"])
    pages = pdf_pages(response.content)
    whole = "\n".join(pages)
    # The draft stamp's big rotated letters land between lines of text: leave them out.
    squeezed = re.sub(r"\s+", "", "\n".join(line for line in whole.splitlines() if len(line.strip()) > 1))
    assert '<script>alert("x")</script>' in whole
    for text in (GREEK, CYRILLIC, "Άννα Preparer"):
        assert text in whole, text
    assert LONG in squeezed  # wrapped, but all there
    # Hebrew runs right to left: poppler may give it in either order.
    assert HEBREW.replace(" ", "") in squeezed or HEBREW[::-1].replace(" ", "") in squeezed
    # Nothing runs off the paper: every word box lies inside the page.
    boxes = subprocess.run(["pdftotext", "-bbox", "-", "-"], input=response.content, capture_output=True,
                           check=True).stdout.decode("utf-8")
    width = float(re.search(r'<page width="([0-9.]+)"', boxes).group(1))
    right = max(float(x) for x in re.findall(r'xMax="([0-9.]+)"', boxes))
    assert right <= width - 20  # inside the 15 mm margin, give or take


# ----------------------------------------------------------------------------- the fetcher

@pytest.mark.parametrize("url", [
    "http://example.com/x.png", "https://example.com/static/css/record.css", "file:///etc/passwd",
    "/etc/passwd", "data:text/css,body{}", "https://headsheet.invalid/static/../../../etc/passwd",
    "https://headsheet.invalid/static/%2e%2e/%2e%2e/pyproject.toml", "https://headsheet.invalid/etc/passwd",
    "https://headsheet.invalid/static/vendor/htmx-2.0.11.min.js", "https://headsheet.invalid/static/css/record.css?x=1",
    "ftp://headsheet.invalid/static/css/record.css",
])
def test_fetcher_refuses_everything_but_static_assets(url):
    fetcher = server_pdf.StaticFetcher(ROOT / "static")
    with pytest.raises(server_pdf.FetchRefused):
        fetcher.fetch(url)


def test_fetcher_serves_the_record_stylesheet():
    fetcher = server_pdf.StaticFetcher(ROOT / "static")
    response = fetcher.fetch(server_pdf.ASSET_ORIGIN + "/static/css/record.css")
    assert b"@page" in response.read() and response.content_type == "text/css"


def test_outside_addresses_and_file_paths_in_a_sheet_cause_no_fetch(client, monkeypatch):
    asked: list[str] = []

    class Recording(server_pdf.StaticFetcher):
        def fetch(self, url, headers=None):
            asked.append(url)
            return super().fetch(url, headers)

    monkeypatch.setattr(server_pdf, "StaticFetcher", Recording)
    lures = ["http://127.0.0.1:9/steal.png", "file:///etc/passwd", "/etc/passwd",
             '<img src="http://127.0.0.1:9/x.png">', '<link rel=stylesheet href="file:///etc/passwd">',
             "<style>@import url(http://127.0.0.1:9/a.css);</style>", "url(/etc/passwd)"]
    doc = copy.deepcopy(SHEET)
    text = " ".join(lures)
    doc["header"].update({"title": text[:500], "project": text[:500], "purpose": text[:500], "calc_number": lures[1]})
    doc["elements"][0]["label"] = lures[3][:100]
    doc["elements"][1]["label"] = lures[4][:100]
    doc["elements"][0]["fittings"][1]["label"] = lures[5][:100]
    doc["liquid"] = {"kind": "custom", "name": lures[0], "density": "999 kg/m^3", "viscosity": "1.1 mPa*s",
                     "vapour_pressure": "2 kPa"}
    assert calc_sheet.parse(doc).ok
    sid = new_sheet(client, doc)
    assert sign(client, sid, 1, "preparer", lures[2], comment=text[:500]).status_code == 201
    response = client.get(f"/sheets/{sid}/revisions/1/record.pdf")
    assert response.status_code == 200
    assert asked, "the record's own stylesheet is fetched through the fetcher"
    assert all(u.startswith(server_pdf.ASSET_ORIGIN + "/static/") for u in asked), asked
    assert not any("passwd" in u or "127.0.0.1" in u for u in asked)
    whole = "\n".join(pdf_pages(response.content))
    assert "file:///etc/passwd" in whole and "root:x:" not in whole


def test_safe_filename():
    assert server_record.safe_filename('../../etc/passwd"\r\nX: y', "f") == "etc-passwd-X-y"
    assert server_record.safe_filename("\u0394\u0394", "fallback") == "fallback"


def test_sheet_page_says_a_signed_revision_is_frozen_and_history_marks_it(client, sheet_id):
    page = client.get(f"/sheets/{sheet_id}").text
    assert "signed and frozen" not in page
    assert sign(client, sheet_id, 1, "preparer", "Ada Preparer").status_code == 201
    page = client.get(f"/sheets/{sheet_id}").text
    assert "Revision A is signed and frozen" in page and "next change starts revision B" in page
    history = client.get(f"/sheets/{sheet_id}/history").text
    assert 'aria-label="Record of revision A"' in history and "tag-signed" in history
    assert f"/sheets/{sheet_id}/revisions/1/record" in history


def test_a_repeated_pdf_download_is_served_from_the_cache(client, sheet_id, monkeypatch):
    from server import pdf
    from server import record as server_record

    pdf._render_cached.cache_clear()
    # The printed time is on the page; hold it still so a minute boundary cannot split the two.
    monkeypatch.setattr(server_record, "_now", lambda: "2026-12-02T10:00+00:00")
    calls = []
    real = pdf._render_in_worker
    monkeypatch.setattr(pdf, "_render_in_worker", lambda *a, **k: calls.append(1) or real(*a, **k))
    first = client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf")
    second = client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf")
    assert first.status_code == second.status_code == 200
    assert first.content == second.content
    assert len(calls) == 1  # laid out once
    client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf?paper=letter")
    assert len(calls) == 2  # another paper is another layout


def test_the_draft_stamp_stays_out_of_the_text_layer_and_a_days_prints_are_one_file(client, sheet_id):
    from server import pdf

    pdf._render_cached.cache_clear()
    content = client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf").content
    # the stamp is drawn as the word's outline, so the text layer (what a search or a copy reads) holds no
    # letters of it: no word there is both wider and taller than 30 pt (the stamp's letters stood some 60 pt
    # square; a plot's upright axis title is tall but narrow)
    boxes = subprocess.run(["pdftotext", "-bbox", "-", "-"], input=content, capture_output=True,
                           check=True).stdout.decode()
    sizes = [min(float(x1) - float(x0), float(y1) - float(y0)) for x0, y0, x1, y1 in re.findall(
        r'xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)"', boxes)]
    assert sizes and max(sizes) < 30.0, max(sizes)
    assert all("DRAFT: not fully signed" in page for page in pdf_pages(content))
    # the same revision printed again the same day (cache emptied: laid out afresh) is the same file
    pdf._render_cached.cache_clear()
    assert client.get(f"/sheets/{sheet_id}/revisions/1/record.pdf").content == content
