"""Typed quantities as engineers write them: m3/h, kg/m3, 0.01 degC; a comma in a number, or no unit, explained."""

from __future__ import annotations

import CoolProp.CoolProp as CP
import pytest
from linetools import gravity_line

from calc.model.sheet import parse
from calc.units import DENSITY, FLOW, LENGTH, TEMPERATURE, InputError, parse_quantity


@pytest.mark.parametrize("text,kind,si", [
    # 1 h = 3600 s and 1 ft = 0.3048 m exactly (SI Brochure, 9th ed. 2019, Table 8; NIST SP 811, 2008, B.8).
    ("360 m3/h", FLOW, 0.1),
    ("1 m3/s", FLOW, 1.0),
    ("2 ft3/s", FLOW, 2 * 0.3048 ** 3),
    ("998 kg/m3", DENSITY, 998.0),
    ("1 m³/s", FLOW, 1.0),
])
def test_units_as_engineers_type_them(text, kind, si):
    assert parse_quantity(text, kind, "x") == pytest.approx(si, rel=1e-15)


def test_triple_point_temperature_is_water():
    # ITS-90 fixes the triple point of water at 273.16 K = 0.01 degC; CoolProp agrees (used as the reference).
    assert parse_quantity("0.01 degC", TEMPERATURE, "T") == pytest.approx(CP.PropsSI("Ttriple", "Water"), abs=1e-9)
    doc = gravity_line()
    doc["liquid"] = {"kind": "water", "temperature": "0.01 degC"}
    parsed = parse(doc)
    assert parsed.ok, parsed.errors


@pytest.mark.parametrize("text,shown", [("0,2 m", "write 0.2 m"), ("1,25 m", "write 1.25 m"),
                                       ("3,5 mm", "write 3.5 mm"), (",5 m", "write 0.5 m"),
                                       ("0,2", "write 0.2 m")])
def test_decimal_comma_is_refused_with_the_reason(text, shown):
    # The decimal mark of a typed number is a point (common practice on engineering software in English;
    # ISO 80000-1:2009, 7.3.2, allows either mark, so which one was meant cannot be guessed).
    with pytest.raises(InputError) as e:
        parse_quantity(text, LENGTH, "elements.0.length")
    assert "decimal comma" in e.value.message and "decimal mark is a point" in e.value.message
    assert shown in e.value.message, e.value.message
    assert "not a unit we know" not in e.value.message


@pytest.mark.parametrize("text,shown", [("1,200 m", "write 1200 m"), ("12,500.5 m", "write 12500.5 m"),
                                       ("-1,000 ft", "write -1000 ft"), ("1,200,000 m", "write 1200000 m")])
def test_a_thousands_separator_is_refused_with_the_number_to_write(text, shown):
    # ISO 80000-1:2009, 7.3.1: digits are grouped by a thin space, never by a comma or point; a comma
    # group could be a decimal comma as well (1,200 = 1.2 in much of Europe), so it is not guessed.
    with pytest.raises(InputError) as e:
        parse_quantity(text, LENGTH, "elements.0.length")
    assert "thousands separator" in e.value.message and shown in e.value.message, e.value.message


def test_a_thousands_group_may_also_be_a_decimal_comma_and_the_message_says_both():
    with pytest.raises(InputError) as e:
        parse_quantity("1,200 m", LENGTH, "x")
    assert "write 1200 m" in e.value.message and "1.2 m if the comma is a decimal mark" in e.value.message


@pytest.mark.parametrize("text,kind,shown", [("300", LENGTH, "write 300 m, 300 mm or 300 ft"),
                                             ("40", FLOW, "write 40 L/s, 40 m3/h or 40 gpm"),
                                             (40, FLOW, "write 40 L/s, 40 m3/h or 40 gpm")])
def test_a_bare_number_is_refused_with_units_suggested(text, kind, shown):
    # Common practice: a physical quantity without its unit is the commonest slip on a calculation sheet.
    with pytest.raises(InputError) as e:
        parse_quantity(text, kind, "x")
    assert "needs a unit" in e.value.message and shown in e.value.message, e.value.message
    # Each suggestion is one the parser itself accepts, with the dimension asked for.
    for unit in kind.suggested:
        parse_quantity(f"{text} {unit}", kind, "x")


def test_an_unknown_unit_is_still_refused():
    with pytest.raises(InputError) as e:
        parse_quantity("3 blorps/s", FLOW, "q")
    assert "not a unit we know" in e.value.message


BOMBS = ["1 m*10**10**10", "1 m**9**9**9", "2 kg/m**99999999", "1 m*1e308*1e308", "1 (m**9)**9**9", "3 m^(2**2**2**2)"]


def test_unit_expression_bombs_are_refused_before_the_unit_library_sees_them():
    # Each of these would have pint build a gigantic number with the interpreter locked (a whole
    # server frozen for minutes or days): run in a child process with a deadline, so the old
    # behaviour fails this test instead of hanging the suite.
    import subprocess
    import sys

    code = ("from calc.units import LENGTH, InputError, parse_quantity\n"
            f"for text in {BOMBS!r}:\n"
            "    try:\n"
            "        parse_quantity(text, LENGTH, 'x')\n"
            "    except InputError as e:\n"
            "        assert 'not a unit' in e.message or 'must be' in e.message, e.message\n"
            "    else:\n"
            "        raise SystemExit('accepted: ' + text)\n")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=30)
    assert r.returncode == 0, r.stderr


@pytest.mark.parametrize("text", ["2.5 kg/m^3", "1.0 mPa*s", "9 ft^3/s", "3 m · s/s", "12 degC", "85 %"])
def test_plain_units_still_parse(text):
    from calc.units import DENSITY, RATIO, TEMPERATURE, VISCOSITY

    kind = {"kg/m^3": DENSITY, "mPa*s": VISCOSITY, "ft^3/s": FLOW, "m · s/s": LENGTH, "degC": TEMPERATURE,
            "%": RATIO}[text.split(" ", 1)[1]]
    parse_quantity(text, kind, "x")
