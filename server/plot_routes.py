"""The plots beside the results: drawn for the sheet page from its cached analysis, and each one as an SVG file.

The SVG is drawn by calc.record.plots, the same code as the record's figures; its labels are
escaped there, which is why the template may mark it safe.
"""

from __future__ import annotations

import logging
import re
from typing import Any

from fastapi import Request
from fastapi.responses import Response
from starlette.concurrency import run_in_threadpool

from calc.record import plots as calc_plots
from calc.record import system_curve
from server import web
from server.store import Store

log = logging.getLogger("headsheet.server")

#: What a plot's name in an address may be: one of the figures' keys.
NAME = re.compile(r"^[a-z]{1,20}(-[0-9]{1,2})?$")


def units_of(document: dict) -> str:
    """The unit system a sheet is shown in ('SI' or 'US')."""
    header = document.get("header") if isinstance(document, dict) and isinstance(document.get("header"), dict) else {}
    return header.get("units") if header.get("units") in ("SI", "US") else "SI"


def page_plots(outcome: Any, units: str) -> list[calc_plots.Plot]:
    """Every plot of a solved outcome (server.results.Outcome) in the sheet's units; none without a solution.

    A fault while drawing costs the plots only, never the results panel beside them.
    """
    analysis = getattr(outcome, "analysis", None)
    if analysis is None or not getattr(outcome, "ok", False):
        return []
    try:
        return calc_plots.all_plots(analysis, units)
    except Exception:  # the page must stand without its plots
        log.exception("plots failed")
        return []


def _file_name(document: dict, sheet_id: int, number: int, name: str) -> str:
    header = document.get("header") if isinstance(document, dict) and isinstance(document.get("header"), dict) else {}
    calc = re.sub(r"[^A-Za-z0-9._-]+", "-", str(header.get("calc_number") or "")).strip("-.")[:60]
    return f"{calc or f'sheet-{sheet_id}'}-rev-{number}-{name}.svg"


def _solved(request: Request, sheet_id: int, number: int) -> tuple[dict, Any]:
    """A stored revision's document and its (cached) analysis."""
    store: Store = request.app.state.store
    rev = store.revision(sheet_id, number)  # SheetNotFound: the app answers 404
    return rev.document, request.app.state.solver.solve(rev.document)


def _plot_file(request: Request, sheet_id: int, number: int, name: str) -> tuple[str, str] | None:
    """(SVG text, file name) of one plot of a stored revision, or None when that revision has no such plot."""
    document, outcome = _solved(request, sheet_id, number)
    analysis = outcome.analysis if outcome.ok else None
    plot = calc_plots.plot_named(analysis, name, units_of(document))
    if plot is None:
        return None
    return plot.file(), _file_name(document, sheet_id, number, name)


async def plot_svg(request: Request, sheet_id: int, number: int, name: str) -> Response:
    """GET one plot of a revision as an SVG file to keep (the link beside each plot on the page)."""
    found = None
    if NAME.match(name):
        found = await run_in_threadpool(_plot_file, request, sheet_id, number, name)
    return _download(request, found, "image/svg+xml",
                     f"Revision {number} of sheet {sheet_id} has no plot called '{name[:40]}'.")


def _download(request: Request, found: tuple[str, str] | None, media_type: str, missing: str) -> Response:
    """A file to keep, (text, file name), never cached, never sniffed into another type; 404 saying
    ``missing`` when there is none."""
    if found is None:
        return web.error_response(request.url.path, 404, "Not found", missing, request=request)
    text, file_name = found
    return Response(text, media_type=media_type,
                    headers={"Cache-Control": "no-store", "Content-Disposition": f'attachment; filename="{file_name}"',
                             "X-Content-Type-Options": "nosniff"})


def _curve_file(request: Request, sheet_id: int, number: int) -> tuple[str, str] | None:
    document, outcome = _solved(request, sheet_id, number)
    if not outcome.ok or outcome.analysis is None or outcome.analysis.solution is None:
        return None
    header = document.get("header") if isinstance(document.get("header"), dict) else {}
    text = system_curve.csv_text(outcome.analysis, units_of(document), str(header.get("title") or ""))
    return text, _file_name(document, sheet_id, number, "system-curve").replace(".svg", ".csv")


async def system_curve_csv(request: Request, sheet_id: int, number: int) -> Response:
    """GET the system curve of a revision, every case, as CSV (for a supplier)."""
    found = await run_in_threadpool(_curve_file, request, sheet_id, number)
    return _download(request, found, "text/csv; charset=utf-8",
                     f"Revision {number} of sheet {sheet_id} has no solution to draw a system curve from.")


_API_DOCS: dict[str, dict[str, Any]] = {}

ROUTES: list[tuple[str, str, list[str], Any, bool]] = [
    ("/sheets/{sheet_id:int}/revisions/{number:int}/plots/{name}.svg", "plot_svg", ["GET"], plot_svg, False),
    ("/sheets/{sheet_id:int}/revisions/{number:int}/system-curve.csv", "system_curve_csv", ["GET"],
     system_curve_csv, False),
]

router = web.router_of(ROUTES, _API_DOCS)
