"""Accounts: who may sign a record, in which roles, confirmed each time by their own password.

Editing needs no account (one engineer on a laptop just works); a signature always does. An
account has a login, the person's name and initials, the roles they may sign in (preparer,
checker, approver) and a password kept only as an Argon2id hash (argon2-cffi, the reference
implementation's binding; RFC 9106 describes the function). Accounts are disabled, never deleted,
so every signature keeps the account that made it.

Who may add accounts: the first account (an administrator) is made from the command line or
from this computer's own browser while there is none; after that an administrator confirms each
new account or disablement with their own password. There are no log-in sessions: every act that
needs identity asks for the password at that moment, so a browser left open signs nothing.
"""

from __future__ import annotations

import re
import threading
from dataclasses import dataclass

from argon2 import PasswordHasher
from argon2.exceptions import InvalidHashError, VerificationError, VerifyMismatchError

from server.access import Attempts
from server.store import Account, Store, StoreError

ROLES = ("preparer", "checker", "approver")
ROLE_TITLES = {"preparer": "Prepared by", "checker": "Checked by", "approver": "Approved by"}
LOGIN_RULE = re.compile(r"^[a-z0-9][a-z0-9._-]{1,39}$")
MAX_NAME = 100
MAX_INITIALS = 6
MIN_PASSWORD = 10
#: A password longer than this is refused before hashing: hashing is memory-hard on purpose.
MAX_PASSWORD = 200
#: Hashes computed at once: each takes HASH_MEMORY_KIB of memory and a few tenths of a second.
HASHES_AT_ONCE = 2
#: Argon2id cost (argon2-cffi's defaults, which follow RFC 9106's second recommended option).
HASH_TIME_COST = 3
HASH_MEMORY_KIB = 65536
HASH_PARALLELISM = 4
IDENTIFIED = "password confirmed at signing"


class AccountRefused(Exception):
    """An account action that cannot be done: ``status`` as HTTP, ``field`` the form field at fault."""

    def __init__(self, status: int, message: str, field: str = ""):
        self.status, self.field = status, field
        super().__init__(message)


@dataclass(frozen=True)
class NewAccount:
    login: str
    name: str
    initials: str
    roles: tuple[str, ...]
    admin: bool = False


_hash_slots = threading.BoundedSemaphore(HASHES_AT_ONCE)


def _hasher() -> PasswordHasher:
    return PasswordHasher(time_cost=HASH_TIME_COST, memory_cost=HASH_MEMORY_KIB, parallelism=HASH_PARALLELISM)


def hash_password(password: str) -> str:
    with _hash_slots:
        return _hasher().hash(password)


def password_matches(stored_hash: str, password: str) -> bool:
    with _hash_slots:
        try:
            return _hasher().verify(stored_hash, password)
        except (VerifyMismatchError, VerificationError, InvalidHashError):
            return False


def normal_login(text: str) -> str:
    return (text or "").strip().casefold()


def check_new(login: str, name: str, initials: str, roles, password: str) -> dict[str, str]:
    """Messages by form field for what is wrong with a new account (empty when it is fine)."""
    problems = {}
    if not LOGIN_RULE.match(normal_login(login)):
        problems["login"] = ("A login is 2 to 40 characters: letters, digits, '.', '_' or '-', "
                             "starting with a letter or digit.")
    if not name.strip():
        problems["name"] = "Type the person's name as it should appear on the record."
    elif len(name) > MAX_NAME:
        problems["name"] = f"A name may be at most {MAX_NAME} characters."
    if not initials.strip() or len(initials.strip()) > MAX_INITIALS or not initials.replace(".", "").strip().isalpha():
        problems["initials"] = f"Initials are 1 to {MAX_INITIALS} letters."
    if not roles or any(r not in ROLES for r in roles):
        problems["roles"] = "Choose at least one role: preparer, checker or approver."
    problem = password_problem(password)
    if problem:
        problems["password"] = problem
    return problems


def password_problem(password: str) -> str | None:
    if len(password) < MIN_PASSWORD:
        return f"A password has at least {MIN_PASSWORD} characters."
    if len(password) > MAX_PASSWORD:
        return f"A password has at most {MAX_PASSWORD} characters."
    return None


class Accounts:
    """The account rules over the store, with a limit on wrong passwords per client and account."""

    def __init__(self, store: Store, attempts: Attempts | None = None):
        self.store = store
        self.attempts = attempts or Attempts(limit=5, window=60.0)

    def none_yet(self) -> bool:
        return self.store.account_count() == 0

    def create(self, new: NewAccount, password: str, by: str) -> Account:
        """Store a new account (``by`` says who made it: an administrator's login or 'command line')."""
        roles = tuple(r for r in ROLES if r in new.roles)
        problems = check_new(new.login, new.name, new.initials, roles, password)
        if problems:
            field, message = next(iter(problems.items()))
            raise AccountRefused(422, message, field)
        try:
            return self.store.add_account(normal_login(new.login), " ".join(new.name.split()),
                                          new.initials.strip(), roles, hash_password(password), new.admin, by)
        except StoreError as e:
            raise AccountRefused(409, str(e), "login") from None

    def confirm(self, login: str, password: str, client: str) -> Account:
        """The enabled account whose password this is; AccountRefused otherwise (401, 403 or 429)."""
        login = normal_login(login)
        key = f"{client}\x00{login}"
        wait = self.attempts.wait(key)
        if wait > 0:
            raise AccountRefused(429, f"Too many wrong passwords for '{login[:40]}' from here: wait {wait:.0f} s "
                                      "and try again.", "password")
        found = self.store.account(login) if LOGIN_RULE.match(login) and len(password) <= MAX_PASSWORD else None
        if found is None:
            # The same work as for a real account, so the time taken does not tell which logins exist.
            password_matches(_decoy(), password[:MAX_PASSWORD])
            self.attempts.failed(key)
            raise AccountRefused(401, "That login and password do not match an account on this server.", "password")
        account, stored_hash = found
        if not password_matches(stored_hash, password):
            self.attempts.failed(key)
            raise AccountRefused(401, "That login and password do not match an account on this server.", "password")
        self.attempts.succeeded(key)
        if not account.enabled:
            raise AccountRefused(403, f"The account '{account.login}' was disabled on {account.disabled[:10]}; "
                                      "it can no longer sign.", "login")
        return account

    def confirm_admin(self, login: str, password: str, client: str) -> Account:
        try:
            account = self.confirm(login, password, client)
        except AccountRefused as refused:  # said beside the administrator's own login
            raise AccountRefused(refused.status, str(refused), "admin_login") from None
        if not account.admin:
            raise AccountRefused(403, f"'{account.login}' is not an administrator: ask one to do this.", "admin_login")
        return account

    def change_password(self, login: str, current: str, new: str, client: str) -> Account:
        account = self.confirm(login, current, client)
        problem = password_problem(new)
        if problem:
            raise AccountRefused(422, problem, "new_password")
        self.store.set_password_hash(account.id, hash_password(new))
        return account

    def set_password(self, login: str, new: str) -> Account:
        """Set a password without the current one: for the command line, run by whoever owns the store."""
        found = self.store.account(normal_login(login))
        if found is None:
            raise AccountRefused(404, f"There is no account '{login[:40]}'.", "login")
        problem = password_problem(new)
        if problem:
            raise AccountRefused(422, problem, "password")
        self.store.set_password_hash(found[0].id, hash_password(new))
        return found[0]

    def disable(self, login: str) -> Account:
        found = self.store.account(normal_login(login))
        if found is None:
            raise AccountRefused(404, f"There is no account '{login[:40]}'.", "login")
        if not self.store.disable_account(found[0].id):
            raise AccountRefused(409, f"The account '{found[0].login}' is already disabled.", "login")
        return found[0]

    def signer(self, login: str, password: str, role: str, client: str) -> Account:
        """The account signing in ``role``: its password confirmed and the role one it may sign in."""
        if not normal_login(login):
            raise AccountRefused(422, "Type your login to sign.", "login")
        if not password:
            raise AccountRefused(422, "Type your password: a signature is confirmed with it.", "password")
        account = self.confirm(login, password, client)
        if role not in account.roles:
            may = ", ".join(account.roles) or "no role"
            raise AccountRefused(403, f"{account.name} ('{account.login}') may sign as {may}, not as {role}.", "login")
        return account


_DECOY: list[str] = []


def _decoy() -> str:
    if not _DECOY:
        _DECOY.append(hash_password("not a password of anyone"))
    return _DECOY[0]
