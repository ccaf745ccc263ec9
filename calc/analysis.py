"""One call from a sheet document to everything derived from it: parse, solve, review, uncertainty band."""

from __future__ import annotations

from dataclasses import dataclass, field

from calc.model.cases import BASE_NAME, Change
from calc.model.elements import Line
from calc.model.settings import CheckSettings
from calc.model.sheet import Parsed, parse
from calc.review import checks, energy, governing, machines, uncertainty, valves
from calc.review import transient as transient_review
from calc.review.findings import SEVERITIES
from calc.review.summary import headline as summary_of
from calc.steady.series import Solution, _json_safe, solve
from calc.steady.settle import settle
from calc.transient import line as transient_line
from calc.units import InputError

#: The screening findings of the steady surge check, which a case's transient run replaces.
SCREENING_CODES = ("surge-wave-speed-missing", "surge-screen", "surge-column-separation", "surge-rating",
                   "surge-no-rating", "surge-pump-trip")


@dataclass
class CaseResult:
    """One operating case solved: its name, what it changes from the base (none for the base itself),
    the line, its solution, findings, range of the answer and summary figures (`calc.review.summary`)."""

    name: str
    line: Line
    solution: Solution
    findings: list
    band: dict | None
    summary: dict | None
    changes: list[Change] = field(default_factory=list)
    note: str = ""
    speeds: list = field(default_factory=list)  # calc.steady.speed.SpeedAnswer of each pump on a target
    set_flows: list = field(default_factory=list)  # calc.steady.settle.TurbineFlow of each set-flow turbine
    valve_settings: list = field(default_factory=list)  # calc.steady.settle.ValveSetting of each valve on a target

    def to_dict(self) -> dict:
        return _json_safe({
            "name": self.name, "note": self.note, "speeds": [a.to_dict() for a in self.speeds],
            "set_flows": [t.to_dict() for t in self.set_flows],
            "valve_settings": [v.to_dict() for v in self.valve_settings],
            "changes": [{"field": c.case_path, "what": c.what, "value": c.value} for c in self.changes],
            "solution": self.solution.to_dict(), "findings": [f.to_dict() for f in self.findings],
            "band": self.band, "summary": self.summary,
        })


@dataclass
class TransientCase:
    """One case's transient run: its figures (`calc.review.transient.summary`) and findings, or the
    problem (field path and message) that kept it from running, or ``deferred`` when the page left a
    long run to be asked for."""

    name: str
    summary: dict | None = None
    findings: list = field(default_factory=list)
    problem: tuple[str, str] | None = None
    deferred: str = ""

    def to_dict(self) -> dict:
        return _json_safe({"case": self.name, "summary": self.summary, "deferred": self.deferred,
                           "problem": {"path": self.problem[0], "message": self.problem[1]} if self.problem else None,
                           "findings": [f.to_dict() for f in self.findings]})


@dataclass
class Analysis:
    """The parsed line, its solution, findings and uncertainty band; ``errors`` when the sheet does not parse.

    ``line``, ``solution`` and ``band`` are the base sheet's; ``cases`` holds every case solved, the base
    first (a sheet without cases has the base alone), and ``findings`` all cases' findings merged, each
    check once from its governing case (`calc.review.governing`); ``governing`` the governing case of each
    check the case table answers.
    """

    doc: dict | None
    line: Line | None
    solution: Solution | None
    findings: list = field(default_factory=list)
    errors: list[InputError] = field(default_factory=list)
    band: dict | None = None
    check_settings: CheckSettings | None = None
    cases: list[CaseResult] = field(default_factory=list)
    governing: list[dict] = field(default_factory=list)
    energy: dict | None = None  # calc.review.energy.year(): energy over a year, when the sheet asks for it
    transients: list[TransientCase] = field(default_factory=list)  # each case with events, in case order

    @property
    def ok(self) -> bool:
        return not self.errors

    @property
    def has_cases(self) -> bool:
        """Whether the sheet has operating cases beside its base inputs."""
        return len(self.cases) > 1

    def case(self, name: str | None) -> CaseResult | None:
        """The case of that name (the base for None or its name), or None."""
        if name is None:
            return self.cases[0] if self.cases else None
        return next((c for c in self.cases if c.name.casefold() == name.casefold()), None)

    def to_dict(self) -> dict:
        out = {
            "errors": [{"path": e.path, "message": e.message} for e in self.errors],
            "solution": self.solution.to_dict() if self.solution else None,
            "findings": _json_safe([f.to_dict() for f in self.findings]),
            "band": _json_safe(self.band),
            "check_settings": _json_safe(self.check_settings.to_dict()) if self.check_settings else None,
        }
        if self.cases and self.cases[0].speeds:
            out["speeds"] = _json_safe([a.to_dict() for a in self.cases[0].speeds])
        if self.energy is not None:
            out["energy"] = _json_safe(self.energy)
        if self.has_cases:
            out["cases"] = [c.to_dict() for c in self.cases]
            out["governing"] = _json_safe(self.governing)
        if self.transients:
            out["transients"] = [t.to_dict() for t in self.transients]
        return out


def analyse(doc: dict, transients: str = "all") -> Analysis:
    """Parse, solve, band and review a sheet document and each of its cases, with the transient run of
    each case that has events (``transients``: "all", "quick" for only runs small enough to redo on every
    edit, "none"); never raises on bad input."""
    return analyse_parsed(parse(doc), doc, transients)


def solve_case(name: str, line: Line, settings: CheckSettings, changes=(), note: str = "") -> CaseResult:
    """One case: set the speed of each pump on a target, then solve, band, review and summarise its line."""
    line, settled = settle(line)
    solution = solve(line)
    band = uncertainty.band(line, solution, settings)
    findings = checks.review(line, solution, settings, band)
    extra = (machines.speed_findings(line, settled.speeds) + machines.set_flow_findings(line, settled.turbines)
             + valves.valve_findings(line, settled.valves))
    if extra:
        findings = sorted(extra + findings, key=lambda f: SEVERITIES.index(f.severity))
    # The summary reads the solution's own lists (no JSON-safe copy: it copies out only the figures it gives).
    light = {"static_head": solution.static_head, "method": solution.method, "log": solution.log,
             "points": solution.points, "design_index": solution.design_index, "machines": solution.machines}
    summary = summary_of(line, light, settings) if solution.design is not None else None
    return CaseResult(name, line, solution, findings, band, summary, list(changes), note, settled.speeds,
                      settled.turbines, settled.valves)


def run_transient(result: CaseResult, spec, mode: str = "all") -> TransientCase:
    """The transient of one case from its steady answer, reviewed; its problem when it cannot run."""
    out = TransientCase(result.name)
    events = spec.events_of(result.name)
    design = result.solution.design
    if design is None:
        out.problem = (events[0].path, "the case has no steady operating point to start the transient from")
        return out
    try:
        limit = transient_line.QUICK_WORK if mode == "quick" else transient_line.MAX_WORK
        steps, nodes = transient_line.estimate(result.line, spec)
        if steps * nodes > limit:
            if mode == "quick":
                out.deferred = (f"a run of {steps} steps over {nodes} nodes: run on request")
                return out
            raise transient_line.TransientProblem("transient.duration", transient_line.too_long(steps, nodes))
        ans = transient_line.run(result.line, float(design["Q"]), spec, events, result.name)
    except transient_line.TransientProblem as e:
        out.problem = (e.path, e.message)
        return out
    out.summary = transient_review.summary(result.line, ans)
    out.findings = transient_review.findings(result.line, out.summary)
    return out


def analyse_parsed(parsed: Parsed, doc: dict | None = None, transients: str = "all") -> Analysis:
    """`analyse` for a document already parsed (the server parses each edit once, to store it)."""
    if not parsed.ok:
        return Analysis(doc, None, None, errors=parsed.errors)
    line = parsed.line
    settings = line.settings.get("checks") or CheckSettings()
    results = [solve_case(BASE_NAME, line, settings)]
    results += [solve_case(c.name, c.line, settings, c.read.changes, c.read.note) for c in parsed.cases]
    runs = []
    spec = line.settings.get("transient")
    if spec is not None and spec.any and transients != "none":
        for r in results:
            if spec.events_of(r.name):
                tc = run_transient(r, spec, transients)
                runs.append(tc)
                if tc.summary is not None:
                    # the run replaces the screening, and a load rejection run replaces the general runaway caution
                    gone = SCREENING_CODES + (("turbine-runaway",) if "turbine" in tc.summary["event_kinds"] else ())
                    kept = [transient_review.analysed_caution(f, tc.summary) if f.code == "general-surge" else f
                            for f in r.findings if f.code not in gone]
                    r.findings = sorted(kept + tc.findings, key=lambda f: SEVERITIES.index(f.severity))
    base = results[0]
    findings = governing.merge([governing.CaseFindings(r.name, r.findings) for r in results])
    rows = (governing.governing([governing.CaseSummary(r.name, r.line, r.summary) for r in results], settings)
            if len(results) > 1 else [])
    return Analysis(doc, base.line, base.solution, findings, band=base.band, check_settings=settings,
                    cases=results, governing=rows, energy=energy.year(results), transients=runs)
