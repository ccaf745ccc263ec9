"""The uncertainty band against independent reference solves with the `fluids` friction formulas."""

import json
import math

import fluids.friction
import pytest
from linetools import gravity_line
from scipy.optimize import brentq

from calc.analysis import analyse
from calc.model.sheet import parse
from calc.review import uncertainty
from calc.steady.series import solve
from calc.water import G

# fluids' implementations of the same published formulas (tests only).
FLUIDS = {
    "colebrook": fluids.friction.Colebrook,
    "swamee_jain_1976": fluids.friction.Swamee_Jain_1976,
    "haaland_1983": fluids.friction.Haaland,
    "churchill_1977": fluids.friction.Churchill_1977,
    "serghides_1984": fluids.friction.Serghides_1,
}

STEEL_NEW, STEEL_AGED = 0.045e-3, 1.35e-3  # material table: Moody 1944 new; Idelchik 2007 used steel


def gravity_doc(checks_=None, material="steel-commercial", roughness=""):
    doc = gravity_line()
    doc["elements"][0].update({"length": "500 m", "diameter": "150 mm", "material": material,
                               "roughness": roughness, "end_elevation": "80 m",
                               "fittings": [{"type": "entrance-sharp", "count": 1},
                                            {"type": "exit", "count": 1}]})
    if checks_:
        doc["settings"]["checks"] = checks_
    return doc


def line_of(doc):
    parsed = parse(doc)
    assert parsed.ok, parsed.errors
    return parsed.line


def reference_flow(line, eps, K=1.5, method="colebrook", dH=20.0, L=500.0, D=0.15):
    """Independent: the gravity flow by a fluids friction formula and brentq (tests only)."""
    rho, mu = line.liquid.rho, line.liquid.mu
    A = math.pi * D * D / 4
    ff = FLUIDS[method]

    def E(Q):
        V = Q / A
        return dH - (ff(rho * V * D / mu, eps / D) * L / D + K) * V * V / (2 * G)

    return brentq(E, 1e-3, 1.0, xtol=1e-16, rtol=1e-15)  # turbulent here: Re above 1e4 from 1 L/s


def band_of(doc):
    line = line_of(doc)
    sol = solve(line)
    return line, sol, uncertainty.band(line, sol, line.settings["checks"])


def case(b, key):
    return next(c for c in b["cases"] if c["key"] == key)


def test_band_brackets_nominal_and_aged_roughness_gives_less_flow():
    line, sol, b = band_of(gravity_doc())
    Q0 = sol.design["Q"]
    assert b["Q_nominal"] == Q0
    assert b["Q_low"] < Q0 < b["Q_high"]
    aged = case(b, "roughness-high")
    assert aged["Q"] < Q0
    # Aged steel (1.35 mm, Idelchik 2007 via the material table) by fluids' Colebrook.
    assert aged["Q"] == pytest.approx(reference_flow(line, STEEL_AGED), rel=1e-9)
    # New roughness is the nominal here, so no separate low-roughness solve is made.
    assert not [c for c in b["cases"] if c["key"] == "roughness-low"]
    assert b["complete"] and b["full_scans"] == 0


def test_fitting_k_cases_match_reference():
    # The entrance's K 0.5 varied by the default 20 % (common practice); the exit's K = 1 is held,
    # since the velocity head leaving the pipe is lost whatever the data say.
    line, sol, b = band_of(gravity_doc())
    assert case(b, "fittings-low")["Q"] == pytest.approx(reference_flow(line, STEEL_NEW, K=1.4), rel=1e-9)
    assert case(b, "fittings-high")["Q"] == pytest.approx(reference_flow(line, STEEL_NEW, K=1.6), rel=1e-9)


@pytest.mark.parametrize("method", ["swamee_jain_1976", "haaland_1983", "churchill_1977", "serghides_1984"])
def test_friction_formula_cases_match_fluids(method):
    # Swamee and Jain 1976, Haaland 1983, Churchill 1977, Serghides 1984 as implemented in fluids.
    # fluids writes Swamee and Jain's 5.74/Re^0.9 as (6.97/Re)^0.9 (6.97^0.9 = 5.73997), which moves
    # the flow by a few parts in 1e7: hence 1e-6.
    line, sol, b = band_of(gravity_doc())
    c = case(b, f"friction-{method}")
    assert c["method"] == method
    assert c["Q"] == pytest.approx(reference_flow(line, STEEL_NEW, method=method), rel=1e-6)


def test_combined_cases_stack_the_changes():
    line, sol, b = band_of(gravity_doc())
    low, high = case(b, "combined-low"), case(b, "combined-high")
    worst_method = min((c for c in b["cases"] if c["factor"] == "friction"), key=lambda c: c["Q"])["method"]
    best_method = max((c for c in b["cases"] if c["factor"] == "friction"), key=lambda c: c["Q"])["method"]
    assert low["Q"] == pytest.approx(reference_flow(line, STEEL_AGED, K=1.6, method=worst_method), rel=1e-7)
    assert high["Q"] == pytest.approx(reference_flow(line, STEEL_NEW, K=1.4, method=best_method), rel=1e-7)
    assert b["Q_low"] == low["Q"] and b["Q_high"] == high["Q"]


def test_user_roughness_range():
    doc = gravity_doc({"roughness_low": "50 %", "roughness_high": "0.5 mm"})
    line, sol, b = band_of(doc)
    lo, hi = case(b, "roughness-low"), case(b, "roughness-high")
    assert lo["Q"] == pytest.approx(reference_flow(line, STEEL_NEW / 2), rel=1e-9)
    assert hi["Q"] == pytest.approx(reference_flow(line, 0.5e-3), rel=1e-9)
    assert lo["Q"] > sol.design["Q"] > hi["Q"]


def test_typed_roughness_without_material_has_no_roughness_spread_and_says_so():
    line, sol, b = band_of(gravity_doc(material="", roughness="0.1 mm"))
    assert not [c for c in b["cases"] if c["factor"] == "roughness"]
    assert b["notes"] and "no aged roughness" in b["notes"][0]


def test_no_k_spread_when_set_to_zero():
    _, _, b = band_of(gravity_doc({"k_uncertainty": "0 %"}))
    assert not [c for c in b["cases"] if c["factor"] == "fittings"]


def test_band_does_not_change_the_line():
    line = line_of(gravity_doc())
    sol = solve(line)
    before = json.dumps(sol.to_dict(), sort_keys=True)
    params = [dict(f.params) for f in line.elements[0].fittings]
    uncertainty.band(line, sol)
    assert [dict(f.params) for f in line.elements[0].fittings] == params
    assert line.elements[0].eps == pytest.approx(STEEL_NEW, rel=1e-12) and line.method == "colebrook"
    assert json.dumps(solve(line).to_dict(), sort_keys=True) == before


def turbine_doc(power="15 kW"):
    doc = gravity_doc()
    doc["end"]["elevation"] = "20 m"
    doc["elements"][0]["end_elevation"] = "20 m"
    doc["elements"].append({"kind": "turbine", "label": "T1", "mode": "power", "power": power, "efficiency": "0.8"})
    return doc


def test_turbine_band_stays_on_the_design_branch():
    # A turbine at set power has two operating points; the design point is the lower flow. Every
    # case must be that same branch: the full solve of the changed line picks the same flow.
    line, sol, b = band_of(turbine_doc())
    assert len(sol.points) == 2 and sol.design_index == 0
    for c in b["cases"]:
        args = {}
        if c["factor"] == "roughness":
            args["eps"] = [STEEL_AGED]
        elif c["key"] == "fittings-low":
            args["k_factor"] = 0.8
        elif c["key"] == "fittings-high":
            args["k_factor"] = 1.2
        elif c["factor"] == "friction":
            args["method"] = c["method"]
        else:
            continue
        full = solve(uncertainty.variant(line, **args))
        assert c["Q"] == pytest.approx(full.design["Q"], rel=1e-9), c["key"]
    # More loss asks more water for the same power on the low-flow branch.
    assert case(b, "roughness-high")["Q"] > sol.design["Q"]
    # At a set power the shaft power cannot vary: the range is of the net head (P = eta rho g Q H).
    head = b["machines"][0]
    assert head["what"] == "net head"
    rho = line.liquid.rho
    flows = [c["Q"] for c in b["cases"] if c["Q"] is not None] + [sol.design["Q"]]
    eta = line.elements[-1].efficiency
    assert head["low"] == pytest.approx(15e3 / (eta * rho * G * max(flows)), rel=1e-9)
    assert head["high"] == pytest.approx(15e3 / (eta * rho * G * min(flows)), rel=1e-9)
    a = analyse(turbine_doc())
    assert not [f for f in a.findings if f.code == "band-turbine" and "kW, between" in f.message]


def test_turbine_that_aged_pipe_cannot_feed_is_a_warning():
    line = line_of(turbine_doc())
    P_max = solve(line).machines[0]["power_max"]
    a = analyse(turbine_doc(power=f"{0.99 * P_max / 1e3} kW"))
    assert a.solution.design is not None
    assert case(a.band, "roughness-high")["Q"] is None
    assert not a.band["complete"]
    f = [f for f in a.findings if f.code == "band-no-point"]
    assert len(f) == 1 and f[0].severity == "warning" and "aged" in f[0].message


def test_turbine_head_mode_band_gives_a_power_range():
    doc = turbine_doc()
    doc["elements"][1].update({"mode": "head", "head": "50 m", "power": ""})
    line, sol, b = band_of(doc)
    m = b["machines"][0]
    assert m["low"] < m["nominal"] < m["high"]
    # P = eta rho g Q H at the lowest and highest flows (fixed head)
    assert m["low"] == pytest.approx(0.8 * line.liquid.rho * G * b["Q_low"] * 50.0, rel=1e-12)
    assert m["high"] == pytest.approx(0.8 * line.liquid.rho * G * b["Q_high"] * 50.0, rel=1e-12)


def test_pump_band_reports_head_from_the_curve():
    doc = gravity_doc()
    doc["start"]["elevation"] = "80 m"
    doc["end"]["elevation"] = "100 m"
    doc["elements"][0]["end_elevation"] = "100 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve", "curve": [
        {"flow": "0 L/s", "head": "40 m"}, {"flow": "20 L/s", "head": "36 m"}, {"flow": "40 L/s", "head": "25 m"}]})
    line, sol, b = band_of(doc)
    pump = line.elements[0]
    aged = case(b, "roughness-high")
    assert aged["Q"] < sol.design["Q"]
    assert aged["machines"][0]["head"] == pytest.approx(float(pump.pump_head(aged["Q"])), rel=1e-12)
    m = b["machines"][0]
    assert m["what"] == "pump head" and m["low"] < m["nominal"] < m["high"]


def test_root_near_recovers_from_a_poor_start():
    # Started a decade away from the root, the local search still closes on the same root (or the
    # full scan does), matching the full solve.
    line = line_of(gravity_doc())
    sol = solve(line)
    p = sol.design
    for Q_start in (p["Q"] * 10, p["Q"] / 10):
        Q, _ = uncertainty.root_near(line, Q_start, p["slope"])
        assert Q == pytest.approx(p["Q"], rel=1e-9)


def test_band_is_json_safe_and_in_the_analysis():
    a = analyse(gravity_doc())
    d = json.loads(json.dumps(a.to_dict(), allow_nan=False))
    assert d["band"]["Q_low"] < d["band"]["Q_nominal"] < d["band"]["Q_high"]
    assert d["check_settings"]["k_uncertainty"]["value"] == 0.2
    assert "common practice" in d["check_settings"]["k_uncertainty"]["source"]
    flow = [f for f in a.findings if f.code == "band-flow"][0]
    assert flow.severity == "info" and flow.value == a.band["Q_nominal"]


def test_variant_scales_every_k_model():
    # K is linear in K of a plain item, in K1 and Kinf (Hooper 1981) and in K1 and Ki (Darby 2001).
    doc = gravity_doc()
    doc["elements"][0]["fittings"] = [{"type": "2k", "K1": "800", "Kinf": "0.25"},
                                      {"type": "3k", "K1": "800", "Ki": "0.14", "Kd": "4"}]
    doc["elements"].append({"kind": "valve", "label": "V", "K": "2"})
    line = line_of(doc)
    v = uncertainty.variant(line, k_factor=1.25)
    run, run2 = line.elements[0], v.elements[0]
    keys = [f.key for f in run.fittings]
    assert keys == ["entrance-sharp", "2k", "3k"], keys  # the valve comes last: no exit on the run
    # the run's total K, what its head uses, at several Reynolds numbers: the sum of each fitting's K
    # (Hooper's and Darby's forms, tables.k_coefficients) times 1.25
    for Re in (2e4, 1e5, 1e6):
        A2, B2 = run2.K_coefficients()
        assert A2 / Re + B2 == pytest.approx(1.25 * sum(f.count * f.K(Re, run.D) for f in run.fittings), rel=1e-12)
    assert v.elements[1].K == pytest.approx(2.5)
    # the nominal line keeps its values
    assert run.fittings[1].params == {"K1": 800.0, "Kinf": 0.25} and line.elements[1].K == 2.0


def test_variant_holds_the_exit_at_one():
    line = line_of(gravity_doc())
    v = uncertainty.variant(line, k_factor=0.8)
    run, run2 = line.elements[0], v.elements[0]
    exits = [f for f in run.fittings if f.key == "exit"]
    assert len(exits) == 1 and exits[0].K(1e5, run.D) == 1.0
    others = sum(f.count * f.K(1e5, run.D) for f in run.fittings if f.key != "exit")
    A2, B2 = run2.K_coefficients()
    assert A2 / 1e5 + B2 == pytest.approx(0.8 * others + 1.0, rel=1e-12)


def transitional_doc():
    """Warm water through 40 m of 20 mm tube at a flow giving Re near 3000 (the transition zone)."""
    doc = gravity_line()
    doc["start"].update({"elevation": "10.12 m", "outlet_elevation": "10 m"})
    doc["end"].update({"elevation": "10 m"})
    doc["elements"][0].update({"length": "40 m", "diameter": "20 mm", "material": "copper", "roughness": "",
                               "end_elevation": "9.9 m", "fittings": []})
    return doc


def test_transitional_flow_is_bounded_by_the_laminar_and_turbulent_friction():
    # In Re 2000-4000 the friction factor may lie anywhere between 64/Re and the turbulent value
    # (Moody 1944 'critical zone'): the range re-solves with each, by fluids' Colebrook and brentq here.
    line, sol, b = band_of(transitional_doc())
    d = sol.design["elements"][0]
    assert d["regime"] == "transitional"
    rho, mu, D, L = line.liquid.rho, line.liquid.mu, 0.02, 40.0
    eps = line.elements[0].eps
    K = sum(f.K(1e4, D) for f in line.elements[0].fittings)
    dH = line.start.static_head(rho) - line.end.static_head(rho)

    def flow(law):
        def E(Q):
            V = Q / (math.pi * D * D / 4)
            Re = rho * V * D / mu
            f = 64 / Re if law == "laminar" else fluids.friction.Colebrook(Re, eps / D)
            return dH - (f * L / D + K) * V * V / (2 * G)
        return brentq(E, 1e-7, 0.01, xtol=1e-16, rtol=1e-15)

    lam, turb = case(b, "transition-laminar"), case(b, "transition-turbulent")
    # Laminar friction holds up to Re 4000 at most: past it the flow is turbulent, so the laminar
    # bound is the smaller of the 64/Re flow and the flow at Re = 4000.
    Q_4000 = 4000.0 * mu / rho * math.pi * D / 4
    assert lam["Q"] == pytest.approx(min(flow("laminar"), Q_4000), rel=1e-9)
    assert turb["Q"] == pytest.approx(flow("turbulent"), rel=1e-9)
    assert b["Q_low"] <= turb["Q"] < lam["Q"] <= b["Q_high"]
    a = analyse(transitional_doc())
    f = [x for x in a.findings if x.code == "band-flow"][0]
    assert f.severity == "warning" and "transitional" in f.message and "precision" not in f.message
