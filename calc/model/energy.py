"""What a sheet says about energy over a year (the document's ``energy`` group): for a hydro line the
river's flow-duration table and the turbine's flow range, for a pumped line the hours each case runs,
and the tariff energy is priced at."""

from __future__ import annotations

from dataclasses import dataclass, field

from calc.model.fields import ENERGY_FIELDS, FDC_POINT_FIELDS, MAX_LABEL, MAX_POINTS
from calc.model.reader import Reader
from calc.units import FLOW, RATIO

HOURS_PER_YEAR = 8760.0


@dataclass
class EnergyInputs:
    """``hours`` a year the line runs in this case (pumping); ``tariff`` per kWh in ``currency``;
    ``motor_efficiency`` between the grid and the pump shafts; ``duration`` the flow-duration table
    as (fraction of the time exceeded, flow [m3/s]) in order; the turbine's flow range."""

    hours: float | None = None
    tariff: float | None = None
    currency: str = ""
    motor_efficiency: float | None = None
    duration: list[tuple[float, float]] = field(default_factory=list)
    flow_min: float | None = None
    flow_max: float | None = None

    @property
    def any(self) -> bool:
        return self.hours is not None or bool(self.duration)


def read_energy(r: Reader, doc: dict) -> EnergyInputs:
    d = r.obj(doc, "energy", "energy")
    r.known(d, "energy", ENERGY_FIELDS, "the energy inputs")
    p = "energy"
    out = EnergyInputs()
    out.hours = r.qty(d, "hours", f"{p}.hours", RATIO, required=False, lo=0.0, hi=HOURS_PER_YEAR,
                      what="the hours a year")
    out.tariff = r.qty(d, "tariff", f"{p}.tariff", RATIO, required=False, lo=0.0, what="the tariff per kWh")
    out.currency = r.text(d, "currency", f"{p}.currency", MAX_LABEL) or ""
    out.motor_efficiency = r.qty(d, "motor_efficiency", f"{p}.motor_efficiency", RATIO, required=False, lo=0.0,
                                 lo_open=True, hi=1.0, what="the motor and drive efficiency")
    out.flow_min = r.qty(d, "turbine_flow_min", f"{p}.turbine_flow_min", FLOW, required=False, lo=0.0,
                         what="the turbine's least flow")
    out.flow_max = r.qty(d, "turbine_flow_max", f"{p}.turbine_flow_max", FLOW, required=False, lo=0.0, lo_open=True,
                         what="the turbine's greatest flow")
    if out.flow_min is not None and out.flow_max is not None and out.flow_min >= out.flow_max:
        r.fail(f"{p}.turbine_flow_max", d.get("turbine_flow_max"), "must be above the turbine's least flow")
    points = []
    for j, pt in enumerate(r.lst(d, "flow_duration", f"{p}.flow_duration", MAX_POINTS)):
        pp = f"{p}.flow_duration.{j}"
        if not isinstance(pt, dict):
            r.fail(pp, pt, "must have a share of time exceeded and a flow")
            continue
        r.known(pt, pp, FDC_POINT_FIELDS, "a flow-duration point")
        if all(r.blank(pt.get(k)) for k in FDC_POINT_FIELDS):
            continue
        x = r.qty(pt, "exceedance", f"{pp}.exceedance", RATIO, lo=0.0, hi=1.0, what="the share of time exceeded",
                  ask="give the share of the time the flow is exceeded, such as 30 %")
        q = r.qty(pt, "flow", f"{pp}.flow", FLOW, lo=0.0, what="the flow", ask="give the flow available")
        if x is not None and q is not None:
            if points and x <= points[-1][0]:
                r.fail(f"{pp}.exceedance", pt.get("exceedance"), "must be more than the point before it: "
                                                                   "list the points from the flow exceeded least often")
            elif points and q > points[-1][1]:
                r.fail(f"{pp}.flow", pt.get("flow"), "must not be more than the flow of the point before it: a "
                                                     "flow exceeded more of the time is smaller")
            else:
                points.append((x, q))
    if len(points) == 1:
        r.fail(f"{p}.flow_duration", "1 point", "a flow-duration table needs two or more points")
    out.duration = points if len(points) > 1 else []
    return out
