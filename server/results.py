"""Solving a stored sheet for the results panel and the API: the calc call, guarded and cached, and display formatting."""

from __future__ import annotations

import logging
import threading
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any

from calc import analysis as calc_analysis
from calc.model import sheet as calc_sheet
from calc.steady.series import _json_safe
from calc.units import fmt, to_display
from server.store import digest_of, dump_document

log = logging.getLogger("headsheet.server")


@dataclass
class Outcome:
    """The solution of one document, or why there is none."""

    errors: list = field(default_factory=list)  # calc.units.InputError
    solution: dict | None = None  # Solution.to_dict()
    findings: list = field(default_factory=list)  # calc.review.findings.Finding.to_dict(), worst first
    band: dict | None = None  # calc.review.uncertainty.band(): the range of the answer
    failure: str | None = None  # the solver broke on a parsed line: a program fault, said plainly

    @property
    def ok(self) -> bool:
        return self.solution is not None


def solve_parsed(parsed: Any) -> Outcome:
    """Solve a parsed sheet; the solver's own faults become a message, never an error page."""
    if not parsed.ok:
        return Outcome(errors=list(parsed.errors))
    try:
        # The same analysis as the record's: the sheet's own check limits, the band, the findings.
        a = calc_analysis.analyse_parsed(parsed)
        return Outcome(solution=a.solution.to_dict(), findings=_json_safe([f.to_dict() for f in a.findings]),
                       band=_json_safe(a.band))
    except Exception as exc:  # a fault in the solver must not take the page down with it
        log.exception("solver failed")
        return Outcome(failure=f"The solver stopped with an internal fault ({type(exc).__name__}: {exc}). "
                               "The sheet is saved; please report this sheet to the developers.")


class SolveCache:
    """Solutions by document digest: a reload or a rejected edit re-shows a solution without re-solving."""

    def __init__(self, size: int = 64):
        self.size = size
        self._items: OrderedDict[str, Outcome] = OrderedDict()
        self._lock = threading.Lock()

    def solve(self, document: dict, parsed: Any = None) -> Outcome:
        key = digest_of(dump_document(document))
        with self._lock:
            hit = self._items.get(key)
            if hit is not None:
                self._items.move_to_end(key)
                return hit
        outcome = solve_parsed(parsed if parsed is not None else calc_sheet.parse(document))
        with self._lock:
            self._items[key] = outcome
            while len(self._items) > self.size:
                self._items.popitem(last=False)
        return outcome


def quantity(value: float | None, kind: str, system: str = "SI", sig: int = 4) -> str:
    """An SI value shown in the sheet's unit system with its unit, e.g. ``'40.00 L/s'``; a dash when unknown."""
    if value is None:
        return "–"
    try:
        shown, label = to_display(float(value), kind, system if system in ("SI", "US") else "SI")
    except (TypeError, ValueError, KeyError):
        return "–"
    text = fmt(shown, sig)
    return text if text == "–" else f"{text} {label}"


def number(value: float | None, sig: int = 4) -> str:
    """A plain number (Re, f, K, efficiency) with ``sig`` significant figures; a dash when unknown."""
    if value is None:
        return "–"
    try:
        return fmt(float(value), sig)
    except (TypeError, ValueError):
        return "–"


def lowest_pressure(point: dict) -> dict | None:
    """The station of least pressure head along the line at one operating point."""
    stations = [s for s in point.get("profile") or [] if s.get("pressure_head") is not None]
    return min(stations, key=lambda s: s["pressure_head"]) if stations else None
