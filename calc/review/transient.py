"""The transient analysis of a case reviewed: each run's highest and lowest pressure against its rating
and the vapour line, column separation and where, the devices' troubles, each finding naming its event
and case; and the figures the page, the CLI and the record show (`summary`).
"""

from __future__ import annotations

import math

import numpy as np

from calc.model.elements import Line
from calc.model.transient_spec import Event
from calc.review.findings import RATING_NEAR, SRC_VAPOUR, Finding, label, shown_in
from calc.review.surge import describe_wave_speed
from calc.transient import devices as dev_mod
from calc.transient.line import Answer
from calc.transient.machines import Suter
from calc.transient.sources import MOC_REF
from calc.transient.wave import wave_speed_detail
from calc.water import G

SRC_MOC = MOC_REF
#: Points a history keeps for the page, the JSON and the record: the run's own steps thinned evenly (the
#: envelope is taken from every step, so no extreme is lost by thinning).
HISTORY_POINTS = 600
#: Pressure heads within this of the vapour line count as on it [m].
VAPOUR_TOL = 1e-6


def describe_event(line: Line, ev: Event) -> str:
    """An event in words: what acts, how and when."""
    name = "the jet's nozzle" if ev.element == "end" else label(line, ev.element)
    if ev.kind in ("valve", "turbine"):
        law = ev.law
        what = "valve" if ev.kind == "valve" else "turbine's gate" if ev.element != "end" else "nozzle"
        verb = "closes" if ev.kind == "turbine" or (law.kind != "table" and law.to < 1.0) else "moves"
        if ev.kind == "turbine" and ev.element != "end":
            head = f"{name} rejects its load: its gate {verb}"
        else:
            head = f"{name} ({what}) {verb}"
        if law.kind == "table":
            pts = ", ".join(f"{s * 100:.0f} % at {t:g} s" for t, s in law.table)
            return f"{head} by the table {pts}"
        shape = "linearly" if law.kind == "linear" else f"by the power law, exponent {law.exponent:g}"
        return (f"{head} to {law.to * 100:.0f} % open over {law.time:g} s from t = {law.start:g} s, {shape} "
                "in travel")
    if ev.kind == "pump_trip":
        cv = "a check valve closing against reverse flow" if ev.check_valve else "no check valve"
        fq = "its typed four-quadrant table" if ev.four_quadrant else "its typed curves (homologous laws)"
        return (f"{name} trips at t = {ev.start:g} s and runs down on an inertia of {ev.inertia:g} kg·m² a unit "
                f"(rated speed {ev.rated_speed * 60 / (2 * math.pi):.0f} rpm), by {fq}, with {cv}")
    return (f"{name} starts at t = {ev.start:g} s, its motor bringing it to speed over {ev.time:g} s (linear), "
            "from the line at rest behind its check valve")


def name_event(line: Line, ev: Event) -> str:
    """An event in a few words, for a finding that names it (its law and times are in the run's summary)."""
    name = "the jet's nozzle" if ev.element == "end" else label(line, ev.element)
    if ev.kind == "turbine":
        return f"{name} rejecting its load" if ev.element != "end" else f"{name} closing"
    if ev.kind == "valve":
        return f"{name} closing" if ev.law.kind != "table" and ev.law.to < 1.0 else f"{name} moving"
    return f"{name} tripping" if ev.kind == "pump_trip" else f"{name} starting"


def _thin(t: np.ndarray, *series) -> list:
    n = len(t)
    step = max(1, int(math.ceil(n / HISTORY_POINTS)))
    idx = list(range(0, n, step))
    if idx[-1] != n - 1:
        idx.append(n - 1)
    return [[float(t[i]) for i in idx]] + [[float(s[i]) for i in idx] for s in series]


def summary(line: Line, ans: Answer) -> dict:
    """The figures of one case's transient run, JSON-safe (SI)."""
    r = ans.result
    rho = ans.rho
    envelope, runs = [], []
    u = shown_in(line)
    for k, p in enumerate(ans.pipes):
        z = r.elevation[k]
        pmax = rho * G * (r.H_max[k] - z)
        pmin = rho * G * (r.H_min[k] - z)
        i_max, i_min = int(np.argmax(pmax)), int(np.argmin(pmin))
        envelope.append({
            "run": p.label, "element": ans.runs[k], "chainage": r.chainage[k].tolist(), "elevation": z.tolist(),
            "steady": r.H0[k].tolist(), "max": r.H_max[k].tolist(), "min": r.H_min[k].tolist(),
            "vapour": ans.vapour[k].tolist(),
            "rating": ans.rating_head[k].tolist() if ans.rating_head[k] is not None else None,
        })
        runs.append({
            "run": p.label, "element": ans.runs[k], "rating": p.rating, "wave_speed": p.a,
            "wave_speed_used": r.grid.a_used[k], "reaches": r.grid.counts[k],
            "p_max": float(pmax[i_max]), "at_max": float(r.chainage[k][i_max]),
            "p_min": float(pmin[i_min]), "at_min": float(r.chainage[k][i_min]),
            "p_steady_max": float(np.max(rho * G * (r.H0[k] - z))),
            "cavity_max": float(r.cavity_max[k].max()),
            "vapour_reached": bool(r.cavity_max[k].max() > 0.0 or np.any(r.H_min[k] <= ans.vapour[k] + VAPOUR_TOL)),
            "wave_speed_text": describe_wave_speed(wave_speed_detail(line, line.elements[ans.runs[k]]), u),
        })
    histories = {}
    for name, h in r.histories.items():
        if "H" in h:
            t, H, Q = _thin(r.t, h["H"], h["Q"])
            histories[name] = {"t": t, "H": H, "Q": Q}
    machines = {}
    for i, m in ans.machines.items():
        t, speed, Q = _thin(np.asarray(m.t), m.alphas, m.flows)
        machines[label(line, i)] = {"element": i, "t": t, "speed": speed, "Q": Q,
                                    "speed_end": float(m.alphas[-1]), "reversed_at": m.reversed_at}
    devices = []
    for pl in ans.placed:
        d, mdl = pl.device, pl.model
        out = {"kind": d.kind, "label": mdl.name, "chainage": pl.chainage, "asked_chainage": d.chainage,
               "path": d.path}
        if isinstance(mdl, dev_mod.SurgeTank):
            t, lv = _thin(np.asarray(mdl.t), mdl.levels)
            out.update(t=t, level=lv, level_max=float(max(mdl.levels)), level_min=float(min(mdl.levels)),
                       top=mdl.top, bottom=mdl.bottom, overflow_at=mdl.overflow_at, drained_at=mdl.drained_at,
                       spilled=mdl.spilled)
        elif isinstance(mdl, dev_mod.AirVessel):
            t, gas = _thin(np.asarray(mdl.t), mdl.gas)
            out.update(t=t, gas=gas, gas_max=float(max(mdl.gas)), gas_min=float(min(mdl.gas)),
                       volume=mdl.volume, emptied_at=mdl.emptied_at)
        else:
            t, air = _thin(np.asarray(mdl.t), mdl.air)
            out.update(t=t, air=air, air_max=mdl.V_max, opened_at=mdl.opened_at)
        devices.append(out)
    return {
        "case": ans.case, "events": [describe_event(line, ev) for ev in ans.events],
        "events_named": [name_event(line, ev) for ev in ans.events],
        "event_kinds": [ev.kind for ev in ans.events],
        "duration": float(r.t[-1]), "dt": r.grid.dt, "reaches": int(sum(r.grid.counts)),
        "steps": int(len(r.t) - 1), "notes": list(ans.notes), "envelope": envelope, "runs": runs,
        "histories": histories, "machines": machines, "devices": devices, "points": ans.points,
        "at_rest": ans.start_at_rest, "four_quadrant": any(isinstance(m.unit, Suter) for m in ans.machines.values()),
    }


def findings(line: Line, s: dict) -> list[Finding]:
    """What the run says against each run's rating, the vapour line and the atmosphere; the devices."""
    u = shown_in(line)
    case = s["case"]
    ev = ", ".join(s.get("events_named") or s["events"])
    where = f"in case {case} ({ev})"
    out: list[Finding] = []
    for run in s["runs"]:
        name, i = run["run"], run["element"]
        pm = run["p_max"]
        text = (f"The highest pressure in the transient is {u(pm, 'pressure', '.0f')} at chainage "
                f"{u(run['at_max'], 'length', '.0f')}, {where}")
        if run["rating"]:
            if pm > run["rating"]:
                out.append(Finding("error", "transient-rating", f"{name}: transient exceeds rating",
                                   f"{text}: above the run's rating {u(run['rating'], 'pressure', '.0f')}. Add "
                                   "protection (slower closure, surge tank, air vessel) or a higher class.",
                                   pm, run["rating"], "pressure", SRC_MOC, i, run["at_max"]))
            elif pm > RATING_NEAR * run["rating"]:
                out.append(Finding("warning", "transient-rating", f"{name}: transient close to rating",
                                   f"{text}: within {100 - RATING_NEAR * 100:.0f} % of the run's rating "
                                   f"{u(run['rating'], 'pressure', '.0f')}.", pm, run["rating"], "pressure",
                                   SRC_MOC, i, run["at_max"]))
            else:
                out.append(Finding("info", "transient-rating", f"{name}: transient within rating",
                                   f"{text}: within the run's rating {u(run['rating'], 'pressure', '.0f')}.",
                                   pm, run["rating"], "pressure", SRC_MOC, i, run["at_max"]))
        else:
            out.append(Finding("caution", "transient-no-rating", f"{name}: no pressure rating given",
                               f"{text}; the run has no rating to hold it against: give the pipe's pressure rating.",
                               pm, None, "pressure", SRC_MOC, i, run["at_max"]))
        if run["vapour_reached"]:
            vol = run["cavity_max"]
            text = (f"The head falls to the vapour line (column separation) at chainage "
                    f"{u(run['at_min'], 'length', '.0f')}, {where}")
            text += (f"; the largest vapour cavity is {vol * 1000:.3g} L and its collapse sends a surge, in the "
                     "envelope." if vol > 0 else "; at a joint, where no cavity is modelled, the heads near it are "
                     "not reliable.")
            out.append(Finding("warning", "transient-vapour", f"{name}: column separation",
                               text + " Column separation is to be designed out: protect the line so the head stays "
                               "above the vapour line.", run["p_min"], None, "pressure", SRC_VAPOUR, i, run["at_min"]))
        elif run["p_min"] < 0.0:
            out.append(Finding("caution", "transient-subatmospheric", f"{name}: below atmospheric in the transient",
                               f"The pressure falls to {u(run['p_min'], 'pressure', '.0f')} gauge at chainage "
                               f"{u(run['at_min'], 'length', '.0f')}, {where}: below atmospheric, air may be drawn in "
                               "at joints and air valves, and a thin-walled pipe may buckle.",
                               run["p_min"], 0.0, "pressure", SRC_MOC, i, run["at_min"]))
    for d in s["devices"]:
        nm = d["label"]
        if d["kind"] == "surge_tank":
            if d["overflow_at"] is not None:
                out.append(Finding("warning", "transient-tank-overflow", f"{nm}: overflows",
                                   f"The surge tank overflows its rim at t = {d['overflow_at']:.2f} s, {where} "
                                   f"(about {d['spilled']:.3g} m³ spilled): raise its rim or add an overflow.",
                                   d["level_max"], d["top"], "length", SRC_MOC, None, d["chainage"]))
            if d["drained_at"] is not None:
                out.append(Finding("error", "transient-tank-drains", f"{nm}: drains",
                                   f"The surge tank empties at t = {d['drained_at']:.2f} s, {where}: air would be "
                                   "drawn into the line. Lower its floor or enlarge it.",
                                   d["level_min"], d["bottom"], "length", SRC_MOC, None, d["chainage"]))
        elif d["kind"] == "air_vessel":
            if d["emptied_at"] is not None:
                out.append(Finding("error", "transient-vessel-empties", f"{nm}: empties",
                                   f"The air vessel's water is gone at t = {d['emptied_at']:.2f} s, {where}: its gas "
                                   "would enter the line. Give it more volume or less gas.",
                                   d["gas_max"], d["volume"], None, SRC_MOC, None, d["chainage"]))
        elif d["opened_at"] is not None:
            out.append(Finding("caution", "transient-air-admitted", f"{nm}: admits air",
                               f"The air valve lets in up to {d['air_max'] * 1000:.3g} L of air from t = "
                               f"{d['opened_at']:.2f} s, {where}; the air must leave slowly (a small outflow "
                               "orifice) or its expulsion slams the column shut.", d["air_max"], None, None,
                               SRC_MOC, None, d["chainage"]))
    for kind in s["event_kinds"]:
        if kind == "turbine":
            out.append(Finding("caution", "transient-runaway", "Turbine speed rise on load rejection",
                               f"When a turbine rejects its load it speeds up towards its runaway speed while its gate "
                               f"closes, {where}: the closing time trades the pressure rise against the speed rise. The "
                               "speed rise is not modelled here (the turbine is taken as an orifice scaled by its gate): "
                               "check the runaway speed against the turbine's and the generator's rating, and confirm "
                               "the governor, the overspeed protection and the closing law with the turbine's supplier.",
                               None, None, None, "common practice"))
            break
    for name, m in s["machines"].items():
        if m["reversed_at"] is not None:
            out.append(Finding("warning", "transient-pump-reverse", f"{name}: runs backwards",
                               f"Flow reverses through the pump at t = {m['reversed_at']:.2f} s, {where}: the pump "
                               "may turn backwards; check its reverse-speed limit with the maker.",
                               None, None, None, SRC_MOC, m["element"], None))
    return out


def analysed_caution(f: Finding, s: dict) -> Finding:
    """The general caution on surge, for a case whose events were run: what was analysed and what was not."""
    return Finding(f.severity, f.code, f.title,
                   f"Transients are analysed here for the events listed ({', '.join(s.get('events_named') or s['events'])}) by the method of "
                   "characteristics, from this case's steady state, with quasi-steady friction; other events (other "
                   "closures, power failure of other machines, start-up, air in the line, resonance) are not. The "
                   "model is not the line: confirm the protection with the suppliers of the machines and valves, "
                   "local codes and licensed engineering practice before the design is final.", source=f.source)
