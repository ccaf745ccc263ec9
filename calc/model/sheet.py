"""The sheet document: parse and check it into a Line, collecting every error with the path of its field.

The format's keys and limits are in `calc.model.fields`, the field reader in `calc.model.reader`, the
elements' readers in `calc.model.read_elements`; their public names are here too, for the callers.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

from calc import friction
from calc.model import implied
from calc.model import read_elements as read
from calc.model.cases import BASE_NAME, CaseRead, ensure_rows, overlay, read_cases
from calc.model.elements import Line, Node
from calc.model.energy import read_energy
from calc.model.fields import *  # noqa: F401,F403  (the format's keys, templates and limits, for the callers)
from calc.model.fields import (
    CHECK_FIELDS,
    ELEMENT_TEMPLATES,
    FORMAT,
    HEADER_FIELDS,
    HEADER_KEYS,
    LIQUID_FIELDS,
    MAX_ELEMENTS,
    MAX_LABEL,
    NODE_FIELDS,
    NODE_KINDS,
    NOZZLE_CV,
    SETTINGS_FIELDS,
    SHEET_FIELDS,
    SITE_FIELDS,
    VERSION,
)
from calc.model.ids import ensure_ids, id_problem  # noqa: F401  (ensure_ids: the documents the form saves)
from calc.model.implied import ENTRANCE_KEYS
from calc.model.reader import Missing, Reader, is_request  # noqa: F401  (the callers' names)
from calc.model.settings import CheckSettings
from calc.model.transient_spec import read_transient
from calc.units import (
    DENSITY,
    LENGTH,
    MODULUS,
    PRESSURE,
    RATIO,
    SPEED,
    TEMPERATURE,
    TIME,
    VISCOSITY,
    InputError,
    parse_quantity,
)
from calc.water import custom_liquid, water


def form_ready(doc: dict) -> dict:
    """``doc`` as the sheet form saves it, in place: every element with its stable id (`ensure_ids`) and
    every case with a row for each element it can change (`calc.model.cases.ensure_rows`)."""
    return ensure_rows(ensure_ids(doc))


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


@dataclass
class CaseLine:
    """One operating case: what it changes (`CaseRead`) and the line those changes give."""

    read: CaseRead
    line: Line

    @property
    def name(self) -> str:
        return self.read.name


@dataclass
class Parsed:
    """The result of parsing: a Line when the sheet is whole, and every error found."""

    line: Line | None
    errors: list[InputError] = field(default_factory=list)
    #: The sheet's operating cases, each with its own line (`calc.model.cases`); empty for a sheet without.
    cases: list[CaseLine] = field(default_factory=list)

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


def parse(doc: object, _memo: dict | None = None) -> Parsed:
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
    r = Reader()
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
    memo = {} if _memo is None else _memo
    for i, e in enumerate(raw):
        path = f"elements.{i}"
        if not isinstance(e, dict):
            r.fail(path, e, "must be a group of fields")
            continue
        kind = e.get("kind")
        # A case's document holds the base's own element groups where it changes nothing (calc.model.cases
        # copies only what it writes), so an element the base read without error is taken from it.
        key = (id(e), i, r.system, last_D, pipe_before)
        kept = memo.get(key)
        if kept is not None and kept[0] is e:
            _element_id(r, e, path, ids)
            el = copy.copy(kept[1])
            if kind == "pipe":
                pipe_before, last_D = True, el.D
            elements.append(el)
            continue
        n_err = len(r.errors)
        read.known_element_keys(r, e, path, kind)
        _element_id(r, e, path, ids)
        if kind == "pipe":
            el = read.pipe(r, e, path)
            pipe_before = True
            last_D = el.D if el is not None else None
        elif kind == "turbine":
            el = read.turbine(r, e, path)
        elif kind == "pump":
            el = read.pump(r, e, path)
        elif kind == "valve":
            el = read.valve(r, e, path, last_D, pipe_before)
        else:
            el = r.fail(f"{path}.kind", kind, "must be one of: pipe, turbine, pump, valve")
        if el is not None and len(r.errors) == n_err:
            memo[key] = (e, copy.copy(el))  # the dict itself too: its id must not be taken by another
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
    energy = read_energy(r, doc)
    case_reads = read_cases(r, doc)
    transient = read_transient(r, doc, [c.name for c in case_reads], BASE_NAME)
    r.report_unknown_left_out()
    if r.errors:
        return Parsed(None, r.errors)
    line = Line(start=start, end=end, elements=elements, liquid=liquid, method=method, p_atm=p_atm,
                header=hdr, settings={**settings, "checks": check_settings, "energy": energy, "transient": transient})
    parsed = Parsed(implied.complete(line), [])
    for case in case_reads:
        sub = parse(overlay(doc, case), memo)  # the case's document holds no cases of its own
        if sub.ok:
            parsed.cases.append(CaseLine(case, sub.line))
        else:
            parsed.errors.extend(_case_error(case, e, doc) for e in sub.errors)
    if parsed.errors:
        return Parsed(None, parsed.errors)
    return parsed


def _case_error(case: CaseRead, error: InputError, doc: dict) -> InputError:
    """An error of a case's document put back at the case field that caused it, saying which element."""
    change = case.field_of(error.path)
    message = error.message
    parts = error.path.split(".")
    if change is None:
        # A base value this case's change makes wrong (the start's connection above a lowered surface):
        # the change in the same group is the cause, and the message names the base value it clashes with.
        change = next((c for c in case.changes if any(t[0] == parts[0] and t[0] != "elements" for t in c.targets)),
                      None)
        if change is not None:
            message = f"with this, the base's {error.path.replace('.', ' ').replace('_', ' ')} {message}"
    if parts[0] == "elements" and len(parts) > 1 and parts[1].isdigit():
        element = doc["elements"][int(parts[1])]
        name = (element.get("label") if isinstance(element, dict) else None) or f"element {int(parts[1]) + 1}"
        if change is None or len(change.targets) > 1:
            message = f"{name}: {message}"
    path = change.case_path if change is not None else case.path
    if change is None and not message.startswith("with this"):
        message = f"in case '{case.name}', {error.path}: {message}"
    return type(error)(path, error.value, message)


def _element_id(r: Reader, e: dict, path: str, ids: dict[str, int]) -> None:
    """An element's stable id (``pipe-2``): optional (``ensure_ids`` gives one), unique in the sheet."""
    if "id" not in e or e["id"] in ("", None):
        return
    problem = id_problem(e["id"], ids)
    if problem:
        r.fail(f"{path}.id", e["id"], problem)
    else:
        ids[e["id"]] = int(path.rsplit(".", 1)[1])


def _check_settings(r: Reader, d: dict) -> CheckSettings:
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


def _roughness_setting(r: Reader, d: dict, key: str, path: str):
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


def _liquid(r: Reader, d: dict):
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


def _node(r: Reader, d: dict, which: str, liquid):
    kind = r.choice(d, "kind", f"{which}.kind", NODE_KINDS[which], "reservoir")
    z = r.qty(d, "elevation", f"{which}.elevation", LENGTH, span="elevation",
              ask={"reservoir": "give the water surface elevation", "jet": "give the elevation of the jet's centre"}
              .get(kind, "give the elevation"))
    p = r.qty(d, "pressure", f"{which}.pressure", PRESSURE, required=False, default=0.0)
    if p is not None and p < -101325.0:
        p = r.fail(f"{which}.pressure", d.get("pressure"), "a gauge pressure cannot be below -1 atm")
    outlet = None
    entrance = ENTRANCE_KEYS[0]
    if kind == "reservoir" and which == "start":
        outlet = r.qty(d, "outlet_elevation", f"{which}.outlet_elevation", LENGTH, required=False,
                       span="elevation")
        if outlet is not None and z is not None and outlet > z:
            outlet = r.fail(f"{which}.outlet_elevation", d.get("outlet_elevation"),
                            f"is above the water surface ({d.get('elevation')}): a pipe leaving the reservoir there "
                            "draws air, not water, so the line cannot run; put the connection at or below the surface")
        entrance = r.choice(d, "entrance", f"{which}.entrance", ENTRANCE_KEYS, ENTRANCE_KEYS[0])
    nozzle = impulse = None
    cv = 1.0
    if kind == "jet":
        nozzle = r.qty(d, "nozzle_diameter", f"{which}.nozzle_diameter", LENGTH, required=False, span="bore",
                       lo=0.0, lo_open=True, what="the nozzle diameter")
        # A nozzle loses a little head; a jet from the open pipe end, none beyond its velocity head.
        cv = r.qty(d, "velocity_coefficient", f"{which}.velocity_coefficient", RATIO, required=False,
                   default=NOZZLE_CV if nozzle else 1.0, lo=0.5, hi=1.0, what="the velocity coefficient")
        impulse = r.qty(d, "impulse_efficiency", f"{which}.impulse_efficiency", RATIO, required=False,
                        lo=0.0, lo_open=True, hi=1.0, what="the impulse turbine's efficiency")
    if kind is None or z is None or p is None or cv is None:
        return None
    return Node(kind=kind, elevation=z, pressure=p if kind != "jet" else 0.0,
                outlet_elevation=outlet, nozzle_diameter=nozzle, entrance=entrance or ENTRANCE_KEYS[0],
                velocity_coefficient=cv, impulse_efficiency=impulse)
