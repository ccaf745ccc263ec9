"""The record's opening sections: what the calculation covers, and the assumptions it rests on."""

from __future__ import annotations

from calc.model.elements import PipeRun, Pump, Turbine
from calc.record.context import Context
from calc.record.parts import Assumption
from calc.record.text import shown, sub


def scope(c: Context) -> list[str]:
    els = c.line.elements
    counts = []
    for kind, word in (("pipe", "pipe run"), ("valve", "valve"), ("pump", "pump"), ("turbine", "turbine")):
        n = sum(1 for e in els if e.kind == kind)
        if n:
            counts.append(f"{n} {word}{'s' if n > 1 else ''}")
    length = sum(e.L for e in c.line.runs)
    liquid = c.liquid.name + (f" at {c.liquid.T - 273.15:.4g} °C" if c.liquid.T else "")
    rest = ("structural design of pipes, anchors, thrust blocks and supports; machine selection and mechanical, "
            "electrical and control design.")
    if any(t.summary is not None for t in (getattr(c.a, "transients", None) or [])):
        covered_not = ("Transient pressures are analysed by the method of characteristics for the events listed with "
                       "the transient results, and for no others. Not covered: " + rest)
    else:
        covered_not = "Not covered: transient pressures (surge, water hammer) beyond any surge finding shown; " + rest
    out = [
        f"Steady flow of {liquid} in a series line of {', '.join(counts)} "
        f"({shown(length, 'length', c.system)} of pipe in all), from "
        f"{c.node_words(c.line.start, 'start')} to {c.node_words(c.line.end, 'end')}.",
        "The record finds every operating point of the line with its machines, works the design point "
        "step by step, traces the energy and hydraulic grade lines along the chainage, and reports "
        "the checks made on the result.",
        covered_not,
    ]
    return out


def assumptions(c: Context) -> list[Assumption]:
    m = c.method
    if c.line.method == "colebrook":
        why = ("the basis of the Moody chart, for turbulent flow in commercial pipe, solved to machine precision "
               "rather than approximated")
    else:
        why = ("its explicit form chosen on the sheet (for comparison), departing slightly from Colebrook's "
               "equation, the usual reference")
    liquid = c.liquid
    if liquid.source == "given by the user":
        props = (f"Liquid properties ({liquid.name}) as given on the sheet, constant along the line.")
    else:
        props = (f"Water properties at {liquid.T - 273.15:.4g} °C from the IAPWS formulations {c.ref_liquid}, "
                 "at atmospheric pressure and constant along the line (the effect of pressure on density and "
                 "viscosity is far below the uncertainty of the roughness).")
    out = [
        Assumption("Steady, incompressible, isothermal flow; every pipe runs full (no free surface, "
                   "no trapped air) and the water levels and pressures at the ends stay as given."),
        Assumption(f"Friction loss by the Darcy-Weisbach equation {c.ref_darcy}, the friction factor by {m.name} "
                   f"{c.ref_method} ({why}); laminar flow and the transition as in section 3."),
        Assumption(f"{props} Standard gravity g = 9.80665 m/s² {c.ref_g}."),
        Assumption("Roughness from the material table (new pipe, or aged where a run says so) unless typed; "
                   "pipe roughens with age and deposits, which raises the losses.", verify=True),
        Assumption("Fitting losses as loss coefficients K on the velocity head of the run they sit on. "
                   "On the grade lines, entrance losses fall at the start of a run, exit losses at its end, "
                   "and all other losses are spread evenly along it."),
        Assumption("Pressures are gauge, relative to the site's atmospheric pressure, unless marked absolute."),
    ]
    implied = [(i, e, ft) for i, e in enumerate(c.line.elements) if isinstance(e, PipeRun)
               for ft in e.fittings if ft.implied]
    if implied:
        items = "; ".join(f"{ft.name} on {e.label or f'element {i + 1}'} (K = {sub(ft.K(1e5, e.D))})"
                          for i, e, ft in implied)
        out.append(Assumption("Losses the physics always has are counted where no fitting was typed for them: "
                              f"{items}. A typed entrance, exit or conical reducer fitting replaces each."))
    if c.line.end.free_outlet is not None:
        out.append(Assumption(
            f"The last run ends at {shown(c.line.end.free_outlet, 'length', c.system)}, above the receiving "
            f"water surface at {shown(c.line.end.elevation, 'length', c.system)}: it discharges freely at the "
            "outlet, at atmospheric pressure (or the tank's), so the fall below the outlet does no work for the line."))
    if any(isinstance(e, (Pump, Turbine)) and e.mode == "curve" for e in c.line.elements):
        out.append(Assumption("Machine curves pass through every typed point, with a shape-preserving cubic between "
                              "them; beyond the typed flows they are carried on straight and flagged, and more than "
                              "20 % beyond, an operating point is not taken as a result.", verify=True))
    if any(isinstance(e, Pump) and e.speed_ratio != 1.0 for e in c.line.elements):
        out.append(Assumption("A pump at another speed follows the affinity laws: Q in proportion to "
                              "speed, head to its square.", verify=True))
    if any(isinstance(e, Turbine) for e in c.line.elements):
        out.append(Assumption("Turbine efficiency is taken constant at the typed value over the flows "
                              "considered; a real machine's efficiency falls away from its best point.",
                              verify=True))
    if any(e.kind == "jet" for e in (c.line.start, c.line.end)):
        out.append(Assumption("The free jet leaves at atmospheric pressure with the velocity of its "
                              "nozzle (or of the last run when no nozzle is given)."))
    return out
