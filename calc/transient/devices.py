"""Protection devices at a node of the transient line: a surge tank (or open standpipe), a gas-cushioned
air vessel and an air-admission and release valve (Wylie and Streeter, Fluid Transients in Systems, 1993,
ch. 3 and 9; Thorley, Fluid Transients in Pipeline Systems, 2nd ed., 2004, air vessels; from memory).

A device sits at a node where the C+ characteristic arrives from the left (H = C_P - B Q_in) and the C-
from the right (H = C_M + B Q_out), so the flow into the device is

    Q_d = Q_in - Q_out = (H_f - H) / B_p,   H_f = (C_P + C_M) / 2,  B_p = B / 2,

and each device adds its own relation between H and Q_d (trapezoidal in time, so that its volume is
the integral of its flow to round-off).
"""

from __future__ import annotations

import math

from calc.transient.joints import solve_falling
from calc.water import G

#: Air's gas constant [J/(kg K)] and the ratios of the isentropic orifice flow with k = 1.4 (Wylie and
#: Streeter 1993, air valves, from memory): sonic inflow below 0.528 p_atm, sonic outflow above 1.893 p_atm.
R_AIR = 287.1
CRITICAL_IN = 0.528
CRITICAL_OUT = 1.893


def _flow_of(k: float, S: float, r: float) -> float:
    """The root q of k q|q| + S q = r (k >= 0, S > 0)."""
    if k <= 0.0:
        return r / S
    if r >= 0.0:
        return (-S + math.sqrt(S * S + 4.0 * k * r)) / (2.0 * k)
    return (S - math.sqrt(S * S - 4.0 * k * r)) / (2.0 * k)


class Device:
    name = ""

    def start(self, H: float, Q: float) -> None:
        raise NotImplementedError

    def step(self, t, dt, up, down) -> tuple[float, float, float]:
        raise NotImplementedError

    def histories(self) -> dict:
        return {}


class SurgeTank(Device):
    """An open surge tank or standpipe of plan area ``area`` [m²] whose floor (where it meets the line's
    riser) is at ``bottom`` and whose rim is at ``top`` [m]; ``k`` a loss k Q_d|Q_d| at its throat [m per
    (m³/s)²], 0 for a simple tank. Its level starts at the steady head; it overflows at the rim (the level
    held there, the spill counted) and drains at the floor (then passing no more water out)."""

    def __init__(self, area: float, bottom: float, top: float, k: float = 0.0, name: str = ""):
        self.area, self.bottom, self.top, self.k, self.name = area, bottom, top, k, name
        self.level = self.Qd = 0.0
        self.spilled = 0.0
        self.overflow_at = self.drained_at = None
        self.t, self.levels, self.flows = [], [], []

    def start(self, H, Q):
        self.level, self.Qd = H, 0.0
        self.t, self.levels, self.flows = [0.0], [H], [0.0]

    def step(self, t, dt, up, down):
        (cp, b), (cm, _) = up, down
        Hf, Bp = 0.5 * (cp + cm), 0.5 * b
        c = dt / (2.0 * self.area)
        q = _flow_of(self.k, Bp + c, Hf - self.level - c * self.Qd)
        level = self.level + c * (self.Qd + q)
        if level > self.top:
            # over the rim: the level stays there and the rest spills
            q = _flow_of(self.k, Bp, Hf - self.top)
            self.spilled += max(0.0, self.level + c * (self.Qd + q) - self.top) * self.area
            level = self.top
            if self.overflow_at is None:
                self.overflow_at = t
        elif level < self.bottom:
            # empty at its floor: no more water leaves; water the line drives in fills it again
            if self.drained_at is None:
                self.drained_at = t
            q = max(0.0, _flow_of(self.k, Bp + c, Hf - self.bottom))
            level = self.bottom + c * q
        H = Hf - Bp * q
        self.level, self.Qd = level, q
        self.t.append(t)
        self.levels.append(level)
        self.flows.append(q)
        Q_in = (cp - H) / b
        return H, Q_in, Q_in - q

    def histories(self):
        return {self.name: {"level": self.levels, "Q": self.flows, "t": self.t}}


class AirVessel(Device):
    """A vessel of ``volume`` [m³] holding ``gas`` [m³] of gas at the steady state above water whose surface
    is at ``surface`` [m], the gas following p V^n = const (``exponent`` n: 1 isothermal, 1.4 adiabatic;
    about 1.2 is usual, common practice), connected through a throat losing ``k_in`` Q|Q| on flow into the
    vessel and ``k_out`` out of it [m per (m³/s)²]. The gas head is absolute: ``h_atm`` the atmosphere's
    head [m]. It empties when the gas fills it (then passing no more water out)."""

    def __init__(self, volume: float, gas: float, surface: float, h_atm: float, exponent: float = 1.2,
                 k_in: float = 0.0, k_out: float = 0.0, name: str = ""):
        self.volume, self.gas0, self.surface, self.h_atm = volume, gas, surface, h_atm
        self.n, self.k_in, self.k_out, self.name = exponent, k_in, k_out, name
        self.V = gas
        self.Qd = 0.0
        self.C = 0.0
        self.emptied_at = None
        self.t, self.gas, self.flows = [], [], []

    def start(self, H, Q):
        self.V, self.Qd = self.gas0, 0.0
        self.C = (H - self.surface + self.h_atm) * self.gas0 ** self.n
        self.t, self.gas, self.flows = [0.0], [self.V], [0.0]

    def _gas_head(self, V: float) -> float:
        return self.C / V ** self.n

    def step(self, t, dt, up, down):
        (cp, b), (cm, _) = up, down
        Hf, Bp = 0.5 * (cp + cm), 0.5 * b
        Vn, Qn, n, C = self.V, self.Qd, self.n, self.C
        base = self.surface - self.h_atm

        def F(q):
            V = Vn - 0.5 * dt * (Qn + q)
            if V <= 0.0:
                return -math.inf, -1.0
            k = self.k_in if q > 0 else self.k_out
            f = Hf - Bp * q - (C / V ** n + base + k * q * abs(q))
            d = -Bp - n * C / V ** (n + 1) * 0.5 * dt - 2.0 * k * abs(q)
            return f, d

        q = solve_falling(F, Qn)
        V = Vn - 0.5 * dt * (Qn + q)
        if V > self.volume:
            if self.emptied_at is None:
                self.emptied_at = t
            q = max(0.0, q)
            V = min(V, self.volume)
        H = Hf - Bp * q
        self.V, self.Qd = V, q
        self.t.append(t)
        self.gas.append(V)
        self.flows.append(q)
        Q_in = (cp - H) / b
        return H, Q_in, Q_in - q

    def histories(self):
        return {self.name: {"gas": self.gas, "Q": self.flows, "t": self.t}}


def air_mass_flow(p: float, p_atm: float, T: float, area_in: float, area_out: float, cd: float = 0.6) -> float:
    """Mass flow of air into the line [kg/s] through an air valve at absolute pressure p in the line
    (negative: out), isentropic orifice flow of air (k = 1.4), subsonic or sonic (Wylie and Streeter 1993,
    air valves, from memory); ``cd`` the discharge coefficient (about 0.6 for a sharp orifice, common
    practice)."""
    rho_atm = p_atm / (R_AIR * T)
    if p < p_atm:
        if p > CRITICAL_IN * p_atm:
            r = p / p_atm
            return cd * area_in * math.sqrt(7.0 * p_atm * rho_atm * (r ** (1 / 0.7) - r ** (1.7 / 0.7)))
        return 0.686 * cd * area_in * p_atm / math.sqrt(R_AIR * T)
    if p < CRITICAL_OUT * p_atm:
        r = p_atm / p
        return -cd * area_out * p * math.sqrt(7.0 / (R_AIR * T) * (r ** (1 / 0.7) - r ** (1.7 / 0.7)))
    return -0.686 * cd * area_out * p / math.sqrt(R_AIR * T)


class AirValve(Device):
    """An air-admission and release valve at a node of elevation ``z``: when the line's pressure there
    falls below the atmosphere's, air enters through the inflow orifice (``d_in``); the air pocket follows
    p V = m R T (isothermal at ``T``) and is expelled through the smaller outflow orifice (``d_out``) as the
    pressure rises, until the pocket is gone."""

    def __init__(self, z: float, d_in: float, d_out: float, p_atm: float, rho: float, T: float, name: str = ""):
        self.z, self.p_atm, self.rho, self.T, self.name = z, p_atm, rho, T, name
        self.a_in, self.a_out = math.pi * d_in ** 2 / 4, math.pi * d_out ** 2 / 4
        self.V = self.m = self.mdot = self.dQ = 0.0
        self.opened_at = None
        self.V_max = 0.0
        self.t, self.air = [], []

    def start(self, H, Q):
        self.V = self.m = self.mdot = self.dQ = 0.0
        self.t, self.air = [0.0], [0.0]

    def _p(self, H: float) -> float:
        return self.p_atm + self.rho * G * (H - self.z)

    def step(self, t, dt, up, down):
        (cp, b), (cm, _) = up, down
        Hf = 0.5 * (cp + cm)
        if self.V <= 0.0 and self._p(Hf) >= self.p_atm:
            self.V = self.m = self.mdot = self.dQ = 0.0
            self._log(t)
            Q = (cp - Hf) / b
            return Hf, Q, Q
        if self.opened_at is None:
            self.opened_at = t
        Vn, mn, mdn, dQn, T = self.V, self.m, self.mdot, self.dQ, self.T
        rho_g = self.rho * G

        def state(p):
            H = self.z + (p - self.p_atm) / rho_g
            dQ = 2.0 * (H - Hf) / b          # Q_out - Q_in: the pocket grows by it
            V = Vn + 0.5 * dt * (dQn + dQ)
            md = air_mass_flow(p, self.p_atm, T, self.a_in, self.a_out)
            m = max(0.0, mn + 0.5 * dt * (mdn + md))
            return H, dQ, V, md, m

        def F(p):  # falls with p: the gas law's residual m R T - p V
            H, dQ, V, md, m = state(p)
            return m * R_AIR * T - p * V, -(V + p * dt / (b * rho_g))

        p = solve_falling(F, max(self._p(Hf), 100.0), lo=100.0, tol=1e-9 * self.p_atm)
        H, dQ, V, md, m = state(p)
        if V <= 0.0 or m <= 0.0:
            self.V = self.m = self.mdot = self.dQ = 0.0
            H = Hf
            dQ = 0.0
        else:
            self.V, self.m, self.mdot, self.dQ = V, m, md, dQ
            self.V_max = max(self.V_max, V)
        self._log(t)
        Q_in = (cp - H) / b
        return H, Q_in, Q_in + dQ

    def _log(self, t):
        self.t.append(t)
        self.air.append(self.V)

    def histories(self):
        return {self.name: {"air": self.air, "t": self.t}}
