"""Comparing two revisions: which inputs changed, and how the key results moved."""

from __future__ import annotations

import copy

from calc.model.ids import ensure_ids
from calc.record.parts import Table
from calc.record.text import as_text, num, shown
from calc.units import to_display


def _value_text(v) -> str:
    if isinstance(v, float):
        return num(v)
    if isinstance(v, dict):
        return "; ".join(f"{str(k).replace('_', ' ')}: {_value_text(x)}" for k, x in v.items())
    if isinstance(v, (list, tuple)):
        return ", ".join(_value_text(x) for x in v)
    return as_text(v)


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
                lab = as_text(item.get("label"))
                label = f" ({as_text(item.get('kind'))}" + (f" «{lab}»" if lab else "") + ")"
            words.append(f"{singular} {idx + 1}{label}")
            node = item
            i += 2
            continue
        words.append(p.replace("_", " "))
        node = child
        i += 1
    return " › ".join(words)


def _element_name(e: dict, position: int) -> str:
    """``element 4 (pipe «Rising main»)``: its place in the line, its kind and label."""
    lab = as_text(e.get("label"))
    return f"element {position} ({as_text(e.get('kind'))}" + (f" «{lab}»" if lab else "") + ")"


def _unmoved(positions: list[int]) -> set[int]:
    """The indices of the longest run of ``positions`` that stays in increasing order (the elements that
    kept their order); every other element is the one that moved.

    Of two equally long runs the later-ending one wins: moving C up one place in A B C D reads as
    "C moved" (its old positions, in the new order, are 0 2 1 3), not "B moved".

    >>> sorted(_unmoved([0, 2, 1, 3]))
    [0, 2, 3]
    """
    tails: list[int] = []          # tails[k]: index of the smallest tail of an increasing run of length k+1
    before: list[int | None] = []  # before[i]: the index preceding i in its run
    for i, p in enumerate(positions):
        lo, hi = 0, len(tails)
        while lo < hi:
            mid = (lo + hi) // 2
            if positions[tails[mid]] < p:
                lo = mid + 1
            else:
                hi = mid
        before.append(tails[lo - 1] if lo else None)
        if lo == len(tails):
            tails.append(i)
        else:
            tails[lo] = i
    out: set[int] = set()
    node = tails[-1] if tails else None
    while node is not None:
        out.add(node)
        node = before[node]
    return out


def input_changes(doc_a: dict, doc_b: dict) -> list[dict]:
    """Fields that differ between two documents: path, words, value before and after (None if absent).

    Elements are matched by their stable id (``calc.model.sheet.ensure_ids`` gives documents without
    ids the same ids by order), so a moved element is one change, "moved", and its fields compare with
    its own fields wherever it now sits; an element added or removed is one change too. Paths of
    element fields read ``elements.<id>.<field>``.
    """
    a = ensure_ids(copy.deepcopy(doc_a)) if isinstance(doc_a, dict) else {}
    b = ensure_ids(copy.deepcopy(doc_b)) if isinstance(doc_b, dict) else {}
    out = []
    rest_a = {k: v for k, v in a.items() if k != "elements"}
    rest_b = {k: v for k, v in b.items() if k != "elements"}
    fa, fb = flatten(rest_a), flatten(rest_b)
    for path in list(dict.fromkeys(list(fa) + list(fb))):
        va, vb = fa.get(path, None), fb.get(path, None)
        if va != vb or (path in fa) != (path in fb):
            out.append({"path": path, "where": describe_path(doc_b if path in fb else doc_a, path),
                        "before": va if path in fa else None, "after": vb if path in fb else None})

    def by_id(doc):
        elements = doc.get("elements") if isinstance(doc.get("elements"), list) else []
        return {e["id"]: (i, e) for i, e in enumerate(elements) if isinstance(e, dict) and "id" in e}

    ea, eb = by_id(a), by_id(b)
    common = [k for k in eb if k in ea]
    kept = _unmoved([ea[k][0] for k in common])
    for n, key in enumerate(common):
        (ia, el_a), (ib, el_b) = ea[key], eb[key]
        name = _element_name(el_b, ib + 1)
        if n not in kept:
            out.append({"path": f"elements.{key}", "where": name, "before": f"position {ia + 1}",
                        "after": f"moved to position {ib + 1}"})
        sa = flatten({k: v for k, v in el_a.items() if k != "id"})
        sb = flatten({k: v for k, v in el_b.items() if k != "id"})
        for sub in list(dict.fromkeys(list(sa) + list(sb))):
            va, vb = sa.get(sub, None), sb.get(sub, None)
            if va != vb or (sub in sa) != (sub in sb):
                inner = describe_path(el_b if sub in sb else el_a, sub)
                out.append({"path": f"elements.{key}.{sub}", "where": f"{name} › {inner}",
                            "before": va if sub in sa else None, "after": vb if sub in sb else None})
    for key, (ib, el_b) in eb.items():
        if key not in ea:
            out.append({"path": f"elements.{key}", "where": _element_name(el_b, ib + 1), "before": None,
                        "after": f"added at position {ib + 1}"})
    for key, (ia, el_a) in ea.items():
        if key not in eb:
            out.append({"path": f"elements.{key}", "where": _element_name(el_a, ia + 1),
                        "before": f"at position {ia + 1}", "after": None})
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
