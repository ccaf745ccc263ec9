"""Round trip of one field change on the largest demo sheet: post over loopback, time until the results fragment is back.

Starts `headsheet serve` in a subprocess on a free port with a fresh data folder, reads the sheet
page as a browser would, then posts N changes of one pipe run's length (each value new, so every
post saves a revision and re-solves; nothing is served from the solution cache) with the headers
htmx sends, and prints the median and 95th percentile times. Target: p95 under 50 ms.

    python benchmarks/roundtrip.py [-n 200]
"""

from __future__ import annotations

import argparse
import re
import socket
import statistics
import subprocess
import sys
import tempfile
import time
from html.parser import HTMLParser
from pathlib import Path

import httpx

ROOT = Path(__file__).resolve().parents[1]


class _Form(HTMLParser):
    """The fields a browser would post from the sheet form."""

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


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("-n", type=int, default=200, help="timed posts (default 200)")
    parser.add_argument("--warmup", type=int, default=10)
    args = parser.parse_args()

    port = _free_port()
    base = f"http://127.0.0.1:{port}"
    with tempfile.TemporaryDirectory() as data:
        code = f"from server.main import serve; serve({data!r}, port={port})"
        server = subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.DEVNULL)
        try:
            with httpx.Client(base_url=base, timeout=10) as client:
                deadline = time.monotonic() + 30
                while True:
                    try:
                        sheets = client.get("/api/sheets").json()["sheets"]
                        break
                    except httpx.TransportError:
                        if time.monotonic() > deadline or server.poll() is not None:
                            print("the server did not start", file=sys.stderr)
                            return 1
                        time.sleep(0.1)
                docs = {s["id"]: client.get(f"/api/sheets/{s['id']}").json()["document"] for s in sheets}
                sheet_id = max(docs, key=lambda i: (len(docs[i]["elements"]), i))
                doc = docs[sheet_id]
                pipe = next(i for i, e in enumerate(doc["elements"]) if e["kind"] == "pipe")
                form = _Form()
                form.feed(client.get(f"/sheets/{sheet_id}").text)
                fields = form.fields
                headers = {"HX-Request": "true", "HX-Current-URL": f"{base}/sheets/{sheet_id}",
                           "HX-Target": "results", "HX-Trigger": "sheet-form"}
                times = []
                for k in range(args.warmup + args.n):
                    fields[f"elements.{pipe}.length"] = f"{100 + 0.01 * k:.2f} m"
                    start = time.perf_counter()
                    response = client.post(f"/sheets/{sheet_id}", data=fields, headers=headers)
                    elapsed = time.perf_counter() - start
                    if response.status_code != 200 or 'id="results"' not in response.text:
                        print(f"unexpected answer {response.status_code}", file=sys.stderr)
                        return 1
                    fields["base"] = re.search(r'id="base" value="(\d+)"', response.text).group(1)
                    if k >= args.warmup:
                        times.append(elapsed * 1000)
        finally:
            server.terminate()
            server.wait(timeout=10)

    times.sort()
    p95 = times[min(len(times) - 1, int(round(0.95 * len(times))) - 1)]
    title = doc["header"].get("title", "")
    print(f"sheet: {title!r} ({len(doc['elements'])} elements), {args.n} posts of elements.{pipe}.length")
    print(f"round trip: median {statistics.median(times):.1f} ms, p95 {p95:.1f} ms, "
          f"min {times[0]:.1f} ms, max {times[-1]:.1f} ms (target p95 < 50 ms)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
