"""Round trip of one field change on the largest demo sheet (or, with --transient, the demo with transient
events, whose run is redone on every edit): post over loopback, time until the results fragment is back.

Starts `headsheet serve` in a subprocess on a free port with a fresh data folder, reads the sheet
page as a browser would, then posts N changes of one pipe run's length (each value new, so every
post saves a revision and re-solves; nothing is served from the solution cache) with the headers
htmx sends, and prints the median and 95th percentile times. Target: p95 under 50 ms.

    python benchmarks/roundtrip.py [-n 200] [--cases 8]
"""

from __future__ import annotations

import argparse
import re
import statistics
import sys
import time
from pathlib import Path

import httpx

sys.path.insert(0, str(Path(__file__).resolve().parent))
from serving import form_fields, largest_demo, running_server  # noqa: E402
from sheet_cases import with_cases  # noqa: E402


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("-n", type=int, default=200, help="timed posts (default 200)")
    parser.add_argument("--warmup", type=int, default=10)
    parser.add_argument("--cases", type=int, default=0,
                        help="give the sheet this many operating cases first (target for 8: p95 < 50 ms)")
    parser.add_argument("--transient", action="store_true",
                        help="time the demo sheet with transient events instead (its run redone on every edit)")
    args = parser.parse_args()

    with running_server() as base, httpx.Client(base_url=base, timeout=10) as client:
        sheet_id, doc, pipe = largest_demo(client)
        if args.transient:
            sheets = client.get("/api/sheets").json()["sheets"]
            docs = {x["id"]: client.get(f"/api/sheets/{x['id']}").json()["document"] for x in sheets}
            sheet_id = next(i for i, d in docs.items() if (d.get("transient") or {}).get("events"))
            doc = docs[sheet_id]
            pipe = next(i for i, e in enumerate(doc["elements"]) if e["kind"] == "pipe")
        if args.cases:
            revision = client.get(f"/api/sheets/{sheet_id}").json()["revision"]
            doc = with_cases(doc, args.cases)
            r = client.put(f"/api/sheets/{sheet_id}", json={"document": doc, "base_revision": revision})
            if r.status_code != 200:
                print(f"could not give the sheet its cases: {r.status_code} {r.text[:300]}", file=sys.stderr)
                return 1
        fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
        headers = {"HX-Request": "true", "HX-Current-URL": f"{base}/sheets/{sheet_id}",
                   "HX-Target": "results", "HX-Trigger": "sheet-form"}
        times = []
        for k in range(args.warmup + args.n):
            fields[f"elements.{pipe}.length"] = f"{(640 if args.transient else 100) + 0.01 * k:.2f} m"
            start = time.perf_counter()
            response = client.post(f"/sheets/{sheet_id}", data=fields, headers=headers)
            elapsed = time.perf_counter() - start
            if response.status_code != 200 or 'id="results"' not in response.text:
                print(f"unexpected answer {response.status_code}", file=sys.stderr)
                return 1
            fields["base"] = re.search(r'id="base" value="(\d+)"', response.text).group(1)
            if k >= args.warmup:
                times.append(elapsed * 1000)

    times.sort()
    p95 = times[min(len(times) - 1, int(round(0.95 * len(times))) - 1)]
    title = doc["header"].get("title", "")
    print(f"sheet: {title!r} ({len(doc['elements'])} elements, {len(doc.get('cases') or [])} cases), "
          f"{args.n} posts of elements.{pipe}.length")
    print(f"round trip: median {statistics.median(times):.1f} ms, p95 {p95:.1f} ms, "
          f"min {times[0]:.1f} ms, max {times[-1]:.1f} ms (target p95 < 50 ms)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
