"""The record's plots as plain SVG text: grade lines along the chainage, and head (and turbine power) against flow.

Hand-written SVG rather than a plotting library: no extra run-time dependency, a few
milliseconds per plot (the PDF has a time budget), text that stays text in the DejaVu fonts
the record names, labels escaped here and nowhere else, and only the plain shapes (lines,
polylines, circles, text) that every SVG renderer, WeasyPrint's included, draws alike.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from calc.model.elements import Pump, Turbine
from calc.steady.series import residual_array
from calc.units import to_display
from calc.water import G

W, H = 720, 380  # viewBox size [px]
LEFT, RIGHT, TOP = 70, 20, 20
FONT = "DejaVu Sans, Liberation Sans, sans-serif"
COLOURS = {"pipe": "#444444", "hgl": "#1f5fbf", "egl": "#c0392b", "system": "#1f5fbf", "machine": "#c0392b",
           "total": "#7d3c98", "power": "#1e8449", "set": "#7f8c8d", "point": "#000000", "grid": "#dddddd"}
MACHINE_COLOURS = ("#c0392b", "#d68910", "#7d3c98", "#16a085", "#2c3e50")
LABEL_MAX = 32


@dataclass
class Plot:
    """One figure: a key for anchors, a title, a caption in words, and the SVG text."""

    key: str
    title: str
    caption: str
    svg: str


def esc(text: object) -> str:
    """Text made safe inside SVG markup and attributes.

    >>> esc('<script>alert("x") & co</script>')
    '&lt;script&gt;alert(&quot;x&quot;) &amp; co&lt;/script&gt;'
    """
    return (str(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
            .replace('"', "&quot;").replace("'", "&#39;"))


def short(text: str, n: int = LABEL_MAX) -> str:
    """A label cut to ``n`` characters with an ellipsis (SVG text does not wrap; tables give it whole)."""
    text = " ".join(str(text).split())
    return text if len(text) <= n else text[: n - 1] + "…"


def nice_ticks(lo: float, hi: float, n: int = 6) -> list[float]:
    """Round tick values covering [lo, hi], about ``n`` of them, on steps of 1, 2, 2.5 or 5 × 10^k.

    >>> nice_ticks(0.0, 118.9)
    [0.0, 20.0, 40.0, 60.0, 80.0, 100.0, 120.0]
    >>> nice_ticks(317.2, 412.0)
    [300.0, 320.0, 340.0, 360.0, 380.0, 400.0, 420.0]
    """
    if not (math.isfinite(lo) and math.isfinite(hi)):
        lo, hi = 0.0, 1.0
    if hi - lo < 1e-12 * max(1.0, abs(hi)):
        pad = abs(hi) * 0.1 or 1.0
        lo, hi = lo - pad, hi + pad
    raw = (hi - lo) / n
    mag = 10.0 ** math.floor(math.log10(raw))
    for m in (1.0, 2.0, 2.5, 5.0, 10.0):
        step = m * mag
        if (hi - lo) / step <= n:
            break
    start = math.floor(lo / step + 1e-9) * step
    ticks = []
    k = 0
    while True:
        t = start + k * step
        ticks.append(round(t, 12))
        if t >= hi - 1e-9 * step:
            break
        k += 1
    return ticks


def tick_text(t: float, step: float) -> str:
    decimals = max(0, -math.floor(math.log10(step) + 1e-9)) if step > 0 else 0
    if step * 10 ** decimals % 1 > 1e-6:  # steps of 2.5 need one more place
        decimals += 1
    text = f"{t:.{decimals}f}"
    return "0" if text.strip("-0.") == "" else text


class Frame:
    """Maps data to the viewBox and draws axes, grid, ticks and labels."""

    def __init__(self, x_ticks, y_ticks, x_label, y_label, height=H, bottom=70):
        self.xt, self.yt = x_ticks, y_ticks
        self.x0, self.x1 = x_ticks[0], x_ticks[-1]
        self.y0, self.y1 = y_ticks[0], y_ticks[-1]
        self.height = height
        self.px0, self.px1 = LEFT, W - RIGHT
        self.py0, self.py1 = height - bottom, TOP
        self.x_label, self.y_label = x_label, y_label
        self.parts: list[str] = []

    def X(self, x: float) -> float:
        return self.px0 + (x - self.x0) / (self.x1 - self.x0) * (self.px1 - self.px0)

    def Y(self, y: float) -> float:
        return self.py0 + (y - self.y0) / (self.y1 - self.y0) * (self.py1 - self.py0)

    def axes(self) -> None:
        p = self.parts
        xs = self.xt[1] - self.xt[0] if len(self.xt) > 1 else 1.0
        ys = self.yt[1] - self.yt[0] if len(self.yt) > 1 else 1.0
        for t in self.xt:
            x = self.X(t)
            p.append(f'<line x1="{x:.1f}" y1="{self.py0:.1f}" x2="{x:.1f}" y2="{self.py1:.1f}" stroke="{COLOURS["grid"]}" stroke-width="0.8"/>')
            p.append(f'<text x="{x:.1f}" y="{self.py0 + 16:.1f}" text-anchor="middle">{tick_text(t, xs)}</text>')
        for t in self.yt:
            y = self.Y(t)
            p.append(f'<line x1="{self.px0:.1f}" y1="{y:.1f}" x2="{self.px1:.1f}" y2="{y:.1f}" stroke="{COLOURS["grid"]}" stroke-width="0.8"/>')
            p.append(f'<text x="{self.px0 - 6:.1f}" y="{y + 4:.1f}" text-anchor="end">{tick_text(t, ys)}</text>')
        p.append(f'<rect x="{self.px0}" y="{self.py1}" width="{self.px1 - self.px0}" height="{self.py0 - self.py1}" '
                 'fill="none" stroke="#000000" stroke-width="1"/>')
        p.append(f'<text x="{(self.px0 + self.px1) / 2:.1f}" y="{self.py0 + 36:.1f}" text-anchor="middle">{esc(self.x_label)}</text>')
        cy = (self.py0 + self.py1) / 2
        p.append(f'<text x="16" y="{cy:.1f}" text-anchor="middle" transform="rotate(-90 16 {cy:.1f})">{esc(self.y_label)}</text>')

    def line(self, xs, ys, colour: str, width: float = 2.0, dash: str | None = None) -> None:
        """A polyline clipped to the frame: pieces outside the y range are cut at its edges."""
        for seg in clip_segments(list(xs), list(ys), self.y0, self.y1):
            pts = " ".join(f"{self.X(x):.1f},{self.Y(y):.1f}" for x, y in seg)
            d = f' stroke-dasharray="{dash}"' if dash else ""
            self.parts.append(f'<polyline points="{pts}" fill="none" stroke="{colour}" stroke-width="{width}"'
                              f' stroke-linejoin="round"{d}/>')

    def point(self, x: float, y: float, label: str, colour: str = COLOURS["point"]) -> None:
        if not (self.x0 <= x <= self.x1 and self.y0 <= y <= self.y1):
            return
        cx, cy = self.X(x), self.Y(y)
        self.parts.append(f'<circle cx="{cx:.1f}" cy="{cy:.1f}" r="4.5" fill="{colour}" stroke="#ffffff" stroke-width="1"/>')
        if label:
            self.parts.append(f'<text x="{cx + 7:.1f}" y="{cy - 7:.1f}" font-weight="bold">{esc(label)}</text>')

    def legend(self, items: list[tuple[str, str, str | None]], kind_of: dict | None = None) -> None:
        """Legend entries (label, colour, dash) in rows under the x-axis label."""
        x, y = self.px0, self.py0 + 54
        for label, colour, dash in items:
            text = esc(short(label, 44))
            w = 34 + 6.6 * len(short(label, 44)) + 16
            if x + w > self.px1 and x > self.px0:
                x, y = self.px0, y + 16
            if dash == "dot":
                self.parts.append(f'<circle cx="{x + 12:.1f}" cy="{y - 4:.1f}" r="4" fill="{colour}"/>')
            else:
                d = f' stroke-dasharray="{dash}"' if dash else ""
                self.parts.append(f'<line x1="{x:.1f}" y1="{y - 4:.1f}" x2="{x + 26:.1f}" y2="{y - 4:.1f}" '
                                  f'stroke="{colour}" stroke-width="2.2"{d}/>')
            self.parts.append(f'<text x="{x + 32:.1f}" y="{y:.1f}">{text}</text>')
            x += w

    def svg(self, title: str, legend_rows: int = 1) -> str:
        height = self.height + 16 * (legend_rows - 1)
        return (f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {W} {height}" class="plot" role="img" '
                f'font-family="{FONT}" font-size="12" fill="#000000"><title>{esc(title)}</title>'
                + "".join(self.parts) + "</svg>")


def legend_rows(items: list[tuple[str, str, str | None]]) -> int:
    x, rows = LEFT, 1
    for label, _, _ in items:
        w = 34 + 6.6 * len(short(label, 44)) + 16
        if x + w > W - RIGHT and x > LEFT:
            x, rows = LEFT, rows + 1
        x += w
    return rows


def clip_segments(xs: list[float], ys: list[float], lo: float, hi: float) -> list[list[tuple[float, float]]]:
    """Split a polyline into the pieces inside lo <= y <= hi, cutting each crossing at the edge.

    >>> clip_segments([0, 1, 2], [0, 10, 0], -1.0, 5.0)
    [[(0, 0), (0.5, 5.0)], [(1.5, 5.0), (2, 0)]]
    """
    segs: list[list[tuple[float, float]]] = []
    cur: list[tuple[float, float]] = []
    prev = None
    for x, y in zip(xs, ys):
        if y is None or not math.isfinite(y):
            if cur:
                segs.append(cur)
            cur, prev = [], None
            continue
        if prev is not None:
            px, py = prev
            cuts = sorted(((edge - py) / (y - py), edge) for edge in (lo, hi) if (py - edge) * (y - edge) < 0)
            for t, edge in cuts:
                pt = (px + t * (x - px), edge)
                if cur:  # leaving the band
                    cur.append(pt)
                    segs.append(cur)
                    cur = []
                else:  # entering it
                    cur = [pt]
        if lo <= y <= hi:
            cur.append((x, y))
        elif cur:
            segs.append(cur)
            cur = []
        prev = (x, y)
    if cur:
        segs.append(cur)
    return [s for s in segs if len(s) > 1]


# ----------------------------------------------------------------------------- the plots

def _machine_tag(el) -> str:
    return {"turbine": "T", "pump": "P", "valve": "V"}.get(el.kind, "?")


def profile_plot(analysis, system: str = "SI") -> Plot | None:
    """Pipe centreline, HGL and EGL along the chainage at the design point, machines and valves marked."""
    sol = analysis.solution
    if sol is None or sol.design is None:
        return None
    line = analysis.line
    p = sol.design
    st = p["profile"]
    k_len, u_len = to_display(1.0, "length", system)
    k_head, u_head = to_display(1.0, "head", system)
    ch = [s["chainage"] * k_len for s in st]
    z = [s["elevation"] * k_head for s in st]
    hgl = [s["hgl"] * k_head for s in st]
    egl = [s["egl"] * k_head for s in st]
    ys = [v for v in z + hgl + egl if math.isfinite(v)]
    lo, hi = min(ys), max(ys)
    pad = 0.05 * (hi - lo or 1.0)
    xt = nice_ticks(0.0, max(ch) or 1.0)
    yt = nice_ticks(lo - pad, hi + pad)
    fr = Frame(xt, yt, f"Chainage along the line [{u_len}]", f"Elevation and head [{u_head}]")
    fr.axes()
    fr.line(ch, z, COLOURS["pipe"], 3.0)
    fr.line(ch, hgl, COLOURS["hgl"], 2.0)
    fr.line(ch, egl, COLOURS["egl"], 1.6, "7 4")
    items = [("Pipe centreline", COLOURS["pipe"], None), ("Hydraulic grade line (HGL)", COLOURS["hgl"], None),
             ("Energy grade line (EGL)", COLOURS["egl"], "7 4")]
    counts: dict[str, int] = {}
    stacked: dict[int, int] = {}
    for i, el in enumerate(line.elements):
        if el.kind == "pipe":
            continue
        tag = _machine_tag(el)
        counts[tag] = counts.get(tag, 0) + 1
        name = f"{tag}{counts[tag]}"
        at = [s for s in st if s["element"] == i]
        if not at:
            continue
        x = at[0]["chainage"] * k_len
        top = max(s["egl"] for s in at) * k_head
        bottom = min(min(s["hgl"] for s in at), at[0]["elevation"]) * k_head
        px = fr.X(x)
        # Several items at one chainage (a valve just before a turbine): stack their tags sideways.
        key = round(px)
        shift = 26 * stacked.get(key, 0)
        stacked[key] = stacked.get(key, 0) + 1
        tx = min(px - shift, fr.px1 - 12)
        ty = max(fr.Y(top) - 22, fr.py1 + 2)
        fr.parts.append(f'<line x1="{px:.1f}" y1="{fr.Y(bottom):.1f}" x2="{px:.1f}" y2="{fr.Y(top):.1f}" '
                        'stroke="#000000" stroke-width="1" stroke-dasharray="2 3"/>')
        fr.parts.append(f'<rect x="{tx - 12:.1f}" y="{ty:.1f}" width="24" height="16" fill="#ffffff" '
                        'stroke="#000000" stroke-width="1"/>')
        fr.parts.append(f'<text x="{tx:.1f}" y="{ty + 12:.1f}" text-anchor="middle" font-size="11" '
                        f'font-weight="bold">{name}</text>')
        items.append((f"{name}: {el.label or el.kind}", "#000000", "2 3"))
    low = min(st, key=lambda s: s["pressure_head"])
    fr.point(low["chainage"] * k_len, low["hgl"] * k_head, "", COLOURS["hgl"])
    items.append((f"Lowest pressure head ({low['pressure_head'] * k_head:.3g} {u_head})", COLOURS["hgl"], "dot"))
    rows = legend_rows(items)
    fr.legend(items)
    title = "Grade lines along the chainage at the design point"
    caption = (f"Pipe centreline, hydraulic grade line (HGL) and energy grade line (EGL) at the design point, "
               f"Q = {to_display(p['Q'], 'flow', system)[0]:.4g} {to_display(p['Q'], 'flow', system)[1]}. "
               "The vertical gap between the HGL and the pipe is the pressure head; machines and valves are "
               "marked where they sit.")
    return Plot("profile", title, caption, fr.svg(title, rows))


def _flow_range(analysis) -> float:
    sol = analysis.solution
    line = analysis.line
    cands = [1.3 * max(p["Q"] for p in sol.points)] if sol.points else []
    for m in sol.machines:
        if m.get("Q_at_max"):
            cands.append(1.25 * m["Q_at_max"])
    for el in line.elements:
        if isinstance(el, Pump) and el.curve is not None:
            cands.append(1.1 * el.curve.Q_range[1] * el.speed_ratio)
    if not cands:
        cands.append(sol.log.get("scan", {}).get("Q_max", 1.0) / 100.0)
    return max(cands)


def curves_plot(analysis, system: str = "SI") -> Plot | None:
    """System curve, each machine's curve, their sum, and every operating point."""
    sol = analysis.solution
    if sol is None:
        return None
    line = analysis.line
    fluid = line.fluid
    Qmax = _flow_range(analysis)
    Q = np.linspace(Qmax / 200.0, Qmax, 160)
    with np.errstate(all="ignore"):
        E = residual_array(line, Q)
        heads = {i: np.asarray(el.head_array(Q, fluid), dtype=float) for i, el in enumerate(line.elements)
                 if isinstance(el, (Pump, Turbine))}
    machine_sum = sum(heads.values()) if heads else np.zeros_like(Q)
    available = E + machine_sum  # head left for the machines after the line's losses [m]
    kq, uq = to_display(1.0, "flow", system)
    kh, uh = to_display(1.0, "head", system)
    x = Q * kq
    has_pump = any(isinstance(el, Pump) for el in line.elements)
    has_turbine = any(isinstance(el, Turbine) for el in line.elements)
    series = []  # (label, y array, colour, width, dash)
    if has_pump:
        series.append(("System: head the line needs", -available * kh, COLOURS["system"], 2.2, None))
        sign = -1.0
        point_y = [-(p["head_start"] - p["head_end"] - sum(d["head_change"] for d in p["elements"]
                                                           if d["kind"] not in ("pump", "turbine"))) for p in sol.points]
        y_label = f"Head [{uh}]"
    elif has_turbine:
        series.append(("System: head left for the turbine", available * kh, COLOURS["system"], 2.2, None))
        sign = 1.0
        point_y = [p["head_start"] - p["head_end"] - sum(d["head_change"] for d in p["elements"]
                                                         if d["kind"] not in ("pump", "turbine")) for p in sol.points]
        y_label = f"Head [{uh}]"
    else:
        static = line.start.static_head(line.liquid.rho) - line.end.static_head(line.liquid.rho)
        series.append(("Line losses", (static - available) * kh, COLOURS["system"], 2.2, None))
        series.append(("Static head difference", np.full_like(Q, static * kh), COLOURS["set"], 1.6, "6 4"))
        sign = 0.0
        point_y = [static for _ in sol.points]
        y_label = f"Head [{uh}]"
    typed_points = []  # (x, y, colour) of every typed curve point
    for n, (i, h) in enumerate(heads.items()):
        el = line.elements[i]
        what = "head added" if isinstance(el, Pump) else "head taken"
        colour = MACHINE_COLOURS[n % len(MACHINE_COLOURS)]
        y = sign * h * kh
        curve = getattr(el, "curve", None)
        if curve is None:
            series.append((f"{el.label or el.kind}: {what}", y, colour, 2.0, None))
            continue
        # Solid over the typed flows, dashed where the curve is carried past them.
        n_speed = getattr(el, "speed_ratio", 1.0)
        lo_q, hi_q = curve.Q_range[0] * n_speed, curve.Q_range[1] * n_speed
        inside = (Q >= lo_q) & (Q <= hi_q)
        series.append((f"{el.label or el.kind}: {what}", np.where(inside, y, np.nan), colour, 2.0, None))
        if not inside.all():
            # The dashed part takes one point of the solid part on each side, so the two meet.
            outside = np.convolve((~inside).astype(int), [1, 1, 1], mode="same") > 0
            series.append((f"{el.label or el.kind}: past the typed points (extrapolated)",
                           np.where(outside, y, np.nan), colour, 1.6, "5 4"))
        for q, v in zip(curve.Q, curve.y):
            typed_points.append((q * n_speed * kq, sign * v * n_speed ** 2 * kh, colour))
    if len(heads) > 1:
        series.append(("All machines together", sign * machine_sum * kh, COLOURS["total"], 1.6, "7 4"))
    ys = np.concatenate([s[1][np.isfinite(s[1])] for s in series] + [np.array(point_y) * kh])
    ref = [v for v in (np.abs(series[0][1][np.isfinite(series[0][1])]).max() if series[0][1].size else 1.0,
                       max((abs(v) for v in point_y), default=0.0) * kh) if math.isfinite(v)]
    cap = 1.6 * max(ref) if ref else 1.0
    ys = ys[np.abs(ys) <= cap]
    lo, hi = (float(ys.min()), float(ys.max())) if ys.size else (0.0, 1.0)
    lo, hi = min(lo, 0.0), max(hi, 0.0)
    pad = 0.05 * (hi - lo or 1.0)
    xt = nice_ticks(0.0, float(x[-1]))
    yt = nice_ticks(lo - (pad if lo < 0 else 0.0), hi + pad)
    fr = Frame(xt, yt, f"Flow [{uq}]", y_label)
    fr.axes()
    items = []
    for label, y, colour, width, dash in series:
        fr.line(x, y, colour, width, dash)
        items.append((label, colour, dash))
    for xq, yq, colour in typed_points:
        fr.point(xq, yq, "", colour)
    if typed_points:
        items.append(("Typed curve points", MACHINE_COLOURS[0], "dot"))
    for k, (p, y) in enumerate(zip(sol.points, point_y)):
        fr.point(p["Q"] * kq, y * kh, str(k + 1) + (" (design)" if p.get("is_design") else
                                                     " (cannot occur)" if not p.get("attainable", True) else ""))
    if sol.points:
        items.append(("Operating points", COLOURS["point"], "dot"))
    rows = legend_rows(items)
    fr.legend(items)
    title = "Head against flow: system and machine curves"
    pts = "; ".join(f"{k + 1}: Q = {p['Q'] * kq:.4g} {uq}" for k, p in enumerate(sol.points)) or "none"
    caption = ("The system curve and each machine's curve; the line runs where they cross. "
               f"Operating points: {pts}.")
    return Plot("curves", title, caption, fr.svg(title, rows))


def power_plot(analysis, system: str = "SI") -> Plot | None:
    """For each turbine: the shaft power the line can give it against flow, the maximum and the operating points."""
    sol = analysis.solution
    if sol is None:
        return None
    line = analysis.line
    turbines = [m for m in sol.machines if m["kind"] == "turbine"]
    if not turbines:
        return None
    Qmax = _flow_range(analysis)
    Q = np.linspace(Qmax / 200.0, Qmax, 160)
    kq, uq = to_display(1.0, "flow", system)
    kp, up = to_display(1.0, "power", system)
    series = []
    marks = []
    for n, m in enumerate(turbines):
        i = m["index"]
        el = line.elements[i]
        with np.errstate(all="ignore"):
            A_i = residual_array(line, Q, skip=i)
        P = el.efficiency * line.liquid.rho * G * Q * A_i
        colour = MACHINE_COLOURS[n % len(MACHINE_COLOURS)]
        series.append((f"{el.label or 'turbine'}: power the line can give", P * kp, colour, 2.2, None))
        if el.mode == "power":
            series.append((f"{el.label or 'turbine'}: set power", np.full_like(Q, el.power * kp), COLOURS["set"], 1.6, "6 4"))
        if m.get("Q_at_max"):
            marks.append((m["Q_at_max"] * kq, m["power_max"] * kp, "max", colour))
        for k, p in enumerate(sol.points):
            d = p["elements"][i]
            marks.append((p["Q"] * kq, d["power_shaft"] * kp, str(k + 1), COLOURS["point"]))
    ys = np.concatenate([s[1][np.isfinite(s[1])] for s in series] + [np.array([mk[1] for mk in marks] or [0.0])])
    hi = float(ys.max()) if ys.size else 1.0
    xt = nice_ticks(0.0, float(Q[-1] * kq))
    yt = nice_ticks(0.0, hi * 1.08 if hi > 0 else 1.0)
    fr = Frame(xt, yt, f"Flow [{uq}]", f"Shaft power [{up}]")
    fr.axes()
    items = []
    for label, y, colour, width, dash in series:
        fr.line(Q * kq, y, colour, width, dash)
        items.append((label, colour, dash))
    for xq, yp, label, colour in marks:
        fr.point(xq, yp, label, colour)
    items.append(("Operating points; max = largest power", COLOURS["point"], "dot"))
    rows = legend_rows(items)
    fr.legend(items)
    title = "Turbine shaft power against flow"
    m0 = turbines[0]
    best = (f"The largest power is {m0['power_max'] * kp:.4g} {up} at {m0['Q_at_max'] * kq:.4g} {uq}."
            if m0.get("Q_at_max") else "")
    caption = ("Shaft power the line can give each turbine at each flow, if the turbine takes all the head "
               f"left after the line's losses. {best}")
    return Plot("power", title, caption, fr.svg(title, rows))


def all_plots(analysis, system: str = "SI") -> list[Plot]:
    """Every plot that applies to this sheet, in the order the record shows them."""
    return [p for p in (profile_plot(analysis, system), curves_plot(analysis, system), power_plot(analysis, system))
            if p is not None]
