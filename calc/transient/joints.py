"""Joints of the transient line: where two pipes meet, or a pipe meets the start or the end, with the
valves and machines that sit there (Wylie and Streeter, Fluid Transients in Systems, 1993, ch. 3,
boundary conditions, from memory).

A joint is written in total heads (the energy line, E = H + V²/2g), as the steady solve is: the side
upstream gives E1(Q) (a pipe's C+ characteristic, E1 = C_P - B Q + c Q², or the start's total head), the
side downstream E2(Q) (a pipe's C-, E2 = C_M + B Q + c Q², or the end's total head), and the elements
between them take h_i(Q) (a valve's loss, a pump's head as a negative loss). The one flow through the
joint solves

    F(Q) = E1(Q) - E2(Q) - sum h_i(Q) = 0,

which falls with Q (the pipes' impedances B outweigh anything a machine does), by Newton's method kept
inside a bracket. A valve that is shut, a check valve against reverse flow, and a free outlet that
cannot draw leave Q = 0 and each side at its own head.

Each run's own losses (friction and fittings) are in its pipe (`calc.transient.line`), so a joint
between two runs carries only the change of velocity head; with the same total-head bookkeeping as the
steady solve the steady state is a fixed point of every joint.
"""

from __future__ import annotations

import math

from calc.water import G

#: How near F(Q) = 0 the joint's flow is solved [m of head] (round-off for heads of some hundreds of m).
TOL = 1e-10


def velocity_head_coefficient(D: float) -> float:
    """c in V²/2g = c Q² for a bore D [m]."""
    A = math.pi * D * D / 4.0
    return 1.0 / (2.0 * G * A * A)


class Fixed:
    """A start or end held at a static head (a reservoir's surface, a known pressure, a free jet's
    centre), with total head ``static + c Q²`` (``c`` the velocity head the start or end holds; for a
    jet, the nozzle's, scaled by ``opening(t)`` when its needle closes). ``forward_only``: a jet or free
    outlet, which passes no flow back."""

    def __init__(self, static: float, c: float = 0.0, forward_only: bool = False, opening=None):
        self.static, self.c, self.forward_only, self.opening = static, c, forward_only, opening
        self.c_now = c

    def at(self, t: float) -> None:
        if self.opening is not None:
            tau = self.opening(t)
            self.c_now = self.c / (tau * tau) if tau > 0 else math.inf
        else:
            self.c_now = self.c

    @property
    def shut(self) -> bool:
        return math.isinf(self.c_now)


class Element:
    """Something in a joint that takes head h(Q) from the flow [m] (negative when it gives head)."""

    forward_only = False

    def at(self, t: float, dt: float) -> None:
        """Set the element's state for time t, a step dt after the last (a valve's opening, a pump's speed)."""

    @property
    def shut(self) -> bool:
        return False

    def h(self, Q: float) -> tuple[float, float]:
        """(head taken, its derivative in Q)."""
        raise NotImplementedError

    def start(self, Q: float) -> None:
        """The steady state at t = 0."""

    def advance(self, t: float, dt: float, Q: float, H1: float, H2: float) -> None:
        """After the step's flow is found: carry the element's own state on (a pump's speed)."""

    def histories(self) -> dict:
        return {}


class Loss(Element):
    """A loss k Q|Q| (a valve or fitting fixed at its steady K), ``k`` in m per (m³/s)², scaled by
    1/phi(t)² where ``phi(t)`` is the relative flow coefficient of a valve closing or opening (the
    effective area CdA over its steady value); shut at phi = 0. ``check``: shuts against reverse flow
    (ideal: at once, and opens again when the heads would drive flow forward)."""

    def __init__(self, k: float, phi=None, check: bool = False, name: str = ""):
        self.k, self.phi, self.forward_only, self.name = k, phi, check, name
        self.k_now, self._shut = k, False
        self.t_hist: list[float] = []
        self.Q_hist: list[float] = []

    def at(self, t: float, dt: float) -> None:
        if self.phi is None:
            return
        p = self.phi(t)
        self._shut = p <= 0.0
        self.k_now = self.k / (p * p) if p > 0 else math.inf

    @property
    def shut(self) -> bool:
        return self._shut

    def h(self, Q: float) -> tuple[float, float]:
        k = self.k_now
        return k * Q * abs(Q), 2.0 * k * abs(Q)


class CurvePump(Element):
    """A pump running on at its steady speed: its head from its own curve (the group's), h = -H(Q)."""

    def __init__(self, head, name: str = ""):
        self.head, self.name = head, name

    def h(self, Q: float) -> tuple[float, float]:
        d = 1e-6 * max(abs(Q), 1e-3)
        return -self.head(Q), -(self.head(Q + d) - self.head(Q - d)) / (2 * d)


class Joint:
    """Elements between an upstream and a downstream side. A side is a pipe (given its characteristic
    each step) or a `Fixed` start or end. ``c_up``/``c_down``: the velocity-head coefficients of the
    pipes on either side (their total head is H + c Q²)."""

    def __init__(self, elements=(), upstream: Fixed | None = None, downstream: Fixed | None = None,
                 c_up: float = 0.0, c_down: float = 0.0, name: str = ""):
        self.elements = list(elements)
        self.upstream, self.downstream = upstream, downstream
        self.c_up, self.c_down, self.name = c_up, c_down, name
        self.Q = 0.0
        self._losses_only = all(isinstance(el, Loss) for el in self.elements)
        # what each step needs and never changes (the step runs thousands of times)
        self._timed = tuple(x for x in (upstream, downstream) if x is not None and x.opening is not None)
        self._moving = tuple(el for el in self.elements if type(el).at is not Element.at
                             and not (isinstance(el, Loss) and el.phi is None))
        self._forward = (any(el.forward_only for el in self.elements)
                         or any(x is not None and x.forward_only for x in (upstream, downstream)))

    def start(self, H1, Q1, H2, Q2):
        self.Q = Q1 if Q1 is not None else Q2
        for el in self.elements:
            el.start(self.Q)

    def set_vapour(self, hv_up: float, hv_down: float) -> None:
        """The vapour heads at the pipe nodes on either side, below which a cavity opens there."""
        self.hv_up, self.hv_down = hv_up, hv_down

    hv_up = hv_down = -math.inf
    cav_up = cav_down = 0.0       # cavity volumes at the nodes either side [m³]
    dq_up = dq_down = 0.0         # the flow out of each cavity less the flow in, at the last step
    cav_up_max = cav_down_max = 0.0

    def _flow(self, s1, b1, c1, s2, b2, c2, forward):
        """The one flow through the elements between sides E1 = s1 - b1 Q + c1 Q², E2 = s2 + b2 Q + c2 Q²."""
        if self._losses_only:
            # every term is a square or linear in Q: the root in closed form, on the side F(0) points to
            A = s1 - s2
            if A == 0.0 or (forward and A <= 0.0):
                return 0.0
            k = 0.0
            for el in self.elements:
                k += el.k_now
            a = c1 - c2 - (k if A > 0.0 else -k)
            b = b1 + b2
            if b == 0.0:
                return math.copysign(math.sqrt(abs(A / a)), A) if a != 0.0 else 0.0
            return 2.0 * A / (b + math.sqrt(max(0.0, b * b - 4.0 * a * A)))
        els = self.elements

        def F(q):
            f = s1 - b1 * q + c1 * q * q - s2 - b2 * q - c2 * q * q
            d = -b1 + 2 * c1 * q - b2 - 2 * c2 * q
            for el in els:
                h, dh = el.h(q)
                f -= h
                d -= dh
            return f, d

        if forward and F(0.0)[0] <= 0.0:
            return 0.0
        return solve_falling(F, self.Q, lo=0.0 if forward else -math.inf)

    def step(self, t, dt, up, down):
        for side in self._timed:
            side.at(t)
        shut = False
        for el in self._moving:
            el.at(t, dt)
            shut = shut or el.shut
        for side in self._timed:
            shut = shut or side.shut
        if up is None:
            fx = self.upstream
            s1, b1, c1 = fx.static, 0.0, fx.c_now
        else:
            s1, b1, c1 = up[0], up[1], self.c_up
        if down is None:
            fx = self.downstream
            s2, b2, c2 = fx.static, 0.0, fx.c_now
        else:
            s2, b2, c2 = down[0], down[1], self.c_down
        forward = self._forward
        Q = 0.0 if shut else self._flow(s1, b1, c1, s2, b2, c2, forward)
        H1 = s1 - b1 * Q if up is not None else None
        H2 = s2 + b2 * Q if down is not None else None
        Q1 = Q2 = Q
        if up is not None and down is not None and not self.elements:
            # a junction of two runs is one node: a vapour cavity there parts both
            hv = max(self.hv_up, self.hv_down)
            if self.cav_up > 0.0 or min(H1, H2) < hv:
                q1, q2 = (s1 - hv) / b1, (hv - s2) / b2
                vol = self.cav_up + 0.5 * dt * ((q2 - q1) + self.dq_up)
                if vol > 0.0 or min(H1, H2) < hv:
                    vol = max(vol, 0.0)
                    H1 = H2 = hv
                    Q1, Q2 = q1, q2
                    self.cav_up, self.dq_up = vol, q2 - q1
                    self.cav_up_max = max(self.cav_up_max, vol)
                else:
                    self.cav_up = self.dq_up = 0.0
        else:
            if up is not None and (self.cav_up > 0.0 or H1 < self.hv_up):
                # the upstream run's last node at vapour: the elements draw from the cavity
                q_in = (s1 - self.hv_up) / b1
                q = 0.0 if shut else self._flow(self.hv_up, 0.0, c1, s2, b2, c2, forward)
                vol = self.cav_up + 0.5 * dt * ((q - q_in) + self.dq_up)
                if vol > 0.0 or H1 < self.hv_up:
                    vol = max(vol, 0.0)
                    Q, Q1, H1 = q, q_in, self.hv_up
                    Q2 = Q
                    H2 = s2 + b2 * Q if down is not None else None
                    self.cav_up, self.dq_up = vol, q - q_in
                    self.cav_up_max = max(self.cav_up_max, vol)
                else:
                    self.cav_up = self.dq_up = 0.0
            if down is not None and (self.cav_down > 0.0 or H2 < self.hv_down):
                # the downstream run's first node at vapour: the elements feed the cavity
                e1 = (self.hv_up, 0.0) if self.cav_up > 0.0 else (s1, b1)
                q = 0.0 if shut else self._flow(e1[0], e1[1], c1, self.hv_down, 0.0, c2, forward)
                q_out = (self.hv_down - s2) / b2
                vol = self.cav_down + 0.5 * dt * ((q_out - q) + self.dq_down)
                if vol > 0.0 or H2 < self.hv_down:
                    vol = max(vol, 0.0)
                    Q, Q2, H2 = q, q_out, self.hv_down
                    if self.cav_up > 0.0:
                        self.dq_up = q - Q1
                    else:
                        Q1, H1 = Q, (s1 - b1 * Q if up is not None else None)
                    self.cav_down, self.dq_down = vol, q_out - q
                    self.cav_down_max = max(self.cav_down_max, vol)
                else:
                    self.cav_down = self.dq_down = 0.0
        self.Q = Q
        for el in self.elements:
            el.advance(t, dt, Q, H1, H2)
        return H1, Q1, H2, Q2

    def histories(self) -> dict:
        out = {}
        for el in self.elements:
            out.update(el.histories())
        return out


def solve_falling(F, q: float, lo: float = -math.inf, hi: float = math.inf, tol: float = TOL) -> float:
    """The root of a function F(q) -> (value, derivative) that falls with q: Newton's method from q,
    each step kept inside the bracket [lo, hi] the signs so far give (bisection when Newton leaves it;
    doubling steps outward while one side is still open)."""
    if lo > -math.inf:
        if F(lo)[0] <= 0.0:
            return lo
    q = max(q, lo) if lo > -math.inf else q
    step = max(abs(q), 1e-3)
    for _ in range(200):
        f, d = F(q)
        if abs(f) <= tol:
            return q
        if f > 0.0:
            lo = q
        else:
            hi = q
        qn = q - f / d if d < 0.0 else math.nan
        if not (lo < qn < hi):
            if lo > -math.inf and hi < math.inf:
                qn = 0.5 * (lo + hi)
            else:
                qn = q + step if f > 0.0 else q - step
                step *= 2.0
        if abs(qn - q) <= 1e-15 * max(1.0, abs(q)):
            return qn
        q = qn
    return q
