"""Surge screening: thick-wall wave speed, the wave from where the flow stops, transmission, short legs, down-surge.

Sources: Korteweg wave speed with Wylie and Streeter's restraint factors for thin and thick walls
(Fluid Transients in Systems, 1993; the thick-wall c1 from memory); Joukowsky dH = a dV / g; at a
junction of runs a wave F passing from run 1 into run 2 carries on as 2 Z2 / (Z1 + Z2) F with
Z = a / (g A) (standard result); Michaud's estimate for a stop slower than the round trip.
"""

from __future__ import annotations

import math

import pytest
from linetools import gravity_line

from calc import tables
from calc.analysis import analyse
from calc.review.surge import PUMP_RUNDOWN_MIN, korteweg_wave_speed, restraint_factor

G = 9.80665
K_WATER = 2.19e9  # references.md: bulk modulus of water at 20 degC, about 2.19 GPa
RHO = 998.2


def test_thick_wall_factor_tends_to_the_thin_one():
    for restraint in ("anchored", "anchored_upstream", "expansion_joints"):
        assert restraint_factor(restraint, 0.3, 1e-9) == pytest.approx(restraint_factor(restraint, 0.3), rel=1e-8)


def test_pe_sdr11_thin_form_overstates_the_wave_speed_by_about_twelve_percent():
    # PE100 SDR 11, OD 315 mm: e = 28.6 mm, D = 257.8 mm (D/e 9); E and nu from the material table.
    pe = tables.material("pe100")
    e, D = 0.0286, 0.315 - 2 * 0.0286
    thin = korteweg_wave_speed(K_WATER, RHO, D, e, pe.E, restraint_factor("anchored", pe.nu_poisson))
    c1 = 2 * (e / D) * (1 + pe.nu_poisson) + D * (1 - pe.nu_poisson ** 2) / (D + e)  # Wylie and Streeter
    thick = math.sqrt(K_WATER / RHO) / math.sqrt(1 + c1 * K_WATER * D / (pe.E * e))
    assert restraint_factor("anchored", pe.nu_poisson, e / D) == pytest.approx(c1, rel=1e-14)
    assert 0.10 < thin / thick - 1 < 0.15


def line_doc(runs, end="80 m", fittings_last=None, valve=True, checks_=None):
    """Runs (length, bore, material, wall) from a tank at 150 m to a valve and a tank; all anchored."""
    doc = gravity_line()
    doc["start"].update({"elevation": "150 m", "outlet_elevation": "148 m"})
    doc["end"].update({"elevation": end})
    elements = []
    for k, (L, D, mat, wall, z) in enumerate(runs):
        elements.append({"kind": "pipe", "label": f"R{k + 1}", "length": L, "diameter": D, "material": mat,
                         "roughness": "", "wall_thickness": wall, "end_elevation": z, "fittings": [],
                         "rating": "100 bar", "restraint": "anchored"})
    if valve:
        elements.append({"kind": "valve", "label": "V", "K": "0.2"})
    doc["elements"] = elements
    if checks_:
        doc["settings"]["checks"] = checks_
    return doc


def screens(a):
    return {f.element: f for f in a.findings if f.code == "surge-screen"}


def Z_of(a, i):
    run = a.line.elements[i]
    w = korteweg_wave_speed(a.line.liquid.bulk_modulus, a.line.liquid.rho, run.D, run.wall, run.material.E,
                            restraint_factor("anchored", run.material.nu_poisson,
                                             run.wall / run.D if run.D / run.wall < 25 else None))
    return w, w / (G * run.A)


def test_the_wave_from_a_valve_is_transmitted_into_the_run_upstream():
    # PE upstream, steel next to the valve: the steel run takes the full Joukowsky rise, the PE run the
    # transmitted wave 2 Z_pe / (Z_pe + Z_st) of it, not the a V / g of its own velocity.
    a = analyse(line_doc([("1500 m", "290 mm", "pe100", "32 mm", "120 m"),
                          ("800 m", "300 mm", "steel-commercial", "9.5 mm", "78 m")]))
    Q = a.solution.design["Q"]
    _, Z_pe = Z_of(a, 0)
    _, Z_st = Z_of(a, 1)
    F_st = Z_st * Q
    F_pe = 2 * Z_pe / (Z_pe + Z_st) * F_st
    rg = a.line.liquid.rho * G
    s = screens(a)
    assert s[1].value == pytest.approx(rg * F_st, rel=1e-9)
    assert s[0].value == pytest.approx(rg * F_pe, rel=1e-9)
    own_pe = Z_pe * Q  # a V / g on the PE run's own velocity
    assert s[0].value > rg * own_pe * 1.05


def test_a_slow_closure_gives_michauds_fraction():
    doc = line_doc([("2000 m", "300 mm", "steel-commercial", "9.5 mm", "78 m")], checks_={"surge_closure_time": "20 s"})
    a = analyse(doc)
    a_st, Z = Z_of(a, 0)
    t_r = 2 * 2000.0 / a_st
    F = Z * a.solution.design["Q"] * t_r / 20.0
    assert screens(a)[0].value == pytest.approx(a.line.liquid.rho * G * F, rel=1e-9)


def pump_doc(suction="9 m", rating="2 bar"):
    doc = gravity_line()
    doc["start"].update({"elevation": "50 m", "outlet_elevation": "48 m"})
    doc["end"].update({"elevation": "90 m"})
    doc["elements"] = [
        {"kind": "pipe", "label": "Suction", "length": suction, "diameter": "200 mm", "material": "steel-commercial",
         "roughness": "", "wall_thickness": "8 mm", "end_elevation": "49 m", "fittings": [], "rating": rating},
        {"kind": "pump", "label": "P", "mode": "curve", "curve": [
            {"flow": "0 L/s", "head": "60 m"}, {"flow": "30 L/s", "head": "55 m"}, {"flow": "60 L/s", "head": "40 m"}]},
        {"kind": "pipe", "label": "Main", "length": "1500 m", "diameter": "200 mm", "material": "steel-commercial",
         "roughness": "", "wall_thickness": "8 mm", "end_elevation": "88 m", "fittings": [], "rating": "25 bar"},
    ]
    return doc


def test_a_short_suction_leg_does_not_see_the_full_rise():
    # 9 m from the sump: the reflection is back in 2 L / a of about 0.014 s, far quicker than a pump can
    # stop (at least 0.5 s taken), so only that fraction of Joukowsky's rise reaches the suction.
    a = analyse(pump_doc())
    a_s, Z = Z_of(a, 0)
    full = Z * a.solution.design["Q"]
    t_r = 2 * 9.0 / a_s
    rg = a.line.liquid.rho * G
    assert screens(a)[0].value == pytest.approx(rg * full * t_r / PUMP_RUNDOWN_MIN, rel=1e-9)
    assert not [f for f in a.findings if f.code == "surge-rating" and f.element == 0 and f.severity == "error"]
    # A long suction carries the full wave.
    b = analyse(pump_doc(suction="2000 m", rating="100 bar"))
    a_s, Z = Z_of(b, 0)
    assert screens(b)[0].value == pytest.approx(b.line.liquid.rho * G * Z * b.solution.design["Q"], rel=1e-9)


def test_down_surge_to_vapour_pressure_at_a_high_point_is_said():
    # The main rises to a knoll at 86 m just past the pump: steady head there is modest, and the drop
    # after a trip takes it to vapour pressure.
    doc = pump_doc()
    doc["elements"][2]["profile"] = [{"chainage": "200 m", "elevation": "86 m"}]
    a = analyse(doc)
    f = [x for x in a.findings if x.code == "surge-column-separation"]
    assert f and f[0].element == 2 and f[0].chainage == pytest.approx(9.0 + 200.0)
