"""Fixtures for the route tests: a real SQLite store in a temporary folder and the app over it, in-process."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from servertools import FIGURES, BrowserClient, cheap_hashes, form_fields

# The in-process test client sends Host: testserver; a user adds such a name with --host-name, and
# the tests do the same through the environment the server reads (see test_hardening for refusals).
os.environ.setdefault("HEADSHEET_HOST_NAMES", "testserver")

from server.app import create_app

# Not test modules: kept out of --doctest-modules, which would import two files named conftest.
collect_ignore = ["conftest.py", "servertools.py"]


@pytest.fixture(autouse=True)
def _cheap_hashes(monkeypatch):
    cheap_hashes(monkeypatch)


@pytest.fixture
def data_dir(tmp_path: Path) -> Path:
    return tmp_path / "data"


@pytest.fixture
def app(data_dir: Path):
    return create_app(data_dir)


@pytest.fixture
def client(app):
    with BrowserClient(app) as c:
        yield c


@pytest.fixture
def sheet_form(client):
    """The fields a browser would post from a sheet page, read from the page itself."""

    def read(sheet_id: int) -> dict[str, str]:
        response = client.get(f"/sheets/{sheet_id}")
        assert response.status_code == 200
        return form_fields(response.text)

    return read


def pytest_terminal_summary(terminalreporter):
    """Print the figures the robustness tests gathered (inputs tried, edits sent, kills, edits lost)."""
    if FIGURES:
        terminalreporter.write_sep("-", "Headsheet robustness figures")
        for name, value in sorted(FIGURES.items()):
            terminalreporter.write_line(f"{name}: {value}")
