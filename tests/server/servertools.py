"""Helpers for the route tests: the htmx request header, the demo files, and reading a form as a browser posts it."""

from __future__ import annotations

from html.parser import HTMLParser
from pathlib import Path

from server.app import EXAMPLES

HX = {"HX-Request": "true"}


def demo_files() -> list[Path]:
    return sorted(EXAMPLES.glob("*.json"))


class _FormReader(HTMLParser):
    """Reads the named controls of a page the way a browser would submit them (no submit buttons)."""

    def __init__(self):
        super().__init__()
        self.fields: dict[str, str] = {}
        self._select: str | None = None
        self._textarea: str | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        name = a.get("name")
        if tag == "input" and name and a.get("type", "text") in ("text", "hidden"):
            self.fields[name] = a.get("value") or ""
        elif tag == "select" and name:
            self._select = name
        elif tag == "option" and self._select:
            if "selected" in a or self._select not in self.fields:
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
    reader = _FormReader()
    reader.feed(html)
    return reader.fields
