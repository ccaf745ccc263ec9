"""Checks on pressure along the line: sub-atmospheric stretches, column separation, the lowest pressure."""

from __future__ import annotations

from calc.model.elements import Line, PipeRun, Pump, Turbine
from calc.model.settings import SRC_PRACTICE
from calc.review.findings import H_TOL, SRC_AIR, SRC_VAPOUR, Finding, label, shown_in, suction_runs
from calc.steady.siphon import broken_siphon_flow
from calc.water import G


def stretches_below(stations: list[dict], h_limit: float, inclusive: bool = False) -> list[dict]:
    """Stretches of the line where the pressure head is below h_limit [m] (at or below if inclusive).

    Each stretch is ``{"from": chainage, "to": chainage, "min": station}``. Between stations the HGL and the pipe centre are straight, so the pressure head is linear in
    chainage: stretch ends are interpolated and each stretch's minimum lies at a station.
    """
    def below(h):
        return h <= h_limit + H_TOL if inclusive else h < h_limit - H_TOL

    def cross(a, b):
        ha, hb = a["pressure_head"], b["pressure_head"]
        if hb == ha or b["chainage"] == a["chainage"]:
            return b["chainage"]
        return a["chainage"] + (h_limit - ha) / (hb - ha) * (b["chainage"] - a["chainage"])

    out: list[dict] = []
    cur = None
    prev = None
    for s in stations:
        if below(s["pressure_head"]):
            if cur is None:
                cur = {"from": cross(prev, s) if prev is not None else s["chainage"], "min": s, "to": None}
            elif s["pressure_head"] < cur["min"]["pressure_head"]:
                cur["min"] = s
        elif cur is not None:
            cur["to"] = cross(prev, s)
            out.append(cur)
            cur = None
        prev = s
    if cur is not None:
        cur["to"] = prev["chainage"]
        out.append(cur)
    return out


def _run_start(line: Line, index: int) -> float:
    """Chainage [m] where element ``index`` starts (runs only have length)."""
    return sum(el.L for el in line.elements[:index] if isinstance(el, PipeRun))


def pressure_findings(line: Line, point: dict) -> list[Finding]:
    """Sub-atmospheric stretches, column separation and the lowest pressure along the line."""
    u = shown_in(line)
    stations = point["profile"]
    if not stations:
        return []
    rho, p_atm, p_vap = line.liquid.rho, line.p_atm, line.liquid.p_vap
    rg = rho * G
    out = []
    suction = suction_runs(line)
    machine_out = set()  # ids of stations just downstream of a turbine: the draft tube's domain
    for k in range(1, len(stations)):
        e = stations[k]["element"]
        if e is not None and isinstance(line.elements[e], Turbine) and stations[k - 1]["element"] == e:
            machine_out.add(id(stations[k]))

    def where(s):
        e = s["element"]
        return f"at chainage {u(s['chainage'], 'head', '.1f')}" + (f" ({label(line, e)})" if e is not None else "")

    # Column separation first: the steady answer does not hold there.
    h_vap = (p_vap - p_atm) / rg
    for st in stretches_below(stations, h_vap, inclusive=True):
        m = st["min"]
        p_abs = p_atm + rg * m["pressure_head"]
        out.append(Finding(
            "error", "pressure-vapour", "Pressure falls to vapour pressure",
            f"From chainage {u(st['from'], 'head', '.1f')} to {u(st['to'], 'head', '.1f')} the computed absolute pressure is at or below "
            f"the vapour pressure ({u(p_vap, 'pressure', '.2f')}); lowest {u(p_abs, 'pressure', '.1f')} absolute {where(m)}. "
            "The water column separates there, so the flow and pressures computed are not valid: lower the "
            "line, raise the hydraulic grade line (less loss upstream, higher start) or add a break tank.",
            rg * m["pressure_head"], p_vap - p_atm, "pressure", SRC_VAPOUR, m["element"], m["chainage"]))
    for st in stretches_below(stations, 0.0):
        m = st["min"]
        e = m["element"]
        p_g = rg * m["pressure_head"]
        if id(m) in machine_out:
            out.append(Finding(
                "caution", "pressure-turbine-outlet", f"{label(line, e)}: outlet below atmospheric",
                f"The pressure head at the turbine outlet is {u(m['pressure_head'], 'head', '.2f')} ({u(p_g, 'pressure', '.1f')} gauge): "
                "a draft tube under suction. Check the turbine setting against the maker's cavitation limit.",
                p_g, 0.0, "pressure", "turbine maker's setting (cavitation coefficient)", e, m["chainage"]))
            continue
        in_suction = e is not None and (e in suction or isinstance(line.elements[e], Pump))
        if in_suction:
            out.append(Finding(
                "caution", "pressure-suction-vacuum", f"{label(line, e)}: suction under vacuum",
                f"Pressure below atmospheric from chainage {u(st['from'], 'head', '.1f')} to {u(st['to'], 'head', '.1f')} on the suction "
                f"side, lowest {u(m['pressure_head'], 'head', '.2f')} ({u(p_g, 'pressure', '.1f')} gauge) {where(m)}: joints and "
                "glands must be tight or air is drawn in; see the NPSH check.",
                p_g, 0.0, "pressure", SRC_PRACTICE, e, m["chainage"]))
            continue
        if m["chainage"] <= 1e-9 and line.start.kind == "reservoir":
            # Lowest at the intake itself: the connection sits too close to the surface for the
            # entrance loss and velocity head, so it draws air there; that, not a siphon, is the cause.
            depth = line.start.elevation - line.start.pipe_elevation
            if line.start.outlet_elevation is None:
                out.append(Finding(
                    "info", "pressure-intake-depth", "Pipe connection depth not given",
                    "The pipe connection's elevation is not given, so it is taken at the water surface, where the "
                    f"entrance loss and velocity head leave {u(m['pressure_head'], 'head', '.2f')} of pressure "
                    "head: give the connection elevation (below the lowest water level) to check its submergence.",
                    p_g, 0.0, "pressure", SRC_PRACTICE, e, 0.0))
                continue
            out.append(Finding(
                "warning", "pressure-intake", "Intake too close to the water surface",
                f"At the pipe connection, {u(depth, 'head', '.2f')} below the supply surface, the pressure is "
                f"{u(m['pressure_head'], 'head', '.2f')} ({u(p_g, 'pressure', '.1f')} gauge): less submergence than "
                "the entrance loss and velocity head need, so the intake draws air and vortices form. Set the "
                "connection deeper below the lowest water level.", p_g, 0.0, "pressure", SRC_PRACTICE, e, 0.0))
            continue
        Q_broken = None
        if e is not None and isinstance(line.elements[e], PipeRun):
            Q_broken = broken_siphon_flow(line, e, m["chainage"] - _run_start(line, e))
        Q = point["Q"]
        broken = ("with air let in there the flow would fall to "
                  + (f"{u(Q_broken, 'flow', '.4g')} ({100 * Q_broken / Q:.0f} % of {u(Q, 'flow', '.4g')}), the pipe below "
                     "the crest running part full" if Q_broken else "nothing: the crest stands above what the start "
                     "can lift water to")) if Q_broken is not None else ""
        out.append(Finding(
            "warning", "pressure-subatmospheric", "Siphon: pressure below atmospheric",
            f"From chainage {u(st['from'], 'head', '.1f')} to {u(st['to'], 'head', '.1f')} the pipe lies above its hydraulic grade line; "
            f"lowest {u(m['pressure_head'], 'head', '.2f')} ({u(p_g, 'pressure', '.1f')} gauge) {where(m)}. This reach works only as a "
            "siphon: it must be primed (filled) to start, and the air that comes out of solution must be taken off "
            "at the crest by a valve that only releases air (or a vacuum pump). An air-admitting (air/vacuum) valve "
            f"there would break the siphon{': ' + broken if broken else ''}. Lowering the pipe below the grade line "
            "or raising the grade line removes the siphon.",
            p_g, 0.0, "pressure", SRC_AIR, e, m["chainage"]))
    if line.end.free_outlet is not None:
        z_out, z_surf = line.end.free_outlet, line.end.elevation
        out.append(Finding(
            "info", "end-free-discharge", "Free discharge above the receiving tank",
            f"The last run ends at {u(z_out, 'head', '.2f')}, {u(z_out - z_surf, 'head', '.2f')} above the receiving water surface at "
            f"{u(z_surf, 'head', '.2f')}: it discharges freely at the outlet, so the flow is driven to the outlet's "
            "elevation and the fall below it does no work. Lowering the outlet below the surface (a submerged "
            "inlet to the tank) would add that head.", z_out, z_surf, "length", SRC_PRACTICE, len(line.elements) - 1,
            stations[-1]["chainage"]))
    low = min(stations, key=lambda s: s["pressure_head"])
    h = low["pressure_head"]
    out.append(Finding(
        "info", "pressure-lowest", "Lowest pressure",
        f"Lowest pressure {u(rg * h, 'pressure', '.1f')} gauge ({u((p_atm + rg * h), 'pressure', '.1f')} absolute, "
        f"{u(h, 'head', '.2f')} of head) {where(low)}. Pressures are computed at the run ends and profile points; between "
        "them they vary linearly, so add profile points at every high point of the route.",
        rg * h, None, "pressure", "steady grade line", low["element"], low["chainage"]))
    return out
