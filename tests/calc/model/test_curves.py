"""Machine curves through the typed points, shape-preserving between them, against scipy and independent solves.

References: scipy.interpolate.PchipInterpolator (Fritsch and Carlson, SIAM J. Numer. Anal. 17, 1980)
as the reference interpolant; flows solved independently with fluids' Colebrook and brentq.
"""

from __future__ import annotations

import math

import fluids.friction
import numpy as np
import pytest
from linetools import gravity_line
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq

from calc.analysis import analyse
from calc.model.elements import Curve
from calc.model.sheet import parse
from calc.steady.series import solve

G = 9.80665
# A 7-point curve in the shape makers print: convex and falling (L/s, m).
SEVEN = [(0, 62.0), (10, 61.0), (20, 58.5), (30, 54.0), (40, 47.0), (50, 37.5), (60, 25.0)]


def test_curve_passes_through_every_typed_point_and_matches_pchip():
    Q = [q / 1e3 for q, _ in SEVEN]
    H = [h for _, h in SEVEN]
    c = Curve(Q, H)
    ref = PchipInterpolator(Q, H)
    for q, h in zip(Q, H):
        assert c(q) == pytest.approx(h, abs=1e-12)
    grid = np.linspace(0.0, 0.06, 241)
    assert np.allclose(c(grid), ref(grid), rtol=0, atol=1e-10)
    assert all(abs(c(float(q)) - float(ref(q))) < 1e-10 for q in grid[::7])


def test_falling_curve_keeps_falling_past_its_last_point():
    # A least-squares parabola through convex falling data turns upward past its minimum; the curve
    # here goes on straight with its end slope, so it keeps falling.
    c = Curve([q / 1e3 for q, _ in SEVEN], [h for _, h in SEVEN])
    assert c.monotone_falling()
    beyond = np.linspace(0.06, 23 * 0.06, 50)
    values = c(beyond)
    assert np.all(np.diff(values) < 0)
    assert c.slope_end == pytest.approx(float(PchipInterpolator(c.Q, c.y).derivative()(0.06)), rel=1e-12)


def pump_line(curve=SEVEN, z_end="140 m", eff=None, length="400 m", pipe_end="138 m"):
    doc = gravity_line()
    doc["start"].update({"elevation": "100 m", "outlet_elevation": "98 m"})
    doc["end"].update({"elevation": z_end})
    pts = []
    for k, (q, h) in enumerate(curve):
        pt = {"flow": f"{q} L/s", "head": f"{h} m"}
        if eff is not None:
            pt["efficiency"] = eff[k]
        pts.append(pt)
    doc["elements"] = [
        {"kind": "pump", "label": "P1", "mode": "curve", "curve": pts},
        {"kind": "pipe", "label": "Main", "length": length, "diameter": "200 mm", "material": "",
         "roughness": "0.045 mm", "end_elevation": pipe_end, "fittings": []},
    ]
    return doc


def system_head(line, Q):
    """Static lift plus the main's friction and exit (K = 1, counted by default), by fluids' Colebrook."""
    rho, mu, D = line.liquid.rho, line.liquid.mu, 0.2
    V = Q / (math.pi * D * D / 4)
    f = fluids.friction.Colebrook(rho * V * D / mu, 4.5e-5 / D)
    return (f * 400.0 / D + 1.0) * V * V / (2 * G)


def test_duty_point_exactly_on_a_typed_point():
    # Choose the tank level so that the system needs exactly 47 m at 40 L/s, a typed point: the duty
    # must come out at 40 L/s with 47 m of pump head, which a fitted curve misses.
    line0 = parse(pump_line()).line
    lift = 47.0 - system_head(line0, 0.040)
    doc = pump_line(z_end=f"{100 + lift!r} m")
    sol = solve(parse(doc).line)
    assert len(sol.points) == 1
    p = sol.points[0]
    assert p["Q"] == pytest.approx(0.040, rel=1e-9)
    assert p["elements"][0]["head"] == pytest.approx(47.0, rel=1e-9)


def test_duty_point_against_an_independent_solve_with_scipy_pchip():
    line = parse(pump_line()).line
    ref_curve = PchipInterpolator([q / 1e3 for q, _ in SEVEN], [h for _, h in SEVEN])
    Q_ref = brentq(lambda Q: float(ref_curve(Q)) - 40.0 - system_head(line, Q), 1e-4, 0.06, xtol=1e-15)
    assert solve(line).design["Q"] == pytest.approx(Q_ref, rel=1e-9)


def test_a_rising_stretch_is_said():
    rising = [(0, 40.0), (10, 42.0), (20, 41.0), (30, 37.0), (40, 30.0)]
    a = analyse(pump_line(rising, z_end="120 m"))
    f = [x for x in a.findings if x.code == "pump-curve-rising"]
    assert f and "0-10 L/s" in f[0].message


def test_efficiency_zero_at_shut_off_and_missing_at_some_points_are_accepted():
    eff = ["0", "0.55", "", "0.74", "0.78", "", "0.70"]
    parsed = parse(pump_line(eff=eff))
    assert parsed.ok, parsed.errors
    pump = parsed.line.elements[0]
    assert pump.efficiency_curve.Q == pytest.approx([0.0, 0.01, 0.03, 0.04, 0.06], abs=1e-15)
    # The highest typed efficiency, 0.78 at 40 L/s, is inside the data: that is the best-efficiency flow.
    assert pump.best_efficiency_flow() == pytest.approx(0.040)


def test_operating_points_past_the_curve_are_flagged_and_far_past_refused():
    # A short line to a low tank: the pump runs out past its last typed point (60 L/s).
    # Past the last point by more than 20 % (72 L/s): not a result; by less: carried on and flagged.
    for z_tank, code in (("100 m", "curve-beyond-limit"), ("115 m", "curve-extrapolated")):
        a = analyse(pump_line(z_end=z_tank, length="120 m", pipe_end="98 m"))
        Q = a.solution.design["Q"]
        assert Q > 0.060 and (Q > 0.072) == (code == "curve-beyond-limit")
        assert code in {f.code for f in a.findings}
    # With a tank that leaves the duty inside the typed points, neither is said.
    b = analyse(pump_line(z_end="135 m", pipe_end="133 m"))
    assert not {"curve-beyond-limit", "curve-extrapolated"} & {f.code for f in b.findings}


def test_turbine_without_efficiency_is_said():
    doc = gravity_line()
    doc["start"].update({"elevation": "200 m", "outlet_elevation": "198 m"})
    doc["end"].update({"elevation": "100 m"})
    doc["elements"][0].update({"end_elevation": "98 m", "fittings": []})
    doc["elements"].append({"kind": "turbine", "label": "T1", "mode": "head", "head": "90 m"})
    a = analyse(doc)
    assert "turbine-efficiency-assumed" in {f.code for f in a.findings}
    doc["elements"][1]["efficiency"] = "0.9"
    assert "turbine-efficiency-assumed" not in {f.code for f in analyse(doc).findings}
