"""The record's energy over a year: the turbine's annual energy from the flow-duration table, and the
pumping energy and cost of each case. Empty when the sheet asks for neither."""

from __future__ import annotations

from calc.record.context import Context
from calc.record.parts import Table
from calc.record.text import shown


def _kwh(wh: float) -> str:
    return f"{wh / 1000:,.0f} kWh"


def energy(c: Context) -> list[Table]:
    en = c.a.energy
    if not en:
        return []
    s = c.system
    out = []
    for h in en.get("hydro") or []:
        rows = [[f"{p['exceedance'] * 100:.4g} %", shown(p["flow"], "flow", s), shown(p["turbine_flow"], "flow", s),
                 shown(p["power"], "power", s)] for p in h["points"]]
        out.append(Table(["Share of time exceeded", "Flow available", "Turbine flow", "Shaft power"], rows,
                         f"Flow-duration table and the turbine's power ({h['case']})", ["r", "r", "r", "r"],
                         note=(f"Turbine flow: the flow available up to {shown(h['Q_rated'], 'flow', s)} "
                               f"({h['flow_max_from']}), none below {shown(h['flow_min'], 'flow', s)}. Power "
                               "P = η ρ g Q H(Q), H the head the line leaves the turbine at that flow. Annual energy "
                               f"E = 8760 h × ∫ P dp over the share of time p (trapezoidal rule, {h['substeps']} steps "
                               f"on each smooth piece): {_kwh(h['energy_Wh'])}; capacity factor E / (8760 h × "
                               f"{shown(h['P_rated'], 'power', s)}) = "
                               + (f"{h['capacity_factor'] * 100:.1f} %" if h["capacity_factor"] is not None else "–")
                               + f"; running {h['hours_running']:,.0f} h a year."), css="energy"))
    pumping = en.get("pumping") or []
    if pumping:
        rows = []
        for r in pumping:
            cost = f"{r['cost']:,.0f} {r['currency']}".strip() if r["cost"] is not None else "–"
            power = shown(r["power_input"], "power", s) + (" (hydraulic)" if r["hydraulic_only"] else "")
            rows.append([r["case"], f"{r['hours']:,.0f} h", power, _kwh(r["energy_Wh"]), cost])
        t = en["pumping_total"]
        rows.append(["Year", f"{t['hours']:,.0f} h", "", _kwh(t["energy_Wh"]),
                     f"{t['cost']:,.0f} {t['currency']}".strip() if t["cost"] is not None else "–"])
        motor = pumping[0]["motor_efficiency"]
        out.append(Table(["Case", "Hours a year", "Power drawn", "Energy", "Cost"], rows, "Pumping energy and cost",
                         ["l", "r", "r", "r", "r"],
                         note=("Power drawn = the pumps' shaft power / the motor and drive efficiency "
                               + (f"({motor:.3g})" if motor else "(none given: shaft energy)")
                               + "; energy = power × hours; cost = energy × the tariff. Each case runs the hours "
                                 "it gives; the base, the energy group's."), css="energy"))
    return out
