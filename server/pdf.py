"""The record as PDF: WeasyPrint over the record page, fetching nothing but the program's own static files."""

from __future__ import annotations

import logging
import mimetypes
from functools import lru_cache
from pathlib import Path
from urllib.parse import unquote, urlsplit

from weasyprint import HTML
from weasyprint.urls import URLFetcher, URLFetcherResponse

log = logging.getLogger("headsheet.pdf")

#: The made-up origin the PDF's asset links are written against. The .invalid top-level domain is
#: reserved (RFC 2606) and never resolves, and the fetcher below never opens a connection anyway.
ASSET_ORIGIN = "https://headsheet.invalid"
#: Files the PDF may load from the static folder: stylesheets, fonts and images, nothing else.
ALLOWED_SUFFIXES = {".css", ".woff", ".woff2", ".ttf", ".otf", ".svg", ".png", ".jpg", ".jpeg"}
PAPERS = {"a4": "A4", "letter": "letter"}


class FetchRefused(ValueError):
    """A URL the PDF renderer asked for that is not one of the program's own static files."""


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


def render_pdf(html: str, static_dir: Path, fetcher: StaticFetcher | None = None) -> bytes:
    """The PDF of a record page written with asset links under ASSET_ORIGIN.

    The same page always gives the same PDF, and a reviewer tends to download a record more than
    once (A4, then Letter, then again to print), so recent PDFs are kept by their page text: a
    repeat costs nothing instead of a second or more of layout.
    """
    if fetcher is not None:
        return HTML(string=html, base_url=ASSET_ORIGIN + "/", url_fetcher=fetcher).write_pdf()
    return _render_cached(html, str(static_dir))


@lru_cache(maxsize=16)
def _render_cached(html: str, static_dir: str) -> bytes:
    return HTML(string=html, base_url=ASSET_ORIGIN + "/", url_fetcher=StaticFetcher(Path(static_dir))).write_pdf()
