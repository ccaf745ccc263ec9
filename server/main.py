"""Starting the server: `headsheet serve` calls serve() here; local_addresses() lists where colleagues can reach it."""

from __future__ import annotations

import ipaddress
import logging
import re
import shutil
import socket
import subprocess
from pathlib import Path

LOOPBACK = ("127.0.0.1", "localhost", "::1")


def local_addresses() -> list[str]:
    """This computer's IPv4 network addresses (loopback and link-local left out), without sending anything.

    Reads the interface table (`ip -o -4 addr`); where that tool is missing, what the host name
    resolves to locally. Either way no packet leaves the machine.
    """
    found: list[str] = []
    ip = shutil.which("ip")
    if ip:
        try:
            out = subprocess.run([ip, "-o", "-4", "addr", "show"], capture_output=True, text=True, timeout=3).stdout
            found = re.findall(r"\binet (\d+\.\d+\.\d+\.\d+)/", out)
        except (OSError, subprocess.SubprocessError):
            found = []
    if not found:
        try:
            found = [a[4][0] for a in socket.getaddrinfo(socket.gethostname(), None, socket.AF_INET)]
        except OSError:
            found = []
    out: list[str] = []
    for text in found:
        try:
            address = ipaddress.ip_address(text)
        except ValueError:
            continue
        if address.is_loopback or address.is_link_local or address.is_unspecified or text in out:
            continue
        out.append(text)
    return out


def serve(data_dir: Path, host: str = "127.0.0.1", port: int = 8000, share: bool = False,
          key: str | None = None, host_names: list[str] | None = None, behind_proxy: bool = False) -> None:
    """Open (or create) the store in ``data_dir``, seed the demo sheets on first start, and serve until stopped.

    ``share`` listens on every network interface and requires the access key; so does any
    ``host`` other than this computer's own (loopback), since a server others can reach must
    never be open to them. ``key`` replaces the stored access key first.
    """
    import uvicorn

    from server.access import KeyFile
    from server.app import create_app

    data_dir = Path(data_dir).resolve()
    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    if share and host in LOOPBACK:
        host = "0.0.0.0"
    guarded = share or host not in LOOPBACK
    keys = KeyFile(data_dir)
    if key is not None:
        keys.write(key)
    addresses = local_addresses() if host in ("0.0.0.0", "::") else []
    names = list(host_names or []) + ([host] if host not in ("0.0.0.0", "::") else [])
    app = create_app(data_dir, share=guarded, addresses=addresses, host_names=names)
    print(f"Headsheet: sheets stored in {data_dir / 'headsheet.sqlite'}", flush=True)
    if not guarded:
        shown_host = f"[{host}]" if ":" in host else host
        print(f"Headsheet: open http://{shown_host}:{port}/ in a browser (Ctrl+C stops the server)", flush=True)
    elif host in ("0.0.0.0", "::"):
        print(f"Headsheet: shared on the network; open http://127.0.0.1:{port}/ on this computer, or on another:",
              flush=True)
        for a in addresses:
            print(f"Headsheet:   http://{a}:{port}/", flush=True)
        if not addresses:
            print("Headsheet:   (no network address found: other computers cannot reach this one yet)", flush=True)
    else:
        shown_host = f"[{host}]" if ":" in host else host
        print(f"Headsheet: shared at http://{shown_host}:{port}/ (Ctrl+C stops the server)", flush=True)
    if guarded:
        print(f"Headsheet: access key: {keys.read()}", flush=True)
        print(f"Headsheet: (kept in {keys.path}; `headsheet key --new` makes a new one, which takes effect "
              "at once and signs everyone out)", flush=True)
        print("Headsheet: a sheet's read-only links (on its page) let a reviewer view, print and sign it "
              "without the key.", flush=True)
    # Client addresses come from the connection: a forwarded-for header is anybody's to write, so it
    # is believed only when the user says a proxy is in front (behind_proxy).
    uvicorn.run(app, host=host, port=port, log_level="warning", proxy_headers=behind_proxy,
                forwarded_allow_ips="*" if behind_proxy else None)
