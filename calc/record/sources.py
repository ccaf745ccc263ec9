"""What the record cites: the references in order of first use, the fixed citations, the disclaimer and cautions."""

from __future__ import annotations

import re

from calc import tables
from calc.record.parts import Reference
from calc.record.text import split_detail
from calc.transient.sources import WAVE_REF

DISCLAIMER = ("This record is the output of a design aid. It does not replace review, design and approval "
              "under the codes and standards that apply where the works are built, by a licensed or "
              "chartered professional engineer competent in the field.")

#: Cautions printed on every record, where steady-state hydraulics stops and harm can start; each is
#: left out when a finding of the checks (by code) already says it for this line.
CAUTIONS = (
    (("general-surge",), "Steady flow only. Closing a valve, a pump trip or a turbine load rejection raises "
     "pressure surges (water hammer) that can burst a line or collapse it by vacuum; they are not covered by "
     "this calculation beyond the surge findings shown, and a final design needs a transient analysis."),
    (("general-ratings", "general-anchorage"), "Pipe, joint and fitting pressure ratings, thrust restraint and "
     "anchorage, supports, air valves and drains, and the structural design of the line need their own checks."),
    (("pressure-subatmospheric", "pressure-suction-vacuum", "transient-subatmospheric"),
     "Where the hydraulic grade line comes near or below the pipe, the line runs under vacuum: air is drawn "
     "in at joints and air valves, the water column can separate, and plastic pipe can collapse."),
    (("general-confined-space",), "Water under pressure is dangerous: fill, flush and test lines slowly, keep "
     "people clear of pressure tests, and isolate and drain before work on a line or a machine."),
    ((), "Roughness, fitting losses and machine curves are typical published or typed values; pipe ages and "
     "fouls, and machines wear. Check the margins against the supplier's data."),
)

GRAVITY_REF = ("Standard acceleration of gravity g = 9.80665 m/s², adopted by the 3rd CGPM (1901); "
               "ISO 80000-3:2019.")
HOOPER_REF = ("Hooper, W. B. (1981). The two-K method predicts head losses in pipe fittings. "
              "Chemical Engineering 88(17): 96-100.")
DARBY_REF = ("Darby, R. (2001). Chemical Engineering Fluid Mechanics, 2nd edition. Marcel Dekker, "
             "New York: 3-K method for valves and fittings.")
DARCY_REF = ("Moody, L. F. (1944). Friction factors for pipe flow. Transactions of the ASME 66(8), 671-684: the "
             "Darcy-Weisbach equation for friction loss in full pipe flow, h_f = f (L/D) V²/2g.")
# Korteweg's wave speed and Joukowsky's rise as the transient textbook gives them (one reference for both).
JOUKOWSKY_REF = KORTEWEG_REF = WAVE_REF


class References:
    """Numbered references in order of first use; a citation cited twice keeps its number, and two parts
    of one publication (author and year, then ': ' and what was taken from it) share one number, the
    parts listed after the publication."""

    def __init__(self):
        self._by_text: dict[str, Reference] = {}
        self._parts: dict[str, list[str]] = {}

    @staticmethod
    def _publication(citation: str) -> tuple[str, str]:
        """(the publication, the part of it used) for an author-year citation 'Author (1993). Title: part';
        (the citation, '') for any other.

        >>> References._publication("Wylie, E. B. (1993). Fluid Transients. Prentice Hall: the wave speed.")
        ('Wylie, E. B. (1993). Fluid Transients. Prentice Hall', 'the wave speed.')
        """
        head, sep, part = citation.partition(": ")
        if sep and re.match(r"[^(]{2,80}\((1[89]|20)\d\d\)\.", head) and part:
            return head, part
        return citation, ""

    def cite(self, citation: str, used_for: str = "") -> str:
        """'[n]' for a publication; a rule of the trade is no publication, and is said as such in place."""
        citation = citation.strip()
        if not citation:
            return ""
        if citation.lower().startswith("common practice"):
            return "(common practice)"
        key, part = self._publication(citation)
        ref = self._by_text.get(key)
        if ref is None:
            ref = self._by_text[key] = Reference(len(self._by_text) + 1, citation)
            self._parts[key] = [part]
        elif part and part not in self._parts[key]:
            self._parts[key].append(part)
            ref.citation = key + ": " + "; ".join(p.rstrip(".") for p in self._parts[key]) + "."
        if used_for and used_for not in ref.used_for:
            ref.used_for.append(used_for)
        return f"[{ref.number}]"

    def cite_source(self, source: str, used_for: str = "") -> tuple[str, str]:
        """Cite a table's source string ('citation [detail]', several joined by '; '); returns (refs, detail)."""
        citation, detail = split_detail(source)
        parts = [p for p in re.split(r"(?<=\.);\s+", citation) if p.strip()]
        return "".join(self.cite(p, used_for) for p in parts), detail

    @property
    def items(self) -> list[Reference]:
        return sorted(self._by_text.values(), key=lambda r: r.number)


def method_citation(model: str) -> str:
    """The citation of the 2-K or 3-K method: as the fitting table gives it, so one source keeps one number."""
    for ft in tables.fittings():
        if ft.model == model:
            return split_detail(ft.source)[0]
    return HOOPER_REF if model == "2k" else DARBY_REF


def looks_published(source: str) -> bool:
    """Whether a finding's source names a publication (a year or a standard), not a rule of thumb.

    >>> looks_published("Bergant, Simpson and Tijsseling (2006)"), looks_published("steady grade line")
    (True, False)
    """
    if not source or source.lower().startswith("common practice"):
        return False
    return bool(re.search(r"\b(1[89]\d\d|20\d\d)\b|\b(ISO|EN|ANSI|AWWA|ASME|IAPWS|BS|DIN)\b", source))
