"""The transient part of the sheet form as data: the run's length and grid, each event (its fields by kind
and law), each protection device (by kind), the points whose histories are wanted. `FormView` takes these
methods as a mixin; fragments/transient.html lays them out."""

from __future__ import annotations

from server.form_specs import Spec

TRANSIENT = [Spec("duration", "Time the run covers", example="60 s", help="empty: 60 s"),
             Spec("reaches", "Reaches in all (at least)", "count", example="200",
                  help="the grid: more is finer and slower; empty: 200")]
_EVENT_HEAD = [Spec("case", "Case", "select", options="@cases", default="Base"),
               Spec("kind", "Event", "select", options="event_kind"),
               Spec("element", "Acts on", "select", options="@element"),
               Spec("label", "Label", "text")]
_LAW = {"linear": [Spec("time", "Closing time", example="8 s", help="0 for at once"),
                   Spec("to", "Opening at the end", "ratio", example="0 %", help="empty: shut")],
        "exponent": [Spec("time", "Closing time", example="8 s"),
                     Spec("to", "Opening at the end", "ratio", example="0 %", help="empty: shut"),
                     Spec("exponent", "Exponent of the law", "ratio", example="1.5",
                          help="travel (1 - t/T)^E from the steady opening")]}
EVENT = {
    "valve": [Spec("start", "Starts at", example="0 s", help="empty: at once"),
              Spec("law", "Travel in time", "select", options="event_law", default="linear")],
    "turbine": [Spec("start", "Starts at", example="0 s", help="empty: at once"),
                Spec("law", "Gate travel in time", "select", options="event_law", default="linear")],
    "pump_trip": [Spec("start", "Trips at", example="0 s", help="empty: at once"),
                  Spec("inertia", "Inertia of a unit and its motor", example="2.5 kg m^2", help="from the maker"),
                  Spec("rated_speed", "Speed of its typed curves", example="1480 rpm"),
                  Spec("check_valve", "Check valve", "select", options="yes_no", default="yes",
                       help="without one, give the four-quadrant table")],
    "pump_start": [Spec("start", "Starts at", example="0 s", help="empty: at once"),
                   Spec("time", "Time to full speed", example="5 s", help="the motor's run-up, linear")],
}
DEVICE = {
    "surge_tank": [Spec("area", "Plan area", example="7 m^2"), Spec("bottom", "Floor elevation", example="60 m"),
                   Spec("top", "Rim elevation", example="140 m", help="it overflows there"),
                   Spec("throat_K", "Throat loss K", "ratio", example="0.8", help="optional"),
                   Spec("throat_diameter", "Throat bore", example="300 mm", help="with a throat K")],
    "air_vessel": [Spec("volume", "Vessel volume", example="3 m^3"),
                   Spec("gas_volume", "Gas in steady flow", example="1.2 m^3"),
                   Spec("exponent", "Polytropic exponent", "ratio", example="1.2", help="1 to 1.4; empty: 1.2"),
                   Spec("surface", "Water surface elevation", example="55 m", help="empty: the pipe's"),
                   Spec("connection_diameter", "Connection bore", example="150 mm"),
                   Spec("K_in", "Loss K into it", "ratio", example="2.5"),
                   Spec("K_out", "Loss K out of it", "ratio", example="0.5")],
    "air_valve": [Spec("inflow_diameter", "Inflow orifice bore", example="50 mm"),
                  Spec("outflow_diameter", "Outflow orifice bore", example="5 mm",
                       help="small: the air leaves slowly")],
}
_DEVICE_HEAD = [Spec("kind", "Device", "select", options="device_kind"), Spec("label", "Label", "text"),
                Spec("chainage", "Chainage", example="1200 m", help="the nearest node of the grid")]
POINT = [Spec("chainage", "Chainage", example="1500 m"), Spec("label", "Label", "text")]
LAW_POINT = [Spec("time", "Time", example="2 s"), Spec("opening", "Opening", "ratio", example="50 %")]
SUTER_POINT = [Spec("angle", "Angle (degrees)", "ratio", example="225"), Spec("WH", "WH", "ratio", example="0.5"),
               Spec("WB", "WB", "ratio", example="0.5")]
OPTIONS = {
    "event_kind": lambda: [("valve", "a valve closes or opens"), ("turbine", "a turbine rejects its load"),
                           ("pump_trip", "a pump trips"), ("pump_start", "a pump starts")],
    "event_law": lambda: [("linear", "linear"), ("exponent", "a power law"), ("table", "a table in time")],
    "device_kind": lambda: [("surge_tank", "surge tank or standpipe"), ("air_vessel", "air vessel"),
                            ("air_valve", "air valve (admission and release)")],
    "yes_no": lambda: [("yes", "yes: it shuts on reverse flow"), ("no", "no")],
}
_ACTS_ON = {"valve": ("valve",), "turbine": ("turbine", "end"), "pump_trip": ("pump",), "pump_start": ("pump",)}
ALL_SPECS = [TRANSIENT, _EVENT_HEAD, *_LAW.values(), *EVENT.values(), *DEVICE.values(), _DEVICE_HEAD, POINT,
             LAW_POINT, SUTER_POINT]


class TransientForm:
    """The transient fields of a `FormView` (``self.fields``, ``self.get``, ``self.items`` are its own)."""

    def transient(self):
        return self.fields("transient", TRANSIENT)

    def event_fields(self, path: str):
        kind = self.get(f"{path}.kind", "") or "valve"
        out = self.fields(path, _EVENT_HEAD) + self.fields(path, EVENT.get(kind, EVENT["valve"]))
        if kind in ("valve", "turbine"):
            law = self.get(f"{path}.law", "") or "linear"
            out += self.fields(path, _LAW.get(law, []))
        return out

    def event_lists(self, path: str) -> list[str]:
        """The lists an event shows below its fields: its table in time, or its four-quadrant table."""
        kind = self.get(f"{path}.kind", "") or "valve"
        if kind in ("valve", "turbine") and self.get(f"{path}.law", "") == "table":
            return ["table"]
        return ["four_quadrant"] if kind == "pump_trip" else []

    def list_point(self, path: str, which: str):
        return self.fields(path, LAW_POINT if which == "table" else SUTER_POINT)

    def device_fields(self, path: str):
        kind = self.get(f"{path}.kind", "") or "surge_tank"
        return self.fields(path, _DEVICE_HEAD) + self.fields(path, DEVICE.get(kind, []))

    def point_fields(self, path: str):
        return self.fields(path, POINT)

    def dynamic_options(self, name: str, prefix: str) -> list[tuple[str, str]]:
        """The choices that depend on the sheet: its cases, the elements an event may act on."""
        if name == "@cases":
            return [("", "Base (the sheet's own inputs)")] + [
                (c.get("name"), c.get("name")) for c in self.items("cases")
                if isinstance(c, dict) and isinstance(c.get("name"), str) and c.get("name").strip()]
        kind = self.get(f"{prefix}.kind", "") or "valve"
        want = _ACTS_ON.get(kind, ())
        out = []
        for i, e in enumerate(self.items("elements")):
            if isinstance(e, dict) and e.get("kind") in want and isinstance(e.get("id"), str):
                out.append((e["id"], f"{e.get('label') or e['kind']} ({e['id']})"))
        if "end" in want and self.get("end.kind", "") == "jet":
            out.append(("end", "the jet's nozzle at the end"))
        return out

    def transient_fields(self):
        out = self.transient()
        for j, _ in enumerate(self.items("transient.events")):
            p = f"transient.events.{j}"
            out += self.event_fields(p)
            for which in self.event_lists(p):
                for k, _pt in enumerate(self.items(f"{p}.{which}")):
                    out += self.list_point(f"{p}.{which}.{k}", which)
        for j, _ in enumerate(self.items("transient.devices")):
            out += self.device_fields(f"transient.devices.{j}")
        for j, _ in enumerate(self.items("transient.points")):
            out += self.point_fields(f"transient.points.{j}")
        return out

    def transient_groups(self) -> set[str]:
        paths = {"transient", "transient.events", "transient.devices", "transient.points"}
        for j, _ in enumerate(self.items("transient.events")):
            paths.update({f"transient.events.{j}", f"transient.events.{j}.table", f"transient.events.{j}.four_quadrant"})
        for j, _ in enumerate(self.items("transient.devices")):
            paths.add(f"transient.devices.{j}")
        for j, _ in enumerate(self.items("transient.points")):
            paths.add(f"transient.points.{j}")
        return paths
