"""The record's method: the equations used, each with its symbols and its reference."""

from __future__ import annotations

from calc.model.elements import Pump, Turbine
from calc.record.context import Context
from calc.record.parts import Equation


def equations(c: Context) -> list[Equation]:
    els = c.line.elements
    fits = [ft for r in c.line.runs for ft in r.fittings]
    eq = [
        Equation("Energy balance (the operating point)", "E(Q) = H_start - H_end - Σ hᵢ(Q) = 0",
                 "H total head at an end [m]; hᵢ head taken from the flow by element i (negative for a pump). "
                 "Every root is found: E is scanned on a logarithmic grid of flows for sign changes, and each "
                 "bracket is closed with Brent's method."),
        Equation("Total head at an end", "H = z + p/(ρ g) + V²/(2 g)",
                 "z elevation [m]; p gauge pressure [Pa]; the velocity head counts at a pressure point or jet, "
                 "not at a reservoir surface."),
        Equation("Flow area, velocity and velocity head", "A = π D²/4,  V = Q/A,  h_v = V²/(2 g)"),
        Equation("Reynolds number", "Re = V D / ν,  ν = μ/ρ"),
        Equation("Friction loss (Darcy-Weisbach)", "h_f = f (L/D) V²/(2 g)", "", c.ref_darcy),
        Equation(f"Friction factor, turbulent flow ({c.method.name})", c.friction_equation(),
                 "ε absolute roughness [m]; valid for Re above 4000", c.ref_method),
        Equation("Friction factor, laminar flow and the transition",
                 "f = 64/Re (Re < 2000);  f = (1 - w) 64/Re + w f_t, w = (Re - 2000)/2000 (2000 ≤ Re < 4000)",
                 "the transition band has no reliable correlation: the blend is flagged with its bounds"),
        Equation("Fitting and valve losses", "h_m = n K V²/(2 g)", "n count; K loss coefficient on this velocity"),
    ]
    two = [ft for ft in fits if ft.model == "2k"]
    three = [ft for ft in fits if ft.model == "3k"]
    if two:
        eq.append(Equation("2-K method (Hooper 1981)", "K = K₁/Re + K∞ (1 + 1/D_in)",
                           "D_in inner diameter in inches", "".join(dict.fromkeys(c.fitting_ref(ft)[0] for ft in two))))
    if three:
        eq.append(Equation("3-K method (Darby 2001)", "K = K₁/Re + K_i (1 + K_d / D_n^0.3)",
                           "D_n nominal size in inches (from the bore along Schedule 40 steel)",
                           "".join(dict.fromkeys(c.fitting_ref(ft)[0] for ft in three))))
    if any(isinstance(e, Turbine) for e in els):
        eq.append(Equation("Turbine", "H_t = P/(η ρ g Q) (set power);  P_h = ρ g Q H_t;  P = η P_h",
                           "H_t head taken [m]; P shaft power [W]; η efficiency"))
        eq.append(Equation("Largest power the line can give a turbine", "P_max = max over Q of η ρ g Q H_a(Q)",
                           "H_a(Q) head left for the turbine after the line's losses"))
    if any(isinstance(e, Pump) for e in els):
        eq.append(Equation("Pump", "H_p(Q) = n² H₁(Q/n);  P_h = ρ g Q H_p;  P = P_h/η",
                           "H₁ the curve through the typed points: between two of them the shape-preserving cubic "
                           "(PCHIP), beyond them a straight line with the end slope; n speed ratio"))
    eq.append(Equation("Grade lines", "EGL = H along the line;  HGL = EGL - V²/(2 g);  pressure head = HGL - z"))
    return eq
