"""Pumps in the transient: a pump that trips (runs down on its own and the motor's inertia) or starts
(brought to speed by its motor over a time), in a joint of `calc.transient.joints`.

**Normal operation (pumping forward, turning forward)** follows the pump's own typed curves by the
homologous (affinity) laws: one unit at relative speed alpha and flow q gives head alpha² H(q/alpha) and
takes torque alpha² T(q/alpha), where H is the typed head curve and T(x) = rho g x H(x) / (eta(x) omega_R)
the torque the typed curves imply at the speed they were typed for (omega_R). So the run starts from the
steady answer exactly, whatever the pump.

**Outside normal operation** (flow or rotation reversed, a stopped rotor passing flow) a pump needs its
complete (four-quadrant) characteristic, in Suter's form WH(x) = h / (alpha² + v²), WB(x) = beta /
(alpha² + v²) at x = pi + atan2(v, alpha), h, beta, v and alpha the head, torque, flow and speed over the
rated ones (Marchal, Flesch and Suter 1965; Wylie and Streeter 1993, ch. 4; from memory). Headsheet
stores no published set: the figures could not be confirmed against a published copy, and a pump's own
is better. A trip without a check valve therefore needs the pump's table typed on the event; with it
the pump's whole behaviour follows the table, scaled by one factor for head and one for torque so that
it passes through the steady point (the run still starts exactly from the steady answer).

The speed follows I omega_R d(alpha)/dt = -T (the motor's torque gone after a trip), trapezoidal: the
joint's flow is solved at the speed the last torque predicts, then the speed corrected with the mean of
the torques before and after.
"""

from __future__ import annotations

import math

import numpy as np

from calc.transient.joints import Element
from calc.water import G


class Homologous:
    """One unit's head and torque at relative speed alpha and flow q from its typed curves at speed 1:
    ``head(x)`` and ``torque(x)`` the curves as functions of the unit's flow at that speed."""

    def __init__(self, head, head_slope, torque):
        self.head, self.head_slope, self.torque = head, head_slope, torque

    def h(self, q: float, alpha: float) -> tuple[float, float]:
        if alpha <= 1e-9:
            return 0.0, 0.0
        x = q / alpha
        return alpha * alpha * self.head(x), alpha * self.head_slope(x)

    def T(self, q: float, alpha: float) -> float:
        if alpha <= 1e-9:
            return 0.0
        return max(0.0, alpha * alpha * self.torque(q / alpha))


class Suter:
    """A complete characteristic: points (x [deg], WH, WB), periodic in x, linear between them; the rated
    flow, head and torque of one unit; factors ``kh``, ``kb`` that scale it onto the steady point."""

    def __init__(self, points, Q_R: float, H_R: float, T_R: float):
        pts = sorted(points)
        self.x = np.radians([p[0] for p in pts])
        self.wh = np.array([p[1] for p in pts])
        self.wb = np.array([p[2] for p in pts])
        self.Q_R, self.H_R, self.T_R = Q_R, H_R, T_R
        self.kh = self.kb = 1.0

    def _w(self, q, alpha):
        v = q / self.Q_R
        x = math.pi + math.atan2(v, alpha)
        r = alpha * alpha + v * v
        return x, v, r

    def h(self, q: float, alpha: float) -> tuple[float, float]:
        x, v, r = self._w(q, alpha)
        wh = float(np.interp(x, self.x, self.wh, period=2 * math.pi))
        H = self.kh * self.H_R * r * wh
        d = 1e-7 * max(abs(q), self.Q_R * 1e-3)
        x2, _, r2 = self._w(q + d, alpha)
        H2 = self.kh * self.H_R * r2 * float(np.interp(x2, self.x, self.wh, period=2 * math.pi))
        return H, (H2 - H) / d

    def T(self, q: float, alpha: float) -> float:
        x, v, r = self._w(q, alpha)
        return self.kb * self.T_R * r * float(np.interp(x, self.x, self.wb, period=2 * math.pi))


class PumpMachine(Element):
    """A pump (group) in a transient: ``unit`` its one-unit model (`Homologous` or `Suter`), ``parallel``
    and ``series`` its running units, ``inertia`` one unit's and its motor's [kg m²], ``omega_R`` the
    speed of its typed curves [rad/s]; ``speed(t)`` the speed ratio the motor holds, or None once the
    pump has tripped (at ``trip_at``) and runs down on its inertia."""

    def __init__(self, unit, alpha0: float, omega_R: float, inertia: float, parallel: int = 1, series: int = 1,
                 trip_at: float | None = None, speed=None, name: str = ""):
        self.unit, self.alpha, self.omega_R, self.inertia = unit, alpha0, omega_R, inertia
        self.parallel, self.series, self.trip_at, self.speed, self.name = parallel, series, trip_at, speed, name
        self.alpha_try = alpha0
        self.T_now = 0.0
        self.t, self.alphas, self.flows = [], [], []
        self.reversed_at = None

    def driven(self, t: float) -> bool:
        return self.trip_at is None or t < self.trip_at

    def start(self, Q: float) -> None:
        q = Q / self.parallel
        self.T_now = self.unit.T(q, self.alpha)
        self.t, self.alphas, self.flows = [0.0], [self.alpha], [Q]

    def at(self, t: float, dt: float) -> None:
        if self.speed is not None and self.driven(t):
            self.alpha_try = self.speed(t)
        elif self.driven(t):
            self.alpha_try = self.alpha
        else:
            self.alpha_try = self.alpha - self.T_now / (self.inertia * self.omega_R) * dt

    def h(self, Q: float) -> tuple[float, float]:
        H, dH = self.unit.h(Q / self.parallel, self.alpha_try)
        return -self.series * H, -self.series * dH / self.parallel

    def advance(self, t, dt, Q, H1, H2):
        q = Q / self.parallel
        if self.driven(t):
            self.alpha = self.alpha_try
            self.T_now = self.unit.T(q, self.alpha)
        else:
            T_new = self.unit.T(q, self.alpha_try)
            rate = 0.5 * (self.T_now + T_new) / (self.inertia * self.omega_R)
            self.alpha = self.alpha - rate * dt
            if isinstance(self.unit, Homologous):
                self.alpha = max(self.alpha, 0.0)
            self.T_now = self.unit.T(q, self.alpha)
        if Q < 0.0 and self.reversed_at is None:
            self.reversed_at = t
        self.t.append(t)
        self.alphas.append(self.alpha)
        self.flows.append(Q)

    def histories(self) -> dict:
        return {self.name: {"speed": self.alphas, "Q": self.flows, "t": self.t}}


def torque_curve_points(flows, heads, efficiencies, rho: float, omega_R: float) -> list[tuple[float, float]]:
    """(flow, torque) of one unit at the points with a positive efficiency: T = rho g Q H / (eta omega_R)."""
    return [(q, rho * G * q * h / (e * omega_R)) for q, h, e in zip(flows, heads, efficiencies)
            if e is not None and e > 0.0]
