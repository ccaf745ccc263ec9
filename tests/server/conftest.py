"""Fixtures for the route tests: a real SQLite store in a temporary folder and the app over it, in-process."""

from __future__ import annotations

import json
import warnings
from html.parser import HTMLParser
from pathlib import Path

import pytest

with warnings.catch_warnings():
    warnings.simplefilter("ignore")  # starlette's note about httpx versions is not ours to fix
    from fastapi.testclient import TestClient

from server.app import EXAMPLES, create_app

HX = {"HX-Request": "true"}


def demo_files() -> list[Path]:
    return sorted(EXAMPLES.glob("*.json"))


@pytest.fixture
def data_dir(tmp_path: Path) -> Path:
    return tmp_path / "data"


@pytest.fixture
def app(data_dir: Path):
    return create_app(data_dir)


@pytest.fixture
def client(app):
    with TestClient(app) as c:
        yield c


@pytest.fixture
def largest_demo_id(client) -> int:
    """Id of the seeded demo with the most elements (the sheets are seeded in file-name order)."""
    sizes = [len(json.loads(p.read_text())["elements"]) for p in demo_files()]
    return sizes.index(max(sizes)) + 1


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


@pytest.fixture
def sheet_form(client):
    """The fields a browser would post from a sheet page, read from the page itself."""

    def read(sheet_id: int) -> dict[str, str]:
        response = client.get(f"/sheets/{sheet_id}")
        assert response.status_code == 200
        return form_fields(response.text)

    return read
