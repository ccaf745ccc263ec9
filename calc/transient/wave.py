"""Pressure wave speed in a liquid-filled pipe (Korteweg 1878; the restraint factors of Wylie and Streeter,
Fluid Transients in Systems, 1993, from memory): what the surge screening and the transient analysis share."""

from __future__ import annotations

import math

from calc.model.elements import Line, PipeRun

#: D/e below which a wall counts as thick and takes the thick-wall restraint factor [-] (Wylie and
#: Streeter 1993: the thin-wall form holds for D/e above about 25).
THICK_WALL = 25.0
def restraint_factor(restraint: str, nu: float, e_over_D: float | None = None) -> float:
    """Pipe restraint factor c1 of the Korteweg wave speed [-], thin or thick wall.

    Thin wall (``e_over_D`` None): c1 = 1 with expansion joints throughout, 1 - nu^2 anchored against
    axial movement throughout, 1 - nu/2 anchored at the upstream end only.
    Thick wall (e/D given): c1 = 2 (e/D)(1 + nu) + D (1 - nu^2)/(D + e) anchored throughout,
    2 (e/D)(1 + nu) + D/(D + e) with expansion joints, 2 (e/D)(1 + nu) + D (1 - nu/2)/(D + e) anchored
    upstream; each tends to the thin form as e/D goes to 0. nu is Poisson's ratio of the wall [-].
    Reference: Wylie, E. B. and Streeter, V. L., Fluid Transients in Systems (1993), wave speed in
    thin- and thick-walled pipes (from memory).

    >>> restraint_factor("expansion_joints", 0.3), restraint_factor("anchored", 0.3)
    (1.0, 0.91)
    >>> restraint_factor("anchored_upstream", 0.3)
    0.85
    >>> round(restraint_factor("anchored", 0.46, 1 / 9), 4)
    1.034
    """
    if e_over_D is None:
        if restraint == "expansion_joints":
            return 1.0
        if restraint == "anchored_upstream":
            return 1.0 - nu / 2.0
        return 1.0 - nu * nu
    base = 2.0 * e_over_D * (1.0 + nu)
    ring = 1.0 / (1.0 + e_over_D)
    if restraint == "expansion_joints":
        return base + ring
    if restraint == "anchored_upstream":
        return base + (1.0 - nu / 2.0) * ring
    return base + (1.0 - nu * nu) * ring


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


def wave_speed_detail(line: Line, run: PipeRun) -> dict:
    """Korteweg wave speed of one run with every input, or ``missing`` naming what is not known.

    The thick-wall restraint factor is used where D/e is below THICK_WALL (PE of SDR 7.4 to 17 and
    most plastic pipe), the thin-wall one elsewhere.
    """
    if run.wave_speed is not None:
        return {"a": run.wave_speed, "missing": "", "form": "typed", "D": run.D, "restraint": run.restraint}
    missing = []
    K = line.liquid.bulk_modulus
    if not K:
        missing.append("the liquid's bulk modulus")
    if run.material is None:
        missing.append("the wall material (for its modulus and Poisson ratio)")
    if not run.wall:
        missing.append("the wall thickness")
    if missing:
        return {"a": None, "missing": " and ".join(missing)}
    mat = run.material
    D_e = run.D / run.wall
    thick = D_e < THICK_WALL
    c1 = restraint_factor(run.restraint, mat.nu_poisson, run.wall / run.D if thick else None)
    a = korteweg_wave_speed(K, line.liquid.rho, run.D, run.wall, mat.E, c1)
    return {"a": a, "missing": "", "c1": c1, "form": "thick-wall" if thick else "thin-wall", "D_over_e": D_e,
            "E": mat.E, "nu": mat.nu_poisson, "K": K, "e": run.wall, "D": run.D, "rho": line.liquid.rho,
            "restraint": run.restraint}


def wave_speed(line: Line, run: PipeRun) -> tuple[float | None, str]:
    """Korteweg wave speed of one run [m/s], or None with what is missing."""
    w = wave_speed_detail(line, run)
    return w["a"], w["missing"]
