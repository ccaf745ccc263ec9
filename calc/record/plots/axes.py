"""A chart as SVG text: axes fitted to the data with round ticks, lines, markers, tags and a legend.

Hand-written SVG, not a plotting library (DEVELOPERS.md, "Why these libraries", has the timings):
a chart is drawn in a few milliseconds, so the page can redraw every plot on each re-solve and the
record's PDF keeps its time budget. Only the plain shapes every SVG renderer draws alike (rect,
line, polyline, circle, text, title), WeasyPrint's included; text stays text in the DejaVu fonts
the record names; every label is escaped by `esc` and nowhere else.

Geometry is in viewBox pixels. Text is never measured by a renderer here, so its box is estimated
(`text_box`) from the font size and the characters, on the wide side, and every label is placed so
that no two boxes meet: tick labels, axis titles, the legend below the axes, element tags in a band
above them, and point labels beside their markers (moved round the marker, or left out, its value
still in the marker's hover title).
"""

from __future__ import annotations

import contextlib
import contextvars
import math
from dataclasses import dataclass, field

import numpy as np

FONT = "DejaVu Sans, Liberation Sans, sans-serif"
SIZE = 12  # text [px]
TAG_SIZE = 11  # element tags [px]
#: Width of the viewBox [px] and of the plot area's height; the chart grows downwards with its legend.
WIDTH, PLOT_HEIGHT = 600, 190
#: Width of the viewBox of the charts being drawn: WIDTH, or narrower where two charts share a printed row
#: (the lettering keeps its size in px, so it prints larger). Set with `chart_width`.
_WIDTH: contextvars.ContextVar[int] = contextvars.ContextVar("chart_width", default=WIDTH)
_PLOT_HEIGHT: contextvars.ContextVar[int] = contextvars.ContextVar("plot_height", default=PLOT_HEIGHT)


@contextlib.contextmanager
def chart_width(width: int, plot_height: int | None = None):
    """Charts made inside this block are ``width`` px wide, their plot area ``plot_height`` px high (as on
    the page if not given)."""
    tokens = (_WIDTH.set(int(width)), _PLOT_HEIGHT.set(int(plot_height or PLOT_HEIGHT)))
    try:
        yield
    finally:
        _WIDTH.reset(tokens[0])
        _PLOT_HEIGHT.reset(tokens[1])
#: How far the axis may run past the data to end on a round tick [-, of the data's span].
OVERSHOOT = 0.10
#: Rows of tags above the plot before a tag is left out.
TAG_ROWS = 3
#: Farthest a tag moves sideways from its element to make room [px].
TAG_SHIFT = 36
LEGEND_ROW = 17  # [px]
GAP = 2.0  # least space between two text boxes [px]

COLOURS = {"pipe": "#333333", "hgl": "#1f5fbf", "egl": "#d35400", "vapour": "#8e44ad", "rating": "#117a65",
           "system": "#1f5fbf", "total": "#7d3c98", "power": "#1e8449", "set": "#7f8c8d", "point": "#000000",
           "grid": "#e3e3e3", "band": "#d6eaf8", "margin": "#7f8c8d"}
MACHINE_COLOURS = ("#c0392b", "#d68910", "#7d3c98", "#16a085", "#2c3e50")
SYSTEM_COLOURS = ("#1f5fbf", "#117a65", "#5d6d7e", "#2e86c1", "#1abc9c")
SYSTEM_DASHES = (None, "10 3", "4 3", "10 3 2 3", "2 2")
DASH_EXTRAPOLATED = "5 4"

# Advance widths of DejaVu Sans [em], rounded up; anything else counts as CHAR_OTHER.
_NARROW = dict.fromkeys("il.,:;'|!Ijf", 0.36) | dict.fromkeys("()[]{}/-rt ", 0.42)
_WIDE = dict.fromkeys("mwMW%…", 1.0) | dict.fromkeys("ABCDGHKNOQRUVXYZ", 0.8)
CHAR_OTHER = 0.66
#: No estimate is narrower than this per character [em], whatever the letters.
CHAR_LEAST = 0.6
BOLD = 1.1


def esc(text: object) -> str:
    """Text made safe inside SVG markup and attributes.

    >>> esc('<script>alert("x") & co</script>')
    '&lt;script&gt;alert(&quot;x&quot;) &amp; co&lt;/script&gt;'
    """
    return (str(text).replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
            .replace('"', "&quot;").replace("'", "&#39;"))


def short(text: str, n: int = 32) -> str:
    """A label cut to ``n`` characters with an ellipsis (SVG text does not wrap; tables give it whole).

    >>> short("Turbine inlet butterfly valve", 12)
    'Turbine inl…'
    """
    text = " ".join(str(text).split())
    return text if len(text) <= n else text[: n - 1] + "…"


def text_width(text: str, size: float = SIZE, bold: bool = False) -> float:
    """Estimated width of ``text`` in DejaVu Sans at ``size`` px, never less than CHAR_LEAST em a character.

    >>> round(text_width("800"), 1), round(text_width("Head [m]"), 1)
    (23.8, 60.5)
    """
    em = sum(_NARROW.get(c) or _WIDE.get(c) or CHAR_OTHER for c in text)
    w = max(em, CHAR_LEAST * len(text)) * size
    return w * BOLD if bold else w


Box = tuple[float, float, float, float]  # x0, y0, x1, y1 [px], y downwards


def text_box(x: float, y: float, text: str, size: float = SIZE, anchor: str = "start", bold: bool = False) -> Box:
    """The box of text drawn with its baseline at (x, y): ascent 0.8 em above, descent 0.25 em below."""
    w = text_width(text, size, bold)
    x0 = x - w / 2 if anchor == "middle" else x - w if anchor == "end" else x
    return x0, y - 0.8 * size, x0 + w, y + 0.25 * size


def overlaps(a: Box, b: Box, gap: float = 0.0) -> bool:
    """Whether two boxes come closer than ``gap``.

    >>> overlaps((0, 0, 10, 10), (10, 0, 20, 10)), overlaps((0, 0, 10, 10), (11, 0, 20, 10), gap=2)
    (False, True)
    """
    return a[0] < b[2] + gap and b[0] < a[2] + gap and a[1] < b[3] + gap and b[1] < a[3] + gap


# ----------------------------------------------------------------------------- axes and ticks

@dataclass
class Axis:
    """One axis: its ends, round ticks inside them, the tick step and its title with the unit."""

    lo: float
    hi: float
    ticks: list[float]
    step: float
    title: str

    def label(self, t: float) -> str:
        return tick_text(t, self.step)


def _steps(span: float) -> list[float]:
    """Tick steps of 1, 2 and 5 times a power of ten, around a sixth of ``span``, smallest first."""
    e = math.floor(math.log10(span))
    return [m * 10.0 ** k for k in range(e - 2, e + 1) for m in (1, 2, 5)]


def _clean(t: float) -> float:
    t = float(f"{t:.12g}")
    return 0.0 if t == 0 else t


def fit_axis(lo: float, hi: float, title: str, *, zero: bool = False, pad: float = 0.0, free_end: bool = False,
             target: int = 6, fewest: int = 4, most: int = 8) -> Axis:
    """An axis over the data [lo, hi]: ticks on 1-2-5 steps, ending on a tick when one lies close.

    ``zero`` takes 0 into the axis; ``pad`` is the least margin each side [-, of the span] (none at a
    zero end). The axis ends on the first tick past the data (and margin) if that lies within
    OVERSHOOT of the span beyond the data, or anywhere when ``free_end`` (the data are computed to
    fit, as the flows of a curve); otherwise it ends at the data and margin, with the ticks inside.
    About ``target`` ticks, between ``fewest`` and ``most``.

    >>> a = fit_axis(0.0, 825.0, "Chainage [m]", most=10); (a.lo, a.hi, a.step)
    (0.0, 900.0, 100.0)
    >>> a = fit_axis(0.0, 801.0, "Chainage [m]"); (a.lo, a.hi, a.ticks[-1])
    (0.0, 801.0, 800.0)
    >>> fit_axis(0.0, 53.3, "Flow [L/s]", free_end=True).ticks
    [0.0, 10.0, 20.0, 30.0, 40.0, 50.0, 60.0]
    """
    if not (math.isfinite(lo) and math.isfinite(hi)):
        lo, hi = 0.0, 1.0
    lo, hi = min(lo, hi), max(lo, hi)
    if zero:
        lo, hi = min(lo, 0.0), max(hi, 0.0)
    if hi - lo < 1e-9 * max(1.0, abs(hi), abs(lo)):
        widen = abs(hi) * 0.1 or 1.0
        lo, hi = (lo, hi + widen) if zero and lo == 0.0 else (lo - widen, hi + widen)
    span = hi - lo
    need_lo = lo if (zero and lo == 0.0) else lo - pad * span
    need_hi = hi if (zero and hi == 0.0) else hi + pad * span
    limit = OVERSHOOT * span
    best: tuple | None = None
    for step in _steps(span):
        k0 = math.floor(need_lo / step + 1e-9)
        k1 = math.ceil(need_hi / step - 1e-9)
        n = k1 - k0 + 1
        if not fewest <= n <= most:
            continue
        a0, a1 = k0 * step, k1 * step
        if not free_end and (a1 - hi > limit + 1e-12 * span or lo - a0 > limit + 1e-12 * span):
            continue
        score = (abs(n - target), -step)
        if best is None or score < best[0]:
            best = (score, step, k0, k1)
    if best is not None:
        _, step, k0, k1 = best
        return Axis(_clean(k0 * step), _clean(k1 * step), [_clean(k * step) for k in range(k0, k1 + 1)], step, title)
    # No round end close enough: the axis ends at the data and its margin, the ticks inside.
    inner: tuple | None = None
    for step in _steps(span):
        k0 = math.ceil(need_lo / step - 1e-9)
        k1 = math.floor(need_hi / step + 1e-9)
        n = k1 - k0 + 1
        if n < fewest - 1 or n > most:
            continue
        score = (abs(n - target), -step)
        if inner is None or score < inner[0]:
            inner = (score, step, k0, k1)
    if inner is None:  # cannot happen for a positive span; a plain two-tick axis all the same
        return Axis(need_lo, need_hi, [_clean(need_lo), _clean(need_hi)], need_hi - need_lo, title)
    _, step, k0, k1 = inner
    return Axis(need_lo, need_hi, [_clean(k * step) for k in range(k0, k1 + 1)], step, title)


def nice_ticks(lo: float, hi: float, n: int = 6) -> list[float]:
    """Round tick values covering [lo, hi], about ``n`` of them, on steps of 1, 2 or 5 × 10^k.

    >>> nice_ticks(0.0, 118.9)
    [0.0, 20.0, 40.0, 60.0, 80.0, 100.0, 120.0]
    >>> nice_ticks(317.2, 412.0)
    [300.0, 320.0, 340.0, 360.0, 380.0, 400.0, 420.0]
    """
    a = fit_axis(lo, hi, "", free_end=True, target=n, fewest=3, most=12)
    return a.ticks


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


def tick_text(t: float, step: float) -> str:
    """A tick value with as many decimals as its step needs (1-2-5 steps need no more than the step's).

    >>> tick_text(0.30000000000000004, 0.1), tick_text(-0.0, 5.0), tick_text(1500.0, 500.0)
    ('0.3', '0', '1500')

    On steps of 100 000 or more, or finer than 1e-4, a tick is a power of ten, never a row of digits:

    >>> tick_text(2.5e18, 5e17), tick_text(1.5e6, 5e5), tick_text(2e-5, 1e-5), tick_text(0.0, 1e6)
    ('2.5×10¹⁸', '1.5×10⁶', '2×10⁻⁵', '0')
    """
    if step > 0 and (step >= 1e5 or step < 1e-4) and t != 0:
        power = math.floor(math.log10(abs(t)) + 1e-9)
        digits = max(0, power - math.floor(math.log10(step) + 1e-9))
        mantissa = f"{t / 10.0 ** power:.{digits}f}"
        if mantissa.lstrip("-") == "10" + ("." + "0" * digits if digits else ""):  # rounded up a decade
            mantissa, power = mantissa.replace("10", "1", 1), power + 1
        return f"{mantissa}×10{str(power).translate(_SUPERSCRIPT)}"
    decimals = max(0, -math.floor(math.log10(step) + 1e-9)) if step > 0 else 0
    text = f"{t:.{decimals}f}"
    return "0" if text.strip("-0.") == "" else text


def clip_segments(xs: list[float], ys: list[float], lo: float, hi: float) -> list[list[tuple[float, float]]]:
    """Split a polyline into the pieces inside lo <= y <= hi, cutting each crossing at the edge.

    >>> clip_segments([0, 1, 2], [0, 10, 0], -1.0, 5.0)
    [[(0, 0), (0.5, 5.0)], [(1.5, 5.0), (2, 0)]]
    """
    segs: list[list[tuple[float, float]]] = []
    cur: list[tuple[float, float]] = []
    prev = None
    for x, y in zip(xs, ys):
        if y is None or not math.isfinite(y) or x is None or not math.isfinite(x):
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


def clip_box(xs, ys, x0: float, x1: float, y0: float, y1: float) -> list[np.ndarray]:
    """A polyline's pieces inside the rectangle [x0, x1] × [y0, y1], each an (n, 2) array; NaN breaks the line.

    Each segment is cut by the Liang-Barsky method, all segments at once; consecutive segments that
    stay whole where they meet make one piece.

    >>> [p.tolist() for p in clip_box([0, 2, 4], [0, 2, 0], 1.0, 3.0, 0.0, 5.0)]
    [[[1.0, 1.0], [2.0, 2.0], [3.0, 1.0]]]
    >>> [p.tolist() for p in clip_box([0, 1, 2, 3], [0, float("nan"), 1, 1], 0.0, 5.0, 0.0, 5.0)]
    [[[2.0, 1.0], [3.0, 1.0]]]
    """
    x = np.asarray(xs, dtype=float)
    y = np.asarray(ys, dtype=float)
    if x.size < 2:
        return []
    ok = np.isfinite(x) & np.isfinite(y)
    if ok.all() and x.min() >= x0 and x.max() <= x1 and y.min() >= y0 and y.max() <= y1:
        return [np.column_stack([x, y])]
    px, py = x[:-1], y[:-1]
    valid = ok[:-1] & ok[1:]
    t0 = np.zeros_like(px)
    t1 = np.ones_like(px)
    with np.errstate(all="ignore"):  # segments with a NaN or infinite end are masked out by ``valid``
        dx, dy = x[1:] - px, y[1:] - py
        for p, q in ((-dx, px - x0), (dx, x1 - px), (-dy, py - y0), (dy, y1 - py)):
            r = q / p
            valid &= ~((p == 0) & (q < 0))
            t0 = np.where(p < 0, np.maximum(t0, r), t0)
            t1 = np.where(p > 0, np.minimum(t1, r), t1)
        a = np.column_stack([px + t0 * dx, py + t0 * dy])
        b = np.column_stack([px + t1 * dx, py + t1 * dy])
    seen = valid & (t0 <= t1)
    joins = np.zeros_like(seen)
    joins[1:] = seen[:-1] & seen[1:] & (t1[:-1] >= 1.0) & (t0[1:] <= 0.0)
    carried = np.zeros_like(seen)
    carried[:-1] = joins[1:]
    starts = np.flatnonzero(seen & ~joins)
    ends = np.flatnonzero(seen & ~carried)
    return [np.vstack([a[k:k + 1], b[k:e + 1]]) for k, e in zip(starts, ends)]


# ----------------------------------------------------------------------------- the chart

@dataclass
class _Line:
    xs: object
    ys: object
    colour: str
    width: float
    dash: str | None
    title: str
    cls: str


@dataclass
class _Marker:
    x: float
    y: float
    colour: str
    shape: str  # dot (filled circle), ring (open circle), square
    title: str
    label: str
    cls: str
    r: float
    priority: int = 0  # labels are placed in this order: lower first, the rest where room is left


@dataclass
class _Tag:
    x: float
    text: str
    title: str
    y_to: float | None  # the leader runs down to this value


@dataclass
class LegendItem:
    label: str
    colour: str
    dash: str | None = None
    kind: str = "line"  # line, dot, ring, square, band
    order: int = 0  # legend entries go by order, then as added


@dataclass
class Chart:
    """One chart: two axes, then lines, markers and tags in data units; `svg()` lays it out and draws it."""

    x: Axis
    y: Axis
    title: str
    width: int = field(default_factory=_WIDTH.get)
    plot_height: int = field(default_factory=_PLOT_HEIGHT.get)
    lines: list[_Line] = field(default_factory=list)
    markers: list[_Marker] = field(default_factory=list)
    tags: list[_Tag] = field(default_factory=list)
    bands: list[tuple[float, float, str, str]] = field(default_factory=list)
    legend: list[LegendItem] = field(default_factory=list)
    #: Tags left out for want of room, filled in by `svg()` (their elements are still in the legend).
    dropped_tags: list[str] = field(default_factory=list)
    #: The viewBox height, set by `svg()` [px].
    height: int = 0

    def line(self, xs, ys, colour: str, width: float = 2.0, dash: str | None = None, title: str = "",
             cls: str = "series") -> None:
        self.lines.append(_Line(np.asarray(xs, dtype=float), np.asarray(ys, dtype=float), colour, width, dash,
                                title, cls))

    def marker(self, x: float, y: float, colour: str = COLOURS["point"], shape: str = "dot", title: str = "",
               label: str = "", cls: str = "point", r: float = 4.5, priority: int = 0) -> None:
        if math.isfinite(x) and math.isfinite(y):
            self.markers.append(_Marker(float(x), float(y), colour, shape, title, label, cls, r, priority))

    def tag(self, x: float, text: str, title: str = "", y_to: float | None = None) -> None:
        """An element's tag (P1, V2…) in the band above the plot, with a leader down to ``y_to``."""
        self.tags.append(_Tag(float(x), text, title, y_to))

    def band(self, x0: float, x1: float, colour: str, title: str) -> None:
        """A shaded stretch of x across the plot (a preferred range)."""
        self.bands.append((x0, x1, colour, title))

    def key(self, label: str, colour: str, dash: str | None = None, kind: str = "line", order: int = 0) -> None:
        """A legend entry; ``order`` puts later groups (element tags) after the lines."""
        self.legend.append(LegendItem(label, colour, dash, kind, order))

    # -- layout

    def _margins(self) -> tuple[float, float]:
        widest = max((text_width(self.y.label(t)) for t in self.y.ticks), default=0.0)
        left = 8 + SIZE + 10 + widest + 7
        last = text_width(self.x.label(self.x.ticks[-1])) / 2 if self.x.ticks else 0.0
        right = max(18.0, last + 4)
        return left, right

    def svg(self) -> str:
        left, right = self._margins()
        px0, px1 = left, self.width - right
        x = self.x
        sx = (px1 - px0) / (x.hi - x.lo)

        def X(v):
            return px0 + (v - x.lo) * sx

        tags, rows = self._place_tags(X, px0, px1)
        top = 12.0 + (rows * 20.0 + 4.0 if rows else 0.0)
        py1, py0 = top, top + self.plot_height
        y = self.y
        sy = (py0 - py1) / (y.hi - y.lo)

        def Y(v):
            return py0 - (v - y.lo) * sy

        legend, legend_h = self._place_legend(px0, px1, py0 + 53.0)
        height = math.ceil(py0 + 44.0 + legend_h + 10.0)
        p: list[str] = [f'<rect class="paper" x="0" y="0" width="{self.width}" height="{height}" fill="#ffffff"/>']
        # Bands and grid under everything.
        for b0, b1, colour, title in self.bands:
            a, b = max(X(b0), px0), min(X(b1), px1)
            if b > a:
                p.append(f'<rect class="band" x="{a:.1f}" y="{py1:.1f}" width="{b - a:.1f}" height="{py0 - py1:.1f}" '
                         f'fill="{colour}" fill-opacity="0.55"><title>{esc(title)}</title></rect>')
        for t in x.ticks:
            p.append(f'<line class="grid" x1="{X(t):.1f}" y1="{py0:.1f}" x2="{X(t):.1f}" y2="{py1:.1f}" '
                     f'stroke="{COLOURS["grid"]}" stroke-width="0.8"/>')
        for t in y.ticks:
            p.append(f'<line class="grid" x1="{px0:.1f}" y1="{Y(t):.1f}" x2="{px1:.1f}" y2="{Y(t):.1f}" '
                     f'stroke="{COLOURS["grid"]}" stroke-width="0.8"/>')
        # Series, clipped to the plot area.
        for ln in self.lines:
            d = f' stroke-dasharray="{ln.dash}"' if ln.dash else ""
            title = f"<title>{esc(ln.title)}</title>" if ln.title else ""
            for seg in clip_box(ln.xs, ln.ys, x.lo, x.hi, y.lo, y.hi):
                pts = _points(X(seg[:, 0]), Y(seg[:, 1]))
                close = f">{title}</polyline>" if title else "/>"
                p.append(f'<polyline class="{ln.cls}" points="{pts}" fill="none" stroke="{ln.colour}" '
                         f'stroke-width="{ln.width}" stroke-linejoin="round"{d}{close}')
        # Tags: every leader first, then the boxes over them, so that a leader from a higher row
        # runs behind the tags below it.
        for tg, (cx, ty, w) in tags:
            xe = X(tg.x)
            bottom = ty + 16
            p.append(f'<polyline class="leader" points="{cx:.1f},{bottom:.1f} {xe:.1f},{py1:.1f}" fill="none" '
                     'stroke="#000000" stroke-width="0.8"/>')
            if tg.y_to is not None and y.lo <= tg.y_to <= y.hi:
                p.append(f'<line class="leader" x1="{xe:.1f}" y1="{py1:.1f}" x2="{xe:.1f}" y2="{Y(tg.y_to):.1f}" '
                         'stroke="#000000" stroke-width="0.8" stroke-dasharray="2 3"/>')
        for tg, (cx, ty, w) in tags:
            p.append(f'<rect class="tag-box" x="{cx - w / 2:.1f}" y="{ty:.1f}" width="{w:.1f}" height="16" '
                     f'fill="#ffffff" stroke="#000000" stroke-width="1"><title>{esc(tg.title)}</title></rect>')
            p.append(f'<text class="tag" x="{cx:.1f}" y="{ty + 12:.1f}" text-anchor="middle" font-size="{TAG_SIZE}" '
                     f'font-weight="bold">{esc(tg.text)}</text>')
        # The frame, ticks and axis titles.
        p.append(f'<rect class="frame" x="{px0:.1f}" y="{py1:.1f}" width="{px1 - px0:.1f}" height="{py0 - py1:.1f}" '
                 'fill="none" stroke="#000000" stroke-width="1"/>')
        for t in x.ticks:
            p.append(f'<text class="tick" x="{X(t):.1f}" y="{py0 + 17:.1f}" text-anchor="middle">{x.label(t)}</text>')
        for t in y.ticks:
            p.append(f'<text class="tick" x="{px0 - 7:.1f}" y="{Y(t) + 4:.1f}" text-anchor="end">{y.label(t)}</text>')
        p.append(f'<text class="axis-title" x="{(px0 + px1) / 2:.1f}" y="{py0 + 36:.1f}" '
                 f'text-anchor="middle">{esc(x.title)}</text>')
        cy = (py0 + py1) / 2
        yx = 8 + SIZE * 0.8
        p.append(f'<text class="axis-title" x="{yx:.1f}" y="{cy:.1f}" text-anchor="middle" '
                 f'transform="rotate(-90 {yx:.1f} {cy:.1f})">{esc(y.title)}</text>')
        # Markers, then their labels where they fit.
        p.extend(self._markers(X, Y, px0, px1, py1, py0))
        p.extend(legend)
        frame = f"{px0:.1f} {px1:.1f} {py1:.1f} {py0:.1f}"
        axes = f"{x.lo:.12g} {x.hi:.12g} {y.lo:.12g} {y.hi:.12g}"
        self.height = height
        return (f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {self.width} {height}" class="plot" '
                f'role="img" font-family="{FONT}" font-size="{SIZE}" fill="#000000" data-frame="{frame}" '
                f'data-axes="{axes}" data-x-title="{esc(x.title)}" data-y-title="{esc(y.title)}">'
                f"<title>{esc(self.title)}</title>" + "".join(p) + "</svg>")

    def _place_tags(self, X, px0: float, px1: float) -> tuple[list, int]:
        """Each tag's (centre, top, width) in rows above the plot: at its element when there is room, else
        moved aside by up to TAG_SHIFT, else a row higher; left out (in `dropped_tags`) after TAG_ROWS."""
        rows: list[list[Box]] = [[] for _ in range(TAG_ROWS)]
        placed = []
        self.dropped_tags = []
        for tg in sorted(self.tags, key=lambda t: t.x):
            w = text_width(tg.text, TAG_SIZE, bold=True) + 10
            want = min(max(X(tg.x), px0 + w / 2), px1 - w / 2)
            spot = None
            for r, row in enumerate(rows):
                for cx in _sideways(want, row, w, px0, px1):
                    if abs(cx - X(tg.x)) <= TAG_SHIFT + w / 2:
                        spot = (r, cx)
                        break
                if spot:
                    break
            if spot is None:
                self.dropped_tags.append(tg.text)
                continue
            r, cx = spot
            rows[r].append((cx - w / 2, 0.0, cx + w / 2, 16.0))
            placed.append((tg, r, cx, w))
        used = max((r + 1 for _, r, _, _ in placed), default=0)
        top = 12.0
        out = []
        for tg, r, cx, w in placed:
            ty = top + (used - 1 - r) * 20.0
            out.append((tg, (cx, ty, w)))
        return out, used

    def _place_legend(self, px0: float, px1: float, y0: float) -> tuple[list[str], float]:
        """The legend under the axes, its entries side by side in reading order, a new row where the next
        would pass the right edge (so short entries share a row and a printed figure stays short). A row is
        LEGEND_ROW high."""
        items = sorted(self.legend, key=lambda i: i.order)
        parts: list[str] = []
        row, x = 0, px0
        for item in items:
            text, n = short(item.label, 60), 60
            while 34 + text_width(text) > px1 - px0 and n > 12:  # never wider than the plot: cut, with an ellipsis
                n -= 2
                text = short(item.label, n)
            w = 34 + text_width(text)
            if x > px0 and x + w > px1:
                row, x = row + 1, px0
            y = y0 + row * LEGEND_ROW
            sy = y - 4
            if item.kind == "line":
                d = f' stroke-dasharray="{item.dash}"' if item.dash else ""
                parts.append(f'<line class="legend-key" x1="{x:.1f}" y1="{sy:.1f}" x2="{x + 28:.1f}" y2="{sy:.1f}" '
                             f'stroke="{item.colour}" stroke-width="2.4"{d}/>')
            elif item.kind == "band":
                parts.append(f'<rect class="legend-key" x="{x:.1f}" y="{sy - 6:.1f}" width="28" height="12" '
                             f'fill="{item.colour}" fill-opacity="0.55"/>')
            else:
                parts.append(_shape(item.kind, x + 14, sy, 4.5, item.colour, "legend-key"))
            parts.append(f'<text class="legend" x="{x + 34:.1f}" y="{y:.1f}">{esc(text)}</text>')
            x += w + 22
        rows = row + 1 if items else 0
        return parts, rows * LEGEND_ROW

    def _markers(self, X, Y, px0, px1, py1, py0) -> list[str]:
        out: list[str] = []
        shown = [m for m in self.markers if self.x.lo <= m.x <= self.x.hi and self.y.lo <= m.y <= self.y.hi]
        taken: list[Box] = [(X(m.x) - m.r - 1, Y(m.y) - m.r - 1, X(m.x) + m.r + 1, Y(m.y) + m.r + 1) for m in shown]
        # Where the lines run, so that labels keep off them when they can.
        verts = [np.column_stack([X(ln.xs), Y(ln.ys)]) for ln in self.lines if len(ln.xs)]
        pts = np.concatenate(verts) if verts else np.zeros((0, 2))
        pts = pts[np.isfinite(pts).all(axis=1)]
        labels: list[str] = []
        for m in shown:
            title = f"<title>{esc(m.title)}</title>" if m.title else ""
            readout = f' data-readout="{esc(m.title)}"' if m.title else ""
            out.append(_shape(m.shape, X(m.x), Y(m.y), m.r, m.colour, m.cls, readout, title))
        for m in sorted((m for m in shown if m.label), key=lambda m: m.priority):
            cx, cy = X(m.x), Y(m.y)
            spot = _label_spot(m.label, cx, cy, m.r, taken, pts, (px0, py1, px1, py0))
            if spot is None:
                continue
            tx, ty, anchor, box = spot
            taken.append(box)
            labels.append(f'<rect class="label-back" x="{box[0]:.1f}" y="{box[1]:.1f}" width="{box[2] - box[0]:.1f}" '
                          f'height="{box[3] - box[1]:.1f}" fill="#ffffff" fill-opacity="0.8"/>')
            labels.append(f'<text class="point-label" x="{tx:.1f}" y="{ty:.1f}" text-anchor="{anchor}" '
                          f'font-weight="bold">{esc(m.label)}</text>')
        return out + labels


def _points(px, py) -> str:
    """SVG polyline points from pixel arrays, to 0.1 px, in one formatting call."""
    flat = np.column_stack([px, py]).ravel()
    return ("%.1f,%.1f " * (len(flat) // 2) % tuple(flat)).rstrip()


def _sideways(want: float, row: list[Box], w: float, px0: float, px1: float):
    """Centres for a box of width ``w`` in a row, nearest ``want`` first, that touch no box there."""
    spots = [want] + [b[2] + 4 + w / 2 for b in row] + [b[0] - 4 - w / 2 for b in row]
    spots = [c for c in spots if px0 + w / 2 - 1e-6 <= c <= px1 - w / 2 + 1e-6]
    for c in sorted(spots, key=lambda c: abs(c - want)):
        box = (c - w / 2, 0.0, c + w / 2, 16.0)
        if not any(overlaps(box, b, 4.0) for b in row):
            yield c


def _label_spot(text: str, cx: float, cy: float, r: float, taken: list[Box], pts, area: Box):
    """Where a marker's label goes: the first of the places round it that stays in ``area``, touches no
    taken box, and (among those) crosses the fewest line vertices; None when none is free."""
    d = r + 3
    best = None
    for k, (dx, dy, anchor) in enumerate(((d, -d, "start"), (-d, -d, "end"), (d, d + 0.8 * SIZE, "start"),
                                          (-d, d + 0.8 * SIZE, "end"), (d, -d - 14, "start"), (-d, -d - 14, "end"),
                                          (d, d + 0.8 * SIZE + 14, "start"), (-d, d + 0.8 * SIZE + 14, "end"))):
        tx, ty = cx + dx, cy + dy
        x0, y0, x1, y1 = text_box(tx, ty, text, anchor=anchor, bold=True)
        box = (x0 - 1, y0 - 1, x1 + 1, y1 + 1)
        if box[0] < area[0] + 1 or box[2] > area[2] - 1 or box[1] < area[1] + 1 or box[3] > area[3] - 1:
            continue
        if any(overlaps(box, b, GAP) for b in taken):
            continue
        inside = int(((pts[:, 0] >= box[0]) & (pts[:, 0] <= box[2]) & (pts[:, 1] >= box[1]) & (pts[:, 1] <= box[3])).sum())
        score = (inside, k)
        if best is None or score < best[0]:
            best = (score, (tx, ty, anchor, box))
        if inside == 0:
            break
    return None if best is None else best[1]


def _shape(kind: str, cx: float, cy: float, r: float, colour: str, cls: str, extra: str = "", title: str = "") -> str:
    close = f">{title}</{'rect' if kind == 'square' else 'circle'}>" if title else "/>"
    if kind == "square":
        s = r * 1.7
        return (f'<rect class="{cls}" x="{cx - s / 2:.1f}" y="{cy - s / 2:.1f}" width="{s:.1f}" height="{s:.1f}" '
                f'fill="{colour}" stroke="#ffffff" stroke-width="1"{extra}{close}')
    if kind == "ring":
        return (f'<circle class="{cls}" cx="{cx:.1f}" cy="{cy:.1f}" r="{r - 0.5:.1f}" fill="#ffffff" '
                f'stroke="{colour}" stroke-width="2"{extra}{close}')
    return (f'<circle class="{cls}" cx="{cx:.1f}" cy="{cy:.1f}" r="{r:.1f}" fill="{colour}" stroke="#ffffff" '
            f'stroke-width="1"{extra}{close}')
