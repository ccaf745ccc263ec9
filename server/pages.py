"""The HTML pages: sheet list, sheet form (full page or htmx fragment), history and one revision."""

from __future__ import annotations

import copy
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from fastapi import Request
from fastapi.responses import RedirectResponse, Response
from starlette.concurrency import run_in_threadpool

from calc import sheet as calc_sheet

from server import editing
from server.form import FormView, anchor, describe, slot_paths
from server.store import Revision, StaleRevision, Store, dump_document

#: Most form fields a post may carry: a sheet at every list limit has about 30 000.
MAX_FIELDS = 40_000
MAX_NOTE_PATHS = 6


def when(iso: str | None) -> str:
    """A stored UTC time shown in the server's local time, to the minute."""
    if not iso:
        return ""
    try:
        return datetime.fromisoformat(iso).astimezone().strftime("%Y-%m-%d %H:%M")
    except ValueError:
        return iso


def _store(request: Request) -> Store:
    return request.app.state.store


def _render(request: Request, template: str, context: dict, status: int = 200, vary: bool = False) -> Response:
    response = request.app.state.templates.TemplateResponse(request, template, context, status_code=status)
    if vary:
        # One address answers with a page or an htmx fragment; caches must keep them apart.
        response.headers["Vary"] = "HX-Request"
    return response


def _redirect(request: Request, name: str, fragment: str = "", **params) -> RedirectResponse:
    url = request.scope.get("root_path", "") + str(request.app.url_path_for(name, **params))
    return RedirectResponse(url + (f"#{fragment}" if fragment else ""), status_code=303)


def _is_htmx(request: Request) -> bool:
    return request.headers.get("HX-Request") == "true"


# -- home -----------------------------------------------------------------------------------------

def home(request: Request) -> Response:
    store = _store(request)
    return _render(request, "home.html", {
        "sheets": store.list_sheets(),
        "archived": store.list_sheets(archived=True),
        "demos": request.app.state.demos,
    })


async def create_sheet(request: Request) -> Response:
    form = await _form(request)
    demo_name = form.get("demo", "")
    document: dict[str, Any] = calc_sheet.blank_sheet()
    note = "new blank sheet"
    if demo_name:
        demo = next((d for d in request.app.state.demos if d.name == demo_name), None)
        if demo is None:
            return _error(request, 404, "Not found", "There is no demo sheet by that name.")
        document, note = copy.deepcopy(demo.document), f"new sheet from demo {demo.name}"
    rev = await run_in_threadpool(_store(request).create_sheet, document, "", note)
    return _redirect(request, "sheet", sheet_id=rev.sheet_id)


async def duplicate_sheet(request: Request, sheet_id: int) -> Response:
    store = _store(request)
    latest = store.latest(sheet_id)
    document = latest.document
    header = document.get("header")
    if isinstance(header, dict) and isinstance(header.get("title"), str):
        title = header["title"] + " (copy)"
        if len(title) <= calc_sheet.MAX_TEXT:
            header["title"] = title
    rev = store.create_sheet(document, "", f"duplicated from sheet {sheet_id} revision {latest.number}")
    return _redirect(request, "sheet", sheet_id=rev.sheet_id)


async def archive_sheet(request: Request, sheet_id: int) -> Response:
    _store(request).set_archived(sheet_id, True)
    return _redirect(request, "home")


async def unarchive_sheet(request: Request, sheet_id: int) -> Response:
    _store(request).set_archived(sheet_id, False)
    return _redirect(request, "home")


# -- the sheet ------------------------------------------------------------------------------------

@dataclass
class SheetState:
    """Everything the sheet page and its fragments show, from one edit (or none)."""

    latest: Revision  # the stored revision now current
    display: dict  # the document on the form, as typed
    errors: list  # InputErrors of ``display``
    keep: dict  # the stored, valid document the results belong to
    keep_parsed: Any = None
    stale: bool = False
    focus: str | None = None
    message: str | None = None
    conflict: StaleRevision | None = None
    saved: bool = False  # this request added a revision
    relayout: bool = False  # the form's fields changed shape: send the whole form back


def sheet_context(request: Request, state: SheetState, shown_before: set[str] | None = None) -> dict:
    """The one context of the sheet page and of every fragment it is updated with."""
    store = _store(request)
    summary = store.sheet(state.latest.sheet_id)
    form = FormView(state.display, state.errors, state.focus)
    field_paths, group_paths = slot_paths(form)
    slots = field_paths | group_paths
    outcome = request.app.state.solver.solve(state.keep, state.keep_parsed)
    header = state.keep.get("header") if isinstance(state.keep.get("header"), dict) else {}
    units = header.get("units") if header.get("units") in ("SI", "US") else "SI"
    error_list = [{"path": e.path, "where": describe(state.display, e.path), "message": e.message,
                   "anchor": anchor(field_paths, group_paths, e.path)} for e in state.errors]
    error_paths = {e.path for e in state.errors if e.path in slots}
    return {
        "sheet": summary,
        "revision": state.latest,
        "header": header,
        "form": form,
        "doc_json": dump_document(state.display),
        "slots": slots,
        "shown_errors": sorted(error_paths),
        # Slots to refresh in a fragment: those showing a message now or before this edit.
        "message_slots": sorted((error_paths | (shown_before or set())) & slots),
        "state": state,
        "outcome": outcome,
        "units": units,
        "error_list": error_list,
        "findings": outcome.findings,
    }


def sheet_page(request: Request, sheet_id: int) -> Response:
    latest = _store(request).latest(sheet_id)
    doc = latest.document
    parsed = calc_sheet.parse(doc)
    state = SheetState(latest, doc, parsed.errors, doc, parsed)
    return _render(request, "sheet.html", sheet_context(request, state), vary=True)


async def _form(request: Request) -> dict[str, str]:
    """The posted form as a dict (last value wins); a malformed or oversized form reads as empty."""
    try:
        data = await request.form(max_fields=MAX_FIELDS, max_files=0)
    except Exception:  # the multipart parser raises its own assorted errors on garbage
        return {}
    out: dict[str, str] = {}
    for key, value in data.multi_items():
        if isinstance(value, str) and len(key) <= 200:
            # The document copy may be long (the body limit bounds it); a typed value may not.
            out[key] = value if key == "doc" else value[: editing.MAX_FIELD_LENGTH]
    return out


def _note(edit: editing.Edit, action: str | None, stored: dict) -> str:
    """What an edit did, in words, for the history list."""
    words = []
    if action:
        verb, _, target = action.partition(":")
        if verb == "add" and target.startswith("elements:"):
            words.append("added a " + editing.ELEMENT_NAMES.get(target.split(":", 1)[1], "element"))
        elif verb == "add":
            words.append("added an item to " + describe(stored, target))
        else:
            words.append({"remove": "removed", "up": "moved up", "down": "moved down"}.get(verb, verb)
                         + " " + describe(stored, target))
    if edit.changed:
        shown = ", ".join(describe(stored, p) for p in edit.changed[:MAX_NOTE_PATHS])
        more = len(edit.changed) - MAX_NOTE_PATHS
        words.append("changed " + shown + (f" and {more} more" if more > 0 else ""))
    return "; ".join(words) or "saved from the sheet form"


def _apply_edit(request: Request, sheet_id: int, form: dict[str, str]) -> SheetState:
    store = _store(request)
    latest = store.latest(sheet_id)
    stored = latest.document
    try:
        base = int(form.get("base", ""))
    except ValueError:
        base = None
    action = form.get("action") or None
    fields = {k: v for k, v in form.items() if editing.split_path(k) is not None}
    drawn_from = editing.form_document(form.get("doc"), stored)
    if base != latest.number:
        # Someone else (another tab, a script) saved first: show what was typed, store nothing.
        base_doc = stored
        if base is not None and 0 < base < latest.number:
            base_doc = store.revision(sheet_id, base).document
        conflict = StaleRevision(sheet_id, base, latest)
        typed = copy.deepcopy(drawn_from)
        for path, text in fields.items():
            editing.set_field(typed, path, text)
        return SheetState(latest, typed, calc_sheet.parse(typed).errors, base_doc, stale=True,
                          conflict=conflict, message=str(conflict))
    edit = editing.edit(stored, drawn_from, fields, action)
    saved = False
    if edit.keep != stored:
        try:
            latest, saved = store.add_revision(sheet_id, edit.keep, base, "", _note(edit, action, stored))
        except StaleRevision as conflict:  # lost a race with another writer between read and write
            return SheetState(conflict.current, edit.display, edit.errors, stored, stale=True,
                              conflict=conflict, message=str(conflict))
    return SheetState(latest, edit.display, edit.errors, edit.keep, edit.keep_parsed, stale=edit.stale,
                      focus=edit.focus, message=edit.message, saved=saved, relayout=edit.switched)


async def sheet_edit(request: Request, sheet_id: int) -> Response:
    form = await _form(request)
    shown_before = {p for p in form.get("shown_errors", "").split(",") if p}
    state = await run_in_threadpool(_apply_edit, request, sheet_id, form)
    status = 409 if state.conflict else (422 if state.errors else 200)
    if not _is_htmx(request):
        if status == 200 and not state.message:
            return _redirect(request, "sheet", sheet_id=sheet_id,
                             fragment=("f-" + state.focus.replace(".", "-")) if state.focus else "")
        context = await run_in_threadpool(sheet_context, request, state)
        return _render(request, "sheet.html", context, status=status, vary=True)
    context = await run_in_threadpool(sheet_context, request, state, shown_before)
    return _render(request, "fragments/edit_response.html", context, status=status, vary=True)


# -- history --------------------------------------------------------------------------------------

def history(request: Request, sheet_id: int) -> Response:
    store = _store(request)
    return _render(request, "history.html", {"sheet": store.sheet(sheet_id), "revisions": store.revisions(sheet_id)})


def revision_page(request: Request, sheet_id: int, number: int) -> Response:
    store = _store(request)
    rev = store.revision(sheet_id, number)
    doc = rev.document
    parsed = calc_sheet.parse(doc)
    context = sheet_context(request, SheetState(rev, doc, parsed.errors, doc, parsed))
    context.update({"shown": rev, "current": store.latest(sheet_id), "readonly": True,
                    "form": FormView(doc, parsed.errors, readonly=True)})
    return _render(request, "revision.html", context)


async def restore_revision(request: Request, sheet_id: int, number: int) -> Response:
    form = await _form(request)
    store = _store(request)
    old = store.revision(sheet_id, number)
    try:
        base = int(form.get("base", ""))
    except ValueError:
        base = None
    try:
        store.add_revision(sheet_id, old.document, base, "", f"restored revision {number}")
    except StaleRevision as conflict:
        return _error(request, 409, "Conflict", str(conflict))
    return _redirect(request, "sheet", sheet_id=sheet_id)


def _error(request: Request, status: int, title: str, message: str) -> Response:
    return _render(request, "error.html", {"status": status, "title": title, "message": message, "errors": []},
                   status=status)

