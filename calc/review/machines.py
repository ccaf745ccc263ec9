"""Checks on the machines: pump NPSH and best-efficiency range, turbine net head, losses and maximum power."""

from __future__ import annotations

import math

from calc.model.elements import Line, Pump
from calc.model.settings import SRC_BEP, SRC_NPSH, SRC_PRACTICE, CheckSettings
from calc.review.findings import (
    PENSTOCK_LOSS_CAUTION,
    PENSTOCK_LOSS_WARNING,
    SRC_MAX_POWER,
    SRC_PENSTOCK,
    Finding,
    label,
    shown_in,
)
from calc.steady.series import Solution
from calc.water import G


def npsh_available(p_inlet_abs: float, V_inlet: float, p_vap: float, rho: float) -> float:
    """NPSH available at a pump inlet, NPSHa = (p_abs - p_vap) / (rho g) + V^2 / 2g [m].

    Parameters: p_inlet_abs absolute pressure at the inlet on the pump's datum [Pa], V_inlet mean
    velocity there [m/s], p_vap vapour pressure [Pa abs], rho density [kg/m3].
    Reference: ANSI/HI 9.6.1 definition; any pump text.

    >>> round(npsh_available(101325.0, 0.0, 2339.0, 998.2), 2)
    10.11
    """
    return (p_inlet_abs - p_vap) / (rho * G) + V_inlet * V_inlet / (2 * G)


def npsh_available_suction(p_surface_abs: float, p_vap: float, rho: float, z_static: float,
                           h_loss: float) -> float:
    """NPSHa from the suction side, (p_surface - p_vap)/(rho g) + z_static - h_loss [m].

    z_static is the height of the liquid surface above the pump datum [m] (negative for a lift),
    h_loss the suction line's losses at the operating flow [m]. Same as `npsh_available` taken
    through the energy equation. Open sump at sea level, 20 degC, 3 m lift, 0.5 m loss: 6.61 m.

    >>> round(npsh_available_suction(101325.0, 2339.3, 998.207, -3.0, 0.5), 2)
    6.61
    """
    return (p_surface_abs - p_vap) / (rho * G) + z_static - h_loss


def npsh_margin_needed(npshr: float, ratio: float, extra: float) -> float:
    """NPSH available needed for a margin: max(ratio * NPSHR, NPSHR + extra) [m].

    >>> npsh_margin_needed(4.0, 1.1, 0.6), npsh_margin_needed(8.0, 1.1, 0.6)
    (4.6, 8.8)
    """
    return max(ratio * npshr, npshr + extra)


def _machine_stations(point: dict, i: int) -> tuple[dict, dict] | None:
    st = [s for s in point["profile"] if s["element"] == i]
    return (st[0], st[-1]) if len(st) >= 2 else None


def pump_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    u = shown_in(line)
    out = []
    rho, p_atm, p_vap = line.liquid.rho, line.p_atm, line.liquid.p_vap
    rg = rho * G
    Q = point["Q"]
    for d in point["elements"]:
        if d["kind"] != "pump":
            continue
        i = d["index"]
        pump: Pump = line.elements[i]
        name = label(line, i)
        stations = _machine_stations(point, i)
        eta = d["efficiency"]
        P = d["power_shaft"]
        msg = (f"At {u(Q, 'flow', '.2f')} the pump adds {u(d['head'], 'head', '.2f')}; hydraulic power "
               f"{u(d['power_hydraulic'], 'power', '.2f')}")
        msg += (f", efficiency {eta:.3f}, shaft power {u(P, 'power', '.2f')}." if eta and P else
                "; no efficiency given, so no shaft power.")
        out.append(Finding("info", "pump-duty", f"{name}: duty point", msg, P if P else d["power_hydraulic"],
                           None, "power", "pump curve through the typed points", i))
        if stations is not None:
            inlet = stations[0]
            V2g = inlet["egl"] - inlet["hgl"]
            p_abs = p_atm + rg * inlet["pressure_head"]
            npsha = npsh_available(p_abs, math.sqrt(max(2 * G * V2g, 0.0)), p_vap, rho)
            npshr = d.get("npsh_required")
            basis = (f"NPSH available {u(npsha, 'head', '.2f')} at the pump inlet (elevation {u(inlet['elevation'], 'head', '.2f')}, "
                     f"absolute pressure {u(p_abs, 'pressure', '.1f')}, vapour pressure {u(p_vap, 'pressure', '.2f')})")
            if npshr is None:
                out.append(Finding("caution", "pump-npsh-unknown", f"{name}: NPSH required not given",
                                   basis + ": give the maker's NPSH required (NPSH3) on the curve points to "
                                   "check it.", npsha, None, "head", SRC_NPSH, i, inlet["chainage"]))
            else:
                need = npsh_margin_needed(npshr, s.npsh_margin_ratio, s.npsh_margin_min)
                margin = (f"the margin asked for is NPSHA at least {s.npsh_margin_ratio:g} x NPSHR or NPSHR + "
                          f"{u(s.npsh_margin_min, 'head', '.3g')}, whichever is greater: {u(need, 'head', '.2f')}")
                src = ("set on the sheet" if {"npsh_margin_ratio", "npsh_margin_min"} & set(s.given)
                       else SRC_NPSH)
                if npsha < npshr:
                    out.append(Finding("error", "pump-npsh", f"{name}: cavitation",
                                       f"{basis} is less than the NPSH required {u(npshr, 'head', '.2f')}: the pump cavitates "
                                       "and its head falls off. Lower the pump, shorten or enlarge the suction line, "
                                       "or choose a pump with less NPSH required.", npsha, npshr, "head", src, i,
                                       inlet["chainage"]))
                elif npsha < need:
                    out.append(Finding("warning", "pump-npsh", f"{name}: NPSH margin small",
                                       f"{basis} against NPSH required {u(npshr, 'head', '.2f')}; {margin}.", npsha, need,
                                       "head", src, i, inlet["chainage"]))
                else:
                    out.append(Finding("info", "pump-npsh", f"{name}: NPSH margin",
                                       f"{basis} against NPSH required {u(npshr, 'head', '.2f')}; {margin}.", npsha, need,
                                       "head", src, i, inlet["chainage"]))
        Q_bep = pump.best_efficiency_flow() if pump.mode == "curve" else None
        if Q_bep is None or Q_bep <= 0:
            why = pump.best_efficiency_note() if pump.mode == "curve" else "the pump is given by a fixed head"
            out.append(Finding("info", "pump-bep-unknown", f"{name}: best-efficiency flow unknown",
                               f"Not known from the data: {why}. Give the maker's efficiencies on both sides of the "
                               "best point to check the duty against the best-efficiency flow.",
                               None, None, None, SRC_BEP, i))
        else:
            r = Q / Q_bep
            lo, hi = s.bep_low, s.bep_high
            src = s.source("bep_low")
            text = (f"The duty flow is {r * 100:.0f} % of the best-efficiency flow {u(Q_bep, 'flow', '.2f')} "
                    f"(preferred range {lo * 100:.0f}-{hi * 100:.0f} %)")
            if r < lo or r > hi:
                out.append(Finding("warning", "pump-bep", f"{name}: away from best efficiency",
                                   text + ": expect more vibration, recirculation and wear, and less efficiency.",
                                   Q, Q_bep * (lo if r < lo else hi), "flow", src, i))
            else:
                out.append(Finding("info", "pump-bep", f"{name}: near best efficiency", text + ".",
                                   Q, Q_bep, "flow", src, i))
    return out


def impulse_duty(line, gross: float, point: dict) -> dict | None:
    """The impulse turbine a free jet drives (an end jet with an efficiency): its net head at the nozzle
    H_n = H_end - z_jet (the total head the jet is made from, nozzle loss included), hydraulic power
    rho g Q H_n and shaft power eta rho g Q H_n (net head and efficiency as IEC 60041:1991 defines them)."""
    end = line.end
    if end.kind != "jet" or not end.impulse_efficiency:
        return None
    Q = point["Q"]
    H = point["head_end"] - end.elevation
    P_h = line.liquid.rho * G * Q * H
    duty = {"kind": "impulse", "index": len(line.elements), "label": "Impulse turbine at the jet", "Q": Q,
            "head": H, "power_hydraulic": P_h, "efficiency": end.impulse_efficiency,
            "power_shaft": end.impulse_efficiency * P_h, "gross": gross, "loss": None, "loss_share": None,
            "power_max": None, "power_share": None, "efficiency_assumed": False,
            "jet_velocity": None}
    if gross > 0:
        duty["loss"] = gross - H
        duty["loss_share"] = (gross - H) / gross
    c = end.velocity_head_coefficient()
    if c > 0:
        duty["jet_velocity"] = end.velocity_coefficient * (2 * G * H) ** 0.5
    return duty


def penstock_loss_words(loss: float, within: str = ", within the 5-10 % commonly aimed for (common practice).") -> tuple[str, str]:
    """The severity of a share ``loss`` of the gross head lost in the line, and the words that end its finding."""
    if loss > PENSTOCK_LOSS_WARNING:
        return "warning", ": more than about 15 % (the most the source holds worth losing), which wastes water; a larger bore pays back."
    if loss > PENSTOCK_LOSS_CAUTION:
        return "caution", ": above the 5-10 % commonly aimed for (common practice)."
    return "info", within if within and loss >= 0.05 else "."


def impulse_findings(line: Line, solution: Solution, point: dict) -> list[Finding]:
    """The impulse turbine an end jet drives: its duty, and the share of the gross head the line loses."""
    d = impulse_duty(line, solution.static_head, point)
    if d is None:
        return []
    u = shown_in(line)
    out = [Finding("info", "impulse-duty", "Impulse turbine: design point",
                   f"At {u(d['Q'], 'flow', '.2f')}: net head at the nozzle {u(d['head'], 'head', '.2f')} of "
                   f"{u(d['gross'], 'head', '.2f')} gross, jet velocity {u(d['jet_velocity'] or 0.0, 'velocity', '.2f')}, "
                   f"hydraulic power {u(d['power_hydraulic'], 'power', '.2f')}, shaft power "
                   f"{u(d['power_shaft'], 'power', '.2f')} (efficiency {d['efficiency']:.3f}).",
                   d["power_shaft"], None, "power", "P = eta rho g Q H_n, H_n the net head at the nozzle inlet (IEC 60041:1991, Field acceptance tests to determine the hydraulic performance of hydraulic turbines, storage pumps and pump-turbines)")]
    if d["loss_share"] is not None:
        loss = d["loss_share"]
        text = (f"The line loses {loss * 100:.1f} % of the gross head ({u(d['loss'], 'head', '.2f')} of "
                f"{u(d['gross'], 'head', '.2f')}) before the nozzle")
        sev, tail = penstock_loss_words(loss, within="")
        out.append(Finding(sev, "impulse-head-loss", "Impulse turbine: head lost in the line", text + tail,
                           loss, PENSTOCK_LOSS_CAUTION, None, SRC_PENSTOCK))
    return out


def turbine_findings(line: Line, solution: Solution, point: dict) -> list[Finding]:
    u = shown_in(line)
    out = impulse_findings(line, solution, point)
    gross = solution.static_head
    machine_heads = sum(d["head_change"] for d in point["elements"] if d["kind"] in ("pump", "turbine"))
    Q = point["Q"]
    for d in point["elements"]:
        if d["kind"] != "turbine":
            continue
        i = d["index"]
        name = label(line, i)
        H = d["head"]
        out.append(Finding(
            "info", "turbine-duty", f"{name}: design point",
            f"At {u(Q, 'flow', '.2f')}: net head {u(H, 'head', '.2f')} of {u(gross, 'head', '.2f')} gross, hydraulic power "
            f"{u(d['power_hydraulic'], 'power', '.2f')}, shaft power {u(d['power_shaft'], 'power', '.2f')} "
            f"(efficiency {d['efficiency']:.3f}).", d["power_shaft"], None, "power",
            "P = eta rho g Q H (standard)", i))
        if gross > 0:
            loss = (gross - machine_heads) / gross
            text = (f"The line loses {loss * 100:.1f} % of the gross head ({u(gross - machine_heads, 'head', '.2f')} of "
                    f"{u(gross, 'head', '.2f')}) at the design point")
            sev, tail = penstock_loss_words(loss)
            out.append(Finding(sev, "turbine-head-loss", f"{name}: head lost in the line", text + tail,
                               None, None, None, SRC_PENSTOCK, i))
        m = next((m for m in solution.machines if m["index"] == i), None)
        if m and m.get("Q_at_max"):
            Pm, Qm = m["power_max"], m["Q_at_max"]
            Hm = m["head_available_at_max"]
            out.append(Finding(
                "info", "turbine-max-power", f"{name}: most power the line can give",
                f"The most shaft power this line can give the turbine is {u(Pm, 'power', '.2f')} at {u(Qm, 'flow', '.2f')} "
                f"(net head {u(Hm, 'head', '.2f')}, {100 * (1 - Hm / gross) if gross > 0 else float('nan'):.0f} % of gross "
                f"head lost); the design point gives {100 * d['power_shaft'] / Pm:.0f} % of it with "
                f"{100 * Q / Qm:.0f} % of the flow.", Pm, None, "power", SRC_MAX_POWER, i))
        out.append(Finding(
            "caution", "turbine-runaway", f"{name}: load rejection and runaway",
            "If the generator loses its load the runner speeds toward runaway speed unless the governor or "
            "deflector acts; closing the flow to stop it sends a surge up the penstock. Check the runaway speed "
            "against the turbine's and generator's rating, the closure time against the pipeline period 2L/a, "
            "and the overspeed protection.", None, None, None, SRC_PRACTICE, i))
    return out


#: Source of the speed a pump must run at: the affinity laws (Karassik et al., Pump Handbook, 4th ed.
#: 2008). They hold well near the curve's own speed and less well far below it (common practice).
SRC_AFFINITY = "affinity laws, H ~ n², Q ~ n (Karassik et al., Pump Handbook, 4th ed. 2008)"


def speed_findings(line: Line, answers) -> list[Finding]:
    """The speed each pump on a target must run at (`calc.steady.speed`), and whether the limits allow it."""
    u = shown_in(line)
    out = []
    for a in answers:
        goal = (f"{u(a.value, 'flow', '.3g')}" if a.target == "flow" else f"a head of {u(a.value, 'head', '.3g')}")
        if a.n is None:
            out.append(Finding("error", "pump-speed", f"{a.label}: no speed gives {goal}",
                               f"No speed of {a.label} gives {goal}: {a.reason}. The line is shown at the curve's "
                               "own speed.", None, None, None, SRC_AFFINITY, a.index))
            continue
        lo, hi = a.limits
        limits = ("" if lo is None and hi is None else
                  f" (limits {'' if lo is None else f'{lo:.3g}'}{' to ' if lo is not None and hi is not None else ''}"
                  f"{'' if hi is None else f'{hi:.3g}'} of it)")
        words = (f"{a.label} must run at {a.n:.4g} of its curve's speed for {goal}: "
                 f"{u(a.Q, 'flow', '.4g')} at {u(a.H, 'head', '.4g')}{limits}.")
        if a.within is False:
            side = "below the lowest" if lo is not None and a.n < lo else "above the highest"
            out.append(Finding("warning", "pump-speed", f"{a.label}: speed outside its limits",
                               f"{words} That is {side} speed allowed: the target cannot be met within the limits; "
                               "change the target, the pump or the line.",
                               a.n, lo if lo is not None and a.n < lo else hi, None, SRC_AFFINITY, a.index))
        else:
            out.append(Finding("info", "pump-speed", f"{a.label}: speed for its target", words
                               + ("" if a.within else " No speed limits were given; give them to have them checked."),
                               a.n, None, None, SRC_AFFINITY, a.index))
    return out


def set_flow_findings(line: Line, turbines) -> list[Finding]:
    """A turbine at a set flow that the line cannot pass that flow to (the head left for it is not positive)."""
    u = shown_in(line)
    out = []
    for t in turbines:
        if not t.passes:
            out.append(Finding("error", "turbine-set-flow", f"{t.label}: the line cannot pass its set flow",
                               f"At the set flow of {u(t.Q, 'flow', '.4g')} the line's losses use up all its head, "
                               f"{u(-t.head, 'head', '.3g')} more than it has: {t.label} would have to add head, not "
                               "take it. The line is shown with the turbine taking none; lower the set flow.",
                               t.head, 0.0, "head", "energy equation of the line at the set flow", t.index))
    return out
