"""What every section of one record shares: the analysis, the display units, the references in order of first use."""

from __future__ import annotations

import functools

from calc import friction
from calc.record.sources import DARCY_REF, GRAVITY_REF, References, method_citation
from calc.record.text import shown


class Context:
    """The analysis being recorded, its display units and its references, so that every section cites alike."""

    def __init__(self, analysis, system: str):
        self.a = analysis
        self.doc = analysis.doc
        self.line = analysis.line
        self.sol = analysis.solution
        self.system = system
        self.refs = References()
        self._said: dict[str, str] = {}
        self.liquid = self.line.liquid
        m = friction.METHODS[self.line.method]
        self.method = m
        # Order of first use: the method and the properties are named in the assumptions.
        self.ref_method = self.refs.cite(m.reference, "friction factor")
        self.ref_darcy = self.refs.cite(DARCY_REF, "friction loss")
        self.ref_liquid = (self.refs.cite(self.liquid.source, "liquid properties")
                           if self.liquid.source != "given by the user" else "")
        self.ref_g = self.refs.cite(GRAVITY_REF, "gravity")
        self.design = self.sol.design

    @functools.cached_property
    def screening(self) -> list[dict]:
        """Each run's surge screening at the design point (calc.review.surge.run_screening), worked once for
        the record's screening table and the findings that refer to it; empty without a design point."""
        from calc.model.settings import CheckSettings
        from calc.review.surge import run_screening

        if self.design is None:
            return []
        return run_screening(self.line, self.design, self.a.check_settings or CheckSettings())

    def fitting_ref(self, ft) -> tuple[str, str]:
        """References and row detail for a fitting: its table's source, or the method's author when typed."""
        if not ft.source.startswith("typed"):
            return self.refs.cite_source(ft.source, "fitting losses")
        if ft.model in ("2k", "3k"):
            return self.refs.cite(method_citation(ft.model), f"{ft.model[0]}-K fittings"), ""
        return "", ""

    def node_words(self, node, which: str) -> str:
        z = shown(node.elevation, "length", self.system)
        if node.kind == "reservoir":
            p = f", {shown(node.pressure, 'pressure', self.system)} (gauge) on the surface" if node.pressure else ""
            return f"a reservoir with its water surface at {z}{p}"
        if node.kind == "pressure":
            return f"a point at {shown(node.pressure, 'pressure', self.system)} (gauge), elevation {z}"
        return f"a free jet at elevation {z}"

    def friction_equation(self) -> str:
        return {
            "colebrook": "1/√f = -2 log₁₀( (ε/D)/3.7 + 2.51/(Re √f) )",
            "swamee_jain_1976": "f = 0.25 / [ log₁₀( (ε/D)/3.7 + 5.74/Re^0.9 ) ]²",
            "haaland_1983": "1/√f = -1.8 log₁₀[ ((ε/D)/3.7)^1.11 + 6.9/Re ]",
            "churchill_1977": "f = 8 [ (8/Re)^12 + (A + B)^(-3/2) ]^(1/12), A = [2.457 ln(1/((7/Re)^0.9 + 0.27 ε/D))]^16, B = (37530/Re)^16",
            "serghides_1984": "A = -2 log₁₀((ε/D)/3.7 + 12/Re), B = -2 log₁₀((ε/D)/3.7 + 2.51A/Re), C = -2 log₁₀((ε/D)/3.7 + 2.51B/Re), f = [A - (B-A)²/(C-2B+A)]^-2",
        }[self.line.method]

    def once(self, text: str, where: str) -> str:
        """``text`` the first time the record gives it; after that 'as for <where it was first given>', so
        that a note repeated for runs of one material is printed once."""
        if not text:
            return ""
        first = self._said.setdefault(text, where)
        return text if first == where else f"as for {first}"
