"""Reading a sheet document's fields: each failure is recorded with its field's path and reading goes on."""

from __future__ import annotations

from dataclasses import dataclass

from calc.model.fields import MAX_COUNT, MAX_KEY_SHOWN, MAX_TEXT, MAX_UNKNOWN_REPORTED
from calc.units import (
    AREA,
    DENSITY,
    FLOW,
    INERTIA,
    LENGTH,
    MODULUS,
    POWER,
    PRESSURE,
    ROTATION,
    SPEED,
    TIME,
    VISCOSITY,
    VOLUME,
    InputError,
    Kind,
    in_system,
    parse_quantity,
    to_display,
)


@dataclass(frozen=True)
class Span:
    """The widest a value of one role can be on a real line; beyond it the unit was surely a slip
    (``60 parsecs`` for a run's length), and the value is refused beside its field rather than solved.

    ``hi`` bounds the magnitude (SI), ``lo`` (if any) the smallest positive value; ``what`` and
    ``lo_what`` say how a value beyond them is wrong ('longer than any pipe line'); ``shown`` is the display quantity (`calc.units.DISPLAY`) the value is given in, or
    the SI unit when there is none; ``limit`` the bound as words, in each unit system.
    """

    hi: float
    what: str
    shown: str
    limit: dict
    lo: float | None = None
    lo_what: str = ""
    lo_limit: dict | None = None


#: The limits of plausibility, by role (common practice: each is far beyond any line built, so no real
#: value is refused, and far short of the slips that reach them: a unit of astronomy, a bore in km).
SPANS = {
    # the longest water transfer lines are some hundreds of km between stations
    "length": Span(2e6, "longer than any pipe line", "length", {"SI": "2000 km", "US": "1240 miles"}),
    # the earth's surface runs from about -11 km (ocean trenches) to +9 km
    "elevation": Span(1.2e4, "beyond any elevation on earth", "length", {"SI": "12 km either side of the datum",
                                                                  "US": "39 000 ft either side of the datum"}),
    # the largest penstocks and tunnels are some 15 m across; below 1 mm a bore is a capillary, not a pipe
    "bore": Span(20.0, "wider than any pipe bore", "diameter", {"SI": "20 m", "US": "65 ft"},
                 lo=1e-3, lo_what="narrower than any pipe bore", lo_limit={"SI": "1 mm", "US": "0.04 in"}),
    "wall": Span(2.0, "thicker than any pipe wall", "diameter", {"SI": "2 m", "US": "6.5 ft"}),
    # the highest heads of hydro plants and multistage pumps are some 2000 m
    "head": Span(1e4, "more than any machine's head", "head", {"SI": "10 000 m", "US": "32 800 ft"}),
    "flow": Span(1e5, "more than any line carries", "flow", {"SI": "100 000 m³/s", "US": "1.6e9 gpm"}),
    "pressure": Span(1e8, "more than any water line holds", "pressure", {"SI": "100 MPa (1000 bar)", "US": "14 500 psi"}),
    "power": Span(1e10, "more than any machine's power", "power", {"SI": "10 GW", "US": "13.4 million hp"}),
    "velocity": Span(100.0, "faster than any flow in a pipe", "velocity", {"SI": "100 m/s", "US": "330 ft/s"}),
    "time": Span(86400.0, "longer than the events of a line take", "s", {"SI": "one day", "US": "one day"}),
    "density": Span(2.5e4, "more than any liquid's density", "kg/m³", {"SI": "25 000 kg/m³", "US": "25 000 kg/m³"}),
    "viscosity": Span(1e4, "more than any liquid's viscosity", "Pa·s", {"SI": "10 000 Pa·s", "US": "10 000 Pa·s"}),
    "modulus": Span(1e13, "more than any material's modulus", "Pa", {"SI": "10 000 GPa", "US": "10 000 GPa"}),
    # the largest surge shafts are some tens of m across; a vessel of a million m3 is a reservoir
    "area": Span(1e5, "larger than any surge tank", "m²", {"SI": "100 000 m²", "US": "100 000 m²"}),
    "volume": Span(1e6, "larger than any vessel on a line", "m³", {"SI": "1 000 000 m³", "US": "1 000 000 m³"}),
    "inertia": Span(1e8, "more than any machine's inertia", "kg·m²", {"SI": "1e8 kg·m²", "US": "1e8 kg·m²"}),
    "rotation": Span(1e4, "faster than any pump turns", "rad/s", {"SI": "95 000 rpm", "US": "95 000 rpm"}),
    "wave_speed": Span(3000.0, "faster than a pressure wave in any water pipe", "m/s",
                       {"SI": "3000 m/s", "US": "9800 ft/s"}, lo=10.0, lo_what="slower than a pressure wave "
                       "in any water pipe", lo_limit={"SI": "10 m/s", "US": "33 ft/s"}),
}
#: The role of a quantity when its field names none.
_DEFAULT_SPAN = {LENGTH.name: "length", FLOW.name: "flow", PRESSURE.name: "pressure", POWER.name: "power",
                 SPEED.name: "velocity", TIME.name: "time", DENSITY.name: "density", VISCOSITY.name: "viscosity",
                 MODULUS.name: "modulus", AREA.name: "area", VOLUME.name: "volume", INERTIA.name: "inertia",
                 ROTATION.name: "rotation"}


class Missing(InputError):
    """A value the line needs and the sheet does not give yet: a request ("give the run's length"), not
    a mistake. The page asks for it beside its field and the line waits for it; the stored sheet may
    lack such values, never hold a wrong one (server/edits.py)."""

    request = True


def is_request(error: object) -> bool:
    """Whether a parse error only asks for a value not given yet (`Missing`), rather than refusing one."""
    return isinstance(error, Missing)


class Reader:
    """Reads fields out of the document; each failure is recorded and reading goes on."""

    def __init__(self, system: str = "SI"):
        self.errors: list[InputError] = []
        self.system = system  # the sheet's unit system (header.units): the examples messages give
        self.unknown_left_out = 0  # unknown keys past MAX_UNKNOWN_REPORTED
        self.unknown_left_out_in: set[str] = set()  # the groups those keys were in
        self._unknown_reported = 0

    def fail(self, path, value, message):
        self.errors.append(InputError(path, value, message))
        return None

    def ask(self, path, value, message):
        """Record a request for a value not given yet (`Missing`)."""
        self.errors.append(Missing(path, value, message))
        return None

    def length_text(self, x: float, sig: int = 4) -> str:
        """A small length (a bore, a roughness) in the sheet's units, for a message: '50 mm', '1.969 in'."""
        shown, unit = to_display(x, "diameter", self.system)
        return f"{shown:.{sig}g} {unit}"

    def known(self, d: dict, path: str, fields, what: str, elsewhere: dict | None = None):
        """Refuse every key of ``d`` not in ``fields``: ``what`` names the group in the message
        (e.g. "a pipe run"); ``elsewhere`` maps a key that belongs to another group to the message saying so."""
        listed = ", ".join(fields)
        for key in d:
            if key in fields:
                continue
            if self._unknown_reported >= MAX_UNKNOWN_REPORTED:
                self.unknown_left_out += 1
                self.unknown_left_out_in.add(path)
                continue
            self._unknown_reported += 1
            name = str(key)
            name = name if len(name) <= MAX_KEY_SHOWN else name[:MAX_KEY_SHOWN] + "…"
            where = (elsewhere or {}).get(key)
            message = where or f"is not a field of {what} (the fields are: {listed})"
            self.fail(f"{path}.{name}" if path else name, name, message)

    def report_unknown_left_out(self):
        """One error for the unknown keys past the first ``MAX_UNKNOWN_REPORTED``, at their group if they share one."""
        n = self.unknown_left_out
        if n:
            groups = self.unknown_left_out_in
            path = next(iter(groups)) if len(groups) == 1 else ""
            self.fail(path, f"{n} keys", f"has {n} more fields this program does not know "
                                         f"(only the first {MAX_UNKNOWN_REPORTED} are listed)")

    @staticmethod
    def blank(v) -> bool:
        return v is None or (isinstance(v, str) and not v.strip())

    def obj(self, d, key, path) -> dict:
        v = d.get(key) if isinstance(d, dict) else None
        if v is None:
            return {}
        if not isinstance(v, dict):
            self.fail(path, v, "must be a group of fields")
            return {}
        return v

    def lst(self, d, key, path, limit) -> list:
        v = d.get(key)
        if v is None:
            return []
        if not isinstance(v, list):
            self.fail(path, v, "must be a list")
            return []
        if len(v) > limit:
            self.fail(path, f"{len(v)} items", f"has {len(v)} items; at most {limit} are allowed")
            return []
        return v

    def qty(self, d, key, path, kind: Kind, *, required=True, default=None, lo=None, lo_open=False,
            hi=None, hi_open=False, what=None, ask=None, span=None):
        """A quantity field as an SI float; a required one left empty is asked for (``ask``, else 'give ``what``').

        ``span`` names the value's role in `SPANS` (its kind's role if not given): a value beyond it is refused.
        """
        v = d.get(key)
        span = SPANS.get(span or _DEFAULT_SPAN.get(kind.name, ""))
        kind = in_system(kind, self.system)
        if self.blank(v):
            if required:
                return self.ask(path, v, ask or f"give {what or kind.name}")
            return default
        try:
            x = parse_quantity(v, kind, path)
        except InputError as e:
            self.errors.append(e)
            return None
        what = what or "the value"
        if lo is not None and (x < lo or (lo_open and x == lo)):
            word = "greater than" if lo_open else "at least"
            return self.fail(path, v, f"{what} must be {word} {lo:g}" if lo else
                             f"{what} must be {'positive' if lo_open else 'zero or more'}")
        if hi is not None and (x > hi or (hi_open and x == hi)):
            return self.fail(path, v, f"{what} must be {'below' if hi_open else 'at most'} {hi:g}")
        if span is not None and x is not None:
            return self.plausible(x, span, path, v)
        return x

    def plausible(self, x: float, span: Span, path: str, v) -> float | None:
        """``x`` if it lies within ``span``; else the error saying what it is and the widest it can be."""
        system = self.system if self.system in span.limit else "SI"
        if abs(x) > span.hi:
            return self.fail(path, v, f"is {self.value_text(x, span)}, {span.what} (at most "
                                      f"{span.limit[system]}): check the unit")
        if span.lo is not None and 0 < abs(x) < span.lo:
            return self.fail(path, v, f"is {self.value_text(x, span)}, {span.lo_what} (at least "
                                      f"{span.lo_limit[system]}): check the unit")
        return x

    def value_text(self, x: float, span: Span) -> str:
        """``x`` in the sheet's display unit for the span, four figures ('1.851e+18 m')."""
        try:
            shown, unit = to_display(x, span.shown, self.system)
        except KeyError:
            shown, unit = x, span.shown
        return f"{shown:.4g} {unit}"

    def text(self, d, key, path, limit=MAX_TEXT, default=""):
        v = d.get(key, default)
        if v is None:
            return default
        if not isinstance(v, str):
            return self.fail(path, v, "must be text")
        if len(v) > limit:
            return self.fail(path, v[:40] + "…", f"is {len(v)} characters long; at most {limit} are allowed")
        return v

    def choice(self, d, key, path, options, default=None):
        v = d.get(key, default)
        if self.blank(v) and default is not None:
            return default
        if v not in options:
            return self.fail(path, v, "must be one of: " + ", ".join(options))
        return v

    def count(self, d, key, path):
        v = d.get(key, 1)
        if self.blank(v):
            return 1
        try:
            n = int(v) if not isinstance(v, bool) and float(v) == int(float(v)) else None
        except (TypeError, ValueError, OverflowError):
            n = None
        if n is None or not 1 <= n <= MAX_COUNT:
            return self.fail(path, v, f"must be a whole number from 1 to {MAX_COUNT}")
        return n
