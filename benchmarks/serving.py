"""What the server benchmarks share: a real server on a free loopback port, the largest demo sheet, and a form read as a browser reads it."""

from __future__ import annotations

import socket
import subprocess
import sys
import tempfile
import time
from contextlib import contextmanager
from html.parser import HTMLParser
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parents[1]
HOST = "127.0.0.1"  # loopback only: the benchmarks never listen on or send to a network


class _Form(HTMLParser):
    """The fields a browser would post from the sheet form (and the form token)."""

    def __init__(self):
        super().__init__()
        self.fields: dict[str, str] = {}
        self._select = self._textarea = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        name = a.get("name")
        if tag == "input" and name and a.get("type") in ("text", "hidden"):
            self.fields[name] = a.get("value") or ""
        elif tag == "select" and name:
            self._select = name
        elif tag == "option" and self._select and ("selected" in a or self._select not in self.fields):
            self.fields[self._select] = a.get("value") or ""
        elif tag == "textarea" and name:
            self._textarea = name
            self.fields[name] = ""

    def handle_endtag(self, tag):
        if tag == "select":
            self._select = None
        elif tag == "textarea":
            self._textarea = None

    def handle_data(self, data):
        if self._textarea:
            self.fields[self._textarea] += data


def form_fields(html: str) -> dict[str, str]:
    reader = _Form()
    reader.feed(html)
    return reader.fields


def free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


@contextmanager
def running_server(timeout: float = 60.0):
    """`headsheet serve` in a subprocess on a fresh data folder; yields its base address once it answers."""
    port = free_port()
    base = f"http://{HOST}:{port}"
    with tempfile.TemporaryDirectory() as data:
        code = f"from server.main import serve; serve({data!r}, host={HOST!r}, port={port})"
        server = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.DEVNULL)
        try:
            deadline = time.monotonic() + timeout
            with httpx.Client(base_url=base, timeout=10) as client:
                while True:
                    try:
                        client.get("/api/sheets").raise_for_status()
                        break
                    except httpx.TransportError:
                        if time.monotonic() > deadline or server.poll() is not None:
                            raise RuntimeError("the server did not start") from None
                        time.sleep(0.1)
            yield base
        finally:
            server.terminate()
            server.wait(timeout=10)


def largest_demo(client: httpx.Client) -> tuple[int, dict, int]:
    """(sheet id, document, index of its first pipe run) of the demo sheet with most elements."""
    sheets = client.get("/api/sheets").json()["sheets"]
    docs = {s["id"]: client.get(f"/api/sheets/{s['id']}").json()["document"] for s in sheets}
    sheet_id = max(docs, key=lambda i: (len(docs[i]["elements"]), i))
    doc = docs[sheet_id]
    pipe = next(i for i, e in enumerate(doc["elements"]) if e["kind"] == "pipe")
    return sheet_id, doc, pipe
