"""Fixtures for the browser tests: Debian's Chromium through Playwright, and a real server on a free loopback port."""

from __future__ import annotations

import pytest
from browsertools import CHROMIUM_ARGS, LiveServer, chromium_path
from playwright.sync_api import sync_playwright

# Not test modules: kept out of --doctest-modules, which would import two files named conftest.
collect_ignore = ["conftest.py", "browsertools.py"]


@pytest.fixture(scope="session")
def browser():
    with sync_playwright() as p:
        browser = p.chromium.launch(executable_path=chromium_path(), args=CHROMIUM_ARGS)
        print(f"\nbrowser: Chromium {browser.version} at {chromium_path()}")
        yield browser
        browser.close()


@pytest.fixture
def live(tmp_path):
    with LiveServer(tmp_path / "data") as server:
        yield server


@pytest.fixture
def page(browser, live):
    context = browser.new_context(viewport={"width": 1400, "height": 1000})
    page = context.new_page()
    page.console_errors = []
    # Chromium logs every 4xx as a console error; 409 and 422 are the sheet's answers, not faults.
    expected = ("status of 409", "status of 422")
    page.on("console", lambda m: m.type == "error" and not any(e in m.text for e in expected)
            and page.console_errors.append(m.text))
    page.on("pageerror", lambda e: page.console_errors.append(str(e)))
    page.set_default_timeout(10_000)
    yield page
    context.close()
