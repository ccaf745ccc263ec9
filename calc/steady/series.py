"""Steady series-line solver: every operating point of a line with its machines, and the solve log.

The energy balance residual is

    E(Q) = H_start(Q) - H_end(Q) - sum_i h_i(Q)      [m]

where h_i is the head element i takes from the flow (negative for a pump). Every root in the
physical range is found by scanning E on a logarithmic grid of flows for sign changes (and for
extrema that dip across zero between grid points), then closing each bracket with Brent's
method (scipy ``brentq``); never a lone Newton step from a guess, which finds one root of a
turbine's two and none of a drooping pump curve's others.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq, minimize_scalar

from calc import friction
from calc.model.elements import Line, PipeRun, Pump, Turbine, Valve
from calc.units import to_display
from calc.water import G

#: The scan's top is this many times the flow the whole driving head could push through the
#: narrowest bore with no loss at all, sqrt(2 g H) A: a margin for a bore that recovers pressure
#: downstream (a valve seat), never a velocity fixed in advance.
SCAN_MARGIN = 3.0
#: Driving head below which the scan's top is worked out from this head instead [m], so that a
#: line with too little head still gets a scan that says why (water would run backwards).
H_SCAN_MIN = 1.0
#: The scan starts this many decades below its top.
SCAN_DECADES = 9.0
#: Grid points of the scan over SCAN_DECADES (a wider scan gets as many per decade); extrema between
#: points are refined, so this only sets the cost.
SCAN_POINTS = 48
#: The scan reaches down to this fraction of the least flow the line could carry (`scan_range`).
LOW_FRACTION = 0.1


@dataclass
class Root:
    Q: float
    residual: float
    bracket: tuple[float, float]
    iterations: int
    function_calls: int
    slope: float  # dE/dQ [m per m3/s]


@dataclass
class Solution:
    """Everything the solve found, in SI units; ``to_dict`` gives JSON-safe data."""

    status: str
    message: str
    method: str
    liquid: dict
    static_head: float
    points: list[dict] = field(default_factory=list)
    design_index: int | None = None
    no_point: dict | None = None
    machines: list[dict] = field(default_factory=list)
    log: dict = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)

    @property
    def design(self) -> dict | None:
        return None if self.design_index is None else self.points[self.design_index]

    def to_dict(self) -> dict:
        return _json_safe({
            "status": self.status, "message": self.message, "method": self.method,
            "liquid": self.liquid, "static_head": self.static_head,
            "design_index": self.design_index, "points": self.points, "no_point": self.no_point,
            "machines": self.machines, "log": self.log, "warnings": self.warnings,
        })


def _json_safe(x):
    if isinstance(x, float):
        return x if math.isfinite(x) else None
    if isinstance(x, dict):
        return {k: _json_safe(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_json_safe(v) for v in x]
    if isinstance(x, (np.floating,)):
        return _json_safe(float(x))
    if isinstance(x, (np.bool_,)):
        return bool(x)
    return x


# ----------------------------------------------------------------------------- residual

def residual(line: Line, Q: float, skip: int | None = None) -> float:
    """E(Q) [m]: head left over after the end head and every element's head; zero at an operating point.

    ``skip`` leaves out one element (used to find the head a turbine has at its disposal).
    """
    fluid = line.fluid
    rho = line.liquid.rho
    E = line.start.total_head(Q, rho) - line.end.total_head(Q, rho)
    for i, el in enumerate(line.elements):
        if i != skip:
            E -= el.head(Q, fluid)
    return E


def make_residual(line: Line, skip: int | None = None):
    """A fast E(Q) for one solve: the same sum as `residual`, with each pipe run's constants
    taken out of the loop (Brent's method calls it some ten times a root)."""
    fluid = line.fluid
    rho = line.liquid.rho
    nu = fluid.nu
    method = fluid.method
    static = line.start.static_head(rho) - line.end.static_head(rho)
    c = line.start.velocity_head_coefficient() - line.end.velocity_head_coefficient()
    pipes, others = [], []
    for i, el in enumerate(line.elements):
        if i == skip:
            continue
        if isinstance(el, PipeRun):
            inv_A, D, eD, L_D, KA, KB = el.constants()
            pipes.append((inv_A, D / nu, eD, L_D, KA, KB))
        else:
            others.append(el)
    ff = friction.friction_factor
    inv_2g = 1.0 / (2.0 * G)

    def E(Q: float) -> float:
        e = static + c * Q * Q
        for inv_A, D_nu, eD, L_D, KA, KB in pipes:
            V = Q * inv_A
            Re = V * D_nu
            e -= (ff(Re, eD, method) * L_D + KA / Re + KB) * V * V * inv_2g
        for el in others:
            e -= el.head(Q, fluid)
        return e

    return E


def residual_array(line: Line, Q: np.ndarray, skip: int | None = None) -> np.ndarray:
    """E(Q) on an array of flows (the scan). Every pipe run goes through one batched friction
    call, since numpy's cost here is per call rather than per value."""
    fluid = line.fluid
    rho = line.liquid.rho
    static = line.start.static_head(rho) - line.end.static_head(rho)
    c = line.start.velocity_head_coefficient() - line.end.velocity_head_coefficient()
    E = static + c * Q * Q
    batch = []
    for i, el in enumerate(line.elements):
        if i == skip:
            continue
        if isinstance(el, PipeRun):
            batch.append(el.constants())
        else:
            E = E - el.head_array(Q, fluid)
    if batch:
        inv_A, D, eD, L_D, KA, KB = (np.array(col)[:, None] for col in zip(*batch))
        V = Q[None, :] * inv_A
        Re = V * D / fluid.nu
        f = friction.friction_factor_array(Re.ravel(), np.broadcast_to(eD, Re.shape).ravel(),
                                           fluid.method).reshape(Re.shape)
        E = E - ((f * L_D + KA / Re + KB) * V * V / (2 * G)).sum(axis=0)
    return E


def driving_head(line: Line) -> float:
    """The most head that could drive flow along the line [m]: start less end, plus every pump's highest head.

    Static heads of the ends (a free outlet at its own elevation), and for each pump the highest
    head of its typed curve scaled by speed (n² H), or its fixed head. Turbines and losses only
    take head away, so no flow can exceed what this head drives through the narrowest bore.
    """
    rho = line.liquid.rho
    H = line.start.static_head(rho) - line.end.static_head(rho)
    for el in line.elements:
        if isinstance(el, Pump):
            if el.mode == "head":
                H += max(el.fixed_head, 0.0) * el.in_series
            else:
                H += max(max(el.curve.y), 0.0) * el.speed_ratio ** 2 * el.in_series
    return H


def scan_range(line: Line) -> tuple[float, float]:
    """Flows to scan [m3/s]: from the physics at the top, down SCAN_DECADES from there.

    The top is SCAN_MARGIN times sqrt(2 g H) A_min, H the driving head (`driving_head`) and A_min
    the narrowest bore (pipe run, valve or nozzle): the flow the whole head could drive through it.
    """
    diameters = [el.D for el in line.elements if isinstance(el, (PipeRun, Valve))]
    for node in (line.start, line.end):
        if node.nozzle_diameter:
            diameters.append(node.nozzle_diameter)
    D_min = min(diameters) if diameters else 1.0
    H_drive = driving_head(line)
    H = max(H_drive, H_SCAN_MIN)
    Q_hi = SCAN_MARGIN * math.sqrt(2.0 * G * H) * math.pi * D_min * D_min / 4.0
    Q_lo = Q_hi * 10.0 ** (-SCAN_DECADES)
    if H_drive > 0.0:
        # The bottom reaches below the least flow the line can carry, so no root lies under it: a flow
        # is at least what the driving head pushes through the runs in laminar flow with no other loss
        # (Hagen-Poiseuille, h = 128 nu L Q / (pi g D^4), losses only add to it), and a turbine at set
        # power P needs at least P / (rho g H_drive), since its net head is less than H_drive.
        nu = line.liquid.mu / line.liquid.rho
        r_lam = sum(128.0 * nu * el.L / (math.pi * G * el.D ** 4) for el in line.elements if isinstance(el, PipeRun))
        if r_lam > 0.0:
            Q_lo = min(Q_lo, LOW_FRACTION * H_drive / r_lam)
        for el in line.elements:
            if isinstance(el, Turbine) and el.mode == "power":
                Q_lo = min(Q_lo, LOW_FRACTION * el.power / (line.liquid.rho * G * H_drive))
    return Q_lo, Q_hi


# ----------------------------------------------------------------------------- roots

def find_roots(f, f_array, Q_lo: float, Q_hi: float, n: int | None = None):
    """Every root of f on [Q_lo, Q_hi]: log-grid scan, extremum refinement, then brentq per bracket.

    Returns the roots, the log, and the scan (grid, values) for reuse.
    """
    if n is None:
        n = max(SCAN_POINTS, math.ceil(SCAN_POINTS * math.log10(Q_hi / Q_lo) / SCAN_DECADES))
    grid = np.geomspace(Q_lo, Q_hi, n)
    with np.errstate(all="ignore"):
        E = f_array(grid)
    brackets: list[tuple[float, float]] = []
    finite = np.isfinite(E)
    for i in range(n - 1):
        if not (finite[i] and finite[i + 1]):
            continue
        if E[i] == 0.0:
            brackets.append((grid[i], grid[i], 0.0, 0.0))
        elif (E[i] < 0.0) != (E[i + 1] < 0.0):  # a sign change; no product, which can overflow
            brackets.append((grid[i], grid[i + 1], E[i], E[i + 1]))
    # A pair of roots closer together than the grid spacing shows only as an extremum
    # of E on the near side of zero: refine the extremum and split there if it crosses.
    refined = 0
    for i in range(1, n - 1):
        if not (finite[i - 1] and finite[i] and finite[i + 1]):
            continue
        is_max = E[i] >= E[i - 1] and E[i] >= E[i + 1] and E[i] < 0.0
        is_min = E[i] <= E[i - 1] and E[i] <= E[i + 1] and E[i] > 0.0
        if not (is_max or is_min):
            continue
        sign = -1.0 if is_max else 1.0
        refined += 1
        res = minimize_scalar(lambda q: sign * f(q), bounds=(grid[i - 1], grid[i + 1]),
                              method="bounded", options={"xatol": 1e-14 * grid[i]})
        q_star = res.x
        e_star = f(q_star)
        if e_star == 0.0:
            brackets.append((q_star, q_star, 0.0, 0.0))
        elif (e_star < 0.0) != (E[i] < 0.0):
            brackets.append((grid[i - 1], q_star, E[i - 1], e_star))
            brackets.append((q_star, grid[i + 1], e_star, E[i + 1]))
    roots = []
    for a, b, fa, fb in sorted(brackets):
        if a == b:
            q, it, calls = a, 0, 1
            fa, fb = f(a * (1 - 1e-9)), f(a * (1 + 1e-9))
        else:
            q, r = brentq(f, a, b, xtol=1e-300, rtol=4 * np.finfo(float).eps, maxiter=200,
                          full_output=True)
            it, calls = r.iterations, r.function_calls
        # Only the sign of dE/dQ matters (stable or not); the bracket's ends give it for free.
        slope = (fb - fa) / (b - a) if b > a else fb - fa
        roots.append(Root(q, f(q), (float(a), float(b)), it, calls, float(slope)))
    log = {"Q_min": Q_lo, "Q_max": Q_hi, "grid_points": n, "brackets": len(brackets),
           "extrema_refined": refined}
    return roots, log, (grid, E)


# ----------------------------------------------------------------------------- solve

def solve(line: Line) -> Solution:
    """Solve the line: every operating point, the design point, and what each element does there."""
    liquid = line.liquid
    rho = liquid.rho
    static = line.start.static_head(rho) - line.end.static_head(rho)
    Q_lo, Q_hi = scan_range(line)
    roots, scan_log, scan = find_roots(make_residual(line), lambda q: residual_array(line, q), Q_lo, Q_hi)
    machines = [machine_summary(line, i, scan) for i, el in enumerate(line.elements)
                if isinstance(el, (Turbine, Pump))]
    sol = Solution(
        status="solved" if roots else "no_operating_point",
        message="",
        method=line.method,
        liquid={"name": liquid.name, "T": liquid.T, "rho": rho, "mu": liquid.mu,
                "p_vap": liquid.p_vap, "bulk_modulus": liquid.bulk_modulus, "source": liquid.source},
        static_head=static,
        machines=machines,
        log={"scan": scan_log, "roots": [
            {"Q": r.Q, "bracket": list(r.bracket), "iterations": r.iterations,
             "function_calls": r.function_calls, "residual": r.residual} for r in roots]},
    )
    for r in roots:
        sol.points.append(point_detail(line, r.Q, r.residual, r.slope))
    if roots:
        usable = [k for k, p in enumerate(sol.points) if p["attainable"]]
        if usable and len(usable) < len(roots):
            k, why = choose_design(line, [roots[j] for j in usable])
            sol.design_index = usable[k]
            if len(usable) == 1:
                why = "the only operating point that can occur"
            why += "; the other flows would need pressures below vapour pressure, so they cannot occur"
        else:
            sol.design_index, why = choose_design(line, roots)
        for k, p in enumerate(sol.points):
            p["is_design"] = k == sol.design_index
            if k == sol.design_index:
                p["why"] = why
            elif not p["attainable"]:
                p["why"] = "cannot occur: " + p["unattainable"]
            else:
                p["why"] = other_point_note(line, roots[k], roots[sol.design_index])
        n = len(roots)
        sol.message = "one operating point" if n == 1 else f"{n} operating points"
        lost = n - sum(1 for p in sol.points if p["attainable"])
        if lost:
            sol.message += f", {lost} of which cannot occur (pressure would fall to vapour pressure)"
        sol.warnings = point_warnings(sol.points[sol.design_index])
    else:
        sol.no_point = explain_no_point(line, static, machines, Q_lo, Q_hi)
        sol.message = "no operating point: " + sol.no_point["reason"]
    return sol


def point_detail(line: Line, Q: float, res: float, slope: float) -> dict:
    fluid = line.fluid
    details = []
    for i, el in enumerate(line.elements):
        d = el.detail(Q, fluid)
        d["index"] = i
        details.append(d)
    rho = line.liquid.rho
    profile = grade_lines(line, Q, details)
    return {
        "Q": Q, "residual": res, "slope": slope, "is_design": False, "why": "",
        "head_start": line.start.total_head(Q, rho), "head_end": line.end.total_head(Q, rho),
        "elements": details, "profile": profile, **attainability(line, profile),
    }


#: Pressure heads within this of vapour pressure count as reaching it [m] (as the checks' H_TOL).
H_VAPOUR_TOL = 1e-6


def attainability(line: Line, profile: list[dict]) -> dict:
    """Whether a computed point can occur: the steady pressure must stay above vapour pressure everywhere.

    Where it would fall to vapour pressure the water column parts (it boils at ambient temperature),
    so the flow and heads computed there do not exist: ``attainable`` is False and ``unattainable``
    says where.
    """
    h_vap = (line.liquid.p_vap - line.p_atm) / (line.liquid.rho * G)
    low = min(profile, key=lambda st: st["pressure_head"]) if profile else None
    if low is None or low["pressure_head"] > h_vap + H_VAPOUR_TOL:
        return {"attainable": True, "unattainable": ""}
    p_abs = line.p_atm + line.liquid.rho * G * low["pressure_head"]
    return {"attainable": False,
            "unattainable": (f"the steady pressure would fall to vapour pressure ({line.liquid.p_vap / 1e3:.2f} kPa "
                             f"absolute) at chainage {low['chainage']:.1f} m, computed {p_abs / 1e3:.1f} kPa absolute; "
                             "the water column parts there, so this flow cannot occur as computed")}


def choose_design(line: Line, roots: list[Root]) -> tuple[int, str]:
    """Which operating point is the usual design point, and why."""
    if len(roots) == 1:
        return 0, "the only operating point"
    if any(isinstance(el, Turbine) and el.mode == "power" for el in line.elements):
        return 0, ("lowest of the flows that deliver the set power: less of the gross head is burnt in "
                   "friction there, so it uses the least water; the higher flow wastes most of the head "
                   "in the line")
    stable = [k for k, r in enumerate(roots) if r.slope < 0.0]
    if stable:
        k = max(stable, key=lambda j: roots[j].Q)
        return k, ("highest-flow stable crossing: there the system needs more head than the machines "
                   "give when the flow rises, so a disturbance dies away")
    return len(roots) - 1, "highest flow found; no crossing is stable by the slope test"


def other_point_note(line: Line, r: Root, design: Root) -> str:
    if any(isinstance(el, Turbine) and el.mode == "power" for el in line.elements):
        return "also delivers the set power, at a higher flow with most of the head lost in the line"
    if r.slope > 0.0:
        return "unstable crossing: the machine curve is steeper than the system curve here"
    return "also a stable crossing; which one the line settles at depends on how it is started"


def point_warnings(point: dict) -> list[str]:
    out = []
    for d in point["elements"]:
        if d["kind"] == "pipe":
            if d["regime"] == "transitional":
                out.append(f"{d['label']}: {d['friction_note']}")
            elif not d["friction_in_range"]:
                out.append(f"{d['label']}: Re or eps/D outside the friction method's stated range")
        if d["kind"] in ("pump", "turbine") and d.get("in_curve_range") is False:
            out.append(f"{d['label']}: operating outside the typed curve points; the curve is extrapolated")
    return out


def machine_summary(line: Line, i: int, scan: tuple[np.ndarray, np.ndarray]) -> dict:
    """For a turbine, the largest shaft power the line can give it and at what flow."""
    el = line.elements[i]
    out = {"index": i, "kind": el.kind, "label": el.label}
    if isinstance(el, Turbine):
        out.update(max_turbine_power(line, i, *scan))
    return out


def max_turbine_power(line: Line, i: int, grid: np.ndarray, E_grid: np.ndarray) -> dict:
    """Largest shaft power P = eta rho g Q H_avail(Q), H_avail being the head left for turbine i.

    Starts from the residual already computed on the scan grid (adding back the turbine's own
    head), then narrows the bracket on two small grids and closes with a parabola through the
    three best points: the power curve is smooth and flat at its top, so this is exact to
    far below the figures reported, for two array evaluations instead of dozens of scalar ones.
    """
    el = line.elements[i]
    rg = line.liquid.rho * G
    fluid = line.fluid
    with np.errstate(all="ignore"):
        P = el.eta(grid) * rg * grid * (E_grid + el.head_array(grid, fluid))
    P = np.where(np.isfinite(P), P, -np.inf)
    j = int(np.argmax(P))
    if P[j] <= 0.0:
        return {"power_max": 0.0, "Q_at_max": None, "head_available_at_max": None}
    a, b = grid[max(j - 1, 0)], grid[min(j + 1, len(grid) - 1)]
    for _ in range(2):
        sub = np.linspace(a, b, 17)
        with np.errstate(all="ignore"):
            Ps = el.eta(sub) * rg * sub * residual_array(line, sub, skip=i)
        Ps = np.where(np.isfinite(Ps), Ps, -np.inf)
        m = min(max(int(np.argmax(Ps)), 1), len(sub) - 2)
        a, b = sub[m - 1], sub[m + 1]
    x0, x1, x2 = sub[m - 1:m + 2]
    y0, y1, y2 = Ps[m - 1:m + 2]
    denom = y0 - 2 * y1 + y2
    Q = float(x1 + 0.5 * (x1 - x0) * (y0 - y2) / denom) if denom < 0 else float(x1)
    Q = min(max(Q, x0), x2)
    H = make_residual(line, skip=i)(Q)
    return {"power_max": float(el.eta(Q)) * rg * Q * H, "Q_at_max": Q, "head_available_at_max": H}


def explain_no_point(line: Line, static: float, machines: list[dict], Q_lo: float, Q_hi: float) -> dict:
    turbines = [m for m in machines if m["kind"] == "turbine"
                and line.elements[m["index"]].mode == "power"]
    if turbines:
        m = turbines[0]
        el = line.elements[m["index"]]
        return {"reason": (f"the line cannot deliver the set power of {el.label}; the most it can give is "
                           "at the flow stated (lower the set power or the losses)"),
                "max_power": m.get("power_max"), "Q_at_max": m.get("Q_at_max")}
    E_lo = residual(line, Q_lo)
    check = next((el for el in line.elements if isinstance(el, Valve) and el.valve_type == "check"), None)
    if E_lo <= 0.0 and driving_head(line) <= 0.0 and check is not None:
        held, unit = to_display(-driving_head(line), "head", (line.header or {}).get("units", "SI"))
        return {"reason": (f"the check valve {check.label or ''} is shut: the head at the end exceeds the head at the "
                           f"start and the machines' heads by {held:.3g} {unit}, which it holds back, so no "
                           "water flows (the line needs a pump, or a higher start, to deliver)").replace("  ", " "),
                "max_power": None, "Q_at_max": None, "check_valve_shut": True}
    if E_lo <= 0.0 and driving_head(line) <= 0.0:
        return {"reason": ("the head at the start does not exceed the head at the end plus the machines' "
                           "heads even at no flow: the water would run backwards (add or raise a pump)"),
                "max_power": None, "Q_at_max": None}
    if E_lo <= 0.0:
        return {"reason": (f"the line's losses and the heads its turbines take use up the driving head even at "
                           f"{Q_lo:.3g} m3/s, a tenth of the flow that head could push through the runs in laminar "
                           "flow with no other loss: check the fittings, valves and turbines for a value far too "
                           "large"),
                "max_power": None, "Q_at_max": None}
    return {"reason": (f"head is still left over at {Q_hi:.4g} m3/s, {SCAN_MARGIN:g} times the flow the whole "
                       "driving head could push through the narrowest bore without any loss: check the diameters, "
                       "lengths and machine curves"),
            "max_power": None, "Q_at_max": None}


# ----------------------------------------------------------------------------- grade lines

def grade_lines(line: Line, Q: float, details: list[dict]) -> list[dict]:
    """Stations along the chainage with elevation, HGL, EGL and pressure head [m], in flow order.

    Friction and 'spread' fittings fall linearly along a run; entrance losses are taken at the
    run's start and exit losses at its end (shown at the end node).
    """
    rho = line.liquid.rho
    out = []
    H = line.start.total_head(Q, rho)
    z = line.start.pipe_elevation
    hv_now = line.start.velocity_head(Q)
    ch = 0.0

    def add(chainage, elevation, egl, hv, element):
        hgl = egl - hv
        out.append({"chainage": chainage, "elevation": elevation, "egl": egl, "hgl": hgl,
                    "pressure_head": hgl - elevation, "element": element})

    add(0.0, z, H, hv_now, None)
    for i, (el, d) in enumerate(zip(line.elements, details)):
        if isinstance(el, PipeRun):
            hv = d["velocity_head"]
            h_start = sum(x["h"] for x in d["fittings"] if x["position"] == "start")
            h_spread = d["h_friction"] + sum(x["h"] for x in d["fittings"] if x["position"] == "spread")
            H -= h_start
            stations = run_stations(el, z)
            for s, elev in stations:
                add(ch + s, elev, H - h_spread * s / el.L, hv, i)
            H -= h_spread + sum(x["h"] for x in d["fittings"] if x["position"] == "end")
            ch += el.L
            z = el.end_elevation
            hv_now = hv
        else:
            add(ch, z, H, hv_now, i)
            H -= d["head_change"]
            add(ch, z, H, hv_now, i)
    end = line.end
    out.append({"chainage": ch, "elevation": end.elevation if end.kind != "reservoir" else z,
                "egl": line.end.total_head(Q, rho), "hgl": line.end.static_head(rho),
                "pressure_head": line.end.static_head(rho) - (end.elevation if end.kind != "reservoir" else z),
                "element": None})
    return out


def run_stations(run: PipeRun, z_start: float) -> list[tuple[float, float]]:
    """(chainage within the run, elevation) at the run's ends and its profile points."""
    pts = {0.0: z_start, run.L: run.end_elevation}
    for s, elev in run.profile:
        if 0.0 <= s <= run.L:
            pts[s] = elev
    return sorted(pts.items())
