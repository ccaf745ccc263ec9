"""The record's worked steps: each equation with the design point's numbers substituted, element by element."""

from __future__ import annotations

import math

from calc import friction, tables
from calc.model import valve_law
from calc.model.elements import PipeRun, Pump, Turbine, Valve
from calc.model.settings import SRC_NPSH
from calc.record.context import Context
from calc.record.inputs import fitting_cells
from calc.record.parts import Step, StepGroup, Table
from calc.record.sources import JOUKOWSKY_REF, KORTEWEG_REF
from calc.record.text import num, paren, shown, si, sub
from calc.review.machines import impulse_duty, npsh_available
from calc.water import G


def steps_point(c: Context) -> str:
    if c.design is None:
        return ""
    return shown(c.design["Q"], "flow", c.system)


def steps(c: Context) -> list[StepGroup]:
    lq = c.liquid
    g_ref = c.ref_g
    nu = lq.mu / lq.rho
    groups = [StepGroup("Liquid", "liquid", [
        Step("ρ", "density", "ρ", "", num(lq.rho), "kg/m³", lq.rho, c.ref_liquid),
        Step("μ", "dynamic viscosity", "μ", "", num(lq.mu), "Pa·s", lq.mu, c.ref_liquid),
        Step("ν", "kinematic viscosity", "ν = μ/ρ", f"= {sub(lq.mu)} / {sub(lq.rho)}", num(nu), "m²/s", nu),
        Step("g", "gravity", "g", "", "9.80665", "m/s²", G, g_ref),
    ])]
    p = c.design
    if p is None:
        return groups
    Q = p["Q"]
    rho = lq.rho
    groups.append(_node_steps(c, "start", c.line.start, Q, p["head_start"]))
    for el, d in zip(c.line.elements, p["elements"]):
        title = f"Element {d['index'] + 1}: {el.kind} «{el.label}»" if el.label else f"Element {d['index'] + 1}: {el.kind}"
        if isinstance(el, PipeRun):
            groups.append(_pipe_steps(c, title, el, d, Q, nu))
        elif isinstance(el, Valve):
            groups.append(_valve_steps(c, title, el, d, Q))
        elif isinstance(el, Turbine):
            groups.append(_turbine_steps(c, title, el, d, Q, rho))
        elif isinstance(el, Pump):
            groups.append(_pump_steps(c, title, el, d, Q, rho))
    groups.append(_node_steps(c, "end", c.line.end, Q, p["head_end"]))
    impulse = impulse_duty(c.line, c.sol.static_head, p)
    if impulse is not None:
        H, z = impulse["head"], c.line.end.elevation
        groups.append(StepGroup("Impulse turbine driven by the jet", "impulse", [
            Step("H_n", "net head at the nozzle (the total head the jet is made from)", "H_n = H_end − z_jet",
                 f"= {sub(p['head_end'])} − {sub(z)}", num(H), "m", H),
            Step("P_h", "hydraulic power", "P_h = ρ g Q H_n", f"= {sub(rho)} × 9.80665 × {sub(Q)} × {sub(H)}",
                 num(impulse["power_hydraulic"]), "W", impulse["power_hydraulic"]),
            Step("P", "shaft power", "P = η P_h", f"= {sub(impulse['efficiency'])} × {sub(impulse['power_hydraulic'])}",
                 num(impulse["power_shaft"]), "W", impulse["power_shaft"]),
        ], ["Net head and efficiency as IEC 60041:1991 (field acceptance tests of hydraulic turbines) defines them for an impulse turbine: the head at the nozzle "
            "inlet above the jet's centre, the nozzle's own loss inside the turbine's efficiency."]))
    total = sum(d["head_change"] for d in p["elements"])
    E = p["head_start"] - p["head_end"] - total
    groups.append(StepGroup("Energy balance at the operating point", "balance", [
        Step("Σh", "head taken by all elements", "Σ hᵢ",
             "= " + " + ".join(paren(d["head_change"]) for d in p["elements"]), num(total), "m", total),
        Step("E", "energy balance residual", "E = H_start - H_end - Σ hᵢ",
             f"= {sub(p['head_start'])} - {sub(p['head_end'])} - {paren(total)}", num(E, 3), "m", E),
    ], ["A residual this small (round-off against heads of this size) confirms the operating point."]))
    surge = _surge_steps(c, p)
    if surge is not None:
        groups.append(surge)
    return groups


_C1 = {  # the restraint factor's formula by restraint, thin and thick wall (calc.transient.wave.restraint_factor)
    ("anchored", False): "c₁ = 1 − ν²", ("expansion_joints", False): "c₁ = 1", ("anchored_upstream", False): "c₁ = 1 − ν/2",
    ("anchored", True): "c₁ = 2 (e/D)(1 + ν) + (1 − ν²)/(1 + e/D)",
    ("expansion_joints", True): "c₁ = 2 (e/D)(1 + ν) + 1/(1 + e/D)",
    ("anchored_upstream", True): "c₁ = 2 (e/D)(1 + ν) + (1 − ν/2)/(1 + e/D)",
}


def _surge_steps(c: Context, p: dict) -> StepGroup | None:
    """Each run's wave speed (Korteweg, with its restraint factor) and Joukowsky's rise for a sudden stop of
    its flow, and the pipeline period: the numbers the surge findings and the transient grid rest on."""
    from calc.transient.wave import wave_speed_detail

    steps, travel, notes, rows = [], 0.0, [], []
    r_k, r_j = c.refs.cite(KORTEWEG_REF, "wave speed"), c.refs.cite(JOUKOWSKY_REF, "surge")
    for i, (el, d) in enumerate(zip(c.line.elements, p["elements"])):
        if not isinstance(el, PipeRun):
            continue
        w = wave_speed_detail(c.line, el)
        name = el.label or f"element {i + 1}"
        if w["a"] is None:
            notes.append(f"{name}: no wave speed: {w['missing']} not given.")
            continue
        a = w["a"]
        form = "" if w["form"] == "typed" else _C1[(w["restraint"], w["form"] == "thick-wall")]
        if not form:
            steps.append(Step("a", f"{name}: wave speed (typed for the run)", "a", "", num(a), "m/s", a))
        else:
            eD = w["e"] / w["D"]
            if w["form"] == "thick-wall":
                subst = f"e/D = {sub(w['e'])} / {sub(w['D'])} = {sub(eD)}, ν = {sub(w['nu'])}"
            else:
                subst = f"ν = {sub(w['nu'])} (D/e = {sub(w['D_over_e'])}: thin wall)"
            steps.append(Step("c₁", f"{name}: restraint factor ({w['restraint'].replace('_', ' ')})", form, subst,
                              num(w["c1"]), "–", w["c1"]))
            steps.append(Step("a", f"{name}: wave speed (Korteweg)", "a = √(K/ρ) / √(1 + c₁ K D / (E e))",
                              f"= √({sub(w['K'])}/{sub(w['rho'])}) / √(1 + {sub(w['c1'])} × {sub(w['K'])} × "
                              f"{sub(w['D'])} / ({sub(w['E'])} × {sub(w['e'])}))", num(a), "m/s", a, r_k))
        dH = a * abs(d["V"]) / G
        rows.append({"number": i + 1, "label": el.label, "w": w, "a": a, "V": abs(d["V"]), "dH": dH, "L": el.L,
                     "c1_form": form})
        steps.append(Step("ΔH", f"{name}: rise for a sudden stop of its flow (Joukowsky)", "ΔH = a V / g",
                          f"= {sub(a)} × {sub(abs(d['V']))} / 9.80665", num(dH), "m", dH, r_j))
        travel += el.L / a
    if not steps:
        return None
    T = 2.0 * travel
    steps.append(Step("T", "pipeline period of the whole line", "T = 2 Σ L/a", f"= 2 × {sub(travel)}", num(T), "s", T))
    notes.append("A stop faster than T gives the full rise at the stop; a slower one, less (the surge findings and, "
                 "for the cases with events, the transient analysis).")
    return StepGroup("Wave speed and surge", "surge", steps, notes, {"runs": rows, "T": T, "travel": travel})


def _node_steps(c: Context, which: str, node, Q: float, H: float) -> StepGroup:
    rho = c.liquid.rho
    title = "Start of the line" if which == "start" else "End of the line"
    sym = "H_start" if which == "start" else "H_end"
    steps = []
    if node.kind == "reservoir":
        if node.pressure:
            steps.append(Step(sym, "total head at the water surface", "H = z + p/(ρ g)",
                              f"= {sub(node.elevation)} + {paren(node.pressure)} / ({sub(rho)} × 9.80665)",
                              num(H), "m", H))
        else:
            steps.append(Step(sym, "total head at the water surface", "H = z", f"= {sub(node.elevation)}",
                              num(H), "m", H))
    else:
        hv = node.velocity_head(Q)
        D = node.nozzle_diameter if (node.kind == "jet" and node.nozzle_diameter) else node.D_adjacent
        A = math.pi * D * D / 4.0
        V = Q / A
        steps.append(Step("V", "velocity " + ("of the jet" if node.kind == "jet" else "at the end point"),
                          "V = Q / (π D²/4)", f"= {sub(Q)} / (π × {sub(D)}² / 4)", num(V), "m/s", V))
        if node.kind == "jet" and node.velocity_coefficient != 1.0:
            cv = node.velocity_coefficient
            steps.append(Step(sym, "total head the nozzle needs (velocity coefficient Cv)", "H = z + V²/(2 g Cv²)",
                              f"= {sub(node.elevation)} + {sub(V)}² / (2 × 9.80665 × {sub(cv)}²)", num(H), "m", H))
        elif node.kind == "jet":
            steps.append(Step(sym, "total head of the jet", "H = z + V²/(2 g)",
                              f"= {sub(node.elevation)} + {sub(V)}² / (2 × 9.80665)", num(H), "m", H))
        else:
            steps.append(Step(sym, "total head at the point", "H = z + p/(ρ g) + V²/(2 g)",
                              f"= {sub(node.elevation)} + {paren(node.pressure)} / ({sub(rho)} × 9.80665) + "
                              f"{sub(V)}² / (2 × 9.80665)", num(H), "m", H))
        del hv
    return StepGroup(title, which, steps)


def _friction_steps(c: Context, d: dict, Re: float, eD: float) -> list[Step]:
    f = d["f"]
    ref = c.ref_method
    method = c.line.method
    if d["regime"] == "laminar" and method != "churchill_1977":
        return [Step("f", "friction factor (laminar)", "f = 64/Re", f"= 64 / {sub(Re)}", num(f), "–", f)]
    if d["regime"] == "transitional" and method != "churchill_1977":
        ft = d["f_bounds"][1]
        w = (Re - friction.RE_LAMINAR) / (friction.RE_TURBULENT - friction.RE_LAMINAR)
        return [
            Step("f_t", f"turbulent factor ({c.method.name})", c.friction_equation(), "at this Re and ε/D",
                 num(ft), "–", ft, ref),
            Step("w", "blend weight", "w = (Re - 2000)/2000", f"= ({sub(Re)} - 2000) / 2000", num(w), "–", w),
            Step("f", "friction factor (transition, uncertain)", "f = (1 - w) 64/Re + w f_t",
                 f"= (1 - {sub(w)}) × 64/{sub(Re)} + {sub(w)} × {sub(ft)}", num(f), "–", f),
        ]
    if method == "colebrook":
        lhs = 1.0 / math.sqrt(f)
        rhs = -2.0 * math.log10(eD / 3.7 + 2.51 / (Re * math.sqrt(f)))
        return [
            Step("f", "friction factor (Colebrook, solved)", "1/√f = -2 log₁₀( (ε/D)/3.7 + 2.51/(Re √f) )",
                 f"1/√f = -2 log₁₀( {sub(eD)}/3.7 + 2.51/({sub(Re)} √f) )", num(f), "–", f, ref,
                 also=f"check at this f: 1/√{sub(f)} = {si(lhs)}; right side = {si(rhs)}"),
        ]
    if method == "swamee_jain_1976":
        s = f"= 0.25 / [log₁₀({sub(eD)}/3.7 + 5.74/{sub(Re)}^0.9)]²"
    elif method == "haaland_1983":
        s = f"1/√f = -1.8 log₁₀[({sub(eD)}/3.7)^1.11 + 6.9/{sub(Re)}]"
    elif method == "churchill_1977":
        s = f"with Re = {sub(Re)}, ε/D = {sub(eD)}"
    else:
        s = f"with Re = {sub(Re)}, ε/D = {sub(eD)}"
    return [Step("f", f"friction factor ({c.method.name})", c.friction_equation(), s, num(f), "–", f, ref)]


def _pipe_steps(c: Context, title: str, el: PipeRun, d: dict, Q: float, nu: float) -> StepGroup:
    D, L, A, V, hv, Re, eD = el.D, el.L, d["A"], d["V"], d["velocity_head"], d["Re"], d["eD"]
    steps = [
        Step("A", "flow area", "A = π D²/4", f"= π × {sub(D)}² / 4", num(A), "m²", A),
        Step("V", "mean velocity", "V = Q/A", f"= {sub(Q)} / {sub(A)}", num(V), "m/s", V),
        Step("h_v", "velocity head", "h_v = V²/(2 g)", f"= {sub(V)}² / (2 × 9.80665)", num(hv), "m", hv),
        Step("Re", "Reynolds number", "Re = V D / ν", f"= {sub(V)} × {sub(D)} / {sub(nu)}", num(Re), "–", Re),
        Step("ε/D", "relative roughness", "ε/D", f"= {sub(el.eps)} / {sub(D)}", num(eD), "–", eD),
    ]
    friction_steps = _friction_steps(c, d, Re, eD)
    steps += friction_steps
    steps.append(Step("h_f", "friction loss", "h_f = f (L/D) h_v",
                      f"= {sub(d['f'])} × ({sub(L)} / {sub(D)}) × {sub(hv)}", num(d["h_friction"]), "m",
                      d["h_friction"], c.ref_darcy))
    if any(ft.model == "3k" for ft in el.fittings):
        b = tables.darby_nominal_bracket(D)
        steps.append(Step("D_n", "nominal size for the 3-K constants: the Schedule 40 steel size of this bore",
                          "D_n = N₀ + (N₁ − N₀)(D − D₀)/(D₁ − D₀)",
                          f"= {sub(b['nps0'])} + ({sub(b['nps1'])} − {sub(b['nps0'])}) × ({sub(D)} − {sub(b['D0'])}) / "
                          f"({sub(b['D1'])} − {sub(b['D0'])})", num(b["nps"]), "in", b["nps"],
                          c.refs.cite(tables.S40_SOURCE, "3-K nominal size"),
                          also=f"between NPS {sub(b['nps0'])} (bore {sub(b['D0'] * 1000)} mm) and NPS {sub(b['nps1'])} "
                               f"(bore {sub(b['D1'] * 1000)} mm)"))
    fittings = []
    for ft, x in zip(el.fittings, d["fittings"]):
        name = ft.name
        typed, consts, source = fitting_cells(c, ft, f"run {d['index'] + 1}")
        fittings.append({"name": name, "n": ft.count, "K": x["K"], "h": x["h"], "model": ft.model,
                         "ref": c.fitting_ref(ft)[0], "working": "", "typed": typed, "consts": consts,
                         "source": source})
        if ft.model == "2k":
            K1, Kinf = ft.params["K1"], ft.params["Kinf"]
            D_in = D / tables.INCH
            steps.append(Step("K", f"{name} (2-K)", "K = K₁/Re + K∞ (1 + 1/D_in)",
                              f"= {sub(K1)}/{sub(Re)} + {sub(Kinf)} × (1 + 1/{sub(D_in)})", num(x["K"]), "–",
                              x["K"], c.fitting_ref(ft)[0]))
            fittings[-1]["working"] = steps[-1].substituted
        elif ft.model == "3k":
            K1, Ki, Kd = ft.params["K1"], ft.params["Ki"], ft.params["Kd"]
            Dn = tables.darby_nominal_size(D) / tables.INCH
            steps.append(Step("K", f"{name} (3-K)", "K = K₁/Re + K_i (1 + K_d/D_n^0.3)",
                              f"= {sub(K1)}/{sub(Re)} + {sub(Ki)} × (1 + {sub(Kd)}/{sub(Dn)}^0.3)", num(x["K"]), "–",
                              x["K"], c.fitting_ref(ft)[0]))
            fittings[-1]["working"] = steps[-1].substituted
        steps.append(Step("h_m", f"{name}" + (f" × {ft.count}" if ft.count > 1 else ""), "h_m = n K h_v",
                          f"= {ft.count} × {sub(x['K'])} × {sub(hv)}", num(x["h"]), "m", x["h"],
                          c.fitting_ref(ft)[0] if ft.model == "k" else ""))
    total = d["head_change"]
    parts = [d["h_friction"]] + [x["h"] for x in d["fittings"]]
    steps.append(Step("h", "head taken by the run", "h = h_f + Σ h_m",
                      "= " + " + ".join(sub(v) for v in parts), num(total), "m", total))
    notes = []
    if d.get("friction_note"):
        notes.append(d["friction_note"])
    dn = next((s for s in steps if s.symbol == "D_n"), None)
    row = {"number": d["index"] + 1, "label": el.label, "L": L, "D": D, "A": A, "V": V, "hv": hv, "Re": Re, "eD": eD,
           "friction": friction_steps, "hf": d["h_friction"], "hm": sum(x["h"] for x in d["fittings"]), "h": total,
           "fittings": fittings, "Dn": dn}
    return StepGroup(title, "pipe", steps, notes, row)


def working(c: Context, groups: list[StepGroup]) -> list:
    """The working as the record prints it: each group's steps, except that the pipe runs are gathered into
    one table (a run a row, each column's equation at its head, the inputs it takes in the same row or the
    heading) and their fittings into another. Every figure is the one the run's own steps hold."""
    out: list = []
    runs = [g for g in groups if g.kind == "pipe" and g.row]
    for g in groups:
        if g.kind == "liquid":  # ρ, μ and g are printed with the inputs: only ν is worked here
            out.append(StepGroup(g.title, g.kind, [s for s in g.steps if s.substituted], g.notes))
        elif g.kind == "surge" and g.row:
            out.append(_surge_table(c, g))
        elif g.kind != "pipe" or not g.row:
            out.append(g)
        elif g is runs[0]:
            out += _runs_tables(c, runs)
    return out


def _surge_table(c: Context, g: StepGroup) -> Table:
    """Each run's wave speed (Korteweg) and Joukowsky's rise, a run a row, the inputs in the row."""
    lq = c.liquid
    rows = []
    for r in g.row["runs"]:
        w = r["w"]
        name = f"{r['number']}" + (f" {r['label']}" if r["label"] else "")
        if w["form"] == "typed":
            rows.append([name, "typed", "–", "–", "–", "–", "–", num(r["a"]), num(r["V"]), num(r["dH"]), num(r["L"] / r["a"])])
            continue
        kind = f"{w['restraint'].replace('_', ' ')}, {'thick' if w['form'] == 'thick-wall' else 'thin'} (D/e {num(w['D_over_e'], 3)})"
        rows.append([name, kind, num(w["D"]), num(w["e"]), num(w["E"]), num(w["nu"]), num(w["c1"]), num(r["a"]),
                     num(r["V"]), num(r["dH"]), num(r["L"] / r["a"])])
    forms = list(dict.fromkeys(f"{r['c1_form']} ({r['w']['restraint'].replace('_', ' ')}, "
                               f"{'thick' if r['w']['form'] == 'thick-wall' else 'thin'} wall)"
                               for r in g.row["runs"] if r["c1_form"]))
    ref = c.refs.cite(KORTEWEG_REF, "wave speed")
    note = (f"K = {num(lq.bulk_modulus)} Pa, ρ = {num(lq.rho)} kg/m³; restraint factor " + "; ".join(forms) +
            f"; a wall is thick below D/e = 25. Pipeline period T = 2 Σ L/a = 2 × {sub(g.row['travel'])} = "
            f"{num(g.row['T'])} s. " + " ".join(g.notes))
    return Table(["Run", "Restraint, wall", "D [m]", "e [m]", "E [Pa]", "ν", "c₁", "a [m/s]", "V [m/s]", "ΔH [m]",
                  "L/a [s]"], rows, f"Wave speed and surge: a = √(K/ρ) / √(1 + c₁ K D/(E e)), ΔH = a V/g {ref}",
                 ["l", "l"] + ["r"] * 9, note, css="surge-runs")


def _runs_tables(c: Context, runs: list[StepGroup]) -> list:
    Q = c.design["Q"]
    lq = c.liquid
    f_ref = c.ref_method
    head = ["Run", "L [m]", "D [m]", "A = πD²/4 [m²]", "V = Q/A [m/s]", "h_v = V²/2g [m]", "Re = VD/ν",
            "ε/D", f"f {f_ref}".strip(), f"h_f = f (L/D) h_v [m] {c.ref_darcy}".strip(), "h_m = Σ n K h_v [m]",
            "h = h_f + h_m [m]"]
    rows, notes, colebrook = [], [], []
    for g in runs:
        r = g.row
        fs = r["friction"]
        f_step = fs[-1]
        f_text = f_step.result
        if f_step.also:  # Colebrook: both sides at the root
            colebrook.append(f"{r['number']}: {f_step.also.removeprefix('check at this f: ')}")
        if len(fs) > 1 or "laminar" in f_step.name:
            f_text += " *"
            notes.append(f"Run {r['number']}: " + "; ".join(f"{s.symbol} = {s.result} ({s.name}: {s.equation})"
                                                               for s in fs) + ".")
        name = f"{r['number']}" + (f" {r['label']}" if r["label"] else "")
        rows.append([name, num(r["L"]), num(r["D"]), num(r["A"]), num(r["V"]), num(r["hv"]), num(r["Re"]),
                     num(r["eD"]), f_text, num(r["hf"]), num(r["hm"]), num(r["h"])])
    head_note = (f"Q = {num(Q)} m³/s, ν = μ/ρ = {num(lq.mu / lq.rho)} m²/s, g = 9.80665 m/s². f by "
                 f"{c.method.name}: {c.friction_equation()}")
    if colebrook:
        head_note += "; both sides at the f shown, run " + "; ".join(colebrook)
    head_note += "."
    if any("*" in row[8] for row in rows):
        notes.insert(0, "* outside fully turbulent flow:")
    out = [Table(head, rows, "Pipe runs", ["l"] + ["r"] * 11,
                 " ".join([head_note] + notes), css="runs")]
    frows, dn_notes = [], {}  # one D_n working for the runs of one bore
    for g in runs:
        r = g.row
        if r["Dn"] is not None:
            s = r["Dn"]
            dn_notes.setdefault(f"D_n {s.substituted} = {s.result} in ({s.also})", []).append(str(r["number"]))
        for ft in r["fittings"]:
            k = (f"{ft['working'].removeprefix('= ')} = {num(ft['K'])}" if ft["working"] else
                 ft["consts"].split(": ", 1)[-1])
            frows.append([str(r["number"]), ft["name"], ft["typed"], k, num(ft["h"]), ft["source"]])
    if frows:
        note = ""
        if dn_notes:
            s = next(g.row["Dn"] for g in runs if g.row["Dn"] is not None)
            note = (f"3-K: K = K₁/Re + K_i (1 + K_d/D_n^0.3), D_n {s.name.removeprefix('nominal size for the 3-K constants: ')}"
                    f" {s.ref}, D_n = N₀ + (N₁ − N₀)(D − D₀)/(D₁ − D₀): " +
                    "; ".join(f"run{'s' if len(ns) > 1 else ''} {', '.join(ns)}: {text}" for text, ns in dn_notes.items())
                    + ".")
        out.append(Table(["Run", "Fitting", "As typed", "K", "h_m = n K h_v [m]", "Source"], frows, "Fittings and losses "
                         "on each run's velocity head", ["l", "l", "l", "l", "r", "l"], note, css="run-fittings"))
    return out


def _valve_steps(c: Context, title: str, el: Valve, d: dict, Q: float) -> StepGroup:
    A = math.pi * el.D ** 2 / 4
    steps = [
        Step("V", "velocity in the valve bore", "V = Q / (π D²/4)", f"= {sub(Q)} / (π × {sub(el.D)}² / 4)",
             num(d["V"]), "m/s", d["V"]),
        Step("h_v", "velocity head", "h_v = V²/(2 g)", f"= {sub(d['V'])}² / (2 × 9.80665)",
             num(d["velocity_head"]), "m", d["velocity_head"])]
    notes = [f"Bore {sub(A)} m² ({el.D_source})."]
    setting = next((v for v in (c.a.cases[0].valve_settings if c.a.cases else []) if v.index == d["index"]), None)
    if el.valve_type == "control" and setting is None:
        phi = valve_law.phi(el.opening, el.characteristic, el.rangeability)
        law = "Φ = Φ0 + (1 − Φ0) h" if el.characteristic == "linear" else "Φ = R^(h − 1)"
        steps += [
            Step("Φ", f"relative flow coefficient at the opening ({el.characteristic.replace('_', ' ')})",
                 law.replace("h", "h_rel"), f"with h_rel = {sub(el.opening)}, R = {sub(el.rangeability)}", num(phi),
                 "–", phi),
            Step("Kv", "flow coefficient at the opening", "Kv = Φ Kvs", f"= {sub(phi)} × {sub(el.Kvs)}",
                 num(phi * el.Kvs), "m³/h", phi * el.Kvs),
            Step("K", "loss coefficient from Kv", "K = (2 Δp₀/ρ₀)(3600 A/Kv)²",
                 f"= 200 × (3600 × {sub(A)} / {sub(phi * el.Kvs)})²", num(el.K), "–", el.K)]
        notes.append("Kv: m³/h of water (ρ₀ = 1000 kg/m³) at Δp₀ = 1 bar (IEC 60534-1); the inherent characteristic "
                     "of IEC 60534-2-4:2009.")
    elif setting is not None:
        goal = "the target flow" if setting.setting == "flow" else "the set pressure downstream"
        steps.append(Step("K", f"loss coefficient that meets {goal}", "K = h / h_v",
                          f"= {sub(setting.head)} / {sub(d['velocity_head'])}" if setting.head else "",
                          num(el.K), "–", el.K))
        if el.valve_type == "control" and setting.opening is not None:
            Kv = valve_law.kv_from_K(el.K, el.D)
            steps.append(Step("h_rel", "opening (relative travel) for that K",
                              "Kv = 3600 A √(2 Δp₀ / (ρ₀ K)); h_rel from Φ = Kv/Kvs",
                              f"Kv = {sub(Kv)} m³/h of {sub(el.Kvs)}", num(setting.opening), "–", setting.opening))
        notes.append({"set": f"The valve is set to meet {goal} before the line is solved: the head it takes is what "
                             "the line leaves it there.",
                      "fully_open": f"It cannot meet {goal}: it stands fully open.",
                      "no_flow": "At its set pressure no flow reaches the end; shown fully open."}[setting.state])
    steps.append(Step("h", "head taken by the valve", "h = K h_v", f"= {sub(el.K)} × {sub(d['velocity_head'])}",
                      num(d["h"]), "m", d["h"]))
    return StepGroup(title, "valve", steps, notes)


def _turbine_steps(c: Context, title: str, el: Turbine, d: dict, Q: float, rho: float) -> StepGroup:
    H = d["head"]
    eta = d["efficiency"]
    steps = []
    if el.efficiency_curve is not None:
        steps += _curve_steps(c, "η", "efficiency", el.efficiency_curve, Q, eta, "–")
    if el.mode == "power":
        steps.append(Step("H_t", "head taken at the set power", "H_t = P/(η ρ g Q)",
                          f"= {sub(el.power)} / ({sub(eta)} × {sub(rho)} × 9.80665 × {sub(Q)})",
                          num(H), "m", H))
    elif el.mode == "flow":
        steps.append(Step("H_t", "head the line leaves the turbine at its set flow Q", "H_t = E′(Q)",
                          "(the energy balance of the line without the turbine, at the set flow)", num(H), "m", H))
    elif el.mode == "head":
        steps.append(Step("H_t", "head taken (typed)", "H_t", "", num(H), "m", H))
    else:
        steps += _curve_steps(c, "H_t", "head", el.curve, Q, H, "m")
    steps.append(Step("P_h", "hydraulic power", "P_h = ρ g Q H_t",
                      f"= {sub(rho)} × 9.80665 × {sub(Q)} × {sub(H)}", num(d["power_hydraulic"]), "W",
                      d["power_hydraulic"]))
    steps.append(Step("P", "shaft power", "P = η P_h", f"= {sub(eta)} × {sub(d['power_hydraulic'])}",
                      num(d["power_shaft"]), "W", d["power_shaft"]))
    notes = []
    m = next((m for m in c.sol.machines if m["index"] == d["index"]), None)
    if m and m.get("Q_at_max"):
        steps += _max_power_steps(c, el, d, m, rho)
    if d.get("in_curve_range") is False:
        notes.append("The flow lies outside the typed curve points: the curve is extrapolated.")
    return StepGroup(title, "turbine", _once_each(steps), notes)


def _max_power_steps(c: Context, el: Turbine, d: dict, m: dict, rho: float) -> list[Step]:
    """The largest power the line can give the turbine, worked at the flow the search found, with the power a
    step either side of it so that a checker sees it is the top."""
    from calc.steady.series import make_residual

    Qm, Hm, Pm = m["Q_at_max"], m["head_available_at_max"], m["power_max"]
    p = c.design
    gross = p["head_start"] - p["head_end"]
    losses = gross - Hm
    eta = float(el.eta(Qm))
    left = make_residual(c.line, skip=d["index"])
    side = [(k * Qm, float(el.eta(k * Qm)) * rho * G * k * Qm * left(k * Qm)) for k in (0.95, 1.05)]
    return [
        Step("Q*", "flow of the largest power (searched over the flows, refined by a parabola through the best three)",
             "dP/dQ = 0", "", num(Qm), "m³/s", Qm),
        Step("H_a", "head left for the turbine at Q* (the line's own losses at Q* taken off the gross head)",
             "H_a = H_start − H_end − Σ h_line(Q*)", f"= {sub(p['head_start'])} − {sub(p['head_end'])} − {sub(losses)}",
             num(Hm), "m", Hm),
        Step("P_max", "largest shaft power", "P_max = η ρ g Q* H_a",
             f"= {sub(eta)} × {sub(rho)} × 9.80665 × {sub(Qm)} × {sub(Hm)}", num(Pm), "W", Pm,
             also=f"either side: P(0.95 Q*) = {num(side[0][1])} W, P(1.05 Q*) = {num(side[1][1])} W, both lower; "
                  f"the line loses {losses / gross * 100:.0f} % of the gross head at Q* (a third where every loss "
                  "grows as Q²)"),
    ]


def _once_each(steps: list[Step]) -> list[Step]:
    """The steps without a repeat of one already worked (the same curve position t for head, efficiency and
    NPSH read at one flow between the same typed points)."""
    seen, out = set(), []
    for s in steps:
        key = (s.symbol, s.equation, s.substituted)
        if key in seen:
            continue
        seen.add(key)
        out.append(s)
    return out


def _pump_steps(c: Context, title: str, el: Pump, d: dict, Q: float, rho: float) -> StepGroup:
    H = d["head"]
    steps = []
    n = el.speed_ratio
    k_par, k_ser = el.in_parallel, el.in_series
    q_unit = Q / k_par
    answer = next((a for a in (c.a.cases[0].speeds if c.a.cases else []) if a.index == d["index"]), None)
    if el.speed_solved and answer is not None:
        need = "H_req = −E′(Q_t), the head the line without the pump needs at Q_t" if answer.target == "flow" \
            else "H_req = H_t, the target head, at the flow where the line needs it"
        steps.append(Step("n", f"speed ratio solved for the target {answer.target} ({need})",
                          "N_s n² H₁(Q/(N_p n)) = H_req", f"= {sub(answer.H)} m at Q = {sub(answer.Q)} m³/s; "
                          f"Brent's method, {answer.iterations} iterations", num(n), "–", n))
    if k_par > 1:
        steps.append(Step("Q_u", f"flow through each of the {k_par} units running in parallel", "Q_u = Q/N",
                          f"= {sub(Q)} / {k_par}", num(q_unit), "m³/s", q_unit))
    Qs = "Q_u" if k_par > 1 else "Q"
    if el.mode == "head":
        H_unit = el.fixed_head
        steps.append(Step("H_u" if k_ser > 1 else "H_p", "head added (typed)", "H", "", num(H_unit), "m", H_unit))
    else:
        q = q_unit / n
        H1 = float(el.curve(q))
        if n != 1.0:
            steps.append(Step("Q₁", "flow at the curve's own speed", f"Q₁ = {Qs}/n", f"= {sub(q_unit)} / {sub(n)}",
                              num(q), "m³/s", q))
        steps += _curve_steps(c, "H₁", "head", el.curve, q, H1, "m", "Q₁" if n != 1.0 else Qs)
        H_unit = n * n * H1
        if n != 1.0:
            steps.append(Step("H_u" if k_ser > 1 else "H_p", "head at this speed", "n² H₁", f"= {sub(n)}² × {sub(H1)}",
                              num(H_unit), "m", H_unit))
    if k_ser > 1:
        steps.append(Step("H_p", f"head of the {k_ser} units running in series", "H_p = N H_u",
                          f"= {k_ser} × {sub(H_unit)}", num(H), "m", H))
    steps.append(Step("P_h", "hydraulic power", "P_h = ρ g Q H_p", f"= {sub(rho)} × 9.80665 × {sub(Q)} × {sub(H)}",
                      num(d["power_hydraulic"]), "W", d["power_hydraulic"]))
    eta = d.get("efficiency")
    if eta:
        if el.efficiency_curve is not None:
            steps += _curve_steps(c, "η", "efficiency", el.efficiency_curve, q_unit / n, eta, "–",
                                  "Q₁" if n != 1.0 else Qs)
        steps.append(Step("P", "shaft power", "P = P_h/η", f"= {sub(d['power_hydraulic'])} / {sub(eta)}",
                          num(d["power_shaft"]), "W", d["power_shaft"]))
    if d.get("npsh_required") is not None:
        q1 = q_unit / n
        r1 = float(el.npshr_curve(q1))
        if n != 1.0:
            steps += _curve_steps(c, "NPSH₁", "NPSH required at the curve's own speed", el.npshr_curve, q1, r1, "m",
                                  "Q₁")
            steps.append(Step("NPSH_r", "NPSH required at this speed", "NPSH_r = n² NPSH₁",
                              f"= {sub(n)}² × {sub(r1)}", num(d["npsh_required"]), "m", d["npsh_required"]))
        else:
            steps += _curve_steps(c, "NPSH_r", "NPSH required", el.npshr_curve, q1, r1, "m", Qs)
    steps += _npsh_available_steps(c, d)
    steps = _once_each(steps)
    notes = []
    if el.curve is not None:
        notes.append("The curve passes through every typed point; between them it is the shape-preserving cubic, "
                     "which never overshoots the typed values.")
    if d.get("in_curve_range") is False:
        notes.append("The flow lies outside the typed curve points: the curve is extrapolated.")
    return StepGroup(title, "pump", steps, notes)


def _npsh_available_steps(c: Context, d: dict) -> list[Step]:
    """NPSH available at the pump's inlet from the grade line there, the number the NPSH finding rests on."""
    stations = [s for s in c.design["profile"] if s["element"] == d["index"]]
    if len(stations) < 2:
        return []
    inlet = stations[0]
    lq, rho = c.liquid, c.liquid.rho
    hp, hv = inlet["pressure_head"], inlet["egl"] - inlet["hgl"]
    p_abs = c.line.p_atm + rho * G * hp
    npsha = npsh_available(p_abs, math.sqrt(max(2 * G * hv, 0.0)), lq.p_vap, rho)
    return [
        Step("p_in", "absolute pressure at the pump inlet (its pressure head from the grade line there)",
             "p_in = p_atm + ρ g h_p", f"= {sub(c.line.p_atm)} + {sub(rho)} × 9.80665 × {paren(hp)}", num(p_abs),
             "Pa", p_abs),
        Step("NPSH_a", "NPSH available at the inlet", "NPSH_a = (p_in − p_v)/(ρ g) + V²/(2 g)",
             f"= ({sub(p_abs)} − {sub(lq.p_vap)}) / ({sub(rho)} × 9.80665) + {sub(hv)}", num(npsha), "m", npsha,
             c.refs.cite(SRC_NPSH, "NPSH")),
    ]


PCHIP_REF = ("Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation. SIAM Journal on "
             "Numerical Analysis 17(2): 238-246; as implemented in SciPy's PchipInterpolator.")


def _curve_steps(c: Context, sym: str, what: str, curve, q: float, y: float, unit: str, qsym: str = "Q") -> list[Step]:
    """A value read off a typed curve, in steps a calculator repeats: the Hermite cubic between the two
    typed points around ``q`` (slopes from the shape-preserving rule), or the straight end line beyond."""
    ref = c.refs.cite(PCHIP_REF, "machine curves through typed points")
    lo, hi = curve.Q_range
    if q < lo or q > hi:
        Qe, ye, d = (lo, curve.y[0], curve.slope_start) if q < lo else (hi, curve.y[-1], curve.slope_end)
        return [Step(sym, f"{what}, carried straight past the typed points (extrapolated)",
                     f"{sym} = y_end + d_end ({qsym} - Q_end)", f"= {sub(ye)} + {paren(d)} × ({sub(q)} - {sub(Qe)})",
                     num(y), unit, y, ref)]
    h = curve.hermite(q)
    dQ = h["Q_j"] - h["Q_i"]
    t = h["t"]
    return [
        Step("t", f"where {qsym} lies between the typed points {sub(h['Q_i'])} and {sub(h['Q_j'])} m³/s",
             f"t = ({qsym} - Q_i) / (Q_j - Q_i)", f"= ({sub(q)} - {sub(h['Q_i'])}) / ({sub(h['Q_j'])} - {sub(h['Q_i'])})",
             num(t), "–", t),
        Step(sym, f"{what} on the curve through the typed points (slopes d_i = {sub(h['d_i'])}, "
             f"d_j = {sub(h['d_j'])} per m³/s)",
             f"{sym} = (2t³ - 3t² + 1) y_i + (t³ - 2t² + t) Δ d_i + (3t² - 2t³) y_j + (t³ - t²) Δ d_j",
             f"= (2 × {sub(t)}³ - 3 × {sub(t)}² + 1) × {sub(h['y_i'])} + ({sub(t)}³ - 2 × {sub(t)}² + {sub(t)}) × "
             f"{sub(dQ)} × {paren(h['d_i'])} + (3 × {sub(t)}² - 2 × {sub(t)}³) × {sub(h['y_j'])} + "
             f"({sub(t)}³ - {sub(t)}²) × {sub(dQ)} × {paren(h['d_j'])}", num(y), unit, y, ref),
    ]
