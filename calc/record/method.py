"""The record's method: the equations used, each with its symbols and its reference."""

from __future__ import annotations

from calc.model.elements import Pump
from calc.record.context import Context
from calc.record.parts import Equation


def equations(c: Context) -> list[Equation]:
    """The equations that tie the working together. Those of a single step (flow area, Reynolds number,
    Darcy-Weisbach, the friction factor, fittings, machines) are printed where they are used, at the head
    of their column or step, once."""
    els = c.line.elements
    eq = [
        Equation("Energy balance (the operating point)", "E(Q) = H_start - H_end - Σ hᵢ(Q) = 0",
                 "H total head at an end [m]; hᵢ head taken from the flow by element i (negative for a pump). "
                 "Every root is found: E is scanned on a logarithmic grid of flows for sign changes, and each "
                 "bracket is closed with Brent's method."),
        Equation("Total head at an end", "H = z + p/(ρ g) + V²/(2 g)",
                 "the velocity head counts at a pressure point or jet, not at a reservoir surface"),
        Equation("Friction factor, laminar flow and the transition",
                 "f = 64/Re (Re < 2000);  f = (1 - w) 64/Re + w f_t, w = (Re - 2000)/2000 (2000 ≤ Re < 4000)",
                 f"f_t the turbulent factor by {c.method.name} at the same Re and ε/D; the transition band has no "
                 "reliable correlation, so the blend is flagged with its bounds"),
    ]
    if any(isinstance(e, Pump) for e in els):
        eq.append(Equation("Pump", "H_p(Q) = n² H₁(Q/n);  P_h = ρ g Q H_p;  P = P_h/η",
                           "H₁ the curve through the typed points: between two of them the shape-preserving cubic "
                           "(PCHIP), beyond them a straight line with the end slope; n speed ratio"))
    eq.append(Equation("Grade lines", "EGL = H along the line;  HGL = EGL - V²/(2 g);  pressure head = HGL - z"))
    return eq
