"""`serve()`, as `headsheet serve` calls it: starts on loopback, prints the address, seeds the demos once."""

from __future__ import annotations

import json
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

from servertools import demo_files

ROOT = Path(__file__).resolve().parents[2]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _start(data: Path, port: int) -> subprocess.Popen:
    code = f"from server.main import serve; serve({str(data)!r}, port={port})"
    return subprocess.Popen([sys.executable, "-c", code], cwd=ROOT, stdout=subprocess.PIPE, text=True)


def _get_json(url: str, deadline: float):
    while True:
        try:
            with urllib.request.urlopen(url, timeout=2) as response:
                return json.loads(response.read())
        except OSError:
            if time.monotonic() > deadline:
                raise
            time.sleep(0.1)


def test_serve_prints_the_address_and_seeds_the_demos_once(tmp_path):
    data = tmp_path / "data"
    for start in range(2):
        port = _free_port()
        server = _start(data, port)
        try:
            lines = [server.stdout.readline() for _ in range(2)]
            assert f"http://127.0.0.1:{port}/" in "".join(lines)
            assert str(data.resolve()) in "".join(lines)
            sheets = _get_json(f"http://127.0.0.1:{port}/api/sheets", time.monotonic() + 30)["sheets"]
            # The second start finds the store and adds nothing.
            assert len(sheets) == len(demo_files())
        finally:
            server.terminate()
            server.wait(timeout=10)
            server.stdout.close()
    assert (data / "headsheet.sqlite").is_file()
