"""One call from a sheet document to everything derived from it: parse, solve, review, uncertainty band."""

from __future__ import annotations

from dataclasses import dataclass, field

from calc.model.elements import Line
from calc.model.settings import CheckSettings
from calc.model.sheet import Parsed, parse
from calc.review import checks, uncertainty
from calc.steady.series import Solution, _json_safe, solve
from calc.units import InputError


@dataclass
class Analysis:
    """The parsed line, its solution, findings and uncertainty band; ``errors`` when the sheet does not parse."""

    doc: dict | None
    line: Line | None
    solution: Solution | None
    findings: list = field(default_factory=list)
    errors: list[InputError] = field(default_factory=list)
    band: dict | None = None
    check_settings: CheckSettings | None = None

    @property
    def ok(self) -> bool:
        return not self.errors

    def to_dict(self) -> dict:
        return {
            "errors": [{"path": e.path, "message": e.message} for e in self.errors],
            "solution": self.solution.to_dict() if self.solution else None,
            "findings": _json_safe([f.to_dict() for f in self.findings]),
            "band": _json_safe(self.band),
            "check_settings": _json_safe(self.check_settings.to_dict()) if self.check_settings else None,
        }


def analyse(doc: dict) -> Analysis:
    """Parse, solve, band and review a sheet document; never raises on bad input."""
    return analyse_parsed(parse(doc), doc)


def analyse_parsed(parsed: Parsed, doc: dict | None = None) -> Analysis:
    """`analyse` for a document already parsed (the server parses each edit once, to store it)."""
    if not parsed.ok:
        return Analysis(doc, None, None, errors=parsed.errors)
    line = parsed.line
    settings = line.settings.get("checks") or CheckSettings()
    solution = solve(line)
    band = uncertainty.band(line, solution, settings)
    findings = checks.review(line, solution, settings, band)
    return Analysis(doc, line, solution, findings, band=band, check_settings=settings)
