"""The sheet form as data: which fields each part of the document shows, with labels, examples and choices."""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from typing import Any

from calc import friction, tables
from calc.model.cases import whole_or_zero
from calc.model.reader import Reader
from calc.model.settings import CheckSettings
from calc.model.sheet import is_request
from server.editing import get_path, is_missing
from server.form_specs import Spec
from server.form_transient import ALL_SPECS as TRANSIENT_SPECS
from server.form_transient import OPTIONS as TRANSIENT_OPTIONS
from server.form_transient import TransientForm
from server.results import method_name, quantity


def _materials():
    return [("", "none (type a roughness)")] + [(m.key, m.name) for m in tables.materials()]


def _fitting_types():
    own = [("k", "K typed"), ("2k", "2-K (Hooper 1981) typed"), ("3k", "3-K (Darby 2001) typed")]
    return own + [(f.key, f.name) for f in tables.fittings()]


def _standards():
    return [("", "none (type the diameter)")] + list(tables.size_standards().items())


#: What each friction formula is, in a few words, after its name in the choice.
_METHOD_NOTES = {"colebrook": "Colebrook-White, solved exactly", "churchill_1977": "every flow regime"}


def _methods():
    """The friction formulas by their names: 'Colebrook (Colebrook-White, solved exactly)', 'Haaland (1983, explicit)'."""
    out = []
    for key in friction.METHODS:
        name = method_name(key)["name"]
        year = key.rsplit("_", 1)[-1] if key.rsplit("_", 1)[-1].isdigit() else ""
        note = _METHOD_NOTES.get(key) or ", ".join(w for w in (year, "explicit") if w)
        if key in _METHOD_NOTES and year:
            note = f"{year}, {note}"
        out.append((key, f"{name} ({note})"))
    return out


OPTIONS = {
    "units": lambda: [("SI", "SI (L/s, m, kPa, kW)"), ("US", "US customary (gpm, ft, psi, hp)")],
    "revision_scheme": lambda: [("letters", "letters (A, B, C…)"), ("numbers", "numbers (0, 1, 2…)")],
    "liquid_kind": lambda: [("water", "water (IAPWS properties)"), ("custom", "another liquid (typed properties)")],
    "start_kind": lambda: [("reservoir", "reservoir or tank"), ("pressure", "point of known pressure")],
    "end_kind": lambda: [("reservoir", "reservoir or tank"), ("pressure", "point of known pressure"),
                         ("jet", "free discharge (jet)")],
    "friction_method": _methods,
    "material": _materials,
    "standard": _standards,
    "condition": lambda: [("new", "new: the material's new roughness"),
                          ("aged", "aged: the material's aged roughness")],
    "restraint": lambda: [("anchored", "anchored throughout"), ("anchored_upstream", "anchored upstream only"),
                          ("expansion_joints", "expansion joints throughout")],
    "turbine_mode": lambda: [("power", "set shaft power"), ("flow", "set flow"), ("head", "fixed head"),
                             ("curve", "head-flow curve")],
    "pump_mode": lambda: [("curve", "head-flow curve"), ("head", "fixed head")],
    "fitting_type": _fitting_types,
    "speed_control": lambda: [("fixed", "the ratio typed"), ("flow", "solved for a target flow"),
                              ("head", "solved for a target head")],
    "valve_type": lambda: [("fixed", "a fixed loss (K typed)"), ("check", "check valve"),
                           ("control", "control valve (Kv or Cv)"), ("prv", "pressure-reducing valve")],
    "coefficient": lambda: [("Kv", "Kv (m³/h at 1 bar)"), ("Cv", "Cv (US gpm at 1 psi)")],
    "characteristic": lambda: [("linear", "linear"), ("equal_percentage", "equal percentage")],
    "valve_setting": lambda: [("opening", "its opening"), ("flow", "a target flow"),
                              ("pressure", "a downstream pressure")],
    "arrangement": lambda: [("parallel", "in parallel (flows add)"), ("series", "in series (heads add)")],
    "case_condition": lambda: [("", "as the base"), ("new", "new: each material's new roughness"),
                               ("aged", "aged: each material's aged roughness")],
    "entrance": lambda: [(f.key, f.name) for f in tables.fittings() if f.key.startswith("entrance")],
    **TRANSIENT_OPTIONS,
}

@lru_cache(maxsize=None)
def _options(name: str) -> tuple[tuple[str, str], ...]:
    # The tables behind the choices are loaded once and never change while the server runs.
    return tuple(OPTIONS[name]())


HEADER = [
    Spec("title", "Title", "text", wide=True),
    Spec("project", "Project", "text"),
    Spec("calc_number", "Calculation number", "text"),
    Spec("purpose", "Purpose", "textarea", wide=True),
    Spec("revision_scheme", "Revision scheme", "select", options="revision_scheme"),
    Spec("units", "Results shown in", "select", options="units"),
]
LIQUID = {
    "water": [Spec("kind", "Liquid", "select", options="liquid_kind"),
              Spec("temperature", "Temperature", example="12 degC")],
    "custom": [Spec("kind", "Liquid", "select", options="liquid_kind"),
               Spec("name", "Name", "text"),
               Spec("density", "Density", example="998 kg/m^3"),
               Spec("viscosity", "Dynamic viscosity", example="1.0 mPa*s"),
               Spec("vapour_pressure", "Vapour pressure (absolute)", example="2.3 kPa"),
               Spec("bulk_modulus", "Bulk modulus", example="2.19 GPa", help="optional; for the surge check")],
}
SITE = [Spec("atmospheric_pressure", "Atmospheric pressure (absolute)", example="101.325 kPa",
             help="empty: 101.325 kPa, the standard atmosphere at sea level")]
SETTINGS = [Spec("friction_method", "Friction factor", "select", options="friction_method",
                 help="the formula for turbulent flow; 64/Re in laminar flow")]


def _limit(key: str, kind: str, example: str, why: str = "") -> Spec:
    """One check limit: its default as the placeholder, and where that default comes from as the hint."""
    short, full = CheckSettings.SHORT_SOURCES[key], CheckSettings.SOURCES[key]
    return Spec(key, CheckSettings.LABELS[key], kind, example=example, shows_default=True,
                help=f"default from {short}" + (f"; {why}" if why else ""), detail=full)


#: Energy over a year (``energy``): the hours, the tariff and the motor for pumping; for a turbine, the
#: machine's flow range (the flow-duration table is a list below them).
ENERGY = [Spec("hours", "Hours a year (base)", "ratio", example="4000", help="pumping; each case gives its own"),
          Spec("tariff", "Tariff per kWh", "ratio", example="0.15"),
          Spec("currency", "Currency", "text", example="EUR"),
          Spec("motor_efficiency", "Motor and drive efficiency", "ratio", example="0.93",
               help="optional; empty: shaft energy"),
          Spec("turbine_flow_min", "Turbine's least flow", example="20 L/s", help="below it the turbine stops"),
          Spec("turbine_flow_max", "Turbine's greatest flow", example="250 L/s",
               help="empty: the design flow")]
FDC_POINT = [Spec("exceedance", "Share of time exceeded", "ratio", example="30 %"),
             Spec("flow", "Flow available", example="120 L/s")]

_D = CheckSettings()
#: The limits the checks apply (``settings.checks``); empty means the default (calc/model/settings.py).
CHECKS = [
    _limit("velocity_max", "qty", f"{_D.velocity_max:g} m/s"),
    _limit("velocity_max_suction", "qty", f"{_D.velocity_max_suction:g} m/s"),
    _limit("velocity_min", "qty", f"{_D.velocity_min:g} m/s", "sediment and air settle below it"),
    _limit("npsh_margin_ratio", "ratio", f"{_D.npsh_margin_ratio:g}"),
    _limit("npsh_margin_min", "qty", f"{_D.npsh_margin_min:g} m"),
    _limit("bep_low", "ratio", f"{_D.bep_low * 100:g} %"),
    _limit("bep_high", "ratio", f"{_D.bep_high * 100:g} %"),
    _limit("k_uncertainty", "ratio", f"{_D.k_uncertainty * 100:g} %"),
    # A percentage of each run's roughness or one roughness: typed as a number, never free text.
    _limit("roughness_low", "ratio", "each run's roughness", "a percentage of each run's (50 %) or one roughness for all"),
    _limit("roughness_high", "ratio", "each run's aged roughness",
           "a percentage of each run's (300 %) or one roughness for all"),
    _limit("surge_allowance", "qty", f"{_D.surge_allowance / 1e3:g} kPa"),
    _limit("surge_closure_time", "qty", f"{_D.surge_closure_time:g} s", "0 is a stop at once, the worst case"),
]
del _D
NODE = {
    "reservoir": [Spec("elevation", "Water surface elevation", example="412 m"),
                  Spec("pressure", "Pressure on the surface (gauge)", example="0 kPa",
                       help="empty: 0, an open tank"),
                  Spec("outlet_elevation", "Pipe connection elevation", example="409 m",
                       help="optional; default the surface")],
    # A receiving reservoir: where the pipe ends is the last run's end elevation (above the surface,
    # it discharges freely there).
    "reservoir_end": [Spec("elevation", "Water surface elevation", example="80 m"),
                      Spec("pressure", "Pressure on the surface (gauge)", example="0 kPa",
                           help="empty: 0, an open tank")],
    "pressure": [Spec("elevation", "Elevation", example="20 m"),
                 Spec("pressure", "Pressure (gauge)", example="3 bar")],
    "jet": [Spec("elevation", "Jet centre elevation", example="318 m"),
            Spec("nozzle_diameter", "Nozzle diameter", example="80 mm", help="optional; default the last run's bore"),
            Spec("velocity_coefficient", "Nozzle velocity coefficient Cv", "ratio", example="0.98",
                 help="optional; 0.98 with a nozzle, 1 from the open pipe end"),
            Spec("impulse_efficiency", "Impulse turbine efficiency", "ratio", example="0.88",
                 help="optional: the jet drives an impulse turbine of this efficiency on the net head")],
}
PIPE = [
    Spec("label", "Label", "text"),
    Spec("length", "Length", example="420 m"),
    Spec("end_elevation", "Elevation at the run's end", example="352 m"),
    Spec("diameter", "Inner diameter", example="300 mm", help="leave empty to take it from the size"),
    Spec("size.standard", "Size table", "select", options="standard"),
    Spec("size.nominal", "Nominal size", "text", datalist="nominal"),
    Spec("size.class", "Class", "text", datalist="class"),
    Spec("material", "Material", "select", options="material"),
    Spec("condition", "Condition", "select", options="condition", default="new",
         help="which roughness of the material table; a roughness typed takes its place"),
    Spec("roughness", "Roughness", example="0.05 mm", help="leave empty to use the material's"),
    Spec("wall_thickness", "Wall thickness", example="8 mm", help="optional; else from the size"),
    Spec("rating", "Pressure rating (gauge)", example="16 bar", help="optional"),
    Spec("restraint", "Restraint", "select", options="restraint", default="anchored throughout"),
    Spec("wave_speed", "Wave speed", example="1100 m/s", help="optional; empty: Korteweg's, from the wall"),
]
TURBINE = {
    "power": [Spec("label", "Label", "text"), Spec("mode", "Given as", "select", options="turbine_mode"),
              Spec("power", "Shaft power", example="40 kW"),
              Spec("efficiency", "Efficiency", "ratio", example="0.85 or 85 %",
                   help="or an efficiency curve below")],
    "flow": [Spec("label", "Label", "text"), Spec("mode", "Given as", "select", options="turbine_mode"),
             Spec("flow", "Set flow", example="120 L/s", help="it takes the head the line leaves it"),
             Spec("efficiency", "Efficiency", "ratio", example="0.85", help="or an efficiency curve below")],
    "head": [Spec("label", "Label", "text"), Spec("mode", "Given as", "select", options="turbine_mode"),
             Spec("head", "Head taken from the flow", example="60 m"),
             Spec("efficiency", "Efficiency", "ratio", example="0.85", help="optional; default 1")],
    "curve": [Spec("label", "Label", "text"), Spec("mode", "Given as", "select", options="turbine_mode"),
              Spec("efficiency", "Efficiency", "ratio", example="0.85", help="optional; default 1")],
}
#: A pump's group: identical units, how many stand by, how they are joined, how many run.
PUMP_GROUP = [Spec("units", "Identical units", "count", example="1", help="installed; empty: 1; the curve is one unit's"),
              Spec("standby", "Of them standby", "count", example="0", help="empty: none"),
              Spec("arrangement", "Units joined", "select", options="arrangement", default="in parallel"),
              Spec("running", "Units running", "count", example="all duty units",
                   help="empty: all but the standby units")]
#: A curve pump's speed: typed, or solved for a target (the target's field by the choice).
PUMP_SPEED = {
    "fixed": [],
    "flow": [Spec("target_flow", "Target flow", example="40 L/s", help="the speed is solved to give it"),
             Spec("speed_min", "Lowest speed ratio", "ratio", example="0.6", help="optional; checked"),
             Spec("speed_max", "Highest speed ratio", "ratio", example="1", help="optional; checked")],
    "head": [Spec("target_head", "Target pump head", example="30 m", help="the speed is solved to give it"),
             Spec("speed_min", "Lowest speed ratio", "ratio", example="0.6", help="optional; checked"),
             Spec("speed_max", "Highest speed ratio", "ratio", example="1", help="optional; checked")],
}
PUMP = {
    "curve": [Spec("label", "Label", "text"), Spec("mode", "Given as", "select", options="pump_mode"),
              Spec("speed_control", "Speed", "select", options="speed_control", default="the ratio typed"),
              Spec("speed_ratio", "Speed ratio", "ratio", example="1",
                   help="affinity laws; default 1; unused when the speed is solved"),
              Spec("efficiency", "Efficiency", "ratio", example="0.75",
                   help="optional; used when the curve has none"), *PUMP_GROUP],
    "head": [Spec("label", "Label", "text"), Spec("mode", "Given as", "select", options="pump_mode"),
             Spec("head", "Head added to the flow", example="25 m"),
             Spec("efficiency", "Efficiency", "ratio", example="0.75", help="optional"), *PUMP_GROUP],
}
_VALVE_HEAD = [Spec("label", "Label", "text"), Spec("valve_type", "Kind", "select", options="valve_type")]
_VALVE_BORE = Spec("diameter", "Diameter", example="150 mm", help="optional; default the run before it")
#: A valve's fields by its kind; a control valve's by what sets it (its opening, a target flow or pressure).
VALVE = {
    "fixed": [*_VALVE_HEAD, Spec("K", "Loss coefficient K", "ratio", example="0.2"), _VALVE_BORE],
    "check": [*_VALVE_HEAD, Spec("K", "Loss coefficient K, open", "ratio", example="2",
                                 help="it shuts against reverse flow"), _VALVE_BORE],
    "prv": [*_VALVE_HEAD, Spec("set_pressure", "Set pressure downstream (gauge)", example="3 bar"),
            Spec("K", "Loss coefficient K, fully open", "ratio", example="3"), _VALVE_BORE],
    "control": [*_VALVE_HEAD, Spec("coefficient", "Flow coefficient", "select", options="coefficient"),
                Spec("rated", "Rated Kv or Cv, fully open", "ratio", example="120", help="m³/h at 1 bar, or gpm at 1 psi"),
                Spec("characteristic", "Inherent characteristic", "select", options="characteristic"),
                Spec("rangeability", "Rangeability", "ratio", example="50", help="the maker's figure"),
                Spec("setting", "Set by", "select", options="valve_setting"), _VALVE_BORE],
}
VALVE_SETTING = {"opening": Spec("opening", "Opening (relative travel)", "ratio", example="60 %"),
                 "flow": Spec("target_flow", "Target flow", example="30 L/s", help="it opens to pass it"),
                 "pressure": Spec("set_pressure", "Set pressure downstream (gauge)", example="3 bar")}
FITTING = {
    "k": [Spec("K", "K", "ratio", example="0.5"), Spec("label", "Label", "text")],
    "2k": [Spec("K1", "K1", "ratio", example="800"), Spec("Kinf", "K∞", "ratio", example="0.25"),
           Spec("label", "Label", "text")],
    "3k": [Spec("K1", "K1", "ratio", example="800"), Spec("Ki", "Ki", "ratio", example="0.14"),
           Spec("Kd", "Kd", "ratio", example="4"), Spec("label", "Label", "text")],
}
PROFILE_POINT = [Spec("chainage", "Chainage", example="210 m"), Spec("elevation", "Elevation", example="385 m")]
TURBINE_POINT = [Spec("flow", "Flow", example="100 L/s"), Spec("head", "Head", example="60 m"),
                 Spec("efficiency", "Efficiency", "ratio", example="0.88")]
#: A turbine's efficiency at flows, in every mode but a head curve (whose points carry their own).
TURBINE_ETA_POINT = [Spec("flow", "Flow", example="100 L/s"), Spec("efficiency", "Efficiency", "ratio", example="0.88")]
PUMP_POINT = [Spec("flow", "Flow", example="20 L/s"), Spec("head", "Head", example="36 m"),
              Spec("efficiency", "Efficiency", "ratio", example="0.7"),
              Spec("npsh_required", "NPSH required", example="3 m")]

ELEMENT_TITLES = {"pipe": "Pipe run", "turbine": "Turbine", "pump": "Pump", "valve": "Valve"}


@dataclass(frozen=True)
class CaseRow:
    """One input of the case table: what it is, the base sheet's value, and each case's field for it
    (None where a case has no place for it yet)."""

    label: str
    base: str
    cells: tuple


@dataclass(frozen=True)
class CaseColumn:
    """One case of the case table: its place in ``cases``, its name and note fields, and the rows it
    holds for elements no longer on the line (``(row path, id)``, each to remove)."""

    index: int
    name: Field
    note: Field
    orphans: tuple


def field_id(path: str) -> str:
    """An HTML id for a document path (dots read badly in CSS selectors)."""
    return "f-" + path.replace(".", "-")


def message_id(path: str) -> str:
    return "m-" + path.replace(".", "-")


@dataclass(frozen=True)
class Bore:
    """The bore a size-table choice gives a pipe run, shown beside its size fields."""

    id: str  # of the <output> that shows it, refreshed in place after an edit
    for_ids: str  # the fields it is worked out from
    text: str  # the inner diameter, e.g. '202.7 mm'; empty until the size is whole
    note: str  # outside diameter and wall, or what is missing


@dataclass(frozen=True)
class Field:
    """A field ready to render: where it writes, what it shows and what is wrong with it."""

    path: str
    spec: Spec
    value: str
    error: str | None
    options: list[tuple[str, str]]
    suggestions: list[str]
    autofocus: bool
    example: str = ""  # the example value as the placeholder shows it, in the sheet's units
    request: bool = False  # the message asks for a value not given yet, rather than refusing one

    @property
    def id(self) -> str:
        return field_id(self.path)

    @property
    def message_id(self) -> str:
        return message_id(self.path)


#: The unit a US-customary sheet shows an example in, for each SI unit the examples are written in;
#: a bare number typed in the field takes the unit its placeholder shows (server/editing.py).
_US_EXAMPLE_UNITS = {"m": "ft", "mm": "in", "L/s": "gpm", "kPa": "psi", "bar": "psi", "kW": "hp", "degC": "degF",
                     "kg/m^3": "lb/ft^3", "m/s": "ft/s"}


@lru_cache(maxsize=None)
def example_in(example: str, system: str, sig: int = 2) -> str:
    """A field's example in the sheet's unit system, to ``sig`` significant figures (a default, to three).

    >>> example_in("420 m", "US"), example_in("300 mm", "US"), example_in("20 L/s", "US"), example_in("420 m", "SI")
    ('1400 ft', '12 in', '320 gpm', '420 m')
    >>> example_in("3 m/s", "US", 3), example_in("200 kPa", "US", 3), example_in("0 s", "US", 3)
    ('9.84 ft/s', '29 psi', '0 s')
    """
    from calc.units import Q_, unit_text

    number, _, unit = example.partition(" ")
    if system != "US" or unit not in _US_EXAMPLE_UNITS:
        return example
    try:
        value = Q_(float(number), unit_text(unit)).to(unit_text(_US_EXAMPLE_UNITS[unit])).magnitude
    except ValueError:
        return example
    return f"{float(f'{value:.{sig}g}'):g} {_US_EXAMPLE_UNITS[unit]}"


def _valve_case_keys(e: dict) -> tuple[str, ...]:
    """What a case may change on a valve of this kind and setting."""
    vtype = e.get("valve_type") or "fixed"
    if vtype == "control":
        return {"opening": ("opening",), "flow": ("target_flow",), "pressure": ("set_pressure",)}.get(
            e.get("setting") or "opening", ("opening",))
    return ("set_pressure",) if vtype == "prv" else ("K",)


def _shown(value: Any) -> str:
    if is_missing(value) or value is None:
        return ""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(value) if isinstance(value, float) else str(value)
    if isinstance(value, str):
        return value
    return ""  # a group or list where a value belongs; the parse message says so


class FormView(TransientForm):
    """Builds Field objects for a document and its parse errors; the templates only lay them out."""

    def __init__(self, doc: dict, errors: list | None = None, focus: str | None = None, readonly: bool = False):
        self.doc = doc
        self.errors: dict[str, str] = {}
        self.requests: set[str] = set()  # paths whose message asks for a value (calc.model.sheet.Missing)
        for e in errors or []:
            if e.path not in self.errors and is_request(e):
                self.requests.add(e.path)
            self.errors.setdefault(e.path, e.message)
        self.focus = focus
        self.readonly = readonly

    def get(self, path: str, default: Any = "") -> Any:
        value = get_path(self.doc, path)
        return default if is_missing(value) or value is None else value

    def items(self, path: str) -> list:
        value = get_path(self.doc, path)
        return value if isinstance(value, list) else []

    def field(self, prefix: str, spec: Spec) -> Field:
        path = f"{prefix}.{spec.key}"
        value = _shown(get_path(self.doc, path))
        options: list[tuple[str, str]] = []
        if spec.options:
            options = (self.dynamic_options(spec.options, prefix) if spec.options.startswith("@")
                       else list(_options(spec.options)))
            if value not in {v for v, _ in options}:
                # Keep what the document holds visible (and posted back unchanged) even if unknown.
                if value:
                    text = f"{value} (not a known choice)"
                else:
                    text = f"default ({spec.default})" if spec.default else "choose…"
                options.insert(0, (value, text))
        suggestions: list[str] = []
        if spec.datalist:
            standard = self.get(f"{prefix}.size.standard", "")
            if standard in tables.size_standards():
                nominals, classes = tables.size_options(standard)
                suggestions = nominals if spec.datalist == "nominal" else classes
        system = "US" if self.get("header.units", "SI") == "US" else "SI"
        example = example_in(spec.example, system, 3 if spec.shows_default else 2) if spec.kind == "qty" \
            else spec.example
        return Field(path, spec, value, self.error_for(path), options, suggestions, path == self.focus,
                     example, path in self.requests)

    def error_for(self, path: str) -> str | None:
        return self.errors.get(path)

    def fields(self, prefix: str, specs: list[Spec]) -> list[Field]:
        return [self.field(prefix, s) for s in specs]

    # Each part of the document, as the template lays it out.
    def header(self) -> list[Field]:
        return self.fields("header", HEADER)

    def liquid(self) -> list[Field]:
        kind = self.get("liquid.kind", "water")
        return self.fields("liquid", LIQUID.get(kind, LIQUID["water"]))

    def site(self) -> list[Field]:
        return self.fields("site", SITE) + self.fields("settings", SETTINGS)

    def energy(self) -> list[Field]:
        return self.fields("energy", ENERGY)

    def fdc_point(self, path: str) -> list[Field]:
        return self.fields(path, FDC_POINT)

    def checks(self) -> list[Field]:
        """The check limits (``settings.checks``), each empty for its default."""
        return self.fields("settings.checks", CHECKS)

    def node(self, which: str) -> list[Field]:
        kind = self.get(f"{which}.kind", "reservoir")
        specs = NODE.get(kind, NODE["reservoir"])
        if which == "start" and kind == "reservoir":
            specs = specs + [Spec("entrance", "Entrance into the pipe", "select", options="entrance",
                                  default="sharp-edged, flush",
                                  help="its loss is counted unless an entrance fitting is typed on the first run")]
        elif which == "end" and kind == "reservoir":
            specs = NODE["reservoir_end"]
        kind_spec = Spec("kind", "Kind", "select", options=f"{which}_kind")
        return [self.field(which, kind_spec)] + self.fields(which, specs)

    def element_fields(self, index: int) -> list[Field]:
        prefix = f"elements.{index}"
        kind = self.get(f"{prefix}.kind", "")
        if kind == "pipe":
            return self.fields(prefix, PIPE)
        if kind == "turbine":
            return self.fields(prefix, TURBINE.get(self.get(f"{prefix}.mode", "power"), TURBINE["power"]))
        if kind == "pump":
            mode = self.get(f"{prefix}.mode", "curve")
            specs = PUMP.get(mode, PUMP["curve"])
            if mode != "head":
                control = self.get(f"{prefix}.speed_control", "fixed")
                specs = specs[:4] + PUMP_SPEED.get(control, []) + specs[4:]
            return self.fields(prefix, specs)
        if kind == "valve":
            vtype = self.get(f"{prefix}.valve_type", "fixed")
            specs = VALVE.get(vtype, VALVE["fixed"])
            if vtype == "control":
                setting = VALVE_SETTING.get(self.get(f"{prefix}.setting", "opening"), VALVE_SETTING["opening"])
                specs = specs[:-1] + [setting, specs[-1]]
            return self.fields(prefix, specs)
        return [self.field(prefix, Spec("kind", "Kind", "text")), self.field(prefix, Spec("label", "Label", "text"))]

    def bore(self, index: int) -> Bore | None:
        """The bore the size table gives element ``index`` (a pipe run with a size table chosen), else None."""
        prefix = f"elements.{index}"
        if self.get(f"{prefix}.kind") != "pipe":
            return None
        standard = self.get(f"{prefix}.size.standard", "")
        if not isinstance(standard, str) or standard not in tables.size_standards():
            return None
        units = self.get("header.units", "SI")
        base = f"{prefix}.size".replace(".", "-")
        ids = f"f-{base}-nominal f-{base}-class"
        nominal, klass = self.get(f"{prefix}.size.nominal", ""), self.get(f"{prefix}.size.class", "")
        if not str(nominal).strip() or not str(klass).strip():
            return Bore(f"bore-elements-{index}", ids, "", "give the nominal size and class")
        try:
            size = tables.pipe_size(standard, str(nominal), str(klass))
        except LookupError:
            return Bore(f"bore-elements-{index}", ids, "", "not in the table: see the message below")
        wall = "mean wall" if size.wall_min is not None else "wall"
        note = f"outside {quantity(size.OD, 'diameter', units)}, {wall} {quantity(size.wall, 'diameter', units, 3)}"
        typed = self.get(f"{prefix}.diameter", "")
        if isinstance(typed, str) and typed.strip():
            note = "not used: the inner diameter typed takes its place"
        return Bore(f"bore-elements-{index}", ids, quantity(size.ID, "diameter", units), note)

    def bores(self) -> list[Bore]:
        """Every bore shown on the form, for refreshing them in place after an edit."""
        return [b for b in (self.bore(i) for i, _, _ in self.elements()) if b is not None]

    def point_specs(self, index: int) -> list[Spec] | None:
        """Columns of the curve table of element ``index``, or None when it shows no curve."""
        prefix = f"elements.{index}"
        kind, mode = self.get(f"{prefix}.kind"), self.get(f"{prefix}.mode")
        if kind == "turbine" and mode == "curve":
            return TURBINE_POINT
        if kind == "turbine":
            return TURBINE_ETA_POINT
        if kind == "pump" and mode in ("curve", ""):
            return PUMP_POINT
        return None

    def profile_point(self, path: str) -> list[Field]:
        return self.fields(path, PROFILE_POINT)

    def fitting_note(self, path: str) -> str:
        """Where a table fitting's K comes from, in a few words."""
        key = self.get(f"{path}.type", "")
        try:
            model = tables.fitting(str(key)).model
        except LookupError:
            return ""
        return {"k": "K from the fittings table", "2k": "2-K values from the fittings table (Hooper 1981)",
                "3k": "3-K values from the fittings table (Darby 2001)"}.get(model, "from the fittings table")

    def fitting_fields(self, path: str) -> tuple[Field, Field, list[Field]]:
        kind = self.get(f"{path}.type", "")
        type_field = self.field(path, Spec("type", "Fitting", "select", options="fitting_type"))
        count_field = self.field(path, Spec("count", "Count", "count", example="1"))
        return type_field, count_field, self.fields(path, FITTING.get(kind, []))

    def message(self, path: str) -> str | None:
        """The message for a group or list (shown under it), e.g. a curve with too few points."""
        return self.errors.get(path)

    def is_request(self, path: str) -> bool:
        """Whether the message at ``path`` asks for a value not given yet (rather than refusing one)."""
        return path in self.requests

    def elements(self) -> list[tuple[int, str, dict]]:
        """(index, kind, element) for each element, in flow order."""
        out = []
        for i, e in enumerate(self.items("elements")):
            kind = e.get("kind") if isinstance(e, dict) else None
            out.append((i, kind if isinstance(kind, str) else "", e if isinstance(e, dict) else {}))
        return out

    # -- the operating cases ------------------------------------------------------------------
    def case_columns(self) -> list[CaseColumn]:
        from calc.model.cases import case_elements

        ids = {e["id"] for e in case_elements(self.doc)}
        out = []
        for i, case in enumerate(self.items("cases")):
            case = case if isinstance(case, dict) else {}
            rows = case.get("elements") if isinstance(case.get("elements"), list) else []
            orphans = tuple((f"cases.{i}.elements.{j}", str(r.get("id"))) for j, r in enumerate(rows)
                            if isinstance(r, dict) and r.get("id") not in ids)
            out.append(CaseColumn(i, self.field(f"cases.{i}", Spec("name", f"Case {i + 1} name", "text")),
                                  self.field(f"cases.{i}", Spec("note", f"Case {i + 1} note", "text")), orphans))
        return out

    def case_rows(self) -> list[CaseRow]:
        """The case table's rows: each input a case may change, with the base value and a field per case."""
        from calc.model.cases import case_elements

        cases = self.items("cases")
        rows: list[CaseRow] = []

        def add(label: str, base: Any, cell_path, spec: Spec, words: str = "") -> None:
            # ``words`` stands for a base that is no one value (each run's own roughness): shown in the base
            # column, while the cells' placeholders give an example.
            base_text = _shown(base) if not isinstance(base, (dict, list)) else ""
            cells = []
            for i, _case in enumerate(cases):
                where = cell_path(i)
                if where is None:
                    cells.append(None)
                    continue
                prefix, key = where.rsplit(".", 1)
                cells.append(self.field(prefix, Spec(key, f"{label}, case {i + 1}", spec.kind,
                                                     example=base_text or spec.example, options=spec.options,
                                                     as_base=bool(base_text))))
            rows.append(CaseRow(label, words or base_text, tuple(cells)))

        for which, title in (("start", "Start"), ("end", "End")):
            kind = self.get(f"{which}.kind", "reservoir")
            level = "water surface elevation" if kind == "reservoir" else "jet centre elevation" if kind == "jet" \
                else "elevation"
            add(f"{title}: {level}", self.get(f"{which}.elevation"), lambda i, w=which: f"cases.{i}.{w}.elevation",
                Spec("elevation", "", example="100 m"))
            if kind != "jet":
                what = "pressure on the surface (gauge)" if kind == "reservoir" else "pressure (gauge)"
                add(f"{title}: {what}", self.get(f"{which}.pressure") or "0 kPa",
                    lambda i, w=which: f"cases.{i}.{w}.pressure", Spec("pressure", "", example="0 kPa"))
        if self.get("liquid.kind", "water") == "water":
            add("Water temperature", self.get("liquid.temperature"), lambda i: f"cases.{i}.liquid.temperature",
                Spec("temperature", "", example="12 degC"))
        add("Hours a year", self.get("energy.hours"), lambda i: f"cases.{i}.hours",
            Spec("hours", "", "ratio", example="2000"), "" if self.get("energy.hours") else "none given")
        add("Every pipe run: condition", None, lambda i: f"cases.{i}.pipes.condition",
            Spec("condition", "", "select", options="case_condition"), "as set on each run")
        add("Every pipe run: roughness", None, lambda i: f"cases.{i}.pipes.roughness",
            Spec("roughness", "", example="1 mm"), "each run's own")
        specs = {"pump": [("running", "units running", "count"), ("speed_ratio", "speed ratio", "ratio"),
                          ("target_flow", "target flow", "qty"), ("target_head", "target head", "qty")],
                 "turbine": [("power", "shaft power", "qty"), ("flow", "set flow", "qty"),
                             ("head", "head taken", "qty")],
                 "valve": [("K", "loss coefficient K", "ratio"), ("opening", "opening", "ratio"),
                           ("target_flow", "target flow", "qty"), ("set_pressure", "set pressure", "qty")]}
        for e in case_elements(self.doc):
            kind, mode = e["kind"], e.get("mode") or ("power" if e["kind"] == "turbine" else "curve")
            control = e.get("speed_control") or "fixed"
            for key, words, field_kind in specs[kind]:
                if kind == "pump" and key == "running" and not whole_or_zero(e.get("units")) > 1:
                    continue
                if kind == "pump" and key == "speed_ratio" and control != "fixed":
                    continue
                if kind == "pump" and key.startswith("target_") and key != f"target_{control}":
                    continue
                if kind == "turbine" and mode != key and not (mode == "head" and key == "head"):
                    continue
                if kind == "valve" and key not in _valve_case_keys(e):
                    continue
                base = e.get(key)
                if kind == "pump" and key == "running" and Reader.blank(base):
                    base = str(max(whole_or_zero(e.get("units")) - whole_or_zero(e.get("standby")), 1))
                if kind == "pump" and key == "speed_ratio" and Reader.blank(base):
                    base = "1"

                def where(i, ident=e["id"], key=key):
                    rows = get_path(self.doc, f"cases.{i}.elements")
                    j = next((j for j, r in enumerate(rows) if isinstance(r, dict) and r.get("id") == ident), None) \
                        if isinstance(rows, list) else None
                    return None if j is None else f"cases.{i}.elements.{j}.{key}"
                add(f"{e.get('label') or e['id']}: {words}", base, where,
                    Spec(key, "", field_kind, example={"power": "40 kW", "head": "60 m", "flow": "100 L/s",
                                                       "target_flow": "40 L/s", "target_head": "30 m",
                                                       "opening": "60 %", "set_pressure": "3 bar"}.get(key, "1")))
        return rows

    def case_fields(self) -> list[Field]:
        out = []
        for c in self.case_columns():
            out += [c.name, c.note]
        for r in self.case_rows():
            out += [f for f in r.cells if f is not None]
        return out

    def all_fields(self) -> list[Field]:
        """Every field the sheet form shows, in page order (the templates call the same methods)."""
        out = self.header() + self.liquid() + self.site() + self.node("start")
        for i, kind, _ in self.elements():
            out += self.element_fields(i)
            if kind == "pipe":
                for j, _pt in enumerate(self.items(f"elements.{i}.fittings")):
                    t, c, rest = self.fitting_fields(f"elements.{i}.fittings.{j}")
                    out += [t, c] + rest
                for j, _pt in enumerate(self.items(f"elements.{i}.profile")):
                    out += self.profile_point(f"elements.{i}.profile.{j}")
            specs = self.point_specs(i)
            if specs:
                for j, _pt in enumerate(self.items(f"elements.{i}.curve")):
                    out += self.fields(f"elements.{i}.curve.{j}", specs)
        out += self.node("end") + self.case_fields() + self.energy()
        for j, _pt in enumerate(self.items("energy.flow_duration")):
            out += self.fdc_point(f"energy.flow_duration.{j}")
        return out + self.transient_fields() + self.checks()


# -- where a message goes, and how to name a field in words -------------------------------------

_LABELS: dict[str, str] = {}
for _specs in [*TRANSIENT_SPECS, HEADER, SITE, SETTINGS, CHECKS, ENERGY, FDC_POINT, PIPE, *VALVE.values(), list(VALVE_SETTING.values()), PROFILE_POINT,
               PUMP_POINT, TURBINE_POINT, TURBINE_ETA_POINT,
               *PUMP_SPEED.values(),
               *LIQUID.values(), *NODE.values(), *TURBINE.values(), *PUMP.values(), *FITTING.values()]:
    for _s in _specs:
        _LABELS.setdefault(_s.key.split(".")[-1], _s.label)
_LABELS.update({"checks": "check limits", "kind": "kind", "type": "fitting", "count": "count", "standard": "size table",
                "nominal": "nominal size", "class": "class", "size": "size", "fittings": "fittings",
                "profile": "profile", "curve": "curve points", "mode": "given as"})
_SECTIONS = {"header": "Header", "liquid": "Liquid", "site": "Site", "settings": "Settings", "start": "Start",
             "end": "End", "elements": "Elements", "cases": "Cases", "energy": "Energy over a year",
             "transient": "Transients", "format": "Sheet format", "version": "Sheet format version"}
_ITEMS = {"fittings": "fitting", "profile": "profile point", "curve": "curve point",
          "flow_duration": "flow-duration point", "events": "event", "devices": "device", "points": "point",
          "table": "point in time", "four_quadrant": "four-quadrant point"}


def describe(doc: dict, path: str) -> str:
    """A path in words: ``elements.0.fittings.1.count`` -> ``Element 1 (Penstock) › fitting 2 › count``."""
    parts = path.split(".") if path else []
    if not parts:
        return "Sheet"
    words = [_SECTIONS.get(parts[0], parts[0])]
    i = 1
    if parts[0] in ("start", "end") and len(parts) == 2 and isinstance(doc, dict):
        # A field of the start or end by the label its kind shows ('Water surface elevation').
        shown = {f.path: f.spec.label for f in FormView(doc).node(parts[0])}
        if path in shown:
            return f"{words[0]} › {shown[path]}"
    if parts[0] == "cases" and len(parts) > 1 and parts[1].isdigit():
        name = get_path(doc, f"cases.{parts[1]}.name")
        name = name.strip() if isinstance(name, str) and name.strip() else None
        words = [f"Case {int(parts[1]) + 1}" + (f" ({name})" if name else "")]
        if len(parts) > 3 and parts[2] == "elements" and parts[3].isdigit():
            ident = get_path(doc, f"cases.{parts[1]}.elements.{parts[3]}.id")
            words.append(f"{ident}" if isinstance(ident, str) else f"row {int(parts[3]) + 1}")
            parts = parts[:2] + parts[4:]
        i = 2
    elif parts[0] == "elements" and len(parts) > 1 and parts[1].isdigit():
        label = get_path(doc, f"elements.{parts[1]}.label")
        label = label if isinstance(label, str) and label.strip() else None
        words = [f"Element {int(parts[1]) + 1}" + (f" ({label})" if label else "")]
        i = 2
    while i < len(parts):
        p = parts[i]
        if p in _ITEMS and i + 1 < len(parts) and parts[i + 1].isdigit():
            words.append(f"{_ITEMS[p]} {int(parts[i + 1]) + 1}")
            i += 2
            continue
        words.append(_LABELS.get(p, p.replace("_", " ")))
        i += 1
    return " › ".join(words)


def slot_paths(form: "FormView") -> tuple[set[str], set[str]]:
    """Paths with a message slot on the form: (the fields, the groups and lists)."""
    fields = {f.path for f in form.all_fields()}
    paths = {"header", "liquid", "site", "settings", "settings.checks", "start", "end", "elements", "cases", "energy",
             "energy.flow_duration"}
    for i, _case in enumerate(form.items("cases")):
        paths.update({f"cases.{i}", f"cases.{i}.elements", f"cases.{i}.pipes", f"cases.{i}.start",
                      f"cases.{i}.end", f"cases.{i}.liquid"})
    paths |= form.transient_groups()
    for i, element in enumerate(form.items("elements")):
        paths.add(f"elements.{i}")
        if isinstance(element, dict) and element.get("kind") == "pipe":
            paths.update({f"elements.{i}.size", f"elements.{i}.fittings", f"elements.{i}.profile"})
        if form.point_specs(i) is not None:
            paths.add(f"elements.{i}.curve")
    return fields, paths


def anchor(fields: set[str], groups: set[str], path: str) -> str | None:
    """Where a link to an error should go: the field itself, else the message under its group."""
    if path in fields:
        return field_id(path)
    parts = path.split(".")
    while parts:
        candidate = ".".join(parts)
        if candidate in groups or candidate in fields:
            return message_id(candidate) if candidate in groups else field_id(candidate)
        parts.pop()
    return None
