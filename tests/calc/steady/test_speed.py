"""Variable speed: the speed a pump must run at for a target flow or head.

Checked three ways: the solved line at the speed found reproduces the target within 1e-9 (relative);
a hand calculation by the affinity laws, H = n^2 H1(Q/n) (Karassik et al., Pump Handbook, 4th ed. 2008),
at a flow where Q/n falls on a typed point so the curve's value there is the typed head; and the
line's losses from an independent Darcy-Weisbach and Colebrook solve (``fluids``, CoolProp water).
"""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from linetools import gravity_line, pump_curve

from calc.analysis import analyse
from calc.model.sheet import ensure_ids, parse

G = 9.80665
POINTS = ((0.0, 40.0), (20.0, 36.0), (40.0, 25.0), (60.0, 8.0))


def _losses(Q: float) -> float:
    """Losses of 500 m of 150 mm steel (0.045 mm) with a sharp entrance and an exit, K = 1.5 in all."""
    rho = PropsSI("D", "T", 288.15, "P", 101325.0, "Water")
    nu = PropsSI("V", "T", 288.15, "P", 101325.0, "Water") / rho
    D = 0.15
    V = Q / (math.pi * D * D / 4)
    return (Colebrook(V * D / nu, 0.045e-3 / D) * 500.0 / D + 1.5) * V * V / (2 * G)


def _sheet(lift: float, **pump) -> dict:
    doc = gravity_line()
    doc["start"]["elevation"] = "80 m"
    doc["end"]["elevation"] = f"{80.0 + lift:.9f} m"
    doc["elements"][0]["end_elevation"] = "78 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve", "curve": pump_curve(POINTS), **pump})
    return ensure_ids(doc)


@pytest.mark.parametrize("target", ["12 L/s", "25 L/s", "38.5 L/s"])
def test_a_target_flow_is_met_within_1e_9(target):
    a = analyse(_sheet(15.0, speed_control="flow", target_flow=target, speed_min="0.5", speed_max="1.2"))
    assert a.ok, a.errors
    (ans,) = a.cases[0].speeds
    Q_target = float(target.split()[0]) / 1000
    assert ans.n is not None
    assert a.solution.design["Q"] == pytest.approx(Q_target, rel=1e-9)
    pump = next(d for d in a.solution.design["elements"] if d["kind"] == "pump")
    assert pump["speed_ratio"] == ans.n
    assert any(f.code == "pump-speed" for f in a.findings)


def test_the_speed_for_a_typed_point_matches_the_affinity_laws_by_hand():
    # At n = 0.9 and Q = 18 L/s the curve is read at Q/n = 20 L/s, a typed point: H = 0.81 x 36 = 29.16 m.
    # The lift is chosen so the line needs exactly that at 18 L/s: lift = 29.16 - losses(18 L/s).
    lift = 0.81 * 36.0 - _losses(0.018)
    a = analyse(_sheet(lift, speed_control="flow", target_flow="18 L/s"))
    (ans,) = a.cases[0].speeds
    # within 1e-6: the sheet's water (IAPWS-IF97) and CoolProp's IAPWS-95 differ by ~1e-7 in the losses
    assert ans.n == pytest.approx(0.9, rel=1e-6)
    assert ans.H == pytest.approx(29.16, rel=1e-6)


def test_a_target_head_gives_the_flow_the_line_takes_at_that_head():
    a = analyse(_sheet(15.0, speed_control="head", target_head="20 m"))
    (ans,) = a.cases[0].speeds
    pump = next(d for d in a.solution.design["elements"] if d["kind"] == "pump")
    assert pump["head"] == pytest.approx(20.0, rel=1e-9)
    # the line's need at that flow is the lift plus its losses (independent solve)
    assert 15.0 + _losses(ans.Q) == pytest.approx(20.0, rel=1e-6)


def test_a_speed_outside_the_limits_is_a_warning_naming_the_limit():
    a = analyse(_sheet(15.0, speed_control="flow", target_flow="50 L/s", speed_max="1.1"))
    (ans,) = a.cases[0].speeds
    assert ans.n > 1.1 and ans.within is False
    f = next(f for f in a.findings if f.code == "pump-speed")
    assert f.severity == "warning" and "above the highest speed allowed" in f.message and f.limit == 1.1


def test_a_target_no_speed_can_meet_is_an_error_and_the_line_runs_at_the_curves_speed():
    a = analyse(_sheet(60.0, speed_control="flow", target_flow="10 L/s", speed_max="1.2"))
    (ans,) = a.cases[0].speeds
    assert ans.n is None or ans.n > 1.2
    a2 = analyse(_sheet(450.0, speed_control="flow", target_flow="10 L/s"))  # needs n > 3
    (ans2,) = a2.cases[0].speeds
    assert ans2.n is None and "cannot give the head" in ans2.reason
    assert any(f.code == "pump-speed" and f.severity == "error" for f in a2.findings)


def test_a_case_can_set_another_target():
    doc = _sheet(15.0, speed_control="flow", target_flow="20 L/s")
    doc["cases"] = [{"name": "Peak", "elements": [{"id": "pump-1", "target_flow": "30 L/s"}]}]
    a = analyse(doc)
    q = {c.name: c.solution.design["Q"] for c in a.cases}
    assert q["Base"] == pytest.approx(0.020, rel=1e-9) and q["Peak"] == pytest.approx(0.030, rel=1e-9)


@pytest.mark.parametrize("pump, path, words", [
    ({"speed_control": "flow"}, "target_flow", "give the flow"),
    ({"speed_control": "head", "target_head": "-3 m"}, "target_head", "must be positive"),
    ({"speed_control": "flow", "target_flow": "9 L/s", "speed_min": "1.2", "speed_max": "0.8"}, "speed_max",
     "above the lowest"),
    ({"speed_control": "fast"}, "speed_control", "fixed, flow, head"),
])
def test_a_speed_setting_that_cannot_be_is_refused_at_its_field(pump, path, words):
    errors = parse(_sheet(15.0, **pump)).errors_by_path()
    assert words in errors[f"elements.0.{path}"], errors


def test_a_fixed_head_pump_has_no_speed_to_solve():
    doc = _sheet(15.0, speed_control="flow", target_flow="9 L/s")
    doc["elements"][0].update(mode="head", head="30 m")
    assert "no speed to solve" in parse(doc).errors_by_path()["elements.0.speed_control"]


def test_the_case_table_gives_each_cases_solved_speed():
    from calc.review.summary import case_figures

    doc = _sheet(15.0, speed_control="flow", target_flow="20 L/s")
    doc["cases"] = [{"name": "Peak", "elements": [{"id": "pump-1", "target_flow": "30 L/s"}]}]
    a = analyse(doc)
    row = next(r for r in case_figures(a) if r["label"] == "P: speed ratio (solved)")
    assert row["values"] == [c.speeds[0].n for c in a.cases] and row["values"][0] < row["values"][1]
    changes = next(r for r in case_figures(a) if r["label"] == "Changes from the base")
    assert changes["values"][1] == "P: target flow 30 L/s"
