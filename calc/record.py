"""The calculation record: the sections a checker reads, top to bottom, built from an analysis as plain data."""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

from calc import fingerprint as fp
from calc import friction, plots, tables
from calc.elements import PipeRun, Pump, Turbine, Valve
from calc.units import (DENSITY, FLOW, LENGTH, MODULUS, POWER, PRESSURE, RATIO, TEMPERATURE, VISCOSITY,
                        fmt, parse_quantity, to_display)
from calc.water import G

ROLES = ("preparer", "checker", "approver")
ROLE_TITLES = {"preparer": "Prepared by", "checker": "Checked by", "approver": "Approved by"}
SEVERITY_TITLES = {"error": "Errors", "warning": "Warnings", "caution": "Cautions", "info": "For information"}

#: Significant figures: results as printed, and the numbers substituted into equations (one more,
#: so that a checker repeating a step on a calculator lands on the printed result).
SIG = 4
SUB_SIG = 5

DISCLAIMER = ("This record is the output of a design aid. It does not replace review, design and approval "
              "under the codes and standards that apply where the works are built, by a licensed or "
              "chartered professional engineer competent in the field.")

#: Cautions printed on every record, where steady-state hydraulics stops and harm can start; each is
#: left out when a finding of the checks (by code) already says it for this line.
CAUTIONS = (
    (("general-surge",), "Steady flow only. Closing a valve, a pump trip or a turbine load rejection raises "
     "pressure surges (water hammer) that can burst a line or collapse it by vacuum; they are not covered by "
     "this calculation beyond the surge findings shown, and a final design needs a transient analysis."),
    (("general-ratings", "general-anchorage"), "Pipe, joint and fitting pressure ratings, thrust restraint and "
     "anchorage, supports, air valves and drains, and the structural design of the line need their own checks."),
    ((), "Where the hydraulic grade line comes near or below the pipe, the line runs under vacuum: air is drawn "
     "in at joints and air valves, the water column can separate, and plastic pipe can collapse."),
    (("general-confined-space",), "Water under pressure is dangerous: fill, flush and test lines slowly, keep "
     "people clear of pressure tests, and isolate and drain before work on a line or a machine."),
    ((), "Roughness, fitting losses and machine curves are typical published or typed values; pipe ages and "
     "fouls, and machines wear. Check the margins against the supplier's data."),
)

GRAVITY_REF = ("Standard acceleration of gravity g = 9.80665 m/s², conventional value adopted by the "
               "3rd General Conference on Weights and Measures (CGPM, 1901); ISO 80000-3:2019.")
HOOPER_REF = ("Hooper, W. B. (1981). The two-K method predicts head losses in pipe fittings. "
              "Chemical Engineering 88(17): 96-100.")
DARBY_REF = ("Darby, R. (2001). Chemical Engineering Fluid Mechanics, 2nd edition. Marcel Dekker, "
             "New York: 3-K method for valves and fittings.")
DARCY_REF = ("Darcy-Weisbach equation for friction loss in full pipe flow, h_f = f (L/D) V²/2g, as in "
             "Moody, L. F. (1944). Friction factors for pipe flow. Transactions of the ASME 66(8): 671-684.")
JOUKOWSKY_REF = ("Joukowsky, N. (1898, translated 1904). On the hydraulic hammer in water supply pipes. "
                 "Proceedings of the American Water Works Association 24: 341-424 (from memory).")
KORTEWEG_REF = ("Korteweg, D. J. (1878). Über die Fortpflanzungsgeschwindigkeit des Schalles in elastischen "
                "Röhren. Annalen der Physik 241(12): 525-542 (from memory); wave speed as in Wylie, E. B. "
                "and Streeter, V. L. (1993). Fluid Transients in Systems. Prentice Hall.")

_SI_UNIT = {LENGTH: "m", FLOW: "m³/s", PRESSURE: "Pa", POWER: "W", DENSITY: "kg/m³", VISCOSITY: "Pa·s",
            MODULUS: "Pa", TEMPERATURE: "K", RATIO: "–"}
_SUPERSCRIPT = str.maketrans("0123456789-+", "⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺")


# ----------------------------------------------------------------------------- numbers

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


# ----------------------------------------------------------------------------- record data

@dataclass
class Table:
    """A table of text cells; ``align`` holds 'l' or 'r' per column."""

    head: list[str]
    rows: list[list[str]]
    caption: str = ""
    align: list[str] | None = None
    note: str = ""
    css: str = ""


@dataclass
class Step:
    """One line of working: what is found, by which equation, with which numbers, and the result."""

    symbol: str
    name: str
    equation: str
    substituted: str
    result: str
    unit: str
    value: float | None = None
    ref: str = ""
    also: str = ""  # a second line of working, e.g. both sides of an implicit equation at the result


@dataclass
class StepGroup:
    """The working for one element (or the liquid, or the ends of the line) at one operating point."""

    title: str
    kind: str
    steps: list[Step] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


@dataclass
class Equation:
    name: str
    text: str
    where: str = ""
    ref: str = ""


@dataclass
class Reference:
    number: int
    citation: str
    used_for: list[str] = field(default_factory=list)


@dataclass
class Assumption:
    text: str
    verify: bool = False  # to be confirmed by the designer before the record is relied on


@dataclass
class Signature:
    role: str
    title: str
    name: str = ""
    comment: str = ""
    signed: str = ""  # ISO date and time, UTC

    @property
    def done(self) -> bool:
        return bool(self.name)


@dataclass
class Meta:
    """What the store knows about the revision the record is of; the record itself is pure."""

    sheet_id: int | None = None
    store_revision: int | None = None
    label_index: int = 0
    created: str = ""
    printed: str = ""
    frozen: bool = False
    signatures: list[dict] = field(default_factory=list)  # {role, name, comment, signed}
    verify_url: str = ""


@dataclass
class Record:
    """Everything the record shows, section by section, as text and tables (HTML is the template's job)."""

    header: dict
    purpose: str
    scope: list[str]
    references: list[Reference]
    assumptions: list[Assumption]
    inputs: list[Table]
    equations: list[Equation]
    steps: list[StepGroup]
    steps_point: str
    solve_log: list[Table]
    solve_notes: list[str]
    results: list[dict]
    points_table: Table | None
    no_point: str
    plots: list[plots.Plot]
    findings: dict[str, list[dict]]
    solver_notes: list[str]
    uncertainty: list[Table]
    cautions: list[str]
    disclaimer: str
    signoff: list[Signature]
    fingerprint: str
    fingerprint_grouped: str
    verify_url: str
    program: str
    version: str
    errors: list[dict] = field(default_factory=list)

    @property
    def signed(self) -> bool:
        """All three roles have signed: the draft stamp comes off."""
        return all(s.done for s in self.signoff)


def revision_label(index: int, scheme: str = "letters") -> str:
    """The record's revision label: A, B, … Z, AA, AB … for letters; 0, 1, 2 … for numbers.

    >>> revision_label(0), revision_label(25), revision_label(26), revision_label(2, "numbers")
    ('A', 'Z', 'AA', '2')
    """
    if scheme == "numbers":
        return str(index)
    out = ""
    n = index + 1
    while n:
        n, r = divmod(n - 1, 26)
        out = chr(ord("A") + r) + out
    return out


class _Refs:
    """Numbered references in order of first use; a citation cited twice keeps its number."""

    def __init__(self):
        self._by_text: dict[str, Reference] = {}

    def cite(self, citation: str, used_for: str = "") -> str:
        citation = citation.strip()
        if not citation:
            return ""
        ref = self._by_text.get(citation)
        if ref is None:
            ref = self._by_text[citation] = Reference(len(self._by_text) + 1, citation)
        if used_for and used_for not in ref.used_for:
            ref.used_for.append(used_for)
        return f"[{ref.number}]"

    def cite_source(self, source: str, used_for: str = "") -> tuple[str, str]:
        """Cite a table's source string ('citation [detail]', several joined by '; '); returns (refs, detail)."""
        citation, detail = split_detail(source)
        parts = [p for p in re.split(r"(?<=\.);\s+", citation) if p.strip()]
        return "".join(self.cite(p, used_for) for p in parts), detail

    @property
    def items(self) -> list[Reference]:
        return sorted(self._by_text.values(), key=lambda r: r.number)


def split_detail(source: str) -> tuple[str, str]:
    """A table source 'citation [which row]' split into its citation and the row detail.

    >>> split_detail("Moody (1944). Table. ['cast iron', 0.00085 ft]")
    ('Moody (1944). Table.', "'cast iron', 0.00085 ft")
    """
    m = re.match(r"^(.*?)\s*\[([^\[\]]*)\]\s*$", source or "", re.S)
    if m:
        return m.group(1).strip(), m.group(2).strip()
    return (source or "").strip(), ""


# ----------------------------------------------------------------------------- building

def build(analysis, meta: Meta | None = None, version: str | None = None) -> Record:
    """The record of an analysed sheet. ``meta`` carries revision, dates and signatures from the store.

    >>> from calc.analysis import analyse
    >>> from calc.sheet import blank_sheet
    >>> rec = build(analyse(blank_sheet()))
    >>> rec.header["revision"], rec.signed, [g.kind for g in rec.steps][:2]
    ('A', False, ['liquid', 'start'])
    """
    meta = meta or Meta()
    version = fp.program_version() if version is None else version
    doc = analysis.doc if isinstance(analysis.doc, dict) else {}
    hdr_doc = doc.get("header") if isinstance(doc.get("header"), dict) else {}
    scheme = hdr_doc.get("revision_scheme") if hdr_doc.get("revision_scheme") in ("letters", "numbers") else "letters"
    system = hdr_doc.get("units") if hdr_doc.get("units") in ("SI", "US") else "SI"
    header = {
        "project": _text(hdr_doc.get("project")),
        "calc_number": _text(hdr_doc.get("calc_number")),
        "title": _text(hdr_doc.get("title")),
        "revision": revision_label(meta.label_index, scheme),
        "revision_scheme": scheme,
        "store_revision": meta.store_revision,
        "sheet_id": meta.sheet_id,
        "created": meta.created,
        "printed": meta.printed,
        "units": system,
        "frozen": meta.frozen,
    }
    fprint = fp.fingerprint(analysis, version)
    by_role = {s.get("role"): s for s in meta.signatures}
    signoff = [Signature(r, ROLE_TITLES[r], _text(by_role.get(r, {}).get("name")),
                         _text(by_role.get(r, {}).get("comment")), _text(by_role.get(r, {}).get("signed")))
               for r in ROLES]
    codes = {str(getattr(f, "code", "")) for f in analysis.findings}
    cautions = [text for covered, text in CAUTIONS if not codes.intersection(covered)]
    common = dict(header=header, purpose=_text(hdr_doc.get("purpose")), disclaimer=DISCLAIMER,
                  cautions=cautions, signoff=signoff, fingerprint=fprint,
                  fingerprint_grouped=fp.grouped(fprint), verify_url=meta.verify_url, program=fp.PROGRAM,
                  version=version)
    if not analysis.ok:
        return Record(scope=[], references=[], assumptions=[], inputs=[], equations=[], steps=[],
                      steps_point="", solve_log=[], solve_notes=[], results=[], points_table=None, no_point="", plots=[], findings={},
                      solver_notes=[], uncertainty=[],
                      errors=[{"path": e.path, "message": e.message} for e in analysis.errors], **common)
    b = _Builder(analysis, system)
    results = b.results()
    return Record(
        scope=b.scope(),
        assumptions=b.assumptions(),
        inputs=b.inputs(),
        equations=b.equations(),
        steps=b.steps(),
        steps_point=b.steps_point(),
        solve_log=b.solve_log(),
        solve_notes=b.solve_notes(),
        results=results,
        points_table=b.points_table(results),
        no_point=b.no_point(),
        plots=plots.all_plots(analysis, system),
        findings=b.findings(),
        solver_notes=list(analysis.solution.warnings),
        uncertainty=b.uncertainty(),
        references=b.refs.items,
        **common,
    )


def _text(v) -> str:
    return v if isinstance(v, str) else ("" if v is None else str(v))


class _Builder:
    """Builds the sections of one record; holds the references so that every section cites alike."""

    def __init__(self, analysis, system: str):
        self.a = analysis
        self.doc = analysis.doc
        self.line = analysis.line
        self.sol = analysis.solution
        self.system = system
        self.refs = _Refs()
        self.liquid = self.line.liquid
        m = friction.METHODS[self.line.method]
        self.method = m
        # Order of first use: the method and the properties are named in the assumptions.
        self.ref_method = self.refs.cite(m.reference, "friction factor")
        self.ref_darcy = self.refs.cite(DARCY_REF, "friction loss")
        self.ref_liquid = (self.refs.cite(self.liquid.source, "liquid properties")
                           if self.liquid.source != "given by the user" else "")
        self.ref_g = self.refs.cite(GRAVITY_REF, "gravity")
        self.design = self.sol.design

    def fitting_ref(self, ft) -> tuple[str, str]:
        """References and row detail for a fitting: its table's source, or the method's author when typed."""
        if not ft.source.startswith("typed"):
            return self.refs.cite_source(ft.source, "fitting losses")
        if ft.model in ("2k", "3k"):
            return self.refs.cite(method_citation(ft.model), f"{ft.model[0]}-K fittings"), ""
        return "", ""

    # -- purpose and scope -------------------------------------------------------------------

    def _node_words(self, node, which: str) -> str:
        z = shown(node.elevation, "length", self.system)
        if node.kind == "reservoir":
            p = f", {shown(node.pressure, 'pressure', self.system)} (gauge) on the surface" if node.pressure else ""
            return f"a reservoir with its water surface at {z}{p}"
        if node.kind == "pressure":
            return f"a point at {shown(node.pressure, 'pressure', self.system)} (gauge), elevation {z}"
        return f"a free jet at elevation {z}"

    def scope(self) -> list[str]:
        els = self.line.elements
        counts = []
        for kind, word in (("pipe", "pipe run"), ("valve", "valve"), ("pump", "pump"), ("turbine", "turbine")):
            n = sum(1 for e in els if e.kind == kind)
            if n:
                counts.append(f"{n} {word}{'s' if n > 1 else ''}")
        length = sum(e.L for e in self.line.runs)
        liquid = self.liquid.name + (f" at {self.liquid.T - 273.15:.4g} °C" if self.liquid.T else "")
        out = [
            f"Steady flow of {liquid} in a series line of {', '.join(counts)} "
            f"({shown(length, 'length', self.system)} of pipe in all), from "
            f"{self._node_words(self.line.start, 'start')} to {self._node_words(self.line.end, 'end')}.",
            "The record finds every operating point of the line with its machines, works the design point "
            "step by step, traces the energy and hydraulic grade lines along the chainage, and reports "
            "the checks made on the result.",
            "Not covered: transient pressures (surge, water hammer) beyond any surge finding shown; "
            "structural design of pipes, anchors, thrust blocks and supports; machine selection and "
            "mechanical, electrical and control design.",
        ]
        return out

    # -- assumptions -------------------------------------------------------------------------

    def assumptions(self) -> list[Assumption]:
        m = self.method
        if self.line.method == "colebrook":
            why = ("Colebrook's equation is the basis of the Moody chart and holds for turbulent flow in "
                   "commercial pipe; it is solved here to machine precision rather than approximated.")
        else:
            why = (f"{m.name}'s explicit form was chosen on the sheet (for comparison); it departs slightly "
                   "from Colebrook's equation, which is the usual reference.")
        liquid = self.liquid
        if liquid.source == "given by the user":
            props = (f"Liquid properties ({liquid.name}) as given on the sheet, constant along the line.")
        else:
            props = (f"Water properties at {liquid.T - 273.15:.4g} °C from the IAPWS formulations {self.ref_liquid}, "
                     "taken at atmospheric pressure and constant along the line (the effect of pressure on "
                     "density and viscosity is far below the uncertainty of the roughness).")
        out = [
            Assumption("Steady, incompressible, isothermal flow; every pipe runs full (no free surface, "
                       "no trapped air) and the water levels and pressures at the ends stay as given."),
            Assumption(f"Friction loss by the Darcy-Weisbach equation {self.ref_darcy}, the friction "
                       f"factor by {m.name} {self.ref_method}: {why} Laminar flow (Re below 2000) uses "
                       "64/Re; between Re 2000 and 4000 the factor is blended and flagged as uncertain."),
            Assumption(props),
            Assumption(f"Standard gravity g = 9.80665 m/s² {self.ref_g}."),
            Assumption("Roughness from the material table (new pipe, or aged where a run says so) unless typed; "
                       "pipe roughens with age and deposits, which raises the losses.", verify=True),
            Assumption("Fitting losses as loss coefficients K on the velocity head of the run they sit on. "
                       "On the grade lines, entrance losses fall at the start of a run, exit losses at its end, "
                       "and all other losses are spread evenly along it."),
            Assumption("Pressures are gauge, relative to the site's atmospheric pressure, unless marked absolute."),
        ]
        if any(isinstance(e, Pump) and e.mode == "curve" for e in self.line.elements):
            out.append(Assumption("Pump curves are quadratics fitted through the typed points; beyond the "
                                  "typed flows the curve is extrapolated and flagged.", verify=True))
        if any(isinstance(e, Pump) and e.speed_ratio != 1.0 for e in self.line.elements):
            out.append(Assumption("A pump at another speed follows the affinity laws: Q in proportion to "
                                  "speed, head to its square.", verify=True))
        if any(isinstance(e, Turbine) for e in self.line.elements):
            out.append(Assumption("Turbine efficiency is taken constant at the typed value over the flows "
                                  "considered; a real machine's efficiency falls away from its best point.",
                                  verify=True))
        if any(e.kind == "jet" for e in (self.line.start, self.line.end)):
            out.append(Assumption("The free jet leaves at atmospheric pressure with the velocity of its "
                                  "nozzle (or of the last run when no nozzle is given)."))
        return out

    # -- inputs ------------------------------------------------------------------------------

    def _typed(self, d: dict, key: str, kind, label: str, source: str = "typed") -> list[str] | None:
        """A row for a typed field: label, as typed, SI value, source; None if the field is blank."""
        v = d.get(key) if isinstance(d, dict) else None
        if v is None or (isinstance(v, str) and not v.strip()):
            return None
        try:
            value = parse_quantity(v, kind, key)
            si_text = f"{si(value)} {_SI_UNIT[kind]}" if kind is not RATIO else si(value)
        except ValueError:
            si_text = "–"
        return [label, _text(v), si_text, source]

    def inputs(self) -> list[Table]:
        doc = self.doc
        head = ["Quantity", "As typed", "SI value", "Source"]
        align = ["l", "l", "r", "l"]
        tables_out = []
        # Liquid, site and settings.
        rows = []
        liq = doc.get("liquid") or {}
        lq = self.liquid
        if lq.source == "given by the user":
            rows.append(["Liquid", _text(liq.get("name")) or lq.name, "", "typed"])
            for key, kind, label in (("density", DENSITY, "Density ρ"), ("viscosity", VISCOSITY, "Viscosity μ"),
                                     ("vapour_pressure", PRESSURE, "Vapour pressure (absolute)"),
                                     ("bulk_modulus", MODULUS, "Bulk modulus")):
                r = self._typed(liq, key, kind, label)
                if r:
                    rows.append(r)
        else:
            rows.append(["Liquid", "water", "", "typed"])
            r = self._typed(liq, "temperature", TEMPERATURE, "Temperature T")
            if r:
                rows.append(r)
            src = self.ref_liquid
            rows += [["Density ρ", "", f"{si(lq.rho)} kg/m³", f"IAPWS {src}"],
                     ["Viscosity μ", "", f"{si(lq.mu)} Pa·s", f"IAPWS {src}"],
                     ["Vapour pressure (absolute)", "", f"{si(lq.p_vap)} Pa", f"IAPWS {src}"]]
            if lq.bulk_modulus:
                rows.append(["Bulk modulus", "", f"{si(lq.bulk_modulus)} Pa", f"IAPWS {src}"])
        site = doc.get("site") or {}
        r = self._typed(site, "atmospheric_pressure", PRESSURE, "Atmospheric pressure (absolute)")
        rows.append(r or ["Atmospheric pressure (absolute)", "", f"{si(self.line.p_atm)} Pa", "default"])
        rows.append(["Friction method", _text((doc.get("settings") or {}).get("friction_method")) or "colebrook",
                     self.method.name, f"chosen {self.ref_method}"])
        rows.append(["Gravity g", "", "9.80665 m/s²", f"standard {self.ref_g}"])
        tables_out.append(Table(head, rows, "Liquid, site and method", align, css="inputs"))

        for which in ("start", "end"):
            node_doc = doc.get(which) or {}
            node = getattr(self.line, which)
            rows = []
            for key, kind, label in (("elevation", LENGTH, "Elevation" + (" of the water surface" if node.kind == "reservoir" else "")),
                                     ("pressure", PRESSURE, "Pressure (gauge)"),
                                     ("outlet_elevation", LENGTH, "Elevation of the pipe connection"),
                                     ("nozzle_diameter", LENGTH, "Nozzle diameter")):
                r = self._typed(node_doc, key, kind, label)
                if r:
                    rows.append(r)
            kind = {"reservoir": "a reservoir", "pressure": "a point of known pressure", "jet": "a free jet"}[node.kind]
            tables_out.append(Table(head, rows, f"{which.capitalize()} of the line: {kind}", align, css="inputs"))

        for i, (e, el) in enumerate(zip(doc.get("elements") or [], self.line.elements)):
            tables_out += self._element_inputs(i, e, el, head, align)
        return tables_out

    def _element_inputs(self, i: int, e: dict, el, head, align) -> list[Table]:
        title = f"Element {i + 1}: {el.kind} «{el.label}»" if el.label else f"Element {i + 1}: {el.kind}"
        rows: list[list[str]] = []
        out = []
        if isinstance(el, PipeRun):
            rows.append(self._typed(e, "length", LENGTH, "Length L"))
            r = self._typed(e, "diameter", LENGTH, "Inner diameter D")
            if r is None and el.size is not None:
                refs, _ = self.refs.cite_source(el.size.source, "pipe sizes")
                size = e.get("size") or {}
                rows.append(["Inner diameter D", f"size {_text(size.get('nominal'))} {_text(size.get('class'))}",
                             f"{si(el.D)} m",
                             f"size table: {el.size.nominal} {el.size.klass}, OD {si(el.size.OD * 1e3)} mm, "
                             f"wall {si(el.size.wall * 1e3)} mm {refs}"])
            else:
                rows.append(r)
            aged = e.get("condition") == "aged"
            r = self._typed(e, "roughness", LENGTH, "Roughness ε")
            if r is None and el.material is not None:
                source = el.material.source_aged if aged else el.material.source_roughness
                refs, detail = self.refs.cite_source(source or "", "aged roughness" if aged else "pipe roughness")
                rows.append(["Roughness ε" + (" (aged pipe)" if aged else ""),
                             f"material {_text(e.get('material'))}" + (", condition aged" if aged else ""),
                             f"{si(el.eps)} m", f"material table: {el.material.name}"
                             + (f" ({detail})" if detail else "") + f" {refs}"])
            else:
                rows.append(r)
            if el.material is not None and el.eps_aged and not aged and r is None:
                refs, detail = self.refs.cite_source(el.material.source_aged or "", "aged roughness")
                rows.append(["Roughness of aged pipe (upper end of the uncertainty band; not the solve)", "",
                             f"{si(el.eps_aged)} m",
                             "material table" + (f" ({detail})" if detail else "") + f" {refs}"])
            rows.append(self._typed(e, "end_elevation", LENGTH, "Elevation at the end of the run"))
            rows.append(self._typed(e, "wall_thickness", LENGTH, "Wall thickness"))  # else in the size row
            rows.append(self._typed(e, "rating", PRESSURE, "Pressure rating (gauge)"))
            if e.get("restraint"):
                rows.append(["Restraint", _text(e.get("restraint")), "", "typed"])
            # Profile points and fittings go in the same table (one table per element lays out faster).
            for j, p in enumerate(x for x in (e.get("profile") or []) if isinstance(x, dict)):
                ch = parse_quantity(p.get("chainage"), LENGTH, "chainage")
                z = parse_quantity(p.get("elevation"), LENGTH, "elevation")
                rows.append([f"Profile point {j + 1}: chainage in the run, elevation",
                             f"{_text(p.get('chainage'))}, {_text(p.get('elevation'))}",
                             f"{si(ch)} m, {si(z)} m", "typed"])
            for ft in el.fittings:
                refs, detail = self.fitting_ref(ft)
                consts = ", ".join(f"{k} = {sub(v)}" for k, v in ft.params.items())
                where = "typed" if ft.source.startswith("typed") else "fitting table"
                model = {"k": "K", "2k": "2-K", "3k": "3-K"}[ft.model]
                rows.append([f"Fitting: {ft.name}" + (f" × {ft.count}" if ft.count > 1 else ""),
                             f"{ft.key}, count {ft.count}", f"{model}: {consts}",
                             where + (f" ({detail})" if detail else "") + (f" {refs}" if refs else "")])
            out.append(Table(head, [r for r in rows if r], title, align, css="inputs"))
            return out
        if isinstance(el, (Turbine, Pump)):
            title += f", {el.mode} mode"
        if isinstance(el, Turbine):
            rows.append(self._typed(e, "power", POWER, "Shaft power P"))
            rows.append(self._typed(e, "head", LENGTH, "Head H"))
            rows.append(self._typed(e, "efficiency", RATIO, "Efficiency η")
                        or ["Efficiency η", "", "1", "default (hydraulic power only)"])
        elif isinstance(el, Pump):
            rows.append(self._typed(e, "head", LENGTH, "Head H"))
            rows.append(self._typed(e, "speed_ratio", RATIO, "Speed ratio n"))
            rows.append(self._typed(e, "efficiency", RATIO, "Efficiency η"))
        elif isinstance(el, Valve):
            rows.append(self._typed(e, "K", RATIO, "Loss coefficient K"))
            r = self._typed(e, "diameter", LENGTH, "Diameter D")
            rows.append(r or ["Diameter D", "", f"{si(el.D)} m", el.D_source])
        curve = [p for p in (e.get("curve") or []) if isinstance(p, dict)] if e.get("mode") == "curve" else []
        for j, p in enumerate(curve):
            q = parse_quantity(p.get("flow"), FLOW, "flow")
            h = parse_quantity(p.get("head"), LENGTH, "head")
            extra = [_text(p.get(k)) for k in ("efficiency", "npsh_required") if _text(p.get(k)).strip()]
            rows.append([f"Curve point {j + 1}: flow, head" + (", efficiency" if _text(p.get("efficiency")).strip() else "")
                         + (", NPSH required" if _text(p.get("npsh_required")).strip() else ""),
                         ", ".join([_text(p.get("flow")), _text(p.get("head"))] + extra),
                         f"{si(q)} m³/s, {si(h)} m", "typed"])
        out.append(Table(head, [r for r in rows if r], title, align, css="inputs"))
        return out

    # -- method ------------------------------------------------------------------------------

    def friction_equation(self) -> str:
        return {
            "colebrook": "1/√f = -2 log₁₀( (ε/D)/3.7 + 2.51/(Re √f) )",
            "swamee_jain_1976": "f = 0.25 / [ log₁₀( (ε/D)/3.7 + 5.74/Re^0.9 ) ]²",
            "haaland_1983": "1/√f = -1.8 log₁₀[ ((ε/D)/3.7)^1.11 + 6.9/Re ]",
            "churchill_1977": "f = 8 [ (8/Re)^12 + (A + B)^(-3/2) ]^(1/12), A = [2.457 ln(1/((7/Re)^0.9 + 0.27 ε/D))]^16, B = (37530/Re)^16",
            "serghides_1984": "A = -2 log₁₀((ε/D)/3.7 + 12/Re), B = -2 log₁₀((ε/D)/3.7 + 2.51A/Re), C = -2 log₁₀((ε/D)/3.7 + 2.51B/Re), f = [A - (B-A)²/(C-2B+A)]^-2",
        }[self.line.method]

    def equations(self) -> list[Equation]:
        els = self.line.elements
        fits = [ft for r in self.line.runs for ft in r.fittings]
        eq = [
            Equation("Energy balance (the operating point)", "E(Q) = H_start - H_end - Σ hᵢ(Q) = 0",
                     "H total head at an end [m]; hᵢ head taken from the flow by element i (negative for a pump). "
                     "Every root is found: E is scanned on a logarithmic grid of flows for sign changes, and each "
                     "bracket is closed with Brent's method."),
            Equation("Total head at an end", "H = z + p/(ρ g) + V²/(2 g)",
                     "z elevation [m]; p gauge pressure [Pa]; the velocity head counts at a pressure point or jet, "
                     "not at a reservoir surface."),
            Equation("Flow area, velocity and velocity head", "A = π D²/4,  V = Q/A,  h_v = V²/(2 g)"),
            Equation("Reynolds number", "Re = V D / ν,  ν = μ/ρ"),
            Equation("Friction loss (Darcy-Weisbach)", "h_f = f (L/D) V²/(2 g)", "", self.ref_darcy),
            Equation(f"Friction factor, turbulent flow ({self.method.name})", self.friction_equation(),
                     "ε absolute roughness [m]; valid for Re above 4000", self.ref_method),
            Equation("Friction factor, laminar flow and the transition",
                     "f = 64/Re (Re < 2000);  f = (1 - w) 64/Re + w f_t, w = (Re - 2000)/2000 (2000 ≤ Re < 4000)",
                     "the transition band has no reliable correlation: the blend is flagged with its bounds"),
            Equation("Fitting and valve losses", "h_m = n K V²/(2 g)", "n count; K loss coefficient on this velocity"),
        ]
        two = [ft for ft in fits if ft.model == "2k"]
        three = [ft for ft in fits if ft.model == "3k"]
        if two:
            eq.append(Equation("2-K method (Hooper 1981)", "K = K₁/Re + K∞ (1 + 1/D_in)",
                               "D_in inner diameter in inches", "".join(dict.fromkeys(self.fitting_ref(ft)[0] for ft in two))))
        if three:
            eq.append(Equation("3-K method (Darby 2001)", "K = K₁/Re + K_i (1 + K_d / D_n^0.3)",
                               "D_n nominal size in inches (from the bore along Schedule 40 steel)",
                               "".join(dict.fromkeys(self.fitting_ref(ft)[0] for ft in three))))
        if any(isinstance(e, Turbine) for e in els):
            eq.append(Equation("Turbine", "H_t = P/(η ρ g Q) (set power);  P_h = ρ g Q H_t;  P = η P_h",
                               "H_t head taken [m]; P shaft power [W]; η efficiency"))
            eq.append(Equation("Largest power the line can give a turbine", "P_max = max over Q of η ρ g Q H_a(Q)",
                               "H_a(Q) head left for the turbine after the line's losses"))
        if any(isinstance(e, Pump) for e in els):
            eq.append(Equation("Pump", "H_p(Q) = n² H₁(Q/n),  H₁(Q) = a Q² + b Q + c;  P_h = ρ g Q H_p;  P = P_h/η",
                               "H₁ the curve fitted to the typed points (least squares, exact through three); n speed ratio"))
        eq.append(Equation("Grade lines", "EGL = H along the line;  HGL = EGL - V²/(2 g);  pressure head = HGL - z"))
        return eq

    # -- steps -------------------------------------------------------------------------------

    def steps_point(self) -> str:
        if self.design is None:
            return ""
        return shown(self.design["Q"], "flow", self.system)

    def steps(self) -> list[StepGroup]:
        lq = self.liquid
        g_ref = self.ref_g
        nu = lq.mu / lq.rho
        groups = [StepGroup("Liquid", "liquid", [
            Step("ρ", "density", "ρ", "", num(lq.rho), "kg/m³", lq.rho, self.ref_liquid),
            Step("μ", "dynamic viscosity", "μ", "", num(lq.mu), "Pa·s", lq.mu, self.ref_liquid),
            Step("ν", "kinematic viscosity", "ν = μ/ρ", f"= {sub(lq.mu)} / {sub(lq.rho)}", num(nu), "m²/s", nu),
            Step("g", "gravity", "g", "", "9.80665", "m/s²", G, g_ref),
        ])]
        p = self.design
        if p is None:
            return groups
        Q = p["Q"]
        rho = lq.rho
        groups.append(self._node_steps("start", self.line.start, Q, p["head_start"]))
        for el, d in zip(self.line.elements, p["elements"]):
            title = f"Element {d['index'] + 1}: {el.kind} «{el.label}»" if el.label else f"Element {d['index'] + 1}: {el.kind}"
            if isinstance(el, PipeRun):
                groups.append(self._pipe_steps(title, el, d, Q, nu))
            elif isinstance(el, Valve):
                groups.append(self._valve_steps(title, el, d, Q))
            elif isinstance(el, Turbine):
                groups.append(self._turbine_steps(title, el, d, Q, rho))
            elif isinstance(el, Pump):
                groups.append(self._pump_steps(title, el, d, Q, rho))
        groups.append(self._node_steps("end", self.line.end, Q, p["head_end"]))
        total = sum(d["head_change"] for d in p["elements"])
        E = p["head_start"] - p["head_end"] - total
        groups.append(StepGroup("Energy balance at the operating point", "balance", [
            Step("Σh", "head taken by all elements", "Σ hᵢ",
                 "= " + " + ".join(paren(d["head_change"]) for d in p["elements"]), num(total), "m", total),
            Step("E", "energy balance residual", "E = H_start - H_end - Σ hᵢ",
                 f"= {sub(p['head_start'])} - {sub(p['head_end'])} - {paren(total)}", num(E, 3), "m", E),
        ], ["A residual this small (round-off against heads of this size) confirms the operating point."]))
        return groups

    def _node_steps(self, which: str, node, Q: float, H: float) -> StepGroup:
        rho = self.liquid.rho
        title = "Start of the line" if which == "start" else "End of the line"
        sym = "H_start" if which == "start" else "H_end"
        steps = []
        if node.kind == "reservoir":
            if node.pressure:
                steps.append(Step(sym, "total head at the water surface", "H = z + p/(ρ g)",
                                  f"= {sub(node.elevation)} + {paren(node.pressure)} / ({sub(rho)} × 9.80665)",
                                  num(H), "m", H))
            else:
                steps.append(Step(sym, "total head at the water surface", "H = z", f"= {sub(node.elevation)}",
                                  num(H), "m", H))
        else:
            hv = node.velocity_head(Q)
            D = node.nozzle_diameter if (node.kind == "jet" and node.nozzle_diameter) else node.D_adjacent
            A = math.pi * D * D / 4.0
            V = Q / A
            steps.append(Step("V", "velocity " + ("of the jet" if node.kind == "jet" else "at the end point"),
                              "V = Q / (π D²/4)", f"= {sub(Q)} / (π × {sub(D)}² / 4)", num(V), "m/s", V))
            if node.kind == "jet":
                steps.append(Step(sym, "total head of the jet", "H = z + V²/(2 g)",
                                  f"= {sub(node.elevation)} + {sub(V)}² / (2 × 9.80665)", num(H), "m", H))
            else:
                steps.append(Step(sym, "total head at the point", "H = z + p/(ρ g) + V²/(2 g)",
                                  f"= {sub(node.elevation)} + {paren(node.pressure)} / ({sub(rho)} × 9.80665) + "
                                  f"{sub(V)}² / (2 × 9.80665)", num(H), "m", H))
            del hv
        return StepGroup(title, which, steps)

    def _friction_steps(self, d: dict, Re: float, eD: float) -> list[Step]:
        f = d["f"]
        ref = self.ref_method
        method = self.line.method
        if d["regime"] == "laminar" and method != "churchill_1977":
            return [Step("f", "friction factor (laminar)", "f = 64/Re", f"= 64 / {sub(Re)}", num(f), "–", f)]
        if d["regime"] == "transitional" and method != "churchill_1977":
            ft = d["f_bounds"][1]
            w = (Re - friction.RE_LAMINAR) / (friction.RE_TURBULENT - friction.RE_LAMINAR)
            return [
                Step("f_t", f"turbulent factor ({self.method.name})", self.friction_equation(), "at this Re and ε/D",
                     num(ft), "–", ft, ref),
                Step("w", "blend weight", "w = (Re - 2000)/2000", f"= ({sub(Re)} - 2000) / 2000", num(w), "–", w),
                Step("f", "friction factor (transition, uncertain)", "f = (1 - w) 64/Re + w f_t",
                     f"= (1 - {sub(w)}) × 64/{sub(Re)} + {sub(w)} × {sub(ft)}", num(f), "–", f),
            ]
        if method == "colebrook":
            lhs = 1.0 / math.sqrt(f)
            rhs = -2.0 * math.log10(eD / 3.7 + 2.51 / (Re * math.sqrt(f)))
            return [
                Step("f", "friction factor (Colebrook, solved)", "1/√f = -2 log₁₀( (ε/D)/3.7 + 2.51/(Re √f) )",
                     f"1/√f = -2 log₁₀( {sub(eD)}/3.7 + 2.51/({sub(Re)} √f) )", num(f), "–", f, ref,
                     also=f"check at this f: 1/√{sub(f)} = {si(lhs)}; right side = {si(rhs)}"),
            ]
        if method == "swamee_jain_1976":
            s = f"= 0.25 / [log₁₀({sub(eD)}/3.7 + 5.74/{sub(Re)}^0.9)]²"
        elif method == "haaland_1983":
            s = f"1/√f = -1.8 log₁₀[({sub(eD)}/3.7)^1.11 + 6.9/{sub(Re)}]"
        elif method == "churchill_1977":
            s = f"with Re = {sub(Re)}, ε/D = {sub(eD)}"
        else:
            s = f"with Re = {sub(Re)}, ε/D = {sub(eD)}"
        return [Step("f", f"friction factor ({self.method.name})", self.friction_equation(), s, num(f), "–", f, ref)]

    def _pipe_steps(self, title: str, el: PipeRun, d: dict, Q: float, nu: float) -> StepGroup:
        D, L, A, V, hv, Re, eD = el.D, el.L, d["A"], d["V"], d["velocity_head"], d["Re"], d["eD"]
        steps = [
            Step("A", "flow area", "A = π D²/4", f"= π × {sub(D)}² / 4", num(A), "m²", A),
            Step("V", "mean velocity", "V = Q/A", f"= {sub(Q)} / {sub(A)}", num(V), "m/s", V),
            Step("h_v", "velocity head", "h_v = V²/(2 g)", f"= {sub(V)}² / (2 × 9.80665)", num(hv), "m", hv),
            Step("Re", "Reynolds number", "Re = V D / ν", f"= {sub(V)} × {sub(D)} / {sub(nu)}", num(Re), "–", Re),
            Step("ε/D", "relative roughness", "ε/D", f"= {sub(el.eps)} / {sub(D)}", num(eD), "–", eD),
        ]
        steps += self._friction_steps(d, Re, eD)
        steps.append(Step("h_f", "friction loss", "h_f = f (L/D) h_v",
                          f"= {sub(d['f'])} × ({sub(L)} / {sub(D)}) × {sub(hv)}", num(d["h_friction"]), "m",
                          d["h_friction"], self.ref_darcy))
        for ft, x in zip(el.fittings, d["fittings"]):
            name = ft.name
            if ft.model == "2k":
                K1, Kinf = ft.params["K1"], ft.params["Kinf"]
                D_in = D / tables.INCH
                steps.append(Step("K", f"{name} (2-K)", "K = K₁/Re + K∞ (1 + 1/D_in)",
                                  f"= {sub(K1)}/{sub(Re)} + {sub(Kinf)} × (1 + 1/{sub(D_in)})", num(x["K"]), "–",
                                  x["K"], self.fitting_ref(ft)[0]))
            elif ft.model == "3k":
                K1, Ki, Kd = ft.params["K1"], ft.params["Ki"], ft.params["Kd"]
                Dn = tables.darby_nominal_size(D) / tables.INCH
                steps.append(Step("K", f"{name} (3-K)", "K = K₁/Re + K_i (1 + K_d/D_n^0.3)",
                                  f"= {sub(K1)}/{sub(Re)} + {sub(Ki)} × (1 + {sub(Kd)}/{sub(Dn)}^0.3)", num(x["K"]), "–",
                                  x["K"], self.fitting_ref(ft)[0]))
            steps.append(Step("h_m", f"{name}" + (f" × {ft.count}" if ft.count > 1 else ""), "h_m = n K h_v",
                              f"= {ft.count} × {sub(x['K'])} × {sub(hv)}", num(x["h"]), "m", x["h"],
                              self.fitting_ref(ft)[0] if ft.model == "k" else ""))
        total = d["head_change"]
        parts = [d["h_friction"]] + [x["h"] for x in d["fittings"]]
        steps.append(Step("h", "head taken by the run", "h = h_f + Σ h_m",
                          "= " + " + ".join(sub(v) for v in parts), num(total), "m", total))
        notes = []
        if d.get("friction_note"):
            notes.append(d["friction_note"])
        return StepGroup(title, "pipe", steps, notes)

    def _valve_steps(self, title: str, el: Valve, d: dict, Q: float) -> StepGroup:
        A = math.pi * el.D ** 2 / 4
        return StepGroup(title, "valve", [
            Step("V", "velocity in the valve bore", "V = Q / (π D²/4)", f"= {sub(Q)} / (π × {sub(el.D)}² / 4)",
                 num(d["V"]), "m/s", d["V"]),
            Step("h_v", "velocity head", "h_v = V²/(2 g)", f"= {sub(d['V'])}² / (2 × 9.80665)",
                 num(d["velocity_head"]), "m", d["velocity_head"]),
            Step("h", "head taken by the valve", "h = K h_v", f"= {sub(el.K)} × {sub(d['velocity_head'])}",
                 num(d["h"]), "m", d["h"]),
        ], [f"Bore {sub(A)} m² ({el.D_source})."])

    def _turbine_steps(self, title: str, el: Turbine, d: dict, Q: float, rho: float) -> StepGroup:
        H = d["head"]
        steps = []
        if el.mode == "power":
            steps.append(Step("H_t", "head taken at the set power", "H_t = P/(η ρ g Q)",
                              f"= {sub(el.power)} / ({sub(el.efficiency)} × {sub(rho)} × 9.80665 × {sub(Q)})",
                              num(H), "m", H))
        elif el.mode == "head":
            steps.append(Step("H_t", "head taken (typed)", "H_t", "", num(H), "m", H))
        else:
            a, b, c = el.curve.coeffs
            steps.append(Step("H_t", "head from the fitted curve", "H_t = a Q² + b Q + c",
                              f"= {paren(a)} × {sub(Q)}² + {paren(b)} × {sub(Q)} + {paren(c)}", num(H), "m", H))
        steps.append(Step("P_h", "hydraulic power", "P_h = ρ g Q H_t",
                          f"= {sub(rho)} × 9.80665 × {sub(Q)} × {sub(H)}", num(d["power_hydraulic"]), "W",
                          d["power_hydraulic"]))
        steps.append(Step("P", "shaft power", "P = η P_h", f"= {sub(el.efficiency)} × {sub(d['power_hydraulic'])}",
                          num(d["power_shaft"]), "W", d["power_shaft"]))
        notes = []
        m = next((m for m in self.sol.machines if m["index"] == d["index"]), None)
        if m and m.get("Q_at_max"):
            notes.append(f"The most shaft power the line can give this turbine is {shown(m['power_max'], 'power', self.system)} "
                         f"at {shown(m['Q_at_max'], 'flow', self.system)} (head available "
                         f"{shown(m['head_available_at_max'], 'head', self.system)}).")
        if d.get("in_curve_range") is False:
            notes.append("The flow lies outside the typed curve points: the curve is extrapolated.")
        return StepGroup(title, "turbine", steps, notes)

    def _pump_steps(self, title: str, el: Pump, d: dict, Q: float, rho: float) -> StepGroup:
        H = d["head"]
        steps = []
        n = el.speed_ratio
        if el.mode == "head":
            steps.append(Step("H_p", "head added (typed)", "H_p", "", num(H), "m", H))
        else:
            a, b, c = el.curve.coeffs
            q = Q / n
            H1 = el.curve(q)
            if n != 1.0:
                steps.append(Step("Q₁", "flow at the curve's own speed", "Q₁ = Q/n", f"= {sub(Q)} / {sub(n)}",
                                  num(q), "m³/s", q))
            steps.append(Step("H₁", "head from the fitted curve", "H₁ = a Q₁² + b Q₁ + c",
                              f"= {paren(a)} × {sub(q)}² + {paren(b)} × {sub(q)} + {paren(c)}", num(H1), "m", H1))
            if n != 1.0:
                steps.append(Step("H_p", "head at this speed", "H_p = n² H₁", f"= {sub(n)}² × {sub(H1)}", num(H), "m", H))
        steps.append(Step("P_h", "hydraulic power", "P_h = ρ g Q H_p", f"= {sub(rho)} × 9.80665 × {sub(Q)} × {sub(H)}",
                          num(d["power_hydraulic"]), "W", d["power_hydraulic"]))
        eta = d.get("efficiency")
        if eta:
            if el.efficiency_curve is not None:
                a, b, c = el.efficiency_curve.coeffs
                q = Q / n
                steps.append(Step("η", "efficiency from the fitted curve", "η = a Q₁² + b Q₁ + c",
                                  f"= {paren(a)} × {sub(q)}² + {paren(b)} × {sub(q)} + {paren(c)}", num(eta), "–", eta))
            steps.append(Step("P", "shaft power", "P = P_h/η", f"= {sub(d['power_hydraulic'])} / {sub(eta)}",
                              num(d["power_shaft"]), "W", d["power_shaft"]))
        if d.get("npsh_required") is not None:
            steps.append(Step("NPSH_r", "NPSH required (fitted curve)", "NPSH_r = n² NPSH₁(Q/n)", "",
                              num(d["npsh_required"]), "m", d["npsh_required"]))
        notes = []
        if el.curve is not None:
            notes.append(f"Largest gap between the typed points and the fitted curve: {num(el.curve.fit_residual())} m.")
        if d.get("in_curve_range") is False:
            notes.append("The flow lies outside the typed curve points: the curve is extrapolated.")
        return StepGroup(title, "pump", steps, notes)

    # -- solve log ---------------------------------------------------------------------------

    def solve_log(self) -> list[Table]:
        log = self.sol.log
        scan = log.get("scan", {})
        s = self.system
        t1 = Table(["Item", "Value"], [
            ["Flows scanned", f"{shown(scan.get('Q_min'), 'flow', s)} to {shown(scan.get('Q_max'), 'flow', s)}"],
            ["Grid points (logarithmic)", str(scan.get("grid_points", "–"))],
            ["Brackets with a sign change", str(scan.get("brackets", "–"))],
            ["Extrema refined (close pairs of roots)", str(scan.get("extrema_refined", "–"))],
        ], "Scan of the energy balance E(Q)", ["l", "r"], css="scan")
        rows = []
        for k, r in enumerate(log.get("roots", [])):
            a, b = r["bracket"]
            rows.append([str(k + 1), f"{shown(a, 'flow', s, 6)} to {shown(b, 'flow', s, 6)}",
                         str(r["iterations"]), str(r["function_calls"]), shown(r["Q"], "flow", s, 6),
                         f"{num(r['residual'], 3)} m"])
        t2 = Table(["Root", "Bracket", "Iterations", "Function calls", "Flow", "Final residual E"], rows,
                   "Roots closed with Brent's method", ["r", "l", "r", "r", "r", "r"], css="roots")
        return [t1, t2]

    def solve_notes(self) -> list[str]:
        sol = self.sol
        out = [f"Status: {sol.status.replace('_', ' ')}; {sol.message}."]
        if sol.design is not None:
            out.append(f"Design point: operating point {sol.design_index + 1}, {sol.design['why']}.")
        return out

    # -- results -----------------------------------------------------------------------------

    def results(self) -> list[dict]:
        s = self.system
        out = []
        for k, p in enumerate(self.sol.points):
            rows = []
            for el, d in zip(self.line.elements, p["elements"]):
                name = f"{d['index'] + 1}. {el.label or el.kind}"
                if d["kind"] == "pipe":
                    rows.append([name, shown(d["V"], "velocity", s), num(d["Re"]), num(d["f"]),
                                 shown(d["h_friction"], "head", s), shown(d["h_fittings"], "head", s),
                                 shown(d["head_change"], "head", s), "–"])
                elif d["kind"] == "valve":
                    rows.append([name, shown(d["V"], "velocity", s), "–", "–", "–", shown(d["h"], "head", s),
                                 shown(d["head_change"], "head", s), "–"])
                else:
                    rows.append([name, "–", "–", "–", "–", "–", shown(d["head_change"], "head", s),
                                 shown(d.get("power_shaft"), "power", s)])
            design = bool(p.get("is_design"))
            elements = grade = None
            if design:  # the other points are summed up in the table of points
                elements = Table(["Element", "V", "Re", "f", "Friction loss", "Fitting loss", "Head taken",
                                  "Shaft power"], rows, "", ["l"] + ["r"] * 7, css="elements")
                stations = []
                for st in p["profile"]:
                    row = [shown(st["chainage"], "length", s), shown(st["elevation"], "length", s),
                           shown(st["hgl"], "head", s), shown(st["egl"], "head", s),
                           shown(st["pressure_head"], "head", s),
                           shown(st["pressure_head"] * self.liquid.rho * G, "pressure", s)]
                    if not stations or row != stations[-1]:  # a station repeated at the printed precision says nothing new
                        stations.append(row)
                grade = Table(["Chainage", "Elevation", "HGL", "EGL", "Pressure head", "Pressure (gauge)"], stations,
                              "", ["r"] * 6, css="compact grade")
            low = min(p["profile"], key=lambda st: st["pressure_head"]) if p["profile"] else None
            summary = [["Flow Q", shown(p["Q"], "flow", s)],
                       ["Total head at the start", shown(p["head_start"], "head", s)],
                       ["Total head at the end", shown(p["head_end"], "head", s)]]
            losses = sum(d["head_change"] for d in p["elements"] if d["kind"] in ("pipe", "valve"))
            summary.append(["Line losses (pipe runs and valves)", shown(losses, "head", s)])
            for el, d in zip(self.line.elements, p["elements"]):
                name = f"{d['index'] + 1}. {el.label or el.kind}"
                if d["kind"] == "pipe" and len(self.sol.points) > 1:  # else in the table of elements
                    summary.append([f"{name}: velocity", shown(d["V"], "velocity", s)])
                elif d["kind"] == "turbine":
                    summary.append([f"{name}: head taken", shown(d["head"], "head", s)])
                    summary.append([f"{name}: shaft power", shown(d["power_shaft"], "power", s)])
                elif d["kind"] == "pump":
                    summary.append([f"{name}: head added", shown(d["head"], "head", s)])
                    if d.get("power_shaft") is not None:
                        summary.append([f"{name}: shaft power", shown(d["power_shaft"], "power", s)])
            if low is not None:
                summary.append(["Lowest pressure head", shown(low["pressure_head"], "head", s)])
                summary.append(["… at chainage", shown(low["chainage"], "length", s)])
            out.append({
                "number": k + 1,
                "design": design,
                "why": p.get("why", ""),
                "Q": shown(p["Q"], "flow", s),
                "summary": summary,
                "elements": elements,
                "grade": grade,
            })
        return out

    def points_table(self, results: list[dict]) -> Table | None:
        """Every operating point side by side: one column each, the design point marked."""
        if not results:
            return None
        labels: list[str] = []
        for r in results:
            for label, _ in r["summary"]:
                if label not in labels:
                    labels.append(label)
        values = [dict((label, v) for label, v in r["summary"]) for r in results]
        head = ["Quantity"] + [f"Point {r['number']}" + (" (design)" if r["design"] else "") for r in results]
        rows = [[label] + [v.get(label, "–") for v in values] for label in labels]
        return Table(head, rows, "", ["l"] + ["r"] * len(results), css=f"points points-{len(results)}")

    def no_point(self) -> str:
        return self.sol.no_point["reason"] if self.sol.no_point else ""

    # -- findings ----------------------------------------------------------------------------

    def findings(self) -> dict[str, list[dict]]:
        from calc.checks import SEVERITIES

        groups: dict[str, list[dict]] = {}
        published = " ".join(str(getattr(f, "source", "")) for f in self.a.findings
                             if looks_published(str(getattr(f, "source", "")))).lower()
        for f in self.a.findings:
            d = f.to_dict() if hasattr(f, "to_dict") else dict(f)
            q = d.get("quantity")
            value = limit = ""
            if d.get("value") is not None:
                value = shown(d["value"], q, self.system) if q in _DISPLAY_KINDS else num(d["value"])
            if d.get("limit") is not None:
                limit = shown(d["limit"], q, self.system) if q in _DISPLAY_KINDS else num(d["limit"])
            source = d.get("source") or ""
            ref = self.refs.cite(source, "checks") if looks_published(source) else ""
            if str(d.get("code", "")).startswith("surge"):
                if "joukowsky" not in published:
                    ref += self.refs.cite(JOUKOWSKY_REF, "surge check")
                if "korteweg" not in published:
                    ref += self.refs.cite(KORTEWEG_REF, "surge check")
            where = ""
            if d.get("element") is not None and 0 <= d["element"] < len(self.line.elements):
                el = self.line.elements[d["element"]]
                where = f"element {d['element'] + 1}" + (f" «{el.label}»" if el.label else "")
            if d.get("chainage") is not None:
                where += (", " if where else "") + f"chainage {shown(d['chainage'], 'length', self.system)}"
            sev = d.get("severity") if d.get("severity") in SEVERITIES else "info"
            groups.setdefault(sev, []).append({
                "title": _text(d.get("title")), "message": _text(d.get("message")), "value": value,
                "limit": limit, "source": source, "ref": ref, "where": where, "code": _text(d.get("code")),
            })
        return {sev: groups[sev] for sev in SEVERITIES if sev in groups}

    def uncertainty(self) -> list[Table]:
        """The uncertainty band of the checks (``analysis.band``): flow range by factor and by case."""
        band = getattr(self.a, "band", None)
        if not isinstance(band, dict) or band.get("Q_nominal") is None:
            return []
        s = self.system
        rows = [["All factors together", shown(band.get("Q_low"), "flow", s), shown(band.get("Q_nominal"), "flow", s),
                 shown(band.get("Q_high"), "flow", s)]]
        for name, f in (band.get("factors") or {}).items():
            if isinstance(f, dict):
                rows.append([str(name).replace("_", " ").capitalize(), shown(f.get("Q_low"), "flow", s),
                             shown(band.get("Q_nominal"), "flow", s), shown(f.get("Q_high"), "flow", s)])
        out = [Table(["Factor", "Lowest flow", "Nominal flow", "Highest flow"], rows,
                     "Design flow over the range of the uncertain inputs", ["l", "r", "r", "r"], css="band-factors",
                     note=_text(band.get("describe")))]
        notes = [n for n in band.get("notes") or [] if isinstance(n, str)]
        if notes:
            out[0].note = (out[0].note + ". " if out[0].note else "") + "; ".join(notes)
        return out


def method_citation(model: str) -> str:
    """The citation of the 2-K or 3-K method: as the fitting table gives it, so one source keeps one number."""
    for ft in tables.fittings():
        if ft.model == model:
            return split_detail(ft.source)[0]
    return HOOPER_REF if model == "2k" else DARBY_REF


def looks_published(source: str) -> bool:
    """Whether a finding's source names a publication (a year or a standard), not a rule of thumb.

    >>> looks_published("Chaudhry, Applied Hydraulic Transients (2014), from memory"), looks_published("steady grade line")
    (True, False)
    """
    if not source or source.lower().startswith("common practice"):
        return False
    return bool(re.search(r"\b(1[89]\d\d|20\d\d)\b|\b(ISO|EN|ANSI|AWWA|ASME|IAPWS|BS|DIN)\b", source))


_DISPLAY_KINDS = {"flow", "length", "head", "diameter", "roughness", "velocity", "pressure", "power", "speed"}


def _value_text(v) -> str:
    if isinstance(v, float):
        return num(v)
    if isinstance(v, dict):
        return "; ".join(f"{str(k).replace('_', ' ')}: {_value_text(x)}" for k, x in v.items())
    if isinstance(v, (list, tuple)):
        return ", ".join(_value_text(x) for x in v)
    return _text(v)


# ----------------------------------------------------------------------------- comparing revisions

def flatten(doc, prefix: str = "") -> dict[str, object]:
    """Every leaf of a document by its dotted path.

    >>> flatten({"a": {"b": "1 m"}, "c": [{"d": 2}]})
    {'a.b': '1 m', 'c.0.d': 2}
    """
    out: dict[str, object] = {}
    if isinstance(doc, dict):
        for k, v in doc.items():
            out.update(flatten(v, f"{prefix}{k}."))
    elif isinstance(doc, list):
        if not doc:
            out[prefix[:-1]] = []
        for i, v in enumerate(doc):
            out.update(flatten(v, f"{prefix}{i}."))
    else:
        out[prefix[:-1]] = doc
    return out


def describe_path(doc: dict, path: str) -> str:
    """A dotted path in words, naming elements by their labels.

    >>> describe_path({"elements": [{"kind": "pipe", "label": "Main"}]}, "elements.0.fittings.1.count")
    'element 1 (pipe «Main») › fitting 2 › count'
    """
    parts = path.split(".")
    words = []
    node = doc
    i = 0
    while i < len(parts):
        p = parts[i]
        nxt = parts[i + 1] if i + 1 < len(parts) else None
        child = node.get(p) if isinstance(node, dict) else None
        if nxt is not None and nxt.isdigit() and (isinstance(child, list) or child is None):
            idx = int(nxt)
            item = child[idx] if isinstance(child, list) and idx < len(child) else None
            singular = {"elements": "element", "fittings": "fitting", "profile": "profile point",
                        "curve": "curve point"}.get(p, p)
            label = ""
            if p == "elements" and isinstance(item, dict):
                lab = _text(item.get("label"))
                label = f" ({_text(item.get('kind'))}" + (f" «{lab}»" if lab else "") + ")"
            words.append(f"{singular} {idx + 1}{label}")
            node = item
            i += 2
            continue
        words.append(p.replace("_", " "))
        node = child
        i += 1
    return " › ".join(words)


def input_changes(doc_a: dict, doc_b: dict) -> list[dict]:
    """Fields that differ between two documents: path, words, value before and after (None if absent)."""
    fa, fb = flatten(doc_a), flatten(doc_b)
    out = []
    for path in list(dict.fromkeys(list(fa) + list(fb))):
        va, vb = fa.get(path, None), fb.get(path, None)
        if va != vb or (path in fa) != (path in fb):
            out.append({"path": path, "where": describe_path(doc_b if path in fb else doc_a, path),
                        "before": va if path in fa else None, "after": vb if path in fb else None})
    return out


def key_values(analysis, system: str) -> dict[str, tuple[str, float | None, str]]:
    """Key results by name for a comparison: name -> (display quantity, SI value, words)."""
    out: dict[str, tuple[str, float | None, str]] = {}
    sol = analysis.solution
    if sol is None:
        return out
    out["points"] = ("count", float(len(sol.points)), "Operating points found")
    p = sol.design
    if p is None:
        return out
    out["Q"] = ("flow", p["Q"], "Flow at the design point")
    losses = sum(d["head_change"] for d in p["elements"] if d["kind"] in ("pipe", "valve"))
    out["losses"] = ("head", losses, "Line losses (pipe runs and valves)")
    seen: set[str] = set()
    for el, d in zip(analysis.line.elements, p["elements"]):
        name = f"{el.kind} «{el.label}»" if el.label else f"{el.kind} {d['index'] + 1}"
        if name in seen:
            name += f" ({d['index'] + 1})"
        seen.add(name)
        if d["kind"] == "pipe":
            out[f"{name}.V"] = ("velocity", d["V"], f"{name}: velocity")
            out[f"{name}.h"] = ("head", d["head_change"], f"{name}: head taken")
        elif d["kind"] in ("pump", "turbine"):
            out[f"{name}.H"] = ("head", d["head"], f"{name}: head {'added' if d['kind'] == 'pump' else 'taken'}")
            out[f"{name}.P"] = ("power", d.get("power_shaft"), f"{name}: shaft power")
    for m in sol.machines:
        if m["kind"] == "turbine" and m.get("power_max"):
            el = analysis.line.elements[m["index"]]
            out[f"max.{m['index']}"] = ("power", m["power_max"], f"turbine «{el.label}»: largest power the line can give")
    if p["profile"]:
        low = min(st["pressure_head"] for st in p["profile"])
        out["low"] = ("head", low, "Lowest pressure head along the line")
    return out


def compare(analysis_a, analysis_b, system: str) -> Table:
    """Key results before and after, in the display units of ``system``, with the change."""
    ka, kb = key_values(analysis_a, system), key_values(analysis_b, system)
    rows = []
    for key in list(dict.fromkeys(list(ka) + list(kb))):
        qa = ka.get(key)
        qb = kb.get(key)
        kind = (qa or qb)[0]
        words = (qb or qa)[2]
        va = qa[1] if qa else None
        vb = qb[1] if qb else None

        def show(v):
            if v is None:
                return "–"
            return str(int(v)) if kind == "count" else shown(v, kind, system)

        change = "–"
        if va is not None and vb is not None:
            if kind == "count":
                change = f"{int(vb - va):+d}" if vb != va else "0"
            else:
                dv, label = to_display(vb - va, kind, system)
                change = ("+" if dv > 0 else "") + f"{num(dv)} {label}"
                if va != 0 and vb != va:
                    change += f" ({(vb - va) / abs(va) * 100:+.1f} %)"
        rows.append([words, show(va), show(vb), change])
    if analysis_a.solution is None or analysis_b.solution is None:
        rows.append(["Status", "not solved" if analysis_a.solution is None else analysis_a.solution.status,
                     "not solved" if analysis_b.solution is None else analysis_b.solution.status, ""])
    return Table(["Result", "Before", "After", "Change"], rows, "Key results", ["l", "r", "r", "r"], css="compare")
