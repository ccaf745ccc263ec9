"""The JSON Schema of the sheet document (`headsheet schema`, the API's documentation); the parser is the authority."""

from __future__ import annotations

from calc import friction
from calc.model.implied import ENTRANCE_KEYS
from calc.model.sheet import (
    ARRANGEMENTS,
    CASE_ELEMENT_FIELDS,
    FORMAT,
    HEADER_FIELDS,
    MAX_CASE_NAME,
    MAX_CASES,
    MAX_ELEMENTS,
    MAX_FITTINGS,
    MAX_LABEL,
    MAX_POINTS,
    MAX_TEXT,
    MAX_UNITS,
    RESTRAINTS,
    SPEED_CONTROLS,
    TURBINE_MODES,
    VALVE_SETTINGS,
    VALVE_TYPES,
    VERSION,
)
from calc.model.transient_spec import DEVICE_KINDS, EVENT_KINDS, LAWS, MAX_DEVICES, MAX_EVENTS


def _q(kind_name: str) -> dict:
    return {"type": ["string", "null"], "description": f"{kind_name} with its unit, e.g. as typed"}


_RATIO = {"type": ["string", "number", "null"], "description": "a plain number or a percentage"}

_KEY = {"type": ["string", "number", "null"]}
_COUNT = {"type": ["integer", "number", "string", "null"]}


def _group(properties: dict, **extra) -> dict:
    """An object with these keys and no others (the parser refuses any other key)."""
    return {"type": "object", "properties": properties, "additionalProperties": False, **extra}


_LABEL = {"type": ["string", "null"], "maxLength": MAX_LABEL}
_ID = {"type": ["string", "null"], "pattern": "^([a-z][a-z0-9-]{0,39})?$",
       "description": "the element's stable id, kept when it moves (given by the program when absent)"}
_ELEMENTS = {
    "pipe": _group({
        "kind": {"const": "pipe"}, "id": _ID, "label": _LABEL, "length": _q("a length"), "diameter": _q("a length"),
        "size": {"anyOf": [{"type": "null"}, {"$ref": "#/$defs/size"}]}, "material": {"type": ["string", "null"]},
        "condition": {"enum": ["new", "aged", "", None]}, "roughness": _q("a length"),
        "wall_thickness": _q("a length"), "end_elevation": _q("a length"), "rating": _q("a gauge pressure"),
        "restraint": {"enum": [*RESTRAINTS, "", None]}, "wave_speed": _q("a velocity"),
        "profile": {"type": ["array", "null"], "maxItems": MAX_POINTS, "items": {"$ref": "#/$defs/profile_point"}},
        "fittings": {"type": ["array", "null"], "maxItems": MAX_FITTINGS, "items": {"$ref": "#/$defs/fitting"}}}),
    "turbine": _group({
        "kind": {"const": "turbine"}, "id": _ID, "label": _LABEL, "mode": {"enum": [*TURBINE_MODES, "", None]},
        "power": _q("a power"), "efficiency": _RATIO, "head": _q("a length"), "flow": _q("a flow"),
        "curve": {"type": ["array", "null"], "maxItems": MAX_POINTS, "items": {"$ref": "#/$defs/curve_point"}}}),
    "pump": _group({
        "kind": {"const": "pump"}, "id": _ID, "label": _LABEL, "mode": {"enum": ["curve", "head", "", None]},
        "speed_ratio": _RATIO, "efficiency": _RATIO, "head": _q("a length"),
        "curve": {"type": ["array", "null"], "maxItems": MAX_POINTS, "items": {"$ref": "#/$defs/curve_point"}},
        "units": _COUNT | {"description": f"identical units installed (1 to {MAX_UNITS}; default 1)"},
        "standby": _COUNT | {"description": "of them, units kept in reserve (default 0)"},
        "arrangement": {"enum": [*ARRANGEMENTS, "", None]},
        "running": _COUNT | {"description": "units running (default: all but the standby units)"},
        "speed_control": {"enum": [*SPEED_CONTROLS, "", None]}, "target_flow": _q("a flow"),
        "target_head": _q("a length"), "speed_min": _RATIO, "speed_max": _RATIO}),
    "valve": _group({"kind": {"const": "valve"}, "id": _ID, "label": _LABEL, "K": _RATIO, "diameter": _q("a length"),
                     "valve_type": {"enum": [*VALVE_TYPES, "", None]}, "coefficient": {"enum": ["Kv", "Cv", "", None]},
                     "rated": _RATIO | {"description": "the rated Kv (m3/h at 1 bar) or Cv (US gpm at 1 psi), fully open"},
                     "characteristic": {"enum": ["linear", "equal_percentage", "", None]},
                     "rangeability": _RATIO, "setting": {"enum": [*VALVE_SETTINGS, "", None]},
                     "opening": _RATIO | {"description": "relative travel, 0 to 1 or a percentage"},
                     "target_flow": _q("a flow"), "set_pressure": _q("a gauge pressure")}),
}

SCHEMA = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "Headsheet sheet document",
    "type": "object",
    "required": ["format", "version", "start", "end", "elements"],
    "additionalProperties": False,
    "properties": {
        "format": {"const": FORMAT},
        "version": {"const": VERSION},
        "header": _group({
            **{k: {"type": ["string", "null"], "maxLength": MAX_TEXT} for k in HEADER_FIELDS},
            "revision_scheme": {"enum": ["letters", "numbers", "", None]},
            "units": {"enum": ["SI", "US", "", None]}}),
        "liquid": _group({
            "kind": {"enum": ["water", "custom", "", None]}, "temperature": _q("a temperature"),
            "name": {"type": ["string", "null"], "maxLength": MAX_LABEL}, "density": _q("a density"),
            "viscosity": _q("a viscosity"), "vapour_pressure": _q("an absolute pressure"),
            "bulk_modulus": _q("a modulus")}),
        "site": _group({"atmospheric_pressure": _q("an absolute pressure")}),
        "settings": _group({
            "friction_method": {"enum": [*friction.METHODS, "", None]},
            "checks": _group({
                "velocity_max": _q("a velocity"), "velocity_max_suction": _q("a velocity"),
                "velocity_min": _q("a velocity"), "npsh_margin_ratio": _RATIO, "npsh_margin_min": _q("a length"),
                "bep_low": _RATIO, "bep_high": _RATIO, "k_uncertainty": _RATIO,
                "roughness_low": {"type": ["string", "number", "null"],
                                  "description": "a percentage of each run's roughness, or a roughness"},
                "roughness_high": {"type": ["string", "number", "null"],
                                   "description": "a percentage of each run's roughness, or a roughness"},
                "surge_allowance": _q("a pressure"), "surge_closure_time": _q("a time")})}),
        "start": {"$ref": "#/$defs/start"},
        "end": {"$ref": "#/$defs/end"},
        # Each element has the keys of its kind only.
        "elements": {"type": "array", "maxItems": MAX_ELEMENTS, "items": {
            "type": "object", "required": ["kind"], "properties": {"kind": {"enum": list(_ELEMENTS)}},
            "allOf": [{"if": {"properties": {"kind": {"const": kind}}, "required": ["kind"]},
                       "then": {"$ref": f"#/$defs/{kind}"}} for kind in _ELEMENTS]}},
        "cases": {"type": ["array", "null"], "maxItems": MAX_CASES, "items": {"$ref": "#/$defs/case"}},
        # Energy over a year: pumping hours and tariff; a turbine's flow-duration table and flow range.
        "energy": _group({
            "hours": _RATIO | {"description": "hours a year the base case runs (pumping)"},
            "tariff": _RATIO | {"description": "cost of a kWh"}, "currency": {"type": ["string", "null"], "maxLength": MAX_LABEL},
            "motor_efficiency": _RATIO, "turbine_flow_min": _q("a flow"), "turbine_flow_max": _q("a flow"),
            "flow_duration": {"type": ["array", "null"], "maxItems": MAX_POINTS, "items": _group(
                {"exceedance": _RATIO | {"description": "the share of the time the flow is exceeded"},
                 "flow": _q("a flow")})}}),
        # The transient analysis: events of each case, protection devices, points to follow.
        "transient": _group({
            "duration": _q("a time"), "reaches": _COUNT,
            "events": {"type": ["array", "null"], "maxItems": MAX_EVENTS, "items": {"$ref": "#/$defs/event"}},
            "devices": {"type": ["array", "null"], "maxItems": MAX_DEVICES, "items": {"$ref": "#/$defs/device"}},
            "points": {"type": ["array", "null"], "maxItems": MAX_POINTS,
                       "items": _group({"chainage": _q("a length"), "label": _LABEL})}}),
    },
    "$defs": {
        # A node keeps the keys of the kinds it had before (the form never deletes a key), so the
        # start has those of a reservoir and a pressure, the end those of a jet too.
        "start": _group({
            "kind": {"enum": ["reservoir", "pressure", "", None]}, "elevation": _q("a length"),
            "pressure": _q("a gauge pressure"), "outlet_elevation": _q("a length"),
            "entrance": {"enum": [*ENTRANCE_KEYS, "", None]}}, required=["elevation"]),
        "end": _group({
            "kind": {"enum": ["reservoir", "pressure", "jet", "", None]}, "elevation": _q("a length"),
            "pressure": _q("a gauge pressure"), "nozzle_diameter": _q("a length"),
            "velocity_coefficient": _RATIO, "impulse_efficiency": _RATIO}, required=["elevation"]),
        **_ELEMENTS,
        "size": _group({"standard": _KEY, "nominal": _KEY, "class": _KEY}),
        "fitting": _group({"type": {"type": "string"}, "count": {"type": ["integer", "number", "string", "null"]},
                           "label": _LABEL, "K": _RATIO, "K1": _RATIO, "Kinf": _RATIO, "Ki": _RATIO, "Kd": _RATIO},
                          required=["type"]),
        # An operating case: the inputs it changes from the base sheet (empty: as the base).
        "case": _group({
            "name": {"type": ["string", "null"], "maxLength": MAX_CASE_NAME},
            "note": {"type": ["string", "null"], "maxLength": MAX_TEXT},
            "hours": _RATIO | {"description": "hours a year this case runs (pumping energy)"},
            "start": _group({"elevation": _q("a length"), "pressure": _q("a gauge pressure")}),
            "end": _group({"elevation": _q("a length"), "pressure": _q("a gauge pressure")}),
            "liquid": _group({"temperature": _q("a temperature")}),
            "pipes": _group({"condition": {"enum": ["new", "aged", "", None]}, "roughness": _q("a length")}),
            "elements": {"type": ["array", "null"], "maxItems": MAX_ELEMENTS, "items": _group(
                {"id": _ID, **{k: {"type": ["string", "number", "null"]}
                               for k in dict.fromkeys(k for f in CASE_ELEMENT_FIELDS.values() for k in f)}})},
        }, required=["name"]),
        "event": _group({
            "case": {"type": ["string", "null"], "maxLength": MAX_LABEL,
                     "description": "the case's name (empty: the base)"},
            "kind": {"enum": list(EVENT_KINDS)}, "element": {"type": ["string", "null"]}, "label": _LABEL,
            "start": _q("a time"), "time": _q("a time"), "law": {"enum": [*LAWS, "", None]}, "exponent": _RATIO,
            "to": _RATIO, "inertia": _q("a moment of inertia"), "rated_speed": _q("a rotational speed"),
            "check_valve": {"type": ["boolean", "string", "null"]},
            "table": {"type": ["array", "null"], "maxItems": MAX_POINTS,
                      "items": _group({"time": _q("a time"), "opening": _RATIO})},
            "four_quadrant": {"type": ["array", "null"], "maxItems": 200,
                              "items": _group({"angle": _RATIO, "WH": _RATIO, "WB": _RATIO})}}, required=["kind"]),
        "device": _group({
            "kind": {"enum": list(DEVICE_KINDS)}, "label": _LABEL, "chainage": _q("a length"), "area": _q("an area"),
            "bottom": _q("a length"), "top": _q("a length"), "throat_K": _RATIO, "throat_diameter": _q("a length"),
            "volume": _q("a volume"), "gas_volume": _q("a volume"), "exponent": _RATIO, "surface": _q("a length"),
            "connection_diameter": _q("a length"), "K_in": _RATIO, "K_out": _RATIO,
            "inflow_diameter": _q("a length"), "outflow_diameter": _q("a length")}, required=["kind"]),
        "profile_point": _group({"chainage": _q("a length"), "elevation": _q("a length")}),
        "curve_point": _group({"flow": _q("a flow"), "head": _q("a length"), "efficiency": _RATIO,
                               "npsh_required": _q("a length")}),
    },
}
