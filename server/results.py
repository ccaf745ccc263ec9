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
from calc import friction
from calc.model import sheet as calc_sheet
from calc.model.elements import PipeRun, Pump
from calc.model.settings import CheckSettings
from calc.review.findings import SEVERITIES, label
from calc.review.machines import npsh_available, npsh_margin_needed
from calc.steady.series import _json_safe
from calc.units import fmt, to_display
from calc.water import G
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
        a = calc_analysis.analyse_parsed(parsed)
        solution = a.solution.to_dict()
        return Outcome(solution=solution, findings=_json_safe([f.to_dict() for f in a.findings]),
                       band=_json_safe(a.band), headline=_json_safe(headline(a.line, solution, a.check_settings)),
                       analysis=a)
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
#: SI values closer to zero than this are round-off and shown as zero [SI unit of the kind]. The
#: solver closes its energy balance to machine precision (about 1e-14 m); 1e-9 m of head is far
#: below anything measured, and far above any round-off the stations' sums leave (-7.1e-15 m).
ZERO = {"flow": 1e-12, "head": 1e-9, "length": 1e-9, "diameter": 1e-12, "roughness": 0.0,
        "velocity": 1e-9, "speed": 1e-9, "pressure": 1e-5, "power": 1e-6}


def snap(value: float | None, kind: str) -> float | None:
    """``value`` with round-off taken for what it is: within ZERO[kind] of zero it is 0.0.

    >>> snap(-7.105e-15, "head"), snap(-0.002, "head"), snap(None, "head")
    (0.0, -0.002, None)
    """
    if value is None:
        return None
    return 0.0 if abs(value) < ZERO.get(kind, 0.0) else value


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


# -- the headline figures -----------------------------------------------------------------------

def static_figure(static_head: float, turbines: bool = False) -> dict:
    """The static head under a name whose sign reads without thinking, and its size (never negative).

    ``static_head`` is the start's head less the end's at no flow [m] (Solution.static_head): the
    water levels, or the pressure heads of points of known pressure. Start above end: the line
    falls (a turbine's gross head); end above start: the lift a pump must give before any loss.

    >>> static_figure(-69.5)["label"], static_figure(-69.5)["head"]
    ('Static lift (end above start)', 69.5)
    >>> static_figure(94.8, turbines=True)["label"], static_figure(-7e-15)["label"]
    ('Gross head (start above end)', 'Start and end level')
    """
    h = snap(static_head, "head")
    tip = ("the head at the start less the head at the end with no flow: water levels, or the pressure heads "
           "of points of known pressure")
    if h is None:
        return {"label": "Static head", "head": None, "sense": "unknown", "title": tip}
    if h > 0:
        return {"label": "Gross head (start above end)" if turbines else "Start above end", "head": h,
                "sense": "fall", "title": tip}
    if h < 0:
        return {"label": "Static lift (end above start)", "head": -h, "sense": "lift", "title": tip}
    return {"label": "Start and end level", "head": 0.0, "sense": "level", "title": tip}


def method_name(method: str) -> dict:
    """The friction method's proper name and reference (calc.friction.METHODS), from its key.

    >>> method_name("colebrook")["name"], method_name("swamee_jain_1976")["name"]
    ('Colebrook', 'Swamee-Jain')
    """
    base = method.partition("@")[0] if isinstance(method, str) else ""
    m = friction.METHODS.get(base)
    if m is None:
        return {"key": method, "name": str(method), "reference": ""}
    return {"key": base, "name": m.name, "reference": m.reference}


def _station_place(line, profile: list[dict], k: int) -> dict:
    """Where station ``k`` of a profile is, in words: the element it is in, and which end of a machine."""
    st = profile[k]
    e = st["element"]
    if e is None:
        return {"element": None, "label": "start" if k == 0 else "end", "part": ""}
    part = ""
    if not isinstance(line.elements[e], PipeRun):
        first = next(j for j, s in enumerate(profile) if s["element"] == e)
        part = "inlet" if k == first else "outlet"
    return {"element": e, "label": label(line, e), "part": part}


def _pressure_figure(line, profile: list[dict], k: int) -> dict:
    st = profile[k]
    rg = line.liquid.rho * G
    h = snap(st["pressure_head"], "head")
    return {"pressure_head": h, "pressure": snap(rg * h, "pressure"), "pressure_abs": line.p_atm + rg * h,
            "chainage": st["chainage"], "elevation": st["elevation"], **_station_place(line, profile, k)}


def headline(line, solution: dict, settings: CheckSettings | None = None) -> dict:
    """The figures the results panel leads with, in SI: each machine's duty, the extremes of
    pressure and velocity and where they are, the static head by name, and the friction method.

    Computed from the solved line with the checks' own formulae (calc.review.machines), so the
    panel and the findings never disagree.
    """
    settings = settings or CheckSettings()
    turbines = any(el.kind == "turbine" for el in line.elements)
    out: dict[str, Any] = {"static": static_figure(solution["static_head"], turbines),
                           "method": method_name(solution["method"]), "machines": [],
                           "pressure_high": None, "pressure_low": None, "velocity_high": None,
                           "residual": None}
    roots = (solution.get("log") or {}).get("roots") or []
    if roots:
        out["residual"] = max(abs(r["residual"]) for r in roots if r.get("residual") is not None)
    points = solution.get("points") or []
    if not points or solution.get("design_index") is None:
        return out
    point = points[solution["design_index"]]
    profile = point.get("profile") or []
    if profile:
        low = min(range(len(profile)), key=lambda k: profile[k]["pressure_head"])
        high = max(range(len(profile)), key=lambda k: profile[k]["pressure_head"])
        out["pressure_low"] = _pressure_figure(line, profile, low)
        out["pressure_high"] = _pressure_figure(line, profile, high)
    chainage, fastest = 0.0, None
    for d in point["elements"]:
        if d["kind"] == "pipe":
            if fastest is None or d["V"] > fastest["V"]:
                fastest = {"V": d["V"], "element": d["index"], "label": label(line, d["index"]),
                           "chainage_from": chainage, "chainage_to": chainage + d["L"]}
            chainage += d["L"]
    out["velocity_high"] = fastest
    machine_heads = sum(d["head_change"] for d in point["elements"] if d["kind"] in ("pump", "turbine"))
    for d in point["elements"]:
        if d["kind"] == "pump":
            out["machines"].append(_pump_duty(line, point, d, settings))
        elif d["kind"] == "turbine":
            out["machines"].append(_turbine_duty(line, solution, point, d, machine_heads))
    return out


def _pump_duty(line, point: dict, d: dict, s: CheckSettings) -> dict:
    i = d["index"]
    pump: Pump = line.elements[i]
    Q = point["Q"]
    duty = {"kind": "pump", "index": i, "label": label(line, i), "Q": Q, "head": d["head"],
            "power_shaft": d["power_shaft"], "power_hydraulic": d["power_hydraulic"],
            "efficiency": d["efficiency"], "bep": None, "npsh": None}
    Q_bep = pump.best_efficiency_flow() if pump.mode == "curve" else None
    if Q_bep and Q_bep > 0:
        share = Q / Q_bep
        duty["bep"] = {"flow": Q_bep, "share": share, "low": s.bep_low, "high": s.bep_high,
                       "inside": s.bep_low <= share <= s.bep_high, "note": ""}
    else:
        note = pump.best_efficiency_note() if pump.mode == "curve" else "a fixed head has no best point"
        duty["bep"] = {"flow": None, "share": None, "low": s.bep_low, "high": s.bep_high, "inside": None,
                       "note": note}
    inlet = next((st for st in point["profile"] if st["element"] == i), None)
    if inlet is not None:
        rho, p_vap = line.liquid.rho, line.liquid.p_vap
        V2g = max(inlet["egl"] - inlet["hgl"], 0.0)
        p_abs = line.p_atm + rho * G * inlet["pressure_head"]
        available = npsh_available(p_abs, math.sqrt(2 * G * V2g), p_vap, rho)
        required = d.get("npsh_required")
        npsh = {"available": available, "required": required, "margin": None, "needed": None, "state": "unknown"}
        if required is not None:
            need = npsh_margin_needed(required, s.npsh_margin_ratio, s.npsh_margin_min)
            npsh.update(margin=available - required, needed=need,
                        state="cavitation" if available < required else "small" if available < need else "ok")
        duty["npsh"] = npsh
    return duty


def _turbine_duty(line, solution: dict, point: dict, d: dict, machine_heads: float) -> dict:
    i = d["index"]
    gross = solution["static_head"]
    duty = {"kind": "turbine", "index": i, "label": label(line, i), "Q": point["Q"], "head": d["head"],
            "power_shaft": d["power_shaft"], "power_hydraulic": d["power_hydraulic"],
            "efficiency": d["efficiency"], "gross": gross, "loss": None, "loss_share": None,
            "power_max": None, "power_share": None,
            # No efficiency typed (head or curve mode): 1 is assumed, and the panel says so.
            "efficiency_assumed": not getattr(line.elements[i], "efficiency_given", True)}
    if gross > 0:
        # As the checks reckon it (calc.review.machines.turbine_findings): what the machines do not take.
        duty["loss"] = gross - machine_heads
        duty["loss_share"] = (gross - machine_heads) / gross
    m = next((m for m in solution.get("machines") or [] if m["index"] == i), None)
    if m and m.get("power_max"):
        duty["power_max"] = m["power_max"]
        duty["power_share"] = d["power_shaft"] / m["power_max"]
    return duty


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
