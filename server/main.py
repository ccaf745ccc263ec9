"""Starting the server: `headsheet serve` calls serve() here; local_addresses() lists where colleagues can reach it,
check_certificate() the files it serves HTTPS with."""

from __future__ import annotations

import ipaddress
import logging
import multiprocessing
import os
import re
import shutil
import socket
import ssl
import subprocess
import tempfile
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from server import lanes

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


class ServeRefused(Exception):
    """A reason not to start, in words for the command line (a certificate that cannot be used)."""


def check_certificate(certfile: str | Path | None, keyfile: str | Path | None) -> tuple[str, str] | None:
    """The certificate and key files to serve HTTPS with (absolute paths), or None for plain HTTP.

    Refuses (ServeRefused) one without the other, a file that cannot be read, and a pair a TLS
    server cannot use: not PEM, a key that is not the certificate's own, a key behind a passphrase.
    """
    if certfile is None and keyfile is None:
        return None
    if certfile is None or keyfile is None:
        given, missing = ("--certfile", "--keyfile") if certfile is not None else ("--keyfile", "--certfile")
        raise ServeRefused(f"{given} was given without {missing}: HTTPS needs both the certificate and its "
                           "private key")
    for what, path in (("certificate", certfile), ("private key", keyfile)):
        try:
            Path(path).read_bytes()
        except OSError as exc:
            raise ServeRefused(f"cannot read the {what} file {path}: {exc.strerror or exc}") from None
    context = ssl.SSLContext(ssl.PROTOCOL_TLS_SERVER)
    asked: list[bool] = []

    def no_passphrase() -> bytes:  # never a prompt on the server's terminal
        asked.append(True)
        return b""

    try:
        context.load_cert_chain(str(certfile), str(keyfile), password=no_passphrase)
    except (ssl.SSLError, OSError, ValueError) as exc:
        if asked:
            raise ServeRefused(f"the private key {keyfile} is protected by a passphrase; give the key without one "
                               "(readable by this user only)") from None
        reason = getattr(exc, "reason", None) or str(exc)
        if reason == "KEY_VALUES_MISMATCH":
            raise ServeRefused(f"the private key {keyfile} is not the key of the certificate {certfile}") from None
        raise ServeRefused(f"{certfile} and {keyfile} are not a PEM certificate and its PEM private key "
                           f"({reason})") from None
    return str(Path(certfile).resolve()), str(Path(keyfile).resolve())


@dataclass
class Plan:
    """What serve() starts: the app, where it listens, what it prints, and uvicorn's other options."""

    app: Any
    host: str
    port: int
    lines: list[str]
    options: dict = field(default_factory=dict)
    lane: Any = None  # Lane: the process for the costly requests, when there is one


def plan(data_dir: Path, host: str = "127.0.0.1", port: int = 8000, share: bool = False,
         key: str | None = None, host_names: list[str] | None = None, behind_proxy: bool = False,
         certfile: str | Path | None = None, keyfile: str | Path | None = None, work_lane: bool = False) -> Plan:
    """Everything serve() does before it listens (see serve): ServeRefused if the certificate cannot be used.

    With ``work_lane`` the plan carries a work lane (server/lanes.py), not started yet."""
    from server.access import KeyFile
    from server.app import create_app

    tls = check_certificate(certfile, keyfile)  # first: a refusal changes nothing
    data_dir = Path(data_dir).resolve()
    if share and host in LOOPBACK:
        host = "0.0.0.0"
    guarded = share or host not in LOOPBACK
    keys = KeyFile(data_dir)
    if key is not None:
        keys.write(key)
    addresses = local_addresses() if host in ("0.0.0.0", "::") else []
    names = list(host_names or []) + ([host] if host not in ("0.0.0.0", "::") else [])
    lane = Lane(data_dir, guarded, addresses, names) if work_lane else None
    app = create_app(data_dir, share=guarded, addresses=addresses, host_names=names,
                     work_lane=lane.socket_path if lane else None)
    scheme = "https" if tls else "http"
    shown_host = f"[{host}]" if ":" in host else host
    lines = [f"sheets stored in {data_dir / 'headsheet.sqlite'}"]
    if not guarded:
        lines.append(f"open {scheme}://{shown_host}:{port}/ in a browser (Ctrl+C stops the server)")
    elif host in ("0.0.0.0", "::"):
        lines.append(f"shared on the network; open {scheme}://127.0.0.1:{port}/ on this computer, or on another:")
        lines += [f"  {scheme}://{a}:{port}/" for a in addresses]
        if not addresses:
            lines.append("  (no network address found: other computers cannot reach this one yet)")
    else:
        lines.append(f"shared at {scheme}://{shown_host}:{port}/ (Ctrl+C stops the server)")
    if tls:
        lines.append(f"HTTPS with the certificate {tls[0]}")
    if guarded:
        lines.append(f"access key: {keys.read()}")
        lines.append(f"(kept in {keys.path}; `headsheet key --new` makes a new one, which takes effect "
                     "at once and signs everyone out)")
        lines.append("a sheet's read-only links (on its page) let a reviewer view, print and sign it "
                     "without the key.")
        if not tls and not behind_proxy:
            lines.append("the key and the sign-in cookies cross the network in clear: serve HTTPS with "
                         "--certfile and --keyfile to protect them")
    # Client addresses come from the connection: a forwarded-for header is anybody's to write, so it
    # is believed only when the user says a proxy is in front (behind_proxy).
    options: dict = {"log_level": "warning", "proxy_headers": behind_proxy,
                     "forwarded_allow_ips": "*" if behind_proxy else None}
    if tls:
        options.update(ssl_certfile=tls[0], ssl_keyfile=tls[1])
    return Plan(app, host, port, lines, options, lane)


def serve(data_dir: Path, host: str = "127.0.0.1", port: int = 8000, share: bool = False,
          key: str | None = None, host_names: list[str] | None = None, behind_proxy: bool = False,
          certfile: str | Path | None = None, keyfile: str | Path | None = None) -> None:
    """Open (or create) the store in ``data_dir``, seed the demo sheets on first start, and serve until stopped.

    ``share`` listens on every network interface and requires the access key; so does any
    ``host`` other than this computer's own (loopback), since a server others can reach must
    never be open to them. ``key`` replaces the stored access key first. With ``certfile`` and
    ``keyfile`` (PEM, both or neither) it serves HTTPS, and its cookies are marked Secure;
    ServeRefused says why a certificate cannot be used, before anything is started or changed.
    The costly requests are answered by a work lane, a second process over the same store
    (server/lanes.py), so that no one request for a very large sheet holds up everyone else.
    """
    import uvicorn

    logging.basicConfig(level=logging.INFO, format="%(levelname)s %(name)s: %(message)s")
    for noisy in ("weasyprint", "httpx"):  # their progress lines say nothing to a user
        logging.getLogger(noisy).setLevel(logging.WARNING)
    started = plan(data_dir, host, port, share, key, host_names, behind_proxy, certfile, keyfile, work_lane=True)
    for line in started.lines:
        print(f"Headsheet: {line}", flush=True)
    started.lane.start()
    try:
        uvicorn.run(started.app, host=started.host, port=started.port, **started.options)
    finally:
        started.lane.stop()


# -- the work lane's process (server/lanes.py says what it answers) --------------------------------

def _end_with(parent: int) -> None:
    """Stop this process when the front is gone (even killed outright), so no lane is left behind."""
    while os.getppid() == parent:
        time.sleep(1.0)
    os._exit(0)


def _lane_main(socket_path: str, data_dir: str, share: bool, addresses: list[str], host_names: list[str],
               parent: int) -> None:
    """The lane process: the same application on the same store, on the Unix socket, niced."""
    import threading

    import uvicorn

    from server.app import create_app

    threading.Thread(target=_end_with, args=(parent,), daemon=True).start()
    os.nice(lanes.LANE_NICE)
    logging.basicConfig(level=logging.WARNING, format="%(levelname)s %(name)s (work lane): %(message)s")
    app = create_app(Path(data_dir), share=share, addresses=addresses, host_names=host_names, lane=True)
    uvicorn.run(app, uds=socket_path, log_level="warning")


class Lane:
    """The lane process as the front sees it: start, wait until it answers, stop."""

    def __init__(self, data_dir: Path, share: bool, addresses: list[str], host_names: list[str]):
        self.folder = tempfile.mkdtemp(prefix="headsheet-lane-")  # 0700: only this user reaches the socket
        self.socket_path = os.path.join(self.folder, "lane.sock")
        context = multiprocessing.get_context("spawn")  # a fresh interpreter, not a copy of this one
        # Not a daemon: the lane starts PDF workers of its own, which a daemon may not. It ends with
        # stop(), or by itself when the front is gone (_end_with).
        self.process = context.Process(target=_lane_main, name="headsheet-work-lane",
                                       args=(self.socket_path, str(data_dir), share, list(addresses),
                                             list(host_names), os.getpid()))

    def start(self) -> Lane:
        self.process.start()
        deadline = time.monotonic() + lanes.LANE_START_S
        while not os.path.exists(self.socket_path):
            if not self.process.is_alive() or time.monotonic() > deadline:
                raise RuntimeError("the work lane did not start")
            time.sleep(0.05)
        return self

    def stop(self) -> None:
        if self.process.is_alive():
            self.process.terminate()
            self.process.join(10)
            if self.process.is_alive():
                self.process.kill()
        shutil.rmtree(self.folder, ignore_errors=True)
