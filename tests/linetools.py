"""Sheets the tests build with their own numbers: a new blank sheet carries none (calc.model.sheet.blank_sheet
leaves every value the line needs empty), so a test that needs a line to solve gives it here."""

from __future__ import annotations

from calc.model.sheet import FORMAT, VERSION


def gravity_line() -> dict:
    """A gravity line that solves: water at 15 °C from a reservoir at 100 m through 500 m of 150 mm
    commercial steel into a reservoir at 80 m, the pipe entering it 2 m below its surface (the plainest
    line; the sheet 'New blank sheet' gave before it stopped inventing numbers)."""
    return {
        "format": FORMAT, "version": VERSION,
        "header": {"project": "", "calc_number": "", "title": "New sheet", "purpose": "",
                   "revision_scheme": "letters", "units": "SI"},
        "liquid": {"kind": "water", "temperature": "15 degC"},
        "site": {"atmospheric_pressure": "101.325 kPa"},
        "settings": {"friction_method": "colebrook"},
        "start": {"kind": "reservoir", "elevation": "100 m", "pressure": "0 kPa", "outlet_elevation": ""},
        "end": {"kind": "reservoir", "elevation": "80 m", "pressure": "0 kPa"},
        "elements": [{"kind": "pipe", "label": "Main", "length": "500 m", "diameter": "150 mm", "size": None,
                      "material": "steel-commercial", "roughness": "", "end_elevation": "78 m", "profile": [],
                      "fittings": [{"type": "entrance-sharp", "count": 1}, {"type": "exit", "count": 1}]}],
    }


def pump_curve(points=((0.0, 40.0), (20.0, 36.0), (40.0, 25.0))) -> list[dict]:
    """A pump's head-flow points as the sheet holds them, from (flow in L/s, head in m) pairs."""
    return [{"flow": f"{q:g} L/s", "head": f"{h:g} m", "efficiency": "", "npsh_required": ""} for q, h in points]


def pumped_line(efficiencies=("0", "0.6", "0.75", "0.5")) -> dict:
    """A pump lifting water 15 m (a sump at 80 m to a tank at 95 m) through the gravity line's 500 m of
    150 mm steel, the pump first, its curve (0, 40), (20, 36), (40, 25), (60, 8) in L/s and m with the
    efficiencies given at those points (the tests' own numbers)."""
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "80 m", "95 m"
    doc["elements"][0]["end_elevation"] = "93 m"
    points = pump_curve(((0, 40), (20, 36), (40, 25), (60, 8)))
    for pt, eta in zip(points, efficiencies):
        pt["efficiency"] = eta
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve", "curve": points})
    return doc
