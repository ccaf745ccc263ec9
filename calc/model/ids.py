"""Stable element ids: the name an element keeps wherever it moves in the line.

The comparison of revisions matches elements by id (``calc.record.compare``), and later the cases
and networks name elements by it. An id is given once, when the form first saves the element,
and kept from then on.
"""

from __future__ import annotations

import re

#: lower-case letters, digits and hyphens, starting with a letter, up to 40 characters: ``pipe-2``.
ELEMENT_ID = re.compile(r"[a-z][a-z0-9-]{0,39}")
_KIND = re.compile(r"[a-z]{1,20}")


def id_problem(value, seen: dict[str, int]) -> str | None:
    """What is wrong with an element id typed into a document, given the ids before it (id -> index)."""
    if not isinstance(value, str) or not ELEMENT_ID.fullmatch(value):
        return ("must be a short name of lower-case letters, digits and hyphens, starting with a letter "
                "(up to 40), such as pipe-2")
    if value in seen:
        return f"is the id of element {seen[value] + 1} too: each element's id is its own"
    return None


def ensure_ids(doc: dict) -> dict:
    """Give every element without a valid id of its own a stable one, in place, and return ``doc``.

    ``<kind>-<n>`` with the first n not yet used. A repeated id (a copied element) stays with its
    first holder and the copy gets a new one. A sheet without ids gets the same ids each time it is
    given them, in order, so two old revisions of one sheet match by position.

    >>> ensure_ids({"elements": [{"kind": "pipe"}, {"kind": "pump", "id": "p"}, {"kind": "pipe", "id": "p"}]})
    {'elements': [{'kind': 'pipe', 'id': 'pipe-1'}, {'kind': 'pump', 'id': 'p'}, {'kind': 'pipe', 'id': 'pipe-2'}]}
    """
    elements = doc.get("elements") if isinstance(doc, dict) else None
    if not isinstance(elements, list):
        return doc
    used: set[str] = set()
    needing = []
    for e in elements:
        if not isinstance(e, dict):
            continue
        own = e.get("id")
        if isinstance(own, str) and ELEMENT_ID.fullmatch(own) and own not in used:
            used.add(own)
        else:
            needing.append(e)
    for e in needing:
        kind = e.get("kind") if isinstance(e.get("kind"), str) and _KIND.fullmatch(e.get("kind")) else "element"
        n = 1
        while f"{kind}-{n}" in used:
            n += 1
        e["id"] = f"{kind}-{n}"
        used.add(e["id"])
    return doc
