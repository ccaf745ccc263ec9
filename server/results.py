"""Solving a stored sheet for the results panel and the API: the calc call, guarded and cached, the
headline figures an engineer reads first, and display formatting."""

from __future__ import annotations

import logging
import math
import threading
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any

from calc import analysis as calc_analysis
from calc.model import sheet as calc_sheet
from calc.review.findings import SEVERITIES
from calc.review.summary import ZERO, case_figures, headline, method_name, snap, static_figure  # noqa: F401  (the panel's names)
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
    analysis: Any = None  # calc.analysis.Analysis: what the plots are drawn from (server/plot_routes.py)
    headline: dict | None = None  # `headline()`: the figures the panel leads with, SI
    cases: list = field(default_factory=list)  # calc.review.summary.case_figures() rows on a sheet with cases, else empty
    case_names: list = field(default_factory=list)
    governing: list = field(default_factory=list)  # calc.review.governing.governing() rows, SI
    energy: dict | None = None  # calc.review.energy.year(), SI (W h, W, m3/s)
    #: calc.analysis.TransientCase.to_dict() of each case with events: the runs small enough to redo on
    #: every edit ("quick"), the others deferred to the transient page (server/transient_page.py)
    transients: list = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return self.solution is not None

    @property
    def checks(self) -> dict:
        """The findings as the panel lists them: `group_findings`."""
        return group_findings(self.findings)


def solve_parsed(parsed: Any) -> Outcome:
    """Solve a parsed sheet; the solver's own faults become a message, never an error page."""
    if not parsed.ok:
        return Outcome(errors=list(parsed.errors))
    try:
        # The same analysis as the record's: the sheet's own check limits, the band, the findings.
        a = calc_analysis.analyse_parsed(parsed, transients="quick")
        solution = a.solution.to_dict()
        return Outcome(solution=solution, findings=_json_safe([f.to_dict() for f in a.findings]),
                       band=_json_safe(a.band),
                       headline=_json_safe(a.cases[0].summary or headline(a.line, solution, a.check_settings)),
                       analysis=a, cases=_json_safe(case_figures(a)) if a.has_cases else [],
                       case_names=[c.name for c in a.cases] if a.has_cases else [],
                       governing=_json_safe(a.governing), energy=_json_safe(a.energy),
                       transients=[t.to_dict() for t in a.transients])
    except Exception as exc:  # a fault in the solver must not take the page down with it
        log.exception("solver failed")
        return Outcome(failure=f"The solver stopped with an internal fault ({type(exc).__name__}: {exc}). "
                               "The sheet is saved; please report this sheet to the developers.")


def needed_values(outcome: Outcome) -> list:
    """The values the solved document lacks (calc.model.sheet.Missing, each naming its field): the line
    cannot be solved until they are given, and the panel lists them, each a link to its field."""
    return [e for e in outcome.errors if calc_sheet.is_request(e)]


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


# -- display ----------------------------------------------------------------------------------------

#: Decimals each quantity kind is shown with, in its display unit (calc.units.DISPLAY): one
#: precision per kind across the panel, so 85.00 kW and 100.00 kW read alike and columns line up.
#: They match the checks' own words (calc/review: heads, velocities, flows and powers to .2f,
#: pressures to .1f, chainages to .1f).
DECIMALS = {
    "SI": {"flow": 2, "head": 2, "length": 1, "diameter": 1, "roughness": 3, "velocity": 2,
           "pressure": 1, "power": 2, "speed": 2},
    "US": {"flow": 1, "head": 2, "length": 1, "diameter": 3, "roughness": 4, "velocity": 2,
           "pressure": 2, "power": 2, "speed": 2},
}
def quantity(value: float | None, kind: str, system: str = "SI", sig: int | None = None) -> str:
    """An SI value shown in the sheet's unit system with its unit, e.g. ``'40.00 L/s'``; a dash when unknown.

    Each kind has one number of decimals (DECIMALS); a value so small that it would show as zero
    there gets two significant figures instead, and round-off (ZERO) shows as zero. ``sig`` asks
    for significant figures instead of the kind's decimals.

    >>> quantity(0.085, "flow"), quantity(85000.0, "power"), quantity(100000.0, "power")
    ('85.00 L/s', '85.00 kW', '100.00 kW')
    >>> quantity(-7.105e-15, "head"), quantity(0.0031, "head"), quantity(-2.0, "pressure")
    ('0.00 m', '0.0031 m', '-0.0020 kPa')
    """
    if value is None:
        return "–"
    system = system if system in ("SI", "US") else "SI"
    try:
        value = snap(float(value), kind)
        shown, unit = to_display(value, kind, system)
    except (TypeError, ValueError, KeyError):
        return "–"
    if sig is not None:
        text = fmt(shown, sig)
        return text if text == "–" else f"{text} {unit}"
    text = fixed(shown, DECIMALS[system].get(kind, 2))
    return text if text == "–" else f"{text} {unit}"


def fixed(value: float, decimals: int) -> str:
    """``value`` to ``decimals`` places; two significant figures where that would show a non-zero as 0.

    >>> fixed(79.3597, 2), fixed(0.0388, 1), fixed(0.0, 2), fixed(-0.0001, 1)
    ('79.36', '0.039', '0.00', '-0.00010')
    """
    if not math.isfinite(value):
        return "–"
    if value == 0.0:
        return f"{0.0:.{decimals}f}"
    text = f"{value:.{decimals}f}"
    if float(text) == 0.0:
        return fmt(value, 2)
    return text


def number(value: float | None, sig: int = 4) -> str:
    """A plain number (Re, f, K, efficiency) with ``sig`` significant figures; a dash when unknown."""
    if value is None:
        return "–"
    try:
        return fmt(float(value), sig)
    except (TypeError, ValueError):
        return "–"


def percent(value: float | None, decimals: int = 0) -> str:
    """A fraction as a percentage, e.g. ``0.912 -> '91 %'``; a dash when unknown.

    >>> percent(0.912), percent(0.7392, 1), percent(None), percent(0.0004)
    ('91 %', '73.9 %', '–', '0.040 %')
    """
    if value is None or not math.isfinite(value):
        return "–"
    return f"{fixed(100.0 * value, decimals)} %"


def sentence(text: str | None) -> str:
    """Words joined from parts as one sentence: a capital first letter (the rest as written) and one full stop.

    >>> sentence("no operating point: the head at the start does not exceed... (add a pump)")
    'No operating point: the head at the start does not exceed... (add a pump).'
    >>> sentence("2 operating points."), sentence("")
    ('2 operating points.', '')
    """
    text = (text or "").strip()
    if not text:
        return ""
    text = text[0].upper() + text[1:]
    return text if text.endswith((".", "!", "?")) else text + "."


def lowest_pressure(point: dict) -> dict | None:
    """The station of least pressure head along the line at one operating point."""
    stations = [s for s in point.get("profile") or [] if s.get("pressure_head") is not None]
    return min(stations, key=lambda s: s["pressure_head"]) if stations else None


# -- the checks, as the panel lists them ----------------------------------------------------------

#: Titles of the severity groups, worst first.
GROUP_TITLES = {"error": ("error", "errors"), "warning": ("warning", "warnings"),
                "caution": ("caution", "cautions"), "info": ("note", "notes")}


def is_general(finding: dict) -> bool:
    """A caution every record of a pressurised line carries (calc.review.cautions.general_cautions)."""
    return str(finding.get("code", "")).startswith("general-")


def group_findings(findings: list[dict]) -> dict:
    """Findings for the panel: the general cautions apart (one line), the rest by severity, worst first.

    Returns ``{"general": [...], "groups": [{"severity", "title", "count", "findings"}], "counts": {...}}``;
    only severities that have findings get a group.
    """
    general = [f for f in findings if is_general(f)]
    rest = [f for f in findings if not is_general(f)]
    groups = []
    for sev in SEVERITIES:
        items = [f for f in rest if f.get("severity") == sev]
        if items:
            one, many = GROUP_TITLES[sev]
            groups.append({"severity": sev, "count": len(items), "findings": items,
                           "title": f"{len(items)} {one if len(items) == 1 else many}"})
    return {"general": general, "groups": groups, "counts": {g["severity"]: g["count"] for g in groups}}
