"""Checks on the flow in each run: velocity against its limits, laminar and transitional regimes, friction formula range."""

from __future__ import annotations

from calc.model.elements import Line
from calc.model.settings import CheckSettings
from calc.review.findings import SRC_LAMINAR, SRC_TRANSITION, Finding, shown_in, suction_runs


def velocity_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    u = shown_in(line)
    out = []
    suction = suction_runs(line)
    for d in point["elements"]:
        if d["kind"] != "pipe":
            continue
        i = d["index"]
        is_suction = i in suction
        vmax = s.velocity_max_suction if is_suction else s.velocity_max
        name = "velocity_max_suction" if is_suction else "velocity_max"
        where = "pump suction" if is_suction else "pipe run"
        if d["V"] > vmax:
            out.append(Finding("warning", "velocity-high", f"{d['label']}: velocity high",
                               f"Velocity {u(d['V'], 'velocity', '.2f')} exceeds the {where} limit of {u(vmax, 'velocity', '.3g')}: "
                               "expect high losses, erosion, noise and larger surge on closure.",
                               d["V"], vmax, "velocity", s.source(name), i))
        elif d["V"] < s.velocity_min:
            out.append(Finding("info", "velocity-low", f"{d['label']}: velocity low",
                               f"Velocity {u(d['V'], 'velocity', '.2f')} is below {u(s.velocity_min, 'velocity', '.3g')}: sediment may "
                               "settle and air may collect at high points.",
                               d["V"], s.velocity_min, "velocity", s.source("velocity_min"), i))
    return out


def regime_findings(line: Line, point: dict) -> list[Finding]:
    """Laminar and transitional runs, and friction formulas used outside their stated range."""
    out = []
    for d in point["elements"]:
        if d["kind"] != "pipe":
            continue
        i, Re = d["index"], d["Re"]
        if d["regime"] == "laminar":
            out.append(Finding(
                "caution", "regime-laminar", f"{d['label']}: laminar flow",
                f"Re = {Re:.4g}: laminar, so f = 64/Re = {d['f']:.4g} whatever the roughness. Fitting K values "
                "from turbulent-flow tables understate laminar losses (an exit is about 2 rather than 1); use "
                "2-K or 3-K data for the fittings.", Re, 2000.0, None, SRC_LAMINAR, i))
        elif d["regime"] == "transitional":
            lo, hi = sorted(d["f_bounds"])
            out.append(Finding(
                "warning", "regime-transitional", f"{d['label']}: transitional flow",
                f"Re = {Re:.4g} lies between 2000 and 4000, where flow switches between laminar and turbulent: "
                f"f = {d['f']:.4g} is a blend and could be anywhere from {lo:.4g} to {hi:.4g}. Treat the flow "
                "as uncertain, or change the bore to move out of the band.", Re, 4000.0, None, SRC_TRANSITION, i))
        elif not d["friction_in_range"]:
            out.append(Finding("caution", "friction-range", f"{d['label']}: friction formula out of range",
                               d["friction_note"] or "Re or eps/D lies outside the friction formula's stated range.",
                               None, None, None, "friction method's published range", i))
    return out
