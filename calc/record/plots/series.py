"""The numbers the plots draw, worked out from an analysis in SI units: curves against flow, and lines along the chainage.

Nothing here draws: `figures` turns these into charts in the sheet's units. The curves are
evaluated on arrays (the elements' ``head_array``, one batched friction call per run), so a plot
costs a few array operations per curve rather than a solve per flow.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from calc.model.elements import Curve, Line, PipeRun, Pump, Turbine
from calc.steady.series import residual_array
from calc.water import G

#: Flows a curve is evaluated at, from the axis' end down to 1/FLOW_POINTS of it.
FLOW_POINTS = 160


@dataclass
class Mark:
    """A point to mark: its place [SI], a short label beside it (may be left out for room) and its hover text."""

    Q: float
    y: float
    label: str
    title: str = ""


@dataclass
class SystemCurve:
    """One system curve: the head the line needs from its machines (or leaves for a turbine) against flow.

    ``name`` names the operating case it belongs to ("System" while a sheet has one case); ``points``
    are that case's operating points on it. A head-flow plot takes a list of these, one per case.
    """

    name: str
    Q: np.ndarray  # [m3/s]
    H: np.ndarray  # [m]
    points: list[Mark] = field(default_factory=list)


@dataclass
class CurveSeries:
    """A machine's curve against flow: ``y`` on the flows ``Q``, the typed points it goes through, and the typed
    flows' range (beyond it the curve is carried on, and drawn dashed). ``typed_range`` None: all known."""

    name: str
    index: int  # the element's place in the line
    Q: np.ndarray
    y: np.ndarray
    typed: list[tuple[float, float]] = field(default_factory=list)
    typed_range: tuple[float, float] | None = None
    kind: str = "pump"
    in_total: bool = True  # False for one unit of a group, drawn beside the group's own curve


def flow_top(analysis) -> float:
    """The highest flow worth showing [m3/s]: past every operating point, the turbine's best, the pump's data."""
    sol = analysis.solution
    cands = []
    for line, solution in _cases(analysis):
        if solution.points:
            cands.append(1.3 * max(p["Q"] for p in solution.points))
        for m in solution.machines:
            if m.get("Q_at_max"):
                cands.append(1.25 * m["Q_at_max"])
        for el in line.elements:
            if isinstance(el, Pump) and el.curve is not None:
                cands.append(1.1 * el.curve.Q_range[1] * el.speed_ratio * el.in_parallel)
    if not cands:
        cands.append(sol.log.get("scan", {}).get("Q_max", 1.0) / 100.0)
    return max(cands)


def _cases(analysis) -> list[tuple[Line, object]]:
    """(line, solution) of every case of the analysis, the base first (the base alone without cases)."""
    cases = getattr(analysis, "cases", None) or []
    return [(c.line, c.solution) for c in cases] or [(analysis.line, analysis.solution)]


def flows(q_end: float) -> np.ndarray:
    """The flows a curve is drawn through, up to ``q_end`` [m3/s]."""
    return np.linspace(q_end / FLOW_POINTS, q_end, FLOW_POINTS)


def sign_of(line: Line) -> float:
    """How machine heads are shown: +1 for head a turbine takes, -1 so that a pump's added head shows positive,
    0 for a line with no machine (losses against the static head)."""
    if any(isinstance(el, Pump) for el in line.elements):
        return -1.0
    if any(isinstance(el, Turbine) for el in line.elements):
        return 1.0
    return 0.0


def system_curves(analysis, Q: np.ndarray) -> list[SystemCurve]:
    """Every system curve of the sheet on the flows ``Q``: one per operating case, each with its design
    point named by the case, or for a sheet without cases the one curve with every operating point.

    With pumps, the head the line needs from them, H_sys(Q) = H_end - H_start + sum of line losses; with
    turbines, the head left for them; with neither, the line's losses (met by the static head).
    """
    cases = getattr(analysis, "cases", None) or []
    if len(cases) > 1:
        # One curve per case, each with its design point named by the case.
        out = []
        for c in cases:
            one = system_curve(c.line, c.solution, Q, c.name)
            one.points = [Mark(m.Q, m.y, c.name, m.title) for m, p in zip(one.points, c.solution.points)
                          if p.get("is_design")]
            out.append(one)
        return out
    return [system_curve(analysis.line, analysis.solution, Q, "System")]


def system_curve(line: Line, sol, Q: np.ndarray, name: str) -> SystemCurve:
    """One line's system curve on the flows ``Q``, with its operating points."""
    fluid = line.fluid
    with np.errstate(all="ignore"):
        E = residual_array(line, Q)
        machine = sum((np.asarray(el.head_array(Q, fluid), dtype=float) for el in line.elements
                       if isinstance(el, (Pump, Turbine))), np.zeros_like(Q))
    left = E + machine  # head left after the line's losses [m]
    sign = sign_of(line)
    static = line.start.static_head(line.liquid.rho) - line.end.static_head(line.liquid.rho)
    H = -left if sign < 0 else left if sign > 0 else static - left
    points = []
    for k, p in enumerate(sol.points):
        losses = sum(d["head_change"] for d in p["elements"] if d["kind"] not in ("pump", "turbine"))
        need = p["head_start"] - p["head_end"] - losses
        y = -need if sign < 0 else need if sign > 0 else static - need
        points.append(Mark(p["Q"], y, point_label(k, p), ""))
    return SystemCurve(name, Q, H, points)


def point_label(k: int, p: dict) -> str:
    """'1 (design)', '2 (cannot occur)' or '3'."""
    return str(k + 1) + (" (design)" if p.get("is_design") else " (cannot occur)" if not p.get("attainable", True) else "")


def _curve_series(name: str, index: int, curve: Curve, Q: np.ndarray, n: float, power: float,
                  lo: float | None = None, hi: float | None = None, kind: str = "pump", flow_units: int = 1,
                  head_units: int = 1) -> CurveSeries:
    """A typed curve scaled by the affinity laws and a group's units: y(Q) = m n^power y1(Q / (k n)), held
    within [lo, hi], with k units sharing the flow (parallel) and m adding their y (series heads).

    The ends of the typed flows join the flows drawn, so that the solid part ends and the dashed
    part starts exactly at the first and last typed points.
    """
    k = flow_units * n
    q0, q1 = curve.Q_range[0] * k, curve.Q_range[1] * k
    Q = np.union1d(Q, [q for q in (q0, q1) if Q[0] < q < Q[-1]])
    y = head_units * n ** power * np.asarray(curve(Q / k), dtype=float)
    if lo is not None or hi is not None:
        y = np.clip(y, lo, hi)
    typed = [(q * k, head_units * v * n ** power) for q, v in zip(curve.Q, curve.y)]
    return CurveSeries(name, index, Q, y, typed, (q0, q1), kind)


def group_name(el: Pump) -> str:
    """'P1' for a single pump; 'P1, 2 in parallel' for a group."""
    base = el.label or "pump"
    return f"{base}, {el.running} in {el.arrangement}" if el.is_group else base


def machine_curves(line: Line, Q: np.ndarray) -> list[CurveSeries]:
    """Each pump's and turbine's head against flow: positive head added by a pump, taken by a turbine."""
    fluid = line.fluid
    out = []
    for i, el in enumerate(line.elements):
        if isinstance(el, Pump):
            if el.curve is not None and el.mode != "head":
                out.append(_curve_series(group_name(el), i, el.curve, Q, el.speed_ratio, 2,
                                         flow_units=el.in_parallel, head_units=el.in_series))
                if el.is_group and el.running > 1:
                    one = _curve_series(f"{el.label or 'pump'}, one unit", i, el.curve, Q, el.speed_ratio, 2)
                    one.in_total = False
                    out.append(one)
            else:
                out.append(CurveSeries(group_name(el), i, Q, np.asarray(el.pump_head(Q), dtype=float)))
        elif isinstance(el, Turbine):
            with np.errstate(all="ignore"):
                y = np.asarray(el.head_array(Q, fluid), dtype=float)
            if el.mode == "curve" and el.curve is not None:
                out.append(_curve_series(el.label or "turbine", i, el.curve, Q, 1.0, 1, kind="turbine"))
            else:
                out.append(CurveSeries(el.label or "turbine", i, Q, y, kind="turbine"))
    return out


def efficiency_curves(line: Line, Q: np.ndarray) -> list[CurveSeries]:
    """Each pump's efficiency [-] against flow where an efficiency curve was typed (affinity: eta(Q) = eta1(Q/n))."""
    return [_curve_series(group_name(el), i, el.efficiency_curve, Q, el.speed_ratio, 0, 0.0, 1.0,
                          flow_units=el.in_parallel)
            for i, el in enumerate(line.elements) if isinstance(el, Pump) and el.efficiency_curve is not None]


def npsh_required_curves(line: Line, Q: np.ndarray) -> list[CurveSeries]:
    """Each pump's NPSH required [m] against flow where it was typed (affinity: n^2 NPSHR1(Q/n))."""
    return [_curve_series(group_name(el), i, el.npshr_curve, Q, el.speed_ratio, 2, 0.0, None,
                          flow_units=el.in_parallel)
            for i, el in enumerate(line.elements) if isinstance(el, Pump) and el.npshr_curve is not None]


def npsh_available(line: Line, i: int, Q: np.ndarray) -> np.ndarray:
    """NPSH available at the inlet of element ``i`` against flow [m].

    NPSHA = (p_abs - p_vap)/(rho g) + V^2/2g at the inlet = EGL_inlet - z_inlet + (p_atm - p_vap)/(rho g),
    with EGL_inlet(Q) = H_start(Q) - sum of the heads of the elements before it (as the grade lines
    carry it) and z_inlet the elevation there. The same value as `calc.review.machines.npsh_available`
    at an operating point (ANSI/HI 9.6.1 definition).
    """
    fluid = line.fluid
    rho = line.liquid.rho
    H = line.start.static_head(rho) + line.start.velocity_head_coefficient() * Q * Q
    z = line.start.pipe_elevation
    with np.errstate(all="ignore"):
        for el in line.elements[:i]:
            H = H - np.asarray(el.head_array(Q, fluid), dtype=float)
            if isinstance(el, PipeRun):
                z = el.end_elevation
    return H - z + (line.p_atm - line.liquid.p_vap) / (rho * G)


def vapour_head(line: Line) -> float:
    """Pressure head at which the liquid boils, as a gauge head [m]: (p_vap - p_atm)/(rho g), negative."""
    return (line.liquid.p_vap - line.p_atm) / (line.liquid.rho * G)


def rating_lines(line: Line, profile: list[dict]) -> list[tuple[str, list[float], list[float]]]:
    """For each pipe run with a pressure rating: (label, chainages, z + p_rating/(rho g)) along it [m]:
    the highest the HGL may reach there."""
    out = []
    rg = line.liquid.rho * G
    for i, el in enumerate(line.elements):
        if isinstance(el, PipeRun) and el.rating:
            st = [s for s in profile if s["element"] == i]
            if st:
                out.append((el.label or f"run {i + 1}", [s["chainage"] for s in st],
                            [s["elevation"] + el.rating / rg for s in st]))
    return out


def turbine_power(line: Line, i: int, Q: np.ndarray) -> np.ndarray:
    """Shaft power the line can give turbine ``i`` at each flow if it takes all the head left [W]."""
    el = line.elements[i]
    with np.errstate(all="ignore"):
        left = residual_array(line, Q, skip=i)
    return el.eta(Q) * line.liquid.rho * G * Q * left
