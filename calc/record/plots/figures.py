"""The plots of a solved sheet, in the sheet's units: one code for the sheet page, its SVG downloads and the record.

- ``profile``: grade lines along the chainage at the design point (HGL, EGL, pipe centreline, the
  vapour-pressure line, pipe ratings as heads), machines and valves tagged where they sit.
- ``curves``: head against flow: the system curve of every case, each machine's curve (typed points
  marked, dashed past them), the operating points.
- ``efficiency``: each pump's efficiency against flow, with its best-efficiency range.
- ``npsh``: each pump's NPSH required against the NPSH available at its inlet.
- ``power``: the shaft power the line can give each turbine.

Each figure is a function of data (`head_flow_plot` takes a list of named system curves, one per
operating case); the ``*_plot(analysis, system)`` functions gather that data from an analysis.
The transient figures (`calc.record.plots.transient`: envelope along the chainage, histories in time)
go into `all_plots` right after the profile.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from calc.model.elements import Pump
from calc.record.plots import series as S
from calc.record.plots.axes import (
    COLOURS,
    DASH_EXTRAPOLATED,
    MACHINE_COLOURS,
    SYSTEM_COLOURS,
    SYSTEM_DASHES,
    WIDTH,
    Chart,
    chart_width,
    esc,
    fit_axis,
    short,
)
from calc.units import fmt, to_display
from calc.water import G

LABEL_MAX = 32
TAGS = {"turbine": "T", "pump": "P", "valve": "V"}


@dataclass
class Plot:
    """One figure: a key (its anchor and file name), a title, a caption in words, and the SVG text."""

    key: str
    title: str
    caption: str
    svg: str
    width: int = 0
    height: int = 0

    def file(self) -> str:
        """The figure as an SVG file of its own: with its size, title and caption, for downloading."""
        head = (f'<svg xmlns="http://www.w3.org/2000/svg" width="{self.width}" height="{self.height}" ')
        body = self.svg.replace('<svg xmlns="http://www.w3.org/2000/svg" ', head, 1)
        body = body.replace("</title>", f"</title><desc>{esc(self.caption)}</desc>", 1)
        return '<?xml version="1.0" encoding="UTF-8"?>\n' + body + "\n"


def _plot(key: str, title: str, caption: str, chart: Chart) -> Plot:
    svg = chart.svg()
    return Plot(key, title, caption, svg, chart.width, chart.height)


class _Units:
    """Display factors and unit labels of a unit system."""

    def __init__(self, system: str):
        self.system = system
        self.kq, self.q = to_display(1.0, "flow", system)
        self.kh, self.h = to_display(1.0, "head", system)
        self.kl, self.l = to_display(1.0, "length", system)
        self.kp, self.p = to_display(1.0, "power", system)
        self.kpr, self.pr = to_display(1.0, "pressure", system)

    def flow(self, Q: float) -> str:
        return f"{_num(Q * self.kq)} {self.q}"

    def head(self, H: float) -> str:
        return f"{_num(H * self.kh)} {self.h}"

    def length(self, x: float) -> str:
        return f"{_num(x * self.kl)} {self.l}"

    def power(self, P: float) -> str:
        return f"{_num(P * self.kp)} {self.p}"

    def pressure(self, p: float) -> str:
        return f"{_num(p * self.kpr)} {self.pr}"


def _num(v: float) -> str:
    """A value for a hover text: 4 significant figures, and nothing left of round-off near zero."""
    return fmt(0.0 if abs(v) < 1e-9 else v, 4)


def _name(label: str, kind: str) -> str:
    return short(label or kind, LABEL_MAX)


def _range(values, cap: float | None = None, low_cap: float | None = None) -> tuple[float, float]:
    """The finite span of arrays and numbers, leaving out values past the caps."""
    arr = np.concatenate([np.ravel(np.asarray(v, dtype=float)) for v in values]) if values else np.zeros(1)
    arr = arr[np.isfinite(arr)]
    if cap is not None:
        arr = arr[arr <= cap]
    if low_cap is not None:
        arr = arr[arr >= low_cap]
    return (float(arr.min()), float(arr.max())) if arr.size else (0.0, 1.0)


def _flow_axis(analysis, u: _Units):
    """The flow axis shared by every plot against flow, and the flows the curves are drawn through [m3/s]."""
    axis = fit_axis(0.0, S.flow_top(analysis) * u.kq, f"Flow [{u.q}]", free_end=True)
    return axis, S.flows(axis.hi / u.kq)


def _draw_curve(chart: Chart, s: S.CurveSeries, colour: str, u: _Units, kx: float, ky: float, name: str,
                unit: str, what: str) -> None:
    """A machine curve: solid over its typed flows, dashed past them, the typed points as open markers."""
    x = s.Q * kx
    y = s.y * ky
    if s.typed_range is None:
        chart.line(x, y, colour, 2.2, title=f"{name}: {what}")
        chart.key(f"{name}: {what}", colour)
        return
    lo, hi = s.typed_range
    eps = 1e-12 * max(hi, 1e-12)
    inside = (s.Q >= lo - eps) & (s.Q <= hi + eps)
    chart.line(x, np.where(inside, y, np.nan), colour, 2.2, title=f"{name}: {what} (through the typed points)")
    chart.key(f"{name}: {what}", colour)
    edge = (np.abs(s.Q - lo) <= eps) | (np.abs(s.Q - hi) <= eps)
    if (~inside).any():
        chart.line(x, np.where(~inside | edge, y, np.nan), colour, 1.8, DASH_EXTRAPOLATED,
                   title=f"{name}: past the typed points (extrapolated)", cls="series extrapolated")
        chart.key(f"{name}: past the typed points (extrapolated)", colour, DASH_EXTRAPOLATED)
    for q, v in s.typed:
        chart.marker(q * kx, v * ky, colour, "ring", f"{name}: typed point {u.flow(q)}, {_num(v * ky)} {unit}",
                     cls="typed", r=4.0)


# ----------------------------------------------------------------------------- along the chainage

def chainage_chart(analysis, u: _Units, ys: list, title: str, y_title: str) -> tuple[Chart, list[dict]]:
    """A chart over the line's chainage at the design point: the axis from 0 to the line's length, the
    y-axis fitted to ``ys`` (head values [m], with the centreline's), the pipe centreline, and a tag for
    each machine and valve where it sits. Returns the chart and the design point's stations."""
    p = analysis.solution.design
    st = p["profile"]
    ch = np.array([s["chainage"] for s in st]) * u.kl
    z = np.array([s["elevation"] for s in st]) * u.kh
    lo, hi = _range([z] + [np.asarray(v) * u.kh for v in ys])
    chart = Chart(fit_axis(0.0, float(ch.max()) or 1.0, f"Chainage along the line [{u.l}]", most=10),
                  fit_axis(lo, hi, y_title, pad=0.04), title)
    chart.line(ch, z, COLOURS["pipe"], 3.0, title="Pipe centreline (profile as typed)", cls="series pipe")
    chart.key("Pipe centreline", COLOURS["pipe"])
    counts: dict[str, int] = {}
    for i, el in enumerate(analysis.line.elements):
        if el.kind == "pipe":
            continue
        at = [s for s in st if s["element"] == i]
        if not at:
            continue
        letter = TAGS.get(el.kind, "E")
        counts[letter] = counts.get(letter, 0) + 1
        tag = f"{letter}{counts[letter]}"
        chart.tag(at[0]["chainage"] * u.kl, tag, f"{tag}: {el.label or el.kind} at chainage {u.length(at[0]['chainage'])}",
                  at[0]["elevation"] * u.kh)
        chart.key(f"{tag}: {_name(el.label, el.kind)}", "#000000", "2 3", order=1)
    return chart, st


def profile_plot(analysis, system: str = "SI") -> Plot | None:
    """Pipe centreline, HGL and EGL along the chainage at the design point, with the vapour-pressure line,
    pipe ratings as heads, the lowest and highest pressure, machines and valves tagged."""
    sol = analysis.solution
    if sol is None or sol.design is None:
        return None
    line = analysis.line
    u = _Units(system)
    p = sol.design
    st = p["profile"]
    hgl = np.array([s["hgl"] for s in st])
    egl = np.array([s["egl"] for s in st])
    z = np.array([s["elevation"] for s in st])
    vapour = z + S.vapour_head(line)
    core = _range([z, hgl, egl, vapour])
    ratings = S.rating_lines(line, st)
    # A rating far above the grade lines would squash them: it may widen the axis by a quarter at most.
    room = core[1] + 0.25 * (core[1] - core[0])
    shown_ratings = [max(r[2]) for r in ratings if max(r[2]) <= room]
    chart, st = chainage_chart(analysis, u, [hgl, egl, vapour, *shown_ratings],
                               "Grade lines along the chainage at the design point", f"Elevation and head [{u.h}]")
    ch = np.array([s["chainage"] for s in st]) * u.kl
    chart.line(ch, vapour * u.kh, COLOURS["vapour"], 1.5, "2 3", title="Vapour-pressure line: the HGL at which the water boils",
               cls="series vapour")
    chart.key("Vapour pressure line (water boils)", COLOURS["vapour"], "2 3")
    for n, (label, chs, heads) in enumerate(ratings):
        chart.line(np.array(chs) * u.kl, np.array(heads) * u.kh, COLOURS["rating"], 1.6, "12 4 3 4",
                   title=f"{label}: pressure rating as head (z + p/ρg)", cls="series rating")
    if ratings:
        above = ("" if len(shown_ratings) == len(ratings) else ": above the plot" if not shown_ratings
                 else " (higher ones above the plot)")
        chart.key(f"Rating as head z + p/ρg{above}", COLOURS["rating"], "12 4 3 4")
    chart.line(ch, hgl * u.kh, COLOURS["hgl"], 2.4, title="Hydraulic grade line (HGL)", cls="series hgl")
    chart.line(ch, egl * u.kh, COLOURS["egl"], 1.8, "9 4", title="Energy grade line (EGL)", cls="series egl")
    chart.key("HGL", COLOURS["hgl"])
    chart.key("EGL", COLOURS["egl"], "9 4")
    low = min(st, key=lambda s: s["pressure_head"])
    high = max(st, key=lambda s: s["pressure_head"])
    rg = line.liquid.rho * G
    for at, what, shape in ((low, "Lowest", "ring"), (high, "Highest", "square")):
        words = f"{what} pressure, {u.head(at['pressure_head'])} of water ({u.pressure(rg * at['pressure_head'])} gauge)"
        chart.marker(at["chainage"] * u.kl, at["hgl"] * u.kh, COLOURS["hgl"], shape,
                     f"{words} at chainage {u.length(at['chainage'])}", cls=f"point {what.lower()}",
                     r=5.0 if shape == "ring" else 4.5)
        chart.key(f"{what} pressure {u.head(at['pressure_head'])}", COLOURS["hgl"], kind=shape)
    title = "Grade lines along the chainage at the design point"
    caption = (f"Pipe centreline, hydraulic and energy grade lines (HGL, EGL) at Q = {u.flow(p['Q'])}. The gap "
               "from the pipe up to the HGL is the pressure head; where the HGL meets the vapour line the water "
               "boils. Machines and valves are tagged where they sit.")
    plot = _plot("profile", title, caption, chart)
    if chart.dropped_tags:
        plot.caption += f" Tags left out for want of room: {', '.join(chart.dropped_tags)} (named in the legend)."
    return plot


# ----------------------------------------------------------------------------- against flow

def head_flow_plot(systems: list[S.SystemCurve], machines: list[S.CurveSeries], u: _Units, axis, sign: float,
                   title: str = "Head against flow: system and machine curves") -> Chart:
    """Head against flow: each named system curve (one per operating case) with its operating points, each
    machine's curve (typed points marked, dashed past them) and, for several machines, their sum."""
    kx, ky = u.kq, u.kh
    refs = [np.abs(s.H[np.isfinite(s.H)]).max() for s in systems if np.isfinite(s.H).any()]
    refs += [abs(m.y) for s in systems for m in s.points]
    refs += [abs(v) for m in machines for _, v in m.typed]
    cap = 1.5 * max(refs) * ky if refs and max(refs) > 0 else None
    lo, hi = _range([s.H * ky for s in systems] + [m.y * ky for m in machines]
                    + [np.array([m.y for s in systems for m in s.points]) * ky],
                    cap, -cap if cap else None)
    chart = Chart(axis, fit_axis(lo, hi, f"Head [{u.h}]", zero=True, pad=0.04), title)
    what = ("head the line needs" if sign < 0 else "head left for the turbine" if sign > 0
            else "losses + change in velocity head")  # Σ h + V²/2g out − V²/2g in, against the static head
    for n, s in enumerate(systems):
        colour, dash = SYSTEM_COLOURS[n % len(SYSTEM_COLOURS)], SYSTEM_DASHES[n % len(SYSTEM_DASHES)]
        label = f"{s.name}: {what}"
        chart.line(s.Q * kx, s.H * ky, colour, 2.4, dash, title=label, cls="series system")
        chart.key(label, colour, dash)
    if sign == 0 and systems:
        s = systems[0]
        static = s.points[0].y if s.points else None
        if static is None:
            static = float(s.H[0]) if s.H.size else 0.0
        chart.line(s.Q * kx, np.full_like(s.Q, static) * ky, COLOURS["set"], 1.6, "6 4", title="Static head difference")
        chart.key("Static head difference", COLOURS["set"], "6 4")
    for n, m in enumerate(machines):
        colour = MACHINE_COLOURS[n % len(MACHINE_COLOURS)]
        el_what = "head added" if m.kind == "pump" else "head taken"
        _draw_curve(chart, m, colour, u, kx, ky, _name(m.name, m.kind), u.h, el_what)
    if any(m.typed for m in machines):
        chart.key("Typed curve points", MACHINE_COLOURS[0], kind="ring")
    counted = [m for m in machines if m.in_total]
    if len(counted) > 1:
        total = sum(m.y for m in counted)
        chart.line(machines[0].Q * kx, total * ky, COLOURS["total"], 1.6, "7 4",
                   title="All machines together")
        chart.key("All machines together", COLOURS["total"], "7 4")
    many = len(systems) > 1
    for s in systems:
        for m in s.points:
            case = f"{s.name}, point " if many else "Point "
            chart.marker(m.Q * kx, m.y * ky, COLOURS["point"], "dot",
                         f"{case}{m.label}: {u.flow(m.Q)}, {u.head(m.y)}", m.label if not many else f"{s.name} {m.label}")
    if any(s.points for s in systems):
        chart.key("Operating points", COLOURS["point"], kind="dot")
    return chart


def case_machine_curves(analysis, Q) -> list[S.CurveSeries]:
    """The base's machine curves, and each case's where its machines differ (other units running, another
    speed), named by the case, so that every case's operating point lies on a curve drawn."""
    out = S.machine_curves(analysis.line, Q)
    for case in (getattr(analysis, "cases", None) or [])[1:]:
        for c in S.machine_curves(case.line, Q):
            if not any(o.index == c.index and o.y.shape == c.y.shape and np.allclose(o.y, c.y, rtol=1e-12,
                                                                                     atol=1e-12) for o in out):
                c.name = f"{c.name} ({case.name})"
                c.in_total = False
                out.append(c)
    return out


def curves_plot(analysis, system: str = "SI") -> Plot | None:
    """System curve(s), each machine's curve, their sum, and every operating point."""
    sol = analysis.solution
    if sol is None:
        return None
    u = _Units(system)
    axis, Q = _flow_axis(analysis, u)
    line = analysis.line
    systems = S.system_curves(analysis, Q)
    chart = head_flow_plot(systems, case_machine_curves(analysis, Q), u, axis, S.sign_of(line))
    pts = "; ".join(f"{m.label}: Q = {u.flow(m.Q)}" for s in systems for m in s.points) or "none"
    caption = ("The line runs where the system curve and the machines' curves cross; typed points are marked, a "
               f"curve carried past them is dashed. Operating points: {pts}.")
    return _plot("curves", "Head against flow: system and machine curves", caption, chart)


def _duty(sol, i: int, key: str) -> list[tuple[int, dict, float]]:
    out = []
    for k, p in enumerate(sol.points):
        v = p["elements"][i].get(key)
        if v is not None and math.isfinite(v):
            out.append((k, p, v))
    return out


def _points(analysis, i: int, key: str, with_line: bool = False) -> list[tuple]:
    """The operating points to mark on a machine's curve: each operating point of a sheet without cases
    ((label, point, value)), or each case's design point named by the case, for the cases whose machine
    ``i`` runs as the base's does (the curve drawn is the base's; the others are in the case table)."""
    cases = getattr(analysis, "cases", None) or []
    if len(cases) < 2:
        out = [(S.point_label(k, p), p, v) for k, p, v in _duty(analysis.solution, i, key)]
        return [(*o, analysis.line) for o in out] if with_line else out
    base = analysis.line.elements[i]
    out = []
    for c in cases:
        el, p = c.line.elements[i], c.solution.design
        same = getattr(el, "in_parallel", 1) == getattr(base, "in_parallel", 1) and \
            getattr(el, "speed_ratio", 1.0) == getattr(base, "speed_ratio", 1.0)
        v = p["elements"][i].get(key) if p is not None else None
        if same and v is not None and math.isfinite(v):
            out.append((c.name, p, v, c.line) if with_line else (c.name, p, v))
    return out


def _machine_frame(analysis, system: str):
    """(solution, line, units, flow axis, flows) for a plot against flow; None when nothing was solved."""
    sol = analysis.solution
    if sol is None:
        return None
    u = _Units(system)
    axis, Q = _flow_axis(analysis, u)
    return sol, analysis.line, u, axis, Q


def efficiency_plot(analysis, system: str = "SI") -> Plot | None:
    """Each pump's efficiency against flow where an efficiency curve was typed, its preferred range round the
    best-efficiency flow, and the efficiency at every operating point."""
    frame = _machine_frame(analysis, system)
    if frame is None:
        return None
    sol, line, u, axis, Q = frame
    curves = S.efficiency_curves(line, Q)
    if not curves:
        return None
    settings = analysis.check_settings
    hi = max(max(float(np.nanmax(c.y)) for c in curves), max(v for c in curves for _, v in c.typed))
    chart = Chart(axis, fit_axis(0.0, min(hi, 1.0) * 100.0, "Efficiency [%]", zero=True, pad=0.04),
                  "Pump efficiency against flow")
    for n, c in enumerate(curves):
        pump: Pump = line.elements[c.index]
        colour = MACHINE_COLOURS[n % len(MACHINE_COLOURS)]
        name = _name(c.name, "pump")
        q_bep = pump.best_efficiency_flow()
        if q_bep and settings is not None:
            chart.band(settings.bep_low * q_bep * u.kq, settings.bep_high * q_bep * u.kq, COLOURS["band"],
                       f"{name}: preferred range {settings.bep_low * 100:.0f}-{settings.bep_high * 100:.0f} % of the "
                       f"best-efficiency flow {u.flow(q_bep)}")
            chart.key(f"{name}: preferred range, {settings.bep_low * 100:.0f}-{settings.bep_high * 100:.0f} % of "
                      "best-efficiency flow", COLOURS["band"], kind="band")
        _draw_curve(chart, c, colour, u, u.kq, 100.0, name, "%", "efficiency")
        if q_bep:
            eta = float(np.clip(pump.efficiency_curve(pump.unit_flow(q_bep) / pump.speed_ratio), 0, 1))
            chart.marker(q_bep * u.kq, eta * 100, colour, "square",
                         f"{name}: best efficiency {eta * 100:.1f} % at {u.flow(q_bep)}", "BEP", cls="point bep",
                         priority=1)
        for label, p, eta in _points(analysis, c.index, "efficiency"):
            chart.marker(p["Q"] * u.kq, eta * 100, COLOURS["point"], "dot",
                         f"{name}, point {label}: {u.flow(p['Q'])}, efficiency {eta * 100:.1f} %", label)
    chart.key("Typed curve points", MACHINE_COLOURS[0], kind="ring")
    chart.key("Operating points", COLOURS["point"], kind="dot")
    caption = ("Efficiency of each pump through its typed points (dashed past them), the best-efficiency point (BEP) "
               "where the data show it, the preferred operating range round it, and the efficiency at each operating point.")
    return _plot("efficiency", "Pump efficiency against flow", caption, chart)


def npsh_plot(analysis, system: str = "SI") -> Plot | None:
    """For each pump with NPSH required typed: NPSH required and NPSH available at its inlet against flow,
    the NPSH available the margin asks for, and both at every operating point."""
    frame = _machine_frame(analysis, system)
    if frame is None:
        return None
    sol, line, u, axis, Q = frame
    required = S.npsh_required_curves(line, Q)
    if not required:
        return None
    settings = analysis.check_settings
    avail = {c.index: S.npsh_available(line, c.index, Q) for c in required}
    ref = max([float(np.nanmax(a)) for a in avail.values()] + [v for c in required for _, v in c.typed])
    cap = 1.5 * ref
    lo, hi = _range([a for a in avail.values()] + [c.y for c in required], cap, -0.5 * ref)
    chart = Chart(axis, fit_axis(lo * u.kh, hi * u.kh, f"NPSH [{u.h}]", zero=True, pad=0.04),
                  "NPSH required against NPSH available")
    for n, c in enumerate(required):
        colour = MACHINE_COLOURS[n % len(MACHINE_COLOURS)]
        name = _name(c.name, "pump")
        a = avail[c.index]
        available = SYSTEM_COLOURS[n % len(SYSTEM_COLOURS)]
        chart.line(Q * u.kq, a * u.kh, available, 2.4, title=f"{name}: NPSH available at the inlet",
                   cls="series npsha")
        chart.key(f"{name}: NPSH available at the inlet", available)
        if settings is not None:
            need = np.maximum(settings.npsh_margin_ratio * c.y, c.y + settings.npsh_margin_min)
            chart.line(c.Q * u.kq, need * u.kh, COLOURS["margin"], 1.4, "3 3",
                       title=f"{name}: NPSH available the margin asks for", cls="series margin")
            chart.key(f"{name}: margin, NPSHA ≥ max({settings.npsh_margin_ratio:g} NPSHR, "
                      f"NPSHR + {settings.npsh_margin_min * u.kh:.3g} {u.h})", COLOURS["margin"], "3 3")
        _draw_curve(chart, c, colour, u, u.kq, u.kh, name, u.h, "NPSH required")
        for label, p, r, case_line in _points(analysis, c.index, "npsh_required", with_line=True):
            na = float(S.npsh_available(case_line, c.index, np.array([p["Q"]]))[0])
            chart.marker(p["Q"] * u.kq, na * u.kh, COLOURS["point"], "dot",
                         f"{name}, point {label}: NPSH available {u.head(na)} at {u.flow(p['Q'])}", label)
            chart.marker(p["Q"] * u.kq, r * u.kh, COLOURS["point"], "square",
                         f"{name}, point {label}: NPSH required {u.head(r)} at {u.flow(p['Q'])}", cls="point npshr")
    chart.key("Typed curve points", MACHINE_COLOURS[0], kind="ring")
    chart.key("Operating points: NPSH available", COLOURS["point"], kind="dot")
    chart.key("Operating points: NPSH required", COLOURS["point"], kind="square")
    caption = ("NPSH required of each pump through its typed points (dashed past them) against the NPSH available at its "
               "inlet, (p_abs - p_vap)/ρg + V²/2g, which falls as the suction losses grow with flow. The pump needs the "
               "available curve above the margin line at its operating point.")
    return _plot("npsh", "NPSH required against NPSH available", caption, chart)


def power_plot(analysis, system: str = "SI") -> Plot | None:
    """For each turbine: the shaft power the line can give it against flow, the maximum and the operating points."""
    sol = analysis.solution
    if sol is None:
        return None
    line = analysis.line
    turbines = [m for m in sol.machines if m["kind"] == "turbine"]
    if not turbines:
        return None
    u = _Units(system)
    axis, Q = _flow_axis(analysis, u)
    curves = []
    for m in turbines:
        P = S.turbine_power(line, m["index"], Q)
        curves.append((m, line.elements[m["index"]], P))
    values = [P for _, _, P in curves] + [[el.power for _, el, _ in curves if el.mode == "power"]]
    values += [[m["power_max"] for m, _, _ in curves if m.get("power_max")]]
    _, top = _range(values)
    chart = Chart(axis, fit_axis(0.0, max(top, 0.0) * u.kp or 1.0, f"Shaft power [{u.p}]", zero=True, pad=0.05),
                  "Turbine shaft power against flow")
    for n, (m, el, P) in enumerate(curves):
        colour = MACHINE_COLOURS[n % len(MACHINE_COLOURS)]
        name = _name(el.label, "turbine")
        chart.line(Q * u.kq, P * u.kp, colour, 2.4, title=f"{name}: power the line can give")
        chart.key(f"{name}: power available", colour)
        if el.mode == "power":
            chart.line(Q * u.kq, np.full_like(Q, el.power) * u.kp, COLOURS["set"], 1.6, "6 4", title=f"{name}: set power")
            chart.key(f"{name}: set power", COLOURS["set"], "6 4")
        if m.get("Q_at_max"):
            chart.marker(m["Q_at_max"] * u.kq, m["power_max"] * u.kp, colour, "dot",
                         f"{name}: largest power {u.power(m['power_max'])} at {u.flow(m['Q_at_max'])}", "max")
        for k, p in enumerate(sol.points):
            d = p["elements"][m["index"]]
            chart.marker(p["Q"] * u.kq, d["power_shaft"] * u.kp, COLOURS["point"], "dot",
                         f"{name}, point {S.point_label(k, p)}: {u.flow(p['Q'])}, {u.power(d['power_shaft'])}",
                         str(k + 1))
    chart.key("Operating points; max = largest power", COLOURS["point"], kind="dot")
    m0 = turbines[0]
    best = (f"The largest power is {u.power(m0['power_max'])} at {u.flow(m0['Q_at_max'])}."
            if m0.get("Q_at_max") else "")
    caption = ("Shaft power the line can give each turbine at each flow, if the turbine takes all the head "
               f"left after the line's losses. {best}")
    return _plot("power", "Turbine shaft power against flow", caption, chart)


#: Every plot in the order the page and the record show them (the transient envelope goes after the profile).
FIGURES = (profile_plot, curves_plot, efficiency_plot, npsh_plot, power_plot)
KEYS = ("profile", "curves", "efficiency", "npsh", "power")


def all_plots(analysis, system: str = "SI", width: int | None = None, plot_height: int | None = None) -> list[Plot]:
    """Every plot that applies to this sheet, in the order the page and the record show them; ``width`` and
    ``plot_height`` the charts' viewBox width and plot-area height (the printed record draws them smaller,
    two to a row)."""
    if analysis is None or analysis.solution is None:
        return []
    from calc.record.plots.transient import transient_plots

    system = system if system in ("SI", "US") else "SI"
    with chart_width(width or WIDTH, plot_height):
        out = [p for p in (f(analysis, system) for f in FIGURES) if p is not None]
        # the transient figures come right after the grade lines they extend
        at = 1 if out and out[0].key == "profile" else 0
        return out[:at] + transient_plots(analysis, system) + out[at:]


def plot_named(analysis, key: str, system: str = "SI") -> Plot | None:
    """One plot by its key, or None when the sheet has no such plot."""
    if analysis is None or analysis.solution is None:
        return None
    system = system if system in ("SI", "US") else "SI"
    if key not in KEYS:
        from calc.record.plots.transient import transient_plots

        return next((p for p in transient_plots(analysis, system) if p.key == key), None)
    return FIGURES[KEYS.index(key)](analysis, system)


