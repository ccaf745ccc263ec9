"""The JSON Schema of the sheet document (`headsheet schema`, the API's documentation); the parser is the authority."""

from __future__ import annotations

from calc import friction
from calc.model.implied import ENTRANCE_KEYS
from calc.model.sheet import (
    FORMAT,
    HEADER_FIELDS,
    MAX_ELEMENTS,
    MAX_FITTINGS,
    MAX_LABEL,
    MAX_POINTS,
    MAX_TEXT,
    RESTRAINTS,
    VERSION,
)


def _q(kind_name: str) -> dict:
    return {"type": ["string", "null"], "description": f"{kind_name} with its unit, e.g. as typed"}


_RATIO = {"type": ["string", "number", "null"], "description": "a plain number or a percentage"}

SCHEMA = {
    "$schema": "https://json-schema.org/draft/2020-12/schema",
    "title": "Headsheet sheet document",
    "type": "object",
    "required": ["format", "version", "start", "end", "elements"],
    "properties": {
        "format": {"const": FORMAT},
        "version": {"const": VERSION},
        "header": {"type": "object", "properties": {
            **{k: {"type": "string", "maxLength": MAX_TEXT} for k in HEADER_FIELDS},
            "revision_scheme": {"enum": ["letters", "numbers"]},
            "units": {"enum": ["SI", "US"]}}},
        "liquid": {"type": "object", "properties": {
            "kind": {"enum": ["water", "custom"]}, "temperature": _q("a temperature"),
            "name": {"type": "string"}, "density": _q("a density"), "viscosity": _q("a viscosity"),
            "vapour_pressure": _q("an absolute pressure"), "bulk_modulus": _q("a modulus")}},
        "site": {"type": "object", "properties": {"atmospheric_pressure": _q("an absolute pressure")}},
        "settings": {"type": "object", "properties": {
            "friction_method": {"enum": list(friction.METHODS)},
            "checks": {"type": "object", "properties": {
                "velocity_max": _q("a velocity"), "velocity_max_suction": _q("a velocity"),
                "velocity_min": _q("a velocity"), "npsh_margin_ratio": _RATIO, "npsh_margin_min": _q("a length"),
                "bep_low": _RATIO, "bep_high": _RATIO, "k_uncertainty": _RATIO,
                "roughness_low": {"type": ["string", "number", "null"],
                                  "description": "a percentage of each run's roughness, or a roughness"},
                "roughness_high": {"type": ["string", "number", "null"],
                                   "description": "a percentage of each run's roughness, or a roughness"},
                "surge_allowance": _q("a pressure"), "surge_closure_time": _q("a time")}}}},
        "start": {"$ref": "#/$defs/node"},
        "end": {"$ref": "#/$defs/node"},
        "elements": {"type": "array", "maxItems": MAX_ELEMENTS, "items": {"type": "object", "required": ["kind"],
                     "properties": {"kind": {"enum": ["pipe", "turbine", "pump", "valve"]},
                                    "label": {"type": "string", "maxLength": MAX_LABEL},
                                    "length": _q("a length"), "diameter": _q("a length"),
                                    "size": {"type": ["object", "null"]}, "material": {"type": ["string", "null"]},
                                    "roughness": _q("a length"), "end_elevation": _q("a length"),
                                    "condition": {"enum": ["new", "aged"]},
                                    "wall_thickness": _q("a length"), "rating": _q("a gauge pressure"),
                                    "restraint": {"enum": list(RESTRAINTS)},
                                    "profile": {"type": "array", "maxItems": MAX_POINTS},
                                    "fittings": {"type": "array", "maxItems": MAX_FITTINGS},
                                    "mode": {"enum": ["power", "head", "curve"]},
                                    "power": _q("a power"), "efficiency": _RATIO, "head": _q("a length"),
                                    "speed_ratio": _RATIO, "K": _RATIO,
                                    "curve": {"type": "array", "maxItems": MAX_POINTS}}}},
    },
    "$defs": {"node": {"type": "object", "required": ["kind", "elevation"], "properties": {
        "kind": {"enum": ["reservoir", "pressure", "jet"]}, "elevation": _q("a length"),
        "pressure": _q("a gauge pressure"), "outlet_elevation": _q("a length"),
        "entrance": {"enum": list(ENTRANCE_KEYS)},
        "nozzle_diameter": _q("a length"), "velocity_coefficient": _RATIO}}},
}
