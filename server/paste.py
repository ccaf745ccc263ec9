"""Pasted tables: rows copied from a spreadsheet, a maker's data sheet or a CSV file, read into a pump
curve, a ground profile or a list of fittings (`read_table`, `paste`).
"""

from __future__ import annotations

import copy
import csv
import io
import re
from dataclasses import dataclass, field
from typing import Any

from calc import tables
from calc.model import sheet as calc_sheet
from calc.units import FLOW, LENGTH, RATIO, InputError, in_system, parse_quantity, unit_allowed, unit_text
from server.editing import MAX_FIELD_LENGTH, ActionResult, get_path, is_bare_number, split_path, with_unit

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


def _column_unit(column: Column, unit: str | None, header: str, system: str = "SI") -> str | None:
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
                           f"{column.label.capitalize()} ({in_system(column.kind, system).suggested[0]}).") from None
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
               positional: tuple[str, ...] | None = None, max_rows: int = calc_sheet.MAX_POINTS,
               system: str = "SI") -> PastedTable:
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
            layout.append((column, _column_unit(column, unit, cell, system)))
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
        header = doc.get("header") if isinstance(doc.get("header"), dict) else {}
        system = "US" if header.get("units") == "US" else "SI"  # the units a message suggests
        table = read_table(text or "", columns, start, _POSITIONAL.get(kind_key), _LIST_LIMITS[key], system)
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
