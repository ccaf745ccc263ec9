"""The Accounts page and API: list who may sign, add and disable accounts, change one's password.

The rules live in server/accounts.py. The first account (an administrator) may be made here
only from this computer (a loopback address) and only while there is none; every later change
is confirmed by an administrator's own login and password, typed with it.
"""

from __future__ import annotations

from typing import Any

from fastapi import Request
from fastapi.responses import JSONResponse, Response
from pydantic import BaseModel, Field
from starlette.concurrency import run_in_threadpool

from server import web
from server.accounts import ROLES, AccountRefused, NewAccount
from server.record import accounts_of, client_of
from server.store import Account

LOOPBACK = {"127.0.0.1", "::1"}
FIELDS = ("action", "login", "name", "initials", "password", "admin", "admin_login", "admin_password",
          "current_password", "new_password", "roles_preparer", "roles_checker", "roles_approver")


def from_this_computer(request: Request) -> bool:
    """A request from a loopback address and not through a read-only link."""
    info = request.scope.get("headsheet") or {}
    return client_of(request) in LOOPBACK and info.get("viewer") is None


def public(account: Account) -> dict:
    """What anyone who can open the server may see of an account (never the password hash)."""
    return {"login": account.login, "name": account.name, "initials": account.initials, "roles": list(account.roles),
            "admin": account.admin, "created": account.created, "created_by": account.created_by,
            "disabled": account.disabled}


def _add(request: Request, new: NewAccount, password: str, admin_login: str, admin_password: str) -> Account:
    """Add an account: the first from this computer, any later one confirmed by an administrator."""
    accounts = accounts_of(request)
    if accounts.none_yet():
        if not from_this_computer(request):
            raise AccountRefused(403, "The first account can be made only on the computer the server runs on "
                                      "(or with 'headsheet accounts add').")
        return accounts.create(NewAccount(new.login, new.name, new.initials, new.roles, True), password,
                               "first account, made from this computer")
    if not admin_login.strip():
        raise AccountRefused(422, "An administrator confirms each new account: type your login and password.",
                             "admin_login")
    admin = accounts.confirm_admin(admin_login, admin_password, client_of(request))
    return accounts.create(new, password, admin.login)


def _disable(request: Request, login: str, admin_login: str, admin_password: str) -> Account:
    accounts = accounts_of(request)
    admin = accounts.confirm_admin(admin_login, admin_password, client_of(request))
    if accounts.store.account(login.strip().casefold()) and admin.login == login.strip().casefold():
        raise AccountRefused(422, "An administrator does not disable their own account here; ask another "
                                  "administrator, or use 'headsheet accounts disable'.", "login")
    return accounts.disable(login)


def _context(request: Request, message: str | None = None, kind: str = "info", form: dict | None = None) -> dict:
    store = request.app.state.store
    return {"accounts": store.accounts(), "roles": ROLES, "first": store.account_count() == 0,
            "local": from_this_computer(request), "message": message, "message_kind": kind,
            "form": form or {}}


def _render(request: Request, context: dict, status: int = 200) -> Response:
    return request.app.state.templates.TemplateResponse(request, "accounts.html", context, status_code=status)


async def accounts_page(request: Request) -> Response:
    return _render(request, await run_in_threadpool(_context, request))


async def accounts_submit(request: Request) -> Response:
    try:
        data = await request.form(max_fields=30, max_files=0)
    except Exception:
        data = {}
    form = {k: (data.get(k) if isinstance(data.get(k), str) else "")[:1000] for k in FIELDS}
    action = form["action"]

    def act() -> str:
        if action == "add":
            roles = tuple(r for r in ROLES if form[f"roles_{r}"])
            new = NewAccount(form["login"], form["name"], form["initials"], roles, bool(form["admin"]))
            made = _add(request, new, form["password"], form["admin_login"], form["admin_password"])
            return f"Account '{made.login}' ({made.name}) added; it may sign as {', '.join(made.roles)}."
        if action == "disable":
            gone = _disable(request, form["login"], form["admin_login"], form["admin_password"])
            return f"Account '{gone.login}' disabled: its signatures stay, it signs no more."
        if action == "password":
            who = accounts_of(request).change_password(form["login"], form["current_password"],
                                                       form["new_password"], client_of(request))
            return f"The password of '{who.login}' was changed."
        raise AccountRefused(422, "Nothing to do: choose add, disable or change password.")

    try:
        done = await run_in_threadpool(act)
    except AccountRefused as refused:
        for secret in ("password", "admin_password", "current_password", "new_password"):
            form[secret] = ""
        form["field"], form["action"] = refused.field, action
        context = await run_in_threadpool(_context, request, str(refused), "error", form)
        return _render(request, context, refused.status)
    return _render(request, await run_in_threadpool(_context, request, done, "info"))


# -- the API --------------------------------------------------------------------------------------

class AccountIn(BaseModel):
    login: str = Field(max_length=40)
    name: str = Field(max_length=100)
    initials: str = Field(max_length=6)
    roles: list[str] = Field(description="any of preparer, checker, approver", max_length=3)
    password: str = Field(max_length=200, description="the new account's password, at least 10 characters")
    admin: bool = False
    admin_login: str = Field("", max_length=40, description="an administrator confirming the new account "
                                                            "(not needed for the first, made from this computer)")
    admin_password: str = Field("", max_length=200)


async def api_accounts(request: Request) -> Response:
    items = await run_in_threadpool(request.app.state.store.accounts)
    return JSONResponse({"accounts": [public(a) for a in items]})


async def api_add_account(request: Request, body: AccountIn) -> Response:
    new = NewAccount(body.login, body.name, body.initials, tuple(body.roles), body.admin)
    try:
        made = await run_in_threadpool(_add, request, new, body.password, body.admin_login, body.admin_password)
    except AccountRefused as refused:
        title = {401: "Not identified", 403: "Not allowed", 409: "Conflict", 429: "Too many tries"}.get(
            refused.status, "Invalid input")
        return JSONResponse({"ok": False, "status": refused.status, "title": title, "message": str(refused),
                             "errors": [{"path": refused.field, "message": str(refused)}] if refused.field else []},
                            status_code=refused.status)
    return JSONResponse(public(made), status_code=201)


_API_DOCS: dict[str, dict[str, Any]] = {
    "api_accounts": {"summary": "Who may sign: every account (no passwords), disabled ones too", "tags": ["accounts"]},
    "api_add_account": {"summary": "Add an account (confirmed by an administrator's login and password)",
                        "tags": ["accounts"], "status_code": 201,
                        "responses": {401: {"description": "the administrator's login and password do not match"},
                                      403: {"description": "not an administrator, or the first account asked "
                                                         "for from another computer"},
                                      409: {"description": "the login is taken"},
                                      422: {"description": "a field is invalid"}}},
}

ROUTES: list[tuple[str, str, list[str], Any, bool]] = [
    ("/accounts", "accounts", ["GET"], accounts_page, False),
    ("/accounts", "accounts_submit", ["POST"], accounts_submit, False),
    ("/api/accounts", "api_accounts", ["GET"], api_accounts, True),
    ("/api/accounts", "api_add_account", ["POST"], api_add_account, True),
]

router = web.router_of(ROUTES, _API_DOCS)
