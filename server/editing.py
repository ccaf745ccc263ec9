"""Editing a sheet document from a posted form: fields by dotted path, list actions, bare numbers.

Pasted tables are in server/paste.py; keeping every valid change and the whole edit of one post in
server/edits.py.

Form fields are named by their dotted path in the document (``elements.2.length``), so a
parse error's path names the field it belongs to. The form also carries the document it was
drawn from (``doc``), so list items that exist on screen but not yet in the store still have
somewhere to land. What is stored is the typed document with each part that does not parse put
back as the store has it (`reconcile`), so one invalid field never holds up the others.
"""

from __future__ import annotations

import copy
import hashlib
import json
import re
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

from calc.model import cases as calc_cases
from calc.model import sheet as calc_sheet
from calc.model import transient_spec as calc_transient
from calc.units import unit_allowed, unit_text

#: Top-level parts of the document a form field may write to.
SECTIONS = ("header", "liquid", "site", "settings", "start", "end", "elements", "cases", "energy", "transient")
#: Fields whose value changes which other fields the form shows.
SWITCH_KEYS = {"kind", "mode", "type", "standard", "speed_control", "units", "valve_type", "setting", "law"}
#: Keys holding a group of fields that a form may create when the document has none yet (a pipe's size,
#: the settings and their check limits, which most sheets leave at their defaults).
CREATABLE_GROUPS = {"size", "settings", "checks", "energy", "transient"}
#: Lists a form may add items to, with the template for a new item and the most allowed.
LIST_TEMPLATES: dict[str, tuple[dict, int]] = {
    "fittings": (calc_sheet.FITTING_TEMPLATE, calc_sheet.MAX_FITTINGS),
    "profile": (calc_sheet.PROFILE_POINT_TEMPLATE, calc_sheet.MAX_POINTS),
    "curve": (calc_sheet.CURVE_POINT_TEMPLATE, calc_sheet.MAX_POINTS),
    "cases": (calc_sheet.CASE_TEMPLATE, calc_sheet.MAX_CASES),
    "flow_duration": (calc_sheet.FDC_POINT_TEMPLATE, calc_sheet.MAX_POINTS),
    "events": (calc_transient.EVENT_TEMPLATE, calc_transient.MAX_EVENTS),
    "devices": (calc_transient.DEVICE_TEMPLATE, calc_transient.MAX_DEVICES),
    "points": (calc_transient.POINT_TEMPLATE, calc_sheet.MAX_POINTS),
    "table": (calc_transient.LAW_POINT_TEMPLATE, calc_sheet.MAX_POINTS),
    "four_quadrant": (calc_transient.SUTER_POINT_TEMPLATE, calc_transient.MAX_SUTER_POINTS),
}
#: Fields a new pipe run takes from the last one on the sheet: the same pipe carries on. Its length and
#: end elevation are asked for (a run level with the last one would be a number nobody gave).
CARRIED_ON = ("diameter", "size", "material", "condition", "roughness", "wall_thickness", "rating")
ELEMENT_NAMES = {"pipe": "pipe run", "turbine": "turbine", "pump": "pump", "valve": "valve"}
MAX_DEPTH = 12
MAX_FIELD_LENGTH = 5000

_KEY = re.compile(r"^[A-Za-z_][A-Za-z0-9_]{0,40}$")
_INDEX = re.compile(r"^(0|[1-9][0-9]{0,4})$")
_INT = re.compile(r"^\s*[+-]?\d{1,9}\s*$")
MISSING = object()


@lru_cache(maxsize=65536)
def split_path(path: str) -> tuple[str | int, ...] | None:
    """``'elements.2.length'`` -> ``('elements', 2, 'length')``; None if it is not a document path."""
    parts = path.split(".")
    if not parts or parts[0] not in SECTIONS:
        return None
    out: list[str | int] = []
    for p in parts:
        if _INDEX.match(p):
            out.append(int(p))
        elif _KEY.match(p):
            out.append(p)
        else:
            return None
    return tuple(out)


def get_path(doc: Any, path: str | tuple | list) -> Any:
    """The value at a dotted path, or the module's missing marker."""
    parts = split_path(path) if isinstance(path, str) else path
    if parts is None:
        return MISSING
    node = doc
    for p in parts:
        if isinstance(p, int) and isinstance(node, list) and p < len(node) or isinstance(p, str) and isinstance(node, dict) and p in node:
            node = node[p]
        else:
            return MISSING
    return node


def is_missing(value: Any) -> bool:
    return value is MISSING


def too_deep(obj: Any, limit: int = MAX_DEPTH) -> bool:
    """Whether JSON data nests deeper than ``limit``; iterative, so hostile input cannot exhaust the stack."""
    stack = [(obj, 0)]
    while stack:
        node, depth = stack.pop()
        if depth > limit:
            return True
        if isinstance(node, dict):
            stack.extend((v, depth + 1) for v in node.values())
        elif isinstance(node, list):
            stack.extend((v, depth + 1) for v in node)
    return False


#: The largest sheet document stored [bytes of JSON]: far above any real line (the parser's own
#: limits give some 200 kB at most), far below what would slow every page that shows it.
MAX_DOCUMENT_BYTES = 500_000


def json_problem(doc: Any) -> str | None:
    """Why JSON data cannot be stored as a sheet document (too deep, NaN or infinity, too large), or None."""
    if too_deep(doc):
        return "nests too deeply to be a sheet"
    try:
        text = json.dumps(doc, allow_nan=False)
    except (ValueError, TypeError):
        return "holds a number that is not finite (NaN or infinity)"
    if len(text) > MAX_DOCUMENT_BYTES:
        return f"is larger than a sheet may be ({len(text) // 1000} kB; at most {MAX_DOCUMENT_BYTES // 1000} kB)"
    return None


def _coerce(text: str, old: Any) -> Any:
    """A typed string becomes the stored value; whole counts stay numbers, everything else is kept as typed."""
    if isinstance(old, bool):
        return text
    if isinstance(old, int) and _INT.match(text):
        return int(text)
    if isinstance(old, float):
        try:
            if float(text) == old:
                return old
        except ValueError:
            pass
    return text


def set_field(doc: dict, path: str, text: str) -> bool:
    """Write one typed value into ``doc``; returns whether the document changed.

    Only paths whose container already exists are written (plus a missing ``size`` group),
    so a posted name can never grow a list or build arbitrary structure.
    """
    parts = split_path(path)
    if parts is None or len(parts) < 2:
        return False
    parent = get_path(doc, parts[:-1])
    if (parent is MISSING or parent is None) and parts[-2] in CREATABLE_GROUPS and text.strip():
        parent = _create_groups(doc, parts[:-1])
    key = parts[-1]
    if isinstance(parent, list) and isinstance(key, int) and key < len(parent):
        old = parent[key]
    elif isinstance(parent, dict) and isinstance(key, str):
        old = parent.get(key, MISSING)
    else:
        return False
    if isinstance(old, (dict, list)):
        return False
    if (old is MISSING or old is None) and text == "":
        return False
    new = _coerce(text, old)
    if new == old and type(new) is type(old):
        return False
    parent[key] = new
    return True


def _create_groups(doc: dict, parts: tuple) -> Any:
    """The group at ``parts``, made (with any missing group above it) where each is a creatable group."""
    node: Any = doc
    for key in parts:
        child = get_path(node, (key,))
        if child is MISSING or child is None:
            if not isinstance(node, dict) or key not in CREATABLE_GROUPS:
                return MISSING
            child = node[key] = {}
        node = child
    return node


def set_raw(doc: dict, parts: tuple, value: Any) -> None:
    parent = get_path(doc, parts[:-1])
    key = parts[-1]
    if value is MISSING:
        if isinstance(parent, dict):
            parent.pop(key, None)
    elif isinstance(parent, dict) or (isinstance(parent, list) and key < len(parent)):
        parent[key] = copy.deepcopy(value)


def related(a: str, b: str) -> bool:
    """Whether one path is the other or lies inside it."""
    return a == b or a.startswith(b + ".") or b.startswith(a + ".")


def shape(doc: Any) -> Any:
    """The list structure of a document: where two documents share it, a path means the same field in both."""
    if isinstance(doc, dict):
        return tuple((k, shape(v)) for k, v in doc.items() if isinstance(v, (dict, list)))
    if isinstance(doc, list):
        return tuple(shape(v) for v in doc)
    return None


def leaves(doc: Any, prefix: str = "") -> dict[str, Any]:
    """Every value of a document by dotted path (an empty list or group counts as one value).

    >>> leaves({"header": {"title": "A"}, "elements": [{"length": "5 m", "fittings": []}]})
    {'header.title': 'A', 'elements.0.length': '5 m', 'elements.0.fittings': []}
    """
    out: dict[str, Any] = {}
    stack = [(prefix, doc)]
    while stack:
        path, node = stack.pop()
        if isinstance(node, dict) and node:
            stack.extend((f"{path}.{k}" if path else str(k), v) for k, v in reversed(list(node.items())))
        elif isinstance(node, list) and node:
            stack.extend((f"{path}.{i}" if path else str(i), v) for i, v in reversed(list(enumerate(node))))
        else:
            out[path] = node
    return out


def differences(a: Any, b: Any) -> list[tuple[str, Any, Any]]:
    """(path, value in ``a``, value in ``b``) for each value that differs; the missing marker where one has none."""
    la, lb = leaves(a), leaves(b)
    return [(p, la.get(p, MISSING), lb.get(p, MISSING))
            for p in dict.fromkeys([*la, *lb]) if la.get(p, MISSING) != lb.get(p, MISSING)
            or type(la.get(p, MISSING)) is not type(lb.get(p, MISSING))]


# -- list actions ------------------------------------------------------------------------------

@dataclass
class ActionResult:
    doc: dict
    focus: str | None = None  # id-path of the field to put the cursor in afterwards
    message: str | None = None  # why the action was refused
    note: str | None = None  # what a successful action did, when it needs saying (a paste)
    entered: list[str] = field(default_factory=list)  # paths of the values the action wrote, as typed


def apply_action(doc: dict, action: str) -> ActionResult:
    """Apply a list action such as ``add:elements:pipe``, ``remove:elements.2``, ``up:elements.1.fittings.0``."""
    verb, _, target = action.partition(":")
    doc = copy.deepcopy(doc)
    if verb == "add" and target.startswith("elements:"):
        kind = target.split(":", 1)[1]
        template = calc_sheet.ELEMENT_TEMPLATES.get(kind)
        elements = doc.get("elements")
        if template is None or not isinstance(elements, list):
            return ActionResult(doc, message="That kind of element cannot be added here.")
        if len(elements) >= calc_sheet.MAX_ELEMENTS:
            return ActionResult(doc, message=f"A sheet holds at most {calc_sheet.MAX_ELEMENTS} elements.")
        new = copy.deepcopy(template)
        same = [e for e in elements if isinstance(e, dict) and e.get("kind") == kind]
        new["label"] = f"{template.get('label', kind)} {len(same) + 1}"
        if kind == "pipe" and same:
            # A new run usually carries on from the last one: same bore and wall, level to start with.
            for key in CARRIED_ON:
                if key in same[-1]:
                    new[key] = copy.deepcopy(same[-1][key])
        elements.append(new)
        return ActionResult(doc, focus=f"elements.{len(elements) - 1}.label")
    if verb == "preset" and target.startswith("cases:"):
        cases = doc.get("cases")
        if cases is None:
            cases = doc["cases"] = []
        if not isinstance(cases, list):
            return ActionResult(doc, message="The sheet's cases cannot take new items.")
        new_cases, why = calc_cases.preset(doc, target.split(":", 1)[1])
        if why:
            return ActionResult(doc, message=why)
        if len(cases) + len(new_cases) > calc_sheet.MAX_CASES:
            return ActionResult(doc, message=f"A sheet holds at most {calc_sheet.MAX_CASES} cases.")
        cases.extend(new_cases)
        return ActionResult(doc, focus=f"cases.{len(cases) - len(new_cases)}.name",
                            note=f"Added the cases {' and '.join(repr(c['name']) for c in new_cases)}.")
    parts = split_path(target)
    if parts is None:
        return ActionResult(doc, message="That action is not one this sheet knows.")
    if verb == "add":
        key = parts[-1]
        if not isinstance(key, str) or key not in LIST_TEMPLATES:
            return ActionResult(doc, message="That list cannot take new items.")
        template, limit = LIST_TEMPLATES[key]
        owner = get_path(doc, parts[:-1])
        if (owner is MISSING or owner is None) and len(parts) == 2 and parts[0] in CREATABLE_GROUPS:
            owner = doc[parts[0]] = {}  # a group most sheets leave out (the energy inputs), made for its list
        if not isinstance(owner, dict):
            return ActionResult(doc, message="That list is not on this sheet any more.")
        items = owner.get(key)
        if items is None:
            items = owner[key] = []
        if not isinstance(items, list):
            return ActionResult(doc, message="That list cannot take new items.")
        if len(items) >= limit:
            return ActionResult(doc, message=f"A list of {key} holds at most {limit} items.")
        items.append(copy.deepcopy(template))
        first = next(iter(template), None)
        return ActionResult(doc, focus=f"{target}.{len(items) - 1}.{first}" if first else None)
    if verb in ("remove", "up", "down"):
        index = parts[-1]
        items = get_path(doc, parts[:-1])
        if not isinstance(index, int) or not isinstance(items, list) or index >= len(items):
            return ActionResult(doc, message="That item is not on this sheet any more.")
        list_path = ".".join(str(p) for p in parts[:-1])
        if verb == "remove":
            dropped = 0
            if parts[:-1] == ("elements",) and isinstance(items[index], dict):
                # An element's changes in the cases go with it (a row naming a removed element is an error).
                dropped = calc_cases.drop_rows(doc, items[index].get("id"))
            del items[index]
            if dropped:
                return ActionResult(doc, focus=f"{list_path}.{index - 1}" if index else list_path,
                                    note=f"Its changes in {dropped} case{'s' if dropped > 1 else ''} went with it.")
            return ActionResult(doc, focus=f"{list_path}.{index - 1}" if index else list_path)
        other = index - 1 if verb == "up" else index + 1
        if not 0 <= other < len(items):
            return ActionResult(doc, focus=target)
        items[index], items[other] = items[other], items[index]
        return ActionResult(doc, focus=f"{list_path}.{other}")
    return ActionResult(doc, message="That action is not one this sheet knows.")


# -- undoing a removal ------------------------------------------------------------------------
# A removal is answered with a notice and an Undo button carrying the item removed (its JSON) and a
# check: the digest of the stored sheet with the item put back. The undo is applied only while the
# stored sheet with that item put back in that place gives the same digest, so it refuses once the
# sheet has moved on, and an item altered on its way never lands.

#: What the items of each list are called in the notice of a removal.
ITEM_NAMES = {"fittings": "fitting", "profile": "profile point", "curve": "curve point", "cases": "case",
              "flow_duration": "flow-duration point"}


def document_digest(doc: Any) -> str:
    """A digest of a document's content, key order aside (what an undo checks the sheet against)."""
    text = json.dumps(doc, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False)
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def reinserted(doc: dict, target: str, item: Any) -> dict | None:
    """A copy of ``doc`` with ``item`` put back at ``target`` (``elements.2``, ``elements.0.curve.3``),
    or None when that place is not in ``doc``.

    >>> reinserted({"elements": [{"k": 1}, {"k": 3}]}, "elements.1", {"k": 2})
    {'elements': [{'k': 1}, {'k': 2}, {'k': 3}]}
    >>> reinserted({"elements": []}, "elements.4", {}) is None
    True
    """
    parts = split_path(target)
    if parts is None or len(parts) < 2 or not isinstance(parts[-1], int):
        return None
    out = copy.deepcopy(doc)
    items = get_path(out, parts[:-1])
    if not isinstance(items, list) or parts[-1] > len(items):
        return None
    items.insert(parts[-1], copy.deepcopy(item))
    return out


def removal_words(doc: dict, target: str) -> str:
    """What removing ``target`` from ``doc`` takes away, as the notice names it.

    >>> doc = {"elements": [{"kind": "pipe", "label": "Suction", "curve": []}, {"kind": "pump", "label": ""}]}
    >>> removal_words(doc, "elements.0"), removal_words(doc, "elements.1"), removal_words(doc, "elements.0.curve.2")
    ('pipe run «Suction»', 'pump (element 2)', 'curve point 3 of «Suction»')
    """
    parts = split_path(target) or ()
    if len(parts) == 2 and parts[0] == "cases" and isinstance(parts[1], int):
        case = get_path(doc, parts)
        name = " ".join(str(case.get("name") or "").split()) if isinstance(case, dict) else ""
        return f"case «{name}»" if name else f"case {parts[1] + 1}"
    if len(parts) < 2 or parts[0] != "elements" or not isinstance(parts[1], int):
        return "the item"
    element = get_path(doc, parts[:2])
    element = element if isinstance(element, dict) else {}
    label = element.get("label") if isinstance(element.get("label"), str) else ""
    label = " ".join(label.split())
    if len(parts) == 2:
        name = ELEMENT_NAMES.get(element.get("kind"), "element")
        return f"{name} «{label}»" if label else f"{name} (element {parts[1] + 1})"
    owner = f"«{label}»" if label else f"element {parts[1] + 1}"
    if len(parts) == 4 and isinstance(parts[3], int):
        return f"{ITEM_NAMES.get(str(parts[2]), 'item')} {parts[3] + 1} of {owner}"
    return f"an item of {owner}"


# -- a bare number takes the unit its field shows ---------------------------------------------

#: A number typed alone, with no unit after it (a comma in it is left for the quantity parser to explain).
_BARE = re.compile(r"^\s*[+-]?(?:\d[\d,]*(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?\s*$")  # no two ways to match a digit
#: An example value with its unit, as a field's placeholder shows it ('420 m').
_EXAMPLE = re.compile(r"^\s*[+-]?(?:\d+\.?\d*|\.\d+)\s+(\S.*?)\s*$")


def example_unit(example: str) -> str | None:
    """The unit an example value shows, or None when it shows none.

    >>> example_unit("20 L/s"), example_unit("998 kg/m^3"), example_unit("0.85"), example_unit("0.85 or 85 %")
    ('L/s', 'kg/m^3', None, None)
    """
    m = _EXAMPLE.match(example or "")
    if not m or not unit_allowed(unit_text(m.group(1))):
        return None
    return m.group(1)


def is_bare_number(text: object) -> bool:
    """Whether typed text is a number alone (``'300'``, ``'0,2'``), with no unit after it.

    >>> [is_bare_number(t) for t in ("300", " -1.5e3 ", "0,2", "1,200", "300 m", "", "m", 300)]
    [True, True, True, True, False, False, False, False]
    """
    return isinstance(text, str) and bool(_BARE.match(text))


def with_unit(text: str, unit: str | None) -> str:
    """A bare number with ``unit`` after it; anything else as typed.

    >>> with_unit("300", "m"), with_unit("300 ft", "m"), with_unit("300", None), with_unit("0,2", "m")
    ('300 m', '300 ft', '300', '0,2 m')
    """
    return f"{text.strip()} {unit}" if unit and is_bare_number(text) else text


