"""Values far beyond any real line are refused beside their field, and the solver keeps its word at the
widest scales it accepts.

A unit slip (``60 parsecs`` for a run's length, a bore in km) parses as a valid length, and a solver fed
one answers with a wrong reason and 17-digit axis ticks; the parser refuses such values (`SPANS`, common
practice: each limit far beyond any line built). Inside the spans the line is solved, and at the extreme
of them the answer is checked against Hagen-Poiseuille's law with water from CoolProp.
"""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI
from linetools import gravity_line

from calc.analysis import analyse
from calc.model.sheet import parse


def _pipe_doc(**fields) -> dict:
    doc = gravity_line()
    doc["elements"][0].update(fields)
    return doc


@pytest.mark.parametrize("field, typed, words", [
    ("length", "60 parsec", "longer than any pipe line"),
    ("length", "3000 km", "longer than any pipe line"),
    ("diameter", "3 km", "wider than any pipe bore"),
    ("diameter", "0.5 mm", "narrower than any pipe bore"),
    ("end_elevation", "-20 km", "beyond any elevation on earth"),
    ("wall_thickness", "3 m", "thicker than any pipe wall"),
    ("rating", "5000 bar", "more than any water line holds"),
])
def test_a_value_beyond_any_real_line_is_refused_at_its_field_with_a_reason(field, typed, words):
    errors = parse(_pipe_doc(**{field: typed})).errors_by_path()
    message = errors[f"elements.0.{field}"]
    assert words in message and "check the unit" in message
    assert len(errors) == 1


@pytest.mark.parametrize("field, typed", [
    ("length", "2000 km"), ("diameter", "1 mm"), ("diameter", "15 m"), ("end_elevation", "-400 m"),
    ("wall_thickness", "0.5 mm"), ("rating", "250 bar"),
])
def test_the_widest_real_values_are_accepted(field, typed):
    assert f"elements.0.{field}" not in parse(_pipe_doc(**{field: typed})).errors_by_path()


def test_the_message_gives_the_value_and_the_limit_in_the_sheets_own_units():
    doc = _pipe_doc(length="60 parsec")
    doc["header"]["units"] = "US"
    message = parse(doc).errors_by_path()["elements.0.length"]
    assert "ft" in message and "miles" in message and " m," not in message
    # 60 pc = 60 x 3.0857e16 m (IAU 2015 Resolution B2, the parsec from the au), in ft
    assert f"{60 * 3.0857e16 / 0.3048:.4g} ft" in message


def test_a_machine_head_and_a_flow_are_bounded_too():
    doc = gravity_line()
    doc["elements"].append({"kind": "pump", "label": "P", "mode": "head", "head": "12 km"})
    assert "more than any machine's head" in parse(doc).errors_by_path()["elements.1.head"]
    doc["elements"][1] = {"kind": "pump", "label": "P", "mode": "curve",
                          "curve": [{"flow": f"{q} m3/s", "head": "10 m"} for q in ("0", "1", "2e6")]}
    assert "more than any line carries" in parse(doc).errors_by_path()["elements.1.curve.2.flow"]


@pytest.mark.parametrize("drop_m", [20.0, 0.01])
def test_a_thread_of_a_bore_over_the_longest_line_gives_poiseuilles_flow(drop_m):
    """2000 km of 1 mm bore: the flow is laminar and so small that the entrance and exit losses are
    nothing beside friction, so the answer is Hagen-Poiseuille's Q = pi D^4 rho g H / (128 mu L)
    (any fluid mechanics text), with water at 15 degC from CoolProp (IAPWS-95) and the viscosity
    from its own formulation. Before the scan reached down to the laminar flow, a 1 cm drop was
    answered 'the water would run backwards'."""
    doc = _pipe_doc(length="2000 km", diameter="1 mm")
    doc["end"]["elevation"] = f"{100.0 - drop_m:g} m"
    a = analyse(doc)
    assert a.ok and a.solution.status == "solved", a.solution.message
    T, p = 288.15, 101325.0
    rho, mu = PropsSI("D", "T", T, "P", p, "Water"), PropsSI("V", "T", T, "P", p, "Water")
    expected = math.pi * 1e-3 ** 4 * rho * 9.80665 * drop_m / (128.0 * mu * 2e6)
    assert a.solution.design["Q"] == pytest.approx(expected, rel=2e-3)  # the viscosity releases differ < 0.2 %


def test_a_line_whose_end_stands_higher_still_runs_backwards():
    doc = _pipe_doc(length="2000 km", diameter="1 mm")
    doc["end"]["elevation"] = "100.01 m"
    a = analyse(doc)
    assert a.solution.status == "no_operating_point"
    assert "run backwards" in a.solution.message


def test_a_turbine_taking_more_than_the_drop_is_not_said_to_run_backwards():
    doc = gravity_line()
    doc["elements"].append({"kind": "turbine", "label": "T", "mode": "head", "head": "25 m"})
    a = analyse(doc)
    assert a.solution.status == "no_operating_point"
    assert "turbines take use up the driving head" in a.solution.message
