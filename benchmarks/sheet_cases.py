"""Operating cases for the benchmarks: a sheet's document with N cases of the usual kinds (levels low and
high, new and aged pipe, cold and warm water, a rough main, a lower start with aged pipe), each changing
a few inputs as a designer's cases do."""

from __future__ import annotations

import copy


def _level(text: str, by: float) -> str:
    number, _, unit = str(text).partition(" ")
    return f"{float(number) + by:g} {unit or 'm'}"


def with_cases(doc: dict, n: int = 8) -> dict:
    """``doc`` with ``n`` operating cases (at most 8 kinds, repeated with other names past them)."""
    doc = copy.deepcopy(doc)
    start, end = doc["start"]["elevation"], doc["end"]["elevation"]
    kinds = [
        {"name": "Low levels", "start": {"elevation": _level(start, -0.5)}, "end": {"elevation": _level(end, 0.5)}},
        {"name": "High levels", "start": {"elevation": _level(start, 0.3)}, "end": {"elevation": _level(end, -0.3)}},
        {"name": "New pipe", "pipes": {"condition": "new"}},
        {"name": "Aged pipe", "pipes": {"condition": "aged"}},
        {"name": "Cold water", "liquid": {"temperature": "4 degC"}},
        {"name": "Warm water", "liquid": {"temperature": "25 degC"}},
        {"name": "Rough main", "pipes": {"roughness": "0.5 mm"}},
        {"name": "Low start, aged", "start": {"elevation": _level(start, -0.5)}, "pipes": {"condition": "aged"}},
    ]
    doc["cases"] = [dict(copy.deepcopy(kinds[k % len(kinds)]), name=f"{kinds[k % len(kinds)]['name']}"
                         + (f" {k // len(kinds) + 1}" if k >= len(kinds) else "")) for k in range(n)]
    if doc.get("liquid", {}).get("kind") != "water":
        doc["cases"] = [c for c in doc["cases"] if "liquid" not in c]
    return doc
