"""Crash safety: the server killed with SIGKILL at random moments loses no edit it had acknowledged."""

from __future__ import annotations

import json
import os
import random
import re
import signal
import sqlite3
import subprocess
import sys
import threading
import time
from pathlib import Path

import httpx
from linetools import gravity_line
from servertools import FIGURES, HX, form_fields, free_port

from server.store import DB_NAME, Store, digest_of, dump_document

ROOT = Path(__file__).resolve().parents[2]
KILLS = 4


class Server:
    """`serve()` in a subprocess, as `headsheet serve` runs it, on a free loopback port."""

    def __init__(self, data: Path):
        self.data = data
        self.port = free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.process: subprocess.Popen | None = None

    def start(self) -> None:
        code = f"from server.main import serve; serve({str(self.data)!r}, port={self.port})"
        self.process = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.DEVNULL,
                                        stderr=subprocess.DEVNULL)
        deadline = time.monotonic() + 60
        while True:
            try:
                if httpx.get(self.url + "/api/sheets", timeout=2).status_code == 200:
                    return
            except httpx.TransportError:
                pass
            if time.monotonic() > deadline or self.process.poll() is not None:
                raise RuntimeError("the server did not start")
            time.sleep(0.05)

    def kill(self) -> None:
        if self.process and self.process.poll() is None:
            os.kill(self.process.pid, signal.SIGKILL)
            self.process.wait(timeout=10)


def test_acknowledged_edits_survive_sigkill_at_random_moments(tmp_path):
    rng = random.Random(20260612)
    server = Server(tmp_path / "data")
    acked_api: dict[int, str] = {}  # revision -> digest of the document the server said it stored
    acked_form: dict[int, str] = {}  # revision -> purpose typed into the form the server said it saved
    sent = kills = 0
    doc = gravity_line()
    server.start()
    try:
        with httpx.Client(base_url=server.url, timeout=10) as http:
            sheet_id = http.post("/api/sheets", json={"document": doc}).json()["id"]
            acked_api[1] = digest_of(dump_document(doc))
            while kills < KILLS:
                # A kill at a random moment once edits flow (the first one acknowledged), most likely in
                # the middle of some request; timed from then, a slow start on a loaded machine eats none of it.
                timer = threading.Timer(rng.uniform(0.2, 1.0), server.kill)
                try:
                    base = http.get(f"/api/sheets/{sheet_id}").json()["revision"]
                    fields = form_fields(http.get(f"/sheets/{sheet_id}").text)
                    while True:
                        sent += 1
                        doc["header"]["purpose"] = f"edit {sent} " + "x" * rng.randrange(0, 400)
                        if sent % 2:
                            r = http.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": base})
                            assert r.status_code == 200, r.text
                            base = r.json()["revision"]
                            acked_api[base] = digest_of(dump_document(doc))
                        else:
                            fields["header.purpose"] = doc["header"]["purpose"]
                            r = http.post(f"/sheets/{sheet_id}", data={**fields, "base": str(base)},
                                          headers={**HX, "X-CSRF-Token": fields["csrf_token"]})
                            assert r.status_code == 200, r.text[:300]
                            base = int(re.search(r'id="base" value="(\d+)"', r.text).group(1))
                            acked_form[base] = doc["header"]["purpose"]
                            doc = http.get(f"/api/sheets/{sheet_id}").json()["document"]
                        if timer.ident is None:  # not started yet
                            timer.start()
                except httpx.TransportError:
                    pass  # killed: the edit in flight was never acknowledged, so it may or may not be there
                if timer.ident is not None:
                    timer.join()
                kills += 1
                server.start()
        server.kill()
        kills += 1  # and once more at the very end, after the last acknowledged edit
    finally:
        server.kill()
    # Read the store as the next start would, after the last kill.
    store = Store(tmp_path / "data")
    revisions = {r.number: r for r in store.revisions(sheet_id)}
    lost = [n for n, digest in acked_api.items() if n not in revisions or revisions[n].digest != digest]
    lost += [n for n, purpose in acked_form.items()
             if n not in revisions or revisions[n].document["header"]["purpose"] != purpose]
    con = sqlite3.connect(tmp_path / "data" / DB_NAME)
    try:
        assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    finally:
        con.close()
    assert sorted(revisions) == list(range(1, len(revisions) + 1))
    acknowledged = len(acked_api) + len(acked_form) - 1
    FIGURES["crash: edits sent"] += sent
    FIGURES["crash: edits acknowledged"] += acknowledged
    FIGURES["crash: SIGKILLs"] += kills
    FIGURES["crash: acknowledged edits lost"] += len(lost)
    assert acknowledged >= 2 * KILLS and kills == KILLS + 1
    assert lost == []


def test_the_store_is_set_for_durability(tmp_path):
    store = Store(tmp_path)
    statements: list[str] = []
    with store._connect() as con:
        assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"
        assert con.execute("PRAGMA synchronous").fetchone()[0] == 2  # FULL: the log is synced at every commit
        assert con.execute("PRAGMA busy_timeout").fetchone()[0] >= 5000
        con.set_trace_callback(statements.append)
    try:
        rev = store.create_sheet(gravity_line())
        store.add_revision(rev.sheet_id, {**gravity_line(), "header": {"title": "x"}}, 1)
    finally:
        with store._connect() as con:
            con.set_trace_callback(None)
    # Writes take the lock before reading what they check, so a busy store waits rather than fails midway.
    assert statements.count("BEGIN IMMEDIATE") == 2 and statements.count("COMMIT") == 2
    assert json.loads(store.latest(rev.sheet_id).document_json)["header"]["title"] == "x"
