"""How the record writes numbers and values: significant figures, powers of ten, display units."""

from __future__ import annotations

import math
import re

from calc.units import DENSITY, FLOW, LENGTH, MODULUS, POWER, PRESSURE, RATIO, TEMPERATURE, VISCOSITY, fmt, to_display

#: Significant figures: results as printed, and the numbers substituted into equations (one more,
#: so that a checker repeating a step on a calculator lands on the printed result).
SIG = 4
SUB_SIG = 5
_SI_UNIT = {LENGTH: "m", FLOW: "m³/s", PRESSURE: "Pa", POWER: "W", DENSITY: "kg/m³", VISCOSITY: "Pa·s",
            MODULUS: "Pa", TEMPERATURE: "K", RATIO: "–"}
#: Quantities the record shows in the sheet's display units; other values are plain numbers.
DISPLAY_KINDS = {"flow", "length", "head", "diameter", "roughness", "velocity", "pressure", "power", "speed"}
_SUPERSCRIPT = str.maketrans("0123456789-+", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺")


def num(x: float | None, sig: int = SIG) -> str:
    """A number at ``sig`` significant figures, with a power of ten written as ×10ⁿ; a dash if unknown.

    >>> num(0.0139663), num(5.4034e-06), num(370615.8), num(None)
    ('0.01397', '5.403×10⁻⁶', '370616', '–')
    """
    text = fmt(x, sig)
    if "e" in text:
        mantissa, exponent = text.split("e")
        return f"{mantissa}×10{str(int(exponent)).translate(_SUPERSCRIPT)}"
    return text


def sub(x: float | None) -> str:
    """A number substituted into an equation: SUB_SIG figures, trailing zeros dropped.

    >>> sub(0.2776), sub(640.0), sub(9.80665)
    ('0.2776', '640', '9.8066')
    """
    text = num(x, SUB_SIG)
    mantissa, times, power = text.partition("×")
    if "." in mantissa:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return mantissa + times + power


def si(x: float | None) -> str:
    """An SI input value: six significant figures, trailing zeros dropped.

    >>> si(640.0), si(0.2776), si(4.5e-05), si(262000.7773)
    ('640', '0.2776', '4.5×10⁻⁵', '262001')
    """
    text = num(x, 6)
    mantissa, times, power = text.partition("×")
    if "." in mantissa:
        mantissa = mantissa.rstrip("0").rstrip(".")
    return mantissa + times + power


def paren(x: float) -> str:
    """A substituted number, in brackets when negative or written with a power of ten."""
    s = sub(x)
    return f"({s})" if (x < 0 or "×" in s) else s


def shown(value: float | None, quantity: str, system: str, sig: int = SIG) -> str:
    """An SI value in the sheet's display units with its unit label.

    >>> shown(0.11891, "flow", "SI"), shown(0.11891, "flow", "US")
    ('118.9 L/s', '1885 gpm')
    """
    if value is None or not math.isfinite(value):
        return "–"
    v, label = to_display(value, quantity, system)
    return f"{num(v, sig)} {label}"


def as_text(v) -> str:
    return v if isinstance(v, str) else ("" if v is None else str(v))


def split_detail(source: str) -> tuple[str, str]:
    """A table source 'citation [which row]' split into its citation and the row detail.

    >>> split_detail("Moody (1944). Table. ['cast iron', 0.00085 ft]")
    ('Moody (1944). Table.', "'cast iron', 0.00085 ft")
    """
    m = re.match(r"^(.*?)\s*\[([^\[\]]*)\]\s*$", source or "", re.S)
    if m:
        return m.group(1).strip(), m.group(2).strip()
    return (source or "").strip(), ""
