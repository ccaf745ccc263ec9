"""The record's operating cases: what each case changes, each case's figures side by side, and the
governing case of each check. Empty for a sheet without cases."""

from __future__ import annotations

from calc.record.context import Context
from calc.record.parts import Table
from calc.record.text import num, shown
from calc.review.summary import case_figures


def _value(v, kind: str, system: str) -> str:
    if v is None:
        return "–"
    if kind == "text":
        return str(v)
    if kind == "percent":
        return f"{v * 100:.1f} %"
    if kind == "ratio":
        return f"{v:.4g}"
    return shown(v, kind, system)


def cases(c: Context) -> list[Table]:
    """The case tables: the inputs each case changes, the figures of every case, the governing cases."""
    a = c.a
    if not a.has_cases:
        return []
    s = c.system
    changed = Table(["Case", "Inputs changed from the base (every other input as the base)"],
                    [[case.name, ("; ".join(f"{ch.what} = {ch.value}" for ch in case.changes) or "none")
                      + (f" ({case.note})" if case.note else "")] for case in a.cases[1:]],
                    "The operating cases", ["l", "l"], css="cases-changed")
    names = [case.name for case in a.cases]
    rows = []
    for r in case_figures(a):
        if r["label"] == "Changes from the base":
            continue
        cells = []
        for v, at in zip(r["values"], r["where"]):
            text = _value(v, r["kind"], s)
            cells.append(f"{text} ({at})" if at and v is not None else text)
        rows.append([r["label"], *cells])
    figures = Table(["Figure", *names], rows, "Each case's results at its design point",
                    ["l"] + ["r"] * len(names), css="cases-figures")
    out = [changed, figures]
    if a.governing:
        grows = []
        for g in a.governing:
            q = g["quantity"]
            value = shown(g["value"], q, s) if q else num(g["value"], 3)
            limit = "–" if g["limit"] is None else (shown(g["limit"], q, s) if q else num(g["limit"], 3))
            state = "" if g["within"] is None else ("met" if g["within"] else "NOT MET")
            grows.append([g["check"], g["case"], value, limit, state, g["where"]])
        out.append(Table(["Check", "Governing case", "Value", "Limit", "", "Where"], grows,
                         "The governing case of each check: the case that comes closest to its limit",
                         ["l", "l", "r", "r", "l", "l"], css="governing"))
    return out
