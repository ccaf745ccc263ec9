"""Revisions as a person reads them: a burst of saves is one revision, labelled in one numbering.

The store keeps every save (append-only, nothing acknowledged is lost) and notes, when it stores a
save, whether it continues the revision of the save before it (same person in the same browser,
within ``PAUSE`` of it, not signed). This module groups saves into revisions and labels them:

- a signed revision carries its issue label, ``A``, ``B``… (or ``0``, ``1``… when the sheet's header
  asks for numbers): the label its record is issued and signed under;
- the working revisions between issues are ``A.1``, ``A.2``… : the first, second… revision on the way
  to issue ``A``. After ``A`` is signed, the next edit starts ``B.1``.

So the page, the history, the comparison and the record all say ``A.3`` for the same revision, and
the save numbers of the store stay in addresses only. Imports nothing of the server.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime

from calc.record.parts import revision_label as issue_label  # A, B… or 0, 1…

#: Seconds without a save after which the next save starts a new revision (common practice for an
#: editor's autosave grouping: long enough for a thought, short enough that a coffee break shows).
PAUSE = 300.0


@dataclass(frozen=True)
class Mark:
    """What the history needs of one save: the store's row without its document."""

    number: int
    created: str
    author: str
    note: str
    frozen: bool
    joins: bool  # continues the revision of the save before it


@dataclass
class Group:
    """One revision: consecutive saves by one person, the last of them its state."""

    saves: list[Mark] = field(default_factory=list)
    label: str = ""
    issue: int = 0   # how many issues were signed before this revision
    step: int = 0    # 1, 2… for working revisions; 0 for a signed one

    @property
    def number(self) -> int:
        """The save that is this revision's state (its last)."""
        return self.saves[-1].number

    @property
    def frozen(self) -> bool:
        return self.saves[-1].frozen

    @property
    def created(self) -> str:
        return self.saves[-1].created

    @property
    def started(self) -> str:
        return self.saves[0].created

    def notes(self, limit: int = 3) -> tuple[list[str], int]:
        """The distinct notes of its saves, oldest first, at most ``limit``; and how many more there are."""
        seen = list(dict.fromkeys(m.note for m in self.saves if m.note))
        return seen[:limit], max(0, len(seen) - limit)


def continues(before: str, now: str) -> bool:
    """Whether a save at ``now`` is within ``PAUSE`` of the save at ``before`` (ISO times)."""
    try:
        gap = (datetime.fromisoformat(now) - datetime.fromisoformat(before)).total_seconds()
    except (TypeError, ValueError):
        return False
    return 0 <= gap < PAUSE


def label(issue: int, step: int, scheme: str = "letters") -> str:
    """``A`` for a signed issue (step 0), ``A.3`` for the third working revision towards it.

    >>> label(0, 3), label(1, 0), label(2, 1, "numbers")
    ('A.3', 'B', '2.1')
    """
    return issue_label(issue, scheme) + (f".{step}" if step else "")


def scheme_of(document) -> str:
    """The header's revision scheme, letters unless it asks for numbers."""
    header = document.get("header") if isinstance(document, dict) else None
    wanted = header.get("revision_scheme") if isinstance(header, dict) else None
    return wanted if wanted in ("letters", "numbers") else "letters"


def group(marks: list[Mark], scheme: str = "letters") -> list[Group]:
    """The revisions of a sheet, oldest first, from its saves oldest first.

    A save starts a new revision unless it joins the one before; a signed save always ends its
    revision (the store never lets a save join a signed one, and an imported history is read the
    same way).

    >>> m = [Mark(1, "", "", "", False, False), Mark(2, "", "", "", False, True), Mark(3, "", "", "", True, True),
    ...      Mark(4, "", "", "", False, True), Mark(5, "", "", "", False, False)]
    >>> [(g.label, [s.number for s in g.saves]) for g in group(m)]
    [('A', [1, 2, 3]), ('B.1', [4]), ('B.2', [5])]
    """
    out: list[Group] = []
    for m in marks:
        if out and m.joins and not out[-1].frozen:
            out[-1].saves.append(m)
        else:
            out.append(Group([m]))
    issue = step = 0
    for g in out:
        g.issue = issue
        if g.frozen:
            g.step, g.label = 0, label(issue, 0, scheme)
            issue, step = issue + 1, 0
        else:
            step += 1
            g.step, g.label = step, label(issue, step, scheme)
    return out


def find(groups: list[Group], number: int) -> tuple[Group, int] | None:
    """The revision that save ``number`` belongs to, and the save's place in it (1-based)."""
    for g in groups:
        for i, m in enumerate(g.saves):
            if m.number == number:
                return g, i + 1
    return None


def labels(groups: list[Group]) -> dict[int, str]:
    """How each save is named to a person, by save number: its revision's label, and which save of it
    when a later save of the same revision superseded it.

    >>> labels(group([Mark(1, "", "", "", False, False), Mark(2, "", "", "", False, True)]))
    {1: 'A.1 (save 1 of 2)', 2: 'A.1'}
    """
    out: dict[int, str] = {}
    for g in groups:
        n = len(g.saves)
        for place, m in enumerate(g.saves, 1):
            out[m.number] = g.label if place == n else f"{g.label} (save {place} of {n})"
    return out


def save_label(groups: list[Group], number: int) -> str:
    """One save's name (``labels``), or 'save N' for a number the groups do not hold.

    >>> save_label([], 9)
    'save 9'
    """
    return labels(groups).get(number, f"save {number}")


def next_label(groups: list[Group], scheme: str = "letters") -> str:
    """The label the next save would start if it began a new revision."""
    if not groups:
        return label(0, 1, scheme)
    last = groups[-1]
    if last.frozen:
        return label(last.issue + 1, 1, scheme)
    return label(last.issue, last.step + 1, scheme)
