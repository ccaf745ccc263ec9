"""Choosing a size on the page: every standard size in a range for every case (`calc.sizing.compare`),
asked for from the sheet page and answered as its own page (each size is a full analysis of the sheet,
so it runs on request in the work lane, never on every keystroke)."""

from __future__ import annotations

from typing import Any

from fastapi import Request
from fastapi.responses import HTMLResponse
from starlette.concurrency import run_in_threadpool

from calc import tables
from calc.sizing import compare
from server import web
from server.plot_routes import units_of
from server.store import Store

#: The most characters of a cost list read from the address.
MAX_COSTS = 2000


def _costs(text: str) -> tuple[dict[str, float] | None, str | None]:
    if not text.strip():
        return None, None
    out = {}
    for part in text.replace(";", ",").split(","):
        if not part.strip():
            continue
        nominal, sep, cost = part.partition("=")
        try:
            value = float(cost)
        except ValueError:
            value = None
        if not sep or value is None or not value >= 0 or value != value or value == float("inf"):
            return None, f"'{part.strip()[:30]}' is not a nominal size and a cost: write them as 160=45, 200=62"
        out[nominal.strip()] = value
    return out, None


def _answer(request: Request, sheet_id: int, number: int, q: dict[str, str]) -> dict[str, Any]:
    store: Store = request.app.state.store
    rev = store.revision(sheet_id, number)  # SheetNotFound: the app answers 404
    doc = rev.document
    standards = tables.size_standards()
    standard = q.get("standard") or next(iter(standards))
    form = {"standard": standard, "class": q.get("class", ""), "from": q.get("from", ""), "to": q.get("to", ""),
            "runs": q.get("runs", ""), "costs": q.get("costs", "")[:MAX_COSTS], "life": q.get("life", "")}
    out: dict[str, Any] = {"sheet_id": sheet_id, "number": number, "doc": doc, "form": form,
                           "standards": standards, "units": units_of(doc), "result": None, "error": None}
    if standard not in standards:
        out["error"] = "Choose a size table."
        return out
    nominals, classes = tables.size_options(standard)
    out["nominals"], out["classes"] = nominals, classes
    if not q.get("go"):
        return out
    costs, why = _costs(form["costs"])
    life = None
    if form["life"].strip():
        try:
            life = float(form["life"])
        except ValueError:
            why = why or "the life is a number of years, such as 30"
        else:
            if not 0 < life <= 200:
                why = why or "the life is a number of years from 0 to 200"
    try:
        runs = [int(x) - 1 for x in form["runs"].replace(" ", "").split(",") if x] or None
    except ValueError:
        runs, why = None, why or "the runs are element numbers, such as 2, 4"
    if why:
        out["error"] = why[0].upper() + why[1:] + "."
        return out
    try:
        out["result"] = compare(doc, standard, form["class"] or classes[0], runs, form["from"] or None,
                                form["to"] or None, costs, life)
    except (LookupError, ValueError) as e:
        text = str(e).strip("'\"")
        out["error"] = text[0].upper() + text[1:] + ("" if text.endswith(".") else ".")
    return out


async def sizes_page(request: Request, sheet_id: int, number: int) -> HTMLResponse:
    """GET: the size comparison of a revision (the form alone, or with ``go`` its table)."""
    q = {k: v[:200] if k != "costs" else v[:MAX_COSTS] for k, v in request.query_params.items()}
    context = await run_in_threadpool(_answer, request, sheet_id, number, q)
    return request.app.state.templates.TemplateResponse(request, "sizes.html", context)


_API_DOCS: dict[str, dict[str, Any]] = {}

ROUTES: list[tuple[str, str, list[str], Any, bool]] = [
    ("/sheets/{sheet_id:int}/revisions/{number:int}/sizes", "sizes_page", ["GET"], sizes_page, False),
]

router = web.router_of(ROUTES, _API_DOCS)
