"""Benchmark: the PDF of the largest sheet the program stores, made within the PDF limits.

Run by hand:

    python benchmarks/pdf_limits.py [--seconds S] [--memory-mb M] [--pages N] [--unlimited]

Builds a sheet at the document limits (the most elements the parser takes, each pipe run with as many
profile points and fittings as keep the document under the largest size stored), stores it through the
app (in-process, a real store in a temporary folder), and asks for its PDF the way a browser does.
Before that, a demo sheet's PDF twice: once from a cold worker and once from the spare, to show what a
worker costs a normal record. Prints, for each PDF: wall time, the answer (pages, or the refusal in
the words the reader sees), the worker's peak resident memory (from /proc: its own VmHWM, or for a
worker stopped early the highest seen from outside), the largest finished child's ru_maxrss from
getrusage (Linux counts in it the server pages a child is started from, so it is never below the
server's size at that moment) and the server process's own peak and present memory.

--seconds, --memory-mb and --pages replace the limits in server/pdf.py for the run; --unlimited lifts
all three, to see what the large PDF would cost with no limit at all (minutes and gigabytes).
"""

from __future__ import annotations

import argparse
import io
import json
import logging
import os
import resource
import sys
import tempfile
import time
import warnings
from pathlib import Path

# Only light imports up here: a PDF worker is a fresh interpreter that loads this file as its main
# module, and what is imported here would count in the worker's memory.
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

FITTINGS = ("elbow-90-long-radius", "valve-gate-open", "tee-run-through", "bend-90-rd4", "valve-check-swing")


def large_sheet(pipes: int, points: int, fittings: int) -> dict:
    """A gravity line of ``pipes`` runs, each with ``points`` profile points and ``fittings`` fittings."""
    top, drop, length = 2000.0, 5.0, 100.0
    elements = []
    for i in range(pipes):
        z0, z1 = top - drop * i, top - drop * (i + 1)
        profile = [{"chainage": f"{length * (j + 1) / (points + 1):.2f} m",
                    "elevation": f"{z0 + (z1 - z0) * (j + 1) / (points + 1) - 0.3 * (j % 2):.2f} m"}
                   for j in range(points)]
        elements.append({
            "kind": "pipe", "label": f"Run {i + 1:03d}", "length": f"{length:g} m", "diameter": "300 mm",
            "size": None, "material": "steel-commercial", "roughness": "", "end_elevation": f"{z1:.1f} m",
            "rating": "250 bar", "profile": profile,
            "fittings": [{"type": FITTINGS[j % len(FITTINGS)], "count": 1 + j % 3} for j in range(fittings)],
        })
    return {
        "format": "headsheet-sheet", "version": 1,
        "header": {"project": "PDF limits benchmark", "calc_number": "BENCH-PDF-1",
                   "title": "Gravity main at the document limits",
                   "purpose": "The largest sheet the program stores, to see what its PDF costs.",
                   "revision_scheme": "letters", "units": "SI"},
        "liquid": {"kind": "water", "temperature": "10 degC"},
        "site": {"atmospheric_pressure": "101.325 kPa"},
        "settings": {"friction_method": "colebrook"},
        "start": {"kind": "reservoir", "elevation": f"{top + 2:.1f} m", "pressure": "0 kPa",
                  "outlet_elevation": f"{top:.1f} m"},
        "end": {"kind": "reservoir", "elevation": f"{top - drop * pipes + 1:.1f} m", "pressure": "0 kPa"},
        "elements": elements,
    }


def largest_sheet() -> tuple[dict, tuple[int, int, int]]:
    """The most pipe runs the parser takes, each as full as the stored document size allows."""
    from calc.model import sheet as calc_sheet
    from server.editing import MAX_DOCUMENT_BYTES

    pipes, best = calc_sheet.MAX_ELEMENTS, (calc_sheet.MAX_ELEMENTS, 0, 0)
    points = fittings = 0
    while points < calc_sheet.MAX_POINTS or fittings < calc_sheet.MAX_FITTINGS:
        trial = (pipes, min(points + 1, calc_sheet.MAX_POINTS), min(fittings + 1, calc_sheet.MAX_FITTINGS))
        if len(json.dumps(large_sheet(*trial))) > MAX_DOCUMENT_BYTES * 0.98:
            break
        best, (_, points, fittings) = trial, trial
    return large_sheet(*best), best


def rss_mb() -> float:
    """This process's present resident memory [MB]."""
    for line in Path("/proc/self/status").read_text().splitlines():
        if line.startswith("VmRSS:"):
            return int(line.split()[1]) / 1024
    return float("nan")


def peaks() -> tuple[float, float]:
    """Peak resident memory of this process and of the largest finished child [MB] (Linux gives kB)."""
    return (resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024,
            resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024)


def fetch_pdf(client, what: str, url: str, **params) -> None:
    from pypdf import PdfReader

    from server import pdf

    start = time.perf_counter()
    response = client.get(url, params=params)
    wall = time.perf_counter() - start
    if response.status_code == 200 and response.content.startswith(b"%PDF"):
        pages = len(PdfReader(io.BytesIO(response.content)).pages)
        answer = f"{pages} pages, {len(response.content) / 1e3:.0f} kB"
    else:
        text = response.text
        lead = text.split('<p class="lead">', 1)[-1].split("</p>", 1)[0].strip() if "lead" in text else text[:300]
        answer = f"refused {response.status_code}: {lead}"
    server_peak, child_peak = peaks()
    last = pdf.LAST_WORKER
    own = f"{last['peak_mb']:.0f} MB" if last.get("peak_mb") else "not known"
    print(f"{what}: {wall:7.1f} s wall -- {answer}")
    print(f"    worker: {last.get('outcome')} after {last.get('seconds', 0):.1f} s, peak {own} resident (VmHWM); "
          f"largest finished child by getrusage {child_peak:.0f} MB")
    print(f"    server: peak {server_peak:.0f} MB, now {rss_mb():.0f} MB")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--seconds", type=float, help="time limit for one PDF [s]")
    parser.add_argument("--memory-mb", type=int, help="memory limit for one PDF worker [MB]")
    parser.add_argument("--pages", type=int, help="page cap")
    parser.add_argument("--unlimited", action="store_true", help="lift all three limits")
    args = parser.parse_args()

    # The in-process client sends Host: testserver; the server answers only to names it is told of.
    os.environ.setdefault("HEADSHEET_HOST_NAMES", "testserver")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        from fastapi.testclient import TestClient

    from server import pdf
    from server.app import create_app

    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    logging.getLogger("headsheet.pdf").setLevel(logging.ERROR)
    if args.unlimited:
        pdf.PDF_SECONDS, pdf.PDF_MEMORY_MB, pdf.PDF_MAX_PAGES = 24 * 3600.0, 0, 10**9
    if args.seconds is not None:
        pdf.PDF_SECONDS = args.seconds
    if args.memory_mb is not None:
        pdf.PDF_MEMORY_MB = args.memory_mb
    if args.pages is not None:
        pdf.PDF_MAX_PAGES = args.pages
    print(f"limits: {pdf.PDF_SECONDS:g} s, {pdf.PDF_MEMORY_MB or 'no cap on'} MB, {pdf.PDF_MAX_PAGES} pages, "
          f"{pdf.PDF_AT_ONCE} at once, spare worker {'on' if pdf.PDF_SPARE else 'off'}")
    print(f"server before the app: {rss_mb():.0f} MB")

    doc, (pipes, points, fittings) = largest_sheet()
    size = len(json.dumps(doc))
    with tempfile.TemporaryDirectory() as tmp, TestClient(create_app(Path(tmp))) as client:
        demo = client.get("/api/sheets").json()["sheets"][0]
        url = f"/sheets/{demo['id']}/revisions/{demo['revision']}/record.pdf"
        fetch_pdf(client, f"demo {demo['title'][:40]!r}, cold worker", url)
        time.sleep(3)  # a person reading the first: time for the spare worker to load WeasyPrint
        fetch_pdf(client, "same demo on letter, spare worker", url, paper="letter")

        start = time.perf_counter()
        created = client.post("/api/sheets", json={"document": doc})
        assert created.status_code == 201, created.text[:500]
        sheet_id = created.json()["id"]
        page = client.get(f"/sheets/{sheet_id}/revisions/1/record")
        assert page.status_code == 200, page.text[:500]
        print(f"large sheet: {pipes} pipe runs x {points} profile points x {fittings} fittings, {size / 1e3:.0f} kB "
              f"of JSON; stored and its record page drawn in {time.perf_counter() - start:.1f} s "
              f"({len(page.content) / 1e6:.1f} MB of HTML)")
        fetch_pdf(client, "large sheet PDF", f"/sheets/{sheet_id}/revisions/1/record.pdf")
        client.app.state.store.close()


if __name__ == "__main__":
    main()
