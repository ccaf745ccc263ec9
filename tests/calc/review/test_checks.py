"""The engineering checks against published formulas, worked values and independent reference solves."""

import copy
import json
import math

import CoolProp.CoolProp as CP
import fluids.friction
import pytest
from linetools import gravity_line
from scipy.optimize import brentq, minimize_scalar

from calc.analysis import analyse
from calc.model.settings import CheckSettings
from calc.model.sheet import parse
from calc.review import checks
from calc.review.findings import SEVERITIES
from calc.review.machines import npsh_available, npsh_available_suction, npsh_margin_needed
from calc.review.pressure import stretches_below
from calc.review.surge import joukowsky_head, korteweg_wave_speed, pipeline_period, restraint_factor
from calc.steady.series import solve
from calc.water import G

P_ATM = 101325.0


def line_of(doc):
    parsed = parse(doc)
    assert parsed.ok, parsed.errors
    return parsed.line


def review(doc):
    line = line_of(doc)
    sol = solve(line)
    return line, sol, checks.review(line, sol, line.settings["checks"])


def codes(findings, code):
    return [f for f in findings if f.code == code]


# ----------------------------------------------------------------------------- formulas

def test_korteweg_steel_worked_value():
    # Korteweg wave speed as in Wylie and Streeter, Fluid Transients in Systems (1993):
    # steel D 500 mm, e 8 mm, E 207 GPa, water K 2.19 GPa, c1 = 1 gives about 1150 m/s
    # (references.md, computed; the standard texts quote about 1100-1200 m/s for such steel mains).
    a = korteweg_wave_speed(2.19e9, 998.2, 0.5, 0.008, 207e9, 1.0)
    assert a == pytest.approx(1150.0, rel=0.005)


def test_korteweg_pvc_worked_value():
    # PVC-U SDR 26, E about 3 GPa (modulus from memory): about 340 m/s (references.md, computed).
    # D/e = 24 for the bore of an SDR 26 pipe (SDR - 2).
    a = korteweg_wave_speed(2.19e9, 998.2, 0.24, 0.01, 3e9, 1.0)
    assert a == pytest.approx(340.0, rel=0.02)


def test_korteweg_rigid_pipe_is_speed_of_sound_from_coolprop():
    # In a rigid pipe (E -> infinity) the wave speed is the speed of sound sqrt(K/rho);
    # CoolProp's IAPWS-95 water at 20 degC, 1 atm: w = 1482.3 m/s (references.md).
    rho = CP.PropsSI("D", "T", 293.15, "P", P_ATM, "Water")
    w = CP.PropsSI("A", "T", 293.15, "P", P_ATM, "Water")
    K = rho * w * w
    assert korteweg_wave_speed(K, rho, 0.3, 0.01, 1e30, 1.0) == pytest.approx(w, rel=1e-12)
    assert w == pytest.approx(1482.3, abs=0.1)


def test_restraint_factors_of_wylie_and_streeter():
    # Wylie and Streeter (1993), thin-walled pipe: c1 = 1 (expansion joints), 1 - nu^2 (anchored
    # throughout), 1 - nu/2 (anchored upstream only).
    nu = 0.46
    assert restraint_factor("expansion_joints", nu) == 1.0
    assert restraint_factor("anchored", nu) == pytest.approx(1 - nu**2, rel=1e-15)
    assert restraint_factor("anchored_upstream", nu) == pytest.approx(1 - nu / 2, rel=1e-15)


def test_joukowsky_worked_value():
    # Joukowsky dH = a dV / g: a = 1000 m/s, dV = 1 m/s gives 102 m (references.md, computed).
    assert joukowsky_head(1000.0, 1.0) == pytest.approx(102.0, abs=0.05)
    assert joukowsky_head(1000.0, 1.0) == pytest.approx(1000.0 / 9.80665, rel=1e-15)


def test_pipeline_period_is_twice_the_travel_time():
    # Pipeline period 2L/a (standard texts): 1000 m at 1000 m/s plus 500 m at 1250 m/s -> 2 (1 + 0.4) s.
    assert pipeline_period([(1000.0, 1000.0), (500.0, 1250.0)]) == pytest.approx(2.8, rel=1e-15)


def test_npsh_worked_value_with_coolprop_vapour_pressure():
    # references.md [computed]: open sump at sea level, 20 degC, 3 m suction lift, 0.5 m suction
    # loss gives NPSH available 6.61 m. Vapour pressure and density from CoolProp (IAPWS-95).
    p_vap = CP.PropsSI("P", "T", 293.15, "Q", 0, "Water")
    rho = CP.PropsSI("D", "T", 293.15, "P", P_ATM, "Water")
    assert p_vap == pytest.approx(2339.3, abs=0.1)  # IAPWS, references.md table
    assert npsh_available_suction(P_ATM, p_vap, rho, -3.0, 0.5) == pytest.approx(6.61, abs=0.005)
    # The same through the inlet pressure: p_inlet = p_atm - rho g (3 + 0.5) - rho V^2/2 with V = 2 m/s.
    V = 2.0
    p_in = P_ATM - rho * G * 3.5 - rho * V * V / 2
    assert npsh_available(p_in, V, p_vap, rho) == pytest.approx(6.61, abs=0.005)


def test_npsh_margin_rule_of_ansi_hi_9_6_1():
    # ANSI/HI 9.6.1 as summarised in secondary sources: NPSHA >= max(1.1 NPSHR, NPSHR + 0.6 m).
    assert npsh_margin_needed(3.0, 1.1, 0.6) == pytest.approx(3.6)   # +0.6 m governs below 6 m
    assert npsh_margin_needed(6.0, 1.1, 0.6) == pytest.approx(6.6)   # both equal at 6 m
    assert npsh_margin_needed(10.0, 1.1, 0.6) == pytest.approx(11.0)  # the ratio governs above


# ----------------------------------------------------------------------------- pressure along the line

def hump_doc(z_hump, chainage="400 m", temperature="20 degC"):
    """1000 m of 150 mm steel from a tank at 100 m (pipe leaves at 95 m) to a tank at 82 m, over a hump."""
    doc = gravity_line()
    doc["liquid"]["temperature"] = temperature
    doc["start"].update({"elevation": "100 m", "outlet_elevation": "95 m"})
    doc["end"].update({"elevation": "82 m"})
    doc["elements"][0].update({
        "length": "1000 m", "diameter": "150 mm", "roughness": "0.045 mm", "material": "",
        "end_elevation": "80 m", "profile": [{"chainage": chainage, "elevation": z_hump}],
        "fittings": [{"type": "k", "K": "0.5", "count": 1}, {"type": "k", "K": "1.0", "count": 1}]})
    return doc


def reference_hump(z_hump, x_hump=400.0, T=293.15):
    """Independent: flow by fluids' Colebrook and brentq, then the HGL at the hump (tests only).

    Both typed K values are taken as 'spread' along the run (they are plain K items), as the sheet places
    them; the sheet also counts a sharp entrance (K = 0.5, Idelchik 2007) at the run's start and the exit
    (K = 1) at its end by default, since the typed items are not named as entrance or exit.
    """
    rho = CP.PropsSI("D", "T", T, "P", P_ATM, "Water")
    mu = CP.PropsSI("V", "T", T, "P", P_ATM, "Water")
    D, L, eps, K = 0.15, 1000.0, 4.5e-5, 1.5
    A = math.pi * D * D / 4

    def parts(Q):
        V = Q / A
        f = fluids.friction.Colebrook(rho * V * D / mu, eps / D)
        return V, f

    def E(Q):
        V, f = parts(Q)
        return 18.0 - (f * L / D + K + 0.5 + 1.0) * V * V / (2 * G)

    Q = brentq(E, 1e-5, 1.0, xtol=1e-15)
    V, f = parts(Q)
    hv = V * V / (2 * G)
    hgl = lambda x: 100.0 - hv - 0.5 * hv - (f * L / D + K) * hv * x / L  # noqa: E731
    return Q, hgl, rho


def test_hump_above_grade_line_raises_sub_atmospheric_finding_at_its_chainage():
    line, sol, findings = review(hump_doc("97 m"))
    Q_ref, hgl, rho = reference_hump(97.0)
    assert sol.design["Q"] == pytest.approx(Q_ref, rel=1e-6)
    sub = codes(findings, "pressure-subatmospheric")
    assert len(sub) == 1 and sub[0].severity == "warning"
    assert sub[0].chainage == 400.0
    # Pressure at the hump from the independent grade line, IAPWS vs CoolProp density within 1e-5.
    assert sub[0].value == pytest.approx(rho * G * (hgl(400.0) - 97.0), rel=1e-4)
    assert not codes(findings, "pressure-vapour")
    # The stretch starts where the straight grade line crosses the straight pipe between 0 and 400 m
    # and ends between 400 m and 1000 m (pipe from 97 m down to 80 m).
    st = stretches_below(sol.design["profile"], 0.0)
    assert len(st) == 1
    x0 = brentq(lambda x: hgl(x) - (95.0 + 2.0 * x / 400.0), 0.0, 400.0)
    x1 = brentq(lambda x: hgl(x) - (97.0 - 17.0 * (x - 400.0) / 600.0), 400.0, 1000.0)
    assert st[0]["from"] == pytest.approx(x0, abs=0.01)
    assert st[0]["to"] == pytest.approx(x1, abs=0.01)
    low = codes(findings, "pressure-lowest")[0]
    assert low.severity == "info" and low.chainage == 400.0 and low.value == pytest.approx(sub[0].value)


def test_line_below_grade_line_has_no_pressure_finding_but_reports_lowest():
    _, _, findings = review(hump_doc("90 m"))
    assert not codes(findings, "pressure-subatmospheric") and not codes(findings, "pressure-vapour")
    low = codes(findings, "pressure-lowest")[0]
    assert low.value > 0


def test_siphon_high_enough_raises_column_separation():
    # Column separation where the absolute pressure reaches the vapour pressure (IAPWS, here
    # CoolProp's IAPWS-95 at 20 degC): the hump at 104 m puts about 12 m of suction on the water.
    _, hgl, rho = reference_hump(104.0)
    p_vap = CP.PropsSI("P", "T", 293.15, "Q", 0, "Water")
    assert P_ATM + rho * G * (hgl(400.0) - 104.0) < p_vap  # independent: below vapour pressure
    line, sol, findings = review(hump_doc("104 m"))
    err = codes(findings, "pressure-vapour")
    assert len(err) == 1 and err[0].severity == "error" and err[0].chainage == 400.0
    assert err[0].limit == pytest.approx(p_vap - P_ATM, rel=1e-3)
    assert findings[0].severity == "error"  # worst first


def test_siphon_just_short_of_vapour_pressure_is_only_a_warning():
    _, hgl, rho = reference_hump(100.0)
    p_vap = CP.PropsSI("P", "T", 293.15, "Q", 0, "Water")
    assert P_ATM + rho * G * (hgl(400.0) - 100.0) > p_vap + 5e3
    _, _, findings = review(hump_doc("100 m"))
    assert codes(findings, "pressure-subatmospheric") and not codes(findings, "pressure-vapour")


def test_warm_water_separates_sooner():
    # Vapour pressure rises steeply with temperature (IAPWS: 19.9 kPa at 60 degC, references.md):
    # a hump that holds at 20 degC separates at 60 degC.
    _, _, cold = review(hump_doc("101.5 m"))
    _, _, warm = review(hump_doc("101.5 m", temperature="60 degC"))
    assert not codes(cold, "pressure-vapour")
    assert codes(warm, "pressure-vapour")


# ----------------------------------------------------------------------------- pumps

def pump_line_doc(npshr="2 m", eff=("0.6", "0.75", "0.6"), z_pump="103 m", checks_=None):
    """Sump at 100 m, 3 m lift to the pump through 6 m of suction, 300 m rising main to a tank at 130 m."""
    doc = gravity_line()
    doc["liquid"]["temperature"] = "20 degC"
    doc["start"].update({"elevation": "100 m", "outlet_elevation": "98 m"})
    doc["end"].update({"elevation": "130 m"})
    doc["elements"] = [
        {"kind": "pipe", "label": "Suction", "length": "6 m", "diameter": "150 mm", "material": "steel-commercial",
         "roughness": "", "end_elevation": z_pump, "fittings": [{"type": "entrance-sharp", "count": 1},
                                                                {"type": "k", "K": "0.3", "count": 2}]},
        {"kind": "pump", "label": "P1", "mode": "curve", "curve": [
            {"flow": "0 L/s", "head": "50 m", "efficiency": "", "npsh_required": npshr},
            {"flow": "20 L/s", "head": "46 m", "efficiency": eff[0], "npsh_required": npshr},
            {"flow": "40 L/s", "head": "38 m", "efficiency": eff[1], "npsh_required": npshr},
            {"flow": "60 L/s", "head": "24 m", "efficiency": eff[2], "npsh_required": npshr}]},
        {"kind": "pipe", "label": "Rising main", "length": "300 m", "diameter": "150 mm",
         "material": "steel-commercial", "roughness": "", "end_elevation": "128 m",
         "fittings": [{"type": "exit", "count": 1}]},
    ]
    if checks_:
        doc["settings"]["checks"] = checks_
    return doc


def test_npsh_available_from_the_grade_line_matches_the_suction_side_formula():
    # NPSHa = (p_atm - p_vap)/(rho g) + (z_surface - z_pump) - suction losses (ANSI/HI 9.6.1 definition),
    # with the suction losses at the operating flow taken from the solved suction run.
    line, sol, findings = review(pump_line_doc())
    suction = sol.design["elements"][0]
    h_loss = suction["h_friction"] + suction["h_fittings"]
    liquid = line.liquid
    expected = npsh_available_suction(P_ATM, liquid.p_vap, liquid.rho, 100.0 - 103.0, h_loss)
    f = codes(findings, "pump-npsh")[0]
    assert f.value == pytest.approx(expected, rel=1e-9)
    # and against CoolProp's vapour pressure and density, independently of the program's water
    p_vap = CP.PropsSI("P", "T", 293.15, "Q", 0, "Water")
    rho = CP.PropsSI("D", "T", 293.15, "P", P_ATM, "Water")
    assert f.value == pytest.approx((P_ATM - p_vap) / (rho * G) - 3.0 - h_loss, abs=0.002)


@pytest.mark.parametrize("npshr,severity", [("2 m", "info"), ("6.3 m", "warning"), ("7.5 m", "error")])
def test_npsh_margin_severity(npshr, severity):
    # NPSHa here is about 6.7 m: 2 m of NPSHR needs 2.6 m (info), 6.3 m needs 6.93 m (warning), and
    # 7.5 m is more than is available (error); the expected severity is worked out from the value.
    line, sol, findings = review(pump_line_doc(npshr=npshr))
    f = codes(findings, "pump-npsh")[0]
    r = float(npshr.split()[0])
    need = max(1.1 * r, r + 0.6)  # ANSI/HI 9.6.1, secondary summary
    expected = "error" if f.value < r else "warning" if f.value < need else "info"
    assert expected == severity
    assert f.severity == severity


def test_npsh_margin_set_on_the_sheet():
    # With a 2 m margin asked for, an NPSHR of 5 m needs 7 m, more than the ~6.7 m available.
    _, _, default = review(pump_line_doc(npshr="5 m"))
    _, _, strict = review(pump_line_doc(npshr="5 m", checks_={"npsh_margin_min": "2 m"}))
    assert codes(default, "pump-npsh")[0].severity == "info"
    f = codes(strict, "pump-npsh")[0]
    assert f.severity == "warning" and f.limit == pytest.approx(7.0) and f.source == "set on the sheet"


def test_operating_point_against_best_efficiency_flow():
    # Efficiency 0.6, 0.75, 0.6 at 20, 40, 60 L/s: the curve through the points peaks at the typed 40 L/s.
    line, sol, findings = review(pump_line_doc())
    Q = sol.design["Q"]
    f = codes(findings, "pump-bep")[0]
    r = Q / 0.040
    expected = "warning" if not 0.7 <= r <= 1.2 else "info"  # ANSI/HI 9.6.3 (from memory): 70-120 %
    assert f.severity == expected
    assert f.limit == pytest.approx(0.040, rel=1e-12) or f.limit == pytest.approx(0.040 * (0.7 if r < 0.7 else 1.2))
    # A tighter preferred range set on the sheet moves the verdict by the ratio alone.
    _, _, tight = review(pump_line_doc(checks_={"bep_low": "99 %", "bep_high": "101 %"}))
    g = codes(tight, "pump-bep")[0]
    assert g.severity == ("info" if 0.99 <= r <= 1.01 else "warning")


@pytest.mark.parametrize("eff,words", [(("0.795", "0.755", "0.555"), "below the data"),
                                       (("0.5", "0.6", "0.7"), "still rising at the last typed point")])
def test_best_efficiency_flow_is_only_taken_inside_the_typed_data(eff, words):
    # A peak at the first or last typed point says the best point lies outside the data; no peak is
    # made up by a fitted curve beyond the points.
    _, _, findings = review(pump_line_doc(eff=eff))
    assert not codes(findings, "pump-bep")
    f = codes(findings, "pump-bep-unknown")[0]
    assert words in f.message


def test_pump_duty_power_is_rho_g_q_h_over_eta():
    # Shaft power P = rho g Q H / eta (any pump text).
    line, sol, findings = review(pump_line_doc())
    d = sol.design["elements"][1]
    f = codes(findings, "pump-duty")[0]
    assert f.value == pytest.approx(line.liquid.rho * G * sol.design["Q"] * d["head"] / d["efficiency"], rel=1e-12)


def test_suction_velocity_limit_is_the_lower_one():
    # Common practice: about 1.5 m/s in pump suction, 3 m/s elsewhere: at about 2.2 m/s in both runs
    # only the suction run is flagged; a 2.5 m/s suction limit set on the sheet clears it.
    _, sol, findings = review(pump_line_doc())
    V = sol.design["elements"][0]["V"]
    assert 1.5 < V < 3.0 and sol.design["elements"][2]["V"] == pytest.approx(V)
    hi = codes(findings, "velocity-high")
    assert [f.element for f in hi] == [0] and hi[0].limit == 1.5
    _, _, relaxed = review(pump_line_doc(checks_={"velocity_max_suction": "2.5 m/s"}))
    assert not codes(relaxed, "velocity-high")


# ----------------------------------------------------------------------------- turbines

def turbine_doc(head="92 m", eta="0.85"):
    """Reservoir 200 m to tailwater 100 m (100 m gross) through 1500 m of 400 mm steel and a fixed-head turbine."""
    doc = gravity_line()
    doc["start"].update({"elevation": "200 m", "outlet_elevation": "198 m"})
    doc["end"].update({"elevation": "100 m"})
    doc["elements"][0].update({"length": "1500 m", "diameter": "400 mm", "roughness": "0.045 mm", "material": "",
                               "end_elevation": "98 m", "fittings": [{"type": "entrance-sharp", "count": 1}]})
    doc["elements"].append({"kind": "turbine", "label": "T1", "mode": "head", "head": head, "efficiency": eta})
    return doc


@pytest.mark.parametrize("head,severity", [("92 m", "info"), ("88 m", "caution"), ("80 m", "warning")])
def test_fraction_of_gross_head_lost(head, severity):
    # With a fixed turbine head the line loses exactly gross - net (energy balance); practice holds
    # penstock losses to 5-10 % (caution above 10 %), Leon and Zhu (2014) at most about 15 %.
    _, _, findings = review(turbine_doc(head))
    f = codes(findings, "turbine-head-loss")[0]
    assert f.severity == severity
    assert f"{100 - float(head.split()[0]):.1f} %" in f.message


def test_turbine_power_and_maximum_power_point_against_independent_search():
    # P = eta rho g Q H (references.md: Q 0.1 m3/s, H 50 m, eta 0.85 gives 41.6 kW); the most power is
    # searched independently with fluids' Colebrook over the available head.
    assert 0.85 * 998.2 * G * 0.1 * 50 == pytest.approx(41.6e3, rel=1e-3)
    line, sol, findings = review(turbine_doc())
    d = sol.design["elements"][1]
    duty = codes(findings, "turbine-duty")[0]
    assert duty.value == pytest.approx(0.85 * line.liquid.rho * G * sol.design["Q"] * 92.0, rel=1e-12)
    rho, mu = line.liquid.rho, line.liquid.mu
    D, L, eps = 0.4, 1500.0, 4.5e-5
    A = math.pi * D * D / 4

    def power(Q):
        V = Q / A
        f = fluids.friction.Colebrook(rho * V * D / mu, eps / D)
        # head left for the turbine: gross less friction and the entrance loss (K 0.5)
        return 0.85 * rho * G * Q * (100.0 - (f * L / D + 0.5) * V * V / (2 * G))

    res = minimize_scalar(lambda q: -power(q), bounds=(0.05, 2.0), method="bounded", options={"xatol": 1e-10})
    mp = codes(findings, "turbine-max-power")[0]
    assert mp.value == pytest.approx(-res.fun, rel=1e-6)
    assert d["power_shaft"] < mp.value


def test_every_turbine_line_carries_the_runaway_caution_and_electrical_safety():
    _, _, findings = review(turbine_doc())
    assert codes(findings, "turbine-runaway")[0].severity == "caution"
    assert codes(findings, "general-electrical")


# ----------------------------------------------------------------------------- surge

def steel_main_doc(rating="", wall="8 mm", restraint="expansion_joints", material="steel-commercial"):
    doc = gravity_line()
    doc["start"].update({"elevation": "150 m"})
    doc["end"].update({"elevation": "100 m"})
    doc["elements"][0].update({"length": "2000 m", "diameter": "500 mm", "roughness": "0.045 mm",
                               "material": material, "wall_thickness": wall, "rating": rating,
                               "restraint": restraint, "end_elevation": "60 m"})
    return doc


def test_surge_screen_uses_korteweg_and_joukowsky():
    # Korteweg (Wylie and Streeter 1993) with c1 = 1 and the line's liquid bulk modulus, steel
    # E 207 GPa from the material table; Joukowsky dH = a V / g for a sudden stop.
    line, sol, findings = review(steel_main_doc())
    liquid = line.liquid
    a = math.sqrt(liquid.bulk_modulus / liquid.rho) / math.sqrt(1 + liquid.bulk_modulus * 0.5 / (207e9 * 0.008))
    assert a == pytest.approx(1150.0, rel=0.01)  # the worked value of references.md
    V = sol.design["elements"][0]["V"]
    f = codes(findings, "surge-screen")[0]
    assert f.value == pytest.approx(liquid.rho * G * a * V / G, rel=1e-9)
    period = codes(findings, "surge-period")[0]
    assert period.value == pytest.approx(2 * 2000.0 / a, rel=1e-9)
    assert "not a transient analysis" in f.message


@pytest.mark.parametrize("factor,severity", [(0.8, "error"), (1.05, "warning"), (1.3, "info")])
def test_surge_against_rating(factor, severity):
    line, sol, findings = review(steel_main_doc())
    peak = codes(findings, "surge-no-rating")[0].value
    steady = max(s["pressure_head"] for s in sol.design["profile"] if s["element"] == 0) * line.liquid.rho * G
    rating = factor * peak
    assert rating > steady
    _, _, rated = review(steel_main_doc(rating=f"{rating / 1e3} kPa"))
    f = codes(rated, "surge-rating")[0]
    assert f.severity == severity and f.value == pytest.approx(peak, rel=1e-9)


def test_missing_wall_thickness_skips_wave_speed_and_uses_en805_allowance():
    # A fixed 200 kPa allowance where surge is not calculated (common practice; EN 805 sets one, from memory).
    line, sol, findings = review(steel_main_doc(wall="", rating="10 bar"))
    miss = codes(findings, "surge-wave-speed-missing")
    assert len(miss) == 1 and "wall thickness" in miss[0].message
    assert not codes(findings, "surge-screen") and not codes(findings, "surge-period")
    steady = max(s["pressure_head"] for s in sol.design["profile"] if s["element"] == 0) * line.liquid.rho * G
    f = codes(findings, "surge-rating")[0]
    assert f.value == pytest.approx(steady + 200e3, rel=1e-12)
    assert f.source.startswith("common practice") and "200 kPa" in f.source


def test_steady_pressure_above_rating_is_an_error():
    _, _, findings = review(steel_main_doc(rating="3 bar"))
    assert codes(findings, "rating-steady")[0].severity == "error"


# ----------------------------------------------------------------------------- velocity and regime

def test_velocity_limits_set_on_the_sheet():
    doc = hump_doc("90 m")
    _, sol, default = review(doc)
    V = sol.design["elements"][0]["V"]
    assert 1.0 < V < 3.0
    assert not codes(default, "velocity-high")
    doc["settings"]["checks"] = {"velocity_max": "1 m/s"}
    _, _, tight = review(doc)
    f = codes(tight, "velocity-high")[0]
    assert f.value == pytest.approx(V) and f.limit == 1.0 and f.source == "set on the sheet"


def oil_doc(z_start):
    doc = gravity_line()
    doc["liquid"] = {"kind": "custom", "name": "oil", "density": "900 kg/m^3", "viscosity": "0.05 Pa*s",
                     "vapour_pressure": "1 kPa"}
    doc["start"].update({"elevation": z_start})
    doc["end"].update({"elevation": "10 m"})
    doc["elements"][0].update({"length": "50 m", "diameter": "50 mm", "roughness": "0.045 mm", "material": "",
                               "end_elevation": "10 m", "fittings": []})
    return doc


def test_laminar_and_transitional_flow_are_flagged():
    # Regime limits 2000 and 4000 (common practice; Moody's critical zone); laminar f = 64/Re.
    _, sol, lam = review(oil_doc("10.5 m"))
    d = sol.design["elements"][0]
    assert d["Re"] < 2000
    f = codes(lam, "regime-laminar")[0]
    assert f.severity == "caution" and d["f"] == pytest.approx(64 / d["Re"], rel=1e-12)
    _, sol, tr = review(oil_doc("25 m"))
    d = sol.design["elements"][0]
    assert 2000 < d["Re"] < 4000
    g = codes(tr, "regime-transitional")[0]
    assert g.severity == "warning" and f"{min(d['f_bounds']):.4g}" in g.message


# ----------------------------------------------------------------------------- cautions, settings, JSON

GENERAL = {"general-surge", "general-ratings", "general-anchorage", "general-air-valves",
           "general-confined-space", "general-codes"}


def test_general_cautions_always_present():
    _, _, findings = review(gravity_line())
    got = {f.code for f in findings if f.code.startswith("general-")}
    assert got == GENERAL  # no machine: no electrical caution
    assert all(f.severity == "caution" for f in findings if f.code.startswith("general-"))


def test_general_cautions_present_without_an_operating_point():
    doc = gravity_line()
    doc["end"]["elevation"] = "120 m"  # uphill with no pump: no flow
    a = analyse(doc)
    assert a.solution.design is None and a.band is None
    assert GENERAL <= {f.code for f in a.findings}


def test_findings_sorted_worst_first_and_json_safe():
    for doc in (hump_doc("104 m"), pump_line_doc(), turbine_doc(), steel_main_doc(rating="10 bar")):
        a = analyse(doc)
        order = [SEVERITIES.index(f.severity) for f in a.findings]
        assert order == sorted(order)
        text = json.dumps(a.to_dict(), allow_nan=False)
        back = json.loads(text)
        assert {"severity", "code", "title", "message", "value", "limit", "quantity", "source", "element",
                "chainage", "case", "cases"} == set(back["findings"][0])
        assert back["band"]["Q_low"] <= back["solution"]["points"][back["solution"]["design_index"]]["Q"]


def test_check_settings_errors_name_their_field():
    doc = gravity_line()
    doc["settings"]["checks"] = {"velocity_max": "3", "bep_low": "150 %", "k_uncertainty": "-5 %",
                                 "npsh_margin_ratio": "0.9", "roughness_high": "blue", "surge_allowance": "2 m"}
    errors = parse(doc).errors_by_path()
    assert set(errors) == {f"settings.checks.{k}" for k in doc["settings"]["checks"]}


def test_check_settings_defaults_and_units():
    line = line_of(gravity_line())
    s = line.settings["checks"]
    assert s == CheckSettings() and s.given == ()
    doc = gravity_line()
    doc["settings"]["checks"] = {"velocity_max": "10 ft/s", "k_uncertainty": "30 %", "roughness_low": "50 %",
                                 "roughness_high": "0.5 mm", "surge_allowance": "3 bar", "bep_low": 0.6}
    s = line_of(doc).settings["checks"]
    assert s.velocity_max == pytest.approx(3.048, rel=1e-12)
    assert s.k_uncertainty == pytest.approx(0.3)
    assert s.roughness_low == ("factor", 0.5)
    assert s.roughness_high[0] == "length" and s.roughness_high[1] == pytest.approx(5e-4)
    assert s.surge_allowance == pytest.approx(3e5) and s.bep_low == 0.6
    assert s.source("velocity_max") == "set on the sheet"
    assert "ANSI/HI 9.6.1" in s.source("npsh_margin_ratio")


def test_every_check_setting_is_documented_and_in_the_schema():
    from pathlib import Path

    from calc.model.schema import SCHEMA
    text = (Path(__file__).resolve().parents[3] / "docs" / "sheet-format.md").read_text()
    props = SCHEMA["properties"]["settings"]["properties"]["checks"]["properties"]
    names = [n for n in CheckSettings().to_dict()]
    assert set(names) == set(props)
    for n in names:
        assert f"`{n}`" in text, n


def test_checks_do_not_change_the_solution():
    # The checks read the solution; they must not alter it (the record fingerprints it).
    doc = pump_line_doc()
    line = line_of(copy.deepcopy(doc))
    sol = solve(line)
    before = json.dumps(sol.to_dict(), sort_keys=True)
    checks.review(line, sol)
    assert json.dumps(sol.to_dict(), sort_keys=True) == before
