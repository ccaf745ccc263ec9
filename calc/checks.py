"""Engineering checks on a solved line: each finding carries the value, the limit and where the limit comes from."""

from __future__ import annotations

from dataclasses import asdict, dataclass

from calc.elements import Line
from calc.solve import Solution

#: Severity order, worst first.
SEVERITIES = ("error", "warning", "caution", "info")


@dataclass
class Finding:
    """One check's outcome, shaped for the results panel and the record."""

    severity: str            # error | warning | caution | info
    code: str                # stable short name of the check, e.g. "velocity-high"
    title: str               # a few words
    message: str             # one or two sentences in plain words
    value: float | None = None
    limit: float | None = None
    quantity: str | None = None  # display quantity of value/limit (velocity, head, pressure...)
    source: str = ""         # where the limit comes from, or 'common practice'
    element: int | None = None
    chainage: float | None = None

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass
class CheckSettings:
    """Limits the user may set; the defaults are common practice."""

    velocity_max: float = 3.0          # [m/s] common practice for water mains and plant lines
    velocity_max_suction: float = 1.5  # [m/s] common practice for pump suction lines
    velocity_min: float = 0.3          # [m/s] common practice: below this, sediment and air settle


def review(line: Line, solution: Solution, settings: CheckSettings | None = None) -> list[Finding]:
    """All findings for the design point of a solved line, worst first."""
    settings = settings or CheckSettings()
    point = solution.design
    if point is None:
        return []
    findings = velocity_findings(line, point, settings)
    findings.sort(key=lambda f: SEVERITIES.index(f.severity))
    return findings


def velocity_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    out = []
    elements = line.elements
    for d in point["elements"]:
        if d["kind"] != "pipe":
            continue
        i = d["index"]
        suction = i + 1 < len(elements) and elements[i + 1].kind == "pump"
        vmax = s.velocity_max_suction if suction else s.velocity_max
        where = "pump suction" if suction else "pipe run"
        if d["V"] > vmax:
            out.append(Finding("warning", "velocity-high", f"{d['label']}: velocity high",
                               f"Velocity {d['V']:.2f} m/s exceeds the {where} limit of {vmax:g} m/s: "
                               "expect high losses, erosion, noise and larger surge on closure.",
                               d["V"], vmax, "velocity", "common practice", i))
        elif d["V"] < s.velocity_min:
            out.append(Finding("info", "velocity-low", f"{d['label']}: velocity low",
                               f"Velocity {d['V']:.2f} m/s is below {s.velocity_min:g} m/s: sediment may "
                               "settle and air may collect at high points.",
                               d["V"], s.velocity_min, "velocity", "common practice", i))
    return out
