"""Hardening: nothing sensitive is cached, the store is the owner's alone, other sites cannot start costly work.

Each test reproduces what an attacker or a shared office computer would do (on loopback, in-process).
"""

from __future__ import annotations

import re
import stat

import pytest
from servertools import FIGURES

from server.app import create_app


def _link(client, sheet_id: int = 1) -> str:
    client.post(f"/sheets/{sheet_id}/links", data={"note": "checker"}, follow_redirects=False)
    urls = re.findall(r'<code class="link-url">([^<]+)</code>', client.get(f"/sheets/{sheet_id}").text)
    return urls[0].split("/view/", 1)[1]


def test_nothing_but_static_files_may_be_cached(client):
    token = _link(client)
    for url in ("/", "/sheets/1", "/sheets/1/record", "/sheets/1/revisions/1/record.pdf", "/sheets/1/export.json",
                "/api/sheets", "/api/sheets/1", "/verify", f"/view/{token}/sheets/1"):
        response = client.get(url)
        assert response.status_code == 200, url
        assert response.headers.get("cache-control") == "no-store", url
    assert client.get("/static/css/headsheet.css").headers.get("cache-control") != "no-store"


def test_the_data_folder_and_store_are_the_owners_alone(tmp_path):
    data = tmp_path / "data"
    create_app(data)
    assert stat.S_IMODE(data.stat().st_mode) & 0o077 == 0
    assert stat.S_IMODE((data / "headsheet.sqlite").stat().st_mode) & 0o077 == 0


def test_another_sites_page_cannot_start_a_pdf_render_or_a_verify_scan(client):
    refused = 0
    for url in ("/sheets/1/revisions/1/record.pdf", "/verify", "/verify/0000", "/api/verify/0000"):
        for site in ("cross-site", "same-site"):
            response = client.get(url, headers={"Sec-Fetch-Site": site})
            assert response.status_code == 403, (url, site)
            assert "opened directly" in response.text
            refused += 1
    # Opened directly, or from the program's own pages, they work.
    assert client.get("/sheets/1/revisions/1/record.pdf", headers={"Sec-Fetch-Site": "same-origin"}).status_code == 200
    assert client.get("/verify", headers={"Sec-Fetch-Site": "none"}).status_code == 200
    FIGURES["cross-site requests for costly work refused"] += refused


@pytest.mark.parametrize("host", ["evil.example", "evil.example:8000", "127.0.0.1.evil.example", "attacker.test."])
def test_a_page_rebound_to_this_computer_gets_nothing(client, host):
    # DNS rebinding: a page whose own name resolves to 127.0.0.1 sends its own Host header.
    for url in ("/", "/api/sheets", "/sheets/1/export.json", "/static/favicon.svg"):
        response = client.get(url, headers={"Host": host})
        assert response.status_code == 421, (url, host)
        assert "answers only to the names it serves" in response.text
    response = client.post("/api/sheets", json={"document": {}}, headers={"Host": host})
    assert response.status_code == 421
    FIGURES["rebinding attempts refused"] += 5


@pytest.mark.parametrize("host", ["localhost:8000", "127.0.0.1:8000", "[::1]:8000", "LOCALHOST"])
def test_loopback_names_are_served(client, host):
    assert client.get("/api/sheets", headers={"Host": host}).status_code == 200


def test_the_served_addresses_and_added_names_are_served(tmp_path):
    from servertools import BrowserClient

    app = create_app(tmp_path / "d", addresses=["192.0.2.7"], host_names=["sheets.office.example"])
    with BrowserClient(app) as c:
        for host in ("192.0.2.7:8000", "sheets.office.example"):
            assert c.get("/api/sheets", headers={"Host": host}).status_code == 200
        assert c.get("/api/sheets", headers={"Host": "other.example"}).status_code == 421
