"""The calculation record in the browser and as PDF, its sign-off, the verify page and the comparison of two revisions."""

from __future__ import annotations

import base64
import json
import logging
import re
from datetime import datetime, timezone
from functools import lru_cache
from pathlib import Path
from typing import Any

from fastapi import Request
from fastapi.responses import JSONResponse, RedirectResponse, Response
from pydantic import BaseModel, Field
from starlette.concurrency import run_in_threadpool

from calc import record as calc_record
from calc.analysis import Analysis, analyse
from calc.record import fingerprint as fp
from server import accounts, pdf, revisions, web
from server.accounts import AccountRefused, Accounts
from server.store import Revision, SheetNotFound, SignOffRefused, Store

log = logging.getLogger("headsheet.record")

MAX_COMMENT = 500
#: Shortest fingerprint prefix the verify page accepts: 16 hex digits, 64 bits, no accidental match.
MIN_PREFIX = 16
#: Revisions fingerprinted per verify request when a fingerprint is not yet indexed.
INDEX_BATCH = 500
TITLE_RUNNING = 90  # characters of the title in the running header
STATIC = Path(__file__).resolve().parents[1] / "static"


def _store(request: Request) -> Store:
    return request.app.state.store


@lru_cache(maxsize=32)
def _analysis(document_json: str) -> Analysis:
    """The analysis of a stored revision, by its exact text: a record and its PDF solve once."""
    return analyse(json.loads(document_json))


def _url(request: Request, name: str, **params) -> str:
    return request.scope.get("root_path", "") + str(request.app.url_path_for(name, **params))


def _now() -> str:
    """The print date (a day, not a time: the same revision printed twice on one day is the same file; the
    revision itself is identified by its date and fingerprint)."""
    return datetime.now(timezone.utc).date().isoformat()


def verify_address(request: Request, fprint: str) -> str:
    """The verify page's full address as printed on the record.

    A record opened through a read-only link (the server marks the request as a viewer's) must
    not print the link's secret path on paper: the address is then the server's own.
    """
    root = request.scope.get("root_path", "")
    if (request.scope.get("headsheet") or {}).get("viewer") is not None:
        root = ""
    path = str(request.app.url_path_for("verify_one", fingerprint=fprint))
    return f"{request.url.scheme}://{request.url.netloc}{root}{path}"


def _with_versions(store: Store, rev: Revision) -> list[dict]:
    """The revision's signatures, each with the program version its fingerprint was made under.

    Signatures made before the version was stored with them take it from the fingerprints the
    store noted for the revision (a record is fingerprinted whenever it is opened or signed).
    """
    sigs = store.signatures(rev.sheet_id, rev.number)
    for sig in sigs:
        if not sig["version"]:
            known = [f["version"] for f in store.find_fingerprint(sig["fingerprint"])
                     if f["sheet_id"] == rev.sheet_id and f["number"] == rev.number]
            sig["version"] = known[0] if known else ""
    return sigs


def build_record(request: Request, rev: Revision, remember: bool = True) -> tuple[calc_record.Record, Analysis]:
    """The record of a stored revision, with its label, signatures and verify address; notes its fingerprint."""
    store = _store(request)
    analysis = _analysis(rev.document_json)
    groups = revisions.group(store.marks(rev.sheet_id), revisions.scheme_of(rev.document))
    found = revisions.find(groups, rev.number)
    index = found[0].issue if found else 0  # how many issues were signed before this revision
    version = fp.program_version()
    fprint = fp.fingerprint(analysis, version)
    meta = calc_record.Meta(
        sheet_id=rev.sheet_id, store_revision=rev.number, label_index=index,
        label=revisions.save_label(groups, rev.number), created=rev.created,
        printed=_now(), frozen=rev.frozen, signatures=_with_versions(store, rev),
        verify_url=verify_address(request, fprint),
    )
    rec = calc_record.build(analysis, meta, version)
    if remember:
        store.remember_fingerprint(rec.fingerprint, rev.sheet_id, rev.number, version)
    return rec, analysis


def record_context(request: Request, sheet_id: int, number: int, *, for_pdf: bool = False, paper: str = "a4",
                   message: str | None = None, message_kind: str = "info", form: dict | None = None) -> dict:
    """The one context of the record page and of its PDF."""
    store = _store(request)
    rev = store.revision(sheet_id, number)
    latest = store.latest(sheet_id)
    summary = store.sheet(sheet_id)
    rec, analysis = build_record(request, rev)
    scheme = rec.header["revision_scheme"]
    next_label = revisions.label(store.frozen_before(sheet_id, number) + 1, 1, scheme)
    signed_roles = [s.role for s in rec.signoff if s.done]
    link = link_of(request)
    reviewer = store.account_by_id(link.account_id) if link and link.account_id is not None else None
    next_role = next((r for r in calc_record.ROLES if r not in signed_roles), None)
    if for_pdf:
        def asset(path: str) -> str:
            return f"{pdf.ASSET_ORIGIN}/static/{path}"
    else:
        def asset(path: str) -> str:
            return _url(request, "static", path=path)
    title = rec.header["title"] or "(untitled sheet)"
    return {
        "r": rec,
        "sheet": summary,
        "revision": rev,
        "latest": latest,
        "next_label": next_label,
        "draft": not rec.signed,
        "next_role": next_role if analysis.ok else None,
        "role_titles": calc_record.ROLE_TITLES,
        "severity_titles": calc_record.SEVERITY_TITLES,
        "for_pdf": for_pdf,
        "paper": paper,
        "paper_size": pdf.PAPERS.get(paper, "A4"),
        "asset": asset,
        "title_running": title if len(title) <= TITLE_RUNNING else title[: TITLE_RUNNING - 1] + "…",
        "message": message,
        "message_kind": message_kind,
        "form": form or {},
        "link": link,
        "link_login": reviewer.login if reviewer else "",
        "accounts_exist": store.account_count() > 0,
        "max_comment": MAX_COMMENT,
    }


def _render(request: Request, template: str, context: dict, status: int = 200) -> Response:
    return request.app.state.templates.TemplateResponse(request, template, context, status_code=status)


def _error_page(request: Request, status: int, title: str, message: str) -> Response:
    return _render(request, "error.html", {"status": status, "title": title, "message": message, "errors": []}, status)


def _json_error(status: int, title: str, message: str, errors: list | None = None) -> JSONResponse:
    return JSONResponse({"ok": False, "status": status, "title": title, "message": message, "errors": errors or []},
                        status_code=status)


# -- the record -----------------------------------------------------------------------------------

def latest_record(request: Request, sheet_id: int) -> Response:
    latest = _store(request).latest(sheet_id)
    return RedirectResponse(_url(request, "record", sheet_id=sheet_id, number=latest.number), status_code=303)


async def record_page(request: Request, sheet_id: int, number: int) -> Response:
    refusal = refusal_of(request, sheet_id, number)  # a signature just refused: shown once, beside its field
    if refusal is None:
        context = await run_in_threadpool(record_context, request, sheet_id, number)
    else:
        context = await run_in_threadpool(record_context, request, sheet_id, number, message=refusal["message"],
                                          message_kind="error", form=refusal["form"])
    response = _render(request, "record.html", context)
    if refusal_cookie(request) in request.cookies:
        response.delete_cookie(refusal_cookie(request), path=_url(request, "record", sheet_id=sheet_id, number=number),
                               httponly=True, samesite="strict")
    return response


def safe_filename(text: str, fallback: str) -> str:
    """A file name from user text: letters, digits, dot, dash and underscore only.

    >>> safe_filename('GA/H "001"\\r\\n', "sheet-1")
    'GA-H-001'
    """
    name = re.sub(r"[^A-Za-z0-9._-]+", "-", text).strip("-.")[:80]
    return name or fallback


def render_record_pdf(request: Request, sheet_id: int, number: int, paper: str,
                      fetcher: pdf.StaticFetcher | None = None) -> tuple[bytes, dict]:
    """The PDF bytes of a revision's record and the context it was drawn from."""
    context = record_context(request, sheet_id, number, for_pdf=True, paper=paper)
    html = request.app.state.templates.env.get_template("record.html").render({**context, "request": request})
    return pdf.render_pdf(html, STATIC, fetcher), context


def _has_record(request: Request, sheet_id: int, number: int) -> bool:
    return _analysis(_store(request).revision(sheet_id, number).document_json).ok


async def record_pdf(request: Request, sheet_id: int, number: int, paper: str = "a4") -> Response:
    if paper not in pdf.PAPERS:
        return _error_page(request, 422, "Invalid input", "Paper must be a4 or letter.")
    if not await run_in_threadpool(_has_record, request, sheet_id, number):
        return _error_page(request, 422, "No record",
                           "This revision has input errors, so it has no record. Fix the sheet first.")
    try:
        body, context = await run_in_threadpool(render_record_pdf, request, sheet_id, number, paper)
    except pdf.PdfRefused as refused:
        return _error_page(request, refused.status, "No PDF", str(refused))
    r = context["r"]
    name = safe_filename(f"{r.header['calc_number']}-rev-{r.header['revision']}", f"sheet-{sheet_id}-rev-{number}")
    return Response(body, media_type="application/pdf",
                    headers={"Content-Disposition": f'attachment; filename="{name}.pdf"'})


# -- sign-off -------------------------------------------------------------------------------------

def accounts_of(request: Request) -> Accounts:
    """The server's account rules (made on first use, over the app's store)."""
    state = request.app.state
    found = getattr(state, "accounts", None)
    if found is None:
        found = state.accounts = Accounts(state.store)
    return found


def client_of(request: Request) -> str:
    return request.client.host if request.client else ""


def link_of(request: Request):
    """The read-only link this request came through, or None for the server's own pages."""
    info = request.scope.get("headsheet") or {}
    if info.get("viewer") is None:
        return None
    token = info.get("view_prefix", "").rsplit("/", 1)[-1]
    return _store(request).view_link(token)


class SignatureRefused(SignOffRefused):
    """A refused signature, naming the form field at fault (for the message beside it)."""

    def __init__(self, status: int, message: str, field: str = ""):
        super().__init__(status, message)
        self.field = field


def sign(request: Request, sheet_id: int, number: int, role: str, login: str, password: str, comment: str,
         seen: str | None) -> dict:
    """Confirm the signer's identity and store one signature; raises SignOffRefused with the status to answer.

    The signer is the account whose login and password are given, and the role must be one that
    account may sign in. Through a read-only link, only the reviewer the link was made for signs,
    in the link's role; a link made for nobody is for viewing only.
    """
    store = _store(request)
    rev = store.revision(sheet_id, number)
    if role not in calc_record.ROLES:
        raise SignatureRefused(422, "Choose a role: preparer, checker or approver.", "role")
    if len(comment) > MAX_COMMENT:
        raise SignatureRefused(422, f"A comment may be at most {MAX_COMMENT} characters.", "comment")
    link = link_of(request)
    if link is not None:
        if link.account_id is None:
            raise SignatureRefused(403, "This read-only link is for viewing: it was not made for a reviewer, so "
                                        "nobody signs through it. Ask for a link made for you and your role.")
        reviewer = store.account_by_id(link.account_id)
        if role != link.role or reviewer is None or accounts.normal_login(login) != reviewer.login:
            who = reviewer.login if reviewer else "its reviewer"
            raise SignatureRefused(403, f"This link was made for '{who}' to sign as {link.role}: it signs only "
                                        "as that person, in that role.", "login")
    if store.account_count() == 0:
        raise SignatureRefused(409, "Signing needs an account on this server, and there is none yet. Make the first "
                                    "one on the Accounts page (from this computer) or with "
                                    "'headsheet accounts add'.")
    try:
        signer = accounts_of(request).signer(login, password, role, client_of(request))
    except AccountRefused as refused:
        raise SignatureRefused(refused.status, str(refused), refused.field) from None
    analysis = _analysis(rev.document_json)
    if not analysis.ok:
        raise SignatureRefused(422, "This revision has input errors, so it has no record to sign.")
    version = fp.program_version()
    current = fp.fingerprint(analysis, version)
    if seen is not None and fp.normalise(seen) != current:
        raise SignatureRefused(409, "The record has changed since it was opened (its fingerprint differs): "
                                    "read it again before signing.")
    store.remember_fingerprint(current, sheet_id, number, version)
    return store.sign(sheet_id, number, role, signer, comment.strip(), current, version, accounts.IDENTIFIED)


SIGN_FIELDS = ("role", "login", "password", "comment", "fingerprint")


async def sign_form(request: Request, sheet_id: int, number: int) -> Response:
    try:
        data = await request.form(max_fields=20, max_files=0)
    except Exception:  # a malformed form reads as empty
        data = {}
    form = {k: (data.get(k) if isinstance(data.get(k), str) else "") for k in SIGN_FIELDS}
    try:
        await run_in_threadpool(sign, request, sheet_id, number, form["role"], form["login"][:200],
                                form["password"][:1000], form["comment"][:5000], form["fingerprint"])
    except SignOffRefused as refused:
        # Back to the record page's own address (never the POST's, which a reload would post again), the
        # refusal and what was typed carried for one showing (refusal_of); the password is never sent back.
        response = RedirectResponse(_url(request, "record", sheet_id=sheet_id, number=number) + "#sign-off",
                                    status_code=303)
        typed = {"role": form["role"][:20], "login": form["login"][:200], "comment": form["comment"][:MAX_COMMENT],
                 "field": getattr(refused, "field", "")}
        remember_refusal(request, response, sheet_id, number, str(refused), typed)
        return response
    return RedirectResponse(_url(request, "record", sheet_id=sheet_id, number=number) + "#sign-off", status_code=303)


#: How long a refused signature's message waits for the page it is shown on [s]: the redirect's own GET.
REFUSAL_MAX_AGE = 120
#: Longest cookie value a browser is sure to keep [bytes] (RFC 6265 asks at least 4096 for name and value).
REFUSAL_MAX_BYTES = 3800


def refusal_cookie(request: Request) -> str:
    return web.cookie_name("signrefused", request.scope)


def _refusal_signer(request: Request):
    return request.app.state.sharing.signer


def remember_refusal(request: Request, response: Response, sheet_id: int, number: int, message: str,
                     typed: dict) -> None:
    """Carry a refused signature to the record page the refusal redirects to: a short-lived cookie,
    signed by this server (so nobody can plant words in it) and bound to that revision's page."""
    def encoded(fields: dict) -> str:
        raw = json.dumps({"sheet": sheet_id, "number": number, "message": message[:1000], **fields},
                         ensure_ascii=False).encode("utf-8", "replace")
        return base64.urlsafe_b64encode(raw).decode("ascii").rstrip("=")

    payload = encoded(typed)
    if len(payload) > REFUSAL_MAX_BYTES:  # a long comment in wide characters: keep the message, drop the comment
        payload = encoded({**typed, "comment": ""})
    token = _refusal_signer(request).timed_token("sign-refused", payload)
    response.set_cookie(refusal_cookie(request), f"{payload}~{token}", max_age=REFUSAL_MAX_AGE,
                        path=_url(request, "record", sheet_id=sheet_id, number=number), httponly=True,
                        samesite="strict")


def refusal_of(request: Request, sheet_id: int, number: int) -> dict | None:
    """The refused signature this page was redirected with (``{"message", "form"}``), or None."""
    value = request.cookies.get(refusal_cookie(request))
    if not value or value.count("~") != 1 or len(value) > 4096:
        return None
    payload, token = value.split("~")
    if not _refusal_signer(request).valid_timed("sign-refused", token, REFUSAL_MAX_AGE, payload):
        return None
    try:
        data = json.loads(base64.urlsafe_b64decode(payload + "=" * (-len(payload) % 4)))
    except ValueError:
        return None
    if not isinstance(data, dict) or data.get("sheet") != sheet_id or data.get("number") != number:
        return None
    form = {k: str(data.get(k) or "") for k in ("role", "login", "comment", "field")}
    return {"message": str(data.get("message") or ""), "form": form}


class SignIn(BaseModel):
    role: str = Field(description="preparer, checker or approver; they sign in that order")
    login: str = Field(max_length=200, description="the signer's account on this server")
    password: str = Field(max_length=1000, description="the signer's password, confirming this signature")
    comment: str = Field("", max_length=MAX_COMMENT)
    fingerprint: str | None = Field(None, description="the fingerprint the signer read; 409 if the record differs")


def _record_json(request: Request, rev: Revision) -> dict:
    rec, analysis = build_record(request, rev)
    return {"sheet_id": rev.sheet_id, "revision": rev.number, "label": rec.header["revision"],
            "frozen": rev.frozen, "signed": rec.signed, "ok": analysis.ok, "fingerprint": rec.fingerprint,
            "version": rec.version, "verify_url": rec.verify_url,
            "signatures": [{"role": s.role, "name": s.name, "initials": s.initials, "login": s.login,
                            "comment": s.comment, "signed": s.signed, "status": s.status, "identified": s.how}
                           for s in rec.signoff if s.done]}


def _record_of(request: Request, sheet_id: int, number: int) -> dict:
    return _record_json(request, _store(request).revision(sheet_id, number))


async def api_record(request: Request, sheet_id: int, number: int) -> Response:
    return JSONResponse(await run_in_threadpool(_record_of, request, sheet_id, number))


async def api_sign(request: Request, sheet_id: int, number: int, body: SignIn) -> Response:
    try:
        await run_in_threadpool(sign, request, sheet_id, number, body.role, body.login, body.password, body.comment,
                                body.fingerprint)
    except SignOffRefused as refused:
        title = {409: "Conflict", 401: "Not identified", 403: "Not allowed", 429: "Too many tries"}.get(
            refused.status, "Invalid input")
        field = getattr(refused, "field", "")
        return _json_error(refused.status, title, str(refused),
                           [{"path": field, "message": str(refused)}] if field else [])
    return JSONResponse(await run_in_threadpool(_record_of, request, sheet_id, number), status_code=201)


# -- verify ---------------------------------------------------------------------------------------

def _index_missing(store: Store, version: str) -> int:
    """Fingerprint revisions not yet fingerprinted by this version (a record never opened, or an old version's)."""
    revs = store.revisions_without_fingerprint(version, INDEX_BATCH)
    for rev in revs:
        store.remember_fingerprint(fp.fingerprint(_analysis(rev.document_json), version), rev.sheet_id, rev.number,
                                   version)
    return len(revs)


def verify(request: Request, typed: str) -> dict:
    """Matches of a typed fingerprint, each with its revision, label, signatures and whether it is current."""
    store = _store(request)
    text = fp.normalise(typed)
    if not text:
        return {"typed": typed, "problem": None, "matches": [], "asked": False}
    if any(c not in "0123456789abcdef" for c in text) or not MIN_PREFIX <= len(text) <= 64:
        return {"typed": typed, "asked": True, "matches": [],
                "problem": (f"A fingerprint is 64 characters, the digits 0-9 and letters a-f. Type it whole, "
                            f"or at least its first {MIN_PREFIX} characters (spaces do not matter).")}
    found = store.find_fingerprint(text)
    if not found and _index_missing(store, fp.program_version()):
        found = store.find_fingerprint(text)
    matches = []
    for f in found:
        try:
            rev = store.revision(f["sheet_id"], f["number"])
            summary = store.sheet(f["sheet_id"])
        except SheetNotFound:
            continue
        rec, _ = build_record(request, rev, remember=False)
        matches.append({"fingerprint": f["fingerprint"], "grouped": fp.grouped(f["fingerprint"]),
                        "version": f["version"], "sheet": summary, "revision": rev, "label": rec.header["revision"],
                        "record": rec, "current": rec.fingerprint == f["fingerprint"],
                        "latest": store.latest(rev.sheet_id).number == rev.number})
    return {"typed": typed, "problem": None, "matches": matches, "asked": True, "whole": len(text) == 64}


async def verify_page(request: Request, fingerprint: str = "") -> Response:
    context = await run_in_threadpool(verify, request, fingerprint[:200])
    return _render(request, "verify.html", context)


async def verify_one(request: Request, fingerprint: str) -> Response:
    return await verify_page(request, fingerprint)


# -- compare --------------------------------------------------------------------------------------

def compare(request: Request, sheet_id: int, a: int | None, b: int | None) -> dict:
    """Two saves side by side: by default the latest revision against the last signed one before it
    (or the revision before it). The choices are the revisions as the history lists them."""
    store = _store(request)
    latest = store.latest(sheet_id)
    groups = revisions.group(store.marks(sheet_id), revisions.scheme_of(latest.document))
    names = revisions.labels(groups)  # every save by its number
    if b is None or b not in names:
        b = latest.number
    if a is None or a not in names:
        before = [g for g in groups if g.number < b]
        signed = [g for g in before if g.frozen]
        a = (signed or before or groups)[-1].number
    rev_a, rev_b = store.revision(sheet_id, a), store.revision(sheet_id, b)
    an_a, an_b = _analysis(rev_a.document_json), _analysis(rev_b.document_json)
    doc_b = rev_b.document
    header = doc_b.get("header") if isinstance(doc_b.get("header"), dict) else {}
    system = header.get("units") if header.get("units") in ("SI", "US") else "SI"
    choices = list(reversed(groups))
    shown = {g.number for g in choices}
    for n in (a, b):  # a save inside a revision (from an address) is offered as itself
        found = revisions.find(groups, n) if n not in shown else None
        if found:
            choices.append(revisions.Group([m for m in found[0].saves if m.number == n], names[n]))
    return {
        "sheet": store.sheet(sheet_id),
        "choices": choices,
        "label_a": names[a],
        "label_b": names[b],
        "a": rev_a,
        "b": rev_b,
        "changes": calc_record.input_changes(rev_a.document, doc_b),
        "results": calc_record.compare(an_a, an_b, system),
        "errors_a": [e.message for e in an_a.errors],
        "errors_b": [e.message for e in an_b.errors],
        "system": system,
    }


def _value(v: Any) -> str:
    if v is None:
        return "(none)"
    if isinstance(v, str):
        return v if v.strip() else "(empty)"
    return json.dumps(v, ensure_ascii=False)


async def compare_page(request: Request, sheet_id: int, a: int | None = None, b: int | None = None) -> Response:
    context = await run_in_threadpool(compare, request, sheet_id, a, b)
    context["show"] = _value
    return _render(request, "compare.html", context)


# -- routes ---------------------------------------------------------------------------------------

_API_DOCS = {
    "api_record": {"summary": "A revision's record: label, fingerprint, signatures", "tags": ["record"]},
    "api_sign": {"summary": "Sign a revision as preparer, checker or approver", "tags": ["record"],
                 "status_code": 201,
                 "responses": {409: {"description": "already signed, out of order, superseded, or the record "
                                                    "differs from the fingerprint given"},
                               422: {"description": "no such role, no name, the checker is the preparer, or "
                                                    "the revision has input errors"}}},
}

#: The record's routes: (path, name, methods, endpoint, in the API schema).
ROUTES: list[tuple[str, str, list[str], Any, bool]] = [
    ("/sheets/{sheet_id:int}/record", "record_latest", ["GET"], latest_record, False),
    ("/sheets/{sheet_id:int}/revisions/{number:int}/record", "record", ["GET"], record_page, False),
    ("/sheets/{sheet_id:int}/revisions/{number:int}/record.pdf", "record_pdf", ["GET"], record_pdf, False),
    ("/sheets/{sheet_id:int}/revisions/{number:int}/signatures", "record_sign", ["POST"], sign_form, False),
    ("/sheets/{sheet_id:int}/compare", "compare", ["GET"], compare_page, False),
    ("/verify", "verify", ["GET"], verify_page, False),
    ("/verify/{fingerprint}", "verify_one", ["GET"], verify_one, False),
    ("/api/sheets/{sheet_id}/revisions/{number}/record", "api_record", ["GET"], api_record, True),
    ("/api/sheets/{sheet_id}/revisions/{number}/signatures", "api_sign", ["POST"], api_sign, True),
]

router = web.router_of(ROUTES, _API_DOCS)
