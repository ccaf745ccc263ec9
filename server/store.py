"""The sheet store: one SQLite file holding sheets and an append-only table of their revisions."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import secrets
import sqlite3
import threading
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Iterator

# Account is re-exported: the account rows live in their own module.
from server import revisions
from server.store_accounts import _ACCOUNTS_SCHEMA, Account, AccountRows  # noqa: F401

DB_NAME = "headsheet.sqlite"
SCHEMA_VERSION = 2  # 2: accounts, identified signatures, links for a named reviewer

# Revisions are the record of the engineering work, so the database itself refuses to
# rewrite or delete them; only `frozen` may change, and only from 0 to 1 (for sign-off).
_SCHEMA = """
CREATE TABLE IF NOT EXISTS meta (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
CREATE TABLE IF NOT EXISTS sheets (
    id          INTEGER PRIMARY KEY AUTOINCREMENT,
    created     TEXT NOT NULL,
    archived    INTEGER NOT NULL DEFAULT 0,
    archived_at TEXT
);
CREATE TABLE IF NOT EXISTS revisions (
    sheet_id  INTEGER NOT NULL REFERENCES sheets(id),
    number    INTEGER NOT NULL,
    document  TEXT NOT NULL,
    digest    TEXT NOT NULL,
    created   TEXT NOT NULL,
    author    TEXT NOT NULL DEFAULT '',
    note      TEXT NOT NULL DEFAULT '',
    base      INTEGER,
    frozen    INTEGER NOT NULL DEFAULT 0,
    PRIMARY KEY (sheet_id, number)
);
CREATE TRIGGER IF NOT EXISTS revisions_append_only
BEFORE UPDATE OF sheet_id, number, document, digest, created, author, note, base ON revisions
BEGIN SELECT RAISE(ABORT, 'revisions are append-only'); END;
CREATE TRIGGER IF NOT EXISTS revisions_stay_frozen
BEFORE UPDATE OF frozen ON revisions WHEN NEW.frozen < OLD.frozen
BEGIN SELECT RAISE(ABORT, 'a frozen revision stays frozen'); END;
CREATE TRIGGER IF NOT EXISTS revisions_never_deleted
BEFORE DELETE ON revisions
BEGIN SELECT RAISE(ABORT, 'revisions are never deleted'); END;
CREATE TRIGGER IF NOT EXISTS sheets_never_deleted
BEFORE DELETE ON sheets
BEGIN SELECT RAISE(ABORT, 'sheets are archived, never deleted'); END;
"""


def dump_document(document: Any) -> str:
    """The one serialisation of a sheet document: key order kept, compact, UTF-8, no NaN."""
    return json.dumps(document, ensure_ascii=False, separators=(",", ":"), allow_nan=False)


def digest_of(text: str) -> str:
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def _now() -> str:
    return datetime.now(timezone.utc).isoformat(timespec="milliseconds")


@dataclass(frozen=True)
class Revision:
    """One stored state of a sheet."""

    sheet_id: int
    number: int
    document_json: str
    digest: str
    created: str
    author: str
    note: str
    base: int | None
    frozen: bool
    joins: bool = False  # continues the revision of the save before it (server.revisions); read for exports

    @property
    def document(self) -> dict:
        return json.loads(self.document_json)


@dataclass(frozen=True)
class SheetSummary:
    """A row of the sheet list: the sheet and facts from its latest revision."""

    id: int
    created: str
    archived: bool
    revision: int
    changed: str
    title: str
    calc_number: str
    project: str


class StoreError(Exception):
    """Base class of the store's refusals."""


class SheetNotFound(StoreError, LookupError):
    def __init__(self, sheet_id: int, number: int | None = None):
        self.sheet_id = sheet_id
        self.number = number
        what = f"sheet {sheet_id}" if number is None else f"revision {number} of sheet {sheet_id}"
        super().__init__(f"There is no {what}.")


class StaleRevision(StoreError):
    """An edit based on a revision that is no longer the latest: refused, never merged."""

    def __init__(self, sheet_id: int, base: int | None, current: Revision):
        self.sheet_id = sheet_id
        self.base = base
        self.current = current
        super().__init__(
            f"Sheet {sheet_id} was changed after revision {base}: it is now at revision {current.number}. "
            "The edit was not saved; reload the sheet and make the change again."
        )


_REVISION_COLUMNS = "sheet_id, number, document, digest, created, author, note, base, frozen"


def _revision(row: sqlite3.Row | tuple) -> Revision:
    sheet_id, number, document, digest, created, author, note, base, frozen = row
    return Revision(sheet_id, number, document, digest, created, author, note, base, bool(frozen))


def _valid_id(sheet_id: int, number: int | None = None) -> None:
    """Ids beyond SQLite's integer range cannot exist; say so rather than let the driver overflow."""
    for value in (sheet_id, number):
        if value is not None and not 0 < value < 2**63:
            raise SheetNotFound(sheet_id, number)


def _text(value: Any) -> str:
    return value if isinstance(value, str) else ""


class Store(AccountRows):
    """All SQL of the program. Each thread keeps one connection, so the WAL is not checkpointed on every call."""

    def __init__(self, data_dir: Path):
        self.data_dir = Path(data_dir)
        self.data_dir.mkdir(parents=True, exist_ok=True)
        # Every sheet and the cookie-signing secret live here: this user only (a folder others
        # cannot enter protects the WAL and journal files SQLite makes with the process umask).
        os.chmod(self.data_dir, 0o700)
        self.path = self.data_dir / DB_NAME
        self._local = threading.local()
        self._opened: list[sqlite3.Connection] = []
        self._lock = threading.Lock()
        with self._connect() as con:
            # WAL lets readers carry on during a write; it is a property of the file, so set once.
            con.execute("PRAGMA journal_mode=WAL")
            con.executescript(_SCHEMA)
            con.executescript(_SIGNOFF_SCHEMA)  # sign-off block, end of file
            con.executescript(_SHARING_SCHEMA)  # read-only links, below the sign-off block
            con.executescript(_ACCOUNTS_SCHEMA)  # accounts and trusted installations, at the end
            _add_columns(con)
            con.execute(f"PRAGMA user_version={SCHEMA_VERSION}")
        os.chmod(self.path, 0o600)

    @contextmanager
    def _connect(self) -> Iterator[sqlite3.Connection]:
        # Closing the last connection to a WAL database checkpoints it (a few ms of syncing), so
        # connections are kept per thread rather than opened for each call.
        con = getattr(self._local, "con", None)
        if con is None:
            con = sqlite3.connect(self.path, timeout=10, isolation_level=None, check_same_thread=False)
            con.execute("PRAGMA synchronous=FULL")  # a saved revision survives a power cut
            con.execute("PRAGMA busy_timeout=10000")
            con.execute("PRAGMA foreign_keys=ON")
            self._local.con = con
            with self._lock:
                self._opened.append(con)
        yield con

    def close(self) -> None:
        """Close every connection this store opened (the file stays consistent either way)."""
        with self._lock:
            opened, self._opened = self._opened, []
        self._local = threading.local()
        for con in opened:
            try:
                con.close()
            except sqlite3.Error:
                pass

    @contextmanager
    def _write(self) -> Iterator[sqlite3.Connection]:
        """A write transaction that takes the lock at once, so a busy database waits instead of failing midway."""
        with self._connect() as con:
            con.execute("BEGIN IMMEDIATE")
            try:
                yield con
            except BaseException:
                con.execute("ROLLBACK")
                raise
            con.execute("COMMIT")

    # -- reading ---------------------------------------------------------------------------

    _SUMMARY_SQL = """
        SELECT s.id, s.created, s.archived, r.number, r.created,
               json_extract(r.document, '$.header.title'),
               json_extract(r.document, '$.header.calc_number'),
               json_extract(r.document, '$.header.project')
        FROM sheets s
        JOIN revisions r ON r.sheet_id = s.id
         AND r.number = (SELECT MAX(number) FROM revisions WHERE sheet_id = s.id)
    """

    def _summaries(self, where: str, params: tuple) -> list[SheetSummary]:
        with self._connect() as con:
            rows = con.execute(f"{self._SUMMARY_SQL} WHERE {where} ORDER BY r.rowid DESC", params).fetchall()
        return [
            SheetSummary(id_, created, bool(arch), number, changed, _text(title), _text(calc), _text(project))
            for id_, created, arch, number, changed, title, calc, project in rows
        ]

    def list_sheets(self, archived: bool = False) -> list[SheetSummary]:
        """Sheets, most recently changed first; archived ones only when asked for."""
        return self._summaries("s.archived = ?", (1 if archived else 0,))

    def sheet(self, sheet_id: int) -> SheetSummary:
        _valid_id(sheet_id)
        found = self._summaries("s.id = ?", (sheet_id,))
        if not found:
            raise SheetNotFound(sheet_id)
        return found[0]

    def document_size(self, sheet_id: int, number: int | None = None) -> int:
        """The stored document's size in bytes: revision ``number``, or the latest; 0 when there is none."""
        if sheet_id < 1 or sheet_id > 2**62 or (number is not None and (number < 1 or number > 2**62)):
            return 0
        with self._connect() as con:
            if number is None:
                row = con.execute("SELECT length(CAST(document AS BLOB)) FROM revisions WHERE sheet_id = ? "
                                  "ORDER BY number DESC LIMIT 1", (sheet_id,)).fetchone()
            else:
                row = con.execute("SELECT length(CAST(document AS BLOB)) FROM revisions WHERE sheet_id = ? AND number = ?",
                                  (sheet_id, number)).fetchone()
        return int(row[0] or 0) if row else 0

    def latest(self, sheet_id: int) -> Revision:
        _valid_id(sheet_id)
        with self._connect() as con:
            row = con.execute(
                f"SELECT {_REVISION_COLUMNS} FROM revisions WHERE sheet_id = ? ORDER BY number DESC LIMIT 1",
                (sheet_id,),
            ).fetchone()
        if row is None:
            raise SheetNotFound(sheet_id)
        return _revision(row)

    def revision(self, sheet_id: int, number: int) -> Revision:
        _valid_id(sheet_id, number)
        with self._connect() as con:
            row = con.execute(
                f"SELECT {_REVISION_COLUMNS} FROM revisions WHERE sheet_id = ? AND number = ?",
                (sheet_id, number),
            ).fetchone()
        if row is None:
            raise SheetNotFound(sheet_id, number)
        return _revision(row)

    def revisions(self, sheet_id: int) -> list[Revision]:
        """Every revision of a sheet, newest first."""
        _valid_id(sheet_id)
        with self._connect() as con:
            rows = con.execute(
                f"SELECT {_REVISION_COLUMNS} FROM revisions WHERE sheet_id = ? ORDER BY number DESC",
                (sheet_id,),
            ).fetchall()
        if not rows:
            raise SheetNotFound(sheet_id)
        return [_revision(r) for r in rows]

    def marks(self, sheet_id: int) -> list[revisions.Mark]:
        """What the history needs of every save of a sheet, oldest first, without the documents."""
        _valid_id(sheet_id)
        with self._connect() as con:
            rows = con.execute("SELECT number, created, author, note, frozen, joins FROM revisions "
                               "WHERE sheet_id = ? ORDER BY number", (sheet_id,)).fetchall()
        if not rows:
            raise SheetNotFound(sheet_id)
        return [revisions.Mark(n, c, a, nt, bool(f), bool(j)) for n, c, a, nt, f, j in rows]

    def revisions_since(self, sheet_id: int, number: int, limit: int = 20) -> tuple[list[Revision], int]:
        """Revisions after ``number``, newest first (at most ``limit``), and how many there are in all."""
        _valid_id(sheet_id)
        with self._connect() as con:
            rows = con.execute(f"SELECT {_REVISION_COLUMNS} FROM revisions WHERE sheet_id = ? AND number > ? "
                               "ORDER BY number DESC LIMIT ?", (sheet_id, number, limit)).fetchall()
            total = con.execute("SELECT COUNT(*) FROM revisions WHERE sheet_id = ? AND number > ?",
                                (sheet_id, number)).fetchone()[0]
        return [_revision(r) for r in rows], total

    # -- writing ---------------------------------------------------------------------------

    def create_sheet(self, document: dict, author: str = "", note: str = "") -> Revision:
        text = dump_document(document)
        now = _now()
        with self._write() as con:
            return self._create(con, text, now, author, note)

    def _create(self, con: sqlite3.Connection, text: str, now: str, author: str, note: str) -> Revision:
        sheet_id = con.execute("INSERT INTO sheets (created) VALUES (?)", (now,)).lastrowid
        con.execute(
            f"INSERT INTO revisions ({_REVISION_COLUMNS}) VALUES (?, 1, ?, ?, ?, ?, ?, NULL, 0)",
            (sheet_id, text, digest_of(text), now, author, note),
        )
        return Revision(sheet_id, 1, text, digest_of(text), now, author, note, None, False)

    def add_revision(
        self, sheet_id: int, document: dict, base: int | None, author: str = "", note: str = "",
        editor: str = "",
    ) -> tuple[Revision, bool]:
        """Append a revision based on revision ``base``; returns (latest revision, whether one was added).

        Raises StaleRevision when ``base`` is not the latest revision. A document equal to the
        latest one adds nothing, so repeated posts of the same form do not pad the history.

        Every save is kept (nothing acknowledged is lost), but a save from the sheet form by the same
        ``editor`` (an opaque key of one person in one browser) and the same author, within
        ``revisions.PAUSE`` seconds of the last save, which is not signed, continues that save's
        revision (``joins``): the history shows a burst of typing as one revision. An empty
        ``editor`` (the API, a restore, an import) always starts a revision of its own.
        """
        _valid_id(sheet_id)
        text = dump_document(document)
        digest = digest_of(text)
        with self._write() as con:
            row = con.execute(
                f"SELECT {_REVISION_COLUMNS}, editor FROM revisions WHERE sheet_id = ? ORDER BY number DESC LIMIT 1",
                (sheet_id,),
            ).fetchone()
            if row is None:
                raise SheetNotFound(sheet_id)
            current, last_editor = _revision(row[:-1]), row[-1]
            if base != current.number:
                raise StaleRevision(sheet_id, base, current)
            if digest == current.digest:
                return current, False
            now = _now()
            number = current.number + 1
            joins = 0
            if editor and not current.frozen:
                joins = int(last_editor == editor and current.author == author
                            and revisions.continues(current.created, now))
            con.execute(
                f"INSERT INTO revisions ({_REVISION_COLUMNS}, joins, editor) VALUES (?, ?, ?, ?, ?, ?, ?, ?, 0, ?, ?)",
                (sheet_id, number, text, digest, now, author, note, base, joins, editor),
            )
        return Revision(sheet_id, number, text, digest, now, author, note, base, False), True

    def set_archived(self, sheet_id: int, archived: bool) -> None:
        _valid_id(sheet_id)
        with self._write() as con:
            cur = con.execute(
                "UPDATE sheets SET archived = ?, archived_at = ? WHERE id = ?",
                (1 if archived else 0, _now() if archived else None, sheet_id),
            )
            if cur.rowcount == 0:
                raise SheetNotFound(sheet_id)

    def seed_once(self, documents: list[tuple[str, dict]]) -> list[Revision]:
        """Create one sheet per (name, document) the first time the store is used, and never again."""
        with self._write() as con:
            if con.execute("SELECT 1 FROM meta WHERE key = 'seeded'").fetchone():
                return []
            now = _now()
            created = [self._create(con, dump_document(doc), now, "", f"demo sheet {name}") for name, doc in documents]
            con.execute("INSERT INTO meta (key, value) VALUES ('seeded', ?)", (now,))
        return created

    # == sign-off and record fingerprints (the calculation record; server/record.py) ================
    # Kept apart from the sheet methods above. Tables in _SIGNOFF_SCHEMA at the end of this file.

    def sign(self, sheet_id: int, number: int, role: str, signer: Account, comment: str, fingerprint: str,
             version: str, identified: str) -> dict:
        """Record one role's signature on a revision; the first signature freezes the revision.

        Roles sign in order (preparer, checker, approver), each once and each by a different
        account; a revision's first signature must be on the sheet's latest revision. ``signer``
        is the account whose password was confirmed, ``identified`` says how and when. Raises
        SignOffRefused (with an HTTP-like status) otherwise, SheetNotFound for no such revision.
        """
        _valid_id(sheet_id, number)
        order = ("preparer", "checker", "approver")
        if role not in order:
            raise SignOffRefused(422, f"There is no role '{role}'; the roles are preparer, checker and approver.")
        with self._write() as con:
            row = con.execute("SELECT frozen FROM revisions WHERE sheet_id = ? AND number = ?",
                              (sheet_id, number)).fetchone()
            if row is None:
                raise SheetNotFound(sheet_id, number)
            have = {r: (n, s, a, lg) for r, n, s, a, lg in con.execute(
                "SELECT role, name, signed, account_id, login FROM signatures WHERE sheet_id = ? AND number = ?",
                (sheet_id, number))}
            if role in have:
                who, when = have[role][:2]
                raise SignOffRefused(409, f"Revision {number} was already signed as {role} by {who} on {when[:10]}. "
                                          "A signed revision cannot change: edit the sheet to start the next revision.")
            before = order[order.index(role) - 1] if role != "preparer" else None
            if before is not None and before not in have:
                raise SignOffRefused(409, f"The {before} signs before the {role}.")
            for other, (who, _, account_id, _) in have.items():
                same = account_id == signer.id if account_id is not None else _same_person(who, signer.name)
                if same:
                    raise SignOffRefused(422, f"{signer.name} already signed this revision as {other}: the preparer, "
                                              "checker and approver are three different people.")
            if not have:
                latest = con.execute("SELECT MAX(number) FROM revisions WHERE sheet_id = ?", (sheet_id,)).fetchone()[0]
                if latest != number:
                    raise SignOffRefused(409, f"Revision {number} has been superseded by revision {latest}: "
                                              "sign-off starts on the latest revision.")
                con.execute("UPDATE revisions SET frozen = 1 WHERE sheet_id = ? AND number = ?", (sheet_id, number))
            signed = _now()
            con.execute("INSERT INTO signatures (sheet_id, number, role, name, comment, signed, fingerprint, "
                        "account_id, login, initials, identified, version, origin) "
                        "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, '')",
                        (sheet_id, number, role, signer.name, comment, signed, fingerprint, signer.id, signer.login,
                         signer.initials, identified, version))
        return {"role": role, "name": signer.name, "comment": comment, "signed": signed, "fingerprint": fingerprint,
                "account_id": signer.id, "login": signer.login, "initials": signer.initials,
                "identified": identified, "version": version, "origin": ""}

    def signatures(self, sheet_id: int, number: int) -> list[dict]:
        """The signatures on one revision, in role order, each with how its signer was identified."""
        _valid_id(sheet_id, number)
        with self._connect() as con:
            rows = con.execute(
                f"SELECT {_SIGNATURE_COLUMNS} FROM signatures WHERE sheet_id = ? AND number = ? "
                "ORDER BY CASE role WHEN 'preparer' THEN 0 WHEN 'checker' THEN 1 ELSE 2 END",
                (sheet_id, number)).fetchall()
        return [_signature(r) for r in rows]

    def frozen_before(self, sheet_id: int, number: int) -> int:
        """How many revisions of the sheet before ``number`` are frozen (signed): the record's revision index."""
        _valid_id(sheet_id, number)
        with self._connect() as con:
            return con.execute("SELECT COUNT(*) FROM revisions WHERE sheet_id = ? AND number < ? AND frozen = 1",
                               (sheet_id, number)).fetchone()[0]

    def remember_fingerprint(self, fingerprint: str, sheet_id: int, number: int, version: str) -> None:
        """Note that a record of this revision carried this fingerprint, so the verify page can find it."""
        with self._write() as con:
            con.execute("INSERT OR IGNORE INTO fingerprints (fingerprint, sheet_id, number, version, created) "
                        "VALUES (?, ?, ?, ?, ?)", (fingerprint, sheet_id, number, version, _now()))

    def find_fingerprint(self, prefix: str) -> list[dict]:
        """Revisions whose record fingerprint starts with ``prefix`` (lowercase hex)."""
        if not prefix or any(c not in "0123456789abcdef" for c in prefix):
            return []
        with self._connect() as con:
            rows = con.execute("SELECT fingerprint, sheet_id, number, version, created FROM fingerprints "
                               "WHERE fingerprint >= ? AND fingerprint < ? ORDER BY sheet_id, number",
                               (prefix, prefix + "g")).fetchall()
        return [dict(zip(("fingerprint", "sheet_id", "number", "version", "created"), r)) for r in rows]

    def revisions_without_fingerprint(self, version: str, limit: int) -> list[Revision]:
        """Revisions no record fingerprint of this program version is known for (oldest first)."""
        with self._connect() as con:
            rows = con.execute(
                f"SELECT {_REVISION_COLUMNS} FROM revisions r WHERE NOT EXISTS (SELECT 1 FROM fingerprints f "
                "WHERE f.sheet_id = r.sheet_id AND f.number = r.number AND f.version = ?) "
                "ORDER BY sheet_id, number LIMIT ?", (version, limit)).fetchall()
        return [_revision(r) for r in rows]


    # == sharing: the server's secret, read-only links, whole-sheet export and import, backup ===========

    def secret(self) -> bytes:
        """The store's own random secret (made once), which signs the server's cookies."""
        with self._write() as con:
            con.execute("INSERT OR IGNORE INTO meta (key, value) VALUES ('secret', ?)", (secrets.token_hex(32),))
            return bytes.fromhex(con.execute("SELECT value FROM meta WHERE key = 'secret'").fetchone()[0])

    def create_view_link(self, sheet_id: int, note: str = "", account_id: int | None = None,
                         role: str | None = None) -> ViewLink:
        """A new read-only link to a sheet: a random token that opens the sheet to view and print.

        A link made for a reviewer (``account_id``) and a ``role`` also lets that reviewer sign in
        that role, with their own password; a link without one is for viewing only.
        """
        _valid_id(sheet_id)
        link = ViewLink(secrets.token_urlsafe(18), sheet_id, _now(), note, None, account_id, role)
        with self._write() as con:
            if con.execute("SELECT 1 FROM sheets WHERE id = ?", (sheet_id,)).fetchone() is None:
                raise SheetNotFound(sheet_id)
            con.execute("INSERT INTO view_links (token, sheet_id, created, note, account_id, role) "
                        "VALUES (?, ?, ?, ?, ?, ?)", (link.token, sheet_id, link.created, note, account_id, role))
        return link

    def view_links(self, sheet_id: int) -> list[ViewLink]:
        """The sheet's read-only links that still work, newest first."""
        _valid_id(sheet_id)
        with self._connect() as con:
            rows = con.execute(f"SELECT {_LINK_COLUMNS} FROM view_links "
                               "WHERE sheet_id = ? AND revoked IS NULL ORDER BY rowid DESC", (sheet_id,)).fetchall()
        return [ViewLink(*r) for r in rows]

    def view_link(self, token: str) -> ViewLink | None:
        """The working read-only link with this token, or None."""
        if not token or len(token) > 100:
            return None
        with self._connect() as con:
            row = con.execute(f"SELECT {_LINK_COLUMNS} FROM view_links WHERE token = ? AND revoked IS NULL",
                              (token,)).fetchone()
        return ViewLink(*row) if row else None

    def view_link_sheet(self, token: str) -> int | None:
        """The sheet a read-only link opens, or None for an unknown or revoked link."""
        link = self.view_link(token)
        return link.sheet_id if link else None

    def revoke_view_link(self, sheet_id: int, token: str) -> bool:
        """Stop a read-only link from working; returns whether a working link was revoked."""
        _valid_id(sheet_id)
        with self._write() as con:
            cur = con.execute("UPDATE view_links SET revoked = ? WHERE token = ? AND sheet_id = ? AND revoked IS NULL",
                              (_now(), token, sheet_id))
            return cur.rowcount == 1

    def export_rows(self, sheet_id: int) -> dict:
        """A sheet, every revision and every signature, read in one transaction (so from one moment)."""
        _valid_id(sheet_id)
        with self._connect() as con:
            con.execute("BEGIN")
            try:
                sheet = con.execute("SELECT id, created, archived FROM sheets WHERE id = ?", (sheet_id,)).fetchone()
                revisions = con.execute(f"SELECT {_REVISION_COLUMNS}, joins FROM revisions WHERE sheet_id = ? "
                                        "ORDER BY number", (sheet_id,)).fetchall()
                signatures = con.execute(
                    f"SELECT number, {_SIGNATURE_COLUMNS} FROM signatures WHERE sheet_id = ? "
                    "ORDER BY number, CASE role WHEN 'preparer' THEN 0 WHEN 'checker' THEN 1 ELSE 2 END",
                    (sheet_id,)).fetchall()
            finally:
                con.execute("COMMIT")
        if sheet is None or not revisions:
            raise SheetNotFound(sheet_id)
        return {"sheet": {"id": sheet[0], "created": sheet[1], "archived": bool(sheet[2])},
                "revisions": [dataclasses.replace(_revision(r[:-1]), joins=bool(r[-1])) for r in revisions],
                "signatures": [{"number": s[0], **_signature(s[1:])} for s in signatures]}

    def import_rows(self, created: str, revisions: list[Revision], signatures: list[dict], origin: dict) -> int:
        """A new sheet holding the given revisions and signatures word for word; returns its id.

        Everything goes in one transaction, so a failed import leaves no trace. Revisions keep
        their numbers, times, authors, notes and frozen state; nothing existing is touched.
        """
        with self._write() as con:
            sheet_id = con.execute("INSERT INTO sheets (created) VALUES (?)", (created,)).lastrowid
            con.executemany(
                f"INSERT INTO revisions ({_REVISION_COLUMNS}, joins) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                [(sheet_id, r.number, r.document_json, r.digest, r.created, r.author, r.note, r.base,
                  1 if r.frozen else 0, 1 if r.joins else 0) for r in revisions])
            # An imported signature was not made here: it keeps the file's words and says where it came
            # from (``origin``), and it names no account of this server.
            con.executemany(
                "INSERT INTO signatures (sheet_id, number, role, name, comment, signed, fingerprint, "
                "account_id, login, initials, identified, version, origin) "
                "VALUES (?, ?, ?, ?, ?, ?, ?, NULL, ?, ?, ?, ?, ?)",
                [(sheet_id, s["number"], s["role"], s["name"], s["comment"], s["signed"], s["fingerprint"],
                  s.get("login", ""), s.get("initials", ""), s.get("identified", ""), s.get("version", ""),
                  s["origin"]) for s in signatures])
            con.execute("INSERT INTO meta (key, value) VALUES (?, ?)",
                        (f"imported:{sheet_id}", json.dumps({**origin, "imported": _now()}, ensure_ascii=False)))
        return sheet_id

    def backup(self, out: Path) -> dict:
        """A consistent copy of the whole store in ``out`` (a single file), taken while others may be writing.

        SQLite's online backup copies one snapshot; the copy is checked and switched out of
        write-ahead logging so it is one self-contained file. Returns what the copy holds.
        """
        out = Path(out)
        tmp = out.with_name(f".{out.name}.{os.getpid()}.partial")
        tmp.unlink(missing_ok=True)
        src = sqlite3.connect(self.path, timeout=10)
        try:
            src.execute("PRAGMA busy_timeout=10000")
            dst = sqlite3.connect(tmp)
            try:
                src.backup(dst)
                dst.execute("PRAGMA journal_mode=DELETE")
                check = dst.execute("PRAGMA integrity_check").fetchone()[0]
                counts = {t: dst.execute(f"SELECT COUNT(*) FROM {t}").fetchone()[0]
                          for t in ("sheets", "revisions", "signatures")}
            finally:
                dst.close()
        finally:
            src.close()
        if check != "ok":
            tmp.unlink(missing_ok=True)
            raise StoreError(f"the copy failed its integrity check: {check}")
        with open(tmp, "rb") as f:
            os.fsync(f.fileno())
        os.replace(tmp, out)
        return counts


@dataclass(frozen=True)
class ViewLink:
    """A read-only link to one sheet."""

    token: str
    sheet_id: int
    created: str
    note: str
    revoked: str | None
    account_id: int | None = None  # the reviewer it was made for, who may sign through it
    role: str | None = None  # the role that reviewer signs in


_LINK_COLUMNS = "token, sheet_id, created, note, revoked, account_id, role"


# Read-only links are revoked, never deleted, so the store keeps who was given access and when.
_SHARING_SCHEMA = """
CREATE TABLE IF NOT EXISTS view_links (
    token    TEXT PRIMARY KEY,
    sheet_id INTEGER NOT NULL REFERENCES sheets(id),
    created  TEXT NOT NULL,
    note     TEXT NOT NULL DEFAULT '',
    revoked  TEXT
);
CREATE INDEX IF NOT EXISTS view_links_by_sheet ON view_links (sheet_id);
CREATE TRIGGER IF NOT EXISTS view_links_never_deleted
BEFORE DELETE ON view_links
BEGIN SELECT RAISE(ABORT, 'read-only links are revoked, never deleted'); END;
"""


class SignOffRefused(StoreError):
    """A signature the rules do not allow; ``status`` is 409 (the revision's state) or 422 (the input)."""

    def __init__(self, status: int, message: str):
        self.status = status
        super().__init__(message)


_SIGNATURE_COLUMNS = ("role, name, comment, signed, fingerprint, COALESCE(account_id, -1), COALESCE(login, ''), "
                      "COALESCE(initials, ''), COALESCE(identified, ''), COALESCE(version, ''), COALESCE(origin, '')")
_SIGNATURE_KEYS = ("role", "name", "comment", "signed", "fingerprint", "account_id", "login", "initials",
                   "identified", "version", "origin")


def _signature(row) -> dict:
    """A signature row as a dict. ``identified`` is empty for one made before accounts existed (a typed
    name only), ``origin`` empty for one made on this server, and ``account_id`` None unless made here."""
    sig = dict(zip(_SIGNATURE_KEYS, row))
    if sig["account_id"] == -1:
        sig["account_id"] = None
    return sig


def _add_columns(con: sqlite3.Connection) -> None:
    """Bring a store made by an earlier version up to this one's columns (added, never rewritten)."""
    wanted = {"signatures": [("account_id", "INTEGER"), ("login", "TEXT"), ("initials", "TEXT"),
                             ("identified", "TEXT"), ("version", "TEXT"), ("origin", "TEXT")],
              "view_links": [("account_id", "INTEGER"), ("role", "TEXT")],
              "revisions": [("joins", "INTEGER NOT NULL DEFAULT 0"), ("editor", "TEXT NOT NULL DEFAULT ''")]}
    for table, columns in wanted.items():
        have = {r[1] for r in con.execute(f"PRAGMA table_info({table})")}
        for name, kind in columns:
            if name not in have:
                con.execute(f"ALTER TABLE {table} ADD COLUMN {name} {kind}")
    # Which revision a save belongs to is decided once, when it is stored, and never rewritten.
    con.execute("CREATE TRIGGER IF NOT EXISTS revisions_grouping_fixed BEFORE UPDATE OF joins, editor ON revisions "
                "BEGIN SELECT RAISE(ABORT, 'revisions are append-only'); END")


def _same_person(a: str, b: str) -> bool:
    return " ".join(a.split()).casefold() == " ".join(b.split()).casefold()


# Signatures, like revisions, are never rewritten or removed; a signature needs a frozen revision.
_SIGNOFF_SCHEMA = """
CREATE TABLE IF NOT EXISTS signatures (
    sheet_id    INTEGER NOT NULL,
    number      INTEGER NOT NULL,
    role        TEXT NOT NULL CHECK (role IN ('preparer', 'checker', 'approver')),
    name        TEXT NOT NULL,
    comment     TEXT NOT NULL DEFAULT '',
    signed      TEXT NOT NULL,
    fingerprint TEXT NOT NULL,
    PRIMARY KEY (sheet_id, number, role),
    FOREIGN KEY (sheet_id, number) REFERENCES revisions(sheet_id, number)
);
CREATE TRIGGER IF NOT EXISTS signatures_need_frozen
BEFORE INSERT ON signatures
WHEN (SELECT frozen FROM revisions WHERE sheet_id = NEW.sheet_id AND number = NEW.number) IS NOT 1
BEGIN SELECT RAISE(ABORT, 'a signature needs a frozen revision'); END;
CREATE TRIGGER IF NOT EXISTS signatures_never_changed
BEFORE UPDATE ON signatures
BEGIN SELECT RAISE(ABORT, 'signatures are never changed'); END;
CREATE TRIGGER IF NOT EXISTS signatures_never_deleted
BEFORE DELETE ON signatures
BEGIN SELECT RAISE(ABORT, 'signatures are never deleted'); END;
CREATE TABLE IF NOT EXISTS fingerprints (
    fingerprint TEXT NOT NULL,
    sheet_id    INTEGER NOT NULL,
    number      INTEGER NOT NULL,
    version     TEXT NOT NULL,
    created     TEXT NOT NULL,
    PRIMARY KEY (fingerprint, sheet_id, number)
);
CREATE INDEX IF NOT EXISTS fingerprints_by_revision ON fingerprints (sheet_id, number, version);
"""
