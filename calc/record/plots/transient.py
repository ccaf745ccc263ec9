"""The plots of a transient run: the envelope of the highest and lowest head along the chainage over the
pipe centreline, the steady grade line, each run's rating and the vapour line; and the histories in time
at the machines, valves, devices and the points the user picked.

Each takes one case's figures (`calc.review.transient.summary`, in SI) and the analysis (for the line's
tags along the chainage).
"""

from __future__ import annotations

import numpy as np

from calc.record.plots.axes import COLOURS, MACHINE_COLOURS, Chart, fit_axis
from calc.record.plots.figures import Plot, _plot, _range, _Units, chainage_chart

ENVELOPE_COLOURS = {"max": "#c0392b", "min": "#1f5fbf", "steady": "#5d6d7e"}


def _joined(envelope: list[dict], key: str, u: _Units) -> tuple[np.ndarray, np.ndarray]:
    """A quantity of every run joined along the chainage (a gap where a run has none)."""
    xs, ys = [], []
    for run in envelope:
        v = run.get(key)
        if v is None:
            xs.append([np.nan])
            ys.append([np.nan])
            continue
        xs.append(np.asarray(run["chainage"]) * u.kl)
        ys.append(np.asarray(v) * u.kh)
    return np.concatenate(xs), np.concatenate(ys)


def envelope_plot(analysis, summary: dict, key: str, system: str = "SI") -> Plot | None:
    """Highest and lowest head along the line in the case's transient run, with the steady HGL, the pipe
    centreline, each run's rating as a head and the vapour line."""
    if analysis is None or analysis.solution is None or analysis.solution.design is None or summary is None:
        return None
    u = _Units(system)
    env = summary["envelope"]
    every = [np.asarray(r[k]) for r in env for k in ("max", "min", "elevation", "vapour")]
    core = _range(every)
    ratings = [np.asarray(r["rating"]) for r in env if r["rating"] is not None]
    room = core[1] + 0.25 * (core[1] - core[0])
    shown = [r for r in ratings if r.max() <= room]
    title = f"Transient envelope, case {summary['case']}"
    chart, _ = chainage_chart(analysis, u, every + shown, title, f"Elevation and head [{u.h}]")
    x, v = _joined(env, "vapour", u)
    chart.line(x, v, COLOURS["vapour"], 1.5, "2 3", title="Vapour-pressure line: the head at which the water boils",
               cls="series vapour")
    chart.key("Vapour pressure line (water boils)", COLOURS["vapour"], "2 3")
    if shown:
        for r in env:
            if r["rating"] is not None and max(r["rating"]) <= room:
                chart.line(np.asarray(r["chainage"]) * u.kl, np.asarray(r["rating"]) * u.kh, COLOURS["rating"], 1.6,
                           "12 4 3 4", title=f"{r['run']}: pressure rating as head (z + p/ρg)", cls="series rating")
    if ratings:
        above = "" if len(shown) == len(ratings) else (": above the plot" if not shown else " (higher ones above the plot)")
        chart.key(f"Rating as head z + p/ρg{above}", COLOURS["rating"], "12 4 3 4")
    x, s = _joined(env, "steady", u)
    chart.line(x, s, ENVELOPE_COLOURS["steady"], 1.6, "6 3", title="Steady HGL (t = 0)", cls="series steady")
    chart.key("Steady HGL (t = 0)", ENVELOPE_COLOURS["steady"], "6 3")
    x, hi = _joined(env, "max", u)
    chart.line(x, hi, ENVELOPE_COLOURS["max"], 2.4, title="Highest head in the run", cls="series envelope-max")
    chart.key("Highest head", ENVELOPE_COLOURS["max"])
    x, lo = _joined(env, "min", u)
    # a dash of its own as well as a colour: the record may be printed in grey
    chart.line(x, lo, ENVELOPE_COLOURS["min"], 2.4, "10 3 2 3", title="Lowest head in the run", cls="series envelope-min")
    chart.key("Lowest head", ENVELOPE_COLOURS["min"], "10 3 2 3")
    for d in summary["devices"]:
        chart.marker(d["chainage"] * u.kl, float(np.interp(d["chainage"], *_flat(env, "chainage", "steady"))) * u.kh,
                     "#000000", "square", f"{d['label']} at chainage {u.length(d['chainage'])}", cls="point device")
    if summary["devices"]:
        chart.key("Protection device", "#000000", kind="square")
    events = ", ".join(summary.get("events_named") or summary["events"])
    caption = (f"Highest and lowest head along the line in case {summary['case']} ({events}) over "
               f"{summary['duration']:.4g} s, with the steady HGL it started from. Where the lowest head meets the "
               "vapour line the column parts; above a rating line the pipe is over its rating.")
    return _plot(key, title, caption, chart)


def _flat(env, kx, ky):
    return np.concatenate([r[kx] for r in env]), np.concatenate([r[ky] for r in env])


def history_plot(summary: dict, key: str, system: str = "SI") -> Plot | None:
    """Head in time at the machines, valves, devices and the points picked."""
    if summary is None or not summary["histories"]:
        return None
    u = _Units(system)
    hs = summary["histories"]
    t_all = [np.asarray(h["t"]) for h in hs.values()]
    heads = [np.asarray(h["H"]) * u.kh for h in hs.values()]
    lo, hi = _range(heads)
    chart = Chart(fit_axis(0.0, float(max(t.max() for t in t_all)) or 1.0, "Time [s]", most=10),
                  fit_axis(lo, hi, f"Head [{u.h}]", pad=0.04), f"Head in time, case {summary['case']}")
    for k, (name, h) in enumerate(hs.items()):
        colour = MACHINE_COLOURS[k % len(MACHINE_COLOURS)]
        dash = None if k < len(MACHINE_COLOURS) else "6 3"
        chart.line(np.asarray(h["t"]), np.asarray(h["H"]) * u.kh, colour, 1.8, dash, title=f"Head {name}")
        chart.key(f"Head {name}", colour, dash)
    caption = (f"Head in time at the machines and valves (either side), the devices and the points picked, case "
               f"{summary['case']} ({', '.join(summary.get('events_named') or summary['events'])}).")
    return _plot(key, f"Head in time, case {summary['case']}", caption, chart)


def state_plot(summary: dict, key: str, system: str = "SI") -> Plot | None:
    """A pump's speed, a surge tank's level, an air vessel's gas, an air valve's air, in time: each as a share
    of its start (speed) or in its own terms, on one chart of relative values."""
    if summary is None:
        return None
    u = _Units(system)
    series = []
    for name, m in summary["machines"].items():
        series.append((f"{name}: speed, % of its curves' speed", m["t"], np.asarray(m["speed"]) * 100.0))
    for d in summary["devices"]:
        if d["kind"] == "surge_tank":
            series.append((f"{d['label']}: level above its floor [{u.h}]", d["t"], (np.asarray(d["level"]) - d["bottom"]) * u.kh))
        elif d["kind"] == "air_vessel":
            series.append((f"{d['label']}: gas, % of the vessel", d["t"], np.asarray(d["gas"]) / d["volume"] * 100.0))
        else:
            series.append((f"{d['label']}: air in the line [L]", d["t"], np.asarray(d["air"]) * 1000.0))
    if not series:
        return None
    lo, hi = _range([s[2] for s in series])
    chart = Chart(fit_axis(0.0, float(max(np.max(s[1]) for s in series)) or 1.0, "Time [s]", most=10),
                  fit_axis(min(lo, 0.0), hi, "Value (see the legend)", pad=0.04),
                  f"Machines and devices in time, case {summary['case']}")
    for k, (name, t, y) in enumerate(series):
        colour = MACHINE_COLOURS[k % len(MACHINE_COLOURS)]
        chart.line(np.asarray(t), y, colour, 1.8, title=name)
        chart.key(name, colour)
    caption = f"Pump speed and device states in time, case {summary['case']} ({', '.join(summary.get('events_named') or summary['events'])})."
    return _plot(key, f"Machines and devices in time, case {summary['case']}", caption, chart)


def transient_plots(analysis, system: str = "SI") -> list[Plot]:
    """Every transient figure of the analysis, case by case: ``envelope-k``, ``history-k``, ``state-k``."""
    out = []
    for k, tc in enumerate(getattr(analysis, "transients", []) or [], start=1):
        if tc.summary is None:
            continue
        for f, name in ((envelope_plot, "envelope"), (history_plot, "history"), (state_plot, "state")):
            p = f(analysis, tc.summary, f"{name}-{k}", system) if f is envelope_plot else f(tc.summary, f"{name}-{k}", system)
            if p is not None:
                out.append(p)
    return out
