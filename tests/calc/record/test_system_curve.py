"""The system curve for a supplier: the head the line needs from its pumps against flow, every case.

Checked against an independent sum of the line's losses (Darcy-Weisbach with Colebrook's f from ``fluids``,
water from CoolProp) plus the static lift, and against the solver: at each case's design flow the head the
line needs is the head its pump gives there.
"""

from __future__ import annotations

import csv
import io
import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from linetools import gravity_line, pump_curve

from calc.analysis import analyse
from calc.model.sheet import ensure_ids
from calc.record.system_curve import csv_text, table

G = 9.80665


def _pump_doc() -> dict:
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "80 m", "95 m"
    doc["elements"][0]["end_elevation"] = "93 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve",
                               "curve": pump_curve(((0, 40), (20, 36), (40, 25), (60, 8)))})
    ensure_ids(doc)
    doc["cases"] = [{"name": "Tank high", "end": {"elevation": "98 m"}}]
    return doc


def test_the_table_is_the_static_lift_plus_the_losses_for_every_case():
    a = analyse(_pump_doc())
    titles, rows = table(a, "SI")
    assert titles == ["Flow (L/s)", "Base: head needed from the pumps (m)", "Tank high: head needed from the pumps (m)"]
    rho = PropsSI("D", "T", 288.15, "P", 101325.0, "Water")
    nu = PropsSI("V", "T", 288.15, "P", 101325.0, "Water") / rho
    D = 0.15
    assert rows[0] == [0.0, 15.0, 18.0]
    for q_ls, base, high in rows[1:]:
        Q = q_ls / 1000
        V = Q / (math.pi * D * D / 4)
        losses = (Colebrook(V * D / nu, 0.045e-3 / D) * 500 / D + 1.5) * V * V / (2 * G)
        assert base == pytest.approx(15.0 + losses, rel=1e-5)  # IF97 against IAPWS-95 water
        assert high == pytest.approx(18.0 + losses, rel=1e-5)
    # each case's design point lies on its curve, at the pump's head
    for k, case in enumerate(a.cases):
        Q = case.solution.design["Q"] * 1000
        row = next(r for r in rows if r[0] == pytest.approx(Q, rel=1e-12))
        pump = next(d for d in case.solution.design["elements"] if d["kind"] == "pump")
        assert row[1 + k] == pytest.approx(pump["head"], abs=1e-9)


def test_the_csv_is_in_the_sheets_units():
    doc = _pump_doc()
    doc["header"]["units"] = "US"
    text = csv_text(analyse(doc), "US", "Lift")
    lines = list(csv.reader(io.StringIO(text)))
    assert lines[0] == ["System curve: Lift"]
    assert lines[1][0] == "Flow (gpm)" and lines[1][1].endswith("(ft)")
    assert float(lines[2][1]) == pytest.approx(15.0 / 0.3048, rel=1e-4)
