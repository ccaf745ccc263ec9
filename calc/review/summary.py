"""The figures an engineer reads first for one solved line: each machine's duty, the extremes of pressure
and velocity and where they lie, the static head by name, the friction method. The results panel leads
with them, and the case table gives them for every operating case."""

from __future__ import annotations

import math
from typing import Any

from calc import friction
from calc.model.elements import PipeRun, Pump
from calc.model.settings import CheckSettings
from calc.review.findings import label
from calc.review.machines import impulse_duty, npsh_available, npsh_margin_needed
from calc.water import G

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
    impulse = impulse_duty(line, solution["static_head"], point)
    if impulse is not None:
        out["machines"].append(impulse)
    return out



def _pump_duty(line, point: dict, d: dict, s: CheckSettings) -> dict:
    i = d["index"]
    pump: Pump = line.elements[i]
    Q = point["Q"]
    duty = {"kind": "pump", "index": i, "label": label(line, i), "Q": Q, "head": d["head"],
            "power_shaft": d["power_shaft"], "power_hydraulic": d["power_hydraulic"],
            "efficiency": d["efficiency"], "bep": None, "npsh": None, "group": None}
    if "units" in d:
        duty["group"] = {k: d[k] for k in ("units", "standby", "running", "arrangement", "unit_flow", "unit_head")}
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




# ----------------------------------------------------------------------------- the case table

def _where(at: dict | None) -> str:
    if not at:
        return ""
    return f"{at['label']} {at['part']}".strip() if at.get("part") else str(at.get("label") or "")


def case_figures(a) -> list[dict]:
    """The case table of an analysis, one row per figure and one value per case (SI, with the display kind
    ('flow', 'head', ..., 'percent' for a fraction, 'text') and where), for the results panel and the record:
    the flow, each machine's duty, the extremes of pressure and velocity. A case with no operating
    point shows why in its first row."""
    rows: list[dict] = []

    def row(label, kind, pick, where=None, cls=""):
        values, places = [], []
        for c in a.cases:
            sm = c.summary
            values.append(pick(c, sm) if sm else None)
            places.append(where(c, sm) if sm and where else "")
        if any(v is not None for v in values):
            rows.append({"label": label, "kind": kind, "values": values, "where": places, "cls": cls})

    rows.append({"label": "Changes from the base", "kind": "text", "cls": "changes", "where": [""] * len(a.cases),
                 "values": ["; ".join(f"{ch.what} {ch.value}" for ch in c.changes) or ("–" if k == 0 else
                            "none: the same as the base") for k, c in enumerate(a.cases)]})
    rows.append({"label": "Result", "kind": "text", "cls": "status", "where": [""] * len(a.cases),
                 "values": [c.solution.message if c.solution.design is None else "" for c in a.cases]})
    if all(not v for v in rows[-1]["values"]):
        rows.pop()
    row("Flow", "flow", lambda c, sm: c.solution.design["Q"])
    first = next((c.summary for c in a.cases if c.summary), None) or {}
    for m in first.get("machines") or []:
        i, name = m["index"], m["label"]

        def duty(sm, key, i=i):
            d = next((d for d in sm.get("machines") or [] if d["index"] == i), None)
            return None if d is None else d.get(key)

        if m["kind"] == "pump":
            row(f"{name}: head added", "head", lambda c, sm, d=duty: d(sm, "head"))
            row(f"{name}: shaft power", "power", lambda c, sm, d=duty: d(sm, "power_shaft"))
            row(f"{name}: efficiency", "percent", lambda c, sm, d=duty: d(sm, "efficiency"))
            row(f"{name}: of best-efficiency flow", "percent",
                lambda c, sm, d=duty: (d(sm, "bep") or {}).get("share"))
            row(f"{name}: NPSH margin", "head", lambda c, sm, d=duty: (d(sm, "npsh") or {}).get("margin"))
        else:
            row(f"{name}: net head", "head", lambda c, sm, d=duty: d(sm, "head"))
            row(f"{name}: shaft power", "power", lambda c, sm, d=duty: d(sm, "power_shaft"))
            row(f"{name}: efficiency", "percent", lambda c, sm, d=duty: d(sm, "efficiency"))
            row(f"{name}: gross head lost in the line", "percent", lambda c, sm, d=duty: d(sm, "loss_share"))
    # What each case's settings came to: a pump's solved speed, a valve's opening or K for its target.
    for a_ in (a.cases[0].speeds if a.cases else []):
        row(f"{a_.label}: speed ratio (solved)", "ratio",
            lambda c, sm, i=a_.index: next((x.n for x in c.speeds if x.index == i), None))
    for v in (a.cases[0].valve_settings if a.cases else []):
        opening = v.opening is not None
        row(f"{v.label}: {'opening' if opening else 'loss coefficient K'} (set for its target)",
            "percent" if opening else "ratio",
            lambda c, sm, i=v.index, o=opening: next(((x.opening if o else x.K) for x in c.valve_settings
                                                      if x.index == i), None))
    row("Highest pressure", "pressure", lambda c, sm: (sm.get("pressure_high") or {}).get("pressure"),
        lambda c, sm: _where(sm.get("pressure_high")))
    row("Lowest pressure (absolute)", "pressure", lambda c, sm: (sm.get("pressure_low") or {}).get("pressure_abs"),
        lambda c, sm: _where(sm.get("pressure_low")))
    row("Highest velocity", "velocity", lambda c, sm: (sm.get("velocity_high") or {}).get("V"),
        lambda c, sm: (sm.get("velocity_high") or {}).get("label", ""))
    return rows
