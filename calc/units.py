"""The one unit registry, and parsing of typed quantities into SI floats at the edge."""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache

import pint

ureg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
# Trade shorthands that pint does not define; US gallons, as the trade uses them.
ureg.define("gpm = gallon / minute")
ureg.define("mgd = 1e6 * gallon / day")
ureg.define("lps = liter / second")
Q_ = ureg.Quantity


class InputError(ValueError):
    """Impossible input: names the field (as a path into the sheet), the value and what was expected."""

    def __init__(self, path: str, value: object, message: str):
        self.path = path
        self.value = value
        self.message = message
        super().__init__(f"{path}: {message} (got {value!r})")


@dataclass(frozen=True)
class Kind:
    """A kind of quantity a field holds: its name in messages, SI unit, a typed example, and the units a
    message suggests for a number typed without one."""

    name: str
    si: str
    example: str
    dimensionality: object = None
    suggested: tuple[str, ...] = ()


def _kind(name: str, si: str, example: str, suggested: tuple[str, ...] = ()) -> Kind:
    return Kind(name, si, example, Q_(1, si).dimensionality, suggested)


LENGTH = _kind("a length", "m", "150 mm", ("m", "mm", "ft"))
FLOW = _kind("a flow rate", "m^3/s", "40 L/s", ("L/s", "m3/h", "gpm"))
PRESSURE = _kind("a pressure", "Pa", "3 bar", ("kPa", "bar", "psi"))
POWER = _kind("a power", "W", "40 kW", ("kW", "hp"))
DENSITY = _kind("a density", "kg/m^3", "998 kg/m^3", ("kg/m3",))
VISCOSITY = _kind("a dynamic viscosity", "Pa*s", "1.0 mPa*s", ("mPa*s",))
MODULUS = _kind("an elastic modulus", "Pa", "2.19 GPa", ("GPa",))
TEMPERATURE = _kind("a temperature", "K", "12 degC", ("degC", "degF"))
SPEED = _kind("a velocity", "m/s", "2 m/s", ("m/s", "ft/s"))
TIME = _kind("a time", "s", "5 s", ("s",))
RATIO = _kind("a plain number or percentage", "", "0.85 or 85 %")
AREA = _kind("an area", "m^2", "7 m^2", ("m^2", "ft^2"))
VOLUME = _kind("a volume", "m^3", "3 m^3", ("m^3", "L", "ft^3"))
INERTIA = _kind("a moment of inertia", "kg*m^2", "2.5 kg m^2", ("kg m^2",))
ROTATION = _kind("a rotational speed", "rad/s", "1480 rpm", ("rpm",))

#: A kind's example and suggested units on a sheet shown in US customary units (header.units "US"),
#: so that a message on such a sheet never suggests '150 mm' (the same figures as the SI examples).
_US = {
    "m": ("6 in", ("ft", "in", "m")),
    "m^3/s": ("630 gpm", ("gpm", "ft3/s", "L/s")),
    "Pa": ("45 psi", ("psi", "kPa")),
    "W": ("50 hp", ("hp", "kW")),
    "kg/m^3": ("62.3 lb/ft^3", ("lb/ft3", "kg/m3")),
    "K": ("54 degF", ("degF", "degC")),
    "m/s": ("6.5 ft/s", ("ft/s", "m/s")),
}


@lru_cache(maxsize=64)
def in_system(kind: Kind, system: str) -> Kind:
    """``kind`` with its example and suggested units in a sheet's unit system ("SI" or "US").

    >>> in_system(LENGTH, "US").example, in_system(LENGTH, "US").suggested, in_system(LENGTH, "SI") is LENGTH
    ('6 in', ('ft', 'in', 'm'), True)
    >>> in_system(RATIO, "US") is RATIO
    True
    """
    if system != "US" or kind.si not in _US:
        return kind
    example, suggested = _US[kind.si]
    return Kind(kind.name, kind.si, example, kind.dimensionality, suggested)

_NUMBER = re.compile(r"^\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)\s*(.*?)\s*$")
#: A power written as a bare digit after a unit, as engineers type it: m3/s, m3/h, kg/m3, ft3/s, mm2.
_BARE_POWER = re.compile(r"(?<=[A-Za-z])([23])(?![\d.])")
#: A number holding a comma, and what follows it: a thousands separator (1,200) or a decimal comma (0,2).
_COMMA_NUMBER = re.compile(r"^\s*([+-]?\d*,[\d,]*(?:\.\d*)?)\s*(.*?)\s*$")
_THOUSANDS = re.compile(r"^[+-]?\d{1,3}(?:,\d{3})+(?:\.\d*)?$")


# What a unit may be before the unit library sees it: unit names (letters, µ, Ω, °, or %) joined by
# *, /, · or spaces, each with at most one small power (^2, **-1, ², m3 read as m^3). Anything else,
# numbers inside the unit or powers of powers among them ('m*10**10**10' would have the library
# build a gigantic integer with the interpreter locked), is refused at once.
_UNIT_NAME = r"(?:[A-Za-zµμΩ°]+|%)"
_UNIT_FACTOR = _UNIT_NAME + r"(?:\s*(?:\^|\*\*)\s*-?[1-4]|[²³])?"
_UNIT_GRAMMAR = re.compile(rf"^{_UNIT_FACTOR}(?:\s*[*/·]\s*{_UNIT_FACTOR}|\s+{_UNIT_FACTOR})*$")


def unit_allowed(unit: str) -> bool:
    """Whether a unit as typed (after `unit_text`) has the plain shape of a unit.

    >>> [unit_allowed(u) for u in ("kg/m^3", "mPa*s", "ft^3/s", "degC", "%", "m ** 2", "L/s")]
    [True, True, True, True, True, True, True]
    >>> [unit_allowed(u) for u in ("m*10**10**10", "m**1000", "m^(2)", "kg/(m^3)", "m*1e9")]
    [False, False, False, False, False]
    """
    return bool(_UNIT_GRAMMAR.match(unit))


def unit_text(unit: str) -> str:
    """A unit as typed, in pint's spelling: a bare 2 or 3 after a unit is a power (m3/h -> m^3/h).

    >>> unit_text("m3/h"), unit_text("kg/m3"), unit_text("ft3/s"), unit_text("L/s")
    ('m^3/h', 'kg/m^3', 'ft^3/s', 'L/s')
    """
    return _BARE_POWER.sub(r"^\1", unit)


def _comma_message(number: str, unit: str, kind: Kind) -> str:
    """Why a number with a comma is refused, and how to write it: the decimal mark is a point, and
    numbers carry no thousands separator (1,200 could be read either way, so neither is guessed).

    >>> _comma_message("1,200", "m", LENGTH)
    "has a thousands separator in '1,200': write 1200 m (or 1.2 m if the comma is a decimal mark)"
    >>> _comma_message("0,2", "m", LENGTH)
    "has a decimal comma in '0,2': the decimal mark is a point, so write 0.2 m"
    """
    def written(n: str) -> str:
        if unit:
            return f"{n} {unit}"
        if kind is RATIO or not kind.suggested:
            return n
        return f"{n} {kind.suggested[0]}"

    if _THOUSANDS.match(number):
        plain = number.replace(",", "")
        as_decimal = number.count(",") == 1 and "." not in number
        decimal = number.replace(",", ".").rstrip("0").rstrip(".") if as_decimal else ""
        alternative = f" (or {written(decimal)} if the comma is a decimal mark)" if decimal else ""
        return f"has a thousands separator in '{number}': write {written(plain)}{alternative}"
    if number.count(",") == 1 and "." not in number:
        point = number.replace(",", ".")
        if point.startswith((".", "-.", "+.")):
            point = point.replace(".", "0.", 1)
        return f"has a decimal comma in '{number}': the decimal mark is a point, so write {written(point)}"
    return (f"has commas in its number '{number}': write the number with a decimal point and no separators, "
            f"e.g. {kind.example}")


def _no_unit_message(number: str, kind: Kind) -> str:
    """What to write when a physical quantity is typed as a bare number.

    >>> _no_unit_message("300", LENGTH)
    'needs a unit: write 300 m, 300 mm or 300 ft (a length)'
    """
    units = [f"{number} {u}" for u in kind.suggested]
    if not units:
        return f"needs a unit: {kind.name}, e.g. {kind.example}"
    listed = units[0] if len(units) == 1 else ", ".join(units[:-1]) + " or " + units[-1]
    return f"needs a unit: write {listed} ({kind.name})"


def parse_quantity(text: object, kind: Kind, path: str) -> float:
    """Parse ``text`` such as ``'150 mm'`` into an SI float of ``kind``.

    A bare number is accepted only for plain ratios; every physical quantity
    needs its unit, since a missing unit is the commonest mistake on a sheet.

    >>> round(parse_quantity("6 in", LENGTH, "pipe.diameter"), 12)
    0.1524
    >>> round(parse_quantity("12 degC", TEMPERATURE, "liquid.temperature"), 2)
    285.15
    >>> parse_quantity("85 %", RATIO, "turbine.efficiency")
    0.85
    >>> parse_quantity("360 m3/h", FLOW, "q"), parse_quantity("0.01 degC", TEMPERATURE, "T")
    (0.1, 273.16)
    >>> parse_quantity("1,200 m", LENGTH, "L")
    Traceback (most recent call last):
    ...
    calc.units.InputError: L: has a thousands separator in '1,200': write 1200 m (or 1.2 m if the comma is a decimal mark) (got '1,200 m')
    """
    if isinstance(text, bool):
        raise InputError(path, text, f"must be {kind.name}, e.g. {kind.example}")
    if isinstance(text, (int, float)):
        if kind is RATIO:
            value = float(text)
            if not math.isfinite(value):
                raise InputError(path, text, "must be a finite number")
            return value
        raise InputError(path, text, _no_unit_message(f"{text:g}", kind))
    if not isinstance(text, str) or not text.strip():
        raise InputError(path, text, f"is empty: enter {kind.name}, e.g. {kind.example}")
    key = (text, kind.si)
    value = _PARSED.get(key)
    if value is None:
        value = _parse_text(text, kind, path)
        if len(_PARSED) >= PARSED_KEPT:
            _PARSED.clear()
        _PARSED[key] = value
    return value


#: Texts parsed to SI values, by (text, SI unit): a sheet holds the same few strings over and over,
#: every case re-reads them and the unit library takes some 170 microseconds a string. Only good
#: values are kept (an error's message depends on the field); the store is emptied when full.
_PARSED: dict[tuple[str, str], float] = {}
PARSED_KEPT = 20000


#: `_factor`'s answer for a unit of another kind of quantity than the field's.
_WRONG_KIND = object()


@lru_cache(maxsize=512)
def _factor(spelled: str, si: str):
    """The factor from the unit ``spelled`` to ``si`` (a unit with no offset), None for no unit pint knows,
    `_WRONG_KIND` for a unit of another kind; typed values share it, so pint parses each unit once."""
    try:
        q = Q_(1.0, spelled)
    except Exception:  # pint's parser raises assorted error types on garbage
        return None
    target = Q_(1.0, si).dimensionality if si else Q_(1.0, "dimensionless").dimensionality
    if q.dimensionality != target:
        return _WRONG_KIND
    return float(q.to(si).magnitude) if si else float(q.to("dimensionless").magnitude)


def _parse_text(text: str, kind: Kind, path: str) -> float:
    """`parse_quantity` of a non-empty string, through the unit library."""
    if len(text) > 64:
        raise InputError(path, text[:64] + "…", "is too long for a value with its unit")
    text_in = text
    text = text.replace("\u2212", "-")
    # A comma in the number is refused with how to write it: 1,200 is one thousand two hundred to some
    # and one point two to others, and a guess either way would put a wrong number on the sheet.
    comma = _COMMA_NUMBER.match(text)
    if comma and re.search(r"\d", comma.group(1)):
        raise InputError(path, text_in, _comma_message(comma.group(1), comma.group(2), kind))
    m = _NUMBER.match(text)
    if not m:
        raise InputError(path, text, f"must start with a number: {kind.name}, e.g. {kind.example}")
    number = float(m.group(1))
    unit = m.group(2)
    if not math.isfinite(number):
        raise InputError(path, text, "must be a finite number")
    if not unit:
        if kind is RATIO:
            return number
        raise InputError(path, text, _no_unit_message(m.group(1), kind))
    spelled = unit_text(unit)
    if not unit_allowed(spelled):
        raise InputError(path, text, f"'{unit}' is not a unit: write unit names with at most small powers, "
                                     f"e.g. {kind.example}")
    if kind.si != "K":  # a unit without an offset: its factor to SI, worked out once a unit (pint multiplies so too)
        factor = _factor(spelled, kind.si)
        if factor is None:
            raise InputError(path, text, f"'{unit}' is not a unit we know: enter {kind.name}, e.g. {kind.example}")
        if factor is _WRONG_KIND:
            raise InputError(path, text, f"must be {kind.name}, e.g. {kind.example}")
        value = number * factor
        if not math.isfinite(value):
            raise InputError(path, text, "must be a finite number")
        return value
    try:
        q = Q_(number, spelled)
    except Exception:  # pint's parser raises assorted error types on garbage
        raise InputError(path, text, f"'{unit}' is not a unit we know: enter {kind.name}, e.g. {kind.example}") from None
    if q.dimensionality != kind.dimensionality:
        raise InputError(path, text, f"must be {kind.name}, e.g. {kind.example}")
    value = float(q.to(kind.si).magnitude) if kind.si else float(q.to("dimensionless").magnitude)
    if not math.isfinite(value):
        raise InputError(path, text, "must be a finite number")
    if kind.si == "K":  # a temperature (of either unit system's examples)
        # The offset of degC and degF leaves round-off (0.01 degC -> 273.15999999999997 K, just below
        # the triple point); no typed temperature carries 12 significant figures, so drop it.
        value = float(f"{value:.12g}")
    return value


# Display unit systems: quantity kind -> (unit for pint, label on screen).
DISPLAY = {
    "SI": {
        "flow": ("L/s", "L/s"),
        "length": ("m", "m"),
        "head": ("m", "m"),
        "diameter": ("mm", "mm"),
        "roughness": ("mm", "mm"),
        "velocity": ("m/s", "m/s"),
        "pressure": ("kPa", "kPa"),
        "power": ("kW", "kW"),
        "speed": ("m/s", "m/s"),
    },
    "US": {
        "flow": ("gpm", "gpm"),
        "length": ("ft", "ft"),
        "head": ("ft", "ft"),
        "diameter": ("in", "in"),
        "roughness": ("in", "in"),
        "velocity": ("ft/s", "ft/s"),
        "pressure": ("psi", "psi"),
        "power": ("hp", "hp"),
        "speed": ("ft/s", "ft/s"),
    },
}

_SI_OF = {
    "flow": "m^3/s",
    "length": "m",
    "head": "m",
    "diameter": "m",
    "roughness": "m",
    "velocity": "m/s",
    "pressure": "Pa",
    "power": "W",
    "speed": "m/s",
}
_FACTORS: dict[tuple[str, str], float] = {}


def to_display(value_si: float, quantity: str, system: str = "SI") -> tuple[float, str]:
    """Convert an SI float to the display unit of ``system``; returns (value, unit label).

    >>> value, label = to_display(0.04, "flow", "SI"); round(value, 9), label
    (40.0, 'L/s')
    """
    unit, label = DISPLAY[system][quantity]
    key = (quantity, system)
    factor = _FACTORS.get(key)
    if factor is None:
        factor = float(Q_(1.0, _SI_OF[quantity]).to(unit).magnitude)
        _FACTORS[key] = factor
    return value_si * factor, label


def fmt(value: float | None, sig: int = 4) -> str:
    """A number with ``sig`` significant figures, no exponent for everyday magnitudes; a dash for NaN.

    >>> fmt(0.0123456)
    '0.01235'
    >>> fmt(123456.0)
    '123456'
    >>> fmt(float('nan'))
    '–'
    """
    if value is None or not math.isfinite(value):
        return "–"
    if value == 0:
        return "0"
    mag = math.floor(math.log10(abs(value)))
    if mag >= 6 or mag <= -5:
        return f"{value:.{sig - 1}e}"
    decimals = max(sig - 1 - mag, 0)
    return f"{value:.{decimals}f}"
