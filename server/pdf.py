"""The record as PDF: WeasyPrint over the record page, fetching nothing but the program's own static files.

Layout runs in a worker process of its own, one per PDF, so that a sheet whose record is huge cannot
take the server down with it:

- the worker is started fresh ("spawn": a new interpreter, not a copy of the server and its threads)
  and ends after the one PDF, so whatever memory the layout took goes back to the system;
- its address space is capped (``PDF_MEMORY_MB``), its layout time is capped (``PDF_SECONDS``, after
  which it is killed) and its length is capped (``PDF_MAX_PAGES``, counted after layout and before the
  PDF file is written);
- at most ``PDF_AT_ONCE`` workers run at a time; a request that cannot get a turn within
  ``PDF_WAIT_SECONDS`` is told the server is busy;
- the worker opens no file and no connection for the page: every URL it wants is asked of this
  process, where the :class:`StaticFetcher` decides (so what it asked for is seen here too);
- one spare worker is kept started ahead (``PDF_SPARE``), so that a PDF does not wait the second a
  fresh interpreter takes to load WeasyPrint; it too makes one PDF and ends.

Each limit that stops a PDF raises :class:`PdfRefused`, whose text says in plain words what happened
and what to do; the record routes show it on an error page.
"""

from __future__ import annotations

import hashlib
import logging
import mimetypes
import multiprocessing
import os
import signal
import threading
import time
from collections import OrderedDict
from pathlib import Path
from urllib.parse import unquote, urlsplit

from starlette.exceptions import HTTPException
from weasyprint import HTML
from weasyprint.urls import URLFetcher, URLFetcherResponse

log = logging.getLogger("headsheet.pdf")

#: The made-up origin the PDF's asset links are written against. The .invalid top-level domain is
#: reserved (RFC 2606) and never resolves, and the fetcher below never opens a connection anyway.
ASSET_ORIGIN = "https://headsheet.invalid"
#: Files the PDF may load from the static folder: stylesheets, fonts and images, nothing else.
ALLOWED_SUFFIXES = {".css", ".woff", ".woff2", ".ttf", ".otf", ".svg", ".png", ".jpg", ".jpeg"}
PAPERS = {"a4": "A4", "letter": "letter"}

# -- the limits (read at each render, so a deployment or a test may change them) -------------------

#: Longest PDF made, in pages. A demo sheet's record runs to about a dozen.
PDF_MAX_PAGES = 200
#: Longest a worker may spend on one PDF once it is ready (layout and writing), in seconds.
PDF_SECONDS = 120.0
#: Longest a worker may take to start (a fresh interpreter loading WeasyPrint), in seconds.
PDF_START_SECONDS = 60.0
#: Address space a worker may use, in MB (RLIMIT_AS; 0 for no cap). A demo record's worker peaks under
#: 100 MB resident; benchmarks/pdf_limits.py shows what a sheet at the document limits would take.
PDF_MEMORY_MB = 1500
#: PDFs made at the same time; more wait for a turn.
PDF_AT_ONCE = 2
#: Longest a request waits for a turn before it is told the server is busy, in seconds.
PDF_WAIT_SECONDS = 10.0
#: How much lower a worker's CPU priority is than the server's (os.nice): on a busy machine, people
#: editing sheets are answered first and a long PDF waits, rather than the other way round.
PDF_NICE = 10
#: Keep one worker started ahead, WeasyPrint loaded, so a PDF does not wait a second for a fresh one.
#: It renders one PDF like any other and ends; the next spare is started when a PDF is done.
PDF_SPARE = True
#: Recent PDFs kept for repeat downloads: at most this many, and at most this many MB of them.
PDF_CACHE_COUNT = 16
PDF_CACHE_MB = 64

#: The turns: one per PDF being made. Replace it (with PDF_AT_ONCE) to change how many.
SLOTS = threading.BoundedSemaphore(PDF_AT_ONCE)

_MB = 1024 * 1024


class FetchRefused(ValueError):
    """A URL the PDF renderer asked for that is not one of the program's own static files."""


class PdfRefused(HTTPException):
    """A PDF that was not made, with the reason in words for the reader and an HTTP status.

    ``kind`` is one of "pages", "time", "memory", "busy", "failed". It is an HTTPException, so a route
    that lets it pass still answers with the error page and this text, never an internal error.
    """

    def __init__(self, status: int, kind: str, message: str):
        super().__init__(status, message)
        self.status = status
        self.kind = kind
        self.message = message

    def __str__(self) -> str:
        return self.message

    def __repr__(self) -> str:
        return f"PdfRefused({self.status}, {self.kind!r}, {self.message!r})"


def refused_pages(pages: int | None, cap: int) -> PdfRefused:
    counted = f" (it came to {pages})" if pages else ""
    unit = "page" if cap == 1 else "pages"
    return PdfRefused(413, "pages", f"The PDF would run past {cap} {unit}{counted}, the most this server makes, "
                                    "so it was not made. Read the record in the browser instead, or split the "
                                    "line into several sheets with fewer elements, profile points or curve points.")


def refused_time(seconds: float, starting: bool = False) -> PdfRefused:
    if starting:
        return PdfRefused(503, "time", f"The PDF maker did not start within {seconds:g} s and was stopped; "
                                       "the server may be very busy. Try again in a minute.")
    return PdfRefused(503, "time", f"The PDF took longer than {seconds:g} s to lay out and was stopped. "
                                   "The record is probably too long for one PDF: read it in the browser, or split "
                                   "the line into smaller sheets. If the server is busy, try again in a minute.")


def refused_memory(mb: int) -> PdfRefused:
    return PdfRefused(503, "memory", f"The PDF needed more than {mb} MB of memory and was stopped; the server is "
                                     "unharmed. The record is probably too long for one PDF: read it in the "
                                     "browser, or split the line into smaller sheets.")


def refused_busy(at_once: int, waited: float) -> PdfRefused:
    made = "1 PDF is" if at_once == 1 else f"{at_once} PDFs are"
    return PdfRefused(503, "busy", f"{made} being made already and none finished within {waited:g} s; "
                                   "try again in a minute.")


def refused_failed(detail: str) -> PdfRefused:
    return PdfRefused(503, "failed", f"The PDF maker stopped without a PDF ({detail}). Try again in a minute; "
                                     "if it happens again, read the record in the browser and report the sheet.")


class StaticFetcher(URLFetcher):
    """Serves ``ASSET_ORIGIN/static/<path>`` from the static folder and refuses every other URL.

    No http(s) request, no file: URL, no data: URL and no path outside the static folder is
    ever opened, whatever a sheet's text holds. ``asked`` keeps every URL requested, for tests.
    """

    def __init__(self, static_dir: Path, prefix: str = "/static/"):
        super().__init__(allowed_protocols=("https",), allow_redirects=False, fail_on_errors=False)
        self.static_dir = Path(static_dir).resolve()
        self.prefix = prefix
        self.asked: list[str] = []

    def resolve(self, url: str) -> Path:
        """The file a URL names, or FetchRefused."""
        parts = urlsplit(url)
        if f"{parts.scheme}://{parts.netloc}" != ASSET_ORIGIN or parts.query or not parts.path.startswith(self.prefix):
            raise FetchRefused(f"the record loads only its own static files, not {url[:200]!r}")
        relative = unquote(parts.path[len(self.prefix):])
        path = (self.static_dir / relative).resolve()
        if not path.is_relative_to(self.static_dir) or path.suffix.lower() not in ALLOWED_SUFFIXES or not path.is_file():
            raise FetchRefused(f"no static file {relative[:200]!r}")
        return path

    def fetch(self, url, headers=None):
        self.asked.append(url)
        path = self.resolve(url)
        mime = mimetypes.guess_type(path.name)[0] or "application/octet-stream"
        return URLFetcherResponse(url, path.read_bytes(), {"Content-Type": mime})


# -- the entry point --------------------------------------------------------------------------------

def render_pdf(html: str, static_dir: Path, fetcher: StaticFetcher | None = None) -> bytes:
    """The PDF of a record page written with asset links under ASSET_ORIGIN, or PdfRefused.

    The same page always gives the same PDF, and a reviewer tends to download a record more than
    once (A4, then Letter, then again to print), so recent PDFs are kept by their page text: a
    repeat costs nothing instead of a worker and a second or more of layout. A refusal is not kept:
    the next try may find the server less busy.

    With ``fetcher`` the worker's requests are served by that fetcher (and nothing is cached, so
    every request it sees is from this render).
    """
    if fetcher is not None:
        return _render_in_worker(html, fetcher)
    return _render_cached(html, str(static_dir))


class _Recent:
    """Recent PDFs by a digest of their page text, newest last, within a count and a size."""

    def __init__(self):
        self._items: OrderedDict[tuple[bytes, str], bytes] = OrderedDict()
        self._lock = threading.Lock()

    @staticmethod
    def key(html: str, static_dir: str) -> tuple[bytes, str]:
        return hashlib.sha256(html.encode("utf-8", "surrogatepass")).digest(), static_dir

    def get(self, key) -> bytes | None:
        with self._lock:
            body = self._items.get(key)
            if body is not None:
                self._items.move_to_end(key)
            return body

    def put(self, key, body: bytes) -> None:
        with self._lock:
            if len(body) > PDF_CACHE_MB * _MB:
                return
            self._items[key] = body
            self._items.move_to_end(key)
            while len(self._items) > PDF_CACHE_COUNT or sum(map(len, self._items.values())) > PDF_CACHE_MB * _MB:
                self._items.popitem(last=False)

    def clear(self) -> None:
        with self._lock:
            self._items.clear()

    def __len__(self) -> int:
        return len(self._items)


_recent = _Recent()


def _render_cached(html: str, static_dir: str) -> bytes:
    key = _recent.key(html, static_dir)
    body = _recent.get(key)
    if body is None:
        body = _render_in_worker(html, StaticFetcher(Path(static_dir)))
        _recent.put(key, body)
    return body


_render_cached.cache_clear = _recent.clear  # type: ignore[attr-defined]


# -- this side of the worker ------------------------------------------------------------------------

def _render_in_worker(html: str, fetcher: StaticFetcher) -> bytes:
    """Make one PDF in a fresh worker process, within the limits, serving its fetches with ``fetcher``."""
    slots, at_once, wait = SLOTS, PDF_AT_ONCE, PDF_WAIT_SECONDS
    if not slots.acquire(timeout=wait):
        log.warning("PDF refused: %d being made already", at_once)
        raise refused_busy(at_once, wait)
    try:
        return _run_worker(html, fetcher)
    finally:
        slots.release()


def _run_worker(html: str, fetcher: StaticFetcher) -> bytes:
    """Hand the page to a worker and answer it until it gives a PDF or a reason, or runs out of time."""
    max_pages, seconds, memory_mb = PDF_MAX_PAGES, PDF_SECONDS, PDF_MEMORY_MB
    try:
        worker, ours = _take_worker()
    except Exception as exc:  # no process could be started (limits of the system): say so, not a 500
        log.exception("no PDF worker could be started")
        raise refused_failed(f"no worker process could be started ({type(exc).__name__})") from None
    taken = time.monotonic()
    deadline, starting = taken + PDF_START_SECONDS, True
    LAST_WORKER.clear()
    LAST_WORKER.update(pid=worker.pid, outcome="running", pages=None, peak_mb=None, seconds=None)
    outcome, peak_kb = "failed", 0
    try:
        while True:
            left = deadline - time.monotonic()
            if left <= 0:
                raise refused_time(PDF_START_SECONDS if starting else seconds, starting)
            if not ours.poll(min(left, 0.25)):
                peak_kb = max(peak_kb, _peak_kb(worker.pid))  # seen from outside, for a worker stopped early
                continue
            try:
                message = ours.recv()
            except (EOFError, OSError):
                raise _death(worker, memory_mb, seconds) from None
            what = message[0]
            if what == "ready":
                starting = False
                deadline = time.monotonic() + seconds
                _send(ours, ("job", html, max_pages, memory_mb, seconds, PDF_NICE), worker, memory_mb, seconds)
            elif what == "fetch":
                _send(ours, _serve(fetcher, message[1]), worker, memory_mb, seconds)
            elif what == "pdf":
                _, body, pages, own_peak = message
                outcome, peak_kb = "pdf", max(peak_kb, own_peak)
                LAST_WORKER.update(pages=pages)
                log.info("PDF of %d pages, %d kB, in %.1f s; worker peak %d MB", pages, len(body) // 1024,
                         time.monotonic() - taken, peak_kb // 1024)
                return body
            elif what == "pages":
                _, pages, own_peak = message
                peak_kb = max(peak_kb, own_peak)
                LAST_WORKER.update(pages=pages)
                log.warning("PDF refused: %d pages past the cap of %d", pages, max_pages)
                raise refused_pages(pages, max_pages)
            elif what == "memory":
                log.warning("PDF refused: past %d MB", memory_mb)
                raise refused_memory(memory_mb)
            else:  # "error"
                log.error("PDF worker failed: %s", message[1])
                raise refused_failed(message[1][:200])
    except PdfRefused as refused:
        outcome = refused.kind
        if refused.kind == "time":
            log.warning("PDF refused: worker stopped after %.1f s, at %d MB or more", time.monotonic() - taken,
                        peak_kb // 1024)
        raise
    finally:
        ours.close()
        _end(worker)
        LAST_WORKER.update(outcome=outcome, seconds=time.monotonic() - taken, peak_mb=peak_kb / 1024 or None)
        _keep_spare()


#: What the last worker did: its pid, "pdf" or the kind of refusal, pages, peak resident memory [MB]
#: (its own figure, or the highest seen from outside for one stopped early), seconds. For the logs'
#: reader and the benchmark; with PDFs at once it is whichever finished last.
LAST_WORKER: dict = {}

_spare_lock = threading.Lock()
_spare: tuple | None = None  # (process, our end of its pipe): started, loading WeasyPrint or waiting


def _start_worker() -> tuple:
    context = multiprocessing.get_context("spawn")
    ours, theirs = context.Pipe(duplex=True)
    worker = context.Process(target=_worker_main, args=(theirs,), name="headsheet-pdf", daemon=True)
    worker.start()
    theirs.close()  # the worker holds its own copy; ours closing lets a dead worker read as end-of-file
    return worker, ours


def _take_worker() -> tuple:
    """The spare worker if there is a live one, else a new one."""
    global _spare
    with _spare_lock:
        taken, _spare = _spare, None
    if taken is not None:
        if taken[0].is_alive():
            return taken
        taken[1].close()
        _end(taken[0])
    return _start_worker()


def _keep_spare() -> None:
    """Start the next PDF's worker now, so it has WeasyPrint loaded when asked (if PDF_SPARE)."""
    global _spare
    if not PDF_SPARE:
        return
    with _spare_lock:
        if _spare is None or not _spare[0].is_alive():
            old, _spare = _spare, _start_worker()
            if old is not None:
                old[1].close()
                _end(old[0])


def spare_ready(timeout: float = 10.0) -> bool:
    """Wait until the spare worker has WeasyPrint loaded and waits for a page (its 'ready' is in the pipe,
    not yet read); False if there is no spare or it is not ready within ``timeout`` seconds. For the
    benchmark, which times a PDF as an idle server makes it."""
    spare = _spare
    if spare is None:
        return False
    try:
        return bool(spare[1].poll(timeout))
    except (OSError, EOFError):
        return False


def spare_pid() -> int | None:
    """The process id of the idle spare worker, if one is kept."""
    spare = _spare
    return spare[0].pid if spare is not None else None


def _peak_kb(pid: int | str = "self") -> int:
    """A process's peak resident memory [kB] from /proc (its own, unlike getrusage's, which counts the
    server's pages the worker was started from); 0 where /proc cannot tell."""
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1])
    except (OSError, ValueError, IndexError):
        pass
    return 0


def _send(conn, message, worker, memory_mb: int, seconds: float) -> None:
    try:
        conn.send(message)
    except (BrokenPipeError, ConnectionResetError, EOFError):
        raise _death(worker, memory_mb, seconds) from None


def _serve(fetcher: StaticFetcher, url: str) -> tuple:
    """Answer one of the worker's URL requests through the fetcher: the file, or why not."""
    try:
        response = fetcher.fetch(url)
        try:
            return ("file", response.url, response.read(), list(response.headers.items()))
        finally:
            response.close()
    except Exception as e:  # the fetcher's refusal, or a file gone: the worker carries on without it
        log.warning("PDF asked for %.200r: %s", url, e)
        return ("refused", f"{type(e).__name__}: {e}")


def _death(worker, memory_mb: int, seconds: float) -> PdfRefused:
    """The refusal for a worker that ended without a word."""
    worker.join(5)
    code = worker.exitcode
    log.error("PDF worker ended without an answer (exit code %s)", code)
    if code == -signal.SIGXCPU:
        return refused_time(seconds)
    if code is not None and code < 0:
        # Killed by a signal it did not ask for: under an address-space cap that is nearly always a
        # library that could not allocate and gave up (abort or a bad pointer).
        return refused_memory(memory_mb) if memory_mb else refused_failed(f"signal {-code}")
    return refused_failed(f"exit code {code}")


def _end(worker) -> None:
    """The worker is gone when this returns: killed if it still runs, and waited for."""
    if worker.is_alive():
        worker.kill()
    worker.join(10)
    if worker.exitcode is not None:
        worker.close()


# -- the worker -------------------------------------------------------------------------------------

class _AskParent(URLFetcher):
    """The worker's fetcher: every URL is asked of the server process, which serves or refuses it."""

    def __init__(self, conn):
        super().__init__(allowed_protocols=("https",), allow_redirects=False, fail_on_errors=False)
        self.conn = conn

    def fetch(self, url, headers=None):
        self.conn.send(("fetch", str(url)))
        answer = self.conn.recv()
        if answer[0] != "file":
            raise FetchRefused(answer[1])
        _, real_url, body, header_items = answer
        return URLFetcherResponse(real_url, body, dict(header_items))


def _worker_main(conn) -> None:
    """Make one PDF: say ready, take the job, cap the memory, lay out, count pages, write, answer."""
    import resource

    logging.getLogger("weasyprint").setLevel(logging.WARNING)  # its progress lines say nothing to a user
    try:
        conn.send(("ready", os.getpid()))
    except OSError:  # a spare whose server ended before it was ready: nothing to do
        return
    try:
        _, html, max_pages, memory_mb, seconds, nice = conn.recv()
    except EOFError:  # a spare whose server has gone: nothing to do
        return
    if nice:
        os.nice(int(nice))
    if memory_mb:
        limit = int(memory_mb) * _MB
        resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    # The server kills a worker at its time limit; should the server itself be gone, this CPU limit
    # (never reached first, as CPU time never runs ahead of the clock) still ends an orphan.
    cpu = int(seconds) + 10
    resource.setrlimit(resource.RLIMIT_CPU, (cpu, cpu + 5))
    answer: tuple
    document = body = None
    try:
        document = HTML(string=html, base_url=ASSET_ORIGIN + "/", url_fetcher=_AskParent(conn)).render()
        html = None
        pages = len(document.pages)
        if pages > max_pages:
            answer = ("pages", pages, _peak_kb())
        else:
            body = document.write_pdf()
            answer = ("pdf", body, pages, _peak_kb())
    except MemoryError:
        answer = ("memory",)
    except Exception as e:  # reported to the server, which logs it and refuses in words
        answer = ("error", f"{type(e).__name__}: {e}")
    document = html = None  # the layout's memory, before the answer needs any
    try:
        conn.send(answer)
    except MemoryError:
        body = answer = None
        conn.send(("memory",))
    conn.close()
