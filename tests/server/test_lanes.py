"""The work lane (server/lanes.py): costly requests are answered by a second process over the same store.

What is checked: which requests go to the lane; that `headsheet serve` starts one and that what it
answers is what the front would have answered (cookies under the front's names, the form token
accepted, the gate's origin check on the front's scheme); that the front answers by itself when the
lane is gone; that a lane whose front was killed outright ends by itself. That it keeps editors'
answers quick while a client sends the costliest requests is measured, not asserted:
benchmarks/load.py --hostile.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import httpx
import pytest
from servertools import form_fields

from server import lanes

ROOT = Path(__file__).resolve().parents[2]
BIG = lanes.HEAVY_BYTES + 1


def sizes(table: dict):
    return lambda sheet_id, number: table.get((sheet_id, number), table.get(sheet_id, 0))


@pytest.mark.parametrize("path, body, expected", [
    ("/sheets/3", 0, False),                          # an ordinary sheet's page stays in front
    ("/sheets/9", 0, True),                           # a large sheet's page goes to the lane
    ("/api/sheets/9", 0, True),
    ("/sheets/9/revisions/2", 0, False),              # an old revision that was still small
    ("/sheets/3/revisions/1/record", 0, True),        # records, PDFs, comparisons and exports always
    ("/sheets/3/revisions/1/record.pdf", 0, True),
    ("/sheets/3/compare", 0, True),
    ("/sheets/3/export.json", 0, True),
    ("/sheets/3/revisions/1/sizes", 0, True),         # a size comparison solves the sheet once a size
    ("/sheets/9/revisions/4/signatures", 0, False),   # sign-off never: its limits count per client here
    ("/sheets/9/links", 0, False),
    ("/sheets/9/archive", 0, False),
    ("/api/solve", 1_000, False),                     # a small document to solve stays in front
    ("/api/solve", BIG, True),                        # a large one goes to the lane
    ("/api/sheets", BIG, True),
    ("/sheets/import", 10, True),                     # every import
    ("/", 0, False),
    ("/accounts", BIG, True),                         # any large body, whatever the route
    ("/sheets/x", 0, False),
])
def test_which_requests_go_to_the_lane(path, body, expected):
    table = {9: BIG, (9, 2): 5_000, 3: 5_000}
    assert lanes.classify(path, body, sizes(table)) is expected


def test_the_lane_takes_the_scheme_client_and_port_the_front_was_told_and_nobody_else_can():
    import asyncio
    import concurrent.futures

    seen = {}

    async def app(scope, receive, send):
        seen.update(scope)
        await send({"type": "http.response.start", "status": 200, "headers": []})
        await send({"type": "http.response.body", "body": b""})

    sent = []

    async def send(message):
        sent.append(message)

    scope = {"type": "http", "scheme": "http", "client": None, "server": None, "path": "/",
             "headers": [(b"host", b"site:8443"), (b"x-headsheet-front-scheme", b"https"),
                         (b"x-headsheet-front-client", b"192.0.2.7 50123"),
                         (b"x-headsheet-front-server", b"192.0.2.1 8443")]}
    # In a thread of its own: a browser test earlier in the run may leave a loop on this one.
    with concurrent.futures.ThreadPoolExecutor(1) as pool:
        pool.submit(asyncio.run, lanes.LaneMark(app)(scope, None, send)).result()
    assert seen["scheme"] == "https" and seen["client"] == ("192.0.2.7", 50123)
    assert seen["server"] == ("192.0.2.1", 8443)  # cookie names carry this port
    assert [k for k, _ in seen["headers"]] == [b"host"]  # what the front told is not passed on
    assert (b"x-headsheet-lane", b"work") in sent[0]["headers"]


def _free_port() -> int:
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _large_sheet(client: httpx.Client) -> dict:
    """A demo sheet padded with a long purpose text to more than the lane's threshold."""
    sheet_id = client.get("/api/sheets").json()["sheets"][0]["id"]
    doc = client.get(f"/api/sheets/{sheet_id}").json()["document"]
    pipe = next(e for e in doc["elements"] if e["kind"] == "pipe")
    length = float(pipe["length"].split()[0])
    pipe["profile"] = [{"chainage": f"{length * (k + 1) / 101:.3f} m",
                       "elevation": pipe.get("end_elevation") or "0 m"} for k in range(100)]
    for k in range(40):  # more runs, each with its own survey, until the document is large
        doc["elements"].insert(0, json.loads(json.dumps(pipe)) | {"label": f"Survey leg {k}"})
    assert len(json.dumps(doc)) > lanes.HEAVY_BYTES
    return doc


@pytest.fixture
def served(tmp_path):
    port = _free_port()
    code = f"from server.main import serve; serve({str(tmp_path / 'data')!r}, port={port})"
    server = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.DEVNULL,
                              stderr=subprocess.PIPE, text=True)
    base = f"http://127.0.0.1:{port}"
    deadline = time.monotonic() + 60
    with httpx.Client(base_url=base, timeout=60) as client:
        while True:
            try:
                client.get("/api/sheets").raise_for_status()
                break
            except httpx.TransportError:
                assert server.poll() is None and time.monotonic() < deadline, "the server did not start"
                time.sleep(0.1)
        try:
            yield server, client, port
        finally:
            server.terminate()
            server.wait(timeout=20)
            server.stderr.close()


def _lane_pid(server_pid: int) -> int:
    """The work lane: the front's child process named for it."""
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                stat = (entry / "stat").read_text()
                cmdline = (entry / "cmdline").read_bytes()
            except OSError:
                continue
            if int(stat.rsplit(")", 1)[1].split()[1]) == server_pid and b"spawn_main" in cmdline:
                return int(entry.name)
    raise AssertionError("no work lane process under the server")


def test_serve_answers_large_sheets_from_the_lane_as_the_front_would(served):
    _, client, port = served
    small = client.get("/api/sheets").json()["sheets"][0]["id"]
    assert lanes.LANE_HEADER not in client.get(f"/sheets/{small}").headers  # an ordinary page: the front
    made = client.post("/api/sheets", json={"document": _large_sheet(client), "note": "a long survey"})
    assert made.status_code == 201 and made.headers[lanes.LANE_HEADER] == "work"
    big = made.json()["id"]

    # A fresh browser's first page comes from the lane: its cookies carry the front's port, and the
    # form token it gets is taken for an edit, which the lane stores.
    with httpx.Client(base_url=client.base_url, timeout=60) as browser:
        page = browser.get(f"/sheets/{big}")
        assert page.status_code == 200 and page.headers[lanes.LANE_HEADER] == "work"
        assert any(name.endswith(f"_{port}") for name in browser.cookies)
        fields = form_fields(page.text)
        fields["header.title"] = "Edited through the lane"
        edited = browser.post(f"/sheets/{big}", data=fields, follow_redirects=False)
        assert edited.status_code == 303, edited.text[edited.text.find("<main"):][:600]
        assert client.get(f"/api/sheets/{big}").json()["document"]["header"]["title"] == "Edited through the lane"
        # The gate's origin check works on the scheme the front was reached by.
        foreign = browser.post(f"/sheets/{big}", data=fields, headers={"Origin": "http://elsewhere.example"})
        assert foreign.status_code == 403
    record = client.get(f"/sheets/{small}/record", follow_redirects=True)
    assert record.status_code == 200 and record.headers[lanes.LANE_HEADER] == "work"


def test_the_front_answers_when_the_lane_is_gone_and_a_lane_ends_with_its_front(served, tmp_path):
    server, client, _ = served
    lane = _lane_pid(server.pid)
    os.kill(lane, signal.SIGKILL)
    deadline = time.monotonic() + 10
    while _running(lane):
        assert time.monotonic() < deadline
        time.sleep(0.05)
    small = client.get("/api/sheets").json()["sheets"][0]["id"]
    record = client.get(f"/sheets/{small}/record", follow_redirects=True)
    assert record.status_code == 200 and lanes.LANE_HEADER not in record.headers

    # A front killed outright (no chance to stop its lane): the lane notices and ends.
    port = _free_port()
    code = f"from server.main import serve; serve({str(tmp_path / 'other')!r}, port={port})"
    front = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.DEVNULL,
                             stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 60
        while True:
            try:
                orphan = _lane_pid(front.pid)
                break
            except AssertionError:
                assert time.monotonic() < deadline and front.poll() is None
                time.sleep(0.2)
    finally:
        front.kill()
        front.wait(timeout=10)
    deadline = time.monotonic() + 15
    while _running(orphan):
        assert time.monotonic() < deadline, "the lane outlived its front"
        time.sleep(0.2)


def _running(pid: int) -> bool:
    """Whether process ``pid`` exists and has not ended (a zombie has ended, waiting to be reaped)."""
    try:
        return Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0] != "Z"
    except OSError:
        return False
