"""Starting the server: `headsheet serve` calls serve() here."""

from __future__ import annotations

import logging
from pathlib import Path

import uvicorn

from server.app import create_app


def serve(data_dir: Path, host: str = "127.0.0.1", port: int = 8000) -> None:
    """Open (or create) the store in ``data_dir``, seed the demo sheets on first start, and serve until stopped."""
    data_dir = Path(data_dir).resolve()
    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    app = create_app(data_dir)
    shown_host = f"[{host}]" if ":" in host else host
    print(f"Headsheet: sheets stored in {data_dir / 'headsheet.sqlite'}", flush=True)
    print(f"Headsheet: open http://{shown_host}:{port}/ in a browser (Ctrl+C stops the server)", flush=True)
    if host not in ("127.0.0.1", "localhost", "::1"):
        print("Headsheet: WARNING: listening beyond this computer; anyone on the network can edit the sheets.",
              flush=True)
    uvicorn.run(app, host=host, port=port, log_level="warning")
