"""PDFs made in a worker process within limits: pages, time, memory, PDFs at once; refusals in words.

Every test here sets the limits it relies on and lowers only the one it is about, so that removing that
limit (or the worker) makes the test fail rather than pass by another limit's doing.
"""

from __future__ import annotations

import io
import multiprocessing
import os
import signal
import threading
from pathlib import Path

import pytest
from pypdf import PdfReader

from server import pdf

ROOT = Path(__file__).resolve().parents[2]
STATIC = ROOT / "static"
STYLESHEET = pdf.ASSET_ORIGIN + "/static/css/record.css"


@pytest.fixture(autouse=True)
def roomy_limits(monkeypatch):
    """Generous limits and an empty cache; each test then lowers the one limit it is about."""
    monkeypatch.setattr(pdf, "PDF_MAX_PAGES", 100_000)
    monkeypatch.setattr(pdf, "PDF_SECONDS", 600.0)
    monkeypatch.setattr(pdf, "PDF_START_SECONDS", 600.0)
    monkeypatch.setattr(pdf, "PDF_MEMORY_MB", 4000)
    monkeypatch.setattr(pdf, "PDF_AT_ONCE", 2)
    monkeypatch.setattr(pdf, "SLOTS", threading.BoundedSemaphore(2))
    pdf._render_cached.cache_clear()
    yield
    pdf._render_cached.cache_clear()


def pages_html(n: int, words: str = "") -> str:
    """A page of ``n`` printed pages, one numbered block each."""
    blocks = "".join(f'<div style="page-break-after: always">Page {i + 1} {words}</div>' for i in range(n - 1))
    return f"<!doctype html><html><body>{blocks}<div>Page {n} {words}</div></body></html>"


def table_html(rows: int) -> str:
    """A long table: cheap to write, slow and memory-hungry to lay out."""
    body = "".join(f"<tr><td>{i}</td><td>pipe run {i}, steel, 300 mm</td><td>{i * 0.37:.2f} m</td></tr>"
                   for i in range(rows))
    return f"<!doctype html><html><body><table>{body}</table></body></html>"


def workers_left() -> list[int]:
    """Workers this test process started that are still alive (the idle spare aside), seen from both sides."""
    spare = pdf.spare_pid()
    alive = [p.pid for p in multiprocessing.active_children() if p.name.startswith("headsheet-pdf") and p.pid != spare]
    me = os.getpid()
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            stat = (entry / "stat").read_text()
            cmdline = (entry / "cmdline").read_bytes()
        except OSError:
            continue
        parent = int(stat.rsplit(")", 1)[1].split()[1])
        pid = int(entry.name)
        if parent == me and b"multiprocessing.spawn" in cmdline and pid != spare and pid not in alive:
            alive.append(pid)
    return alive


# ----------------------------------------------------------------------------- a PDF is made

def test_a_small_page_is_made_in_a_worker_not_in_the_server(monkeypatch):
    def no_layout_here(*args, **kwargs):
        raise AssertionError("the server process laid out a PDF itself")

    monkeypatch.setattr(pdf, "HTML", no_layout_here)  # in this process only; the worker has its own
    body = pdf.render_pdf(pages_html(2, "hello"), STATIC)
    assert body.startswith(b"%PDF")
    assert len(PdfReader(io.BytesIO(body)).pages) == 2
    assert workers_left() == []


def test_the_workers_fetches_go_through_the_servers_fetcher():
    fetcher = pdf.StaticFetcher(STATIC)
    html = (f'<link rel="stylesheet" href="{STYLESHEET}"><link rel="stylesheet" href="file:///etc/passwd">'
            '<img src="http://127.0.0.1:9/x.png"><p>Asked for</p>')
    body = pdf.render_pdf(html, STATIC, fetcher)
    assert body.startswith(b"%PDF")
    # Everything the worker wanted was asked here, where the fetcher served the stylesheet and refused the rest.
    assert STYLESHEET in fetcher.asked
    assert "http://127.0.0.1:9/x.png" in fetcher.asked and "file:///etc/passwd" in fetcher.asked


def test_a_repeat_is_served_from_the_recent_pdfs_without_a_worker(monkeypatch):
    started = []
    real = pdf._run_worker
    monkeypatch.setattr(pdf, "_run_worker", lambda *a, **k: started.append(1) or real(*a, **k))
    html = pages_html(1, "repeat")
    first = pdf.render_pdf(html, STATIC)
    second = pdf.render_pdf(html, STATIC)
    assert first == second and first.startswith(b"%PDF")
    assert len(started) == 1
    pdf.render_pdf(pages_html(1, "another"), STATIC)
    assert len(started) == 2


def test_the_spare_worker_makes_the_next_pdf_and_then_ends_too(monkeypatch):
    monkeypatch.setattr(pdf, "PDF_SPARE", True)
    pdf.render_pdf(pages_html(1, "first"), STATIC)
    spare = pdf.spare_pid()
    assert spare is not None and Path(f"/proc/{spare}").exists()
    assert pdf.render_pdf(pages_html(1, "second"), STATIC).startswith(b"%PDF")
    assert pdf.LAST_WORKER["pid"] == spare and pdf.LAST_WORKER["outcome"] == "pdf"
    assert not Path(f"/proc/{spare}").exists()  # one PDF per process, then gone
    assert pdf.spare_pid() not in (None, spare)


def test_without_a_spare_no_process_is_left_after_a_pdf(monkeypatch):
    monkeypatch.setattr(pdf, "PDF_SPARE", False)
    pdf.render_pdf(pages_html(1, "no spare"), STATIC)
    pid = pdf.LAST_WORKER["pid"]
    assert pid != os.getpid() and not Path(f"/proc/{pid}").exists()


# ----------------------------------------------------------------------------- the page cap

def test_a_pdf_past_the_page_cap_is_refused_naming_the_cap(monkeypatch):
    monkeypatch.setattr(pdf, "PDF_MAX_PAGES", 3)
    assert len(PdfReader(io.BytesIO(pdf.render_pdf(pages_html(3), STATIC))).pages) == 3  # at the cap: made
    with pytest.raises(pdf.PdfRefused) as refused:
        pdf.render_pdf(pages_html(6), STATIC)
    assert refused.value.kind == "pages" and refused.value.status == 413
    assert "past 3 pages" in str(refused.value) and "came to 6" in str(refused.value)
    assert workers_left() == []


def test_the_page_cap_holds_with_a_fetcher_too(monkeypatch):
    monkeypatch.setattr(pdf, "PDF_MAX_PAGES", 2)
    with pytest.raises(pdf.PdfRefused, match="past 2 pages"):
        pdf.render_pdf(pages_html(5), STATIC, pdf.StaticFetcher(STATIC))


def test_a_refusal_is_not_kept_so_a_later_try_can_succeed(monkeypatch):
    html = pages_html(4)
    monkeypatch.setattr(pdf, "PDF_MAX_PAGES", 3)
    with pytest.raises(pdf.PdfRefused):
        pdf.render_pdf(html, STATIC)
    monkeypatch.setattr(pdf, "PDF_MAX_PAGES", 4)
    assert pdf.render_pdf(html, STATIC).startswith(b"%PDF")


# ----------------------------------------------------------------------------- time and memory

def test_a_pdf_past_the_time_limit_is_stopped_and_its_worker_is_gone(monkeypatch):
    monkeypatch.setattr(pdf, "PDF_SECONDS", 0.5)
    with pytest.raises(pdf.PdfRefused) as refused:
        pdf.render_pdf(table_html(20_000), STATIC)
    assert refused.value.kind == "time" and refused.value.status == 503
    assert "longer than 0.5 s to lay out" in str(refused.value)
    assert pdf.LAST_WORKER["outcome"] == "time"
    assert not Path(f"/proc/{pdf.LAST_WORKER['pid']}").exists()  # killed and waited for: not even a zombie
    assert workers_left() == []


def test_a_pdf_past_the_memory_limit_is_stopped(monkeypatch):
    # A worker holds about 70 MB of address space once WeasyPrint is loaded; a long table needs hundreds more.
    monkeypatch.setattr(pdf, "PDF_MEMORY_MB", 128)
    with pytest.raises(pdf.PdfRefused) as refused:
        pdf.render_pdf(table_html(20_000), STATIC)
    assert refused.value.kind == "memory" and refused.value.status == 503
    assert "more than 128 MB of memory" in str(refused.value)
    assert workers_left() == []
    # The server's own memory is not capped: only the worker's was.
    import resource
    assert resource.getrlimit(resource.RLIMIT_AS)[0] != 128 * 1024 * 1024


def aborting_worker():
    """A worker that dies at once by a signal, as one does when a library gives up for want of memory."""
    context = multiprocessing.get_context("spawn")
    ours, theirs = context.Pipe()
    worker = context.Process(target=os.abort, name="headsheet-pdf", daemon=True)
    worker.start()
    theirs.close()
    return worker, ours


def test_a_worker_that_dies_without_a_word_is_a_refusal_in_words(monkeypatch):
    monkeypatch.setattr(pdf, "_take_worker", aborting_worker)
    with pytest.raises(pdf.PdfRefused) as refused:
        pdf.render_pdf(pages_html(1, "crash"), STATIC)
    assert refused.value.kind == "memory" and "more than 4000 MB" in str(refused.value)
    monkeypatch.setattr(pdf, "PDF_MEMORY_MB", 0)  # with no cap the signal cannot be put down to memory
    with pytest.raises(pdf.PdfRefused) as refused:
        pdf.render_pdf(pages_html(1, "crash again"), STATIC)
    assert refused.value.kind == "failed" and f"signal {int(signal.SIGABRT)}" in str(refused.value)
    assert workers_left() == []


def test_a_spare_that_died_while_idle_is_not_used(monkeypatch):
    monkeypatch.setattr(pdf, "PDF_SPARE", True)
    pdf.render_pdf(pages_html(1, "before"), STATIC)
    spare = pdf.spare_pid()
    os.kill(spare, signal.SIGKILL)
    for _ in range(1000):  # until the kernel has made it a zombie, so the server can see it is dead
        if Path(f"/proc/{spare}/stat").read_text().rsplit(")", 1)[1].split()[0] == "Z":
            break
        threading.Event().wait(0.01)
    assert pdf.render_pdf(pages_html(1, "after"), STATIC).startswith(b"%PDF")
    assert pdf.LAST_WORKER["pid"] != spare


# ----------------------------------------------------------------------------- PDFs at once

def test_a_pdf_asked_while_every_turn_is_taken_is_refused_as_busy(monkeypatch):
    slots = threading.BoundedSemaphore(1)
    monkeypatch.setattr(pdf, "PDF_AT_ONCE", 1)
    monkeypatch.setattr(pdf, "SLOTS", slots)
    monkeypatch.setattr(pdf, "PDF_WAIT_SECONDS", 0.1)
    started = []
    monkeypatch.setattr(pdf, "_run_worker", lambda *a, **k: started.append(1) or b"%PDF-fake")
    assert slots.acquire(timeout=1)  # another PDF is being made
    try:
        with pytest.raises(pdf.PdfRefused) as refused:
            pdf.render_pdf(pages_html(1), STATIC)
    finally:
        slots.release()
    assert refused.value.kind == "busy" and refused.value.status == 503
    assert str(refused.value).startswith("1 PDF is being made already") and "try again in a minute" in str(refused.value)
    assert started == []
    # With the turn free again the same request goes through, and gives its turn back.
    assert pdf.render_pdf(pages_html(1), STATIC) == b"%PDF-fake"
    assert slots.acquire(timeout=0)
    slots.release()


def test_a_turn_is_given_back_after_a_refusal(monkeypatch):
    slots = threading.BoundedSemaphore(1)
    monkeypatch.setattr(pdf, "PDF_AT_ONCE", 1)
    monkeypatch.setattr(pdf, "SLOTS", slots)
    monkeypatch.setattr(pdf, "PDF_MAX_PAGES", 1)
    with pytest.raises(pdf.PdfRefused):
        pdf.render_pdf(pages_html(2), STATIC)
    assert slots.acquire(timeout=0), "the refused PDF kept its turn"
    slots.release()


# ----------------------------------------------------------------------------- through the app

def test_route_record_pdf_past_the_cap_answers_with_an_error_page_saying_why(client, monkeypatch):
    """End to end: a refusal is a page that says what happened, not an internal error.

    This passes through the app's HTTP error handler (PdfRefused is an HTTPException); with the change
    proposed for ``record_pdf`` in server/record.py it passes too, with the title "No PDF".
    """
    monkeypatch.setattr(pdf, "PDF_MAX_PAGES", 1)
    response = client.get("/sheets/1/revisions/1/record.pdf")
    assert response.status_code == 413
    assert response.headers["content-type"].startswith("text/html")
    assert "The PDF would run past 1 page (it came to" in response.text
    assert "Read the record in the browser" in response.text
