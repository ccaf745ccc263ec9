"""`serve()`, as `headsheet serve` calls it: starts on loopback, prints the address, seeds the demos once."""

from __future__ import annotations

import json
import socket
import subprocess
import sys
import time
import urllib.error
import urllib.request
from pathlib import Path

from servertools import demo_files

ROOT = Path(__file__).resolve().parents[2]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _start(data: Path, port: int) -> subprocess.Popen:
    code = f"from server.main import serve; serve({str(data)!r}, port={port})"
    return subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.PIPE, text=True)


def _get_json(url: str, deadline: float):
    while True:
        try:
            with urllib.request.urlopen(url, timeout=2) as response:
                return json.loads(response.read())
        except OSError:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.1)


def test_serve_prints_the_address_and_seeds_the_demos_once(tmp_path):
    data = tmp_path / "data"
    for start in range(2):
        port = _free_port()
        server = _start(data, port)
        try:
            lines = [server.stdout.readline() for _ in range(2)]
            assert f"http://127.0.0.1:{port}/" in "".join(lines)
            assert str(data.resolve()) in "".join(lines)
            sheets = _get_json(f"http://127.0.0.1:{port}/api/sheets", time.monotonic() + 30)["sheets"]
            # The second start finds the store and adds nothing.
            assert len(sheets) == len(demo_files())
        finally:
            server.terminate()
            server.wait(timeout=10)
            server.stdout.close()
    assert (data / "headsheet.sqlite").is_file()


def test_serve_share_listens_everywhere_prints_the_addresses_and_the_key(tmp_path, monkeypatch, capsys):
    import uvicorn

    from server import main

    ran = {}
    monkeypatch.setattr(uvicorn, "run", lambda app, **kw: ran.update(app=app, **kw))
    monkeypatch.setattr(main, "local_addresses", lambda: ["192.0.2.10", "198.51.100.7"])
    main.serve(tmp_path / "data", port=8123, share=True)
    out = capsys.readouterr().out
    key = (tmp_path / "data" / "access-key.txt").read_text().strip()
    assert ran["host"] == "0.0.0.0" and ran["port"] == 8123
    assert ran["app"].state.sharing.share and ran["app"].state.addresses == ["192.0.2.10", "198.51.100.7"]
    assert "http://192.0.2.10:8123/" in out and "http://198.51.100.7:8123/" in out
    assert f"access key: {key}" in out and len(key) == 19
    # --key sets a key of the user's choosing; the same folder keeps it for the next start.
    main.serve(tmp_path / "data", port=8123, share=True, key="site office 42")
    assert "access key: site office 42" in capsys.readouterr().out
    main.serve(tmp_path / "data", port=8123, share=True)
    assert "access key: site office 42" in capsys.readouterr().out
    # Listening on any address other than loopback needs the key even without --share.
    main.serve(tmp_path / "data", host="0.0.0.0", port=8123)
    assert ran["app"].state.sharing.share
    main.serve(tmp_path / "other", port=8123)
    assert not ran["app"].state.sharing.share and ran["host"] == "127.0.0.1"


def test_local_addresses_are_found_without_sending_anything(monkeypatch):
    from server.main import local_addresses

    def no_traffic(*args, **kwargs):
        raise AssertionError("no packet may be sent to find the addresses")

    for name in ("connect", "connect_ex", "send", "sendto", "sendall"):
        monkeypatch.setattr(socket.socket, name, no_traffic)
    found = local_addresses()
    for address in found:
        parts = address.split(".")
        assert len(parts) == 4 and all(p.isdigit() for p in parts)
        assert not address.startswith(("127.", "169.254."))


def test_a_shared_server_refuses_requests_without_the_key(tmp_path):
    data = tmp_path / "data"
    port = _free_port()
    code = f"from server.main import serve; serve({str(data)!r}, host='127.0.0.2', port={port})"
    server = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.PIPE, text=True)
    try:
        lines = [server.stdout.readline() for _ in range(4)]
        key = (data / "access-key.txt").read_text().strip()
        assert f"http://127.0.0.2:{port}/" in "".join(lines) and key in "".join(lines)
        url = f"http://127.0.0.2:{port}/api/sheets"
        deadline = time.monotonic() + 30
        while True:
            try:
                urllib.request.urlopen(url, timeout=2)
                raise AssertionError("served without the key")
            except urllib.error.HTTPError as refused:
                assert refused.code == 401
                break
            except OSError:
                if time.monotonic() > deadline:
                    raise
                time.sleep(0.1)
        request = urllib.request.Request(url, headers={"X-Headsheet-Key": key})
        with urllib.request.urlopen(request, timeout=5) as response:
            assert len(json.loads(response.read())["sheets"]) == len(demo_files())
    finally:
        server.terminate()
        server.wait(timeout=10)
        server.stdout.close()


def test_serve_answers_to_its_addresses_and_the_names_given(tmp_path, monkeypatch):
    import uvicorn

    from server import main
    from server.cli import main as headsheet

    ran = {}
    monkeypatch.setattr(uvicorn, "run", lambda app, **kw: ran.update(app=app, **kw))
    monkeypatch.setattr(main, "local_addresses", lambda: ["192.0.2.10"])
    monkeypatch.delenv("HEADSHEET_HOST_NAMES", raising=False)
    headsheet(["serve", "--data", str(tmp_path / "data"), "--share", "--host-name", "sheets.office.example"])
    names = ran["app"].state.host_names
    assert {"localhost", "127.0.0.1", "::1", "192.0.2.10", "sheets.office.example"} <= names
    assert "testserver" not in names and "evil.example" not in names



def test_forwarded_for_headers_are_believed_only_behind_a_proxy(tmp_path, monkeypatch):
    # A client could write X-Forwarded-For itself and dodge the per-address limit of wrong keys.
    import uvicorn

    from server import main

    ran = {}
    monkeypatch.setattr(uvicorn, "run", lambda app, **kw: ran.update(app=app, **kw))
    main.serve(tmp_path / "data", port=8123)
    assert ran["proxy_headers"] is False
    main.serve(tmp_path / "data", port=8123, behind_proxy=True)
    assert ran["proxy_headers"] is True
