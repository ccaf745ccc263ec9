"""Operating cases: each case's answer against an independent solve of the line with its inputs changed,
the errors of a case beside the case field that caused them, and the cases read together (governing case).

The independent solve is the energy equation surface to surface, Darcy-Weisbach with Colebrook's friction
factor from the ``fluids`` library, water from CoolProp (IAPWS-95), closed with scipy's ``brentq``.
"""

from __future__ import annotations

import copy
import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from hypothesis import assume, given, settings
from hypothesis import strategies as st
from linetools import gravity_line, pump_curve
from scipy.optimize import brentq

from calc.analysis import analyse
from calc.model.sheet import ensure_ids, parse

G = 9.80665


def _independent_flow(drop: float, L: float, D: float, eps: float, T: float, K: float = 1.5) -> float:
    """Flow of one run between two reservoirs [m3/s]: drop = (f L/D + K) V^2 / 2g, K the sharp entrance
    (0.5) and the exit (1.0) typed on the gravity line (Crane TP-410 values)."""
    rho = PropsSI("D", "T", T, "P", 101325.0, "Water")
    nu = PropsSI("V", "T", T, "P", 101325.0, "Water") / rho
    A = math.pi * D * D / 4

    def residual(Q):
        V = Q / A
        f = Colebrook(V * D / nu, eps / D)
        return drop - (f * L / D + K) * V * V / (2 * G)

    return brentq(residual, 1e-6, 1.0, xtol=1e-14, rtol=1e-14)


def _sheet(*cases) -> dict:
    doc = ensure_ids(gravity_line())
    doc["cases"] = [copy.deepcopy(c) for c in cases]
    return doc


def _flows(a) -> dict:
    return {c.name: c.solution.design["Q"] for c in a.cases}


def test_each_case_is_solved_with_its_changes_against_an_independent_solve():
    a = analyse(_sheet({"name": "High tank", "end": {"elevation": "92 m"}},
                       {"name": "Aged pipe", "pipes": {"condition": "aged"}},
                       {"name": "Rough 2 mm", "pipes": {"roughness": "2 mm"}},
                       {"name": "Cold", "liquid": {"temperature": "2 degC"}}))
    assert a.ok, a.errors
    q = _flows(a)
    # 500 m of 150 mm commercial steel, 0.045 mm new (Moody 1944), 1.35 mm aged (the material table's
    # aged value, Idelchik 2007), 20 m between the surfaces; 8 m in the high-tank case. Within 1e-5:
    # the sheet's water (IAPWS-IF97 and the 2008 viscosity release) and CoolProp's IAPWS-95 differ
    # by some 1e-7 in the flow at 15 degC.
    assert q["Base"] == pytest.approx(_independent_flow(20.0, 500, 0.15, 0.045e-3, 288.15), rel=1e-5)
    assert q["High tank"] == pytest.approx(_independent_flow(8.0, 500, 0.15, 0.045e-3, 288.15), rel=1e-5)
    assert q["Aged pipe"] == pytest.approx(_independent_flow(20.0, 500, 0.15, 1.35e-3, 288.15), rel=1e-5)
    assert q["Rough 2 mm"] == pytest.approx(_independent_flow(20.0, 500, 0.15, 2e-3, 288.15), rel=1e-5)
    # the viscosity releases of IAPWS (2008) and CoolProp's IAPWS-95 fit differ by well under 0.1 %
    assert q["Cold"] == pytest.approx(_independent_flow(20.0, 500, 0.15, 0.045e-3, 275.15), rel=1e-4)


def test_the_base_document_is_left_as_it_was():
    doc = _sheet({"name": "Aged", "pipes": {"condition": "aged"}}, {"name": "Low", "start": {"elevation": "95 m"}})
    before = copy.deepcopy(doc)
    parse(doc)
    assert doc == before


@pytest.mark.parametrize("case, path, words", [
    ({"name": "Bad", "start": {"elevation": "abc"}}, "cases.0.start.elevation", "must start with a number"),
    ({"name": "Far", "end": {"elevation": "60 parsec"}}, "cases.0.end.elevation", "beyond any elevation"),
    ({"name": "", "end": {"elevation": "90 m"}}, "cases.0.name", "give the case a name"),
    ({"name": "base"}, "cases.0.name", "name of the sheet's own inputs"),
    ({"name": "X", "pipes": {"condition": "old"}}, "cases.0.pipes.condition", "new, aged"),
    ({"name": "X", "pipes": {"condition": "aged", "roughness": "1 mm"}}, "cases.0.pipes.roughness", "not both"),
    ({"name": "X", "elements": [{"id": "pump-9", "speed_ratio": "0.9"}]}, "cases.0.elements.0.id", "names no element"),
    ({"name": "X", "elements": [{"id": "pipe-1", "length": "9 m"}]}, "cases.0.elements.0.length", "is not a field"),
    ({"name": "X", "liquid": {"density": "900 kg/m3"}}, "cases.0.liquid.density", "is not a field"),
])
def test_a_case_error_is_given_at_the_case_field_that_caused_it(case, path, words):
    errors = parse(_sheet(case)).errors_by_path()
    assert path in errors and words in errors[path], errors
    assert all(p.startswith("cases.0") for p in errors)


def test_two_cases_of_one_name_are_refused():
    errors = parse(_sheet({"name": "Low"}, {"name": "low"})).errors_by_path()
    assert "name of case 1 too" in errors["cases.1.name"]


def test_ageing_a_run_without_a_material_names_the_run():
    doc = _sheet({"name": "Aged", "pipes": {"condition": "aged"}})
    doc["elements"][0].update(material="", roughness="0.05 mm")
    errors = parse(doc).errors_by_path()
    assert list(errors) == ["cases.0.pipes.condition"]
    assert errors["cases.0.pipes.condition"].startswith("Main: ")


def test_a_case_names_an_element_by_its_id_wherever_it_moves():
    doc = _sheet({"name": "Throttled", "elements": [{"id": "valve-1", "K": "40"}]})
    doc["elements"].append({"kind": "valve", "id": "valve-1", "label": "V", "K": "2"})
    q_end = _flows(analyse(doc))["Throttled"]
    doc["elements"].insert(0, doc["elements"].pop())  # the valve moves to the front, its bore typed
    doc["elements"][0]["diameter"] = "150 mm"
    q_front = _flows(analyse(doc))["Throttled"]
    assert q_front == pytest.approx(q_end, rel=1e-12)
    assert q_end < _flows(analyse(doc))["Base"]


@settings(max_examples=25, deadline=None)
@given(blank=st.sampled_from(["", None, "  "]), restate=st.booleans())
def test_a_case_that_changes_nothing_gives_the_base_answer_exactly(blank, restate):
    doc = _sheet({"name": "Same", "start": {"elevation": "100 m" if restate else blank, "pressure": blank},
                  "liquid": {"temperature": "15 degC" if restate else blank},
                  "elements": [{"id": "pipe-1"}]})
    a = analyse(doc)
    base, same = a.cases
    assert same.solution.design["Q"] == base.solution.design["Q"]
    assert same.solution.design["profile"] == base.solution.design["profile"]


def _pump_sheet(end_levels) -> dict:
    doc = ensure_ids(gravity_line())
    doc["start"]["elevation"], doc["end"]["elevation"] = "80 m", "95 m"
    doc["elements"][0]["end_elevation"] = "93 m"
    doc["elements"].insert(0, {"kind": "pump", "label": "P1", "mode": "curve",
                               "curve": pump_curve(((0, 40), (20, 36), (40, 25), (60, 8)))})
    ensure_ids(doc)
    doc["cases"] = [{"name": f"end {z:.3f}", "end": {"elevation": f"{z:.3f} m"}} for z in end_levels]
    return doc


@settings(max_examples=20, deadline=None)
@given(st.lists(st.floats(min_value=81.0, max_value=105.0), min_size=2, max_size=4, unique=True))
def test_raising_the_tank_never_raises_the_pumps_flow(levels):
    # the cases are named by their level to a mm: two levels that round alike would be one case twice
    levels = sorted({round(z, 3) for z in levels})
    assume(len(levels) >= 2)
    a = analyse(_pump_sheet(levels))
    assert a.ok
    flows = [c.solution.design["Q"] for c in a.cases[1:]]
    assert all(q2 <= q1 for q1, q2 in zip(flows, flows[1:]))


def test_each_check_speaks_once_naming_its_governing_case():
    a = analyse(_sheet({"name": "Steep", "start": {"elevation": "130 m"}},
                       {"name": "Gentle", "start": {"elevation": "85 m"}}))
    assert a.ok
    high = [f for f in a.findings if f.code == "velocity-high"]
    assert len(high) == 1 and high[0].case == "Steep" and high[0].message.startswith("Case 'Steep'")
    keys = [(f.code, f.element) for f in a.findings]
    assert len(keys) == len(set(keys))
    fastest = next(r for r in a.governing if r["check"] == "Highest velocity")
    assert fastest["case"] == "Steep" and fastest["within"] is False
    assert set(fastest["values"]) == {"Base", "Steep", "Gentle"}
    lowest = next(r for r in a.governing if r["check"] == "Lowest pressure (absolute)")
    assert lowest["value"] == min(lowest["values"].values())


def test_a_sheet_without_cases_reads_as_before():
    a = analyse(ensure_ids(gravity_line()))
    assert len(a.cases) == 1 and not a.has_cases and a.governing == []
    assert all(f.case is None for f in a.findings)
    assert "cases" not in a.to_dict()


def test_a_case_takes_the_elements_it_does_not_change_from_the_base_as_copies():
    doc = _sheet({"name": "Throttled", "elements": [{"id": "valve-1", "K": "40"}]}, {"name": "Cold",
                                                                                    "liquid": {"temperature": "4 degC"}})
    doc["elements"].append({"kind": "valve", "id": "valve-1", "label": "V", "K": "2"})
    p = parse(doc)
    assert p.ok, p.errors
    lines = [p.line] + [c.line for c in p.cases]
    runs = [ln.elements[0] for ln in lines]
    # each line its own run, with the losses physics always has counted once (no entrance counted twice)
    assert len({id(r) for r in runs}) == 3
    for r in runs:
        assert [f.key for f in r.fittings] == [f.key for f in runs[0].fittings]
        assert sum(f.key.startswith("entrance") for f in r.fittings) == 1
    assert [ln.elements[1].K for ln in lines] == [2.0, 40.0, 2.0]
    # and the answer is the one a sheet with the change typed gives
    alone = copy.deepcopy(doc)
    alone.pop("cases")
    alone["elements"][1]["K"] = "40"
    assert _flows(analyse(doc))["Throttled"] == analyse(alone).solution.design["Q"]
