"""One field of the sheet form as data (`Spec`): shared by the form's parts (server/form.py, server/form_transient.py)."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Spec:
    """One field of the form: its key in its group, label, input kind and an example value."""

    key: str
    label: str
    kind: str = "qty"  # qty | text | textarea | select | ratio | count
    example: str = ""
    help: str = ""
    options: str = ""  # name of an option list in OPTIONS
    datalist: str = ""  # name of a suggestion list for a free-text field
    default: str = ""  # what an empty select means, e.g. "anchored throughout"
    wide: bool = False
    shows_default: bool = False  # the example is the value an empty field means (a check limit's default)
    as_base: bool = False  # the example is the base sheet's value, which an empty case field keeps
    detail: str = ""  # the help in full, shown when the pointer rests on the short one
