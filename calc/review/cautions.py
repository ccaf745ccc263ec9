"""The range of the answer as findings, and the cautions every record of a pressurised water line carries."""

from __future__ import annotations

from calc.model.elements import Line, Pump, Turbine
from calc.model.settings import SRC_PRACTICE
from calc.review.findings import SRC_AIR, Finding, Shown
from calc.transient.sources import MOC_REF


def band_findings(band: dict, u: Shown | None = None) -> list[Finding]:
    """The uncertainty band as findings: the flow range, and any case without an operating point."""
    u = u or Shown()
    out = []
    if band.get("Q_low") is None:
        return out
    Qn, lo, hi = band["Q_nominal"], band["Q_low"], band["Q_high"]
    tail = "Quote the answer to that precision."
    severity = "info"
    if band.get("transitional"):
        tail = (f"{', '.join(band['transitional'])} run{'s' if len(band['transitional']) > 1 else ''} in transitional "
                "flow (Re 2000-4000), where nobody can predict the friction factor: the flow may lie anywhere in this "
                "range. Change the bore or the flow to move out of the transition zone.")
        severity = "warning"
    out.append(Finding(
        severity, "band-flow", "Range of the answer",
        f"Flow {u(Qn, 'flow', '.3g')}; with {band['describe']}, it lies between {u(lo, 'flow', '.3g')} and {u(hi, 'flow', '.3g')} "
        f"({100 * (lo / Qn - 1):+.1f} % / {100 * (hi / Qn - 1):+.1f} %). {tail}",
        Qn, None, "flow", band["source"]))
    for m in band.get("machines", []):
        if m["low"] is None or m["nominal"] is None or abs(m["high"] - m["low"]) <= 1e-6 * abs(m["nominal"]):
            continue
        q = m["quantity"]
        out.append(Finding(
            "info", f"band-{m['kind']}", f"{m['label']}: range",
            f"{m['what'].capitalize()} {u(m['nominal'], q, '.3g')}, between {u(m['low'], q, '.3g')} and "
            f"{u(m['high'], q, '.3g')} over the same cases.", m["nominal"], None, q, band["source"],
            m["index"]))
    lost = [c for c in band["cases"] if c["Q"] is None]
    if lost:
        names = ", ".join(c["label"] for c in lost)
        out.append(Finding(
            "warning", "band-no-point", "No operating point in part of the range",
            f"The line has no operating point on the design branch with {names}: the design has no margin "
            "against that case.", None, None, None, band["source"]))
    return out


def general_cautions(line: Line) -> list[Finding]:
    """Cautions every record carries for a pressurised water line."""
    out = [
        Finding("caution", "general-surge", "Surge and transients",
                "Surge and transients are not analysed here beyond the screening estimate stated: valve closure, "
                "pump trip, start-up and load rejection need a transient analysis before the design is final.",
                source=MOC_REF),
        Finding("caution", "general-ratings", "Pipe and joint ratings",
                "Check the rating of every pipe, joint, fitting and valve against the highest pressure including "
                "surge and test pressure, and its derating with temperature.", source=SRC_PRACTICE),
        Finding("caution", "general-anchorage", "Anchorage and thrust",
                "Bends, tees, reducers, valves and dead ends need thrust blocks or restrained joints sized for "
                "the test pressure; above-ground runs need anchors and supports.", source=SRC_PRACTICE),
        Finding("caution", "general-air-valves", "Air valves and drains",
                "Fit air valves at high points and at changes of grade, and drains (washouts) at low points, so "
                "the line can be filled, emptied and kept free of air.", source=SRC_AIR),
        Finding("caution", "general-confined-space", "Confined spaces and water",
                "Chambers, tanks and intakes are confined spaces; intakes and open channels are work near "
                "water. Plan entry, isolation and rescue before work starts.", source=SRC_PRACTICE),
    ]
    if any(isinstance(el, (Pump, Turbine)) for el in line.elements):
        out.append(Finding("caution", "general-electrical", "Electrical safety",
                           "Generating sets and pump drives carry dangerous voltages and can start or be "
                           "back-fed unexpectedly: isolate and lock off before work, and follow the electrical "
                           "code for the installation.", source=SRC_PRACTICE))
    out.append(Finding("caution", "general-codes", "Local codes and engineering judgement",
                       "This sheet is a calculation aid. Local codes and regulations govern, and the design must "
                       "be checked and approved under licensed engineering practice.", source=SRC_PRACTICE))
    return out
