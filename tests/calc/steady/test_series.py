"""The series-line solver against closed-form results, worked examples and an independent reference solve."""

import copy
import math

import fluids.friction
import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from linetools import gravity_line
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq

from calc.model.sheet import parse
from calc.steady.series import residual, solve
from calc.water import G


def line_of(doc):
    parsed = parse(doc)
    assert parsed.ok, parsed.errors
    return parsed.line


def gravity_doc(*, length="500 m", diameter="150 mm", roughness="0.045 mm", z_start="100 m", z_end="80 m",
                fittings=None, liquid=None):
    doc = gravity_line()
    run = doc["elements"][0]
    run.update({"length": length, "diameter": diameter, "roughness": roughness, "material": "",
                "end_elevation": z_end, "fittings": fittings or []})
    doc["start"]["elevation"] = z_start
    doc["end"]["elevation"] = z_end
    if liquid:
        doc["liquid"] = liquid
    return doc


OIL = {"kind": "custom", "name": "test oil", "density": "900 kg/m^3", "viscosity": "0.5 Pa*s",
       "vapour_pressure": "1 kPa"}


def test_laminar_line_matches_hagen_poiseuille_exactly():
    # Hagen–Poiseuille: Q = pi D^4 rho g dH / (128 mu L) for laminar flow between two
    # reservoirs with no local losses (any fluid-mechanics text; exact solution of Navier–Stokes).
    doc = gravity_doc(length="50 m", diameter="20 mm", z_start="10.5 m", z_end="10 m", liquid=OIL)
    # Points of known pressure at both ends, so no entrance or exit loss is counted and the
    # velocity heads at the two ends (one bore) cancel: the pure Hagen–Poiseuille case.
    doc["start"] = {"kind": "pressure", "elevation": "10.5 m", "pressure": "0 kPa"}
    doc["end"] = {"kind": "pressure", "elevation": "10 m", "pressure": "0 kPa"}
    line = line_of(doc)
    sol = solve(line)
    assert len(sol.points) == 1
    D, L, dH, rho, mu = 0.02, 50.0, 0.5, 900.0, 0.5
    Q_exact = math.pi * D**4 * rho * G * dH / (128 * mu * L)
    pipe = sol.points[0]["elements"][0]
    assert pipe["Re"] < 2000
    assert sol.points[0]["Q"] == pytest.approx(Q_exact, rel=1e-12, abs=0.0)


def test_friction_head_loss_worked_example():
    # Worked example (from memory: White, Fluid Mechanics, head-loss example for oil in cast iron):
    # oil rho 900 kg/m3, nu 1e-5 m2/s, Q 0.2 m3/s, 500 m of 200 mm cast iron (eps 0.26 mm):
    # Re about 1.27e5, f about 0.0227, head loss about 117 m.
    oil = {"kind": "custom", "name": "oil", "density": "900 kg/m^3", "viscosity": "0.009 Pa*s",
           "vapour_pressure": "1 kPa"}
    line = line_of(gravity_doc(length="500 m", diameter="200 mm", roughness="0.26 mm", liquid=oil))
    run = line.elements[0]
    d = run.detail(0.2, line.fluid)
    assert d["Re"] == pytest.approx(1.27e5, rel=0.01)
    assert d["f"] == pytest.approx(0.0227, rel=0.01)
    assert d["h_friction"] == pytest.approx(117.0, rel=0.01)


def reference_gravity_flow(dH, L, D, eps, K, rho, mu):
    """Independent solve: fluids' Colebrook and scipy brentq, the plain way (tests only)."""
    A = math.pi * D * D / 4

    def E(Q):
        V = Q / A
        Re = rho * V * D / mu
        f = fluids.friction.Colebrook(Re, eps / D)
        return dH - (f * L / D + K) * V * V / (2 * G)

    return brentq(E, 1e-6, 10.0, xtol=1e-15, rtol=1e-15)


@pytest.mark.parametrize("L,D,eps,K", [(500, 0.15, 4.5e-5, 1.5), (2000, 0.3, 2.6e-4, 0.0), (80, 0.05, 1.5e-6, 6.2)])
def test_gravity_line_matches_independent_reference_solve(L, D, eps, K):
    # Reference: Colebrook (1939) as implemented in the `fluids` library, closed with scipy brentq.
    doc = gravity_doc(length=f"{L} m", diameter=f"{D * 1000} mm", roughness=f"{eps * 1000} mm",
                      fittings=[{"type": "k", "K": str(K), "count": 1}])
    line = line_of(doc)
    sol = solve(line)
    # The sheet counts a sharp entrance (K = 0.5, Idelchik 2007) and the exit (K = 1, the velocity
    # head lost) by default, as the reference does on top of the typed K.
    Q_ref = reference_gravity_flow(20.0, L, D, eps, K + 1.5, line.liquid.rho, line.liquid.mu)
    assert sol.points[0]["Q"] == pytest.approx(Q_ref, rel=1e-9, abs=0.0)


def turbine_doc(power="20 kW", efficiency="0.8"):
    doc = gravity_doc(z_end="20 m", fittings=[{"type": "k", "K": "0.5", "count": 1}])
    doc["elements"].append({"kind": "turbine", "label": "T1", "mode": "power", "power": power,
                            "efficiency": efficiency})
    return doc


def test_turbine_at_set_power_has_two_points_and_low_flow_is_design():
    sol = solve(line_of(turbine_doc()))
    assert len(sol.points) == 2
    q = [p["Q"] for p in sol.points]
    assert q[0] < q[1]
    assert sol.design_index == 0
    assert "friction" in sol.points[0]["why"]
    for p in sol.points:
        # Shaft power at each point is the set power (P = eta rho g Q H).
        assert p["elements"][1]["power_shaft"] == pytest.approx(20e3, rel=1e-9)
    m = sol.machines[0]
    assert q[0] < m["Q_at_max"] < q[1]


def test_turbine_asking_too_much_reports_largest_power_and_its_flow():
    line = line_of(turbine_doc(power="500 kW"))
    sol = solve(line)
    assert sol.status == "no_operating_point" and not sol.points
    np_ = sol.no_point
    # Brute-force check of the largest power on a dense grid.
    Q = np.linspace(1e-4, 0.2, 20001)
    P = np.array([0.8 * line.liquid.rho * G * q * residual(line, q, skip=1) for q in Q])
    assert np_["max_power"] == pytest.approx(P.max(), rel=1e-6)
    assert np_["Q_at_max"] == pytest.approx(Q[P.argmax()], abs=2e-5)


def test_maximum_power_where_losses_are_one_third_of_gross_head():
    # Standard textbook result: with a constant friction factor, the power rho g Q (H - k Q^2)
    # is largest where the losses k Q^2 are one third of the gross head H.
    # A very rough pipe at high Re is fully rough, so f barely changes with flow.
    doc = gravity_doc(length="2000 m", diameter="300 mm", roughness="6 mm", z_end="0 m")
    doc["elements"].append({"kind": "turbine", "label": "T", "mode": "head", "head": "10 m", "efficiency": "0.9"})
    line = line_of(doc)
    m = solve(line).machines[0]
    fraction_lost = 1 - m["head_available_at_max"] / 100.0
    assert fraction_lost == pytest.approx(1 / 3, abs=0.005)


def pump_doc(curve, z_end="45 m", length="800 m"):
    doc = gravity_doc(length=length, diameter="200 mm", z_start="10 m", z_end=z_end,
                      fittings=[{"type": "k", "K": "1.5", "count": 1}])
    doc["elements"].insert(0, {"kind": "pump", "label": "P1", "mode": "curve", "speed_ratio": "1",
                               "curve": [{"flow": f"{q} L/s", "head": f"{h} m"} for q, h in curve]})
    return doc


def test_pump_point_matches_independent_reference_solve():
    curve = [(0, 60), (30, 55), (60, 40)]
    line = line_of(pump_doc(curve))
    sol = solve(line)
    assert len(sol.points) == 1
    # Reference: scipy's PchipInterpolator through the three points (Fritsch and Carlson 1980),
    # fluids' Colebrook, scipy brentq.
    pchip = PchipInterpolator([0, 0.03, 0.06], [60, 55, 40])
    rho, mu, D, L = line.liquid.rho, line.liquid.mu, 0.2, 800.0
    A = math.pi * D * D / 4

    def E(Q):
        V = Q / A
        f = fluids.friction.Colebrook(rho * V * D / mu, 4.5e-5 / D)
        # Typed K 1.5, plus the exit (K = 1) counted by default; the pump is first, so no entrance.
        return float(pchip(Q)) - 35.0 - (f * L / D + 1.5 + 1.0) * V * V / (2 * G)

    Q_ref = brentq(E, 1e-6, 0.2, xtol=1e-15)
    assert sol.points[0]["Q"] == pytest.approx(Q_ref, rel=1e-9)
    pump = sol.points[0]["elements"][0]
    assert pump["in_curve_range"] is True


def test_drooping_pump_curve_gives_two_crossings_and_the_stable_one_is_design():
    # Shut-off head below the static lift, a hump above it: two crossings. The lower is
    # unstable (the pump curve rises faster than the system curve).
    curve = [(0, 33), (20, 38), (40, 36)]
    line = line_of(pump_doc(curve, z_end="45.5 m", length="100 m"))
    sol = solve(line)
    assert len(sol.points) == 2
    assert sol.design_index == 1
    assert "stable" in sol.points[1]["why"]
    assert "unstable" in sol.points[0]["why"]


def test_pump_outside_its_curve_is_flagged():
    line = line_of(pump_doc([(0, 60), (5, 59), (10, 57)], z_end="20 m"))
    sol = solve(line)
    pump = sol.design["elements"][0]
    assert pump["in_curve_range"] is False
    assert any("extrapolated" in w for w in sol.warnings)


def test_no_flow_when_end_is_higher_and_no_pump():
    doc = gravity_doc(z_start="50 m", z_end="60 m")
    sol = solve(line_of(doc))
    assert sol.status == "no_operating_point"
    assert "backwards" in sol.no_point["reason"]


@pytest.mark.parametrize("make", [turbine_doc, lambda: pump_doc([(0, 60), (30, 55), (60, 40)]), gravity_doc])
def test_energy_balance_closes_at_every_point(make):
    line = line_of(make())
    sol = solve(line)
    assert sol.points
    for p in sol.points:
        # Sum of element heads along the line equals start head minus end head, to 1e-9 m.
        used = sum(d["head_change"] for d in p["elements"])
        assert abs(p["head_start"] - p["head_end"] - used) < 1e-9
        assert abs(p["residual"]) < 1e-9
        # The walked energy grade line arrives at the end's head.
        prof = p["profile"]
        assert prof[0]["egl"] == pytest.approx(p["head_start"], abs=1e-9)


def test_pressure_end_and_jet_velocity_heads_count():
    # A free jet through a nozzle: the jet's velocity head V^2/2g is head that leaves the line.
    doc = gravity_doc(z_end="80 m")
    doc["end"] = {"kind": "jet", "elevation": "80 m", "nozzle_diameter": "50 mm"}
    line = line_of(doc)
    sol = solve(line)
    p = sol.points[0]
    Vj = p["Q"] / (math.pi * 0.05**2 / 4)
    # With a nozzle, Cv = 0.98 by default (common practice, 0.97-0.99): V = Cv sqrt(2 g H), so the
    # head the nozzle needs is V^2 / (2 g Cv^2).
    assert line.end.velocity_coefficient == 0.98
    assert p["head_end"] == pytest.approx(80 + Vj * Vj / (2 * G * 0.98**2), rel=1e-12)


def high_head_jet_doc(cv=None):
    """A 400 m impulse-turbine penstock: 2400 m of 500 mm steel from a tank at 620 m to a 160 mm nozzle at 220 m."""
    doc = gravity_doc(length="2400 m", diameter="500 mm", z_start="620 m", z_end="220 m",
                      fittings=[{"type": "entrance-rounded", "count": 1}])
    doc["start"]["outlet_elevation"] = "617 m"
    doc["end"] = {"kind": "jet", "elevation": "220 m", "nozzle_diameter": "160 mm"}
    if cv is not None:
        doc["end"]["velocity_coefficient"] = cv
    return doc


@pytest.mark.parametrize("cv", [None, "0.97", "1"])
def test_high_head_jet_is_solved_against_an_independent_balance(cv):
    # At 400 m the jet runs at over 60 m/s, beyond any velocity fixed in advance: the scan's top
    # must come from the head. Reference: fluids' Colebrook with brentq, entrance K 0.04 (Idelchik,
    # rounded inlet, as the table carries it) and the nozzle's V^2 / (2 g Cv^2).
    line = line_of(high_head_jet_doc(cv))
    sol = solve(line)
    assert sol.status == "solved" and len(sol.points) == 1
    Cv = 0.98 if cv is None else float(cv)
    rho, mu, D, Dn, L = line.liquid.rho, line.liquid.mu, 0.5, 0.16, 2400.0

    def E(Q):
        V = Q / (math.pi * D * D / 4)
        Vj = Q / (math.pi * Dn * Dn / 4)
        f = fluids.friction.Colebrook(rho * V * D / mu, 4.5e-5 / D)
        return 400.0 - (f * L / D + 0.04) * V * V / (2 * G) - Vj * Vj / (2 * G * Cv * Cv)

    Q_ref = brentq(E, 1e-4, 10.0, xtol=1e-15)
    assert sol.points[0]["Q"] == pytest.approx(Q_ref, rel=1e-9, abs=0.0)
    Vj = Q_ref / (math.pi * Dn * Dn / 4)
    assert Vj > 60.0


def test_a_nozzle_larger_than_its_pipe_is_refused():
    doc = high_head_jet_doc()
    doc["end"]["nozzle_diameter"] = "600 mm"
    parsed = parse(doc)
    assert not parsed.ok and "larger than the bore" in parsed.errors_by_path()["end.nozzle_diameter"]


# ---------------------------------------------------------------------------- properties

settings_ = settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
_len = st.floats(10, 5000)
_dia = st.floats(0.02, 1.0)
_eps = st.floats(0.0, 3e-3)
_scale = st.floats(1.01, 3.0)


def flow(L, D, eps):
    line = line_of(gravity_doc(length=f"{L!r} m", diameter=f"{D!r} m", roughness=f"{eps!r} m",
                               fittings=[{"type": "k", "K": "1.5", "count": 1}]))
    return solve(line).points[0]["Q"]


@settings_
@given(_len, _dia, _eps, _scale)
def test_more_roughness_never_more_flow(L, D, eps, k):
    assert flow(L, D, eps * k + 1e-7) <= flow(L, D, eps) * (1 + 1e-12)


@settings_
@given(_len, _dia, _eps, _scale)
def test_more_length_never_more_flow(L, D, eps, k):
    assert flow(L * k, D, eps) <= flow(L, D, eps) * (1 + 1e-12)


@settings_
@given(_len, _dia, _eps, _scale)
def test_smaller_diameter_never_more_flow(L, D, eps, k):
    assert flow(L, D / k, eps) <= flow(L, D, eps) * (1 + 1e-12)


@settings_
@given(st.floats(1.0, 60.0), st.floats(0.5, 0.95), _len)
def test_turbine_points_bracket_maximum_power_flow(P_kw, eta, L):
    doc = turbine_doc(power=f"{P_kw!r} kW", efficiency=f"{eta!r}")
    doc["elements"][0]["length"] = f"{L!r} m"
    sol = solve(line_of(doc))
    m = sol.machines[0]
    if len(sol.points) == 2:
        assert sol.points[0]["Q"] <= m["Q_at_max"] <= sol.points[1]["Q"]
    else:
        # No point: the set power is above the most the line can give.
        assert not sol.points
        assert m["power_max"] < P_kw * 1e3 * (1 + 1e-9)


def test_profile_station_pressures_follow_hgl():
    doc = gravity_doc(length="400 m", z_end="80 m")
    doc["elements"][0]["profile"] = [{"chainage": "200 m", "elevation": "105 m"}]
    sol = solve(line_of(doc))
    hump = [s for s in sol.points[0]["profile"] if s["chainage"] == pytest.approx(200.0)]
    assert hump and hump[0]["pressure_head"] == pytest.approx(hump[0]["hgl"] - 105.0)
    assert hump[0]["pressure_head"] < 0  # the pipe rises above the hydraulic grade line there


def test_solution_dict_is_json_safe():
    import json

    sol = solve(line_of(turbine_doc(power="500 kW")))
    json.dumps(sol.to_dict(), allow_nan=False)
    d = copy.deepcopy(sol.to_dict())
    assert d["status"] == "no_operating_point"


def crest_turbine_doc():
    """A set-power turbine fed over a crest: the high-flow root would need the crest below vapour pressure."""
    doc = gravity_doc(length="1000 m", diameter="300 mm", z_start="100 m", z_end="20 m",
                      fittings=[{"type": "entrance-sharp", "count": 1}])
    doc["start"]["outlet_elevation"] = "97 m"
    doc["elements"][0]["profile"] = [{"chainage": "300 m", "elevation": "96.5 m"}]
    doc["elements"][0]["end_elevation"] = "18 m"
    doc["elements"].append({"kind": "turbine", "label": "T1", "mode": "power", "power": "90 kW",
                            "efficiency": "0.85"})
    return doc


def test_a_point_needing_pressure_below_vapour_cannot_occur_and_is_never_the_design():
    line = line_of(crest_turbine_doc())
    sol = solve(line)
    assert len(sol.points) == 2
    lo, hi = sol.points
    # Independent: pressure head at the crest (300 m, 96.5 m) from the energy equation with fluids'
    # Colebrook: start surface 100 m, sharp entrance 0.5, friction to the crest, velocity head.
    rho, mu, D = line.liquid.rho, line.liquid.mu, 0.3
    h_vap = (line.liquid.p_vap - line.p_atm) / (rho * G)

    def crest_head(Q):
        V = Q / (math.pi * D * D / 4)
        f = fluids.friction.Colebrook(rho * V * D / mu, 4.5e-5 / D)
        return 100.0 - (f * 300.0 / D + 0.5 + 1.0) * V * V / (2 * G) - 96.5

    assert crest_head(hi["Q"]) < h_vap < crest_head(lo["Q"])
    assert lo["attainable"] and not hi["attainable"]
    assert sol.design_index == 0 and "cannot occur" in hi["why"] and "cannot occur" in sol.message
