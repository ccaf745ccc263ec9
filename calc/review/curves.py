"""Checks on machine curves: a head curve that rises with flow, and every operating point read off past the typed points."""

from __future__ import annotations

from calc.model.elements import EXTRAPOLATION_LIMIT, Line, Pump, Turbine
from calc.model.settings import SRC_PRACTICE
from calc.review.findings import Finding, label, shown_in
from calc.steady.series import Solution

SRC_CURVE = "machine curve as typed: the maker's test points; outside them nothing is known"


def _point_name(solution: Solution, k: int) -> str:
    if len(solution.points) == 1:
        return "the operating point"
    return f"operating point {k + 1}" + (" (the design point)" if k == solution.design_index else "")


def curve_findings(line: Line, solution: Solution) -> list[Finding]:
    """Rising head curves, efficiencies assumed, and, at every operating point, curves read past their typed points."""
    u = shown_in(line)
    out: list[Finding] = []
    for i, el in enumerate(line.elements):
        name = label(line, i)
        if isinstance(el, Pump) and el.curve is not None:
            rising = el.curve.rising_stretches()
            if rising:
                spans = ", ".join(f"{a * 1e3:.4g}-{u(b, 'flow', '.4g')}" for a, b in rising)
                out.append(Finding(
                    "caution", "pump-curve-rising", f"{name}: head rises with flow",
                    f"The typed head does not fall with flow between {spans}. A pump whose head rises with flow "
                    "can cross the system curve twice and hunt between the crossings; check the points against "
                    "the maker's curve, and keep the duty on the falling part.", None, None, None, SRC_CURVE, i))
        if isinstance(el, Turbine) and el.mode in ("head", "curve") and not el.efficiency_given:
            out.append(Finding(
                "caution", "turbine-efficiency-assumed", f"{name}: efficiency not given",
                "No efficiency is typed, so the shaft power shown is the hydraulic power (efficiency 1): the "
                "real machine gives less. Type the maker's efficiency.", None, None, None, SRC_PRACTICE, i))
    for k, point in enumerate(solution.points):
        where = _point_name(solution, k)
        for d in point["elements"]:
            if d["kind"] not in ("pump", "turbine") or d.get("in_curve_range") is not False:
                continue
            i = d["index"]
            lo, hi = d["curve_range"]
            Q = point["Q"]
            span = f"{lo * 1e3:.4g} to {u(hi, 'flow', '.4g')}"
            if d.get("beyond_curve_limit"):
                out.append(Finding(
                    "error", "curve-beyond-limit", f"{label(line, i)}: far outside its curve",
                    f"At {where}, {u(Q, 'flow', '.4g')}, the flow lies more than {EXTRAPOLATION_LIMIT * 100:.0f} % beyond "
                    f"the typed curve points ({span}): the machine's head there is not known, so this operating "
                    "point is not a result. Type the curve out to this flow, or change the line.",
                    Q, hi * (1 + EXTRAPOLATION_LIMIT) if Q > hi else lo * (1 - EXTRAPOLATION_LIMIT), "flow",
                    SRC_CURVE, i))
            else:
                out.append(Finding(
                    "warning", "curve-extrapolated", f"{label(line, i)}: outside the typed curve",
                    f"At {where}, {u(Q, 'flow', '.4g')} lies outside the typed curve points ({span}): head, efficiency "
                    "and NPSH required are carried on straight from the last points, which the maker has not "
                    "tested. Confirm with the maker's curve.", Q, hi if Q > hi else lo, "flow", SRC_CURVE, i))
    return out
