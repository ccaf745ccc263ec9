"""Surge screening: Korteweg wave speed, Joukowsky rise for a sudden stop, pipeline period, against each run's rating."""

from __future__ import annotations

import math

from calc.model.elements import Line, PipeRun, Pump
from calc.model.settings import CheckSettings
from calc.review.findings import RATING_NEAR, SRC_JOUKOWSKY, SRC_KORTEWEG, Finding, label
from calc.water import G


def restraint_factor(restraint: str, nu: float) -> float:
    """Pipe restraint factor c1 of the Korteweg wave speed [-].

    c1 = 1 with expansion joints throughout, 1 - nu^2 anchored against axial movement throughout,
    1 - nu/2 anchored at the upstream end only; nu is Poisson's ratio of the wall [-].
    Reference: Wylie, E. B. and Streeter, V. L., Fluid Transients in Systems (1993), thin-walled pipes.

    >>> restraint_factor("expansion_joints", 0.3), restraint_factor("anchored", 0.3)
    (1.0, 0.91)
    >>> restraint_factor("anchored_upstream", 0.3)
    0.85
    """
    if restraint == "expansion_joints":
        return 1.0
    if restraint == "anchored_upstream":
        return 1.0 - nu / 2.0
    return 1.0 - nu * nu


def korteweg_wave_speed(K: float, rho: float, D: float, e: float, E: float, c1: float = 1.0) -> float:
    """Pressure wave speed in a liquid-filled elastic pipe, a = sqrt(K/rho) / sqrt(1 + c1 K D / (E e)) [m/s].

    Parameters: K bulk modulus of the liquid [Pa], rho density [kg/m3], D inner diameter [m],
    e wall thickness [m], E Young's modulus of the wall [Pa], c1 restraint factor [-]
    (`restraint_factor`). Valid for thin walls (D/e above about 25); thick walls need another c1.
    Reference: Korteweg (1878); form with c1 as in Wylie and Streeter, Fluid Transients in Systems (1993).

    Steel D 500 mm, e 8 mm, E 207 GPa, water K 2.19 GPa, c1 = 1: about 1150 m/s.

    >>> round(korteweg_wave_speed(2.19e9, 998.2, 0.5, 0.008, 207e9, 1.0))
    1149
    """
    return math.sqrt(K / rho) / math.sqrt(1.0 + c1 * K * D / (E * e))


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


def wave_speed(line: Line, run: PipeRun) -> tuple[float | None, str]:
    """Korteweg wave speed of one run [m/s], or None with what is missing."""
    missing = []
    K = line.liquid.bulk_modulus
    if not K:
        missing.append("the liquid's bulk modulus")
    if run.material is None:
        missing.append("the wall material (for its modulus and Poisson ratio)")
    if not run.wall:
        missing.append("the wall thickness")
    if missing:
        return None, " and ".join(missing)
    mat = run.material
    c1 = restraint_factor(run.restraint, mat.nu_poisson)
    return korteweg_wave_speed(K, line.liquid.rho, run.D, run.wall, mat.E, c1), ""


def surge_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    """Screening only: Korteweg wave speed, Joukowsky rise for a sudden stop, and the run's rating."""
    out = []
    rho = line.liquid.rho
    rg = rho * G
    period_parts = []
    complete = True
    by_index = {d["index"]: d for d in point["elements"]}
    for i, el in enumerate(line.elements):
        if not isinstance(el, PipeRun):
            continue
        d = by_index[i]
        name = label(line, i)
        heads = [st["pressure_head"] for st in point["profile"] if st["element"] == i]
        h_max = max(heads) if heads else 0.0
        p_steady = rg * h_max
        a, missing = wave_speed(line, el)
        if a is None:
            complete = False
            out.append(Finding("info", "surge-wave-speed-missing", f"{name}: wave speed not computed",
                               f"Give {missing} to screen this run for surge; meanwhile an allowance of "
                               f"{s.surge_allowance / 1e3:.0f} kPa is used against its rating.",
                               None, None, None, s.source("surge_allowance"), i))
            surge, how, src = s.surge_allowance, "the surge allowance", s.source("surge_allowance")
        else:
            period_parts.append((el.L, a))
            dH = joukowsky_head(a, d["V"])
            surge, src = rg * dH, SRC_JOUKOWSKY
            how = f"a Joukowsky rise of {dH:.1f} m ({rg * dH / 1e3:.0f} kPa) for a sudden stop"
            out.append(Finding(
                "info", "surge-screen", f"{name}: surge screening",
                f"Wave speed {a:.0f} m/s (Korteweg, {el.restraint.replace('_', ' ')}); stopping "
                f"{d['V']:.2f} m/s faster than the pipeline period gives a head rise of {dH:.1f} m "
                f"({rg * dH / 1e3:.0f} kPa). Screening estimate, not a transient analysis.",
                rg * dH, None, "pressure", SRC_KORTEWEG + "; " + SRC_JOUKOWSKY, i))
        peak = p_steady + surge
        if el.rating:
            text = (f"Highest steady pressure {p_steady / 1e3:.0f} kPa plus {how} gives {peak / 1e3:.0f} kPa "
                    f"against the rating {el.rating / 1e3:.0f} kPa")
            if p_steady > el.rating:
                out.append(Finding("error", "rating-steady", f"{name}: steady pressure above rating",
                                   f"Highest steady pressure {p_steady / 1e3:.0f} kPa exceeds the rating "
                                   f"{el.rating / 1e3:.0f} kPa even without surge.", p_steady, el.rating,
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
                               f"Highest steady pressure {p_steady / 1e3:.0f} kPa; with {how}, "
                               f"{peak / 1e3:.0f} kPa. Give the rating of the pipe and joints to check it.",
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
