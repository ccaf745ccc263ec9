"""Surge screening: Korteweg wave speed, Joukowsky rise for a sudden stop, pipeline period, against each run's rating."""

from __future__ import annotations

from calc.model.elements import Line, PipeRun, Pump, Turbine, Valve
from calc.model.settings import CheckSettings
from calc.review.findings import RATING_NEAR, SRC_JOUKOWSKY, SRC_KORTEWEG, Finding, Shown, label, shown_in
from calc.transient.wave import THICK_WALL, korteweg_wave_speed, restraint_factor, wave_speed, wave_speed_detail  # noqa: F401
from calc.water import G

#: The shortest time over which a tripped pump's flow can stop [s], for the leg between a free surface
#: and the pump: rotor inertia keeps even small pumps turning for some tenths of a second (common
#: practice; a transient analysis with the machine's inertia replaces it).
PUMP_RUNDOWN_MIN = 0.5


def joukowsky_head(a: float, dV: float) -> float:
    """Head rise for a sudden change of velocity, dH = a dV / g [m].

    Parameters: a wave speed [m/s], dV change of velocity [m/s]. Holds for a change faster than
    the pipeline period 2L/a, before reflections return. Reference: Joukowsky (1898), standard texts.

    >>> round(joukowsky_head(1000.0, 1.0), 1)
    102.0
    """
    return a * dV / G


def pipeline_period(lengths_and_speeds) -> float:
    """Pipeline period T = 2 sum(L_i / a_i) [s] for runs of length L_i [m] and wave speed a_i [m/s].

    >>> pipeline_period([(1000.0, 1000.0), (500.0, 1250.0)])
    2.8
    """
    return 2.0 * sum(L / a for L, a in lengths_and_speeds)


def describe_wave_speed(w: dict, u: Shown, brief: bool = False) -> str:
    """The wave speed with the inputs a checker needs to repeat it; ``brief``, with its restraint factor
    only (for a finding: the record works it in full)."""
    if w["form"] == "typed":
        return f"wave speed {u(w['a'], 'velocity', '.0f')} (typed for the run)"
    if brief:
        return (f"wave speed {u(w['a'], 'velocity', '.0f')} (Korteweg, {w['form']}, c1 = {w['c1']:.4f} for "
                f"{w['restraint'].replace('_', ' ')})")
    return (f"wave speed {u(w['a'], 'velocity', '.0f')} (Korteweg, {w['form']} restraint factor c1 = {w['c1']:.4f} for "
            f"{w['restraint'].replace('_', ' ')}, D/e = {w['D_over_e']:.1f}; E = {w['E'] / 1e9:.4g} GPa, "
            f"nu = {w['nu']:.3g}, e = {u(w['e'], 'diameter', '.4g')}, D = {u(w['D'], 'diameter', '.4g')}, K = {w['K'] / 1e9:.4g} GPa, "
            f"rho = {w['rho']:.1f} kg/m3)")


def _first_up(text: str) -> str:
    return text[:1].upper() + text[1:]


def _stoppers(line: Line) -> list[tuple[int, str]]:
    """Where the flow can be stopped: each valve, turbine and pump (index, kind); with none, a closure
    at the downstream end of the line (index = number of elements)."""
    out = [(i, "pump" if isinstance(el, Pump) else "valve" if isinstance(el, Valve) else "turbine")
           for i, el in enumerate(line.elements) if isinstance(el, (Valve, Turbine, Pump))]
    return out or [(len(line.elements), "end")]


def surge_waves(line: Line, point: dict, speeds: dict[int, dict], s: CheckSettings) -> dict[int, dict]:
    """The surge each run sees when the flow stops at each place it can: ``up`` (rise) and ``down`` (drop) [m].

    The stop sends a wave F = Z Q both ways (Z = a / (g A) of the run next to it, Joukowsky); at a
    change of pipe the wave passing from run 1 into run 2 carries on as 2 Z2 / (Z1 + Z2) times its
    height (Wylie and Streeter 1993). Upstream of a valve or turbine the head rises, downstream it
    falls; a tripped pump sends a rise up its suction and a drop down its discharge. Where the
    wave's path ends at a free surface its reflection returns after the round trip t_r = 2 sum(L/a):
    a stop that takes T longer than that gives only about F t_r / T (Michaud), which bounds the short
    leg from a sump to a pump.
    """
    out: dict[int, dict] = {i: {"up": 0.0, "up_from": "", "down": 0.0, "down_from": ""}
                            for i, el in enumerate(line.elements) if isinstance(el, PipeRun)}
    Q = point["Q"]
    for k, kind in _stoppers(line):
        name = "the end of the line" if kind == "end" else label(line, k)
        for direction in ("up", "down"):
            idx = range(k - 1, -1, -1) if direction == "up" else range(k + 1, len(line.elements))
            runs = [j for j in idx if isinstance(line.elements[j], PipeRun)]
            if not runs:
                continue
            rises = direction == "up"   # a stop raises the head upstream of it and drops it downstream
            path, F, Z_prev = [], None, None
            for j in runs:
                w = speeds[j]
                if w["a"] is None:
                    path.append((j, None))
                    continue
                Z = w["a"] / (G * line.elements[j].A)
                F = Z * Q if F is None else F * 2.0 * Z / (Z_prev + Z)
                Z_prev = Z
                path.append((j, F))
            node = line.start if direction == "up" else line.end
            t_r = 2.0 * sum(line.elements[j].L / speeds[j]["a"] for j in runs if speeds[j]["a"])
            T = PUMP_RUNDOWN_MIN if kind == "pump" else s.surge_closure_time
            factor = min(1.0, t_r / T) if (node.kind == "reservoir" and T > 0.0 and all(speeds[j]["a"] for j in runs)) else 1.0
            what = {"pump": "a trip of", "valve": "a sudden closure of", "turbine": "a load rejection at",
                    "end": "a sudden closure at"}[kind] + " " + name
            note = (f" (short leg: round trip {t_r:.3g} s against a stop of at least {T:g} s, so "
                    f"{factor * 100:.0f} % of the full wave)" if factor < 1.0 else "")
            for j, Fj in path:
                if Fj is None:
                    continue
                h = Fj * factor
                keys = [("up" if rises else "down", what + note)]
                if kind == "pump" and not rises and h > 0.0:
                    # After the down-surge the column comes back against the closing check valve and the
                    # head rises about as far above steady (screening; a transient analysis tells).
                    keys.append(("up", f"the column's return after {what} (check valve closing)" + note))
                for key, text in keys:
                    if h > out[j][key]:
                        out[j][key] = h
                        out[j][key + "_from"] = text
    return out


def run_screening(line: Line, point: dict, s: CheckSettings) -> list[dict]:
    """Each pipe run's surge screening at an operating point, as numbers: its wave speed (``w``), the rise
    ``up`` [m] reaching it and where from (``up_from``), the drop ``down`` [m] and where from, the rise its
    own velocity would give stopped at once (``own``, a V / g) [m], its highest steady pressure ``p_steady``
    and the surge added to it ``surge`` [Pa] (the surge allowance where the wave speed is unknown), their
    sum ``peak`` [Pa], its ``rating`` [Pa or None] and ``how`` the surge was had, in words. The surge
    findings and the record's screening table are both made from these."""
    u = shown_in(line)
    rg = line.liquid.rho * G
    by_index = {d["index"]: d for d in point["elements"]}
    speeds = {i: wave_speed_detail(line, el) for i, el in enumerate(line.elements) if isinstance(el, PipeRun)}
    waves = surge_waves(line, point, speeds, s)
    rows = []
    for i, el in enumerate(line.elements):
        if not isinstance(el, PipeRun):
            continue
        d = by_index[i]
        stations = [st for st in point["profile"] if st["element"] == i]
        h_max = max((st["pressure_head"] for st in stations), default=0.0)
        w, wave = speeds[i], waves[i]
        row = {"index": i, "name": label(line, i), "w": w, "V": d["V"], "stations": stations,
               "p_steady": rg * h_max, "rating": el.rating, "up": 0.0, "up_from": "", "down": wave["down"],
               "down_from": wave.get("down_from", ""), "own": None}
        if w["a"] is None:
            row.update(surge=s.surge_allowance, how="the surge allowance", source=s.source("surge_allowance"))
        else:
            dH = wave["up"]
            row.update(up=dH, up_from=wave.get("up_from", ""), own=joukowsky_head(w["a"], d["V"]), surge=rg * dH,
                       source=SRC_JOUKOWSKY,
                       how=(f"a rise of {u(dH, 'head', '.1f')} ({u(rg * dH, 'pressure', '.0f')}) from "
                            f"{wave['up_from']}" if dH > 0.0 else
                            "no rise (it lies downstream of where the flow stops)"))
        row["peak"] = row["p_steady"] + row["surge"]
        rows.append(row)
    return rows


def surge_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    """Screening only: each run's wave speed, the surge reaching it from where the flow can stop, and its rating."""
    u = shown_in(line)
    out = []
    rho = line.liquid.rho
    rg = rho * G
    period_parts = []
    complete = True
    h_vap = (line.liquid.p_vap - line.p_atm) / rg
    for row in run_screening(line, point, s):
        i, name, w, stations = row["index"], row["name"], row["w"], row["stations"]
        el = line.elements[i]
        p_steady, how, src = row["p_steady"], row["how"], row["source"]
        if w["a"] is None:
            complete = False
            out.append(Finding("info", "surge-wave-speed-missing", f"{name}: wave speed not computed",
                               f"Give {w['missing']} to screen this run for surge; meanwhile an allowance of "
                               f"{u(s.surge_allowance, 'pressure', '.0f')} is used against its rating.",
                               None, None, None, s.source("surge_allowance"), i))
        else:
            period_parts.append((el.L, w["a"]))
            dH, own = row["up"], row["own"]
            if dH > 0.0:
                text = (f"{_first_up(describe_wave_speed(w, u, brief=True))}. The surge reaching this run is a rise of {u(dH, 'head', '.1f')} "
                        f"({u(rg * dH, 'pressure', '.0f')}) from {row['up_from']}; its own velocity {u(row['V'], 'velocity', '.2f')} "
                        f"stopped at once would give a V / g = {u(own, 'head', '.1f')}.")
            else:
                text = (f"{_first_up(describe_wave_speed(w, u, brief=True))}. No rise reaches this run: it lies downstream of "
                        "every place where the flow can stop, so it sees the drop instead.")
            out.append(Finding("info", "surge-screen", f"{name}: surge screening",
                               text + " Screening estimate, not a transient analysis.",
                               rg * dH, None, "pressure", SRC_KORTEWEG, i))
            # The end of a run on a fixed-head boundary (a tank, a point of known pressure) keeps its head.
            fixed_end = i == len(line.elements) - 1 and line.end.kind != "jet"
            candidates = stations[:-1] if fixed_end else stations
            if row["down"] > 0.0 and candidates:
                low = min(candidates, key=lambda st: st["pressure_head"])
                if low["pressure_head"] - row["down"] <= h_vap:
                    out.append(Finding(
                        "warning", "surge-column-separation", f"{name}: column separation likely on the down-surge",
                        f"The drop of {u(row['down'], 'head', '.1f')} from {row['down_from']} takes the head at chainage "
                        f"{u(low['chainage'], 'head', '.1f')} (steady pressure head {u(low['pressure_head'], 'head', '.2f')}) down to vapour "
                        "pressure: the column is likely to part there, and its rejoining gives the worst surge. "
                        "Slow the stop, add protection (an air vessel, a surge tank, air admission), or confirm "
                        "with a transient analysis.", rg * (low["pressure_head"] - row["down"]), rg * h_vap,
                        "pressure", SRC_JOUKOWSKY, i, low["chainage"]))
        peak = row["peak"]
        if el.rating:
            text = (f"Highest steady pressure {u(p_steady, 'pressure', '.0f')} plus {how} gives {u(peak, 'pressure', '.0f')} "
                    f"against the rating {u(el.rating, 'pressure', '.0f')}")
            if p_steady > el.rating:
                out.append(Finding("error", "rating-steady", f"{name}: steady pressure above rating",
                                   f"Highest steady pressure {u(p_steady, 'pressure', '.0f')} exceeds the rating "
                                   f"{u(el.rating, 'pressure', '.0f')} even without surge.", p_steady, el.rating,
                                   "pressure", "the run's rating as typed", i))
            elif peak > el.rating:
                out.append(Finding("error", "surge-rating", f"{name}: surge may exceed rating",
                                   text + ": slow the closure (well beyond 2L/a), add surge protection, or use a "
                                   "higher class of pipe; confirm with a transient analysis.", peak, el.rating,
                                   "pressure", src, i))
            elif peak > RATING_NEAR * el.rating:
                out.append(Finding("warning", "surge-rating", f"{name}: surge close to rating",
                                   text + ": within 10 % of it.", peak, el.rating, "pressure", src, i))
            else:
                out.append(Finding("info", "surge-rating", f"{name}: surge within rating", text + ".",
                                   peak, el.rating, "pressure", src, i))
        else:
            out.append(Finding("caution", "surge-no-rating", f"{name}: no pressure rating given",
                               f"Highest steady pressure {u(p_steady, 'pressure', '.0f')}; with {how}, "
                               f"{u(peak, 'pressure', '.0f')}. Give the rating of the pipe and joints to check it.",
                               peak, None, "pressure", src, i))
    if period_parts:
        T = pipeline_period(period_parts)
        scope = "whole line" if complete else "runs with a wave speed"
        out.append(Finding(
            "info", "surge-period", "Pipeline period 2L/a",
            f"Pipeline period {T:.2f} s ({scope}): a valve closure or machine stop faster than this gives the "
            "full Joukowsky rise; the slower the closure beyond it, the smaller the surge. Screening estimate, "
            "not a transient analysis.", T, None, None, SRC_JOUKOWSKY))
    if any(isinstance(el, Pump) for el in line.elements) and period_parts:
        out.append(Finding(
            "caution", "surge-pump-trip", "Pump trip: down-surge",
            "When the pump stops suddenly the pressure first falls by about the Joukowsky head; at high points "
            "it can reach vapour pressure and the column separates, and the rejoining column causes the worst "
            "surge. A transient analysis should look at pump trip.", None, None, None, SRC_JOUKOWSKY))
    return out
