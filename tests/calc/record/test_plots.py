"""The plots as an engineer reads them: round ticks on axes fitted to the data, text that never overlaps, HGL and
EGL told apart, a legend and units everywhere, typed curve points marked and extrapolation dashed.

Text boxes are estimated here from the SVG alone (font size, anchor, weight and the number of characters),
independently of the drawing code's own estimate, so a change there that lets labels collide fails here.
"""

from __future__ import annotations

import copy
import json
import math
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calc.analysis import analyse
from calc.record import plots
from calc.record.plots import series as S
from calc.record.plots.axes import DASH_EXTRAPOLATED, OVERSHOOT, fit_axis
from calc.record.plots.figures import _Units

EXAMPLES = Path(__file__).resolve().parents[3] / "examples"
NS = "{http://www.w3.org/2000/svg}"
#: Estimated advance of a character [em]: DejaVu Sans averages about 0.55, digits 0.64.
CHAR_EM, BOLD_EM = 0.56, 0.62


def demo(name: str) -> dict:
    return json.loads((EXAMPLES / f"{name}.json").read_text(encoding="utf-8"))


DEMOS = sorted(p.stem for p in EXAMPLES.glob("*.json"))


@pytest.fixture(scope="module")
def analysed() -> dict:
    return {name: (analyse(demo(name)), demo(name)["header"].get("units", "SI")) for name in DEMOS}


def crowded_sheet() -> dict:
    """Twelve valves within a few metres of a pump, and one at the far end: tags that must stack or drop."""
    doc = demo("pumped-main")
    valves = [{"kind": "valve", "label": f"Valve {k}", "K": "0.2", "diameter": ""} for k in range(12)]
    short_run = {"kind": "pipe", "label": "Spool", "length": "1.5 m", "diameter": "", "material": "steel-commercial",
                 "roughness": "", "size": {"standard": "asme-b36.10m", "nominal": "8", "class": "40"},
                 "end_elevation": "53.4 m", "profile": [], "fittings": []}
    els = doc["elements"]
    doc["elements"] = els[:2] + valves[:6] + [short_run] + valves[6:] + [copy.deepcopy(short_run)] + els[2:] + [
        {"kind": "valve", "label": "End valve with a long label that goes on and on", "K": "0.5", "diameter": ""}]
    return doc


def parse(plot) -> ET.Element:
    return ET.fromstring(plot.svg)


def local(el) -> str:
    return el.tag.replace(NS, "")


def texts(root, cls: str | None = None) -> list[ET.Element]:
    return [el for el in root.iter() if local(el) == "text" and (cls is None or cls in (el.get("class") or "").split())]


def box(el, root) -> tuple[float, float, float, float]:
    """A text element's box from its attributes: baseline at (x, y), rotated when it says so."""
    size = float(el.get("font-size") or root.get("font-size") or 12)
    em = BOLD_EM if el.get("font-weight") == "bold" else CHAR_EM
    w = em * size * len(el.text or "")
    x, y = float(el.get("x")), float(el.get("y"))
    anchor = el.get("text-anchor") or "start"
    x0 = x - w / 2 if anchor == "middle" else x - w if anchor == "end" else x
    b = (x0, y - 0.75 * size, x0 + w, y + 0.2 * size)
    if "rotate(-90" in (el.get("transform") or ""):
        # Turned a quarter left about (x, y): the box's width becomes its height.
        b = (x - 0.75 * size, y - (b[2] - x), x + 0.2 * size, y + (x - b[0]))
    return b


def overlap(a, b) -> bool:
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def every_plot(analysed) -> list:
    out = []
    for name, (a, system) in analysed.items():
        out += [(name, p) for p in plots.all_plots(a, system)]
    return out


# ----------------------------------------------------------------------------- axes and ticks

def is_round_step(step: float) -> bool:
    mantissa = step / 10 ** math.floor(math.log10(step) + 1e-9)
    return any(abs(mantissa - m) < 1e-6 for m in (1.0, 2.0, 5.0))


@settings(max_examples=300, deadline=None)
@given(st.floats(-1e5, 1e5), st.floats(1e-3, 1e5), st.booleans(), st.sampled_from([0.0, 0.03, 0.05]))
def test_ticks_are_round_and_the_axis_ends_within_a_tick_of_the_data(lo, span, zero, pad):
    hi = lo + span
    a = fit_axis(lo, hi, "x [m]", zero=zero, pad=pad)
    assert is_round_step(a.step)
    assert 3 <= len(a.ticks) <= 8
    for t in a.ticks:
        assert abs(t / a.step - round(t / a.step)) < 1e-6, (t, a.step)
        assert a.lo - 1e-9 * span <= t <= a.hi + 1e-9 * span
    d_lo, d_hi = (min(lo, 0.0), max(hi, 0.0)) if zero else (lo, hi)
    full = d_hi - d_lo
    assert a.lo <= d_lo + 1e-9 * full and a.hi >= d_hi - 1e-9 * full
    # Past the data by at most the margin asked for or a tenth of the span, and never by a whole tick more.
    beyond = max(pad, OVERSHOOT) * full + 1e-9 * full
    assert a.hi - d_hi <= beyond and d_lo - a.lo <= beyond
    assert a.hi - d_hi <= a.step + pad * full + 1e-9 * full


def test_a_free_end_finishes_on_a_round_tick():
    a = fit_axis(0.0, 53.3, "Flow [L/s]", free_end=True)
    assert (a.lo, a.hi, a.ticks[-1]) == (0.0, 60.0, 60.0)


def test_nice_ticks_doctest_values_are_kept():
    assert plots.nice_ticks(0.0, 118.9) == [0.0, 20.0, 40.0, 60.0, 80.0, 100.0, 120.0]


def test_tick_labels_of_every_plot_are_round_numbers_on_one_step(analysed):
    for name, p in every_plot(analysed):
        root = parse(p)
        x0, x1, y0, y1 = map(float, root.get("data-axes").split())
        ticks = [float(el.text) for el in texts(root, "tick")]
        assert len(ticks) >= 6, (name, p.key)
        # The x ticks come first, then the y ticks; each run is evenly spaced on a 1-2-5 step.
        xs = [t for t, el in zip(ticks, texts(root, "tick")) if el.get("text-anchor") == "middle"]
        ys = [t for t, el in zip(ticks, texts(root, "tick")) if el.get("text-anchor") == "end"]
        for values, lo, hi in ((xs, x0, x1), (ys, y0, y1)):
            steps = np.diff(values)
            assert np.allclose(steps, steps[0]) and is_round_step(abs(steps[0])), (name, p.key, values)
            assert lo - 1e-9 <= min(values) and max(values) <= hi + 1e-9
            assert hi - max(values) < abs(steps[0]) + 1e-9 and min(values) - lo < abs(steps[0]) + 1e-9


def test_the_profile_x_axis_ends_at_the_line_length_within_a_tick(analysed):
    for name, (a, system) in analysed.items():
        p = plots.profile_plot(a, system)
        if p is None:
            continue
        root = parse(p)
        x0, x1, _, _ = map(float, root.get("data-axes").split())
        length = a.solution.design["profile"][-1]["chainage"] * _Units(system).kl
        step = np.diff([float(el.text) for el in texts(root, "tick") if el.get("text-anchor") == "middle"])[0]
        assert x0 == 0.0 and length - 1e-9 <= x1 <= length + step, (name, x1, length)
        assert x1 <= length * (1 + OVERSHOOT) + 1e-9, (name, x1, length)
    hydro = parse(plots.profile_plot(analysed["hydro-penstock"][0]))
    assert hydro.get("data-axes").split()[1] == "900"  # the 825 m line: not 1000


# ----------------------------------------------------------------------------- text never overlaps

def assert_no_overlap(p, where: str) -> None:
    root = parse(p)
    items = [(el.text, box(el, root)) for el in texts(root)]
    for i, (ta, a) in enumerate(items):
        for tb, b in items[i + 1:]:
            assert not overlap(a, b), f"{where} {p.key}: {ta!r} overlaps {tb!r}"
    # Every text stays on the drawing.
    _, _, w, h = map(float, root.get("viewBox").split())
    for t, (x0, y0, x1, y1) in items:
        assert x0 >= 0 and y0 >= 0 and x1 <= w and y1 <= h, f"{where} {p.key}: {t!r} leaves the drawing"


def test_no_two_texts_of_any_demo_plot_overlap(analysed):
    for name, p in every_plot(analysed):
        assert_no_overlap(p, name)


def test_crowded_tags_stack_or_drop_and_never_overlap():
    a = analyse(crowded_sheet())
    assert a.ok and a.solution.design is not None
    for p in plots.all_plots(a):
        assert_no_overlap(p, "crowded")
    p = plots.profile_plot(a)
    root = parse(p)
    tags = [el.text for el in texts(root, "tag")]
    legend = " ".join(el.text for el in texts(root, "legend"))
    assert len(tags) >= 6 and "V13" in tags and "left out" in p.caption
    for k in range(1, 14):  # every valve is named: tagged on the plot, or listed in the caption as left out
        assert f"V{k}" in tags or re.search(rf"\bV{k}\b", p.caption.split("left out")[1]), k
        assert f"V{k}:" in legend
    # Stacked tags sit in rows above the plot area, never inside it or over the axis titles.
    top = float(root.get("data-frame").split()[2])
    for el in texts(root, "tag"):
        assert box(el, root)[3] <= top


def test_point_labels_are_left_out_rather_than_overlap():
    """Two machines with close operating points: the labels move round their markers or are left out."""
    a = analyse(demo("hydro-penstock"))
    for p in plots.all_plots(a):
        assert_no_overlap(p, "hydro")
        root = parse(p)
        for m in (el for el in root.iter() if local(el) == "circle" and "point" in (el.get("class") or "")):
            # Each marker's value is on hover whether or not its label was drawn.
            assert m.get("data-readout") and m.find(f"{NS}title") is not None


# ----------------------------------------------------------------------------- what the lines say

def test_hgl_and_egl_differ_in_colour_and_dash_and_are_in_the_legend(analysed):
    for name, (a, system) in analysed.items():
        p = plots.profile_plot(a, system)
        if p is None:
            continue
        root = parse(p)
        lines = {c: [el for el in root.iter() if local(el) == "polyline" and c in (el.get("class") or "").split()]
                 for c in ("hgl", "egl", "pipe", "vapour")}
        assert all(lines.values()), name
        hgl, egl = lines["hgl"][0], lines["egl"][0]
        assert hgl.get("stroke") != egl.get("stroke")
        assert hgl.get("stroke-dasharray") != egl.get("stroke-dasharray") and egl.get("stroke-dasharray")
        legend = [el.text for el in texts(root, "legend")]
        assert "HGL" in legend and "EGL" in legend


def test_every_plot_has_a_legend_and_units_on_both_axes(analysed):
    for name, p in every_plot(analysed):
        root = parse(p)
        assert len(texts(root, "legend")) >= 2, (name, p.key)
        titles = [el.text for el in texts(root, "axis-title")]
        assert len(titles) == 2 and all(re.search(r"\[[^\]]+\]$", t) for t in titles), (name, p.key, titles)
    cooling = [el.text for p in plots.all_plots(*analysed["cooling-water"]) for el in texts(parse(p), "axis-title")]
    assert "Flow [gpm]" in cooling and "Head [ft]" in cooling and "Chainage along the line [ft]" in cooling


def _polylines(root, cls: str) -> list[ET.Element]:
    return [el for el in root.iter() if local(el) == "polyline" and cls in (el.get("class") or "").split()]


def _vertices(el) -> np.ndarray:
    return np.array([[float(v) for v in pt.split(",")] for pt in el.get("points").split()])


def test_typed_points_are_markers_and_the_curve_past_them_is_dashed(analysed):
    a, system = analysed["pumped-main"]
    pump = a.line.elements[1]
    for key, n_typed in (("curves", len(pump.curve.Q)), ("efficiency", len(pump.efficiency_curve.Q)),
                         ("npsh", len(pump.npshr_curve.Q))):
        root = parse(plots.plot_named(a, key, system))
        typed = [el for el in root.iter() if "typed" in (el.get("class") or "").split()]
        assert len(typed) == n_typed, key
        assert all(el.find(f"{NS}title") is not None for el in typed)
        dashed = _polylines(root, "extrapolated")
        assert dashed and all(el.get("stroke-dasharray") == DASH_EXTRAPOLATED for el in dashed), key
        solid = [el for el in _polylines(root, "series") if not el.get("stroke-dasharray")
                 and el.get("stroke") == dashed[0].get("stroke")]
        assert solid, key
        # The solid curve ends, and the dashed one starts, at the last typed point.
        last = max(typed, key=lambda el: float(el.get("cx")))
        end = _vertices(solid[0])[-1]
        assert abs(end[0] - float(last.get("cx"))) < 0.2 and abs(end[1] - float(last.get("cy"))) < 0.2, key
        starts = [_vertices(d)[0] for d in dashed]
        assert any(abs(s[0] - end[0]) < 0.2 and abs(s[1] - end[1]) < 0.2 for s in starts), key
    legend = [el.text for el in texts(parse(plots.curves_plot(a, system)), "legend")]
    assert "Typed curve points" in legend and any("extrapolated" in t for t in legend)


def test_operating_points_are_marked_with_their_values(analysed):
    a, system = analysed["hydro-penstock"]
    root = parse(plots.curves_plot(a, system))
    points = [el for el in root.iter() if local(el) == "circle" and (el.get("class") or "") == "point"]
    assert len(points) == len(a.solution.points)
    assert any(el.get("data-readout", "").startswith("Point 1 (design):") for el in points)
    assert "1 (design)" in [el.text for el in texts(root, "point-label")]


def test_npsh_available_on_the_plot_is_the_checks_value(analysed):
    a, system = analysed["pumped-main"]
    finding = next(f for f in a.findings if f.code == "pump-npsh")
    i = finding.element
    Q = a.solution.design["Q"]
    on_plot = float(S.npsh_available(a.line, i, np.array([Q]))[0])
    assert on_plot == pytest.approx(finding.value, rel=1e-9, abs=1e-9)
    root = parse(plots.npsh_plot(a, system))
    readouts = [el.get("data-readout") for el in root.iter() if el.get("data-readout")]
    assert any("NPSH available" in r and "(design)" in r for r in readouts)
    assert any("NPSH required" in r for r in readouts)


def test_a_head_plot_takes_a_list_of_named_system_curves():
    """One system curve per operating case (cases come later): each drawn and named, each with its points."""
    a = analyse(demo("pumped-main"))
    u = _Units("SI")
    axis = fit_axis(0.0, 60.0, "Flow [L/s]", free_end=True)
    Q = S.flows(axis.hi / u.kq)
    base = S.system_curves(a, Q)[0]
    high = S.SystemCurve("Tank full", Q, base.H + 3.0, [S.Mark(0.03, 83.0, "1")])
    chart = plots.head_flow_plot([S.SystemCurve("Tank low", Q, base.H, base.points), high],
                                 S.machine_curves(a.line, Q), u, axis, S.sign_of(a.line))
    root = ET.fromstring(chart.svg())
    systems = _polylines(root, "system")
    assert len(systems) == 2 and systems[0].get("stroke-dasharray") != systems[1].get("stroke-dasharray")
    legend = [el.text for el in texts(root, "legend")]
    assert "Tank low: head the line needs" in legend and "Tank full: head the line needs" in legend
    readouts = [el.get("data-readout") or "" for el in root.iter()]
    assert any(r.startswith("Tank full, point 1:") for r in readouts)


def test_vapour_line_and_ratings_near_the_grade_line_are_drawn():
    doc = demo("pumped-main")
    for el in doc["elements"]:
        if el["kind"] == "pipe":
            el["rating"] = "9 bar"  # 92 m of head over the pipe: close above the HGL of the rising main
    a = analyse(doc)
    root = parse(plots.profile_plot(a))
    ratings = _polylines(root, "rating")
    assert ratings and all(el.get("stroke-dasharray") for el in ratings)
    legend = " ".join(el.text for el in texts(root, "legend"))
    assert "Rating as head" in legend and "Vapour pressure" in legend
    # The rating is z + p/(rho g) along each run: 9 bar over the pipe at its first station.
    run = next(i for i, e in enumerate(a.line.elements) if e.kind == "pipe")
    _, _, heads = S.rating_lines(a.line, a.solution.design["profile"])[0]
    z0 = next(s["elevation"] for s in a.solution.design["profile"] if s["element"] == run)
    assert heads[0] == pytest.approx(z0 + 9e5 / (a.line.liquid.rho * 9.80665))


def test_a_downloaded_plot_is_a_file_of_its_own(analysed):
    a, system = analysed["pumped-main"]
    p = plots.plot_named(a, "npsh", system)
    text = p.file()
    assert text.startswith('<?xml version="1.0" encoding="UTF-8"?>\n<svg ')
    root = ET.fromstring(text.split("\n", 1)[1])
    assert root.get("width") == str(p.width) and root.get("height") == str(p.height)
    assert root.find(f"{NS}desc").text == p.caption
    assert plots.plot_named(a, "nothing", system) is None and plots.plot_named(None, "curves") is None
    assert [q.key for q in plots.all_plots(a, system)] == ["profile", "curves", "efficiency", "npsh"]


def test_labels_from_the_sheet_are_escaped_in_every_place():
    doc = demo("pumped-main")
    doc["elements"][1]["label"] = '"><script>x</script>&'
    for p in plots.all_plots(analyse(doc)):
        assert "<script>" not in p.svg and "<script>" not in p.file()
        parse(p)


def test_the_design_point_is_labelled_on_every_plot_against_flow(analysed):
    """Its label has the first place beside its marker, before the BEP's or any other (plots against chainage
    or time have none)."""
    for name, p in every_plot(analysed):
        a = analysed[name][0]
        if p.key.split("-")[0] in ("profile", "power", "envelope", "history", "state") or a.solution.design is None:
            continue
        labels = [el.text for el in texts(parse(p), "point-label")]
        assert any("(design)" in t for t in labels), (name, p.key, labels)


def variant_sheets() -> dict[str, dict]:
    """Machines in every mode the sheet allows: a turbine on a typed curve, a fixed-head pump, a pump at reduced
    speed, two pumps in series, and a US sheet; each must plot, with no text colliding."""
    out = {}
    hydro = demo("hydro-penstock")
    hydro["elements"][-1].update({"mode": "curve", "curve": [
        {"flow": "50 L/s", "head": "60 m"}, {"flow": "100 L/s", "head": "80 m"}, {"flow": "150 L/s", "head": "95 m"}]})
    out["turbine on a curve"] = hydro
    fixed = demo("pumped-main")
    fixed["elements"][1].update({"mode": "head", "head": "85 m"})
    out["fixed-head pump"] = fixed
    slow = demo("pumped-main")
    slow["elements"][1]["speed_ratio"] = "0.95"
    out["pump at 95 % speed"] = slow
    two = demo("pumped-main")
    booster = copy.deepcopy(two["elements"][1])
    booster["label"] = "Booster"
    two["elements"].insert(2, booster)
    out["two pumps"] = two
    us = demo("pumped-main")
    us["header"]["units"] = "US"
    out["US pump"] = us
    return out


@pytest.mark.parametrize("name", sorted(variant_sheets()))
def test_every_kind_of_machine_plots_with_no_text_colliding(name):
    doc = variant_sheets()[name]
    a = analyse(doc)
    assert a.ok, a.errors
    got = plots.all_plots(a, doc["header"]["units"])
    assert "curves" in [p.key for p in got]
    for p in got:
        assert_no_overlap(p, name)
        root = parse(p)
        assert all(re.search(r"\[[^\]]+\]$", el.text) for el in texts(root, "axis-title"))
    curves = parse(next(p for p in got if p.key == "curves"))
    legend = [el.text for el in texts(curves, "legend")]
    if name == "two pumps":
        assert "All machines together" in legend
    if name == "turbine on a curve":
        assert "Typed curve points" in legend
        assert len([el for el in curves.iter() if "typed" in (el.get("class") or "")]) == 3
    if name == "US pump":
        assert "Flow [gpm]" in [el.text for el in texts(curves, "axis-title")]


@pytest.mark.parametrize("name", ["hydro-penstock", "pumped-main", "cooling-water", "siphon-check"])
def test_the_records_narrow_charts_keep_every_legend_entry_inside_the_drawing(name):
    # The record draws its charts 400 px wide, two to a row: a legend entry too long for that width is cut
    # with an ellipsis, never left running past the edge of the picture (SVG text does not wrap).
    from calc.record.plots.axes import text_width

    for plot in plots.all_plots(analyse(demo(name)), "SI", width=400):
        root = ET.fromstring(plot.svg)
        assert root.get("viewBox").split()[2] == "400"
        legend = [t for t in root.iter("{http://www.w3.org/2000/svg}text") if t.get("class") == "legend"]
        assert legend, plot.key
        for t in legend:
            assert float(t.get("x")) + text_width(t.text or "") <= 400 + 1e-9, (plot.key, t.text)


def test_a_line_without_machines_plots_its_losses_and_the_change_in_velocity_head():
    # The cooling-water demo runs between two points of known pressure: its curve is what the flow takes from
    # the static head, the losses of every element plus the velocity head it leaves with less the one it
    # came in with (V = Q / (pi D^2 / 4) at each end; Bernoulli between the two points).
    a = analyse(demo("cooling-water"))
    p = a.solution.design
    start, end = a.line.start, a.line.end
    def hv(node):
        return (p["Q"] / (math.pi * node.D_adjacent ** 2 / 4)) ** 2 / (2 * 9.80665)
    expected = sum(d["head_change"] for d in p["elements"]) + hv(end) - hv(start)
    curve = next(s for s in S.system_curves(a, np.array([p["Q"]])))
    assert curve.H[0] == pytest.approx(expected, rel=1e-9)
    legend = plots.all_plots(a, "SI")[[pl.key for pl in plots.all_plots(a, "SI")].index("curves")].svg
    assert "losses + change in velocity head" in legend
