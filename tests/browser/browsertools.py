"""Helpers for the browser tests: finding Chromium, a live server on a free loopback port, and screenshots."""

from __future__ import annotations

import os
import shutil
import sys
from pathlib import Path

from server.app import create_app

# The live server is the route tests' own; browser tests may run without them on the path.
sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "server"))
import servertools  # noqa: E402

SHOTS = Path(os.environ.get("HEADSHEET_SHOTS", "/tmp/shots"))
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--no-first-run"]


def chromium_path() -> str:
    path = os.environ.get("HEADSHEET_CHROMIUM") or shutil.which("chromium") or shutil.which("chromium-browser")
    if not path:
        raise RuntimeError("No Chromium found: install Debian's chromium or set HEADSHEET_CHROMIUM to its path")
    return path


class LiveServer(servertools.LiveServer):
    """A fresh app over ``data_dir`` served on a free loopback port (see servertools.LiveServer)."""

    def __init__(self, data_dir: Path, share: bool = False):
        self.app = create_app(data_dir, share=share)
        super().__init__(self.app)


def shot(page, name: str) -> None:
    SHOTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(SHOTS / f"{name}.png"), full_page=True)
