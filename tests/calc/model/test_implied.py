"""Losses the physics always has (entrance, exit, change of bore) and a free outlet, against independent solves.

References: the flows are solved here with fluids' Colebrook and scipy's brentq (tests only); loss
coefficients are the published ones: sharp entrance 0.5 (Idelchik, Handbook of Hydraulic Resistance,
4th ed. 2007), exit 1.0 (the whole velocity head), Borda–Carnot (1 - beta^2)^2 and Crane TP-410M's
0.5 (1 - beta^2) for sudden changes, both on the small pipe (fluids.fittings diffuser_sharp and
contraction_sharp).
"""

from __future__ import annotations

import copy
import math

import CoolProp.CoolProp as CP
import fluids.friction
import pytest
from linetools import gravity_line
from scipy.optimize import brentq

from calc.analysis import analyse
from calc.model.sheet import parse
from calc.record import build
from calc.steady.inverse import smallest_size
from calc.steady.series import solve

G = 9.80665
T = 288.15


def test_water_properties_agree_with_iapws95():
    # The solves below take the line's own water (IF97); IAPWS-95 (CoolProp) agrees to about 1e-6.
    liquid = parse(one_run()).line.liquid
    assert liquid.rho == pytest.approx(CP.PropsSI("D", "T", T, "P", 101325.0, "Water"), rel=1e-5)
    assert liquid.mu == pytest.approx(CP.PropsSI("V", "T", T, "P", 101325.0, "Water"), rel=1e-5)


def independent_flow(dH, runs, K_local, liquid=None):
    """Q with dH = sum over runs of (f L/D) V^2/2g + sum of K V^2/2g on each K's own bore.

    ``runs``: (L, D, eps); ``K_local``: (K, D) pairs.
    """
    liquid = liquid or parse(one_run()).line.liquid
    rho, mu = liquid.rho, liquid.mu

    def E(Q):
        h = 0.0
        for L, D, eps in runs:
            V = Q / (math.pi * D * D / 4)
            h += fluids.friction.Colebrook(rho * V * D / mu, eps / D) * L / D * V * V / (2 * G)
        for K, D in K_local:
            V = Q / (math.pi * D * D / 4)
            h += K * V * V / (2 * G)
        return dH - h

    return brentq(E, 1e-7, 5.0, xtol=1e-16, rtol=1e-15)


def one_run(end_elevation="78 m", fittings=None, end_surface="80 m"):
    doc = gravity_line()
    doc["start"].update({"elevation": "100 m", "outlet_elevation": "97 m"})
    doc["end"].update({"elevation": end_surface})
    doc["elements"][0].update({"length": "500 m", "diameter": "150 mm", "material": "", "roughness": "0.045 mm",
                               "end_elevation": end_elevation, "fittings": fittings or []})
    return doc


def test_entrance_and_exit_are_counted_by_default():
    line = parse(one_run()).line
    keys = [(f.key, f.implied) for f in line.elements[0].fittings]
    assert keys == [("entrance-sharp", True), ("exit", True)]
    Q = solve(line).design["Q"]
    assert Q == pytest.approx(independent_flow(20.0, [(500, 0.15, 4.5e-5)], [(0.5, 0.15), (1.0, 0.15)]), rel=1e-9)


def test_a_typed_entrance_replaces_the_default():
    line = parse(one_run(fittings=[{"type": "entrance-rounded", "count": 1}])).line
    assert [(f.key, f.implied) for f in line.elements[0].fittings] == [("entrance-rounded", False), ("exit", True)]
    Q = solve(line).design["Q"]
    # Idelchik's rounded inlet, K 0.04 as the table carries it.
    assert Q == pytest.approx(independent_flow(20.0, [(500, 0.15, 4.5e-5)], [(0.04, 0.15), (1.0, 0.15)]), rel=1e-9)


def test_start_entrance_kind_sets_the_default():
    doc = one_run()
    doc["start"]["entrance"] = "entrance-inward-projecting"
    line = parse(doc).line
    assert line.elements[0].fittings[0].key == "entrance-inward-projecting"


def test_an_outlet_above_the_receiving_surface_discharges_freely():
    # The pipe ends at 90 m over a tank at 80 m: it runs as if it ended in the air at 90 m. The flow is
    # driven by 100 - 90 = 10 m, not 20 m; the velocity head leaves with the jet (K = 1).
    a = analyse(one_run(end_elevation="90 m"))
    Q = a.solution.design["Q"]
    assert Q == pytest.approx(independent_flow(10.0, [(500, 0.15, 4.5e-5)], [(0.5, 0.15), (1.0, 0.15)]), rel=1e-9)
    last = a.solution.design["profile"][-1]
    assert last["pressure_head"] == pytest.approx(0.0, abs=1e-9)
    codes = {f.code for f in a.findings}
    assert "pressure-subatmospheric" not in codes and "end-free-discharge" in codes
    assert a.line.end.free_outlet == 90.0


def test_a_submerged_outlet_uses_the_surface():
    a = analyse(one_run(end_elevation="78 m"))
    assert a.line.end.free_outlet is None
    assert "end-free-discharge" not in {f.code for f in a.findings}


def test_a_pipe_leaving_the_start_reservoir_above_its_surface_is_refused():
    doc = one_run()
    doc["start"]["outlet_elevation"] = "101 m"
    p = parse(doc)
    assert not p.ok
    msg = p.errors_by_path()["start.outlet_elevation"]
    assert "above the water surface" in msg and "cannot run" in msg


def two_runs(D1, D2, fittings2=None):
    doc = one_run()
    doc["elements"][0].update({"diameter": D1, "length": "200 m", "end_elevation": "90 m"})
    second = copy.deepcopy(doc["elements"][0])
    second.update({"label": "Second", "diameter": D2, "length": "300 m", "end_elevation": "78 m",
                   "fittings": fittings2 or []})
    doc["elements"].append(second)
    return doc


@pytest.mark.parametrize("D1,D2", [(0.15, 0.3), (0.3, 0.15)])
def test_sudden_change_of_bore_is_counted_on_the_small_pipe(D1, D2):
    line = parse(two_runs(f"{D1 * 1e3:g} mm", f"{D2 * 1e3:g} mm")).line
    d, D = min(D1, D2), max(D1, D2)
    beta = d / D
    K = (1 - beta ** 2) ** 2 if D2 > D1 else 0.5 * (1 - beta ** 2)
    Q = solve(line).design["Q"]
    ref = independent_flow(20.0, [(200, D1, 4.5e-5), (300, D2, 4.5e-5)],
                           [(0.5, D1), (1.0, D2), (K, d)])
    assert Q == pytest.approx(ref, rel=1e-9)
    implied = [f.key for el in line.elements for f in el.fittings if f.implied]
    assert ("expansion-sudden" if D2 > D1 else "contraction-sudden") in implied


def test_a_typed_conical_reducer_replaces_the_sudden_change():
    line = parse(two_runs("300 mm", "150 mm", [{"type": "reducer-conical-30", "count": 1}])).line
    assert not [f for f in line.elements[1].fittings if f.key == "contraction-sudden"]
    cone = [f for f in line.elements[1].fittings if f.model == "cone"][0]
    # Crane TP-410M gradual contraction, 30 deg: 0.8 sin(15 deg)(1 - 0.25) on the small pipe.
    assert cone.derived_K == pytest.approx(0.8 * math.sin(math.radians(15)) * 0.75, rel=1e-12)
    Q = solve(line).design["Q"]
    ref = independent_flow(20.0, [(200, 0.3, 4.5e-5), (300, 0.15, 4.5e-5)],
                           [(0.5, 0.3), (1.0, 0.15), (cone.derived_K, 0.15)])
    assert Q == pytest.approx(ref, rel=1e-9)


def test_the_record_lists_what_was_counted_by_default():
    rec = build(analyse(two_runs("150 mm", "300 mm")))
    text = " ".join(a.text for a in rec.assumptions)
    assert "counted where no fitting was typed" in text and "Sudden expansion" in text
    # each fitting, as typed or counted, is listed once, with its source, beside its loss in the working
    fittings = next(b for b in rec.working if getattr(b, "caption", "").startswith("Fittings"))
    rows = [row for row in fittings.rows if "counted by default" in row[-1]]
    assert len(rows) == 3 and all(row[2] == "(not typed)" for row in rows)


def test_resizing_works_the_change_of_bore_out_again_and_leaves_the_line_alone():
    line = parse(two_runs("150 mm", "300 mm")).line
    before = [(f.key, f.params) for el in line.elements for f in el.fittings]
    r = smallest_size(line, 0.03, "asme-b36.10m", "40", runs=[0])
    assert [(f.key, f.params) for el in line.elements for f in el.fittings] == before
    assert r.nominal is not None
