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
