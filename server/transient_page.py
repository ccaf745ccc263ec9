"""The transient analysis of a stored revision in full: every case with events run to its end (the page
re-runs only the short ones on every edit), as a page with its envelope, histories, tables and findings,
and as JSON for the API. Both are answered in the work lane (server/lanes.py), never by the editors'
process, since a long run takes seconds."""

from __future__ import annotations

from typing import Any

from fastapi import Request
from fastapi.responses import HTMLResponse, JSONResponse
from starlette.concurrency import run_in_threadpool

from calc.analysis import analyse
from calc.record.plots.transient import transient_plots
from server import web
from server.plot_routes import units_of
from server.store import Store


def _run(request: Request, sheet_id: int, number: int) -> dict[str, Any]:
    store: Store = request.app.state.store
    rev = store.revision(sheet_id, number)  # SheetNotFound: the app answers 404
    doc = rev.document
    a = analyse(doc, transients="all")
    units = units_of(doc)
    return {"sheet_id": sheet_id, "number": number, "doc": doc, "analysis": a, "units": units,
            "runs": a.transients, "plots": transient_plots(a, units) if a.ok else [],
            "errors": a.errors}


async def transient_page(request: Request, sheet_id: int, number: int) -> HTMLResponse:
    """GET: every case's transient run of a revision, with its plots, tables and findings."""
    context = await run_in_threadpool(_run, request, sheet_id, number)
    return request.app.state.templates.TemplateResponse(request, "transient.html", context)


async def api_transient(request: Request, sheet_id: int, number: int) -> JSONResponse:
    """GET: every case's transient run of a revision as JSON (SI units): envelopes, histories, findings."""
    context = await run_in_threadpool(_run, request, sheet_id, number)
    if context["errors"]:
        return JSONResponse({"title": "Invalid sheet", "message": "The sheet does not parse; it has no transient run.",
                             "errors": [{"path": e.path, "message": e.message} for e in context["errors"]]},
                            status_code=422)
    return JSONResponse({"sheet_id": sheet_id, "revision": number,
                         "transients": [t.to_dict() for t in context["runs"]]})


_API_DOCS: dict[str, dict[str, Any]] = {
    "api_transient": {"summary": "Run a revision's transient events (every case with events)", "tags": ["solve"],
                      "description": ("The method of characteristics from each case's steady answer: each run's "
                                      "envelope of highest and lowest head along the chainage, the histories at the "
                                      "machines, valves, devices and picked points, and the findings. SI units.")},
}

ROUTES: list[tuple[str, str, list[str], Any, bool]] = [
    ("/sheets/{sheet_id:int}/revisions/{number:int}/transient", "transient_page", ["GET"], transient_page, False),
    ("/api/sheets/{sheet_id:int}/revisions/{number:int}/transient", "api_transient", ["GET"], api_transient, True),
]

router = web.router_of(ROUTES, _API_DOCS)
