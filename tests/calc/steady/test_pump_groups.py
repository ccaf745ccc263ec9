"""Pump groups: identical units in parallel or in series, against an independent solve and the textbook rules.

The independent solve: one unit's curve through the typed points by scipy's ``PchipInterpolator`` (the
shape-preserving interpolant of Fritsch and Carlson 1980), the group's head by the rules of any pump text
(Karassik et al., Pump Handbook, 4th ed. 2008): in parallel the units share the flow at one head,
H(Q) = H1(Q / N); in series each adds its head at the whole flow, H(Q) = N H1(Q). The line's losses by
Darcy-Weisbach with Colebrook's f from ``fluids``, water from CoolProp, closed with ``brentq``.
"""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from hypothesis import given, settings
from hypothesis import strategies as st
from linetools import gravity_line, pump_curve
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq

from calc.analysis import analyse
from calc.model.sheet import ensure_ids, parse

G = 9.80665
POINTS = ((0.0, 40.0), (20.0, 36.0), (40.0, 25.0), (60.0, 8.0))  # one unit: L/s, m


def _sheet(**group) -> dict:
    """A pump lifting water 15 m (80 m sump to 95 m tank) through 500 m of 150 mm steel, the pump at the start."""
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "80 m", "95 m"
    doc["elements"][0]["end_elevation"] = "93 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve", "curve": pump_curve(POINTS), **group})
    return ensure_ids(doc)


def _independent(parallel: int = 1, series: int = 1) -> float:
    rho = PropsSI("D", "T", 288.15, "P", 101325.0, "Water")
    nu = PropsSI("V", "T", 288.15, "P", 101325.0, "Water") / rho
    unit = PchipInterpolator([q / 1000 for q, _ in POINTS], [h for _, h in POINTS])
    D, L, eps, A = 0.15, 500.0, 0.045e-3, math.pi * 0.15 ** 2 / 4

    def residual(Q):
        V = Q / A
        f = Colebrook(V * D / nu, eps / D)
        # the sharp entrance (0.5) and the exit (1.0) typed on the line, Crane TP-410
        return series * float(unit(Q / parallel)) - 15.0 - (f * L / D + 1.5) * V * V / (2 * G)

    return brentq(residual, 1e-6, 0.06 * parallel, xtol=1e-14, rtol=1e-14)


@pytest.mark.parametrize("group, parallel, series", [
    ({}, 1, 1),
    ({"units": 2, "arrangement": "parallel"}, 2, 1),
    ({"units": 3, "standby": 1}, 2, 1),
    ({"units": 3, "standby": 1, "running": 3}, 3, 1),
    ({"units": 2, "arrangement": "series"}, 1, 2),
])
def test_a_group_carries_the_flow_of_an_independent_solve(group, parallel, series):
    a = analyse(_sheet(**group))
    assert a.ok, a.errors
    Q = a.solution.design["Q"]
    # within 1e-6: the sheet's water (IAPWS-IF97, 2008 viscosity) and CoolProp's IAPWS-95 differ by ~1e-7
    assert Q == pytest.approx(_independent(parallel, series), rel=1e-6)
    pump = next(d for d in a.solution.design["elements"] if d["kind"] == "pump")
    unit = a.line.elements[0]
    # the rules: heads equal and flows add in parallel, heads add at one flow in series
    if parallel > 1 or series > 1:
        assert pump["unit_flow"] == pytest.approx(Q / parallel, rel=1e-15)
        assert pump["head"] == pytest.approx(series * pump["unit_head"], rel=1e-15)
        assert pump["running"] == max(parallel, series)
    assert pump["head"] == pytest.approx(series * float(unit.curve(Q / parallel)), rel=1e-15)


def test_the_duty_units_run_unless_a_case_says_otherwise():
    doc = _sheet(units=3, standby=1)
    doc["cases"] = [{"name": "Duty plus standby", "elements": [{"id": "pump-1", "running": 3}]},
                    {"name": "One unit", "elements": [{"id": "pump-1", "running": "1"}]}]
    a = analyse(doc)
    assert a.ok, a.errors
    q = {c.name: c.solution.design["Q"] for c in a.cases}
    assert q["Base"] == pytest.approx(_independent(2), rel=1e-6)
    assert q["Duty plus standby"] == pytest.approx(_independent(3), rel=1e-6)
    assert q["One unit"] == pytest.approx(_independent(1), rel=1e-6)


@pytest.mark.parametrize("group, path, words", [
    ({"units": 0}, "units", "from 1 to 20"),
    ({"units": 2, "standby": 2}, "standby", "from 0 to 1"),
    ({"units": 2, "running": 3}, "running", "from 1 to 2"),
    ({"units": 2, "running": 0}, "running", "from 1 to 2"),
    ({"units": 2.5}, "units", "whole number"),
    ({"arrangement": "ring"}, "arrangement", "parallel, series"),
])
def test_a_group_that_cannot_be_is_refused_at_its_field(group, path, words):
    errors = parse(_sheet(**group)).errors_by_path()
    assert words in errors[f"elements.0.{path}"], errors


@settings(max_examples=15, deadline=None)
@given(units=st.integers(min_value=2, max_value=6))
def test_adding_a_parallel_unit_never_lowers_the_flow(units):
    doc = _sheet(units=units)
    doc["cases"] = [{"name": f"{n} running", "elements": [{"id": "pump-1", "running": n}]} for n in range(1, units + 1)]
    a = analyse(doc)
    flows = [c.solution.design["Q"] for c in a.cases[1:]]
    assert all(q2 >= q1 for q1, q2 in zip(flows, flows[1:]))
