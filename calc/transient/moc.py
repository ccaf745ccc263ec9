"""The method of characteristics for a line of pipes in series (Wylie and Streeter, Fluid Transients in
Systems, 1993, ch. 3): the first step of the transient analysis, a reservoir feeding runs in series to a
valve at the end that closes by a law in time, with steady friction.

Each run i is cut into N_i reaches of length dx_i = L_i / N_i; one time step dt serves every run, so each
run's wave speed is adjusted to a_i' = dx_i / dt (Courant number 1), the adjustment reported. Along the
characteristics, with B = a/(g A) and R = f dx/(2 g D A²),

    C+:  H_P = C_P - B Q_P,   C_P = H_A + B Q_A - R Q_A |Q_A|
    C-:  H_P = C_M + B Q_P,   C_M = H_B - B Q_B + R Q_B |Q_B|

so at an interior node Q_P = (C_P - C_M) / (2 B), H_P = (C_P + C_M) / 2. At a junction of two runs the
flow and head are shared: Q_P = (C_P - C_M) / (B_1 + B_2). At the start the reservoir holds the head; at
the valve Q_P² = (tau Q_0)² H_P / H_0 (its steady loss H_0 at Q_0 scaled by the relative opening tau), so
Q_P = -B C_v + sqrt((B C_v)² + 2 C_v C_P), C_v = (tau Q_0)² / (2 H_0).

Every node's updates are numpy slices, one per run and step.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from calc.water import G


@dataclass
class Run:
    """One pipe run for the transient: length, bore, wave speed, Darcy friction factor (held at its steady
    value: steady friction) and the number of reaches."""

    L: float
    D: float
    a: float
    f: float
    reaches: int

    @property
    def A(self) -> float:
        return math.pi * self.D * self.D / 4.0


@dataclass
class Result:
    """Time t [s] and, per run, the highest and lowest head at each node [m]; the head and flow at the
    valve in time; the wave speeds used after the Courant adjustment."""

    t: np.ndarray
    H_max: list[np.ndarray]
    H_min: list[np.ndarray]
    H_valve: np.ndarray
    Q_valve: np.ndarray
    a_used: list[float]
    dt: float
    notes: list[str] = field(default_factory=list)


def grid(runs: list[Run], reaches_min: int = 4) -> tuple[float, list[int], list[float]]:
    """One time step for every run and each run's reaches: dt from the run with the shortest travel time
    L/a over ``reaches_min`` reaches, each other run as many reaches as fit, its wave speed adjusted to
    dx/dt (the adjustment is the price of Courant number 1 everywhere)."""
    dt = min(r.L / r.a for r in runs) / reaches_min
    counts = [max(1, round(r.L / (r.a * dt))) for r in runs]
    a_used = [r.L / (n * dt) for r, n in zip(runs, counts)]
    return dt, counts, a_used


def run_valve_closure(runs: list[Run], H_res: float, Q0: float, closure, t_end: float,
                      reaches_min: int = 4, steady_heads: list[np.ndarray] | None = None,
                      flow=None) -> Result:
    """Runs from a reservoir at head ``H_res`` (above the valve's outlet, the datum) to a valve discharging
    to the atmosphere at the end, flowing ``Q0``; the head left at the valve is its steady loss; the valve's
    relative opening tau(t) is given by ``closure``; from t = 0 to ``t_end``.

    The steady state at t = 0 is the friction line from H_res (each run's head falling by R Q0|Q0| a reach),
    so that the first step reproduces it; ``steady_heads`` may give it instead. With ``flow`` (a function of
    time) the end's flow is prescribed instead of a valve's (a boundary for tests and, later, machines).
    """
    dt, counts, a_used = grid(runs, reaches_min)
    B = [a / (G * r.A) for r, a in zip(runs, a_used)]
    R = [r.f * (r.L / n) / (2 * G * r.D * r.A * r.A) for r, n in zip(runs, counts)]
    # The steady state: the flow everywhere, the head falling along each run by its friction.
    H, Q = [], []
    head = H_res
    for k, (r, n) in enumerate(zip(runs, counts)):
        if steady_heads is not None:
            h = np.asarray(steady_heads[k], dtype=float)
        else:
            h = head - R[k] * Q0 * abs(Q0) * np.arange(n + 1)
        H.append(h.copy())
        Q.append(np.full(n + 1, Q0))
        head = float(h[-1])
    H_v0 = float(H[-1][-1])
    # The valve's steady loss is what is left at its inlet (discharging to the atmosphere at datum 0).
    Cv0 = Q0 * Q0 / (2.0 * H_v0) if H_v0 > 0 else 0.0
    steps = int(math.ceil(t_end / dt))
    t = np.arange(steps + 1) * dt
    H_max = [h.copy() for h in H]
    H_min = [h.copy() for h in H]
    H_valve = np.empty(steps + 1)
    Q_valve = np.empty(steps + 1)
    H_valve[0], Q_valve[0] = H[-1][-1], Q[-1][-1]
    m = len(runs)
    for s in range(1, steps + 1):
        newH = [np.empty_like(h) for h in H]
        newQ = [np.empty_like(q) for q in Q]
        CP_end, CM_start = [], []
        for k in range(m):
            h, q, b, rr = H[k], Q[k], B[k], R[k]
            CP = h[:-1] + b * q[:-1] - rr * q[:-1] * np.abs(q[:-1])  # arriving at nodes 1..n from the left
            CM = h[1:] - b * q[1:] + rr * q[1:] * np.abs(q[1:])      # arriving at nodes 0..n-1 from the right
            newQ[k][1:-1] = (CP[:-1] - CM[1:]) / (2 * b)
            newH[k][1:-1] = (CP[:-1] + CM[1:]) / 2
            CP_end.append(CP[-1])
            CM_start.append(CM[0])
        # the reservoir at the start holds its head
        newH[0][0] = H_res
        newQ[0][0] = (H_res - CM_start[0]) / B[0]
        # junctions: one head and one flow for both runs
        for k in range(m - 1):
            Qj = (CP_end[k] - CM_start[k + 1]) / (B[k] + B[k + 1])
            Hj = CP_end[k] - B[k] * Qj
            newQ[k][-1] = newQ[k + 1][0] = Qj
            newH[k][-1] = newH[k + 1][0] = Hj
        # the valve at the end
        tau = float(closure(t[s]))
        cp, b = CP_end[-1], B[-1]
        if flow is not None:
            Qv = float(flow(t[s]))
        elif tau <= 0.0 or Cv0 == 0.0:
            Qv = 0.0
        else:
            cv = tau * tau * Cv0
            Qv = -b * cv + math.sqrt((b * cv) ** 2 + 2 * cv * max(cp, 0.0))
        newQ[-1][-1] = Qv
        newH[-1][-1] = cp - b * Qv
        H, Q = newH, newQ
        for k in range(m):
            np.maximum(H_max[k], H[k], out=H_max[k])
            np.minimum(H_min[k], H[k], out=H_min[k])
        H_valve[s], Q_valve[s] = H[-1][-1], Q[-1][-1]
    notes = [f"run {k + 1}: wave speed {r.a:.4g} m/s adjusted to {a:.4g} m/s ({(a / r.a - 1) * 100:+.2f} %), "
             f"{n} reaches" for k, (r, a, n) in enumerate(zip(runs, a_used, counts))]
    return Result(t, H_max, H_min, H_valve, Q_valve, a_used, dt, notes)


def instant(t: float) -> float:
    """A valve shut at once at t = 0."""
    return 0.0


def linear_closure(Tc: float):
    """A valve closing linearly in its opening over ``Tc`` seconds."""
    return lambda t: max(0.0, 1.0 - t / Tc)
