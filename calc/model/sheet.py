"""The sheet document: parse and check it into a Line, collecting every error with the path of its field."""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

from calc import friction, tables
from calc.model import implied
from calc.model.elements import Curve, Fitting, Line, Node, PipeRun, Pump, Turbine, Valve
from calc.model.ids import ensure_ids, id_problem  # noqa: F401  (ensure_ids: the documents the form saves)
from calc.model.implied import ENTRANCE_KEYS
from calc.model.settings import CheckSettings
from calc.units import (
    DENSITY,
    FLOW,
    LENGTH,
    MODULUS,
    POWER,
    PRESSURE,
    RATIO,
    SPEED,
    TEMPERATURE,
    TIME,
    VISCOSITY,
    InputError,
    Kind,
    in_system,
    parse_quantity,
    to_display,
)
from calc.water import custom_liquid, water

FORMAT = "headsheet-sheet"
VERSION = 1

#: Size limits on lists and text, so that a pasted list cannot stall the solver.
#: Velocity coefficient of a nozzle when none is typed [-]: 0.97-0.99 for well-made impulse-turbine
#: nozzles (common practice; a maker's figure replaces it).
NOZZLE_CV = 0.98
MAX_ELEMENTS = 200
MAX_FITTINGS = 50
MAX_POINTS = 100
MAX_TEXT = 500
MAX_LABEL = 100
MAX_COUNT = 1000

HEADER_FIELDS = ("project", "calc_number", "title", "purpose")
NODE_KINDS = {"start": ("reservoir", "pressure"), "end": ("reservoir", "pressure", "jet")}
RESTRAINTS = ("anchored", "anchored_upstream", "expansion_joints")

#: A new element, fitting or point carries no invented numbers: every value it needs is empty, and the
#: parser asks for it (`Missing`). Choices that are not numbers (a material, a mode, a fitting type) start
#: at a plain first choice; a curve starts with the three empty points a curve needs at least.
CURVE_POINT_TEMPLATE = {"flow": "", "head": "", "efficiency": "", "npsh_required": ""}
PROFILE_POINT_TEMPLATE = {"chainage": "", "elevation": ""}
FITTING_TEMPLATE = {"type": "k", "K": "", "count": 1, "label": ""}
_EMPTY_CURVE = [dict(CURVE_POINT_TEMPLATE) for _ in range(3)]
ELEMENT_TEMPLATES = {
    "pipe": {"kind": "pipe", "label": "Pipe run", "length": "", "diameter": "", "size": None,
             "material": "steel-commercial", "condition": "new", "roughness": "", "end_elevation": "",
             "profile": [], "fittings": []},
    "turbine": {"kind": "turbine", "label": "Turbine", "mode": "power", "power": "", "efficiency": "", "head": "",
                "curve": copy.deepcopy(_EMPTY_CURVE)},
    "pump": {"kind": "pump", "label": "Pump", "mode": "curve", "speed_ratio": "", "efficiency": "", "head": "",
             "curve": copy.deepcopy(_EMPTY_CURVE)},
    "valve": {"kind": "valve", "label": "Valve", "K": "", "diameter": ""},
}

#: Every key a sheet document may hold, by where it sits; the parser refuses any other key
#: (``calc/model/schema.py`` lists the same keys, ``tests/calc/model/test_unknown_keys.py`` compares them).
#: A group whose kind or mode the form switches keeps the keys of its other kinds or modes (the form
#: never deletes a key), so those are accepted: the liquid holds the keys of water and of a typed liquid,
#: the end those of a reservoir, a pressure and a jet, and a fitting the K values of every type.
SHEET_FIELDS = ("format", "version", "header", "liquid", "site", "settings", "start", "end", "elements")
HEADER_KEYS = HEADER_FIELDS + ("revision_scheme", "units")
LIQUID_FIELDS = ("kind", "temperature", "name", "density", "viscosity", "vapour_pressure", "bulk_modulus")
SITE_FIELDS = ("atmospheric_pressure",)
SETTINGS_FIELDS = ("friction_method", "checks")
CHECK_FIELDS = ("velocity_max", "velocity_max_suction", "velocity_min", "npsh_margin_ratio", "npsh_margin_min",
                "bep_low", "bep_high", "k_uncertainty", "roughness_low", "roughness_high", "surge_allowance",
                "surge_closure_time")
NODE_FIELDS = {"start": ("kind", "elevation", "pressure", "outlet_elevation", "entrance"),
               "end": ("kind", "elevation", "pressure", "nozzle_diameter", "velocity_coefficient")}
#: The keys of each element kind; a key of another kind is refused with a message naming that kind
#: (an element's kind never changes on the form, so no element gathers another kind's keys).
ELEMENT_FIELDS = {
    "pipe": ("kind", "id", "label", "length", "diameter", "size", "material", "condition", "roughness",
             "wall_thickness", "end_elevation", "rating", "restraint", "profile", "fittings"),
    "turbine": ("kind", "id", "label", "mode", "power", "efficiency", "head", "curve"),
    "pump": ("kind", "id", "label", "mode", "speed_ratio", "efficiency", "head", "curve"),
    "valve": ("kind", "id", "label", "K", "diameter"),
}
ELEMENT_NAMES = {"pipe": "a pipe run", "turbine": "a turbine", "pump": "a pump", "valve": "a valve"}
SIZE_FIELDS = ("standard", "nominal", "class")
FITTING_FIELDS = ("type", "count", "label", "K", "K1", "Kinf", "Ki", "Kd")
PROFILE_POINT_FIELDS = ("chainage", "elevation")
CURVE_POINT_FIELDS = ("flow", "head", "efficiency", "npsh_required")
#: Unknown keys reported one by one; past these, one more error gives how many were left out.
MAX_UNKNOWN_REPORTED = 20
#: An unknown key is shown (in its error's path and value) cut to this many characters.
MAX_KEY_SHOWN = 40


def blank_sheet() -> dict:
    """A new sheet with nothing invented: water between two reservoirs through one pipe run, with every
    value the line needs left empty for the engineer to give (the parser asks for each, `Missing`).

    Only choices are made (SI units, water, Colebrook, reservoirs at both ends, a steel run); a value
    with a stated default (a surface pressure of 0 for an open tank, the standard atmosphere) is left
    empty too, and its field says what empty means.

    >>> sorted(e.path for e in parse(blank_sheet()).requests)  # doctest: +NORMALIZE_WHITESPACE
    ['elements.0.diameter', 'elements.0.end_elevation', 'elements.0.length', 'end.elevation',
     'liquid.temperature', 'start.elevation']
    """
    pipe = copy.deepcopy(ELEMENT_TEMPLATES["pipe"])
    pipe["label"] = "Pipe run 1"
    return {
        "format": FORMAT, "version": VERSION,
        "header": {"project": "", "calc_number": "", "title": "New sheet", "purpose": "",
                   "revision_scheme": "letters", "units": "SI"},
        "liquid": {"kind": "water", "temperature": ""},
        "site": {"atmospheric_pressure": ""},
        "settings": {"friction_method": "colebrook"},
        "start": {"kind": "reservoir", "elevation": "", "pressure": "", "outlet_elevation": ""},
        "end": {"kind": "reservoir", "elevation": "", "pressure": ""},
        "elements": [pipe],
    }


class Missing(InputError):
    """A value the line needs and the sheet does not give yet: a request ("give the run's length"), not
    a mistake. The page asks for it beside its field and the line waits for it; the stored sheet may
    lack such values, never hold a wrong one (server/edits.py)."""

    request = True


def is_request(error: object) -> bool:
    """Whether a parse error only asks for a value not given yet (`Missing`), rather than refusing one."""
    return isinstance(error, Missing)


@dataclass
class Parsed:
    """The result of parsing: a Line when the sheet is whole, and every error found."""

    line: Line | None
    errors: list[InputError] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.errors

    def errors_by_path(self) -> dict[str, str]:
        return {e.path: e.message for e in self.errors}

    @property
    def requests(self) -> list[InputError]:
        """The values the line needs and the sheet does not give yet (`Missing`)."""
        return [e for e in self.errors if is_request(e)]

    @property
    def mistakes(self) -> list[InputError]:
        """The errors that refuse a value given (everything but the requests)."""
        return [e for e in self.errors if not is_request(e)]


class _Reader:
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
            hi=None, hi_open=False, what=None, ask=None):
        """A quantity field as an SI float; a required one left empty is asked for (``ask``, else 'give ``what``')."""
        v = d.get(key)
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
        return x

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


def parse(doc: object) -> Parsed:
    """Check a sheet document and build its Line; never raises on bad input.

    A value the line needs and the sheet leaves empty is asked for (`Missing`, in ``requests``):

    >>> parse(blank_sheet()).requests[0].message
    "give the water's temperature"
    >>> doc = blank_sheet(); pipe = doc["elements"][0]
    >>> doc["liquid"]["temperature"], doc["start"]["elevation"], doc["end"]["elevation"] = "15 degC", "100 m", "80 m"
    >>> pipe.update(length="500 m", diameter="150 mm", end_elevation="78 m")
    >>> parsed = parse(doc)
    >>> parsed.ok, len(parsed.line.elements)
    (True, 1)
    >>> pipe["length"] = "-5 m"
    >>> parse(doc).errors_by_path()
    {'elements.0.length': 'the length must be positive'}
    """
    r = _Reader()
    if not isinstance(doc, dict):
        r.fail("", type(doc).__name__, "the sheet must be a JSON object")
        return Parsed(None, r.errors)
    r.known(doc, "", SHEET_FIELDS, "a sheet")
    if doc.get("format", FORMAT) != FORMAT:
        r.fail("format", doc.get("format"), f"must be '{FORMAT}'")
    if doc.get("version", VERSION) != VERSION:
        r.fail("version", doc.get("version"), f"this program reads sheet format version {VERSION}")

    header = r.obj(doc, "header", "header")
    r.known(header, "header", HEADER_KEYS, "the header")
    hdr = {k: r.text(header, k, f"header.{k}") or "" for k in HEADER_FIELDS}
    hdr["revision_scheme"] = r.choice(header, "revision_scheme", "header.revision_scheme",
                                      ("letters", "numbers"), "letters")
    hdr["units"] = r.choice(header, "units", "header.units", ("SI", "US"), "SI")
    r.system = hdr["units"] or "SI"

    liquid_doc = r.obj(doc, "liquid", "liquid")
    r.known(liquid_doc, "liquid", LIQUID_FIELDS, "the liquid")
    liquid = _liquid(r, liquid_doc)
    site = r.obj(doc, "site", "site")
    r.known(site, "site", SITE_FIELDS, "the site")
    p_atm = r.qty(site, "atmospheric_pressure", "site.atmospheric_pressure", PRESSURE, required=False,
                  default=101325.0, lo=1000.0, hi=200000.0, what="the atmospheric pressure (absolute)")
    settings = r.obj(doc, "settings", "settings")
    r.known(settings, "settings", SETTINGS_FIELDS, "the settings")
    method = r.choice(settings, "friction_method", "settings.friction_method", tuple(friction.METHODS),
                      "colebrook")
    checks = r.obj(settings, "checks", "settings.checks")
    r.known(checks, "settings.checks", CHECK_FIELDS, "the check settings")
    check_settings = _check_settings(r, checks)

    start_doc, end_doc = r.obj(doc, "start", "start"), r.obj(doc, "end", "end")
    r.known(start_doc, "start", NODE_FIELDS["start"], "the start",
            {k: "is a field of a free jet, which only the end can be" for k in NODE_FIELDS["end"]
             if k not in NODE_FIELDS["start"]})
    r.known(end_doc, "end", NODE_FIELDS["end"], "the end",
            {k: "is a field of the start only" for k in NODE_FIELDS["start"] if k not in NODE_FIELDS["end"]})
    start = _node(r, start_doc, "start", liquid)
    end = _node(r, end_doc, "end", liquid)

    raw = r.lst(doc, "elements", "elements", MAX_ELEMENTS)
    elements = []
    z = start.pipe_elevation if start else None
    last_D = None
    pipe_before = False  # a pipe run comes before, whole or not: a valve takes its bore once it is given
    ids: dict[str, int] = {}
    for i, e in enumerate(raw):
        path = f"elements.{i}"
        if not isinstance(e, dict):
            r.fail(path, e, "must be a group of fields")
            continue
        kind = e.get("kind")
        _known_element_keys(r, e, path, kind)
        _element_id(r, e, path, ids)
        if kind == "pipe":
            el = _pipe(r, e, path)
            pipe_before = True
            last_D = el.D if el is not None else None
        elif kind == "turbine":
            el = _turbine(r, e, path)
        elif kind == "pump":
            el = _pump(r, e, path)
        elif kind == "valve":
            el = _valve(r, e, path, last_D, pipe_before)
        else:
            el = r.fail(f"{path}.kind", kind, "must be one of: pipe, turbine, pump, valve")
        elements.append(el)
    if not raw and not any(err.path == "elements" for err in r.errors):
        r.fail("elements", [], "add at least one pipe run")
    elif raw and not any(isinstance(e, dict) and e.get("kind") == "pipe" for e in raw):
        r.fail("elements", "no pipe run", "a line needs at least one pipe run")
    last_kind = raw[-1].get("kind") if raw and isinstance(raw[-1], dict) else None
    if end is not None and end.kind == "jet" and raw and last_kind not in ("pipe", "valve"):
        r.fail("end.kind", "jet", "a free jet must follow a pipe run or a valve")
    elif end is not None and end.kind == "jet" and end.nozzle_diameter and elements and elements[-1] is not None:
        bore = elements[-1].D
        if end.nozzle_diameter > bore:
            r.fail("end.nozzle_diameter", (doc.get("end") or {}).get("nozzle_diameter"),
                   f"is larger than the bore it is fitted to ({r.length_text(bore)}): a nozzle narrows the flow; "
                   "leave it empty for a jet from the open pipe end")
    del z
    r.report_unknown_left_out()
    if r.errors:
        return Parsed(None, r.errors)
    line = Line(start=start, end=end, elements=elements, liquid=liquid, method=method, p_atm=p_atm,
                header=hdr, settings={**settings, "checks": check_settings})
    return Parsed(implied.complete(line), [])


def _element_id(r: _Reader, e: dict, path: str, ids: dict[str, int]) -> None:
    """An element's stable id (``pipe-2``): optional (``ensure_ids`` gives one), unique in the sheet."""
    if "id" not in e or e["id"] in ("", None):
        return
    problem = id_problem(e["id"], ids)
    if problem:
        r.fail(f"{path}.id", e["id"], problem)
    else:
        ids[e["id"]] = int(path.rsplit(".", 1)[1])


def _known_element_keys(r: _Reader, e: dict, path: str, kind):
    """Refuse the keys an element of its kind does not have, naming the kind a key belongs to if another."""
    if not isinstance(kind, str) or kind not in ELEMENT_FIELDS:  # the kind itself is refused; a key of no kind at all is refused too
        every = tuple(dict.fromkeys(k for fields in ELEMENT_FIELDS.values() for k in fields))
        r.known(e, path, every, "any element")
        return
    own = ELEMENT_FIELDS[kind]
    elsewhere = {}
    for other, fields in ELEMENT_FIELDS.items():
        for k in fields:
            if k not in own:
                elsewhere.setdefault(k, []).append(ELEMENT_NAMES[other])
    r.known(e, path, own, ELEMENT_NAMES[kind],
            {k: f"is a field of {' or '.join(names)}, not of {ELEMENT_NAMES[kind]}" for k, names in elsewhere.items()})
    points = e.get("curve")
    if "curve" in own and isinstance(points, list) and len(points) <= MAX_POINTS:
        # Every mode's curve points, read or not (the points stay when the mode changes).
        for j, pt in enumerate(points):
            if isinstance(pt, dict):
                r.known(pt, f"{path}.curve.{j}", CURVE_POINT_FIELDS, "a curve point")


def _check_settings(r: _Reader, d: dict) -> CheckSettings:
    """``settings.checks``: the limits of the engineering checks and the uncertainty band (defaults if blank)."""
    p = "settings.checks"
    given = {}

    def put(name, value):
        if value is not None:
            given[name] = value

    put("velocity_max", r.qty(d, "velocity_max", f"{p}.velocity_max", SPEED, required=False, lo=0.0,
                              lo_open=True, what="the velocity limit"))
    put("velocity_max_suction", r.qty(d, "velocity_max_suction", f"{p}.velocity_max_suction", SPEED,
                                      required=False, lo=0.0, lo_open=True, what="the suction velocity limit"))
    put("velocity_min", r.qty(d, "velocity_min", f"{p}.velocity_min", SPEED, required=False, lo=0.0,
                              what="the lowest velocity"))
    put("npsh_margin_ratio", r.qty(d, "npsh_margin_ratio", f"{p}.npsh_margin_ratio", RATIO, required=False,
                                   lo=1.0, hi=5.0, what="the NPSH margin ratio (NPSHA / NPSHR)"))
    put("npsh_margin_min", r.qty(d, "npsh_margin_min", f"{p}.npsh_margin_min", LENGTH, required=False, lo=0.0,
                                 hi=50.0, what="the NPSH margin"))
    def percent(name, lo, hi, what, lo_open=False):
        x = r.qty(d, name, f"{p}.{name}", RATIO, required=False, what=what)
        if x is not None and (x < lo or (lo_open and x == lo) or x > hi):
            word = "above" if lo_open else "from"
            return r.fail(f"{p}.{name}", d.get(name),
                          f"{what} must be {word} {lo * 100:g} % {'and at most' if lo_open else 'to'} {hi * 100:g} %")
        return x

    put("bep_low", percent("bep_low", 0.0, 1.0, "the low end of the preferred range (of best-efficiency flow)",
                           lo_open=True))
    put("bep_high", percent("bep_high", 1.0, 3.0, "the high end of the preferred range (of best-efficiency flow)"))
    put("k_uncertainty", percent("k_uncertainty", 0.0, 0.9, "the K uncertainty"))
    put("surge_allowance", r.qty(d, "surge_allowance", f"{p}.surge_allowance", PRESSURE, required=False,
                                 lo=0.0, what="the surge allowance"))
    put("surge_closure_time", r.qty(d, "surge_closure_time", f"{p}.surge_closure_time", TIME, required=False,
                                    lo=0.0, hi=3600.0, what="the closure time"))
    for key in ("roughness_low", "roughness_high"):
        put(key, _roughness_setting(r, d, key, f"{p}.{key}"))
    s = CheckSettings(**given, given=tuple(given))
    if "velocity_min" in given and s.velocity_min >= s.velocity_max:
        r.fail(f"{p}.velocity_min", d.get("velocity_min"), "must be below velocity_max")
    lo, hi = s.roughness_low, s.roughness_high
    if lo and hi and lo[0] == hi[0] and lo[1] > hi[1]:
        r.fail(f"{p}.roughness_high", d.get("roughness_high"), "must not be below roughness_low")
    return s


def _roughness_setting(r: _Reader, d: dict, key: str, path: str):
    """A roughness bound: a percentage of each run's roughness ('50 %', 3) or one roughness for every run ('1 mm')."""
    v = d.get(key)
    if r.blank(v):
        return None
    try:
        x = parse_quantity(v, RATIO, path)
        kind = "factor"
    except InputError:
        try:
            x = parse_quantity(v, LENGTH, path)
            kind = "length"
        except InputError:
            return r.fail(path, v, "must be a percentage of each run's roughness, e.g. 300 %, or a roughness, "
                                   f"e.g. {r.length_text(0.001, 1)}")
    if kind == "factor" and not 0.0 < x <= 100.0:
        return r.fail(path, v, "the factor must be greater than 0 % and at most 10000 %")
    if kind == "length" and not 0.0 <= x < 0.05:
        return r.fail(path, v, f"the roughness must be zero or more and below {r.length_text(0.05)}")
    return (kind, x)


def _liquid(r: _Reader, d: dict):
    kind = r.choice(d, "kind", "liquid.kind", ("water", "custom"), "water")
    if kind == "water":
        T = r.qty(d, "temperature", "liquid.temperature", TEMPERATURE, ask="give the water's temperature")
        if T is None:
            return None
        try:
            return water(T)
        except ValueError as e:
            return r.fail("liquid.temperature", d.get("temperature"), str(e))
    if kind == "custom":
        name = r.text(d, "name", "liquid.name", MAX_LABEL) or "liquid"
        rho = r.qty(d, "density", "liquid.density", DENSITY, lo=0.0, lo_open=True, what="the density")
        mu = r.qty(d, "viscosity", "liquid.viscosity", VISCOSITY, lo=0.0, lo_open=True, what="the viscosity")
        pv = r.qty(d, "vapour_pressure", "liquid.vapour_pressure", PRESSURE, lo=0.0,
                   what="the vapour pressure (absolute)")
        K = r.qty(d, "bulk_modulus", "liquid.bulk_modulus", MODULUS, required=False, lo=0.0, lo_open=True,
                  what="the bulk modulus")
        if None in (rho, mu, pv):
            return None
        try:
            return custom_liquid(name, rho, mu, pv, K)
        except ValueError as e:
            return r.fail("liquid", name, str(e))
    return None


def _node(r: _Reader, d: dict, which: str, liquid):
    kind = r.choice(d, "kind", f"{which}.kind", NODE_KINDS[which], "reservoir")
    z = r.qty(d, "elevation", f"{which}.elevation", LENGTH,
              ask={"reservoir": "give the water surface elevation", "jet": "give the elevation of the jet's centre"}
              .get(kind, "give the elevation"))
    p = r.qty(d, "pressure", f"{which}.pressure", PRESSURE, required=False, default=0.0)
    if p is not None and p < -101325.0:
        p = r.fail(f"{which}.pressure", d.get("pressure"), "a gauge pressure cannot be below -1 atm")
    outlet = None
    entrance = ENTRANCE_KEYS[0]
    if kind == "reservoir" and which == "start":
        outlet = r.qty(d, "outlet_elevation", f"{which}.outlet_elevation", LENGTH, required=False)
        if outlet is not None and z is not None and outlet > z:
            outlet = r.fail(f"{which}.outlet_elevation", d.get("outlet_elevation"),
                            f"is above the water surface ({d.get('elevation')}): a pipe leaving the reservoir there "
                            "draws air, not water, so the line cannot run; put the connection at or below the surface")
        entrance = r.choice(d, "entrance", f"{which}.entrance", ENTRANCE_KEYS, ENTRANCE_KEYS[0])
    nozzle = None
    cv = 1.0
    if kind == "jet":
        nozzle = r.qty(d, "nozzle_diameter", f"{which}.nozzle_diameter", LENGTH, required=False,
                       lo=0.0, lo_open=True, what="the nozzle diameter")
        # A nozzle loses a little head; a jet from the open pipe end, none beyond its velocity head.
        cv = r.qty(d, "velocity_coefficient", f"{which}.velocity_coefficient", RATIO, required=False,
                   default=NOZZLE_CV if nozzle else 1.0, lo=0.5, hi=1.0, what="the velocity coefficient")
    if kind is None or z is None or p is None or cv is None:
        return None
    return Node(kind=kind, elevation=z, pressure=p if kind != "jet" else 0.0,
                outlet_elevation=outlet, nozzle_diameter=nozzle, entrance=entrance or ENTRANCE_KEYS[0],
                velocity_coefficient=cv)


def _pipe(r: _Reader, e: dict, path: str):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    L = r.qty(e, "length", f"{path}.length", LENGTH, lo=0.0, lo_open=True, what="the length",
              ask="give the run's length")
    D = r.qty(e, "diameter", f"{path}.diameter", LENGTH, required=False, lo=0.0, lo_open=True,
              what="the diameter")
    wall = r.qty(e, "wall_thickness", f"{path}.wall_thickness", LENGTH, required=False, lo=0.0, lo_open=True,
                 what="the wall thickness")
    D_source = "typed by the user"
    size_obj = None
    size = e.get("size")
    if isinstance(size, dict):
        r.known(size, f"{path}.size", SIZE_FIELDS, "a pipe size")
    if D is None and r.blank(e.get("diameter")):
        if isinstance(size, dict) and not all(r.blank(size.get(k)) for k in ("standard", "nominal", "class")):
            try:
                size_obj = tables.pipe_size(str(size.get("standard")), str(size.get("nominal")),
                                            str(size.get("class")))
                D = size_obj.ID
                D_source = f"{size_obj.source}: {size_obj.nominal} {size_obj.klass}"
                if wall is None:
                    wall = size_obj.wall
            except LookupError as err:
                r.fail(f"{path}.size", size, str(err).strip("'\""))
        else:
            r.ask(f"{path}.diameter", e.get("diameter"),
                  "give the run's inner diameter, or choose a size from a table")
    if D is not None and L is not None and D > L * 10 and D > 5.0:
        r.fail(f"{path}.diameter", e.get("diameter"), "is larger than a pipe can be; check the unit")
    mat = None
    mkey = e.get("material")
    if not r.blank(mkey):
        try:
            mat = tables.material(str(mkey))
        except LookupError as err:
            r.fail(f"{path}.material", mkey, str(err).strip("'\""))
    eps = r.qty(e, "roughness", f"{path}.roughness", LENGTH, required=False, lo=0.0, what="the roughness")
    eps_source = "typed by the user"
    eps_aged = None
    if eps is None and not r.blank(e.get("roughness")):
        pass  # error already recorded
    elif eps is None:
        condition = r.choice(e, "condition", f"{path}.condition", ("new", "aged"), "new")
        if mat is not None and condition == "aged" and mat.eps_aged is None:
            r.fail(f"{path}.condition", "aged", f"the material table has no aged roughness for {mat.name}: "
                   "type a roughness instead")
        elif mat is not None and condition == "aged":
            eps, eps_source, eps_aged = mat.eps_aged, f"{mat.name}, aged: {mat.source_aged}", mat.eps_aged
        elif mat is not None:
            eps, eps_source, eps_aged = mat.eps_new, f"{mat.name}: {mat.source_roughness}", mat.eps_aged
        elif r.blank(mkey):
            r.ask(f"{path}.roughness", e.get("roughness"), "give the run's roughness, or choose a material")
    if eps is not None and D is not None and eps >= D / 2:
        r.fail(f"{path}.roughness", e.get("roughness"), "must be much smaller than the diameter; check the unit")
    z_end = r.qty(e, "end_elevation", f"{path}.end_elevation", LENGTH, ask="give the elevation at the run's end")
    rating = r.qty(e, "rating", f"{path}.rating", PRESSURE, required=False, lo=0.0, lo_open=True,
                   what="the pressure rating")
    restraint = r.choice(e, "restraint", f"{path}.restraint", RESTRAINTS, "anchored")
    profile = []
    for j, pt in enumerate(r.lst(e, "profile", f"{path}.profile", MAX_POINTS)):
        pp = f"{path}.profile.{j}"
        if not isinstance(pt, dict):
            r.fail(pp, pt, "must have a chainage and an elevation")
            continue
        r.known(pt, pp, PROFILE_POINT_FIELDS, "a profile point")
        s = r.qty(pt, "chainage", f"{pp}.chainage", LENGTH, lo=0.0, what="the chainage",
                  ask="give the point's chainage")
        zz = r.qty(pt, "elevation", f"{pp}.elevation", LENGTH, ask="give the ground elevation at the point")
        if s is not None and L is not None and s > L * (1 + 1e-9):
            r.fail(f"{pp}.chainage", pt.get("chainage"), "lies beyond the end of the run (chainage is from the run's start)")
        elif s is not None and zz is not None:
            profile.append((s, zz))
    fittings = []
    for j, ft in enumerate(r.lst(e, "fittings", f"{path}.fittings", MAX_FITTINGS)):
        f = _fitting(r, ft, f"{path}.fittings.{j}")
        if f is not None:
            fittings.append(f)
    if len(r.errors) > n_err:
        return None
    return PipeRun(label=label, L=L, D=D, eps=eps, end_elevation=z_end, fittings=fittings,
                   profile=profile, wall=wall, material=mat, size=size_obj, rating=rating,
                   restraint=restraint, eps_source=eps_source, D_source=D_source, eps_aged=eps_aged)


def _fitting(r: _Reader, ft, path: str):
    if not isinstance(ft, dict):
        return r.fail(path, ft, "must be a fitting")
    n_err = len(r.errors)
    r.known(ft, path, FITTING_FIELDS, "a fitting")
    kind = ft.get("type")
    count = r.count(ft, "count", f"{path}.count")
    label = r.text(ft, "label", f"{path}.label", MAX_LABEL) or ""
    if kind == "k":
        K = r.qty(ft, "K", f"{path}.K", RATIO, lo=0.0, what="K", ask="give the fitting's K")
        params, model, name, src = {"K": K}, "k", label or "loss (K typed)", "typed by the user"
    elif kind == "2k":
        K1 = r.qty(ft, "K1", f"{path}.K1", RATIO, lo=0.0, what="K1")
        Kinf = r.qty(ft, "Kinf", f"{path}.Kinf", RATIO, lo=0.0, what="K∞")
        params, model, name, src = {"K1": K1, "Kinf": Kinf}, "2k", label or "2-K fitting", "typed by the user (2-K, Hooper 1981)"
    elif kind == "3k":
        K1 = r.qty(ft, "K1", f"{path}.K1", RATIO, lo=0.0, what="K1")
        Ki = r.qty(ft, "Ki", f"{path}.Ki", RATIO, lo=0.0, what="Ki")
        Kd = r.qty(ft, "Kd", f"{path}.Kd", RATIO, lo=0.0, what="Kd")
        params, model, name, src = {"K1": K1, "Ki": Ki, "Kd": Kd}, "3k", label or "3-K fitting", "typed by the user (3-K, Darby 2001)"
    else:
        try:
            t = tables.fitting(str(kind))
        except LookupError as err:
            return r.fail(f"{path}.type", kind, str(err).strip("'\""))
        params, model, name, src = dict(t.params), t.model, t.name, t.source
    if len(r.errors) > n_err:
        return None
    return Fitting(name=name, model=model, params=params, count=count, source=src, key=str(kind))


def _curve_points(r: _Reader, e: dict, path: str, y_key: str, y_kind: Kind, min_points=3):
    pts = r.lst(e, "curve", f"{path}.curve", MAX_POINTS)
    if not pts and isinstance(e.get("curve", []), list):
        r.ask(f"{path}.curve", "no points", f"give at least {min_points} points of the curve, each a flow and a head")
        return None
    if len(pts) < min_points:
        r.fail(f"{path}.curve", f"{len(pts)} points", f"needs at least {min_points} points to fit a curve")
        return None
    Q, H, eta, npsh = [], [], [], []
    for j, pt in enumerate(pts):
        pp = f"{path}.curve.{j}"
        if not isinstance(pt, dict):
            r.fail(pp, pt, "must have a flow and a head")
            continue
        q = r.qty(pt, "flow", f"{pp}.flow", FLOW, lo=0.0, what="the flow", ask="give the point's flow")
        h = r.qty(pt, y_key, f"{pp}.{y_key}", y_kind, what="the head", ask="give the point's head")
        Q.append(q)
        H.append(h)
        # 0 is a maker's usual figure at shut-off, so efficiency may be zero at a point (not negative).
        eta.append(r.qty(pt, "efficiency", f"{pp}.efficiency", RATIO, required=False, lo=0.0,
                         hi=1.0, what="the efficiency"))
        npsh.append(r.qty(pt, "npsh_required", f"{pp}.npsh_required", LENGTH, required=False, lo=0.0,
                          what="NPSH required"))
    if None in Q or None in H:
        return None
    # The curve runs through each point in order of flow, so two points at one flow are refused
    # (the interpolation would have no slope between them).
    first_at: dict[float, int] = {}
    for j, q in enumerate(Q):
        if q in first_at:
            r.fail(f"{path}.curve.{j}.flow", pts[j].get("flow"),
                   f"repeats the flow of point {first_at[q] + 1}: give each point its own flow")
            return None
        first_at[q] = j
    if len(set(Q)) < 3:
        r.fail(f"{path}.curve", "repeated flows", "needs at least three different flows")
        return None
    return Q, H, eta, npsh


def _optional_curve(r: _Reader, Q, ys, path, what):
    """A curve through the points where ``what`` is typed; the others are simply left out."""
    pairs = [(q, y) for q, y in zip(Q, ys) if y is not None]
    if not pairs:
        return None
    if len({q for q, _ in pairs}) < 2:
        r.fail(f"{path}.curve", what, f"{what}: give it at two or more points of different flow, or at none")
        return None
    return Curve([p[0] for p in pairs], [p[1] for p in pairs])


def _turbine(r: _Reader, e: dict, path: str):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    mode = r.choice(e, "mode", f"{path}.mode", ("power", "head", "curve"), "power")
    need_eta = mode == "power"
    eta = r.qty(e, "efficiency", f"{path}.efficiency", RATIO, required=need_eta, default=1.0,
                lo=0.0, lo_open=True, hi=1.0, what="the efficiency",
                ask="give the turbine's efficiency (its shaft power over the power it takes from the flow)")
    power = head = curve = None
    if mode == "power":
        power = r.qty(e, "power", f"{path}.power", POWER, lo=0.0, lo_open=True, what="the shaft power",
                      ask="give the shaft power the turbine is to give")
    elif mode == "head":
        head = r.qty(e, "head", f"{path}.head", LENGTH, lo=0.0, lo_open=True, what="the head",
                     ask="give the head the turbine takes from the flow")
    elif mode == "curve":
        pts = _curve_points(r, e, path, "head", LENGTH)
        if pts:
            curve = Curve(pts[0], pts[1])
    if len(r.errors) > n_err:
        return None
    given = not r.blank(e.get("efficiency"))
    return Turbine(label=label, mode=mode, efficiency=eta, power=power, fixed_head=head, curve=curve,
                   efficiency_given=given)


def _pump(r: _Reader, e: dict, path: str):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    mode = r.choice(e, "mode", f"{path}.mode", ("curve", "head"), "curve")
    n = r.qty(e, "speed_ratio", f"{path}.speed_ratio", RATIO, required=False, default=1.0, lo=0.0,
              lo_open=True, hi=3.0, what="the speed ratio")
    head = curve = eta_c = npsh_c = None
    eta = r.qty(e, "efficiency", f"{path}.efficiency", RATIO, required=False, lo=0.0, lo_open=True, hi=1.0,
                what="the efficiency")
    if mode == "head":
        head = r.qty(e, "head", f"{path}.head", LENGTH, lo=0.0, lo_open=True, what="the head",
                     ask="give the head the pump adds to the flow")
    else:
        pts = _curve_points(r, e, path, "head", LENGTH)
        if pts:
            Q, H, etas, npshs = pts
            curve = Curve(Q, H)
            eta_c = _optional_curve(r, Q, etas, path, "efficiency")
            npsh_c = _optional_curve(r, Q, npshs, path, "NPSH required")
    if len(r.errors) > n_err:
        return None
    return Pump(label=label, mode=mode, fixed_head=head, curve=curve, efficiency_curve=eta_c,
                npshr_curve=npsh_c, speed_ratio=n, efficiency=eta)


def _valve(r: _Reader, e: dict, path: str, last_D, pipe_before: bool = False):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    K = r.qty(e, "K", f"{path}.K", RATIO, lo=0.0, what="K", ask="give the valve's loss coefficient K")
    D = r.qty(e, "diameter", f"{path}.diameter", LENGTH, required=False, lo=0.0, lo_open=True,
              what="the diameter")
    src = "typed by the user"
    if D is None and r.blank(e.get("diameter")):
        if last_D is None and not pipe_before:
            r.ask(f"{path}.diameter", e.get("diameter"),
                  "give the valve's diameter: no pipe run comes before it to take the bore from")
        D, src = last_D, "the pipe run before it"
    if len(r.errors) > n_err:
        return None
    return Valve(label=label, K=K, D=D, D_source=src)
