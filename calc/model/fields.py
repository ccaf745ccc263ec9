"""What a sheet document may hold: its format, the keys of every group, the templates of new items, size limits."""

from __future__ import annotations

import copy

FORMAT = "headsheet-sheet"
VERSION = 1

#: Size limits on lists and text, so that a pasted list cannot stall the solver.
#: Velocity coefficient of a nozzle when none is typed [-]: 0.97-0.99 for well-made impulse-turbine
#: nozzles (common practice; a maker's figure replaces it).
NOZZLE_CV = 0.98
MAX_ELEMENTS = 200
MAX_FITTINGS = 50
MAX_POINTS = 100
MAX_TEXT = 500
MAX_LABEL = 100
MAX_COUNT = 1000
#: The most identical units a pump group may have.
MAX_UNITS = 20
ARRANGEMENTS = ("parallel", "series")
#: How a pump's speed is set: typed (``speed_ratio``), or solved for a target flow or head.
SPEED_CONTROLS = ("fixed", "flow", "head")
#: How a turbine is given: its shaft power, its flow, the head it takes, or a head-flow curve.
TURBINE_MODES = ("power", "flow", "head", "curve")
#: Valves: a fixed K, a check valve, a control valve by its flow coefficient, a pressure-reducing valve.
VALVE_TYPES = ("fixed", "check", "control", "prv")
#: What sets a control valve: its opening, or a target flow or downstream pressure it is opened to meet.
VALVE_SETTINGS = ("opening", "flow", "pressure")

HEADER_FIELDS = ("project", "calc_number", "title", "purpose")
NODE_KINDS = {"start": ("reservoir", "pressure"), "end": ("reservoir", "pressure", "jet")}
RESTRAINTS = ("anchored", "anchored_upstream", "expansion_joints")

#: A new element, fitting or point carries no invented numbers: every value it needs is empty, and the
#: parser asks for it (`Missing`). Choices that are not numbers (a material, a mode, a fitting type) start
#: at a plain first choice; a curve starts with the three empty points a curve needs at least.
CURVE_POINT_TEMPLATE = {"flow": "", "head": "", "efficiency": "", "npsh_required": ""}
PROFILE_POINT_TEMPLATE = {"chainage": "", "elevation": ""}
FITTING_TEMPLATE = {"type": "k", "K": "", "count": 1, "label": ""}
_EMPTY_CURVE = [dict(CURVE_POINT_TEMPLATE) for _ in range(3)]
ELEMENT_TEMPLATES = {
    "pipe": {"kind": "pipe", "label": "Pipe run", "length": "", "diameter": "", "size": None,
             "material": "steel-commercial", "condition": "new", "roughness": "", "end_elevation": "",
             "profile": [], "fittings": []},
    "turbine": {"kind": "turbine", "label": "Turbine", "mode": "power", "power": "", "efficiency": "", "head": "",
                "flow": "", "curve": copy.deepcopy(_EMPTY_CURVE)},
    "pump": {"kind": "pump", "label": "Pump", "mode": "curve", "speed_ratio": "", "efficiency": "", "head": "",
             "curve": copy.deepcopy(_EMPTY_CURVE), "units": "", "standby": "", "arrangement": "parallel",
             "running": "", "speed_control": "fixed", "target_flow": "", "target_head": "", "speed_min": "",
             "speed_max": ""},
    "valve": {"kind": "valve", "label": "Valve", "valve_type": "fixed", "K": "", "diameter": "", "coefficient": "Kv",
              "rated": "", "characteristic": "linear", "rangeability": "", "setting": "opening", "opening": "",
              "target_flow": "", "set_pressure": ""},
}

#: Every key a sheet document may hold, by where it sits; the parser refuses any other key
#: (``calc/model/schema.py`` lists the same keys, ``tests/calc/model/test_unknown_keys.py`` compares them).
#: A group whose kind or mode the form switches keeps the keys of its other kinds or modes (the form
#: never deletes a key), so those are accepted: the liquid holds the keys of water and of a typed liquid,
#: the end those of a reservoir, a pressure and a jet, and a fitting the K values of every type.
SHEET_FIELDS = ("format", "version", "header", "liquid", "site", "settings", "start", "end", "elements", "cases",
                "energy", "transient")
HEADER_KEYS = HEADER_FIELDS + ("revision_scheme", "units")
LIQUID_FIELDS = ("kind", "temperature", "name", "density", "viscosity", "vapour_pressure", "bulk_modulus")
SITE_FIELDS = ("atmospheric_pressure",)
SETTINGS_FIELDS = ("friction_method", "checks")
CHECK_FIELDS = ("velocity_max", "velocity_max_suction", "velocity_min", "npsh_margin_ratio", "npsh_margin_min",
                "bep_low", "bep_high", "k_uncertainty", "roughness_low", "roughness_high", "surge_allowance",
                "surge_closure_time")
NODE_FIELDS = {"start": ("kind", "elevation", "pressure", "outlet_elevation", "entrance"),
               "end": ("kind", "elevation", "pressure", "nozzle_diameter", "velocity_coefficient",
                       "impulse_efficiency")}
#: The keys of each element kind; a key of another kind is refused with a message naming that kind
#: (an element's kind never changes on the form, so no element gathers another kind's keys).
ELEMENT_FIELDS = {
    "pipe": ("kind", "id", "label", "length", "diameter", "size", "material", "condition", "roughness",
             "wall_thickness", "end_elevation", "rating", "restraint", "wave_speed", "profile", "fittings"),
    "turbine": ("kind", "id", "label", "mode", "power", "efficiency", "head", "flow", "curve"),
    "pump": ("kind", "id", "label", "mode", "speed_ratio", "efficiency", "head", "curve", "units", "standby",
             "arrangement", "running", "speed_control", "target_flow", "target_head", "speed_min", "speed_max"),
    "valve": ("kind", "id", "label", "K", "diameter", "valve_type", "coefficient", "rated", "characteristic",
              "rangeability", "setting", "opening", "target_flow", "set_pressure"),
}
ELEMENT_NAMES = {"pipe": "a pipe run", "turbine": "a turbine", "pump": "a pump", "valve": "a valve"}
SIZE_FIELDS = ("standard", "nominal", "class")
FITTING_FIELDS = ("type", "count", "label", "K", "K1", "Kinf", "Ki", "Kd")
PROFILE_POINT_FIELDS = ("chainage", "elevation")
CURVE_POINT_FIELDS = ("flow", "head", "efficiency", "npsh_required")
#: Unknown keys reported one by one; past these, one more error gives how many were left out.
MAX_UNKNOWN_REPORTED = 20
#: An unknown key is shown (in its error's path and value) cut to this many characters.
MAX_KEY_SHOWN = 40

#: Operating cases (``cases``, calc/model/cases.py): each a name and the few inputs it changes from the
#: base sheet. A field left empty keeps the base value; elements are named by their stable id.
MAX_CASES = 20
MAX_CASE_NAME = 60
CASE_FIELDS = ("name", "note", "hours", "start", "end", "liquid", "pipes", "elements")
CASE_NODE_FIELDS = ("elevation", "pressure")
CASE_LIQUID_FIELDS = ("temperature",)
#: For every pipe run at once: its condition (new or aged roughness of its material) or one roughness.
CASE_PIPES_FIELDS = ("condition", "roughness")
#: What a case may change on an element of each kind (besides ``id``, which names the element).
CASE_ELEMENT_FIELDS = {
    "pump": ("speed_ratio", "running", "target_flow", "target_head"),
    "turbine": ("power", "flow", "head"),
    "valve": ("K", "opening", "target_flow", "set_pressure"),
}
CASE_TEMPLATE = {"name": "", "note": "", "hours": "", "start": {"elevation": "", "pressure": ""},
                 "end": {"elevation": "", "pressure": ""}, "liquid": {"temperature": ""},
                 "pipes": {"condition": "", "roughness": ""}, "elements": []}

#: Energy over a year (``energy``, calc/model/energy.py): hours a year (each case may change them), the
#: tariff, the motor efficiency; for a turbine the flow-duration table and the machine's flow range.
ENERGY_FIELDS = ("hours", "tariff", "currency", "motor_efficiency", "flow_duration", "turbine_flow_min",
                 "turbine_flow_max")
FDC_POINT_FIELDS = ("exceedance", "flow")
FDC_POINT_TEMPLATE = {"exceedance": "", "flow": ""}
