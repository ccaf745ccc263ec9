"""Editing a sheet document from a posted form: fields by dotted path, list actions, pasted tables, and keeping
every valid change.

Form fields are named by their dotted path in the document (``elements.2.length``), so a
parse error's path names the field it belongs to. The form also carries the document it was
drawn from (``doc``), so list items that exist on screen but not yet in the store still have
somewhere to land. What is stored is the typed document with each part that does not parse put
back as the store has it (`reconcile`), so one invalid field never holds up the others.
"""

from __future__ import annotations

import copy
import csv
import io
import json
import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any

from calc import tables
from calc.model import sheet as calc_sheet
from calc.units import FLOW, LENGTH, RATIO, InputError, parse_quantity, unit_allowed, unit_text

#: Top-level parts of the document a form field may write to.
SECTIONS = ("header", "liquid", "site", "settings", "start", "end", "elements")
#: Fields whose value changes which other fields the form shows.
SWITCH_KEYS = {"kind", "mode", "type", "standard"}
#: Keys holding a group of fields that a form may create when the document has none yet.
CREATABLE_GROUPS = {"size"}
#: Lists a form may add items to, with the template for a new item and the most allowed.
LIST_TEMPLATES: dict[str, tuple[dict, int]] = {
    "fittings": (calc_sheet.FITTING_TEMPLATE, calc_sheet.MAX_FITTINGS),
    "profile": (calc_sheet.PROFILE_POINT_TEMPLATE, calc_sheet.MAX_POINTS),
    "curve": (calc_sheet.CURVE_POINT_TEMPLATE, calc_sheet.MAX_POINTS),
}
#: Fields a new pipe run takes from the last one on the sheet.
CARRIED_ON = ("diameter", "size", "material", "roughness", "wall_thickness", "end_elevation", "rating")
ELEMENT_NAMES = {"pipe": "pipe run", "turbine": "turbine", "pump": "pump", "valve": "valve"}
MAX_DEPTH = 12
MAX_FIELD_LENGTH = 5000

_KEY = re.compile(r"^[A-Za-z_][A-Za-z0-9_]{0,40}$")
_INDEX = re.compile(r"^(0|[1-9][0-9]{0,4})$")
_INT = re.compile(r"^\s*[+-]?\d{1,9}\s*$")
_MISSING = object()


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
        return _MISSING
    node = doc
    for p in parts:
        if isinstance(p, int) and isinstance(node, list) and p < len(node) or isinstance(p, str) and isinstance(node, dict) and p in node:
            node = node[p]
        else:
            return _MISSING
    return node


def is_missing(value: Any) -> bool:
    return value is _MISSING


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
    if (parent is _MISSING or parent is None) and parts[-2] in CREATABLE_GROUPS and text.strip():
        grand = get_path(doc, parts[:-2])
        if isinstance(grand, dict):
            parent = grand[parts[-2]] = {}
    key = parts[-1]
    if isinstance(parent, list) and isinstance(key, int) and key < len(parent):
        old = parent[key]
    elif isinstance(parent, dict) and isinstance(key, str):
        old = parent.get(key, _MISSING)
    else:
        return False
    if isinstance(old, (dict, list)):
        return False
    if (old is _MISSING or old is None) and text == "":
        return False
    new = _coerce(text, old)
    if new == old and type(new) is type(old):
        return False
    parent[key] = new
    return True


def _set_raw(doc: dict, parts: tuple, value: Any) -> None:
    parent = get_path(doc, parts[:-1])
    key = parts[-1]
    if value is _MISSING:
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
    return [(p, la.get(p, _MISSING), lb.get(p, _MISSING))
            for p in dict.fromkeys([*la, *lb]) if la.get(p, _MISSING) != lb.get(p, _MISSING)
            or type(la.get(p, _MISSING)) is not type(lb.get(p, _MISSING))]


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
    parts = split_path(target)
    if parts is None:
        return ActionResult(doc, message="That action is not one this sheet knows.")
    if verb == "add":
        key = parts[-1]
        if not isinstance(key, str) or key not in LIST_TEMPLATES:
            return ActionResult(doc, message="That list cannot take new items.")
        template, limit = LIST_TEMPLATES[key]
        owner = get_path(doc, parts[:-1])
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
            del items[index]
            return ActionResult(doc, focus=f"{list_path}.{index - 1}" if index else list_path)
        other = index - 1 if verb == "up" else index + 1
        if not 0 <= other < len(items):
            return ActionResult(doc, focus=target)
        items[index], items[other] = items[other], items[index]
        return ActionResult(doc, focus=f"{list_path}.{other}")
    return ActionResult(doc, message="That action is not one this sheet knows.")


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


# -- pasted tables ------------------------------------------------------------------------------

#: The most text one paste or imported file may carry [characters]: a hundred rows of a wide
#: maker's table is some 10 kB, so this only stops a mistaken paste of something else.
MAX_PASTE_CHARS = 200_000
#: The most cells a pasted row may have, and the longest cell; anything larger is not a table of this sheet.
MAX_PASTE_COLUMNS = 40
MAX_PASTE_CELL = 500
_NUMERIC = re.compile(r"^[+-]?(?:\d|[.,]\d)")
_NAME_UNIT = re.compile(r"^(.*?)[\s,]*[(\[]\s*([^()\[\]]*?)\s*[)\]]\s*$")


class PasteRefused(ValueError):
    """A paste that cannot fill the table at all, with why; nothing on the sheet is changed."""


@dataclass(frozen=True)
class Column:
    """A column a pasted table may fill: its key in each row, what it holds, and the header words naming it."""

    key: str
    kind: Any  # a calc.units Kind, or "text" or "count"
    label: str
    names: tuple[str, ...]


_FLOW = Column("flow", FLOW, "flow", ("flow", "q", "capacity", "discharge", "rate", "flowrate", "volume"))
_HEAD = Column("head", LENGTH, "head", ("head", "h", "tdh", "lift"))
PASTE_COLUMNS: dict[str, tuple[Column, ...]] = {
    "pump.curve": (_FLOW, _HEAD, Column("efficiency", RATIO, "efficiency", ("efficiency", "eff", "eta", "η")),
                   Column("npsh_required", LENGTH, "NPSH required", ("npsh", "npshr", "npshreq", "npsh3",
                                                                     "npshrequired"))),
    "turbine.curve": (_FLOW, _HEAD),
    "pipe.profile": (Column("chainage", LENGTH, "chainage", ("chainage", "ch", "distance", "station", "sta", "x",
                                                             "position", "offset", "along")),
                     Column("elevation", LENGTH, "elevation", ("elevation", "elev", "level", "rl", "z", "height",
                                                               "altitude", "ground", "y"))),
    "pipe.fittings": (Column("type", "text", "fitting", ("fitting", "fittings", "type", "name", "description",
                                                        "item", "component", "label")),
                      Column("count", "count", "count", ("count", "qty", "quantity", "number", "no", "nr", "n",
                                                         "pcs")),
                      Column("K", RATIO, "K", ("k", "loss", "coefficient", "kvalue")),
                      Column("K1", RATIO, "K1", ("k1",)), Column("Kinf", RATIO, "K∞", ("kinf", "kinfinity")),
                      Column("Ki", RATIO, "Ki", ("ki",)), Column("Kd", RATIO, "Kd", ("kd",))),
}
#: Columns a pasted table without a header fills, in order from the cell it is pasted into.
_POSITIONAL = {"pipe.fittings": ("type", "count", "K")}
_LIST_WORDS = {"curve": "curve points", "profile": "ground profile", "fittings": "fittings"}
_LIST_LIMITS = {"curve": calc_sheet.MAX_POINTS, "profile": calc_sheet.MAX_POINTS, "fittings": calc_sheet.MAX_FITTINGS}


@dataclass
class PastedTable:
    """Rows read from pasted text: each a dict of column key -> the value to write, and what was noticed."""

    rows: list[dict[str, Any]]
    columns: list[str]
    notes: list[str] = field(default_factory=list)
    header: bool = False  # the rows came under a header naming their columns: they are whole rows


def _words(name: str) -> list[str]:
    return re.findall(r"[a-z0-9η]+", name.lower().replace("∞", "inf"))


def _match(name: str, columns: tuple[Column, ...]) -> Column | None:
    """The column a header names: its whole name first, then any one word (the more particular columns first)."""
    words = _words(name)
    joined = "".join(words)
    for c in columns:
        if joined in c.names:
            return c
    for c in reversed(columns):
        if any(w in c.names for w in words):
            return c
    return None


def _name_and_unit(cell: str) -> tuple[str, str | None]:
    """``'Flow (L/s)'`` -> ``('Flow', 'L/s')``; ``'Head'`` -> ``('Head', None)``."""
    m = _NAME_UNIT.match(cell)
    return (m.group(1).strip(), m.group(2).strip()) if m else (cell.strip(), None)


def _unit_like(cell: str) -> bool:
    bare = cell.strip().strip("()[]").strip()
    return bare in ("%", "-") or (bool(bare) and unit_allowed(unit_text(bare)))


def _column_unit(column: Column, unit: str | None, header: str) -> str | None:
    """The unit a header gives its column's bare numbers (None: none); a unit of the wrong kind is refused."""
    if unit is None or isinstance(column.kind, str):
        return None
    if unit in ("", "-", "1"):
        return None
    if column.kind is RATIO:
        if unit == "%":
            return "%"
        raise PasteRefused(f"The column '{header}' gives '{unit}' as its unit; {column.label} is a plain number "
                           f"or a percentage, so write % or no unit.")
    try:
        parse_quantity(f"1 {unit}", column.kind, "")
    except InputError:
        raise PasteRefused(f"The column '{header}' gives '{unit}' as its unit, which is not a unit of "
                           f"{column.kind.name} ({column.label}); write the unit alone in brackets, e.g. "
                           f"{column.label.capitalize()} ({column.kind.suggested[0]}).") from None
    return unit


def _bracketed(text: str) -> list[str] | None:
    """A header line cut after each bracketed unit (``Flow (L/s) Head (m)``), or None if it is not one.

    One pass over the text: hostile input costs no more than its length.
    """
    groups, start, depth = [], 0, 0
    for k, ch in enumerate(text):
        if ch in "([":
            depth += 1
        elif ch in ")]":
            depth -= 1
            if depth < 0:
                return None
            if depth == 0:
                groups.append(text[start:k + 1].strip())
                start = k + 1
    return groups if groups and depth == 0 and not text[start:].strip() else None


def _spaced(line: str) -> list[str]:
    """Cells of a line separated by spaces, as a data sheet copied from a PDF gives them.

    A header splits after each bracketed unit; a number takes the unit written after it.

    >>> _spaced("Flow (L/s) Total head (m) Efficiency (%)")
    ['Flow (L/s)', 'Total head (m)', 'Efficiency (%)']
    >>> _spaced("20 L/s 36 m 0.7"), _spaced("Chainage  Elevation")
    (['20 L/s', '36 m', '0.7'], ['Chainage', 'Elevation'])
    """
    text = line.strip()
    groups = _bracketed(text)
    if groups:
        return groups
    if len(re.split(r"\s{2,}", text)) > 1:
        return re.split(r"\s{2,}", text)
    tokens = text.split()
    if not any(_NUMERIC.match(t) for t in tokens):
        return tokens
    cells: list[str] = []
    for t in tokens:
        if cells and not _NUMERIC.match(t) and is_bare_number(cells[-1]) and _unit_like(t) or cells and not _NUMERIC.match(t) and not _NUMERIC.match(cells[-1]):
            cells[-1] += " " + t
        else:
            cells.append(t)
    return cells


def _cells(text: str) -> tuple[list[list[str]], str]:
    """The rows of pasted text as lists of cells, and the separator found: a tab (as spreadsheets copy),
    else a semicolon or comma (a CSV file, quoted cells allowed), else spaces."""
    text = text.replace("\ufeff", "").replace("\x00", "")
    sep = next((s for s in ("\t", ";", ",") if s in text), "")
    if sep:
        try:
            rows = [[c.strip() for c in row] for row in csv.reader(io.StringIO(text), delimiter=sep)]
        except csv.Error as e:
            raise PasteRefused(f"The pasted text cannot be read as a table ({e}).") from None
    else:
        lines = text.splitlines()
        if any(len(line) > MAX_PASTE_COLUMNS * MAX_PASTE_CELL for line in lines):
            raise PasteRefused("A pasted line is longer than any row of a table of this sheet.")
        rows = [_spaced(line) for line in lines]
    out = []
    for row in rows:
        while row and not row[-1]:
            row.pop()
        if row:
            if len(row) > MAX_PASTE_COLUMNS:
                raise PasteRefused(f"A pasted row has {len(row)} cells; a table of this sheet has at most a few.")
            if max(len(c) for c in row) > MAX_PASTE_CELL:
                raise PasteRefused(f"A pasted cell is longer than {MAX_PASTE_CELL} characters; no value of this "
                                   f"sheet is.")
            out.append(row)
    return out, sep


def read_table(text: str, columns: tuple[Column, ...], start: str | None = None,
               positional: tuple[str, ...] | None = None, max_rows: int = calc_sheet.MAX_POINTS) -> PastedTable:
    """Rows of pasted text for a table with ``columns``.

    A first row without numbers that names columns is a header: each column goes where its name says,
    and a unit in brackets after the name (``Flow (L/s)``, or on a row of its own under the names) is
    given to the column's numbers that have none. Without a header the cells fill the columns in
    order from ``start``. A cell that carries its own unit keeps it.

    >>> from server.editing import PASTE_COLUMNS
    >>> t = read_table("Flow (L/s)\\tHead (m)\\n0\\t40\\n20 L/s\\t36", PASTE_COLUMNS["pump.curve"])
    >>> t.rows
    [{'flow': '0 L/s', 'head': '40 m'}, {'flow': '20 L/s', 'head': '36 m'}]
    """
    if len(text) > MAX_PASTE_CHARS:
        raise PasteRefused(f"The pasted text is too long for a table of this sheet ({len(text) // 1000} kB; "
                           f"at most {MAX_PASTE_CHARS // 1000} kB).")
    lines = text.count("\n") + 1
    if lines > 2 * max_rows + 10:  # before reading it: a quoted cell may hold a line break, few will
        raise PasteRefused(f"The pasted text has {lines} lines; this table holds at most {max_rows} rows.")
    rows, sep = _cells(text)
    if not rows:
        raise PasteRefused("The pasted text holds no rows.")
    if len(rows) > max_rows + 2:  # a header and a row of units besides
        raise PasteRefused(f"The pasted text has {len(rows)} rows; this table holds at most {max_rows}.")
    labels = ", ".join(c.label for c in columns if positional is None or c.key in positional)
    notes: list[str] = []
    layout: list[tuple[Column | None, str | None]] = []
    first = rows[0]
    names_columns = not any(_NUMERIC.match(c) for c in first) and any(_match(_name_and_unit(c)[0], columns)
                                                                     for c in first)
    numbers_only = all(not isinstance(c.kind, str) for c in columns)
    if not names_columns and numbers_only and not any(_NUMERIC.match(c) for c in first):
        raise PasteRefused(f"The first row ({', '.join(first[:6])}) looks like a header, but no column of it is "
                           f"one of this table's ({labels}).")
    if names_columns:
        header, rows = first, rows[1:]
        units_row: list[str] = []
        if rows and not any(_NUMERIC.match(c) for c in rows[0]) and all(_unit_like(c) for c in rows[0] if c):
            units_row = rows.pop(0)
        seen: set[str] = set()
        left_out = []
        for i, cell in enumerate(header):
            name, unit = _name_and_unit(cell)
            if unit is None and i < len(units_row) and units_row[i]:
                unit = units_row[i].strip().strip("()[]").strip()
            column = _match(name, columns)
            if column is None or column.key in seen:
                layout.append((None, None))
                if cell:
                    left_out.append(cell)
                continue
            seen.add(column.key)
            layout.append((column, _column_unit(column, unit, cell)))
        if left_out:
            notes.append("left out the column" + ("s " if len(left_out) > 1 else " ")
                         + ", ".join(f"'{c}'" for c in left_out) + " (not a column of this table)")
    else:
        order = [c for c in columns if positional is None or c.key in positional]
        if positional:
            order.sort(key=lambda c: positional.index(c.key))
        keys = [c.key for c in order]
        order = order[keys.index(start):] if start in keys else order
        layout = [(c, None) for c in order]
    if not rows:
        raise PasteRefused("The pasted text has a header but no rows under it.")
    widths = {len(r) for r in rows}
    if sep == "," and len(widths) > 1:
        raise PasteRefused("The pasted rows have different numbers of cells. If the numbers have decimal commas "
                           "(0,2), separate the cells with tabs or semicolons instead, and write 0.2 for 0,2.")
    extra = max(widths) - len(layout)
    if extra > 0:
        notes.append(f"left out the last {extra} column{'s' if extra > 1 else ''} of the pasted rows "
                     f"(this table has {len(layout)} from where it was pasted)")
    out: list[dict[str, Any]] = []
    commas = 0
    for row in rows:
        values: dict[str, Any] = {}
        for (column, unit), cell in zip(layout, row):
            if column is None:
                continue
            if column.kind == "count":
                values[column.key] = int(cell) if re.fullmatch(r"\d{1,6}", cell) else (cell or 1)
            elif column.kind == "text":
                values[column.key] = cell[:calc_sheet.MAX_LABEL]
            else:
                commas += "," in cell
                values[column.key] = with_unit(cell, unit)[:MAX_FIELD_LENGTH]
        out.append(values)
    if commas:
        notes.append(f"{commas} number{'s' if commas > 1 else ''} had a comma, which this sheet does not read "
                     "(the decimal mark is a point): see the message beside each")
    return PastedTable(out, [c.key for c, _ in layout if c is not None], notes, header=names_columns)


def fitting_key(name: str) -> tuple[str | None, int]:
    """The fittings-table key a pasted name means, and how many table fittings it could mean.

    A name matches a fitting when each of its words is in that fitting's name or key.

    >>> fitting_key("Gate valve"), fitting_key("valve-gate-open"), fitting_key("Elbow 90")[0], fitting_key("Widget")
    (('valve-gate-open', 1), ('valve-gate-open', 1), None, (None, 0))
    """
    words = set(_words(name))
    if not words:
        return None, 0
    found = []
    for f in tables.fittings():
        if name.strip().lower() in (f.key, f.name.lower()):
            return f.key, 1
        if words <= set(_words(f.name)) | set(_words(f.key)):
            found.append(f.key)
    return (found[0] if len(found) == 1 else None), len(found)


def _fitting_rows(table: PastedTable) -> list[str]:
    """Turn pasted fitting rows into fittings: a typed K (or 2-K, 3-K values), else a fitting of the table by name."""
    notes = []
    for row in table.rows:
        name = str(row.pop("type", "") or "").strip()
        given = {k: row[k] for k in ("K", "K1", "Kinf", "Ki", "Kd") if str(row.get(k, "")).strip()}
        if {"K1", "Kinf"} <= set(given):
            row["type"] = "2k"
        elif {"K1", "Ki", "Kd"} <= set(given):
            row["type"] = "3k"
        elif "K" in given:
            row["type"] = "k"
        else:
            key, n = fitting_key(name) if name else (None, 0)
            row["type"] = key or "k"
            if key is None:
                row.setdefault("K", "")
                if name:
                    notes.append(f"'{name}' " + (f"could be any of {n} fittings of the table" if n else
                                                "is not a fitting of the table") + ": choose it or give its K")
        row["label"] = name or row.get("label", "")
        row.setdefault("count", 1)
    return notes


def _blank_row(key: str) -> dict:
    if key == "fittings":
        return {"type": "k", "count": 1, "label": "", "K": ""}
    template = calc_sheet.CURVE_POINT_TEMPLATE if key == "curve" else calc_sheet.PROFILE_POINT_TEMPLATE
    return {k: "" for k in template}


def paste(doc: dict, target: str, text: str, replace: bool = False) -> ActionResult:
    """Fill a curve, a ground profile or a list of fittings from pasted rows (``paste:elements.2.curve.3.head``).

    The rows fill the table from the row (and, without a header, the column) of ``target``, adding rows
    as needed; rows below the pasted ones stay. ``replace`` (an imported file) makes the rows the whole list.
    """
    doc = copy.deepcopy(doc)
    parts = split_path(target)
    if not parts or len(parts) < 3 or parts[0] != "elements" or not isinstance(parts[1], int) \
            or parts[2] not in _LIST_WORDS:
        return ActionResult(doc, message="Rows can be pasted into a curve, a ground profile or a list of fittings.")
    i, key = parts[1], str(parts[2])
    element = get_path(doc, parts[:2])
    if not isinstance(element, dict):
        return ActionResult(doc, message="That element is not on this sheet any more.")
    columns = PASTE_COLUMNS.get(f"{element.get('kind')}.{key}")
    items = element.get(key, [])
    if columns is None or not isinstance(items, list):
        return ActionResult(doc, message=f"Element {i + 1} has no {_LIST_WORDS[key]} to paste into.")
    row = parts[3] if len(parts) > 3 and isinstance(parts[3], int) and not replace else 0
    start = parts[4] if len(parts) > 4 and isinstance(parts[4], str) else None
    row = min(row, len(items))
    kind_key = f"{element.get('kind')}.{key}"
    try:
        table = read_table(text or "", columns, start, _POSITIONAL.get(kind_key), _LIST_LIMITS[key])
    except PasteRefused as refused:
        return ActionResult(doc, message=f"Nothing pasted: {refused}")
    notes = _fitting_rows(table) + table.notes if key == "fittings" else table.notes
    limit = _LIST_LIMITS[key]
    size = len(table.rows) if replace else max(len(items), row + len(table.rows))
    if size > limit:
        return ActionResult(doc, message=f"Nothing pasted: the {_LIST_WORDS[key]} of element {i + 1} would have "
                                         f"{size} rows, and hold at most {limit}.")
    element[key] = items
    if replace:
        del items[:]
    entered = []
    # Rows under a header are whole rows: a column the table has but the paste does not is emptied in
    # them, so a maker's new curve never keeps efficiencies of the old one. Without a header only the
    # pasted cells are written, as a spreadsheet does.
    others = [c.key for c in columns if c.key not in table.columns] if table.header and key != "fittings" else []
    emptied: set[str] = set()
    for j, values in enumerate(table.rows):
        at = row + j
        if at >= len(items):
            items.append(_blank_row(key))
        elif not isinstance(items[at], dict):
            items[at] = _blank_row(key)
        for k in others:
            if str(items[at].get(k, "") or "").strip():
                emptied.add(k)
            items[at][k] = ""
        for k, v in values.items():
            items[at][k] = v
            entered.append(f"elements.{i}.{key}.{at}.{k}")
    if emptied:
        notes = notes + ["emptied " + ", ".join(c.label for c in columns if c.key in emptied)
                         + " in the pasted rows (the pasted table has no such column)"]
    n = len(table.rows)
    words = f"{'Imported' if replace else 'Pasted'} {n} row{'s' if n != 1 else ''} into the {_LIST_WORDS[key]} " \
            f"of element {i + 1}"
    if not replace and n:
        words += f" (rows {row + 1} to {row + n})" if n > 1 else f" (row {row + 1})"
    if not replace and row + n < len(items):
        words += f"; rows {row + n + 1} to {len(items)} are as they were"
    first = table.columns[0] if table.columns else None
    focus = f"elements.{i}.{key}.{row}" + (f".{first}" if first and key != "fittings" else "")
    return ActionResult(doc, focus=focus, note="; ".join([words] + notes) + ".", entered=entered)


# -- keeping every valid change ---------------------------------------------------------------

#: Rounds of putting parts back before a post's typed changes are given up (each round puts back at
#: least one part, and one round puts back every part an error points at).
MAX_ROUNDS = 8


def _put(doc: dict, place: tuple, value: Any) -> None:
    if not place:
        doc.clear()
        doc.update(copy.deepcopy(value))
        return
    parent = get_path(doc, place[:-1])
    key = place[-1]
    if value is _MISSING:
        if isinstance(parent, dict):
            parent.pop(key, None)
    elif isinstance(parent, dict) or (isinstance(parent, list) and isinstance(key, int) and key < len(parent)):
        parent[key] = copy.deepcopy(value)


def _revert(cand: dict, ref: dict, path: str, whole: frozenset = frozenset()) -> bool:
    """Put back the part of ``cand`` that an error at ``path`` points at, as ``ref`` has it; whether anything changed.

    Along the path, a list whose length differs between the two is where their places stop meaning
    the same: an error in a row that only ``cand`` has leaves out the rows it added; any other error
    there puts the whole list back (as does any error in a list named in ``whole``). Where the lists
    match, the deepest place on the path that differs is put back: the field itself, or the group
    whose fields are valid alone but not together.
    """
    parts = split_path(path) if path else ()
    parts = parts if parts is not None else ()
    for depth, key in enumerate(parts):
        prefix = parts[:depth]
        c, r = get_path(cand, prefix), get_path(ref, prefix)
        if not isinstance(c, list):
            continue
        if isinstance(key, int) and key >= len(c):
            return False  # that row is left out already
        if isinstance(r, list) and (len(c) != len(r) or ".".join(map(str, prefix)) in whole):
            if len(c) > len(r) and isinstance(key, int) and key >= len(r) and ".".join(map(str, prefix)) not in whole:
                del c[len(r):]
                return True
            if c == r:
                return False
            c[:] = copy.deepcopy(r)
            return True
    for depth in range(len(parts), -1, -1):
        place = parts[:depth]
        c, r = get_path(cand, place), get_path(ref, place)
        if c == r and type(c) is type(r):
            continue
        _put(cand, place, r)
        return True
    return False


def reconcile(stored: dict, typed: dict, parse: Callable = calc_sheet.parse, reference: dict | None = None,
              whole: frozenset = frozenset()) -> tuple[dict, Any]:
    """The document to store from what is typed: ``typed`` with each part that does not parse put back.

    Parts go back as ``reference`` has them (the stored document with this post's list action applied,
    so its places match the typed ones), then, if that gives nothing valid, as ``stored`` has them; should
    neither give a valid document, the stored one is kept whole. So every valid change is kept, and
    the stored sheet is always one that parses.
    """
    for ref in ([reference] if reference is not None else []) + [stored]:
        cand = copy.deepcopy(typed)
        for _ in range(MAX_ROUNDS):
            parsed = parse(cand)
            if parsed.ok:
                return cand, parsed
            moved = [_revert(cand, ref, e.path, whole) for e in parsed.errors]
            if not any(moved):
                break
    return copy.deepcopy(stored), parse(stored)


# -- the whole edit ----------------------------------------------------------------------------

@dataclass
class Edit:
    """What one posted form did: the document to show, the document to keep, and the errors."""

    display: dict  # what the user typed, shown back with the messages
    keep: dict  # the valid document to store and solve
    keep_parsed: Any  # calc.model.sheet.Parsed of ``keep``
    errors: list  # InputErrors of ``display``, by path
    changed: list[str] = field(default_factory=list)
    switched: bool = False  # a field that changes the form's layout was changed
    focus: str | None = None
    message: str | None = None  # why an action was refused
    note: str | None = None  # what an action did, when it needs saying (a paste)
    assumed: dict[str, str] = field(default_factory=dict)  # path -> unit given to a bare number

    @property
    def stale(self) -> bool:
        """True when what is on screen differs from what was stored and solved."""
        return self.display != self.keep

    @property
    def pending(self) -> list[str]:
        """The paths of what is on screen but not stored: each typed or pasted value not applied yet."""
        return [p for p, _, _ in differences(self.keep, self.display)]


def form_document(form_doc: str | None, stored: dict) -> dict:
    """The document the form was drawn from, or the stored one if the form's copy is unusable."""
    if form_doc:
        try:
            doc = json.loads(form_doc)
        except (ValueError, RecursionError):
            doc = None
        if isinstance(doc, dict) and json_problem(doc) is None:
            return doc
    return copy.deepcopy(stored)


def edit(stored: dict, drawn_from: dict, fields: dict[str, str], action: str | None,
         parse: Callable = calc_sheet.parse, paste_text: str = "",
         units: Callable[[dict], Mapping[str, str]] | None = None) -> Edit:
    """Merge posted fields (and an action) into a sheet, keeping in ``keep`` every change that parses.

    ``units`` gives, for a document, the unit each quantity field shows in its placeholder: a bare
    number typed or pasted there takes it. A field whose value does not parse is left at its stored
    value, rows not yet valid stay on screen only, and the stored sheet is always whole (`reconcile`).
    """
    typed = copy.deepcopy(drawn_from)
    moved = [path for path, text in fields.items() if set_field(typed, path, text)]
    switched = any(str(split_path(p)[-1]) in SWITCH_KEYS for p in moved)
    entered = list(fields)
    pasted: set[str] = set()
    focus = message = note = None
    reference = None
    whole: frozenset = frozenset()
    verb, _, target = (action or "").partition(":")
    if verb in ("paste", "import"):
        result = paste(typed, target, paste_text, replace=verb == "import")
        focus, message = result.focus, result.message
        if message is None:
            switched, typed, note = True, result.doc, result.note
            entered += result.entered
            pasted = set(result.entered)
            # A pasted table is one change: it is stored whole, or not until every row is valid.
            whole = frozenset({".".join(target.split(".")[:3])})
    elif verb == "restore":
        switched = True  # the fields restored from this browser's draft may change the form's layout
    elif action:
        result = apply_action(typed, action)
        focus, message = result.focus, result.message
        if message is None:
            switched = True
            typed = result.doc
            acted = apply_action(stored, action)
            if acted.message is None:
                reference = acted.doc
    assumed: dict[str, str] = {}
    bare = [p for p in entered if is_bare_number(get_path(typed, p))]
    if units is not None and bare:
        shown = units(typed)
        for path in bare:
            unit = shown.get(path)
            if unit:
                _set_raw(typed, split_path(path), with_unit(get_path(typed, path), unit))
                assumed[path] = unit
    by_column = {p.rsplit(".", 1)[-1]: u for p, u in assumed.items() if p in pasted}
    if by_column and note:
        note = note[:-1] + "; numbers without a unit took the unit their field shows (" + ", ".join(
            f"{u} for {k.replace('_', ' ')}" for k, u in by_column.items()) + ")."
    keep, keep_parsed = reconcile(stored, typed, parse, reference, whole)
    display_parsed = keep_parsed if keep == typed else parse(typed)
    same_shape = shape(keep) == shape(stored)
    changed = [p for p in fields if same_shape and get_path(keep, p) != get_path(stored, p)]
    return Edit(display=typed, keep=keep, keep_parsed=keep_parsed, errors=display_parsed.errors,
                changed=changed, switched=switched, focus=focus, message=message, note=note, assumed=assumed)
