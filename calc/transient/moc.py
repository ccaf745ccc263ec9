"""The method of characteristics for a line of pipes in series with joints between them (Wylie and
Streeter, Fluid Transients in Systems, 1993, ch. 3, from memory).

Each pipe k is cut into n_k reaches of length dx_k = L_k / n_k; one time step dt serves every pipe, so
each pipe's wave speed is adjusted to a_k' = dx_k / dt (Courant number 1), the adjustment reported.
Along the characteristics, with B = a/(g A) and R = f dx/(2 g D A²),

    C+:  H_P = C_P - B Q_P,   C_P = H_A + B Q_A - R Q_A |Q_A|
    C-:  H_P = C_M + B Q_P,   C_M = H_B - B Q_B + R Q_B |Q_B|

so at an interior node Q_P = (C_P - C_M) / (2 B), H_P = (C_P + C_M) / 2, every interior node of every
pipe in one numpy expression per step. The ends of the pipes meet at **joints** (`calc.transient.joints`:
reservoirs, junctions, valves, machines) and a few interior nodes carry a **device**
(`calc.transient.devices`: surge tank, air vessel, air valve); each is given its characteristics and
returns its heads and flows.

Where the head at an interior node would fall below the vapour head, a vapour cavity forms there (the
discrete vapour cavity model, Bergant, Simpson and Tijsseling 2006, J. Fluids Struct. 22:135-171, from
memory): the head is held at the vapour head, the flows on either side part, and the cavity's volume
grows by their difference (trapezoidal in time) until it shrinks to nothing and collapses, which sends
the collapse surge. A node therefore keeps two flows, the one in the reach on its left and on its right;
away from a cavity they are equal.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from calc.water import G

#: Quasi-steady friction: how often a pipe's mean flow is looked at [steps], and by how much it must have
#: moved [share] for its friction factor to be worked out again (common practice: losses follow the flow
#: as it changes, without the cost of a friction solve at every node and step).
FRICTION_EVERY = 8
FRICTION_MOVE = 0.002


@dataclass
class Pipe:
    """One pipe for the transient: length, bore, wave speed and Darcy friction factor (held at its steady
    value: steady friction; a run's fittings lumped into it so the steady state is reproduced), the
    chainage of its start along the line, its centreline as (chainage within the pipe, elevation) points,
    and its pressure rating (gauge, Pa) if known."""

    L: float
    D: float
    a: float
    f: float
    label: str = ""
    x0: float = 0.0
    profile: list = field(default_factory=lambda: [(0.0, 0.0)])
    rating: float | None = None

    @property
    def A(self) -> float:
        return math.pi * self.D * self.D / 4.0


@dataclass
class Grid:
    """One time step for every pipe, each pipe's reaches and its wave speed after the Courant adjustment."""

    dt: float
    counts: list[int]
    a_used: list[float]

    @classmethod
    def at_step(cls, pipes: list[Pipe], dt: float) -> "Grid":
        """Each pipe as many reaches of a dt's travel as fit (at least one), its wave speed adjusted to dx/dt."""
        counts = [max(1, round(p.L / (p.a * dt))) for p in pipes]
        return cls(dt, counts, [p.L / (n * dt) for p, n in zip(pipes, counts)])

    def notes(self, pipes: list[Pipe]) -> list[str]:
        return [f"{p.label or f'pipe {k + 1}'}: wave speed {p.a:.4g} m/s adjusted to {a:.4g} m/s "
                f"({(a / p.a - 1) * 100:+.2f} %), {n} reach{'' if n == 1 else 'es'} of {p.L / n:.4g} m"
                for k, (p, a, n) in enumerate(zip(pipes, self.a_used, self.counts))]


def grid(pipes: list[Pipe], reaches_min: int = 4, reaches_total: int = 0) -> Grid:
    """dt from the pipe with the shortest travel time L/a over ``reaches_min`` reaches (and small enough
    that the line has at least ``reaches_total`` reaches in all); each other pipe as many reaches as fit,
    its wave speed adjusted to dx/dt (the price of Courant number 1 everywhere)."""
    dt = min(p.L / p.a for p in pipes) / max(1, reaches_min)
    if reaches_total:
        dt = min(dt, sum(p.L / p.a for p in pipes) / reaches_total)
    return Grid.at_step(pipes, dt)


@dataclass
class Watch:
    """A node whose head and flow are kept in time: its name, pipe and node within the pipe."""

    name: str
    pipe: int
    node: int


@dataclass
class Result:
    """Time [s]; per pipe, each node's chainage, elevation and highest and lowest head [m], and the
    largest vapour cavity reached there [m³]; the histories of the watched nodes and of the joints' and
    devices' states; the grid."""

    t: np.ndarray
    chainage: list[np.ndarray]
    elevation: list[np.ndarray]
    H_max: list[np.ndarray]
    H_min: list[np.ndarray]
    cavity_max: list[np.ndarray]
    H0: list[np.ndarray]
    histories: dict
    grid: Grid
    notes: list[str] = field(default_factory=list)


class System:
    """Pipes in series, ``joints`` (one more than the pipes: the start, each pipe-to-pipe joint, the end)
    and ``devices`` at interior nodes ({(pipe, node): device}); the steady heads and flow at every node
    for t = 0; the vapour head at every node."""

    def __init__(self, pipes: list[Pipe], joints: list, devices: dict | None = None,
                 reaches_min: int = 4, reaches_total: int = 0, gridded: Grid | None = None):
        if len(joints) != len(pipes) + 1:
            raise ValueError("a line of n pipes has n + 1 joints")
        self.pipes, self.joints = pipes, joints
        self.grid = gridded or grid(pipes, reaches_min, reaches_total)
        n = self.grid.counts
        self.offsets = np.concatenate([[0], np.cumsum([k + 1 for k in n])]).astype(int)
        self.devices = dict(devices or {})
        N = int(self.offsets[-1])
        self.B = np.empty(N)
        self.R = np.zeros(N)
        self.chainage, self.elevation = [], []
        for k, (p, nk, a) in enumerate(zip(pipes, n, self.grid.a_used)):
            sl = slice(self.offsets[k], self.offsets[k + 1])
            self.B[sl] = a / (G * p.A)
            s = np.linspace(0.0, p.L, nk + 1)
            self.chainage.append(p.x0 + s)
            xs, zs = zip(*p.profile) if p.profile else ((0.0,), (0.0,))
            self.elevation.append(np.interp(s, xs, zs))
        self.set_friction([p.f for p in pipes])

    def set_friction(self, f: list[float]):
        """Each pipe's friction factor (R = f dx / (2 g D A²) at its nodes)."""
        for k, (p, nk) in enumerate(zip(self.pipes, self.grid.counts)):
            self.R[self.offsets[k]:self.offsets[k + 1]] = f[k] * (p.L / nk) / (2 * G * p.D * p.A * p.A)

    def node(self, pipe: int, j: int) -> int:
        """The global index of node j of a pipe (negative j from the pipe's end)."""
        n = self.grid.counts[pipe]
        return int(self.offsets[pipe] + (j if j >= 0 else n + 1 + j))

    def reach_loss(self, pipe: int, Q: float) -> float:
        """The steady head one reach of the pipe loses at flow Q [m]: R Q |Q|."""
        return float(self.R[self.offsets[pipe]] * Q * abs(Q))

    def run(self, H0: list[np.ndarray], Q0: list[np.ndarray], t_end: float, vapour_head: list[np.ndarray] | None = None,
            watch: list[Watch] = (), cavities: bool = True, friction=None) -> Result:
        """From heads and flows at every node (the steady state) to ``t_end``.

        ``friction``: for each pipe, a function of its flow giving its friction factor (quasi-steady
        friction: every FRICTION_EVERY steps a pipe whose mean flow has moved by more than FRICTION_MOVE
        takes the factor of its new mean flow); None holds each pipe's factor (the steady one)."""
        dt = self.grid.dt
        pipes, joints = self.pipes, self.joints
        m = len(pipes)
        off = self.offsets
        H = np.concatenate(H0).astype(float)
        Ql = np.concatenate(Q0).astype(float)
        Qr = Ql.copy()
        N = H.size
        B, R = self.B, self.R
        Hv = np.concatenate(vapour_head) if vapour_head is not None else np.full(N, -np.inf)
        starts = off[:-1]
        ends = off[1:] - 1
        # Nodes 1 .. N-2 are worked out together by slices; the pipes' end nodes and the devices' nodes
        # among them are then put right by their joints and devices, and only true interior nodes may cavitate.
        free = np.ones(N, dtype=bool)
        free[starts] = False
        free[ends] = False
        for k, j in self.devices:
            free[self.node(k, j)] = False
        Hv_in = Hv[1:-1]
        B_in = B[1:-1]
        inv2B = 1.0 / (2.0 * B_in)
        B_a, R_a, B_b, R_b = B[:-1], R[:-1], B[1:], R[1:]
        cav = np.zeros(N)  # vapour cavity volume at each node [m³]
        cav_max = np.zeros(N)
        flowing = [(j, int(starts[j]) if j < m else None, int(ends[j - 1]) if j > 0 else None) for j in range(m + 1)]
        dev_nodes = [(self.node(k, j), d) for (k, j), d in self.devices.items()]
        for j, b, e in flowing:
            joints[j].start(H[e] if e is not None else None, Ql[e] if e is not None else None,
                            H[b] if b is not None else None, Ql[b] if b is not None else None)
            if cavities and hasattr(joints[j], "set_vapour"):
                joints[j].set_vapour(Hv[e] if e is not None else -np.inf, Hv[b] if b is not None else -np.inf)
        for i, d in dev_nodes:
            d.start(H[i], Ql[i])
        steps = int(math.ceil(t_end / dt - 1e-9))
        t = np.arange(steps + 1) * dt
        H_max, H_min = H.copy(), H.copy()
        watch_idx = [self.node(w.pipe, w.node) for w in watch]
        hist = {w.name: {"H": np.empty(steps + 1), "Q": np.empty(steps + 1)} for w in watch}
        rows = [(hist[w.name]["H"], hist[w.name]["Q"], i) for w, i in zip(watch, watch_idx)]
        for hh, qq, i in rows:
            hh[0], qq[0] = H[i], Ql[i]
        cp = np.empty(N - 1)
        cm = np.empty(N - 1)
        tmp = np.empty(N - 1)
        low = np.empty(N - 2, dtype=bool)
        n_vap = 0  # nodes held at the vapour head
        at_vap = np.zeros(N - 2, dtype=bool)
        dq_in = np.zeros(N - 2)  # Q_out - Q_in at each node held at vapour (zero elsewhere)
        Hv_free = np.where(free[1:-1], Hv[1:-1], -np.inf)
        H_a, H_b = H[:-1], H[1:]
        Qr_a, Ql_b = Qr[:-1], Ql[1:]
        H_in, Ql_in, Qr_in, cav_in = H[1:-1], Ql[1:-1], Qr[1:-1], cav[1:-1]
        step_joints = [(joints[j].step, b, e) for j, b, e in flowing]
        counts = np.asarray(self.grid.counts, dtype=float) + 1.0
        q_last = np.add.reduceat(Ql, starts) / counts
        step_devices = [(d.step, i) for i, d in dev_nodes]
        for s in range(1, steps + 1):
            ts = t[s]
            # C+ arriving at node i from i - 1 (cp[i - 1]) and C- arriving at node i from i + 1 (cm[i]):
            # C_P = H_A + Q_A (B - R |Q_A|), C_M = H_B - Q_B (B - R |Q_B|)
            np.abs(Qr_a, out=tmp)
            tmp *= R_a
            np.subtract(B_a, tmp, out=tmp)
            tmp *= Qr_a
            np.add(H_a, tmp, out=cp)
            np.abs(Ql_b, out=tmp)
            tmp *= R_b
            np.subtract(B_b, tmp, out=tmp)
            tmp *= Ql_b
            np.subtract(H_b, tmp, out=cm)
            cp_in, cm_in = cp[:-1], cm[1:]
            # every node 1 .. N-2 as if interior and liquid; joints and devices put their own nodes right below
            np.add(cp_in, cm_in, out=H_in)
            H_in *= 0.5
            np.subtract(cp_in, cm_in, out=Ql_in)
            Ql_in *= inv2B
            Qr_in[:] = Ql_in
            if cavities:
                np.less(H_in, Hv_free, out=low)
                wet_any = n_vap > 0 or low.any()
            else:
                wet_any = False
            if wet_any:
                idx = np.nonzero(low | (cav_in > 0.0))[0]
                hv = Hv_in[idx]
                bi = B_in[idx]
                qin = (cp_in[idx] - hv) / bi
                qout = (hv - cm_in[idx]) / bi
                vol = cav_in[idx] + 0.5 * dt * ((qout - qin) + dq_in[idx])
                # a cavity that shrinks to nothing collapses: the node is liquid again, unless its liquid head
                # would still lie below the vapour head (then it stays at vapour with no volume yet)
                keep = (vol > 0.0) | (H_in[idx] < hv)
                dq_in[at_vap] = 0.0
                at_vap[:] = False
                kidx = idx[keep]
                H_in[kidx] = hv[keep]
                Ql_in[kidx] = qin[keep]
                Qr_in[kidx] = qout[keep]
                dq_in[kidx] = qout[keep] - qin[keep]
                at_vap[kidx] = True
                cav_in[idx] = np.where(keep, np.maximum(vol, 0.0), 0.0)
                n_vap = kidx.size
                np.maximum(cav_max, cav, out=cav_max)
            for step, b, e in step_joints:
                H1, Q1, H2, Q2 = step(ts, dt, (cp[e - 1], B[e]) if e is not None else None,
                                      (cm[b], B[b]) if b is not None else None)
                if e is not None:
                    H[e] = H1
                    Ql[e] = Qr[e] = Q1
                if b is not None:
                    H[b] = H2
                    Ql[b] = Qr[b] = Q2
            for step, i in step_devices:
                H[i], Ql[i], Qr[i] = step(ts, dt, (cp[i - 1], B[i]), (cm[i], B[i]))
            np.maximum(H_max, H, out=H_max)
            np.minimum(H_min, H, out=H_min)
            if friction is not None and s % FRICTION_EVERY == 0:
                q_mean = np.add.reduceat(Ql, starts) / counts
                moved = np.abs(q_mean - q_last) > FRICTION_MOVE * np.maximum(np.abs(q_last), 1e-9)
                for k in np.nonzero(moved)[0]:
                    p, nk = pipes[k], self.grid.counts[k]
                    f = friction[k](abs(float(q_mean[k])))
                    R[starts[k]:starts[k] + nk + 1] = f * (p.L / nk) / (2 * G * p.D * p.A * p.A)
                    q_last[k] = q_mean[k]
            for hh, qq, i in rows:
                hh[s] = H[i]
                qq[s] = Ql[i]
        for j, b, e in flowing:
            hist.update(joints[j].histories())
            jt = joints[j]
            if e is not None and getattr(jt, "cav_up_max", 0.0) > 0.0:
                cav_max[e] = max(cav_max[e], jt.cav_up_max)
                if b is not None and not jt.elements:
                    cav_max[b] = max(cav_max[b], jt.cav_up_max)
            if b is not None and getattr(jt, "cav_down_max", 0.0) > 0.0:
                cav_max[b] = max(cav_max[b], jt.cav_down_max)
        for i, d in dev_nodes:
            hist.update(d.histories())
        split = lambda x: [x[off[k]:off[k + 1]].copy() for k in range(m)]  # noqa: E731
        return Result(t, self.chainage, self.elevation, split(H_max), split(H_min), split(cav_max),
                      [np.asarray(h, dtype=float).copy() for h in H0], hist, self.grid,
                      self.grid.notes(pipes))
