"""The JSON API for scripts: list, read, create and replace sheets, read revisions, and solve a document unstored."""

from __future__ import annotations

import base64
import hashlib
import json
from typing import Any

from fastapi import Request
from fastapi.responses import HTMLResponse, JSONResponse, Response
from markupsafe import escape
from pydantic import BaseModel, Field

from calc.model import sheet as calc_sheet
from calc.model.schema import SCHEMA
from server import revisions
from server.editing import json_problem
from server.results import solve_parsed
from server.store import Revision, SheetSummary, StaleRevision, Store
from server.web import content_security_policy

MAX_NOTE = 500


class FieldError(BaseModel):
    path: str = Field(description="dotted path of the field in the document, e.g. elements.2.length")
    message: str
    value: Any = None


class ErrorOut(BaseModel):
    ok: bool = False
    status: int
    title: str
    message: str
    errors: list[FieldError] = []


class ConflictOut(ErrorOut):
    current_revision: int = Field(description="the sheet's latest revision; read it, reapply the change, retry")


class SheetSummaryOut(BaseModel):
    id: int
    title: str
    calc_number: str
    project: str
    revision: int = Field(description="number of the latest revision")
    changed: str = Field(description="time of the latest revision (ISO 8601, UTC)")
    created: str
    archived: bool


class SheetListOut(BaseModel):
    sheets: list[SheetSummaryOut]


class SheetOut(BaseModel):
    id: int
    revision: int
    changed: str
    archived: bool
    document: dict[str, Any] = Field(description="the sheet document (docs/sheet-format.md)")


class RevisionSummaryOut(BaseModel):
    number: int
    created: str
    author: str
    note: str
    base: int | None = Field(description="the revision this one was edited from")
    frozen: bool
    digest: str = Field(description="SHA-256 of the stored document text")
    label: str = Field("", description="how people name this save: its revision, A.1, A.2… on the way to issue A, "
                                       "A once signed, with '(save k of n)' for a save a later one of the same "
                                       "burst of edits superseded")


class RevisionListOut(BaseModel):
    sheet_id: int
    revisions: list[RevisionSummaryOut]


class RevisionOut(RevisionSummaryOut):
    sheet_id: int
    document: dict[str, Any]


class CreateIn(BaseModel):
    document: dict[str, Any] = Field(description="a sheet document; it must parse without errors")
    note: str = Field("", max_length=MAX_NOTE, description="why this sheet was made (kept with the revision)")
    author: str = Field("", max_length=100)


class ReplaceIn(CreateIn):
    base_revision: int = Field(description="the revision this document was edited from; 409 if it is not the latest")


class SavedOut(BaseModel):
    id: int
    revision: int
    added: bool = Field(description="false when the document equals the latest revision, so none was added")


class SolveIn(BaseModel):
    document: dict[str, Any]


class SolveOut(BaseModel):
    ok: bool
    errors: list[FieldError]
    solution: dict[str, Any] | None = Field(description="the solution in SI base units (m, m3/s, Pa, W)")
    findings: list[dict[str, Any]] = Field(default_factory=list,
                                           description="every check's finding, worst first; on a sheet with "
                                                       "cases each check once, from its governing case ('case')")
    band: dict[str, Any] | None = Field(default=None, description="the range of the answer")
    summary: dict[str, Any] | None = Field(default=None, description="the headline figures, SI")
    cases: list[dict[str, Any]] | None = Field(default=None, description="on a sheet with operating cases: each "
                                               "case (the base first) with its changes, solution, findings, range "
                                               "and summary")
    governing: list[dict[str, Any]] | None = Field(default=None, description="the governing case of each check")


def _store(request: Request) -> Store:
    return request.app.state.store


def _error(status: int, title: str, message: str, errors: list | None = None, **extra) -> JSONResponse:
    body = {"ok": False, "status": status, "title": title, "message": message, "errors": errors or []}
    body.update(extra)
    return JSONResponse(body, status_code=status)


def _json_value(value: Any) -> Any:
    if value is None or isinstance(value, (bool, int, float)):
        return value
    text = value if isinstance(value, str) else repr(value)
    return text if len(text) <= 200 else text[:200] + "…"


def field_errors(errors: list) -> list[dict]:
    return [{"path": e.path, "message": e.message, "value": _json_value(e.value)} for e in errors]


def _check(document: dict) -> JSONResponse | None:
    """A 422 response if the document is not a whole, valid sheet; None if it is."""
    problem = json_problem(document)
    if problem:
        return _error(422, "Invalid sheet", f"The document {problem}.", [{"path": "", "message": problem}])
    parsed = calc_sheet.parse(document)
    if not parsed.ok:
        return _error(422, "Invalid sheet", f"The sheet has {len(parsed.errors)} error(s); nothing was saved.",
                      field_errors(parsed.errors))
    return None


def _summary(s: SheetSummary) -> dict:
    return {"id": s.id, "title": s.title, "calc_number": s.calc_number, "project": s.project,
            "revision": s.revision, "changed": s.changed, "created": s.created, "archived": s.archived}


def _revision_summary(r: Revision, labels: dict[int, str] | None = None) -> dict:
    """One save; ``label`` is how people name it (A.3, or A once signed: server.revisions)."""
    out = {"number": r.number, "created": r.created, "author": r.author, "note": r.note, "base": r.base,
           "frozen": r.frozen, "digest": r.digest}
    if labels is not None:
        out["label"] = labels.get(r.number, f"save {r.number}")
    return out


def _labels(store, sheet_id: int, document) -> dict[int, str]:
    groups = revisions.group(store.marks(sheet_id), revisions.scheme_of(document))
    return revisions.labels(groups)


def _with_document(head: dict, document_json: str) -> Response:
    # The stored text goes out exactly as stored, so a client sees the very bytes that were saved.
    text = json.dumps(head, ensure_ascii=False, separators=(",", ":"))[:-1] + ',"document":' + document_json + "}"
    return Response(text, media_type="application/json")


# -- endpoints ------------------------------------------------------------------------------------
# Plain functions, which FastAPI runs in its threadpool: the store's reads and writes (and the
# solver) never hold up the event loop, however long a write waits for the lock.

def list_sheets(request: Request, archived: bool = False) -> dict:
    return {"sheets": [_summary(s) for s in _store(request).list_sheets(archived=archived)]}


def read_sheet(request: Request, sheet_id: int) -> Response:
    store = _store(request)
    summary = store.sheet(sheet_id)
    latest = store.latest(sheet_id)
    return _with_document({"id": sheet_id, "revision": latest.number, "changed": latest.created,
                           "archived": summary.archived}, latest.document_json)


def create_sheet(request: Request, body: CreateIn) -> Response:
    refused = _check(body.document)
    if refused is not None:
        return refused
    rev = _store(request).create_sheet(body.document, body.author, body.note or "created through the API")
    return JSONResponse({"id": rev.sheet_id, "revision": rev.number, "added": True}, status_code=201)


def replace_sheet(request: Request, sheet_id: int, body: ReplaceIn) -> Response:
    store = _store(request)
    store.latest(sheet_id)  # 404 before 422 for a sheet that does not exist
    refused = _check(body.document)
    if refused is not None:
        return refused
    try:
        rev, added = store.add_revision(sheet_id, body.document, body.base_revision, body.author,
                                        body.note or "replaced through the API")
    except StaleRevision as conflict:
        return _error(409, "Conflict", str(conflict), current_revision=conflict.current.number)
    return JSONResponse({"id": sheet_id, "revision": rev.number, "added": added})


def list_revisions(request: Request, sheet_id: int) -> dict:
    store = _store(request)
    revs = store.revisions(sheet_id)
    labels = _labels(store, sheet_id, revs[0].document)
    return {"sheet_id": sheet_id, "revisions": [_revision_summary(r, labels) for r in revs]}


def read_revision(request: Request, sheet_id: int, number: int) -> Response:
    store = _store(request)
    rev = store.revision(sheet_id, number)
    labels = _labels(store, sheet_id, rev.document)
    return _with_document({"sheet_id": sheet_id, **_revision_summary(rev, labels)}, rev.document_json)


def solve(request: Request, body: SolveIn) -> Response:
    # A plain function, run in the threadpool: checking, parsing and solving all stay off the event loop.
    problem = json_problem(body.document)
    if problem:
        return _error(422, "Invalid sheet", f"The document {problem}.", [{"path": "", "message": problem}])
    parsed = calc_sheet.parse(body.document)
    if not parsed.ok:
        # The API's one error shape, plus the solve answer's own keys, so either reading works.
        return _error(422, "Invalid sheet", f"The sheet has {len(parsed.errors)} error(s); it was not solved.",
                      field_errors(parsed.errors), solution=None)
    outcome = solve_parsed(parsed)
    if outcome.failure:
        return _error(422, "Not solved", outcome.failure)
    body = {"ok": True, "errors": [], "solution": outcome.solution, "findings": outcome.findings,
            "band": outcome.band, "summary": outcome.headline}
    a = outcome.analysis
    if a is not None and a.has_cases:
        # Every case solved with its checks (the base first), and the governing case of each check.
        body["cases"] = [c.to_dict() for c in a.cases]
        body["governing"] = outcome.governing
    if outcome.transients:
        # The transient runs small enough to answer at once; a longer one is deferred (store the sheet and
        # ask GET /api/sheets/{id}/revisions/{n}/transient, answered in the work lane).
        body["transients"] = outcome.transients
    return JSONResponse(body)


def schema() -> dict:
    return SCHEMA


#: The OpenAPI page's script and styles, served from static/ so the page works with no network.
SWAGGER = "vendor/swagger-ui-5.35.0"

# The page's one inline script: the same text on every page, so the page's policy names it by its
# hash and needs neither 'unsafe-inline' nor 'unsafe-eval'. It reads the schema's address from the page.
DOCS_SCRIPT = ('SwaggerUIBundle({url: document.getElementById("swagger-ui").dataset.openapi, '
               'dom_id: "#swagger-ui", layout: "BaseLayout", deepLinking: true, validatorUrl: null, '
               'presets: [SwaggerUIBundle.presets.apis]});')
DOCS_CSP = content_security_policy(base64.b64encode(hashlib.sha256(DOCS_SCRIPT.encode()).digest()).decode())


def _schema_name(schema: dict | None) -> str:
    """The name of a request or response body's schema (``ReplaceIn``), or its type when it has none."""
    if not isinstance(schema, dict):
        return ""
    ref = schema.get("$ref")
    if isinstance(ref, str):
        return ref.rsplit("/", 1)[-1]
    return str(schema.get("type", ""))


def operations(spec: dict) -> list[dict]:
    """The operations of an OpenAPI document, in its order: method, path, summary, body and answers."""
    out = []
    for path, item in spec.get("paths", {}).items():
        for method, op in item.items():
            if method not in ("get", "put", "post", "patch", "delete") or not isinstance(op, dict):
                continue
            content = ((op.get("requestBody") or {}).get("content") or {}).get("application/json") or {}
            answers = []
            for code, answer in (op.get("responses") or {}).items():
                body = ((answer.get("content") or {}).get("application/json") or {}).get("schema")
                answers.append({"status": code, "description": answer.get("description", ""),
                                "schema": _schema_name(body)})
            out.append({"method": method.upper(), "path": path, "summary": op.get("summary", ""),
                        "body": _schema_name(content.get("schema")), "responses": answers})
    return out


def docs_page(request: Request) -> Response:
    """The API's page: the vendored Swagger UI, and a plain list of the operations under it for a
    browser with scripts off. Sent with every page's policy plus the hash of its one inline script."""
    static = request.app.url_path_for("static", path="")
    root = request.scope.get("root_path", "")
    openapi = root + str(request.app.url_path_for("openapi"))
    rows = []
    for op in operations(request.app.openapi()):
        answers = "; ".join(f"{a['status']} {a['description']}" + (f" ({a['schema']})" if a["schema"] else "")
                            for a in op["responses"])
        rows.append(f"<tr><td><code>{escape(op['method'])}</code></td><td><code>{escape(op['path'])}</code></td>"
                    f"<td>{escape(op['summary'])}</td><td>{escape(op['body'])}</td><td>{escape(answers)}</td></tr>")
    page = f"""<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Headsheet API</title>
<link rel="stylesheet" href="{escape(root + static + SWAGGER)}/swagger-ui.css">
<link rel="icon" href="{escape(root + static)}favicon.svg">
</head>
<body>
<noscript>
<style>th, td {{ text-align: left; vertical-align: top; padding: 0.2em 0.6em; }}</style>
<h1>Headsheet API</h1>
<p>The OpenAPI document is at <code>{escape(openapi)}</code>. Its operations:</p>
<table>
<thead><tr><th>Method</th><th>Path</th><th>What it does</th><th>Request body</th><th>Answers</th></tr></thead>
<tbody>
{chr(10).join(rows)}
</tbody>
</table>
</noscript>
<div id="swagger-ui" data-openapi="{escape(openapi)}"></div>
<script src="{escape(root + static + SWAGGER)}/swagger-ui-bundle.js"></script>
<script>{DOCS_SCRIPT}</script>
</body>
</html>
"""
    return HTMLResponse(page, headers={"Content-Security-Policy": DOCS_CSP})


_ERRORS = {404: {"model": ErrorOut, "description": "no such sheet or revision"},
           422: {"model": ErrorOut, "description": "the input is not valid; `errors` names each field by path"}}

#: OpenAPI details per route name (the paths themselves are in the route table in server.app).
ROUTE_DOCS: dict[str, dict] = {
    "api_list": {"summary": "List sheets", "response_model": SheetListOut, "tags": ["sheets"]},
    "api_create": {"summary": "Create a sheet", "response_model": SavedOut, "status_code": 201, "tags": ["sheets"],
                   "responses": {422: _ERRORS[422]}},
    "api_read": {"summary": "Read a sheet's latest revision", "response_model": SheetOut, "tags": ["sheets"],
                 "responses": {404: _ERRORS[404]}},
    "api_replace": {"summary": "Replace a sheet (adds a revision)", "response_model": SavedOut, "tags": ["sheets"],
                    "description": ("Stores the document as a new revision. Revisions are never changed: a replace "
                                    "based on a signed (frozen) revision adds the next revision, and the record's "
                                    "revision label moves on (A to B)."),
                    "responses": {404: _ERRORS[404], 422: _ERRORS[422],
                                  409: {"model": ConflictOut, "description": "the sheet has moved on since base_revision"}}},
    "api_revisions": {"summary": "List a sheet's revisions", "response_model": RevisionListOut,
                      "tags": ["revisions"], "responses": {404: _ERRORS[404]}},
    "api_revision": {"summary": "Read one revision", "response_model": RevisionOut, "tags": ["revisions"],
                     "responses": {404: _ERRORS[404]}},
    "api_solve": {"summary": "Solve a sheet document without storing it", "response_model": SolveOut,
                  "tags": ["solve"], "responses": {422: {"model": SolveOut, "description": "the document has errors"}}},
    "api_schema": {"summary": "The JSON Schema of the sheet document", "tags": ["solve"]},
}
