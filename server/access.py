"""Who may use a shared server: the access key, signed cookie values, form tokens and a mild limit on wrong keys."""

from __future__ import annotations

import hashlib
import hmac
import os
import secrets
import threading
import time
from collections import OrderedDict, deque
from dataclasses import dataclass, field
from pathlib import Path

KEY_FILE = "access-key.txt"
#: Letters and digits that cannot be misread for one another on a screen or a note (no i, l, o, 0, 1).
KEY_ALPHABET = "abcdefghjkmnpqrstuvwxyz23456789"
KEY_GROUPS = 4  # four groups of four: 31**16, about 79 bits, far beyond guessing at a few tries a minute
MIN_KEY = 8
MAX_KEY = 200


class BadKey(ValueError):
    """A key the user chose that cannot be used (too short, too long)."""


def new_key() -> str:
    """A random access key such as ``'k7dq-m3xp-2hwa-9rtc'``, easy to read out and type."""
    return "-".join("".join(secrets.choice(KEY_ALPHABET) for _ in range(4)) for _ in range(KEY_GROUPS))


def normalise_key(text: str) -> str:
    """A typed key compared as the same key whatever its case, spaces and dashes.

    >>> normalise_key(" K7DQ-m3xp 2hwa-9rtc ")
    'k7dqm3xp2hwa9rtc'
    """
    return "".join(c for c in text.casefold() if not c.isspace() and c != "-")


def check_new_key(text: str) -> str:
    """A key chosen by the user, trimmed; BadKey says why it cannot be used."""
    key = text.strip()
    if len(normalise_key(key)) < MIN_KEY:
        raise BadKey(f"an access key needs at least {MIN_KEY} letters or digits (dashes and spaces do not count)")
    if len(key) > MAX_KEY:
        raise BadKey(f"an access key may be at most {MAX_KEY} characters")
    if any(ord(c) < 32 for c in key):
        raise BadKey("an access key cannot hold control characters")
    return key


class KeyFile:
    """The access key in the data folder; re-read when the file changes, so a new key takes effect at once."""

    def __init__(self, data_dir: Path):
        self.path = Path(data_dir) / KEY_FILE
        self._seen: tuple | None = None
        self._key: str | None = None
        self._lock = threading.Lock()

    def read(self) -> str | None:
        try:
            st = self.path.stat()
        except FileNotFoundError:
            return None
        stamp = (st.st_mtime_ns, st.st_size, st.st_ino)
        with self._lock:
            if stamp != self._seen:
                text = self.path.read_text(encoding="utf-8").strip()
                self._key, self._seen = (text or None), stamp
            return self._key

    def write(self, key: str) -> str:
        """Store ``key`` (readable by this user only), replacing the file in one step."""
        key = check_new_key(key)
        self.path.parent.mkdir(parents=True, exist_ok=True)
        tmp = self.path.with_name(f".{self.path.name}.{os.getpid()}.tmp")
        fd = os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
        with os.fdopen(fd, "w", encoding="utf-8") as f:
            f.write(key + "\n")
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, self.path)
        return key

    def ensure(self) -> str:
        """The stored key, or a new one stored now."""
        return self.read() or self.write(new_key())


class Signer:
    """HMAC-SHA256 signatures with the store's secret, for cookie values the server must recognise as its own."""

    def __init__(self, secret: bytes):
        self._secret = secret

    def _mac(self, purpose: str, *parts: str) -> str:
        message = "\x00".join((purpose, *parts)).encode("utf-8")
        return hmac.new(self._secret, message, hashlib.sha256).hexdigest()[:40]

    def token(self, purpose: str, *bound: str) -> str:
        """A fresh ``nonce.signature`` value; ``bound`` strings (e.g. the key) are signed in but not shown."""
        nonce = secrets.token_urlsafe(18)
        return f"{nonce}.{self._mac(purpose, nonce, *bound)}"

    def valid(self, purpose: str, value: str | None, *bound: str) -> bool:
        if not value or value.count(".") != 1 or len(value) > 200:
            return False
        nonce, mac = value.split(".")
        return hmac.compare_digest(mac, self._mac(purpose, nonce, *bound))

    def timed_token(self, purpose: str, *bound: str, now: float | None = None) -> str:
        """A token that also signs the time it was made (``issued-nonce.signature``), for a cookie
        whose age the server checks itself rather than trusting the browser to drop it."""
        issued = int(time.time() if now is None else now)
        nonce = f"{issued}-{secrets.token_urlsafe(12)}"
        return f"{nonce}.{self._mac(purpose, nonce, *bound)}"

    def valid_timed(self, purpose: str, value: str | None, max_age: float, *bound: str,
                    now: float | None = None) -> bool:
        """Whether ``value`` is this server's timed token for ``purpose`` and no older than ``max_age`` s."""
        if not self.valid(purpose, value, *bound):
            return False
        issued = value.split("-", 1)[0]
        if not issued.isdigit():
            return False
        age = (time.time() if now is None else now) - int(issued)
        return -60.0 <= age <= max_age


def same_key(typed: str, key: str) -> bool:
    """Whether a typed key is the access key, compared in constant time."""
    return hmac.compare_digest(normalise_key(typed).encode("utf-8"), normalise_key(key).encode("utf-8"))


class Attempts:
    """Wrong keys per client address: after ``limit`` in ``window`` seconds, that address waits.

    Mild on purpose: a colleague who mistypes a few times is not locked out for long, while
    guessing a 79-bit key at ``limit`` tries a minute is hopeless.
    """

    def __init__(self, limit: int = 5, window: float = 60.0, clients: int = 10_000):
        self.limit, self.window, self.clients = limit, window, clients
        self._failures: OrderedDict[str, deque] = OrderedDict()
        self._lock = threading.Lock()

    def wait(self, client: str, now: float | None = None) -> float:
        """Seconds ``client`` must wait before its next try (0 if it may try now)."""
        now = time.monotonic() if now is None else now
        with self._lock:
            times = self._failures.get(client)
            if not times:
                return 0.0
            while times and now - times[0] > self.window:
                times.popleft()
            if len(times) < self.limit:
                return 0.0
            return max(0.0, self.window - (now - times[0]))

    def failed(self, client: str, now: float | None = None) -> None:
        now = time.monotonic() if now is None else now
        with self._lock:
            times = self._failures.pop(client, None) or deque(maxlen=self.limit)
            times.append(now)
            self._failures[client] = times
            while len(self._failures) > self.clients:
                self._failures.popitem(last=False)

    def succeeded(self, client: str) -> None:
        with self._lock:
            self._failures.pop(client, None)


@dataclass
class Sharing:
    """How a server is shared: whether the key is needed, where it is kept, and the signer of its cookies."""

    keys: KeyFile
    signer: Signer
    share: bool = False  # True: every request needs the access key (or a read-only link)
    attempts: Attempts = field(default_factory=Attempts)

    def key(self) -> str | None:
        return self.keys.read() if self.share else None
