"""Benchmark: median time to render the largest demo sheet's calculation record as HTML and as PDF.

Run by hand: python benchmarks/record.py [repeats]
Goes through the app in-process (a real store in a temporary folder), as a browser would: the record
page, then the PDF. Each timing starts with the analysis cache and the recent-PDF cache cleared, so
it includes parsing, solving, the checks and the uncertainty band, not just the drawing. Prints
wall-clock and CPU medians; the CPU time counts this process and the PDF worker processes that
ended during the timing (each PDF is laid out in a worker of its own, see server/pdf.py). On a
shared machine the CPU time is the steadier figure. Target: PDF under 1.5 s.
"""

from __future__ import annotations

import io
import logging
import os
import resource
import statistics
import sys
import tempfile
import time
import warnings
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
os.environ.setdefault("HEADSHEET_HOST_NAMES", "testserver")  # the test client's host name

with warnings.catch_warnings():
    warnings.simplefilter("ignore")
    from fastapi.testclient import TestClient

from pypdf import PdfReader  # noqa: E402

from server import pdf as server_pdf  # noqa: E402
from server import record as server_record  # noqa: E402
from server.app import create_app  # noqa: E402

TARGET_PDF = 1.5  # [s]


def _cpu() -> float:
    """CPU seconds of this process and of its ended children (the PDF workers)."""
    children = resource.getrusage(resource.RUSAGE_CHILDREN)
    return time.process_time() + children.ru_utime + children.ru_stime


def timed(fn, repeats: int) -> tuple[float, float, object]:
    walls, cpus, out = [], [], None
    for _ in range(repeats):
        server_record._analysis.cache_clear()
        server_pdf._render_cached.cache_clear()
        w, c = time.perf_counter(), _cpu()
        out = fn()
        walls.append(time.perf_counter() - w)
        cpus.append(_cpu() - c)
    return statistics.median(walls), statistics.median(cpus), out


def main(repeats: int = 7) -> None:
    logging.getLogger("weasyprint").setLevel(logging.ERROR)
    with tempfile.TemporaryDirectory() as tmp, TestClient(create_app(Path(tmp))) as client:
        sheets = client.get("/api/sheets").json()["sheets"]
        sizes = {}
        for s in sheets:  # the largest sheet is the one whose record runs to the most pages
            body = client.get(f"/sheets/{s['id']}/revisions/{s['revision']}/record.pdf").content
            sizes[s["id"]] = (len(PdfReader(io.BytesIO(body)).pages), len(body))
        largest = max(sheets, key=lambda s: sizes[s["id"]])
        base = f"/sheets/{largest['id']}/revisions/{largest['revision']}/record"
        pages, _ = sizes[largest["id"]]
        print(f"largest demo sheet: {largest['title']!r} ({pages} pages)")
        html_wall, html_cpu, response = timed(lambda: client.get(base), repeats)
        assert response.status_code == 200
        print(f"record as HTML: median {html_wall * 1e3:7.1f} ms wall, {html_cpu * 1e3:7.1f} ms CPU "
              f"({len(response.content) / 1e3:.0f} kB, {repeats} runs)")
        for paper in ("a4", "letter"):
            pdf_wall, pdf_cpu, response = timed(lambda: client.get(base + ".pdf", params={"paper": paper}), repeats)
            assert response.status_code == 200
            verdict = "within" if pdf_wall < TARGET_PDF else "OVER"
            print(f"record as PDF ({paper:6s}): median {pdf_wall * 1e3:7.1f} ms wall, {pdf_cpu * 1e3:7.1f} ms CPU "
                  f"({len(response.content) / 1e3:.0f} kB) -- {verdict} the {TARGET_PDF:g} s target")
        for s in sheets:
            if s["id"] != largest["id"]:
                url = f"/sheets/{s['id']}/revisions/{s['revision']}/record.pdf"
                wall, cpu, _ = timed(lambda: client.get(url), max(3, repeats // 2))
                print(f"  other demo {s['title'][:40]!r:44s} PDF median {wall * 1e3:7.1f} ms wall, "
                      f"{cpu * 1e3:7.1f} ms CPU ({sizes[s['id']][0]} pages)")
        app_state = client.app.state
        app_state.store.close()


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 7)
