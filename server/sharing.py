"""Pages for sharing: the access key page, read-only links (make, revoke, open), and a sheet's export and import."""

from __future__ import annotations

from typing import Any

from fastapi import Request
from fastapi.responses import RedirectResponse, Response
from starlette.concurrency import run_in_threadpool

from server import transfer
from server.access import normalise_key, same_key
from server.store import Store
from server.web import ACCESS_DAYS, KEY_PATH, clean_author, cookie_name, safe_next

MAX_LINK_NOTE = 100
#: Largest export file the import page takes [bytes]: long histories are larger than one sheet.
MAX_IMPORT = 20_000_000


def _store(request: Request) -> Store:
    return request.app.state.store


def _url(request: Request, name: str, **params) -> str:
    return request.scope.get("root_path", "") + str(request.app.url_path_for(name, **params))


def _render(request: Request, template: str, context: dict, status: int = 200) -> Response:
    return request.app.state.templates.TemplateResponse(request, template, context, status_code=status)


def _error(request: Request, status: int, title: str, message: str) -> Response:
    return _render(request, "error.html", {"status": status, "title": title, "message": message, "errors": []},
                   status)


async def _fields(request: Request, *names: str, max_fields: int = 20) -> dict[str, str]:
    try:
        data = await request.form(max_fields=max_fields, max_files=0)
    except Exception:  # the multipart parser raises its own assorted errors on garbage
        return {n: "" for n in names}
    return {n: (data.get(n) if isinstance(data.get(n), str) else "") for n in names}


# -- the key page ---------------------------------------------------------------------------------

def _key_page(request: Request, next_path: str, message: str | None = None, status: int = 200) -> Response:
    return _render(request, "key.html", {"next": next_path, "message": message}, status)


def key_page(request: Request, next: str = "/") -> Response:
    if not request.app.state.sharing.share:
        return RedirectResponse(safe_next(next), status_code=303)
    return _key_page(request, safe_next(next))


async def key_submit(request: Request) -> Response:
    sharing = request.app.state.sharing
    form = await _fields(request, "key", "next")
    next_path = safe_next(form["next"])
    if not sharing.share:
        return RedirectResponse(next_path, status_code=303)
    client = (request.client.host if request.client else "?")
    key = sharing.key()
    right = bool(key) and bool(form["key"].strip()) and same_key(form["key"], key)
    wait = 0.0 if right else sharing.attempts.wait(client)  # the right key is never made to wait
    if wait > 0:
        response = _key_page(request, next_path, f"Too many wrong keys from this computer. Wait {int(wait) + 1} "
                                                 "seconds, then try again.", 429)
        response.headers["Retry-After"] = str(int(wait) + 1)
        return response
    if not right:
        if form["key"].strip():
            sharing.attempts.failed(client)
        return _key_page(request, next_path, "That is not the access key. It is printed where the server was "
                                             "started, and kept in the server's data folder.", 401)
    sharing.attempts.succeeded(client)
    response = RedirectResponse(next_path, status_code=303)
    response.set_cookie(cookie_name("key", request.scope), sharing.signer.timed_token("access", normalise_key(key)),
                        max_age=ACCESS_DAYS * 86400, httponly=True, samesite="strict")
    return response


# -- read-only links ------------------------------------------------------------------------------

def _make_link(store: Store, sheet_id: int, note: str, reviewer: str) -> str | None:
    """Make a link (for a reviewer "login role", or view only); returns why not, or None."""
    account_id = role = None
    if reviewer.strip():
        login, _, role = reviewer.strip().partition(" ")
        found = store.account(login.casefold())
        if found is None or not found[0].enabled:
            return f"There is no working account '{login[:40]}' to make a link for."
        if role not in found[0].roles:
            return f"{found[0].name} may not sign as '{role[:20]}'; their roles are {', '.join(found[0].roles)}."
        account_id = found[0].id
    store.latest(sheet_id)  # 404 for a sheet that does not exist
    store.create_view_link(sheet_id, note, account_id, role)
    return None


async def link_create(request: Request, sheet_id: int) -> Response:
    form = await _fields(request, "note", "reviewer")
    note = clean_author(form["note"])[:MAX_LINK_NOTE]
    problem = await run_in_threadpool(_make_link, _store(request), sheet_id, note, form["reviewer"][:200])
    if problem:
        return _error(request, 422, "No link made", problem)
    return RedirectResponse(_url(request, "sheet", sheet_id=sheet_id) + "#links", status_code=303)


async def link_revoke(request: Request, sheet_id: int) -> Response:
    form = await _fields(request, "token")
    store = _store(request)
    await run_in_threadpool(store.latest, sheet_id)  # 404 for a sheet that does not exist
    if not await run_in_threadpool(store.revoke_view_link, sheet_id, form["token"]):
        return _error(request, 404, "Not found", "There is no working read-only link like that on this sheet.")
    return RedirectResponse(_url(request, "sheet", sheet_id=sheet_id) + "#links", status_code=303)


def view_link(request: Request, token: str) -> Response:
    """Only reached for an address the gate did not recognise as a link (it answers the real ones)."""
    return _error(request, 404, "Link not working", "This read-only link does not work.")


# -- export and import ----------------------------------------------------------------------------

async def export_sheet(request: Request, sheet_id: int) -> Response:
    body = await run_in_threadpool(transfer.export_bytes, _store(request), sheet_id)
    return Response(body, media_type="application/json",
                    headers={"Content-Disposition": f'attachment; filename="headsheet-sheet-{sheet_id}.json"'})


async def import_sheet(request: Request) -> Response:
    try:
        form = await request.form(max_files=1, max_fields=10, max_part_size=MAX_IMPORT)
    except Exception:
        return _error(request, 422, "Not imported", "The upload could not be read; choose the file again.")
    try:
        upload: Any = form.get("file")
        if upload is None or isinstance(upload, str):
            return _error(request, 422, "Not imported", "Choose a Headsheet export file (.json) to import.")
        raw = await upload.read(MAX_IMPORT + 1)
    finally:
        await form.close()
    if len(raw) > MAX_IMPORT:
        return _error(request, 413, "Request too large", f"An export file may be at most {MAX_IMPORT // 1_000_000} MB.")
    try:
        sheet_id = await run_in_threadpool(transfer.import_sheet, _store(request), raw)
    except transfer.ImportRefused as refused:
        return _error(request, 422, "Not imported", f"{refused} Nothing was imported.")
    return RedirectResponse(_url(request, "sheet", sheet_id=sheet_id), status_code=303)


def import_limit(path: str) -> int | None:
    """The body limit of the import page, which takes files larger than any form."""
    return MAX_IMPORT + 100_000 if path == "/sheets/import" else None


#: Routes: (path, name, methods, endpoint). None are part of the JSON API's schema.
ROUTES: list[tuple[str, str, list[str], Any]] = [
    (KEY_PATH, "key", ["GET"], key_page),
    (KEY_PATH, "key_submit", ["POST"], key_submit),
    ("/sheets/{sheet_id:int}/links", "link_create", ["POST"], link_create),
    ("/sheets/{sheet_id:int}/links/revoke", "link_revoke", ["POST"], link_revoke),
    ("/view/{token}", "view_link", ["GET"], view_link),
    ("/sheets/{sheet_id:int}/export.json", "sheet_export", ["GET"], export_sheet),
    ("/sheets/import", "sheet_import", ["POST"], import_sheet),
]
