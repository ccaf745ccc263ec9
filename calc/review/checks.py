"""All the checks on a solved line in one call: each finding carries the value, the limit and where the limit comes from."""

from __future__ import annotations

from calc.model.elements import Line
from calc.model.settings import CheckSettings
from calc.review.cautions import band_findings, general_cautions
from calc.review.curves import curve_findings
from calc.review.findings import SEVERITIES, Finding, shown_in
from calc.review.flow import regime_findings, velocity_findings
from calc.review.machines import pump_findings, turbine_findings
from calc.review.pressure import pressure_findings
from calc.review.surge import surge_findings
from calc.steady.series import Solution


def review(line: Line, solution: Solution, settings: CheckSettings | None = None,
           band: dict | None = None) -> list[Finding]:
    """All findings for the design point of a solved line, worst first; the general cautions always."""
    settings = settings or CheckSettings()
    point = solution.design
    findings: list[Finding] = []
    if point is not None:
        findings += velocity_findings(line, point, settings)
        findings += regime_findings(line, point)
        findings += pressure_findings(line, point)
        findings += pump_findings(line, point, settings)
        findings += turbine_findings(line, solution, point)
        findings += surge_findings(line, point, settings)
    findings += curve_findings(line, solution)
    if band is not None:
        findings += band_findings(band, shown_in(line))
    findings += general_cautions(line)
    findings.sort(key=lambda f: SEVERITIES.index(f.severity))
    return findings
