"""Control valves by Kv or Cv and inherent characteristic, check valves and pressure-reducing valves.

Checked against: the Kv definition itself (IEC 60534-1, from memory: Q [m³/h] = Kv sqrt(dp / 1 bar x
1000 / rho)), the ``fluids`` library's Kv_to_K and Cv_to_K (which round the constant to 1.6e9, against
the exact pi²/16 x 200 x 3600² = 1.5989e9, a 0.07 % difference), the inherent characteristics of IEC
60534-2-4:2009 (linear Phi = Phi0 + (1 - Phi0) h; equal percentage Phi = R^(h - 1)), and independent
solves of the line (Darcy-Weisbach with Colebrook's f from ``fluids``, water from CoolProp, ``brentq``).
"""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.fittings import Cv_to_K, Kv_to_K
from fluids.friction import Colebrook
from linetools import gravity_line, pump_curve
from scipy.optimize import brentq

from calc.analysis import analyse
from calc.model import valve_law
from calc.model.sheet import ensure_ids, parse

G = 9.80665
RHO = PropsSI("D", "T", 288.15, "P", 101325.0, "Water")
NU = PropsSI("V", "T", 288.15, "P", 101325.0, "Water") / RHO
D = 0.15
A = math.pi * D * D / 4


def _run_losses(Q: float) -> float:
    """500 m of 150 mm steel with the sharp entrance and exit typed on the gravity line (K 1.5 in all)."""
    V = Q / A
    return (Colebrook(V * D / NU, 0.045e-3 / D) * 500.0 / D + 1.5) * V * V / (2 * G)


def _with_valve(**valve) -> dict:
    doc = gravity_line()
    doc["elements"].append({"kind": "valve", "label": "CV", **valve})
    return ensure_ids(doc)


@pytest.mark.parametrize("Kv, d", [(100.0, 0.1), (35.0, 0.08), (400.0, 0.2)])
def test_K_from_a_flow_coefficient_against_the_definition_and_fluids(Kv, d):
    K = valve_law.K_from_kv(Kv, d)
    # the definition: at Q [m3/h] = Kv, water of 1000 kg/m3 loses exactly 1 bar
    V = Kv / 3600 / (math.pi * d * d / 4)
    assert K * 1000.0 * V * V / 2 == pytest.approx(1e5, rel=1e-12)
    assert K == pytest.approx(Kv_to_K(Kv, d), rel=1e-3)
    assert valve_law.K_from_kv(valve_law.kv_from(Kv, "Cv"), d) == pytest.approx(Cv_to_K(Kv, d), rel=1e-3)
    assert valve_law.kv_from_K(K, d) == pytest.approx(Kv, rel=1e-13)


@pytest.mark.parametrize("characteristic", ["linear", "equal_percentage"])
@pytest.mark.parametrize("h", [0.05, 0.3, 0.62, 1.0])
def test_the_characteristics_are_their_published_forms_and_invert(characteristic, h):
    R = 40.0
    expected = 1 / R + (1 - 1 / R) * h if characteristic == "linear" else R ** (h - 1)
    p = valve_law.phi(h, characteristic, R)
    assert p == pytest.approx(expected, rel=1e-14)
    assert valve_law.travel(p, characteristic, R) == pytest.approx(h, rel=1e-12)


def test_a_control_valve_at_an_opening_against_an_independent_solve():
    a = analyse(_with_valve(valve_type="control", coefficient="Cv", rated="300", characteristic="equal_percentage",
                            rangeability="50", opening="60 %"))
    assert a.ok, a.errors
    Kv = 0.865 * 300 * 50 ** (0.6 - 1)  # Cv to Kv, then the equal-percentage characteristic
    K = 2e5 / 1000 * (3600 * A / Kv) ** 2

    def residual(Q):
        return 20.0 - _run_losses(Q) - K * (Q / A) ** 2 / (2 * G)

    Q = brentq(residual, 1e-5, 0.2, xtol=1e-14)
    assert a.solution.design["Q"] == pytest.approx(Q, rel=1e-5)  # IF97 against IAPWS-95 water: ~1e-6
    v = next(d for d in a.solution.design["elements"] if d["kind"] == "valve")
    assert v["Kv"] == pytest.approx(Kv, rel=1e-12) and v["opening"] == pytest.approx(0.6)


def test_a_control_valve_opens_to_pass_its_target_flow():
    a = analyse(_with_valve(valve_type="control", coefficient="Kv", rated="250", characteristic="linear",
                            rangeability="50", setting="flow", target_flow="30 L/s"))
    assert a.ok, a.errors
    assert a.solution.design["Q"] == pytest.approx(0.030, rel=1e-12)
    (v,) = a.cases[0].valve_settings
    # the valve takes the head the line leaves at 30 L/s (independent), by its K
    h = 20.0 - _run_losses(0.030)
    assert v.head == pytest.approx(h, rel=1e-5)
    Kv = 3600 * A * math.sqrt(2e5 / 1000 / (h / ((0.030 / A) ** 2 / (2 * G))))
    assert v.opening == pytest.approx((Kv / 250 - 1 / 50) / (1 - 1 / 50), rel=1e-5)
    assert any(f.code == "valve-opening" for f in a.findings)


def test_a_target_flow_too_high_leaves_the_valve_fully_open_with_a_warning():
    a = analyse(_with_valve(valve_type="control", coefficient="Kv", rated="250", characteristic="linear",
                            rangeability="50", setting="flow", target_flow="80 L/s"))
    (v,) = a.cases[0].valve_settings
    assert v.state == "fully_open" and v.opening == 1.0
    assert a.solution.design["Q"] < 0.080
    f = next(f for f in a.findings if f.code == "valve-target")
    assert f.severity == "warning"


def test_a_valve_nearly_shut_for_its_target_is_a_warning():
    a = analyse(_with_valve(valve_type="control", coefficient="Kv", rated="2000", characteristic="linear",
                            rangeability="50", setting="flow", target_flow="5 L/s"))
    (v,) = a.cases[0].valve_settings
    assert v.nearly_shut
    assert next(f for f in a.findings if f.code == "valve-opening").severity == "warning"


def _prv_line(set_pressure: str) -> dict:
    """A gravity main from 160 m: a reducing valve at 300 m (at 120 m), then 200 m more to a tank at 122 m,
    all 150 mm steel: without the valve the tank would see far more pressure than it needs."""
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "160 m", "122 m"
    run = doc["elements"][0]
    run.update(length="300 m", end_elevation="120 m", fittings=[{"type": "entrance-sharp", "count": 1}])
    doc["elements"] = [run, {"kind": "valve", "label": "PRV", "valve_type": "prv", "K": "3",
                             "set_pressure": set_pressure},
                       {**run, "label": "Lower", "length": "200 m", "end_elevation": "121 m",
                        "fittings": [{"type": "exit", "count": 1}]}]
    return ensure_ids(doc)


def test_a_pressure_reducing_valve_holds_its_set_pressure_downstream():
    a = analyse(_prv_line("50 kPa"))
    assert a.ok, a.errors
    (v,) = a.cases[0].valve_settings
    assert v.state == "set"
    p = a.solution.design
    rho = a.line.liquid.rho
    # the pressure just after the valve is the set pressure (the grade line's station after it)
    after = [st for st in p["profile"] if st["element"] == 1][-1]
    assert after["pressure_head"] * rho * G == pytest.approx(50e3, rel=1e-9)
    # independently: the lower 200 m pass Q with 120 m + 50 kPa + V²/2g upstream of them and the tank at 122 m
    def lower(Q):
        V = Q / A
        f = Colebrook(V * D / NU, 0.045e-3 / D)
        return 120.0 + 50e3 / (RHO * G) + V * V / (2 * G) - (f * 200 / D + 1.0) * V * V / (2 * G) - 122.0

    assert p["Q"] == pytest.approx(brentq(lower, 1e-4, 0.3, xtol=1e-14), rel=1e-5)


def test_a_reducing_valve_with_too_little_pressure_stands_open():
    a = analyse(_prv_line("2000 kPa"))
    (v,) = a.cases[0].valve_settings
    assert v.state in ("fully_open", "no_flow")
    assert any(f.code == "valve-target" for f in a.findings)


def test_a_check_valve_holds_back_a_higher_end():
    doc = _with_valve(valve_type="check", K="2")
    doc["end"]["elevation"] = "105 m"
    a = analyse(doc)
    assert a.solution.status == "no_operating_point"
    assert "check valve CV is shut" in a.solution.message and "holds back" in a.solution.message


def test_a_check_valve_passes_forward_flow_with_its_loss():
    q_check = analyse(_with_valve(valve_type="check", K="2")).solution.design["Q"]
    q_fixed = analyse(_with_valve(K="2")).solution.design["Q"]
    assert q_check == q_fixed


@pytest.mark.parametrize("valve, path, words", [
    ({"valve_type": "control", "rated": "", "rangeability": "50", "opening": "50 %"}, "rated", "rated Kv or Cv"),
    ({"valve_type": "control", "rated": "80", "rangeability": "", "opening": "50 %"}, "rangeability", "rangeability"),
    ({"valve_type": "control", "rated": "80", "rangeability": "50", "opening": "0"}, "opening", "must be positive"),
    ({"valve_type": "control", "rated": "80", "rangeability": "50", "opening": "120 %"}, "opening", "at most 1"),
    ({"valve_type": "prv", "K": "2", "set_pressure": ""}, "set_pressure", "give the pressure"),
    ({"valve_type": "gate"}, "valve_type", "fixed, check, control, prv"),
])
def test_a_valve_that_cannot_be_is_refused_at_its_field(valve, path, words):
    errors = parse(_with_valve(**valve)).errors_by_path()
    assert words in errors[f"elements.1.{path}"], errors


def test_a_case_can_change_a_valves_opening():
    doc = _with_valve(valve_type="control", coefficient="Kv", rated="250", characteristic="linear",
                      rangeability="50", opening="100 %")
    doc["cases"] = [{"name": "Throttled", "elements": [{"id": "valve-1", "opening": "20 %"}]}]
    q = {c.name: c.solution.design["Q"] for c in analyse(doc).cases}
    assert q["Throttled"] < q["Base"]


def test_a_pumped_line_with_a_throttling_valve_never_gains_flow_as_it_closes():
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "80 m", "95 m"
    doc["elements"][0]["end_elevation"] = "93 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve",
                               "curve": pump_curve(((0, 40), (20, 36), (40, 25), (60, 8)))})
    doc["elements"].append({"kind": "valve", "label": "V", "valve_type": "control", "coefficient": "Kv",
                            "rated": "150", "characteristic": "equal_percentage", "rangeability": "30",
                            "opening": "100 %"})
    ensure_ids(doc)
    doc["cases"] = [{"name": f"{h} %", "elements": [{"id": "valve-1", "opening": f"{h} %"}]} for h in (80, 60, 40, 20)]
    flows = [c.solution.design["Q"] for c in analyse(doc).cases]
    assert all(q2 <= q1 for q1, q2 in zip(flows, flows[1:]))
