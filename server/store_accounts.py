"""The store's accounts and trusted installation keys: their rows, their table, and the Store methods over them.

Kept apart from server/store.py (sheets, revisions, signatures, links); the rules (hashing,
roles, who may add an account) are in server/accounts.py.
"""

from __future__ import annotations

from dataclasses import dataclass


def _store():
    import server.store  # the Store class mixes these methods in, so it is imported when they run

    return server.store


class AccountRows:
    """Account and trusted-key methods of Store (it supplies ``_write`` and ``_connect``)."""

    # == accounts: who may sign, and the installations whose exports are trusted ==========================
    # Tables in _ACCOUNTS_SCHEMA at the end of this file; the rules (hashing, roles, admin) in server/accounts.py.

    def add_account(self, login: str, name: str, initials: str, roles: tuple[str, ...], password_hash: str,
                    admin: bool, created_by: str) -> Account:
        """A new account; StoreError if the login is taken (logins compare without case)."""
        created = _store()._now()
        with self._write() as con:
            if con.execute("SELECT 1 FROM accounts WHERE login = ?", (login,)).fetchone():
                raise _store().StoreError(f"There is already an account '{login}'.")
            account_id = con.execute(
                "INSERT INTO accounts (login, name, initials, roles, admin, password, created, created_by) "
                "VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
                (login, name, initials, " ".join(roles), 1 if admin else 0, password_hash, created, created_by)
            ).lastrowid
        return Account(account_id, login, name, initials, tuple(roles), admin, created, created_by, None)

    def accounts(self) -> list[Account]:
        """Every account, disabled ones too (accounts are disabled, never deleted), by login."""
        with self._connect() as con:
            rows = con.execute(f"SELECT {_ACCOUNT_COLUMNS} FROM accounts ORDER BY login").fetchall()
        return [_account(r) for r in rows]

    def account_count(self) -> int:
        with self._connect() as con:
            return con.execute("SELECT COUNT(*) FROM accounts").fetchone()[0]

    def account(self, login: str) -> tuple[Account, str] | None:
        """An account by login, with its password hash, or None."""
        with self._connect() as con:
            row = con.execute(f"SELECT {_ACCOUNT_COLUMNS}, password FROM accounts WHERE login = ?",
                              (login,)).fetchone()
        return (_account(row[:-1]), row[-1]) if row else None

    def account_by_id(self, account_id: int) -> Account | None:
        with self._connect() as con:
            row = con.execute(f"SELECT {_ACCOUNT_COLUMNS} FROM accounts WHERE id = ?", (account_id,)).fetchone()
        return _account(row) if row else None

    def set_password_hash(self, account_id: int, password_hash: str) -> None:
        with self._write() as con:
            con.execute("UPDATE accounts SET password = ? WHERE id = ?", (password_hash, account_id))

    def disable_account(self, account_id: int) -> bool:
        """Disable an account (its signatures stay, it signs no more); returns whether it was enabled."""
        with self._write() as con:
            cur = con.execute("UPDATE accounts SET disabled = ? WHERE id = ? AND disabled IS NULL",
                              (_store()._now(), account_id))
            return cur.rowcount == 1

    def trust_key(self, public_key: str, name: str, added_by: str) -> None:
        """Trust exports signed with this installation key (hex Ed25519 public key)."""
        with self._write() as con:
            con.execute("INSERT INTO trusted_keys (public_key, name, added, added_by) VALUES (?, ?, ?, ?) "
                        "ON CONFLICT (public_key) DO UPDATE SET name = excluded.name, removed = NULL",
                        (public_key, name, _store()._now(), added_by))

    def distrust_key(self, public_key: str) -> bool:
        with self._write() as con:
            cur = con.execute("UPDATE trusted_keys SET removed = ? WHERE public_key = ? AND removed IS NULL",
                              (_store()._now(), public_key))
            return cur.rowcount == 1

    def trusted_keys(self) -> dict[str, str]:
        """Trusted installation keys (hex) and the names given them."""
        with self._connect() as con:
            return dict(con.execute("SELECT public_key, name FROM trusted_keys WHERE removed IS NULL").fetchall())


@dataclass(frozen=True)
class Account:
    """A person who may sign: their login, name and initials, and which roles they may sign in."""

    id: int
    login: str
    name: str
    initials: str
    roles: tuple[str, ...]
    admin: bool  # may add and disable accounts
    created: str
    created_by: str
    disabled: str | None

    @property
    def enabled(self) -> bool:
        return self.disabled is None


_ACCOUNT_COLUMNS = "id, login, name, initials, roles, admin, created, created_by, disabled"


def _account(row) -> Account:
    return Account(row[0], row[1], row[2], row[3], tuple(row[4].split()), bool(row[5]), row[6], row[7], row[8])


# Accounts are disabled, never deleted, so every signature keeps the account that made it.
# Only the password hash and the disabled time ever change. Trusted installation keys likewise
# are removed by marking them, so an import's trust can be traced later.
_ACCOUNTS_SCHEMA = """
CREATE TABLE IF NOT EXISTS accounts (
    id         INTEGER PRIMARY KEY AUTOINCREMENT,
    login      TEXT NOT NULL UNIQUE,
    name       TEXT NOT NULL,
    initials   TEXT NOT NULL,
    roles      TEXT NOT NULL,
    admin      INTEGER NOT NULL DEFAULT 0,
    password   TEXT NOT NULL,
    created    TEXT NOT NULL,
    created_by TEXT NOT NULL DEFAULT '',
    disabled   TEXT
);
CREATE TRIGGER IF NOT EXISTS accounts_never_deleted
BEFORE DELETE ON accounts
BEGIN SELECT RAISE(ABORT, 'accounts are disabled, never deleted'); END;
CREATE TRIGGER IF NOT EXISTS accounts_keep_identity
BEFORE UPDATE OF id, login, name, initials, admin, created, created_by ON accounts
BEGIN SELECT RAISE(ABORT, 'an account keeps its identity; make a new one'); END;
CREATE TRIGGER IF NOT EXISTS accounts_stay_disabled
BEFORE UPDATE OF disabled ON accounts WHEN OLD.disabled IS NOT NULL
BEGIN SELECT RAISE(ABORT, 'a disabled account stays disabled'); END;
CREATE TABLE IF NOT EXISTS trusted_keys (
    public_key TEXT PRIMARY KEY,
    name       TEXT NOT NULL,
    added      TEXT NOT NULL,
    added_by   TEXT NOT NULL DEFAULT '',
    removed    TEXT
);
"""
