"""Energy over a year: a turbine's annual energy and capacity factor from the river's flow-duration table,
and a pumped line's energy and cost from the hours each case runs.

Hydro: the flow available Q_a(p) at each share p of the time it is exceeded runs linearly between the
table's points (flat before the first and after the last). The turbine passes Q_t = min(Q_a, Q_max), and
nothing while Q_a is below its least flow Q_min; its power is P = eta(Q_t) rho g Q_t H(Q_t), H the head
the line leaves it at that flow (the energy balance without it), so the line's losses at each flow
count. E = 8760 h x the integral of P over p, by the trapezoidal rule with SUBSTEPS steps on each piece
of the year where P is smooth (between the table's points, split where Q_a crosses Q_min and Q_max, so
the jump to nothing below Q_min is taken exactly); the capacity factor is E over
8760 h at the power at Q_max (the turbine's rating on this line).

Pumping: each case's shaft power (hydraulic where no efficiency is typed, and said so) over the motor
and drive efficiency, times its hours, priced at the tariff. The base runs the energy group's hours and
each case the hours it gives (a case giving none adds nothing), so the year is their sum.
"""

from __future__ import annotations

import numpy as np

from calc.model.elements import Pump, Turbine
from calc.model.energy import HOURS_PER_YEAR, EnergyInputs
from calc.steady.series import residual, residual_array
from calc.water import G

SUBSTEPS = 200


def flow_available(duration: list[tuple[float, float]], p: np.ndarray) -> np.ndarray:
    """The flow exceeded a share ``p`` of the time, linear between the table's points, flat past its ends."""
    xs = [x for x, _ in duration]
    qs = [q for _, q in duration]
    return np.interp(p, xs, qs)


def hydro(line, inputs: EnergyInputs, design_Q: float | None) -> dict | None:
    """The first turbine's annual energy from the flow-duration table, or None without a table or turbine."""
    turbines = [i for i, el in enumerate(line.elements) if isinstance(el, Turbine)]
    if not inputs.duration or not turbines:
        return None
    i = turbines[0]
    el: Turbine = line.elements[i]
    q_min = inputs.flow_min or 0.0
    q_max = inputs.flow_max if inputs.flow_max is not None else design_Q
    if q_max is None:
        return None
    rg = line.liquid.rho * G
    # Pieces of the year on which the power is smooth: between the table's points, split where the flow
    # crosses the turbine's least and greatest flow (the power jumps to nothing below the least).
    edges = {0.0, 1.0} | {x for x, _ in inputs.duration}
    for (x0, q0), (x1, q1) in zip(inputs.duration, inputs.duration[1:]):
        for q in (q_min, q_max):
            if min(q0, q1) < q < max(q0, q1):
                edges.add(x0 + (x1 - x0) * (q - q0) / (q1 - q0))
    edges = sorted(edges)
    energy = hours = 0.0
    for a, b in zip(edges, edges[1:]):
        p = np.linspace(a, b, SUBSTEPS + 1)
        if flow_available(inputs.duration, np.array([(a + b) / 2]))[0] < q_min:
            continue  # the turbine stands still on this piece
        Q_t = np.minimum(flow_available(inputs.duration, p), q_max)
        with np.errstate(all="ignore"):
            H = residual_array(line, Q_t, skip=i)
        P = np.maximum(np.asarray(el.eta(Q_t), dtype=float) * rg * Q_t * H, 0.0)
        energy += HOURS_PER_YEAR * float(np.trapezoid(P, p))  # [W h]
        hours += HOURS_PER_YEAR * (b - a)
    with np.errstate(all="ignore"):
        H_rated = residual(line, q_max, skip=i)
    P_rated = max(float(el.eta(q_max)) * rg * q_max * H_rated, 0.0)
    table = []
    for x, q in inputs.duration:
        qt = min(q, q_max) if q >= q_min else 0.0
        with np.errstate(all="ignore"):
            h = residual(line, qt, skip=i) if qt > 0 else 0.0
        table.append({"exceedance": x, "flow": q, "turbine_flow": qt,
                      "power": max(float(el.eta(qt)) * rg * qt * h, 0.0) if qt > 0 else 0.0})
    return {"turbine": el.label or f"turbine {i + 1}", "index": i, "energy_Wh": energy, "P_rated": P_rated,
            "Q_rated": q_max, "flow_min": q_min, "flow_max_from": "typed" if inputs.flow_max is not None
            else "the design flow", "capacity_factor": energy / (P_rated * HOURS_PER_YEAR) if P_rated > 0 else None,
            "hours_running": hours, "points": table, "substeps": SUBSTEPS}


def pumping(line, solution, inputs: EnergyInputs) -> dict | None:
    """A case's pumping energy and cost over its hours a year, or None without hours or a design point."""
    pumps = [d for d in (solution.design or {}).get("elements", []) if d["kind"] == "pump"]
    if inputs.hours is None or not pumps:
        return None
    shaft = 0.0
    assumed = False
    for d in pumps:
        if d.get("power_shaft") is not None:
            shaft += d["power_shaft"]
        else:
            shaft += d["power_hydraulic"]
            assumed = True
    motor = inputs.motor_efficiency or 1.0
    P_in = shaft / motor
    energy = P_in * inputs.hours  # [W h]
    cost = energy / 1000.0 * inputs.tariff if inputs.tariff is not None else None
    return {"hours": inputs.hours, "power_shaft": shaft, "power_input": P_in, "motor_efficiency": inputs.motor_efficiency,
            "energy_Wh": energy, "cost": cost, "currency": inputs.currency, "tariff": inputs.tariff,
            "hydraulic_only": assumed, "pumps": [d["label"] for d in pumps],
            "motor_assumed": inputs.motor_efficiency is None}


def year(cases) -> dict | None:
    """Energy over a year for every case: the hydro energy of each case with a table, and the pumping energy
    and cost of each case with hours, with their totals; None when the sheet asks for neither."""
    hydro_rows, pump_rows = [], []
    for k, c in enumerate(cases):
        inputs = c.line.settings.get("energy")
        if not isinstance(inputs, EnergyInputs) or not inputs.any:
            continue
        design = c.solution.design["Q"] if c.solution.design is not None else None
        h = hydro(c.line, inputs, design)
        if h is not None:
            hydro_rows.append({"case": c.name, **h})
        # A case runs the hours it gives: the base's are not carried into the cases, or they would count twice.
        own_hours = k == 0 or any(ch.case_path.endswith(".hours") for ch in c.changes)
        if own_hours and any(isinstance(el, Pump) for el in c.line.elements):
            pu = pumping(c.line, c.solution, inputs)
            if pu is not None:
                pump_rows.append({"case": c.name, **pu})
    if not hydro_rows and not pump_rows:
        return None
    out = {"hydro": hydro_rows, "pumping": pump_rows}
    if pump_rows:
        out["pumping_total"] = {"hours": sum(r["hours"] for r in pump_rows),
                                "energy_Wh": sum(r["energy_Wh"] for r in pump_rows),
                                "cost": (sum(r["cost"] for r in pump_rows)
                                         if all(r["cost"] is not None for r in pump_rows) else None),
                                "currency": pump_rows[0]["currency"]}
    return out
