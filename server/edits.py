"""The whole edit of one posted form, keeping every valid change: what is stored is the typed document
with each part that does not parse put back as the store has it (`reconcile`), so one invalid field
never holds up the others.
"""

from __future__ import annotations

import copy
import json
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

from calc.model import sheet as calc_sheet
from server.editing import (
    MISSING,
    SWITCH_KEYS,
    apply_action,
    differences,
    document_digest,
    get_path,
    is_bare_number,
    json_problem,
    reinserted,
    removal_words,
    set_field,
    set_raw,
    shape,
    split_path,
    with_unit,
)
from server.paste import paste

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
    if value is MISSING:
        if isinstance(parent, dict):
            parent.pop(key, None)
    elif isinstance(parent, dict) or (isinstance(parent, list) and isinstance(key, int) and key < len(parent)):
        parent[key] = copy.deepcopy(value)


def _revert(cand: dict, ref: dict, path: str, whole: frozenset = frozenset()) -> tuple | None:
    """Put back the part of ``cand`` that an error at ``path`` points at, as ``ref`` has it; the place put
    back (a tuple of keys, () for the whole document), or None when nothing changed.

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
            return None  # that row is left out already
        if isinstance(r, list) and (len(c) != len(r) or ".".join(map(str, prefix)) in whole):
            if len(c) > len(r) and isinstance(key, int) and key >= len(r) and ".".join(map(str, prefix)) not in whole:
                del c[len(r):]
                return prefix
            if c == r:
                return None
            c[:] = copy.deepcopy(r)
            return prefix
    for depth in range(len(parts), -1, -1):
        place = parts[:depth]
        c, r = get_path(cand, place), get_path(ref, place)
        if c == r and type(c) is type(r):
            continue
        _put(cand, place, r)
        # A group the form made for this value alone (server.editing.CREATABLE_GROUPS: the check limits,
        # a size) goes with it, so that a refused value leaves the document as it was.
        while r is MISSING and len(place) > 1 and get_path(cand, place[:-1]) == {} \
                and get_path(ref, place[:-1]) is MISSING:
            place = place[:-1]
            _put(cand, place, MISSING)
        return place
    return None


def waiting(ref: dict, parse: Callable = calc_sheet.parse) -> set[str]:
    """The paths of the values ``ref`` lacks and asks for (calc.model.sheet.Missing): values nobody has given
    yet (a new sheet, a new element still empty), which hold up no other change.

    Only what ``ref`` itself asks for waits: a value a typed change makes needed (a material emptied, so the
    run needs a roughness; a mode switched to a curve with no points) is not, and that change goes back.
    """
    return {e.path for e in parse(ref).requests}


def reconcile(stored: dict, typed: dict, parse: Callable = calc_sheet.parse, reference: dict | None = None,
              whole: frozenset = frozenset()) -> tuple[dict, Any]:
    """The document to store from what is typed: ``typed`` with each part that does not parse put back.

    Parts go back as ``reference`` has them (the stored document with this post's list action applied,
    so its places match the typed ones), then, if that gives nothing valid, as ``stored`` has them; should
    neither give a valid document, the stored one is kept whole. So every valid change is kept, and
    the stored sheet never holds a value that does not parse. It may lack values nobody has given yet
    (`waiting`: a new sheet, a new element): those hold up nothing, and the sheet asks for them.
    """
    for ref in ([reference] if reference is not None else []) + [stored]:
        cand = copy.deepcopy(typed)
        asked: set[str] | None = None  # what ``ref`` asks for: parsed only when a request needs it
        for _ in range(MAX_ROUNDS):
            parsed = parse(cand)
            if asked is None and parsed.requests:
                asked = waiting(ref, parse)
            wrong = [e for e in parsed.errors if not (calc_sheet.is_request(e) and e.path in (asked or ()))]
            if not wrong:
                return cand, parsed
            moved: list[tuple] = []
            for e in wrong:
                parts = split_path(e.path) if e.path else ()
                parts = parts if parts is not None else ()
                # An error inside a part this round put back already is stale: the next parse says whether
                # anything there is still wrong (walking up from it now would put back its whole list).
                if any(parts[:len(p)] == p for p in moved):
                    continue
                place = _revert(cand, ref, e.path, whole)
                if place is not None:
                    moved.append(place)
            if not moved:
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
    undo: dict | None = None  # after a removal: what the Undo button posts back (`undo_offer`)

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


def undo_offer(stored: dict, keep: dict, reference: dict | None, target: str) -> dict | None:
    """What the Undo button of a removal of ``target`` posts back, or None when there is nothing to undo.

    The item put back is the stored one, and only when the removal of the stored item is what was
    stored (``keep``'s list is ``reference``'s: the stored sheet with the removal applied).
    """
    item = get_path(stored, target)
    list_path = target.rpartition(".")[0]
    if item is MISSING or reference is None or get_path(keep, list_path) != get_path(reference, list_path):
        return None
    back = reinserted(keep, target, item)
    if back is None:
        return None
    return {"action": f"undo:{target}", "item": json.dumps(item, ensure_ascii=False, separators=(",", ":")),
            "check": document_digest(back), "words": removal_words(stored, target)}


def _undo(stored: dict, typed: dict, target: str, item_json: str, check: str) -> tuple[dict | None, dict | None, str | None]:
    """(typed document, stored document) with a removed item put back at ``target``, or a refusal."""
    try:
        item = json.loads(item_json or "null")
    except (ValueError, RecursionError):
        item = None
    refused = ("The sheet has changed since that removal, so Undo cannot put it back where it was; "
               "nothing was put back. Add it again if it is still wanted.")
    if not isinstance(item, dict) or json_problem(item) is not None:
        return None, None, refused
    back = reinserted(stored, target, item)
    if back is None or document_digest(back) != check:
        return None, None, refused
    shown = reinserted(typed, target, item)
    return (shown if shown is not None else copy.deepcopy(back)), back, None


def edit(stored: dict, drawn_from: dict, fields: dict[str, str], action: str | None,
         parse: Callable = calc_sheet.parse, paste_text: str = "",
         units: Callable[[dict], Mapping[str, str]] | None = None,
         undo_item: str = "", undo_check: str = "") -> Edit:
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
    elif verb == "undo":
        # Undo of a removal: the item comes back where it was, if the sheet is as the removal left it.
        shown, back, message = _undo(stored, typed, target, undo_item, undo_check)
        if message is None:
            switched, typed, reference, focus = True, shown, back, target
    elif action:
        result = apply_action(typed, action)
        focus, message = result.focus, result.message
        if message is None:
            switched, note = True, result.note
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
                set_raw(typed, split_path(path), with_unit(get_path(typed, path), unit))
                assumed[path] = unit
    by_column = {p.rsplit(".", 1)[-1]: u for p, u in assumed.items() if p in pasted}
    if by_column and note:
        note = note[:-1] + "; numbers without a unit took the unit their field shows (" + ", ".join(
            f"{u} for {k.replace('_', ' ')}" for k, u in by_column.items()) + ")."
    keep, keep_parsed = reconcile(stored, typed, parse, reference, whole)
    display_parsed = keep_parsed if keep == typed else parse(typed)
    same_shape = shape(keep) == shape(stored)
    changed = [p for p in fields if same_shape and get_path(keep, p) != get_path(stored, p)]
    undo = undo_offer(stored, keep, reference, target) if verb == "remove" and message is None else None
    return Edit(display=typed, keep=keep, keep_parsed=keep_parsed, errors=display_parsed.errors,
                changed=changed, switched=switched, focus=focus, message=message, note=note, assumed=assumed,
                undo=undo)
