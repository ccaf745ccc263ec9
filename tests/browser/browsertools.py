"""Helpers for the browser tests: finding Chromium, a live server on a free loopback port, and screenshots."""

from __future__ import annotations

import os
import shutil
import socket
import threading
import time
from pathlib import Path

import uvicorn

from server.app import create_app

SHOTS = Path(os.environ.get("HEADSHEET_SHOTS", "/tmp/shots"))
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--no-first-run"]


def chromium_path() -> str:
    path = os.environ.get("HEADSHEET_CHROMIUM") or shutil.which("chromium") or shutil.which("chromium-browser")
    if not path:
        raise RuntimeError("No Chromium found: install Debian's chromium or set HEADSHEET_CHROMIUM to its path")
    return path


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class LiveServer:
    def __init__(self, data_dir: Path, share: bool = False):
        self.port = _free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.app = create_app(data_dir, share=share)
        config = uvicorn.Config(self.app, host="127.0.0.1", port=self.port, log_level="warning")
        self.server = uvicorn.Server(config)
        self.thread = threading.Thread(target=self.server.run, daemon=True)

    def __enter__(self):
        self.thread.start()
        deadline = time.monotonic() + 20
        while not self.server.started:
            if time.monotonic() > deadline or not self.thread.is_alive():
                raise RuntimeError("the test server did not start")
            time.sleep(0.02)
        return self

    def __exit__(self, *exc):
        self.server.should_exit = True
        self.thread.join(timeout=10)


def shot(page, name: str) -> None:
    SHOTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(SHOTS / f"{name}.png"), full_page=True)
