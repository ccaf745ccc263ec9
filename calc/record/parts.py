"""The record as plain data: tables, worked steps, equations, references, sign-off and the record itself."""

from __future__ import annotations

from dataclasses import dataclass, field

from calc.record.plots import Plot

ROLES = ("preparer", "checker", "approver")
ROLE_TITLES = {"preparer": "Prepared by", "checker": "Checked by", "approver": "Approved by"}
SEVERITY_TITLES = {"error": "Errors", "warning": "Warnings", "caution": "Cautions", "info": "For information"}


@dataclass
class Table:
    """A table of text cells; ``align`` holds 'l' or 'r' per column."""

    head: list[str]
    rows: list[list[str]]
    caption: str = ""
    align: list[str] | None = None
    note: str = ""
    css: str = ""


@dataclass
class Step:
    """One line of working: what is found, by which equation, with which numbers, and the result."""

    symbol: str
    name: str
    equation: str
    substituted: str
    result: str
    unit: str
    value: float | None = None
    ref: str = ""
    also: str = ""  # a second line of working, e.g. both sides of an implicit equation at the result


@dataclass
class StepGroup:
    """The working for one element (or the liquid, or the ends of the line) at one operating point."""

    title: str
    kind: str
    steps: list[Step] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    #: A pipe run's figures for the runs' table of the printed working (see calc.record.steps.working).
    row: dict = field(default_factory=dict)


@dataclass
class Equation:
    name: str
    text: str
    where: str = ""
    ref: str = ""


@dataclass
class Reference:
    number: int
    citation: str
    used_for: list[str] = field(default_factory=list)


@dataclass
class Assumption:
    text: str
    verify: bool = False  # to be confirmed by the designer before the record is relied on


#: How a signature stands, as the record shows it. Only "valid" and "trusted" count as sign-off.
SIGNATURE_STATUS = {
    "valid": "valid",
    "trusted": "valid (imported, trusted)",
    "imported": "imported, not made on this server",
    "typed": "name typed, identity not confirmed",
    "broken": "broken: does not match this revision",
}


@dataclass
class Signature:
    role: str
    title: str
    name: str = ""
    comment: str = ""
    signed: str = ""  # ISO date and time, UTC
    login: str = ""  # the signer's account, on the server where it was made
    initials: str = ""
    status: str = ""  # a key of SIGNATURE_STATUS
    how: str = ""  # how the signer was identified, and where, in words

    @property
    def done(self) -> bool:
        return bool(self.name)

    @property
    def counts(self) -> bool:
        """A signature that stands as sign-off: identity confirmed, here or by a trusted installation."""
        return self.status in ("valid", "trusted")

    @property
    def status_text(self) -> str:
        return SIGNATURE_STATUS.get(self.status, "")


@dataclass
class Meta:
    """What the store knows about the revision the record is of; the record itself is pure."""

    sheet_id: int | None = None
    store_revision: int | None = None
    label_index: int = 0
    label: str = ""  # how the store names this state (A.3 on the way to issue A); the issue label when empty
    created: str = ""
    printed: str = ""
    frozen: bool = False
    # {role, name, comment, signed, fingerprint, login, initials, identified, version, origin}
    signatures: list[dict] = field(default_factory=list)
    verify_url: str = ""


@dataclass
class Record:
    """Everything the record shows, section by section, as text and tables (HTML is the template's job)."""

    header: dict
    purpose: str
    scope: list[str]
    references: list[Reference]
    assumptions: list[Assumption]
    inputs: list[Table]
    equations: list[Equation]
    steps: list[StepGroup]
    steps_point: str
    solve_log: list[Table]
    solve_notes: list[str]
    results: list[dict]
    points_table: Table | None
    no_point: str
    plots: list[Plot]
    findings: dict[str, list[dict]]
    solver_notes: list[str]
    uncertainty: list[Table]
    cautions: list[str]
    disclaimer: str
    signoff: list[Signature]
    fingerprint: str
    fingerprint_grouped: str
    verify_url: str
    program: str
    version: str
    errors: list[dict] = field(default_factory=list)
    cases: list[Table] = field(default_factory=list)  # calc.record.cases: empty without operating cases
    energy: list[Table] = field(default_factory=list)  # calc.record.energy: empty without energy inputs
    transients: list[dict] = field(default_factory=list)  # calc.record.transient: empty without events
    #: The working as printed: the step groups, with the pipe runs' groups gathered into tables
    #: (calc.record.steps.working); the same numbers as ``steps``.
    working: list = field(default_factory=list)
    #: Information printed in the working or results, so not listed again among the findings.
    findings_elsewhere: list[str] = field(default_factory=list)
    #: Each run's surge screening at the design point (calc.record.results.surge_screening), or None.
    surge_screen: Table | None = None

    @property
    def signed(self) -> bool:
        """All three roles have signed, each signature standing: the draft stamp comes off."""
        return all(s.counts for s in self.signoff)


def revision_label(index: int, scheme: str = "letters") -> str:
    """The record's revision label: A, B, … Z, AA, AB … for letters; 0, 1, 2 … for numbers.

    >>> revision_label(0), revision_label(25), revision_label(26), revision_label(2, "numbers")
    ('A', 'Z', 'AA', '2')
    """
    if scheme == "numbers":
        return str(index)
    out = ""
    n = index + 1
    while n:
        n, r = divmod(n - 1, 26)
        out = chr(ord("A") + r) + out
    return out
