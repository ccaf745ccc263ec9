"""Energy over a year: a turbine's annual energy from a flow-duration table, and a pumped line's energy and
cost from each case's hours.

The hydro figure is checked against a hand integration of a small table: the flow linear between the
table's points, the turbine's power at each flow from an independent energy balance (Darcy-Weisbach with
Colebrook's f from ``fluids``, water from CoolProp), integrated over the share of time by
``scipy.integrate.quad`` piece by piece (the kinks where the flow meets the turbine's range at piece ends).
"""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from linetools import gravity_line, pumped_line
from scipy.integrate import quad

from calc.analysis import analyse
from calc.model.sheet import ensure_ids, parse

G = 9.80665
RHO = PropsSI("D", "T", 288.15, "P", 101325.0, "Water")
NU = PropsSI("V", "T", 288.15, "P", 101325.0, "Water") / RHO
D, A = 0.15, math.pi * 0.15 ** 2 / 4
TABLE = [(0.0, 0.060), (0.4, 0.030), (1.0, 0.010)]  # share of time exceeded, flow [m3/s]


def _hydro_doc() -> dict:
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "160 m", "80 m"
    doc["elements"][0]["fittings"] = [{"type": "entrance-sharp", "count": 1}]
    doc["elements"].append({"kind": "turbine", "label": "T", "mode": "flow", "flow": "30 L/s", "efficiency": "0.85"})
    doc["energy"] = {"flow_duration": [{"exceedance": f"{x * 100:g} %", "flow": f"{q * 1000:g} L/s"} for x, q in TABLE],
                     "turbine_flow_min": "15 L/s", "turbine_flow_max": "45 L/s"}
    return ensure_ids(doc)


def _power(Q: float) -> float:
    V = Q / A
    H = 80.0 - (Colebrook(V * D / NU, 0.045e-3 / D) * 500 / D + 0.5) * V * V / (2 * G)
    return 0.85 * RHO * G * Q * H


def test_annual_energy_against_a_hand_integration_of_a_small_table():
    a = analyse(_hydro_doc())
    assert a.ok, a.errors
    (h,) = a.energy["hydro"]

    def flow(p):  # linear between the points
        for (x0, q0), (x1, q1) in zip(TABLE, TABLE[1:]):
            if x0 <= p <= x1:
                return q0 + (q1 - q0) * (p - x0) / (x1 - x0)
        return TABLE[-1][1]

    def turbine(p):
        q = flow(p)
        return 0.0 if q < 0.015 else _power(min(q, 0.045))

    # pieces end where the flow crosses 45 L/s and 15 L/s, so quad integrates smooth pieces
    p45 = 0.4 * (0.060 - 0.045) / 0.030
    p15 = 0.4 + 0.6 * (0.030 - 0.015) / 0.020
    breaks = [0.0, p45, 0.4, p15, 1.0]
    hand = 8760 * sum(quad(turbine, a_, b_, epsabs=1e-9, epsrel=1e-12)[0] for a_, b_ in zip(breaks, breaks[1:]))
    assert h["energy_Wh"] == pytest.approx(hand, rel=2e-5)  # trapezoidal rule on 200 steps a piece; IF97 water
    assert h["P_rated"] == pytest.approx(_power(0.045), rel=1e-5)
    assert h["capacity_factor"] == pytest.approx(hand / (_power(0.045) * 8760), rel=2e-5)
    assert h["hours_running"] == pytest.approx(8760 * p15, rel=1e-9)


def _pump_doc() -> dict:
    doc = pumped_line()
    doc["energy"] = {"hours": "3000", "tariff": "0.2", "currency": "EUR", "motor_efficiency": "0.9"}
    ensure_ids(doc)
    doc["cases"] = [{"name": "Summer", "hours": "1500", "end": {"elevation": "97 m"}}, {"name": "No hours"}]
    return doc


def test_pumping_energy_and_cost_from_each_cases_hours():
    a = analyse(_pump_doc())
    assert a.ok, a.errors
    rows = {r["case"]: r for r in a.energy["pumping"]}
    assert set(rows) == {"Base", "Summer"}  # a case without hours of its own adds nothing
    for name, hours in (("Base", 3000.0), ("Summer", 1500.0)):
        case = a.case(name)
        pump = next(d for d in case.solution.design["elements"] if d["kind"] == "pump")
        assert rows[name]["energy_Wh"] == pytest.approx(pump["power_shaft"] / 0.9 * hours, rel=1e-12)
        assert rows[name]["cost"] == pytest.approx(rows[name]["energy_Wh"] / 1000 * 0.2, rel=1e-12)
    total = a.energy["pumping_total"]
    assert total["energy_Wh"] == pytest.approx(rows["Base"]["energy_Wh"] + rows["Summer"]["energy_Wh"])
    assert total["currency"] == "EUR"


@pytest.mark.parametrize("energy, path, words", [
    ({"hours": "9000"}, "energy.hours", "at most 8760"),
    ({"flow_duration": [{"exceedance": "10 %", "flow": "50 L/s"}]}, "energy.flow_duration", "two or more points"),
    ({"flow_duration": [{"exceedance": "10 %", "flow": "50 L/s"}, {"exceedance": "5 %", "flow": "40 L/s"}]},
     "energy.flow_duration.1.exceedance", "more than the point before"),
    ({"flow_duration": [{"exceedance": "10 %", "flow": "50 L/s"}, {"exceedance": "50 %", "flow": "60 L/s"}]},
     "energy.flow_duration.1.flow", "not be more than"),
    ({"turbine_flow_min": "50 L/s", "turbine_flow_max": "20 L/s"}, "energy.turbine_flow_max", "above the turbine's least"),
])
def test_energy_inputs_that_cannot_be_are_refused_at_their_field(energy, path, words):
    doc = _hydro_doc()
    doc["energy"] = energy
    errors = parse(doc).errors_by_path()
    assert words in errors[path], errors


def test_the_design_flow_stands_for_the_turbines_greatest_flow_when_none_is_typed():
    doc = _hydro_doc()
    del doc["energy"]["turbine_flow_max"]
    (h,) = analyse(doc).energy["hydro"]
    assert h["Q_rated"] == pytest.approx(0.030, rel=1e-12) and h["flow_max_from"] == "the design flow"
