"""The cases of a sheet read together: for each check, the governing case (the one that comes closest
to its limit), and one list of findings in which each check speaks once, naming its case.

A check's closeness is its value over its limit for a check with an upper limit (velocity, pressure
against a rating) and its limit over its value for one with a lower limit (NPSH, the lowest pressure),
so 1 is on the limit and more is past it; the worse severity governs first.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

from calc.model.settings import CheckSettings
from calc.review.findings import SEVERITIES, Finding

#: Checks whose value must stay at or below their limit, and those whose value must stay at or above it.
UPPER = {"velocity-high", "rating-steady", "surge-rating", "surge-no-rating", "surge-screen", "curve-beyond-limit", "curve-extrapolated",
         "regime-transitional", "pressure-turbine-outlet"}
LOWER = {"velocity-low", "pump-npsh", "pressure-vapour", "pressure-subatmospheric", "pressure-lowest",
         "pressure-suction-vacuum", "pressure-intake", "surge-column-separation"}


@dataclass
class CaseFindings:
    """One case's name and its findings (the base sheet is one of them)."""

    name: str
    findings: list[Finding]


def closeness(f: Finding) -> float:
    """How near a finding's value is to its limit: 1 on it, more past it; 0 when it cannot be told."""
    v, lim = f.value, f.limit
    if v is None or lim is None or not (math.isfinite(v) and math.isfinite(lim)):
        return 0.0
    if f.code in UPPER:
        return v / lim if lim > 0 else (math.inf if v > lim else 0.0)
    if f.code in LOWER:
        if v <= 0:
            return math.inf if lim > 0 or v < lim else 1.0
        return lim / v
    return 0.0


def _rank(f: Finding) -> tuple:
    """Sort key, governing first: the worse severity, then the nearer the limit, then (a check with no
    limit given, such as a pressure where no rating is typed) the larger value of an upper check or the
    smaller of a lower one."""
    v = f.value if f.value is not None and math.isfinite(f.value) else 0.0
    lean = v if f.code in UPPER else -v if f.code in LOWER else 0.0
    return (SEVERITIES.index(f.severity), -closeness(f), -lean)


def _key(f: Finding) -> tuple:
    """What makes two cases' findings the same check: its code and element (the general cautions, the code)."""
    return (f.code,) if f.code.startswith("general-") else (f.code, f.element)


def merge(results: list[CaseFindings]) -> list[Finding]:
    """One list of findings for all the cases: each check once, from its governing case, naming it.

    With one case (a sheet without cases) the findings are returned as they are. Otherwise each finding
    carries ``case`` (its governing case) and ``cases`` (every case where the check spoke), and its
    message says which case it comes from and where else it holds.
    """
    if len(results) == 1:
        return results[0].findings
    groups: dict[tuple, list[tuple[int, str, Finding]]] = {}
    order: list[tuple] = []
    for c in results:
        for k, f in enumerate(c.findings):
            key = _key(f)
            if key not in groups:
                groups[key] = []
                order.append(key)
            groups[key].append((k, c.name, f))
    merged = []
    for key in order:
        items = groups[key]
        _, name, worst = min(items, key=lambda t: _rank(t[2]))
        names = [n for _, n, _ in items]
        if key[0].startswith("general-"):
            merged.append(replace(worst, case=None, cases=tuple(names)))
            continue
        others = [n for n in names if n != name]
        where = f"Case '{name}'"
        if others:
            where += (f" (also in '{others[0]}')" if len(others) == 1 else
                      f" (also in {len(others)} other cases: {', '.join(repr(n) for n in others)})")
        merged.append(replace(worst, case=name, cases=tuple(names), message=f"{where}: {worst.message}"))
    merged.sort(key=lambda f: SEVERITIES.index(f.severity))
    return merged


# ----------------------------------------------------------------------------- the governing table

@dataclass
class CaseSummary:
    """One case's name, its line and its summary figures (`calc.review.summary.headline`)."""

    name: str
    line: object
    summary: dict | None


def governing(cases: list[CaseSummary], settings: CheckSettings) -> list[dict]:
    """For each check the cases answer, the case that comes closest to its limit.

    Rows ``{"check", "quantity", "case", "value", "limit", "sense", "where", "within", "values"}``:
    ``sense`` is ``"max"`` (the value must stay at or below the limit) or ``"min"``; ``values`` maps
    each case to its value, so the table shows the spread. Cases without an operating point are left
    out of every row (the case table says so).
    """
    rows: list[dict] = []

    def row(check, quantity, sense, limit, pick):
        values = {}
        where = {}
        for c in cases:
            if not c.summary:
                continue
            got = pick(c)
            if got is not None and got[0] is not None:
                values[c.name], where[c.name] = got
        if not values:
            return
        lim = limit if not callable(limit) else None
        name = (max if sense == "max" else min)(values, key=values.get)
        value = values[name]
        if callable(limit):
            lim = limit(name)
        within = None if lim is None else (value <= lim if sense == "max" else value >= lim)
        rows.append({"check": check, "quantity": quantity, "case": name, "value": value, "limit": lim,
                     "sense": sense, "where": where[name], "within": within, "values": values})

    def fastest(c):
        v = c.summary.get("velocity_high")
        return (v["V"], v["label"]) if v else None

    row("Highest velocity", "velocity", "max", settings.velocity_max, fastest)

    def lowest(c):
        p = c.summary.get("pressure_low")
        if not p:
            return None
        return (p["pressure_abs"], (p["label"] + (f" {p['part']}" if p.get("part") else "")))

    def vapour(name):
        line = next(c.line for c in cases if c.name == name)
        return line.liquid.p_vap
    row("Lowest pressure (absolute)", "pressure", "min", vapour, lowest)

    def highest(c):
        p = c.summary.get("pressure_high")
        if not p:
            return None
        return (p["pressure"], (p["label"] + (f" {p['part']}" if p.get("part") else "")))
    row("Highest pressure (gauge)", "pressure", "max", None, highest)

    first = next((c for c in cases if c.summary), None)
    for m in (first.summary.get("machines") or []) if first else []:
        i, label = m["index"], m["label"]

        def duty(c, key, i=i):
            return next((d for d in c.summary.get("machines") or [] if d["index"] == i), {}).get(key)

        if m["kind"] == "pump":
            def margin(c, i=i):
                n = duty(c, "npsh", i)
                if not n or n.get("needed") is None:
                    return None
                return (n["available"] - n["needed"], label)
            row(f"{label}: NPSH available less NPSH needed", "head", "min", 0.0, margin)

            def bep(c, i=i):
                b = duty(c, "bep", i)
                if not b or b.get("share") is None:
                    return None
                # how far outside the preferred range, as the larger of low/share and share/high
                return (max(b["low"] / b["share"], b["share"] / b["high"]) if b["share"] > 0 else math.inf,
                        f"{b['share'] * 100:.0f} % of best-efficiency flow")
            row(f"{label}: flow against the preferred range (1 = at its edge)", None, "max", 1.0, bep)
        elif m["kind"] == "turbine":
            def loss(c, i=i):
                share = duty(c, "loss_share", i)
                return None if share is None else (share, label)
            row(f"{label}: line losses as a share of gross head", None, "max", None, loss)
    return rows
