"""Parsing the sheet document: units in SI and US customary, and an error naming the field for every bad input."""

import copy

import pytest
from linetools import gravity_line

from calc.model.sheet import MAX_ELEMENTS, parse
from calc.units import FLOW, LENGTH, POWER, PRESSURE, TEMPERATURE, InputError, parse_quantity


def with_pipe(**fields):
    doc = gravity_line()
    doc["elements"][0].update(fields)
    return doc


def errors(doc):
    return parse(doc).errors_by_path()


@pytest.mark.parametrize("text,kind,si", [
    # Conversion factors are exact by definition (NIST SP 811, appendix B).
    ("150 mm", LENGTH, 0.150),
    ("6 in", LENGTH, 0.1524),
    ("300 ft", LENGTH, 91.44),
    ("40 L/s", FLOW, 0.040),
    ("600 gpm", FLOW, 600 * 3.785411784e-3 / 60),
    ("2.5 kW", POWER, 2500.0),
    ("0.5 hp", POWER, 0.5 * 745.69987158227022),
    ("3 bar", PRESSURE, 3e5),
    ("12 degC", TEMPERATURE, 285.15),
    ("55 degF", TEMPERATURE, (55 - 32) / 1.8 + 273.15),
    ("\u22125 m", LENGTH, -5.0),
])
def test_units_si_and_us_customary(text, kind, si):
    assert parse_quantity(text, kind, "x") == pytest.approx(si, rel=1e-12)


@pytest.mark.parametrize("field,value,words", [
    ("length", "150 kg", "must be a length"),
    ("length", "150", "needs a unit"),
    ("length", "-5 m", "must be positive"),
    ("length", "", "give the run's length"),
    ("length", "abc", "must start with a number"),
    ("length", "12 blorps", "is not a unit we know"),
    ("diameter", "0 mm", "must be positive"),
    ("roughness", "-0.1 mm", "zero or more"),
    ("length", "1e999 m", "finite"),
])
def test_bad_pipe_field_is_named_with_what_is_expected(field, value, words):
    errs = errors(with_pipe(**{field: value}))
    assert f"elements.0.{field}" in errs
    assert words in errs[f"elements.0.{field}"]


def turbine(**kw):
    doc = gravity_line()
    t = {"kind": "turbine", "label": "T", "mode": "power", "power": "10 kW", "efficiency": "0.8"}
    t.update(kw)
    doc["elements"].append(t)
    return doc


@pytest.mark.parametrize("eff", ["0", "0 %", "1.2", "120 %", "-0.5"])
def test_efficiency_must_lie_in_zero_to_one(eff):
    errs = errors(turbine(efficiency=eff))
    assert "elements.1.efficiency" in errs


def test_efficiency_as_percentage():
    line = parse(turbine(efficiency="85 %")).line
    assert line.elements[1].efficiency == pytest.approx(0.85)


def test_pump_curve_needs_three_points():
    doc = gravity_line()
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve",
                               "curve": [{"flow": "0 L/s", "head": "30 m"}, {"flow": "10 L/s", "head": "25 m"}]})
    errs = errors(doc)
    assert "at least 3 points" in errs["elements.0.curve"]


def test_pump_curve_point_errors_name_the_point():
    doc = gravity_line()
    doc["elements"].insert(0, {"kind": "pump", "label": "P", "mode": "curve",
                               "curve": [{"flow": "0 L/s", "head": "30 m"}, {"flow": "10 m", "head": "25 m"},
                                         {"flow": "20 L/s", "head": "twenty"}]})
    errs = errors(doc)
    assert "must be a flow rate" in errs["elements.0.curve.1.flow"]
    assert "elements.0.curve.2.head" in errs


def test_every_error_is_reported_at_once():
    doc = with_pipe(length="x", diameter="5 kg")
    doc["liquid"]["temperature"] = "15"
    doc["start"]["elevation"] = ""
    errs = errors(doc)
    assert {"elements.0.length", "elements.0.diameter", "liquid.temperature", "start.elevation"} <= set(errs)


def test_unknown_material_fitting_and_size_are_named():
    doc = with_pipe(material="unobtainium", diameter="", size={"standard": "asme-b36.10m", "nominal": "7", "class": "40"})
    doc["elements"][0]["fittings"] = [{"type": "flux-capacitor", "count": 1}]
    errs = errors(doc)
    assert "elements.0.material" in errs
    assert "elements.0.size" in errs
    assert "elements.0.fittings.0.type" in errs


def test_bad_fitting_count():
    doc = with_pipe(fittings=[{"type": "k", "K": "0.5", "count": "two"}])
    assert "whole number" in errors(doc)["elements.0.fittings.0.count"]


def test_huge_list_is_refused_with_a_message():
    doc = gravity_line()
    doc["elements"] = [copy.deepcopy(doc["elements"][0]) for _ in range(MAX_ELEMENTS + 1)]
    assert "at most" in errors(doc)["elements"]


def test_water_outside_liquid_range():
    doc = gravity_line()
    doc["liquid"]["temperature"] = "150 degC"
    assert "liquid.temperature" in errors(doc)


def test_wrong_types_never_raise():
    for bad in (None, [], "text", 3, {"elements": "x"}, {"elements": [None, 3, "a"]},
                {"start": [], "end": 5, "liquid": "hot"}, {"header": {"title": ["x"]}}):
        parsed = parse(bad)
        assert not parsed.ok
        assert all(isinstance(e, InputError) and e.message for e in parsed.errors)


def test_size_table_gives_inner_diameter_and_its_source():
    # ASME B36.10M: NPS 6 Sch 40, OD 168.3 mm, wall 7.11 mm, ID 154.08 mm.
    doc = with_pipe(diameter="", size={"standard": "asme-b36.10m", "nominal": "6", "class": "40"})
    line = parse(doc).line
    assert line.elements[0].D == pytest.approx(0.15408, abs=2e-5)
    assert "B36.10" in line.elements[0].D_source


def test_material_gives_roughness_with_source():
    doc = with_pipe(roughness="")
    run = parse(doc).line.elements[0]
    assert run.eps > 0 and run.eps_source


def test_aged_condition_takes_the_tables_aged_roughness():
    # Idelchik (2007) aged steel water piping is far rougher than Moody's new commercial steel.
    new = parse(with_pipe(roughness="", material="steel-commercial")).line.elements[0]
    aged = parse(with_pipe(roughness="", material="steel-commercial", condition="aged")).line.elements[0]
    assert aged.eps > 10 * new.eps
    assert "aged" in aged.eps_source
