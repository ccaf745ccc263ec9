"""The HTML pages: sheet list, sheet form (full page or htmx fragment), history and one revision."""

from __future__ import annotations

import copy
import hashlib
import json
import re
import secrets
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any
from urllib.parse import quote, unquote

from fastapi import Request
from fastapi.responses import RedirectResponse, Response
from starlette.concurrency import run_in_threadpool

from calc.model import sheet as calc_sheet
from server import editing, edits, revisions
from server.form import FormView, anchor, describe, slot_paths
from server.plot_routes import page_plots
from server.results import needed_values, percent, sentence
from server.store import Revision, StaleRevision, Store, dump_document
from server.web import clean_author, cookie_name

#: Most form fields a post may carry: a sheet at every list limit has about 30 000.
MAX_FIELDS = 40_000
MAX_NOTE_PATHS = 6
#: Entries not yet applied that the form names one by one before "and N more".
MAX_PENDING_SHOWN = 8
#: Changes listed in a conflict message before "and N more".
MAX_LISTED = 30


def when(iso: str | None) -> str:
    """A stored UTC time shown in the server's local time, to the minute."""
    if not iso:
        return ""
    try:
        return datetime.fromisoformat(iso).astimezone().strftime("%Y-%m-%d %H:%M")
    except ValueError:
        return iso


# Routes that touch the store are plain functions (FastAPI runs them in its threadpool), or hand
# their store work to run_in_threadpool: a write waiting for the lock must never hold up the event
# loop, and with it every other request.
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


def viewer(request: Request) -> int | None:
    """The sheet a read-only link opened, when the request came through one (server.guard)."""
    info = request.scope.get("headsheet") or {}
    return info.get("viewer")


def author_of(request: Request) -> str:
    """The name this browser gave last time (kept in a cookie), for the history of its edits."""
    return clean_author(unquote(request.cookies.get(cookie_name("author", request.scope), "")))


def editor_of(request: Request) -> tuple[str, str | None]:
    """An opaque key of this browser for grouping its saves into revisions (server.revisions), and the
    new cookie token to set when it has none yet. The store keeps a hash of the token, not the token."""
    token = request.cookies.get(cookie_name("editor", request.scope), "")
    new = None
    if not _EDITOR_TOKEN.fullmatch(token):
        token = new = secrets.token_urlsafe(18)
    return hashlib.sha256(token.encode("ascii")).hexdigest()[:24], new


_EDITOR_TOKEN = re.compile(r"[A-Za-z0-9_-]{16,64}")


def remember_editor(request: Request, response: Response, token: str | None) -> None:
    if token:
        response.set_cookie(cookie_name("editor", request.scope), token, max_age=365 * 86400,
                            httponly=True, samesite="strict")


def remember_author(request: Request, response: Response, author: str) -> None:
    if author != author_of(request):
        response.set_cookie(cookie_name("author", request.scope), quote(author), max_age=365 * 86400,
                            httponly=True, samesite="strict")


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


def duplicate_sheet(request: Request, sheet_id: int) -> Response:
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


def archive_sheet(request: Request, sheet_id: int) -> Response:
    _store(request).set_archived(sheet_id, True)
    return _redirect(request, "home")


def unarchive_sheet(request: Request, sheet_id: int) -> Response:
    _store(request).set_archived(sheet_id, False)
    return _redirect(request, "home")


# -- the sheet ------------------------------------------------------------------------------------

def _shown(value: Any) -> str:
    if editing.is_missing(value) or value is None:
        return "(none)"
    if isinstance(value, str):
        return value if value.strip() else "(empty)"
    return json.dumps(value, ensure_ascii=False)


@dataclass
class Conflict:
    """A refused edit: who changed the sheet since the form's revision, what they changed, and what was typed."""

    base: int | None  # the revision the form was drawn from (None if the form did not say)
    current: Revision  # the sheet's latest revision
    since: list[Revision]  # revisions after ``base``, newest first (the first MAX_LISTED)
    since_total: int
    theirs: list[dict]  # {path, where, before, after}: base -> current
    theirs_total: int
    yours: list[dict]  # {path, where, value, text, clash}: base -> what was typed
    yours_total: int
    reapply: bool  # the typed changes can be posted again onto the current revision as they are
    message: str


def conflict_view(store: Store, refused: StaleRevision, base_doc: dict | None, typed: dict) -> Conflict:
    """What the page says about a refused edit, so nothing typed is lost without the user seeing it."""
    current = refused.current
    current_doc = stored_document(current)  # ``base_doc`` comes with its ids too, so ids never show as a change
    base = refused.base if isinstance(refused.base, int) and 0 < refused.base < current.number else None
    since, since_total, theirs = [], 0, []
    if base is not None and base_doc is not None:
        since, since_total = store.revisions_since(current.sheet_id, base, MAX_LISTED)
        theirs = [{"path": p, "where": describe(current_doc if not editing.is_missing(b) else base_doc, p),
                   "before": _shown(a), "after": _shown(b)}
                  for p, a, b in editing.differences(base_doc, current_doc)]
    reference = base_doc if base_doc is not None else current_doc
    their_paths = {t["path"] for t in theirs}
    yours = [{"path": p, "where": describe(typed if not editing.is_missing(b) else reference, p), "value": b,
              "text": _shown(b), "clash": any(editing.related(p, q) for q in their_paths)}
             for p, a, b in editing.differences(reference, typed)]
    same_shape = editing.shape(typed) == editing.shape(reference) == editing.shape(current_doc)
    reapply = bool(yours) and same_shape and len(yours) <= MAX_LISTED and all(
        isinstance(y["value"], (str, int)) and not isinstance(y["value"], bool) for y in yours)
    for y in yours:
        y["value"] = str(y["value"]) if not editing.is_missing(y["value"]) else ""
    return Conflict(base, current, since, since_total, theirs[:MAX_LISTED], len(theirs), yours[:MAX_LISTED],
                    len(yours), reapply, str(refused))


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
    conflict: Conflict | None = None
    saved: bool = False  # this request added a revision
    relayout: bool = False  # the form's fields changed shape: send the whole form back
    pending: list = field(default_factory=list)  # paths on screen not stored yet (typed, invalid or unapplied)
    note: str | None = None  # what an action did, when it needs saying (a paste, a restored draft)
    undo: dict | None = None  # after a removal: the Undo notice's words and what its button posts (edits.undo_offer)


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
                   "anchor": anchor(field_paths, group_paths, e.path), "request": calc_sheet.is_request(e)}
                  for e in state.errors]
    # What the stored sheet still lacks: the results say the line waits for these (server.results.needed).
    needed = [{"path": e.path, "where": describe(state.keep, e.path), "message": e.message,
               "anchor": anchor(field_paths, group_paths, e.path)} for e in needed_values(outcome)]
    error_paths = {e.path for e in state.errors if e.path in slots}
    pending = [{"path": p, "where": describe(state.display if not editing.is_missing(editing.get_path(state.display, p))
                                             else state.keep, p),
                "anchor": anchor(field_paths, group_paths, p)} for p in state.pending[:MAX_PENDING_SHOWN]]
    return {
        "sheet": summary,
        "author": author_of(request),
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
        # What needs correcting: each value refused, and each value emptied that the stored sheet still has
        # (an emptied value is not applied); a value nobody has given yet is in ``needed`` instead.
        "error_list": [e for e in error_list if not e["request"] or e["path"] not in {n["path"] for n in needed}],
        "needed": needed,
        "pending": pending,
        "pending_total": len(state.pending),
        "findings": outcome.findings,
        "issue": issue_labels(store, state.latest, header),
        # The plots beside the results (server/plot_routes.py), drawn from the same cached analysis.
        "plots": page_plots(outcome, units),
        # The results panel's wording helpers (server.results): one sentence from parts, a share as a percentage.
        "sentence": sentence,
        "percent": percent,
    }


def stored_document(rev: Revision) -> dict:
    """A stored revision's document as the form edits it: every element with its stable id (a sheet
    stored without ids gets them by order, the same each time, so two such revisions match)."""
    return calc_sheet.form_ready(rev.document)


def history_of(store: Store, sheet_id: int, document: Any = None) -> list[revisions.Group]:
    """The sheet's revisions, oldest first, labelled in the scheme its header (of ``document``) asks for."""
    return revisions.group(store.marks(sheet_id), revisions.scheme_of(document))


def issue_labels(store: Store, rev: Revision, header: dict) -> dict:
    """How ``rev`` is named (A.3, or B once signed), and the label the next edit starts when ``rev`` is
    signed: signing freezes a revision, and later edits begin the next one. ``labels`` names every save."""
    scheme = revisions.scheme_of({"header": header})
    groups = revisions.group(store.marks(rev.sheet_id), scheme)
    names = revisions.labels(groups)
    return {"label": names.get(rev.number, f"save {rev.number}"), "frozen": rev.frozen,
            "next": revisions.next_label(groups, scheme), "labels": names}


def page_extras(request: Request, sheet_id: int) -> dict:
    """What only the whole sheet page shows: its read-only links."""
    store = _store(request)
    people = {a.id: a for a in store.accounts()}
    links = [{"link": link, "urls": view_urls(request, link.token), "reviewer": people.get(link.account_id)}
             for link in store.view_links(sheet_id)]
    return {"links": links, "reviewers": [a for a in people.values() if a.enabled]}


def view_urls(request: Request, token: str) -> list[str]:
    """The addresses of a read-only link that a colleague can open.

    A page opened on the server itself (127.0.0.1) would give a loopback address, useless to
    anyone else, so a shared server lists its network addresses instead.
    """
    path = str(request.app.url_path_for("view_link", token=token))
    host = request.url.hostname or ""
    addresses = getattr(request.app.state, "addresses", [])
    if addresses and (host in ("127.0.0.1", "localhost", "::1") or host.startswith("127.")):
        port = request.url.port
        scheme = request.url.scheme  # https when the server has a certificate: the link must keep it
        return [f"{scheme}://{a}{f':{port}' if port else ''}{path}" for a in addresses]
    return [str(request.base_url).rstrip("/") + path]


def sheet_page(request: Request, sheet_id: int) -> Response:
    latest = _store(request).latest(sheet_id)
    doc = stored_document(latest)  # the form carries each element's id from its first edit on
    parsed = calc_sheet.parse(doc)
    state = SheetState(latest, doc, parsed.errors, doc, parsed)
    context = sheet_context(request, state)
    if viewer(request) is not None:
        # A read-only link: the same sheet and results, with no control that could change them.
        context.update({"readonly": True, "form": FormView(doc, parsed.errors, readonly=True)})
        return _render(request, "view.html", context)
    context.update(page_extras(request, sheet_id))
    return _render(request, "sheet.html", context, vary=True)


async def _form(request: Request) -> dict[str, str]:
    """The posted form as a dict (last value wins); a malformed or oversized form reads as empty."""
    try:
        data = await request.form(max_fields=MAX_FIELDS, max_files=0)
    except Exception:  # the multipart parser raises its own assorted errors on garbage
        return {}
    out: dict[str, str] = {}
    for key, value in data.multi_items():
        if isinstance(value, str) and len(key) <= 200:
            # The document copy and a pasted table may be long (the body limit bounds them, and the
            # paste reader refuses a long one with a message); a typed value may not.
            out[key] = value if key in ("doc", "paste", "undo_item") else value[: editing.MAX_FIELD_LENGTH]
    return out


def _note(edit: edits.Edit, action: str | None, stored: dict) -> str:
    """What an edit did, in words, for the history list."""
    words = []
    if action:
        verb, _, target = action.partition(":")
        if verb in ("paste", "import"):
            where = describe(stored, ".".join(target.split(".")[:3]))
            words.append(("imported a file into " if verb == "import" else "pasted rows into ") + where)
        elif verb == "restore":
            words.append("entries restored from this browser after a reload")
        elif verb == "undo":
            words.append("undid a removal: put back " + describe(edit.keep, target))
        elif verb == "add" and target.startswith("elements:"):
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


def _apply_edit(request: Request, sheet_id: int, form: dict[str, str], author: str = "",
                editor: str = "") -> SheetState:
    store = _store(request)
    latest = store.latest(sheet_id)
    stored = stored_document(latest)
    try:
        base = int(form.get("base", ""))
    except ValueError:
        base = None
    action = form.get("action") or None
    fields = {k: v for k, v in form.items() if editing.split_path(k) is not None}
    drawn_from = calc_sheet.form_ready(edits.form_document(form.get("doc"), stored))
    restored_note = None
    if action == "restore" and base is not None and 0 < base < latest.number:
        # What this browser kept of a page reloaded after the sheet moved on: its entries go onto the
        # latest revision when they touch nothing changed since, else the conflict says what differs.
        moved_on = _restore_onto(stored_document(store.revision(sheet_id, base)), stored, drawn_from, fields)
        if moved_on is not None:
            fields, drawn_from, base = moved_on, copy.deepcopy(stored), latest.number
            restored_note = (f"Restored what was typed in this browser before the page was reloaded, onto "
                             f"revision {latest.number} (saved since)." if moved_on else "")
    if base != latest.number:
        # Someone else (another tab, a script) saved first: show what was typed, store nothing.
        base_doc = stored
        if base is not None and 0 < base < latest.number:
            base_doc = stored_document(store.revision(sheet_id, base))
        refused = StaleRevision(sheet_id, base, latest)
        typed = copy.deepcopy(drawn_from)
        for path, text in fields.items():
            editing.set_field(typed, path, text)
        known = base is not None and 0 < base < latest.number
        conflict = conflict_view(store, refused, base_doc if known else None, typed)
        return SheetState(latest, typed, calc_sheet.parse(typed).errors, base_doc, stale=True,
                          conflict=conflict, message=conflict.message)
    edit = edits.edit(stored, drawn_from, fields, action, paste_text=form.get("paste", ""),
                        units=placeholder_units, undo_item=form.get("undo_item", ""),
                        undo_check=form.get("undo_check", ""))
    calc_sheet.form_ready(edit.keep)  # an element added (or copied) gets its id as it is stored
    calc_sheet.form_ready(edit.display)
    saved = False
    if edit.keep != stored:
        try:
            latest, saved = store.add_revision(sheet_id, edit.keep, base, author, _note(edit, action, stored),
                                               editor=editor if action != "restore" else "")
        except StaleRevision as refused:  # lost a race with another writer between read and write
            conflict = conflict_view(store, refused, stored, edit.display)
            return SheetState(refused.current, edit.display, edit.errors, stored, stale=True,
                              conflict=conflict, message=conflict.message)
    note = edit.note
    pending = edit.pending
    if action == "restore":
        if restored_note is not None:
            note = restored_note or None
        elif pending:
            note = "Restored what was typed in this browser before the page was reloaded; it is not saved yet."
        elif saved:
            note = "Restored and saved what was typed in this browser before the page was reloaded."
    return SheetState(latest, edit.display, edit.errors, edit.keep, edit.keep_parsed, stale=edit.stale,
                      focus=edit.focus, message=edit.message, saved=saved, relayout=edit.switched,
                      pending=pending, note=note, undo=edit.undo)


def placeholder_units(doc: dict) -> dict[str, str]:
    """The unit each quantity field of ``doc``'s form shows in its placeholder ('e.g. 420 m' -> 'm')."""
    out = {}
    for f in FormView(doc).all_fields():
        if f.spec.kind == "qty":
            unit = editing.example_unit(f.example)
            if unit:
                out[f.path] = unit
    return out


def _restore_onto(base_doc: dict, current: dict, drawn_from: dict, fields: dict[str, str]) -> dict[str, str] | None:
    """The fields to post onto ``current`` for what a browser typed over ``base_doc``, or None when they
    cannot go on as they are (the lists differ, or a field typed was changed there too)."""
    typed = copy.deepcopy(drawn_from)
    for path, text in fields.items():
        editing.set_field(typed, path, text)
    if not editing.shape(typed) == editing.shape(base_doc) == editing.shape(current):
        return None
    # What the browser typed that the sheet does not hold already (its own saves count as held).
    mine = [d for d in editing.differences(base_doc, typed) if editing.get_path(current, d[0]) != d[2]]
    theirs = [p for p, _, _ in editing.differences(base_doc, current)]
    if not mine:
        return {}
    if any(editing.related(p, q) for p, _, _ in mine for q in theirs):
        return None
    if not all(isinstance(v, (str, int)) and not isinstance(v, bool) for _, _, v in mine):
        return None
    return {p: str(v) for p, _, v in mine}


async def sheet_edit(request: Request, sheet_id: int) -> Response:
    form = await _form(request)
    shown_before = {p for p in form.get("shown_errors", "").split(",") if p}
    author = clean_author(form["author"]) if "author" in form else author_of(request)
    editor, new_token = editor_of(request)
    state = await run_in_threadpool(_apply_edit, request, sheet_id, form, author, editor)
    # Refused (422): a value typed that does not parse, or an entry not stored (a stored value emptied). A
    # sheet that only lacks values nobody has given yet is not refused: it asks for them.
    refused = state.pending or any(not calc_sheet.is_request(e) for e in state.errors)
    status = 409 if state.conflict else (422 if refused else 200)
    if not _is_htmx(request):
        if status == 200 and not state.message and not state.undo:
            response = _redirect(request, "sheet", sheet_id=sheet_id,
                                 fragment=("f-" + state.focus.replace(".", "-")) if state.focus else "")
        else:
            response = await run_in_threadpool(_edit_page, request, sheet_id, state, author, status)
    else:
        response = await run_in_threadpool(_edit_fragment, request, state, shown_before, status)
    remember_author(request, response, author)
    remember_editor(request, response, new_token)
    return response


def _edit_page(request: Request, sheet_id: int, state: SheetState, author: str, status: int) -> Response:
    """The whole sheet page after an edit that has something to say (for a browser without htmx)."""
    context = sheet_context(request, state)
    context["author"] = author
    context.update(page_extras(request, sheet_id))
    return _render(request, "sheet.html", context, status=status, vary=True)


def _edit_fragment(request: Request, state: SheetState, shown_before: set[str], status: int) -> Response:
    """The htmx answer to an edit: the parts of the page it changed."""
    context = sheet_context(request, state, shown_before)
    return _render(request, "fragments/edit_response.html", context, status=status, vary=True)


# -- history --------------------------------------------------------------------------------------

def history(request: Request, sheet_id: int) -> Response:
    store = _store(request)
    latest = store.latest(sheet_id)
    groups = history_of(store, sheet_id, latest.document)
    rows = []
    for i, g in enumerate(groups):
        notes, more = g.notes()
        rows.append({"group": g, "notes": notes, "more_notes": more,
                     "previous": groups[i - 1] if i else None,
                     "authors": list(dict.fromkeys(m.author for m in g.saves if m.author))})
    rows.reverse()
    return _render(request, "history.html", {"sheet": store.sheet(sheet_id), "rows": rows, "latest": latest,
                                             "pause_minutes": round(revisions.PAUSE / 60),
                                             "readonly": viewer(request) is not None})


def revision_page(request: Request, sheet_id: int, number: int) -> Response:
    store = _store(request)
    rev = store.revision(sheet_id, number)
    doc = rev.document
    parsed = calc_sheet.parse(doc)
    context = sheet_context(request, SheetState(rev, doc, parsed.errors, doc, parsed))
    context.update({"shown": rev, "current": store.latest(sheet_id), "readonly": True,
                    "labels": context["issue"]["labels"],
                    "viewer": viewer(request) is not None, "form": FormView(doc, parsed.errors, readonly=True)})
    return _render(request, "revision.html", context)


async def restore_revision(request: Request, sheet_id: int, number: int) -> Response:
    form = await _form(request)
    try:
        base = int(form.get("base", ""))
    except ValueError:
        base = None
    return await run_in_threadpool(_restore, request, sheet_id, number, base)


def _restore(request: Request, sheet_id: int, number: int, base: int | None) -> Response:
    store = _store(request)
    old = store.revision(sheet_id, number)
    try:
        said = revisions.save_label(history_of(store, sheet_id, old.document), number)
        store.add_revision(sheet_id, old.document, base, author_of(request), f"restored revision {said}")
    except StaleRevision as conflict:
        return _error(request, 409, "Conflict", str(conflict))
    return _redirect(request, "sheet", sheet_id=sheet_id)


def _error(request: Request, status: int, title: str, message: str) -> Response:
    return _render(request, "error.html", {"status": status, "title": title, "message": message, "errors": []},
                   status=status)

