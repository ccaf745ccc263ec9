"""What a sheet asks of the transient analysis (the document's ``transient`` group): the events of each
case (a valve closing or opening, a turbine rejecting load, a pump tripping or starting), the protection
devices on the line, the points whose histories are wanted, the time to run and the least grid.

Read here for shape and values, each error at its field; `calc.transient.line` turns it into the
characteristics grid. docs/sheet-format.md describes every field.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from calc.model.fields import MAX_LABEL, MAX_POINTS
from calc.model.reader import Reader
from calc.units import AREA, INERTIA, LENGTH, RATIO, ROTATION, TIME, VOLUME

TRANSIENT_FIELDS = ("duration", "reaches", "events", "devices", "points")
EVENT_FIELDS = ("case", "kind", "element", "start", "time", "law", "exponent", "to", "table", "inertia",
                "rated_speed", "check_valve", "four_quadrant", "label")
EVENT_KINDS = ("valve", "turbine", "pump_trip", "pump_start")
LAWS = ("linear", "exponent", "table")
LAW_POINT_FIELDS = ("time", "opening")
SUTER_POINT_FIELDS = ("angle", "WH", "WB")
DEVICE_FIELDS = ("kind", "label", "chainage", "area", "bottom", "top", "throat_K", "throat_diameter", "volume",
                 "gas_volume", "exponent", "surface", "connection_diameter", "K_in", "K_out", "inflow_diameter",
                 "outflow_diameter")
DEVICE_KINDS = ("surge_tank", "air_vessel", "air_valve")
POINT_FIELDS = ("chainage", "label")
MAX_EVENTS = 20
MAX_DEVICES = 10
MAX_SUTER_POINTS = 200
#: What the form adds for a new event, device, point, point in time, four-quadrant point.
EVENT_TEMPLATE = {"case": "", "kind": "valve", "element": "", "label": "", "start": "", "law": "linear", "time": "",
                  "to": ""}
DEVICE_TEMPLATE = {"kind": "surge_tank", "label": "", "chainage": ""}
POINT_TEMPLATE = {"chainage": "", "label": ""}
LAW_POINT_TEMPLATE = {"time": "", "opening": ""}
SUTER_POINT_TEMPLATE = {"angle": "", "WH": "", "WB": ""}
#: The least reaches in all a run takes when the sheet names none, and the most it may ask for (a run's
#: time grows with reaches times steps, both in proportion: 2000 reaches is some seconds of work).
REACHES_DEFAULT = 200
REACHES_MAX = 2000
#: The time a run covers when the sheet names none [s] (common practice: several pipeline periods of
#: most lines; the record says what was used).
DURATION_DEFAULT = 60.0
DURATION_MAX = 3600.0


@dataclass
class Law:
    """A valve's or gate's travel in time from its steady opening: ``kind`` linear or exponent (travel
    s = s1 + (s0 - s1)(1 - u)^exponent, u the share of ``time`` gone since ``start``), or a table of
    (time, opening) points, straight between them and held beyond."""

    kind: str = "linear"
    start: float = 0.0
    time: float = 0.0
    exponent: float = 1.0
    to: float = 0.0
    table: list = field(default_factory=list)

    def travel(self, t: float, s0: float) -> float:
        if self.kind == "table":
            pts = self.table
            if t <= pts[0][0]:
                return pts[0][1]
            for (t1, s1), (t2, s2) in zip(pts, pts[1:]):
                if t <= t2:
                    return s1 + (s2 - s1) * (t - t1) / (t2 - t1) if t2 > t1 else s2
            return pts[-1][1]
        if t <= self.start:
            return s0
        u = 1.0 if self.time <= 0.0 else min(1.0, (t - self.start) / self.time)
        return self.to + (s0 - self.to) * (1.0 - u) ** self.exponent

    @property
    def ends(self) -> float:
        """When the travel stops changing [s]."""
        return self.table[-1][0] if self.kind == "table" else self.start + self.time


@dataclass
class Event:
    """One event of a case: ``kind`` (EVENT_KINDS), the element it acts on (its index in the line, or
    ``end`` for the nozzle of a jet at the end), its ``law`` (valves and turbines), a pump's ``inertia``
    [kg m²] (pump and motor, per unit), ``rated_speed`` [rad/s] (the speed its curves were typed for),
    whether a check valve closes against reverse flow, a four-quadrant table (angle [deg], WH, WB)."""

    kind: str
    case: str
    element: int | str | None
    path: str
    label: str = ""
    law: Law | None = None
    start: float = 0.0
    time: float = 0.0
    inertia: float | None = None
    rated_speed: float | None = None
    check_valve: bool = True
    four_quadrant: list = field(default_factory=list)


@dataclass
class Device:
    """A protection device at a chainage along the line [m]: a surge tank (``area``, floor ``bottom``, rim
    ``top``, throat loss ``throat_K`` on ``throat_diameter``), an air vessel (``volume``, ``gas_volume`` at
    the steady state, polytropic ``exponent``, water ``surface`` elevation, connection bore and its losses
    in and out), or an air valve (inflow and outflow orifice bores)."""

    kind: str
    chainage: float
    path: str
    label: str = ""
    area: float | None = None
    bottom: float | None = None
    top: float | None = None
    throat_K: float = 0.0
    throat_diameter: float | None = None
    volume: float | None = None
    gas_volume: float | None = None
    exponent: float = 1.2
    surface: float | None = None
    connection_diameter: float | None = None
    K_in: float = 0.0
    K_out: float = 0.0
    inflow_diameter: float | None = None
    outflow_diameter: float | None = None


@dataclass
class TransientInputs:
    duration: float = DURATION_DEFAULT
    reaches: int = REACHES_DEFAULT
    reaches_typed: bool = False  # the sheet named the reaches (else the default, which a long run may lower)
    events: list[Event] = field(default_factory=list)
    devices: list[Device] = field(default_factory=list)
    points: list[tuple[float, str]] = field(default_factory=list)

    @property
    def any(self) -> bool:
        return bool(self.events)

    def events_of(self, case: str) -> list[Event]:
        """The events of the case of that name (the base: "" or its name)."""
        key = case.casefold()
        return [e for e in self.events if e.case.casefold() == key]


def read_transient(r: Reader, doc: dict, case_names: list[str], base_name: str) -> TransientInputs:
    """The ``transient`` group, each value checked; events name a case by name (empty: the base) and an
    element by its id."""
    d = r.obj(doc, "transient", "transient")
    p = "transient"
    r.known(d, p, TRANSIENT_FIELDS, "the transient inputs")
    out = TransientInputs()
    dur = r.qty(d, "duration", f"{p}.duration", TIME, required=False, default=DURATION_DEFAULT, lo=0.0,
                lo_open=True, hi=DURATION_MAX, what="the time the run covers")
    out.duration = dur if dur is not None else DURATION_DEFAULT
    reaches = d.get("reaches")
    if not r.blank(reaches):
        try:
            n = int(reaches) if float(reaches) == int(float(reaches)) else None
        except (TypeError, ValueError, OverflowError):
            n = None
        if n is None or not 10 <= n <= REACHES_MAX:
            r.fail(f"{p}.reaches", reaches, f"must be a whole number of reaches from 10 to {REACHES_MAX}")
        else:
            out.reaches, out.reaches_typed = n, True
    elements = doc.get("elements") if isinstance(doc.get("elements"), list) else []
    by_id = {e["id"]: (k, e.get("kind")) for k, e in enumerate(elements)
             if isinstance(e, dict) and isinstance(e.get("id"), str) and e["id"]}
    names = {n.casefold(): n for n in case_names}
    end = doc.get("end") if isinstance(doc.get("end"), dict) else {}
    for i, e in enumerate(r.lst(d, "events", f"{p}.events", MAX_EVENTS)):
        ev = _event(r, e, f"{p}.events.{i}", by_id, names, base_name, end)
        if ev is not None:
            out.events.append(ev)
    seen = {}
    for ev in out.events:
        key = (ev.case.casefold(), ev.element)
        if key in seen and ev.element is not None:
            r.fail(f"{ev.path}.element", ev.element, f"has an event in this case already ({seen[key]}): "
                                                     "give an element one event a case")
        seen[key] = ev.path
    for i, dv in enumerate(r.lst(d, "devices", f"{p}.devices", MAX_DEVICES)):
        dev = _device(r, dv, f"{p}.devices.{i}")
        if dev is not None:
            out.devices.append(dev)
    for i, pt in enumerate(r.lst(d, "points", f"{p}.points", MAX_POINTS)):
        pp = f"{p}.points.{i}"
        if not isinstance(pt, dict):
            r.fail(pp, pt, "must have a chainage")
            continue
        r.known(pt, pp, POINT_FIELDS, "a point")
        if r.blank(pt.get("chainage")) and r.blank(pt.get("label")):
            continue
        x = r.qty(pt, "chainage", f"{pp}.chainage", LENGTH, lo=0.0, what="the chainage",
                  ask="give the chainage of the point along the line")
        label = r.text(pt, "label", f"{pp}.label", MAX_LABEL) or ""
        if x is not None:
            out.points.append((x, label))
    return out


def _event(r: Reader, e, path: str, by_id: dict, names: dict, base_name: str, end: dict) -> Event | None:
    if not isinstance(e, dict):
        return r.fail(path, e, "must be a group of fields")
    r.known(e, path, EVENT_FIELDS, "an event")
    kind = r.choice(e, "kind", f"{path}.kind", EVENT_KINDS)
    case = r.text(e, "case", f"{path}.case", MAX_LABEL) or ""
    case = case.strip()
    if case and case.casefold() != base_name.casefold():
        if case.casefold() not in names:
            listed = ", ".join([base_name] + list(names.values()))
            r.fail(f"{path}.case", case, f"names no case of the sheet (the cases are: {listed})")
        else:
            case = names[case.casefold()]
    else:
        case = base_name
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    if kind is None:
        return None
    want = {"valve": ("valve",), "turbine": ("turbine",), "pump_trip": ("pump",), "pump_start": ("pump",)}[kind]
    ref = e.get("element")
    element = None
    if kind == "turbine" and ref == "end":
        if end.get("kind") != "jet":
            r.fail(f"{path}.element", ref, "'end' names the nozzle of a free jet at the end, and this line's end is not a jet")
        element = "end"
    elif r.blank(ref):
        r.ask(f"{path}.element", ref, f"name the {want[0]} the event acts on (its id)"
              + (", or 'end' for the jet's nozzle" if kind == "turbine" else ""))
    elif not isinstance(ref, str) or ref not in by_id:
        r.fail(f"{path}.element", ref, "names no element of the line: give the id of a " + want[0])
    elif by_id[ref][1] not in want:
        r.fail(f"{path}.element", ref, f"is a {by_id[ref][1]}; a {kind.replace('_', ' ')} event acts on a {want[0]}")
    else:
        element = by_id[ref][0]
    ev = Event(kind, case, element, path, label)
    ev.start = r.qty(e, "start", f"{path}.start", TIME, required=False, default=0.0, lo=0.0,
                     what="the time the event starts") or 0.0
    if kind in ("valve", "turbine"):
        ev.law = _law(r, e, path, ev.start, closing_default=0.0)
    elif kind == "pump_start":
        ev.time = r.qty(e, "time", f"{path}.time", TIME, lo=0.0, lo_open=True, what="the time the motor takes to "
                        "bring the pump to speed", ask="give the time the motor takes to bring the pump to speed")
        ev.check_valve = True
    else:
        ev.inertia = r.qty(e, "inertia", f"{path}.inertia", INERTIA, lo=0.0, lo_open=True,
                           what="the inertia of the pump and motor", ask="give the inertia of one pump unit and "
                           "its motor (from the maker's data), such as 2.5 kg m^2")
        ev.rated_speed = r.qty(e, "rated_speed", f"{path}.rated_speed", ROTATION, lo=0.0, lo_open=True,
                               what="the rated speed", ask="give the speed the pump's curves were typed for, "
                               "such as 1480 rpm")
        cv = e.get("check_valve", True)
        if cv in (True, False):
            ev.check_valve = cv
        elif cv in ("yes", "true", "1", 1):
            ev.check_valve = True
        elif cv in ("no", "false", "0", 0, "", None):
            ev.check_valve = False
        else:
            r.fail(f"{path}.check_valve", cv, "must be yes or no")
        ev.four_quadrant = _suter(r, e, path)
        if not ev.check_valve and not ev.four_quadrant:
            r.fail(f"{path}.check_valve", cv, "a pump that trips without a check valve runs backwards, beyond its "
                                              "typed curves: give its four-quadrant table (from the maker, in "
                                              "Suter's form) or fit a check valve")
    return ev


def _law(r: Reader, e: dict, path: str, start: float, closing_default: float) -> Law:
    law = Law(kind=r.choice(e, "law", f"{path}.law", LAWS, "linear") or "linear", start=start)
    if law.kind == "table":
        pts = []
        for j, pt in enumerate(r.lst(e, "table", f"{path}.table", MAX_POINTS)):
            pp = f"{path}.table.{j}"
            if not isinstance(pt, dict):
                r.fail(pp, pt, "must have a time and an opening")
                continue
            r.known(pt, pp, LAW_POINT_FIELDS, "a point of the opening in time")
            if all(r.blank(pt.get(k)) for k in LAW_POINT_FIELDS):
                continue
            t = r.qty(pt, "time", f"{pp}.time", TIME, lo=0.0, what="the time")
            s = r.qty(pt, "opening", f"{pp}.opening", RATIO, lo=0.0, hi=1.0, what="the opening")
            if t is not None and s is not None:
                if pts and t < pts[-1][0]:
                    r.fail(f"{pp}.time", pt.get("time"), "must not be before the point above it: list the points in time")
                else:
                    pts.append((t, s))
        if len(pts) < 2:
            r.fail(f"{path}.table", f"{len(pts)} points", "an opening in time needs two or more points")
        law.table = pts
        return law
    law.time = r.qty(e, "time", f"{path}.time", TIME, lo=0.0, what="the time it takes",
                     ask="give the time the closing or opening takes (0 for at once)")
    law.time = law.time if law.time is not None else 0.0
    law.to = r.qty(e, "to", f"{path}.to", RATIO, required=False, default=closing_default, lo=0.0, hi=1.0,
                   what="the opening it ends at")
    if law.kind == "exponent":
        law.exponent = r.qty(e, "exponent", f"{path}.exponent", RATIO, lo=0.1, hi=10.0,
                             what="the exponent of the law", ask="give the exponent of the law, such as 1.5") or 1.0
    return law


def _suter(r: Reader, e: dict, path: str) -> list:
    pts = []
    for j, pt in enumerate(r.lst(e, "four_quadrant", f"{path}.four_quadrant", MAX_SUTER_POINTS)):
        pp = f"{path}.four_quadrant.{j}"
        if not isinstance(pt, dict):
            r.fail(pp, pt, "must have an angle, WH and WB")
            continue
        r.known(pt, pp, SUTER_POINT_FIELDS, "a four-quadrant point")
        if all(r.blank(pt.get(k)) for k in SUTER_POINT_FIELDS):
            continue
        x = r.qty(pt, "angle", f"{pp}.angle", RATIO, lo=0.0, hi=360.0, what="the angle in degrees")
        wh = r.qty(pt, "WH", f"{pp}.WH", RATIO, lo=-10.0, hi=10.0, what="WH")
        wb = r.qty(pt, "WB", f"{pp}.WB", RATIO, lo=-10.0, hi=10.0, what="WB")
        if None not in (x, wh, wb):
            pts.append((x, wh, wb))
    if pts and len(pts) < 12:
        r.fail(f"{path}.four_quadrant", f"{len(pts)} points", "a four-quadrant table needs points round the whole "
                                                              "circle: at least 12 (every 30 degrees)")
    return pts


def _device(r: Reader, d, path: str) -> Device | None:
    if not isinstance(d, dict):
        return r.fail(path, d, "must be a group of fields")
    r.known(d, path, DEVICE_FIELDS, "a device")
    kind = r.choice(d, "kind", f"{path}.kind", DEVICE_KINDS)
    x = r.qty(d, "chainage", f"{path}.chainage", LENGTH, lo=0.0, what="the chainage",
              ask="give the chainage of the device along the line")
    label = r.text(d, "label", f"{path}.label", MAX_LABEL) or ""
    if kind is None:
        return None
    dev = Device(kind, x if x is not None else 0.0, path, label)
    if kind == "surge_tank":
        dev.area = r.qty(d, "area", f"{path}.area", AREA, lo=0.0, lo_open=True, what="the tank's plan area",
                         ask="give the tank's plan area")
        dev.bottom = r.qty(d, "bottom", f"{path}.bottom", LENGTH, what="the floor elevation", span="elevation",
                           ask="give the elevation of the tank's floor")
        dev.top = r.qty(d, "top", f"{path}.top", LENGTH, what="the rim elevation", span="elevation",
                        ask="give the elevation of the tank's rim (where it overflows)")
        if dev.bottom is not None and dev.top is not None and dev.top <= dev.bottom:
            r.fail(f"{path}.top", d.get("top"), "must be above the tank's floor")
        dev.throat_K = r.qty(d, "throat_K", f"{path}.throat_K", RATIO, required=False, default=0.0, lo=0.0,
                             what="the throat's loss coefficient") or 0.0
        dev.throat_diameter = r.qty(d, "throat_diameter", f"{path}.throat_diameter", LENGTH, required=dev.throat_K > 0,
                                    lo=0.0, lo_open=True, span="bore", what="the throat's bore",
                                    ask="give the bore of the throat the loss coefficient is on")
    elif kind == "air_vessel":
        dev.volume = r.qty(d, "volume", f"{path}.volume", VOLUME, lo=0.0, lo_open=True, what="the vessel's volume",
                           ask="give the vessel's whole volume")
        dev.gas_volume = r.qty(d, "gas_volume", f"{path}.gas_volume", VOLUME, lo=0.0, lo_open=True,
                               what="the gas volume", ask="give the volume of gas in the vessel in steady flow")
        if dev.volume is not None and dev.gas_volume is not None and dev.gas_volume >= dev.volume:
            r.fail(f"{path}.gas_volume", d.get("gas_volume"), "must be less than the vessel's volume (water fills the rest)")
        dev.exponent = r.qty(d, "exponent", f"{path}.exponent", RATIO, required=False, default=1.2, lo=1.0, hi=1.4,
                             what="the polytropic exponent") or 1.2
        dev.surface = r.qty(d, "surface", f"{path}.surface", LENGTH, required=False, span="elevation",
                            what="the water surface elevation in the vessel")
        dev.connection_diameter = r.qty(d, "connection_diameter", f"{path}.connection_diameter", LENGTH, lo=0.0,
                                        lo_open=True, span="bore", what="the connection's bore",
                                        ask="give the bore of the vessel's connection to the line")
        dev.K_in = r.qty(d, "K_in", f"{path}.K_in", RATIO, required=False, default=0.0, lo=0.0,
                         what="the loss coefficient into the vessel") or 0.0
        dev.K_out = r.qty(d, "K_out", f"{path}.K_out", RATIO, required=False, default=0.0, lo=0.0,
                          what="the loss coefficient out of the vessel") or 0.0
    else:
        dev.inflow_diameter = r.qty(d, "inflow_diameter", f"{path}.inflow_diameter", LENGTH, lo=0.0, lo_open=True,
                                    span="bore", what="the inflow orifice's bore",
                                    ask="give the bore of the orifice that lets air in")
        dev.outflow_diameter = r.qty(d, "outflow_diameter", f"{path}.outflow_diameter", LENGTH, lo=0.0, lo_open=True,
                                     span="bore", what="the outflow orifice's bore",
                                     ask="give the bore of the orifice that lets air out")
    return dev
