"""Turbines at a set flow, with an efficiency curve eta(Q) in every mode, and an impulse turbine driven by
the free jet at the end of the line, each against an independent solve of the energy equation.

Independent: Darcy-Weisbach with Colebrook's f from ``fluids``, water from CoolProp (IAPWS-95), the
efficiency curve through the typed points by scipy's ``PchipInterpolator``, closed with ``brentq``.
Power P = eta rho g Q H (any turbine text); for the impulse turbine H is the net head at the nozzle
inlet, the total head the jet is made from (IEC 60041:1991's net head).

Tolerances of 1e-5: the sheet's water is IAPWS-IF97 (the 2008 viscosity release), CoolProp's is IAPWS-95;
at 15 degC their densities differ by 1.5e-6 and their viscosities by 1.6e-6, which moves flows and powers
by a few parts in a million.
"""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from linetools import gravity_line
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq

from calc.analysis import analyse
from calc.model.sheet import ensure_ids, parse

G = 9.80665
RHO = PropsSI("D", "T", 288.15, "P", 101325.0, "Water")
NU = PropsSI("V", "T", 288.15, "P", 101325.0, "Water") / RHO
ETA_POINTS = ((10.0, 0.70), (25.0, 0.86), (40.0, 0.90), (55.0, 0.84))  # L/s, -


def _losses(Q: float, K: float = 0.5) -> float:
    """500 m of 150 mm steel (0.045 mm) with the sharp entrance typed (K 0.5); a turbine discharges freely."""
    D = 0.15
    V = Q / (math.pi * D * D / 4)
    return (Colebrook(V * D / NU, 0.045e-3 / D) * 500.0 / D + K) * V * V / (2 * G)


def _turbine_sheet(**turbine) -> dict:
    doc = gravity_line()
    doc["start"]["elevation"], doc["end"]["elevation"] = "160 m", "80 m"
    doc["elements"][0]["fittings"] = [{"type": "entrance-sharp", "count": 1}]
    doc["elements"].append({"kind": "turbine", "label": "T", **turbine})
    return ensure_ids(doc)


def _eta_points() -> list[dict]:
    return [{"flow": f"{q:g} L/s", "head": "", "efficiency": f"{e:g}"} for q, e in ETA_POINTS]


def _eta():
    return PchipInterpolator([q / 1000 for q, _ in ETA_POINTS], [e for _, e in ETA_POINTS])


def test_a_set_flow_turbine_takes_the_head_the_line_leaves_and_its_power_from_the_curve():
    a = analyse(_turbine_sheet(mode="flow", flow="30 L/s", curve=_eta_points()))
    assert a.ok, a.errors
    p = a.solution.design
    assert p["Q"] == pytest.approx(0.030, rel=1e-12)
    t = next(d for d in p["elements"] if d["kind"] == "turbine")
    # 80 m gross less the line's losses (independent); the end reservoir's surface is 80 m, the run ends at 78 m
    H = 80.0 - _losses(0.030)
    assert t["head"] == pytest.approx(H, rel=1e-6)
    assert t["efficiency"] == pytest.approx(float(_eta()(0.030)), rel=1e-12)
    assert t["power_shaft"] == pytest.approx(float(_eta()(0.030)) * RHO * G * 0.030 * H, rel=1e-5)


def test_a_set_power_with_an_efficiency_curve_against_an_independent_solve():
    a = analyse(_turbine_sheet(mode="power", power="20 kW", curve=_eta_points()))
    assert a.ok, a.errors
    eta = _eta()

    def residual(Q):
        return 80.0 - _losses(Q) - 20e3 / (float(eta(Q)) * RHO * G * Q)

    Q = brentq(residual, 0.012, 0.035, xtol=1e-14)  # the low-flow root, the design point
    assert a.solution.design["Q"] == pytest.approx(Q, rel=1e-5)
    t = next(d for d in a.solution.design["elements"] if d["kind"] == "turbine")
    assert t["power_shaft"] == pytest.approx(20e3, rel=1e-12)


def test_a_set_flow_the_line_cannot_pass_is_an_error():
    a = analyse(_turbine_sheet(mode="flow", flow="200 L/s", efficiency="0.9"))
    f = next(f for f in a.findings if f.code == "turbine-set-flow")
    assert f.severity == "error" and "cannot pass" in f.title
    t = next(d for d in a.solution.design["elements"] if d["kind"] == "turbine")
    assert t["head"] == 0.0


@pytest.mark.parametrize("points, path, words", [
    ([{"flow": "10 L/s", "efficiency": "0.8"}], "curve", "two or more points"),
    ([{"flow": "10 L/s", "efficiency": "0.8"}, {"flow": "10 L/s", "efficiency": "0.9"}], "curve.1.flow", "repeats"),
    ([{"flow": "", "efficiency": "0.8"}, {"flow": "20 L/s", "efficiency": "0.9"}], "curve.0.flow", "give the point"),
])
def test_an_efficiency_curve_that_cannot_be_is_refused(points, path, words):
    errors = parse(_turbine_sheet(mode="power", power="20 kW", curve=points)).errors_by_path()
    assert words in errors[f"elements.1.{path}"], errors


def test_head_points_kept_from_the_curve_mode_are_not_an_efficiency_curve():
    doc = _turbine_sheet(mode="power", power="20 kW", efficiency="0.85",
                         curve=[{"flow": "10 L/s", "head": "70 m", "efficiency": ""}] * 3)
    assert parse(doc).ok


def test_an_impulse_turbine_at_the_jet_against_an_independent_solve():
    doc = gravity_line()
    doc["start"]["elevation"] = "160 m"
    doc["elements"][0].update(end_elevation="60 m", fittings=[{"type": "entrance-sharp", "count": 1}])
    doc["end"] = {"kind": "jet", "elevation": "60 m", "nozzle_diameter": "60 mm", "velocity_coefficient": "0.98",
                  "impulse_efficiency": "0.88"}
    a = analyse(doc)
    assert a.ok, a.errors
    A_n = math.pi * 0.06 ** 2 / 4

    def residual(Q):  # 100 m gross = line losses + the head the jet is made from, V_j^2 / (2 g Cv^2)
        return 100.0 - _losses(Q) - (Q / A_n) ** 2 / (2 * G * 0.98 ** 2)

    Q = brentq(residual, 1e-4, 0.1, xtol=1e-14)
    H_n = (Q / A_n) ** 2 / (2 * G * 0.98 ** 2)
    assert a.solution.design["Q"] == pytest.approx(Q, rel=1e-6)
    duty = next(m for m in a.cases[0].summary["machines"] if m["kind"] == "impulse")
    assert duty["head"] == pytest.approx(H_n, rel=1e-6)
    assert duty["power_shaft"] == pytest.approx(0.88 * RHO * G * Q * H_n, rel=1e-5)
    assert duty["loss_share"] == pytest.approx((100.0 - H_n) / 100.0, rel=1e-5)
    assert any(f.code == "impulse-duty" for f in a.findings)
