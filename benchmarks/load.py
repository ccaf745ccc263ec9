"""Load: N simulated editors typing into their sheets at once, against `headsheet serve` on loopback, for a bounded time.

Starts the server in a subprocess on a free loopback port with a fresh data folder. Each editor
is a thread with its own browser-like client (cookies, the form token from the page): it gets
its own copy of the largest demo sheet, opens it at a random moment in the first 3 s, then,
with a pause of 0.25-0.75 s between changes (a person typing, with the page's 400 ms
debounce), posts one changed field at a time as htmx does (each saves a revision and
re-solves), reloads the page every 15 changes and opens the record every 20. With --pairs,
two editors share each sheet, so conflicts (409) happen and are answered by reloading, as the
page offers. Prints requests served, errors (anything but 200/303/409, or no answer), and the
median and 95th percentile latency overall and per kind. Target: 20 editors, no errors, p95
under 100 ms.

With --hostile, one more client sends worst-case requests the whole time, on three connections
at once, none of them waiting between requests: the PDF, the record page and the sheet page of
the largest sheet the program stores (benchmarks/pdf_limits.py builds it), solves of that sheet
through the API, unit-expression bombs, documents full of unknown keys, and imports of a file at
the import size limit that is not an export. Its answers are tallied apart (they are meant to be
slow or refused); the editors' figures are the ones that count. Target with --hostile: editors'
p95 under 150 ms, no error for the editors.

    python benchmarks/load.py [--editors 20] [--seconds 20] [--pairs] [--think 0.25 0.75] [--hostile]
"""

from __future__ import annotations

import argparse
import json
import random
import re
import statistics
import sys
import threading
import time
from collections import defaultdict
from pathlib import Path

import httpx

sys.path.insert(0, str(Path(__file__).resolve().parent))
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from pdf_limits import largest_sheet  # noqa: E402
from serving import HOST, form_fields, largest_demo, running_server  # noqa: E402

from server.sharing import MAX_IMPORT  # noqa: E402

ARRIVALS = 3.0  # editors open their sheets at random over the first seconds [s]


class Tally:
    """Latencies by kind of request, and what went wrong, shared by every editor."""

    def __init__(self):
        self.times: dict[str, list[float]] = defaultdict(list)
        self.errors: list[str] = []
        self.conflicts = 0
        self.lock = threading.Lock()

    def timed(self, kind: str, call):
        start = time.perf_counter()
        try:
            response = call()
        except httpx.HTTPError as e:
            with self.lock:
                self.errors.append(f"{kind}: {type(e).__name__}")
            return None
        elapsed = (time.perf_counter() - start) * 1000
        with self.lock:
            self.times[kind].append(elapsed)
            if response.status_code == 409:
                self.conflicts += 1
            elif response.status_code not in (200, 303):
                self.errors.append(f"{kind}: {response.status_code}")
        return response


def editor(base: str, sheet_id: int, pipe: int, seed: int, stop_at: float, think: tuple[float, float],
           tally: Tally) -> None:
    rng = random.Random(seed)
    htmx = {"HX-Request": "true", "HX-Target": "results", "HX-Trigger": "sheet-form"}
    with httpx.Client(base_url=base, timeout=30) as client:
        time.sleep(rng.uniform(0, ARRIVALS))  # people open their sheets over a few seconds, not all at once
        page = tally.timed("page", lambda: client.get(f"/sheets/{sheet_id}"))
        fields = form_fields(page.text)
        n = 0
        while time.monotonic() < stop_at:
            time.sleep(rng.uniform(*think))
            n += 1
            fields[f"elements.{pipe}.length"] = f"{100 + rng.randrange(100_000) / 100:.2f} m"
            headers = {**htmx, "X-CSRF-Token": fields["csrf_token"]}
            response = tally.timed("edit", lambda: client.post(f"/sheets/{sheet_id}", data=fields, headers=headers))
            if response is not None and response.status_code == 200:
                found = re.search(r'id="base" value="(\d+)"', response.text)
                if found:
                    fields["base"] = found.group(1)
            if response is None or response.status_code != 200 or n % 15 == 0:
                page = tally.timed("page", lambda: client.get(f"/sheets/{sheet_id}"))
                if page is not None and page.status_code == 200:
                    fields = form_fields(page.text)
            if n % 20 == 0:
                tally.timed("record", lambda: client.get(f"/sheets/{sheet_id}/record", follow_redirects=True))


BOMB = "1 m*10**10**10"  # a value that, before the grammar check, froze the unit parser for days


def hostile(base: str, lane: int, sheet_id: int, doc: dict, stop_at: float, tally: Tally) -> None:
    """Worst-case requests with no pause, on one connection: lane 0 the big sheet's PDF, record and
    page; lane 1 solves of it, bombs and junk keys; lane 2 oversized imports and solves."""
    bomb = json.loads(json.dumps(doc))
    bomb["elements"][0]["length"] = BOMB
    junk = {**doc, **{f"junk{k}": k for k in range(5_000)}}
    not_an_export = b'{"format": "no", "pad": "' + b"x" * (MAX_IMPORT - 40) + b'"}'
    pdf = f"/sheets/{sheet_id}/revisions/1/record.pdf"
    with httpx.Client(base_url=base, timeout=300) as client:
        page = client.get("/")
        csrf = form_fields(page.text).get("csrf_token", "")
        requests = {
            0: [("pdf", lambda: client.get(pdf, follow_redirects=True)),
                ("record", lambda: client.get(f"/sheets/{sheet_id}/record", follow_redirects=True)),
                ("page", lambda: client.get(f"/sheets/{sheet_id}"))],
            1: [("solve", lambda: client.post("/api/solve", json={"document": doc})),
                ("bomb", lambda: client.post("/api/solve", json={"document": bomb})),
                ("junk", lambda: client.post("/api/solve", json={"document": junk}))],
            2: [("import", lambda: client.post("/sheets/import", headers={"X-CSRF-Token": csrf},
                                               files={"file": ("big.json", not_an_export, "application/json")})),
                ("solve", lambda: client.post("/api/solve", json={"document": doc}))],
        }[lane]
        assert page.status_code == 200
        n = 0
        while time.monotonic() < stop_at:
            kind, call = requests[n % len(requests)]
            n += 1
            tally.timed(kind, call)


def _p95(values: list[float]) -> float:
    values = sorted(values)
    return values[min(len(values) - 1, int(round(0.95 * len(values))) - 1)]


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--editors", type=int, default=20, help="simulated editors (default 20)")
    parser.add_argument("--seconds", type=float, default=20.0, help="how long they type (default 20 s)")
    parser.add_argument("--pairs", action="store_true", help="two editors per sheet, so conflicts happen")
    parser.add_argument("--hostile", action="store_true",
                        help="one more client sends worst-case requests the whole time (see above)")
    parser.add_argument("--think", type=float, nargs=2, default=(0.25, 0.75), metavar=("MIN", "MAX"),
                        help="pause between one editor's changes [s] (default 0.25 0.75; 0 0 for a tight loop)")
    args = parser.parse_args()
    if not 1 <= args.editors <= 200 or not 0 < args.seconds <= 600:
        parser.error("editors must be 1-200 and seconds at most 600")

    tally, bad = Tally(), Tally()
    with running_server() as base:
        with httpx.Client(base_url=base, timeout=30) as setup:
            _, doc, pipe = largest_demo(setup)
            count = (args.editors + 1) // 2 if args.pairs else args.editors
            own = [setup.post("/api/sheets", json={"document": doc, "note": "load benchmark"}).json()["id"]
                   for _ in range(count)]
            if args.hostile:
                big, _ = largest_sheet()
                made = setup.post("/api/sheets", json={"document": big, "note": "hostile load"})
                made.raise_for_status()
                big_id = made.json()["id"]
        stop_at = time.monotonic() + args.seconds
        threads = [threading.Thread(target=editor, args=(base, own[k // 2 if args.pairs else k], pipe, k, stop_at,
                                                         tuple(args.think), tally))
                   for k in range(args.editors)]
        if args.hostile:
            threads += [threading.Thread(target=hostile, args=(base, lane, big_id, big, stop_at, bad))
                        for lane in range(3)]
        started = time.monotonic()
        for t in threads:
            t.start()
        for t in threads:
            t.join()
        wall = time.monotonic() - started

    every = [t for times in tally.times.values() for t in times]
    print(f"{args.editors} editors for {args.seconds:g} s on {HOST} ({'two per sheet' if args.pairs else 'one per sheet'}, "
          f"pause {args.think[0]:g}-{args.think[1]:g} s), sheet {doc['header'].get('title', '')!r} "
          f"({len(doc['elements'])} elements)")
    print(f"requests served: {len(every)} ({len(every) / wall:.0f}/s); errors: {len(tally.errors)}; "
          f"conflicts answered 409: {tally.conflicts}")
    if every:
        target = 150 if args.hostile else 100
        print(f"latency, all requests: median {statistics.median(every):.1f} ms, p95 {_p95(every):.1f} ms, "
              f"max {max(every):.1f} ms (target p95 < {target} ms)")
    for kind in ("edit", "page", "record"):
        times = tally.times.get(kind)
        if times:
            print(f"  {kind:<6} {len(times):>6} requests: median {statistics.median(times):.1f} ms, "
                  f"p95 {_p95(times):.1f} ms")
    if tally.errors:
        print("errors (first 10): " + "; ".join(tally.errors[:10]))
    if args.hostile:
        print("hostile client (3 connections, no pause; its answers are meant to be slow or refused):")
        for kind, times in sorted(bad.times.items()):
            print(f"  {kind:<6} {len(times):>6} answered: median {statistics.median(times):.1f} ms, "
                  f"max {max(times):.1f} ms")
        refused = defaultdict(int)
        for e in bad.errors:
            refused[e] += 1
        print("  refusals: " + (", ".join(f"{k} x{v}" for k, v in sorted(refused.items())) or "none"))
    return 1 if tally.errors else 0


if __name__ == "__main__":
    sys.exit(main())
