"""Operating cases: the base sheet plus named overlays, each changing a few inputs.

A case is read from the document's ``cases`` list (docs/sheet-format.md): its name, and the fields it
changes from the base sheet: the levels or pressures at the start and end, the liquid's temperature,
the condition or roughness of every pipe run, and a machine's or valve's setting named by its stable id.
A field left empty keeps the base value, so a case holds only what differs.

The case's document is the base document with those fields written over it (`overlay`), parsed by the
same parser as the base (one model per case), so every rule the base obeys holds in every case and a
case can never describe what a sheet could not. A parse error in the overlaid document is put back at
the case field that caused it (`CaseRead.field_of`).
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

from calc.model.fields import (
    CASE_ELEMENT_FIELDS,
    CASE_FIELDS,
    CASE_LIQUID_FIELDS,
    CASE_NODE_FIELDS,
    CASE_PIPES_FIELDS,
    CASE_TEMPLATE,
    MAX_CASE_NAME,
    MAX_CASES,
    MAX_ELEMENTS,
    MAX_TEXT,
)
from calc.model.reader import Reader

#: A case's element fields in words, for the record and the case table.
_WORDS = {"speed_ratio": "speed ratio", "running": "units running", "target_flow": "target flow",
          "target_head": "target head", "power": "shaft power", "flow": "set flow", "head": "head",
          "opening": "opening", "set_pressure": "set pressure"}

#: The name the base sheet goes by beside its cases.
BASE_NAME = "Base"


@dataclass
class Change:
    """One input a case changes: where it sits in the case (``cases.1.start.elevation``), where it lands
    in the sheet document (``start.elevation``, or a tuple of such paths for every pipe run), the value
    typed, and words for the record ('start: surface elevation')."""

    case_path: str
    targets: tuple[tuple, ...]
    value: object
    what: str


@dataclass
class CaseRead:
    """A case as read from the document: its name, its place in ``cases``, and its changes."""

    name: str
    index: int
    note: str = ""
    changes: list[Change] = field(default_factory=list)

    @property
    def path(self) -> str:
        return f"cases.{self.index}"

    def field_of(self, doc_path: str) -> Change | None:
        """The change that wrote the document field ``doc_path`` (``elements.2.roughness``), if any."""
        parts = tuple(int(p) if p.isdigit() else p for p in doc_path.split("."))
        for c in self.changes:
            for t in c.targets:
                if parts[:len(t)] == t or t[:len(parts)] == parts:
                    return c
        return None


_blank = Reader.blank


def read_cases(r: Reader, doc: dict) -> list[CaseRead]:
    """The ``cases`` of a sheet document, checked for shape (names, known fields, element ids); the values
    themselves are checked when each case's document is parsed."""
    raw = r.lst(doc, "cases", "cases", MAX_CASES)
    elements = doc.get("elements") if isinstance(doc.get("elements"), list) else []
    elements = elements[:MAX_ELEMENTS]
    by_id = {e["id"]: (k, e) for k, e in enumerate(elements)
             if isinstance(e, dict) and isinstance(e.get("id"), str) and e["id"]}
    pipes = tuple(k for k, e in enumerate(elements) if isinstance(e, dict) and e.get("kind") == "pipe")
    out: list[CaseRead] = []
    names: dict[str, int] = {}
    for i, c in enumerate(raw):
        path = f"cases.{i}"
        if not isinstance(c, dict):
            r.fail(path, c, "must be a group of fields")
            continue
        r.known(c, path, CASE_FIELDS, "a case")
        name = r.text(c, "name", f"{path}.name", MAX_CASE_NAME)
        if isinstance(name, str):
            name = name.strip()
            if not name:
                r.ask(f"{path}.name", c.get("name"), "give the case a name")
            elif name.casefold() == BASE_NAME.casefold():
                r.fail(f"{path}.name", name, f"'{BASE_NAME}' is the name of the sheet's own inputs: choose another")
            elif name.casefold() in names:
                r.fail(f"{path}.name", name, f"is the name of case {names[name.casefold()] + 1} too: each case needs "
                                             "its own name")
            else:
                names[name.casefold()] = i
        note = r.text(c, "note", f"{path}.note", MAX_TEXT) or ""
        case = CaseRead(name=name or f"case {i + 1}", index=i, note=note)
        if not _blank(c.get("hours")):
            case.changes.append(Change(f"{path}.hours", (("energy", "hours"),), c["hours"], "hours a year"))
        for which in ("start", "end"):
            group = r.obj(c, which, f"{path}.{which}")
            r.known(group, f"{path}.{which}", CASE_NODE_FIELDS, f"the {which} in a case")
            for key in CASE_NODE_FIELDS:
                if not _blank(group.get(key)):
                    case.changes.append(Change(f"{path}.{which}.{key}", ((which, key),), group[key],
                                               f"{which}: {'surface elevation' if key == 'elevation' else key}"))
        liquid = r.obj(c, "liquid", f"{path}.liquid")
        r.known(liquid, f"{path}.liquid", CASE_LIQUID_FIELDS, "the liquid in a case")
        if not _blank(liquid.get("temperature")):
            case.changes.append(Change(f"{path}.liquid.temperature", (("liquid", "temperature"),),
                                       liquid["temperature"], "liquid: temperature"))
        _pipes(r, c, path, pipes, case)
        _elements(r, c, path, by_id, case)
        out.append(case)
    return out


def _pipes(r: Reader, c: dict, path: str, pipes: tuple[int, ...], case: CaseRead) -> None:
    group = r.obj(c, "pipes", f"{path}.pipes")
    r.known(group, f"{path}.pipes", CASE_PIPES_FIELDS, "the pipe runs in a case")
    condition, roughness = group.get("condition"), group.get("roughness")
    if not _blank(condition) and not _blank(roughness):
        r.fail(f"{path}.pipes.roughness", roughness, "give either a condition or a roughness for every run, not both")
        return
    if not _blank(condition):
        if condition not in ("new", "aged"):
            r.fail(f"{path}.pipes.condition", condition, "must be one of: new, aged")
            return
        # Each run's roughness then comes from its material's table for that condition: a roughness typed
        # on a run gives way (it is the run's condition that this case changes).
        targets = tuple(t for k in pipes for t in (("elements", k, "condition"), ("elements", k, "roughness")))
        case.changes.append(Change(f"{path}.pipes.condition", targets, condition, "every pipe run: condition"))
    elif not _blank(roughness):
        targets = tuple(("elements", k, "roughness") for k in pipes)
        case.changes.append(Change(f"{path}.pipes.roughness", targets, roughness, "every pipe run: roughness"))


def _elements(r: Reader, c: dict, path: str, by_id: dict, case: CaseRead) -> None:
    seen: dict[str, int] = {}
    for j, row in enumerate(r.lst(c, "elements", f"{path}.elements", MAX_ELEMENTS)):
        rp = f"{path}.elements.{j}"
        if not isinstance(row, dict):
            r.fail(rp, row, "must be a group of fields naming an element by its id")
            continue
        ident = row.get("id")
        values = {k: v for k, v in row.items() if k != "id" and not _blank(v)}
        if ident not in by_id:
            if values:
                r.fail(f"{rp}.id", ident, f"names no element of the line (the ids are: {', '.join(by_id) or 'none'}): "
                                          "the element was removed or its id changed; remove this row")
            continue
        if ident in seen:
            r.fail(f"{rp}.id", ident, f"is named by row {seen[ident] + 1} of this case too: one row an element")
            continue
        seen[ident] = j
        k, element = by_id[ident]
        kind = element.get("kind")
        allowed = CASE_ELEMENT_FIELDS.get(kind, ())
        r.known(row, rp, ("id",) + allowed, f"a case's row for a {kind}")
        label = element.get("label") or ident
        for key in allowed:
            if key in values:
                case.changes.append(Change(f"{rp}.{key}", (("elements", k, key),), values[key],
                                           f"{label}: {_WORDS.get(key, key)}"))


def overlay(doc: dict, case: CaseRead) -> dict:
    """The sheet document of one case: the base with the case's changes written over it (the base is
    not touched; only the groups a change reaches are copied), without the cases and the transient
    inputs, which are the whole sheet's."""
    out = dict(doc)
    out.pop("cases", None)
    out.pop("transient", None)  # read once, with the base: its events name the cases
    copied: set[tuple] = set()

    def place(path: tuple):
        node = out
        for depth, key in enumerate(path[:-1]):
            prefix = path[:depth + 1]
            child = node.get(key) if isinstance(node, dict) else node[key]
            if child is None:  # a group the base leaves out (its energy inputs): the case makes it
                child = {}
            if prefix not in copied:
                child = copy.copy(child)
                node[key] = child
                copied.add(prefix)
            node = child
        return node

    for change in case.changes:
        for target in change.targets:
            node = place(target)
            if change.case_path.endswith("pipes.condition") and target[-1] == "roughness":
                node[target[-1]] = ""
            else:
                node[target[-1]] = change.value
    return out


# ----------------------------------------------------------------------------- the form's shape

def case_elements(doc: dict) -> list[dict]:
    """The elements of a sheet a case can change (machines and valves with an id), in flow order."""
    elements = doc.get("elements") if isinstance(doc, dict) else None
    return [e for e in (elements or []) if isinstance(e, dict) and e.get("kind") in CASE_ELEMENT_FIELDS
            and isinstance(e.get("id"), str) and e["id"]]


def ensure_rows(doc: dict) -> dict:
    """Give every case of ``doc`` each field a case may hold (empty) and one row for each element a case
    can change, in place, and return ``doc``.

    The sheet form writes a case's value into a field that is there, so each needs one; a row for an
    element no longer on the line is dropped when it holds nothing, and kept (the parser names it)
    when it holds a value. Cases keep every other key as they are.
    """
    cases = doc.get("cases") if isinstance(doc, dict) else None
    if not isinstance(cases, list):
        return doc
    elements = case_elements(doc)
    ids = {e["id"] for e in elements}
    for case in cases:
        if not isinstance(case, dict):
            continue
        for key, template in CASE_TEMPLATE.items():
            if key == "elements":
                continue
            if isinstance(template, dict):
                group = case.setdefault(key, {})
                if isinstance(group, dict):
                    for k in template:
                        group.setdefault(k, "")
            else:
                case.setdefault(key, template)
        rows = case.get("elements")
        if not isinstance(rows, list):
            if rows is not None:
                continue  # not a list: the parser says so, and the form leaves it
            rows = case["elements"] = []
        rows[:] = [row for row in rows if not isinstance(row, dict) or row.get("id") in ids
                   or any(not _blank(v) for k, v in row.items() if k != "id")]
        have = {row.get("id") for row in rows if isinstance(row, dict)}
        for e in elements:
            if e["id"] not in have:
                rows.append({"id": e["id"], **{k: "" for k in CASE_ELEMENT_FIELDS[e["kind"]]}})
            else:
                row = next(r for r in rows if isinstance(r, dict) and r.get("id") == e["id"])
                for k in CASE_ELEMENT_FIELDS[e["kind"]]:
                    row.setdefault(k, "")
    return doc


def drop_rows(doc: dict, ident) -> int:
    """Take the rows naming element ``ident`` out of every case of ``doc``, in place; how many held a value."""
    held = 0
    for case in doc.get("cases") or []:
        rows = case.get("elements") if isinstance(case, dict) else None
        if not isinstance(rows, list):
            continue
        keep = [r for r in rows if not (isinstance(r, dict) and r.get("id") == ident)]
        held += any(any(not _blank(v) for k, v in r.items() if k != "id")
                    for r in rows if isinstance(r, dict) and r.get("id") == ident)
        rows[:] = keep
    return held


#: The usual starting sets of cases, offered in one click: (key, what the button says, the cases' names).
PRESETS = {
    "levels": ("Low and high levels", ("Low levels", "High levels")),
    "condition": ("New and aged pipe", ("New pipe", "Aged pipe")),
    "standby": ("Duty units, and duty plus standby", ("Duty units only", "Duty plus standby")),
}


def preset(doc: dict, key: str) -> tuple[list[dict], str | None]:
    """The cases of a starting set for ``doc`` (to add to its cases), or [] and why none can be made.

    The levels copy the base's levels into both cases for the designer to change (no level is invented);
    the pipe condition sets every run new and aged; the standby set runs each pump group's duty units,
    then all its units.
    """
    if key not in PRESETS:
        return [], "That set of cases is not one this sheet knows."
    names = PRESETS[key][1]
    taken = {str(c.get("name", "")).strip().casefold() for c in doc.get("cases") or [] if isinstance(c, dict)}
    if any(n.casefold() in taken for n in names):
        return [], f"The sheet already has a case named '{next(n for n in names if n.casefold() in taken)}'."
    out = [copy.deepcopy(CASE_TEMPLATE) | {"name": n} for n in names]
    for c in out:
        for part in ("start", "end", "liquid", "pipes"):
            c[part] = copy.deepcopy(CASE_TEMPLATE[part])
    if key == "levels":
        for c in out:
            for which in ("start", "end"):
                node = doc.get(which) if isinstance(doc.get(which), dict) else {}
                c[which]["elevation"] = node.get("elevation", "")
        out[0]["note"] = "the lowest start level and highest end level the line must work at: give them"
        out[1]["note"] = "the highest start level and lowest end level: give them"
    elif key == "condition":
        out[0]["pipes"]["condition"], out[1]["pipes"]["condition"] = "new", "aged"
    elif key == "standby":
        groups = [e for e in case_elements(doc) if e.get("kind") == "pump" and whole_or_zero(e.get("standby")) > 0]
        if not groups:
            return [], ("No pump has standby units: give a pump more than one unit and some standby units first.")
        for e in groups:
            units, standby = whole_or_zero(e.get("units")) or 1, whole_or_zero(e.get("standby"))
            out[0]["elements"].append({"id": e["id"], "speed_ratio": "", "running": max(units - standby, 1)})
            out[1]["elements"].append({"id": e["id"], "speed_ratio": "", "running": units})
    return out, None


def whole_or_zero(v) -> int:
    """A whole number as a document holds it (2, "2", 2.0), else 0 (the form's and the starting sets' reading)."""
    try:
        return int(v) if not isinstance(v, bool) and float(v) == int(float(v)) else 0
    except (TypeError, ValueError, OverflowError):
        return 0
