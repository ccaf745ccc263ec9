"""What is set before the line is solved: the settings that make a machine meet a target.

A pump on a target flow or head gets its speed (`calc.steady.speed`); a turbine at a set flow gets the
head the line leaves it there, H_t = E'(Q_set), E' the energy balance of the line without it (the
turbine's gate or nozzle opens to pass that flow with whatever head reaches it). A valve on a target
flow gets the K that takes the head left at that flow; a valve holding a downstream pressure (a
pressure-reducing valve, or a control valve set so) fixes the total head just after it at
H_set = z + p_set/(rho g) + V²/2g, so the flow is where the line downstream passes it, Q* with
H_set(Q*) = H_end(Q*) + sum of the heads after it, and the valve takes what is left, H_up(Q*) - H_set(Q*).
Where that is less than the valve's own loss fully open, it stands fully open and cannot hold.
The line is then solved like any other, so its answer at the target is the solver's own.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np

from calc.model import valve_law
from calc.model.elements import Line, PipeRun, Pump, Turbine, Valve
from calc.steady import speed
from calc.steady.series import find_roots, residual, scan_range
from calc.water import G

#: A control valve is commonly held between these openings, where its characteristic still controls the
#: flow well (common practice: below about 10 % travel it throttles on its seat, above about 90 % little
#: control is left).
OPENING_LOW, OPENING_HIGH = 0.10, 0.90


@dataclass
class TurbineFlow:
    """A turbine at a set flow: the flow, and the head the line leaves it there (negative: it cannot pass)."""

    index: int
    label: str
    Q: float
    head: float

    @property
    def passes(self) -> bool:
        return self.head > 0.0

    def to_dict(self) -> dict:
        return {"index": self.index, "label": self.label, "Q": self.Q, "head": self.head, "passes": self.passes}


@dataclass
class Settled:
    """What `settle` set: each pump's speed for its target, each set-flow turbine's head."""

    speeds: list = field(default_factory=list)
    turbines: list = field(default_factory=list)
    valves: list = field(default_factory=list)

    @property
    def blocked(self) -> TurbineFlow | None:
        """The first set-flow turbine the line cannot pass its flow to, if any."""
        return next((t for t in self.turbines if not t.passes), None)


def settle(line: Line) -> tuple[Line, Settled]:
    """``line`` with every pump on a target at its speed and every set-flow turbine at its head."""
    out = Settled()
    if any(isinstance(el, Pump) and el.speed_control != "fixed" for el in line.elements):
        line, out.speeds = speed.settle(line)
    for i, el in enumerate(line.elements):
        if isinstance(el, Turbine) and el.mode == "flow":
            H = residual(line, el.flow_set, skip=i)
            out.turbines.append(TurbineFlow(i, el.label or f"turbine {i + 1}", el.flow_set, H))
            elements = list(line.elements)
            # A turbine that cannot pass its flow is held at no head, so the line shows what it does carry.
            elements[i] = replace(el, fixed_head=max(H, 0.0))
            line = replace(line, elements=elements)
    for i, el in enumerate(line.elements):
        if isinstance(el, Valve) and el.on_target:
            v = valve_setting(line, i)
            out.valves.append(v)
            elements = list(line.elements)
            elements[i] = replace(el, K=v.K, opening=v.opening if v.opening is not None else el.opening)
            line = replace(line, elements=elements)
    return line, out


@dataclass
class ValveSetting:
    """A valve set for a target: the flow it passes, the K it takes, its opening (a control valve), and its
    state: "set" (it meets the target), "fully_open" (it cannot: it stands fully open), "no_flow" (at the
    set pressure nothing reaches the end)."""

    index: int
    label: str
    setting: str          # flow | pressure
    target: float         # [m3/s] or gauge [Pa]
    Q: float | None
    K: float
    opening: float | None
    state: str
    head: float | None = None  # the head the valve takes at Q [m]

    @property
    def nearly_shut(self) -> bool:
        return self.opening is not None and self.state == "set" and self.opening < OPENING_LOW

    @property
    def nearly_open(self) -> bool:
        return self.opening is not None and self.state == "set" and self.opening > OPENING_HIGH

    def to_dict(self) -> dict:
        return {**self.__dict__, "nearly_shut": self.nearly_shut, "nearly_open": self.nearly_open}


def _elevation_at(line: Line, i: int) -> float:
    """The pipe centre's elevation where element ``i`` stands (the end of the run before it)."""
    z = line.start.pipe_elevation
    for el in line.elements[:i]:
        if isinstance(el, PipeRun):
            z = el.end_elevation
    return z


def _opening(el: Valve, K: float) -> float | None:
    if el.valve_type != "control":
        return None
    return valve_law.travel(valve_law.kv_from_K(K, el.D) / el.Kvs, el.characteristic, el.rangeability)


def valve_setting(line: Line, i: int) -> ValveSetting:
    """The K (and opening) valve ``i`` takes to meet its target flow or downstream pressure."""
    el: Valve = line.elements[i]
    fluid, rho = line.fluid, line.liquid.rho
    A = math.pi * el.D * el.D / 4.0
    label = el.label or f"valve {i + 1}"
    K_open = el.K_open if el.K_open is not None else el.K
    if el.setting == "flow":
        Q = el.target
        h = residual(line, Q, skip=i)
    else:
        z = _elevation_at(line, i)
        after = line.elements[i + 1:]

        def downstream(q: float) -> float:
            V = q / A
            return (z + el.target / (rho * G) + V * V / (2 * G) - sum(e.head(q, fluid) for e in after)
                    - line.end.total_head(q, rho))

        def downstream_array(q):
            return np.array([downstream(float(x)) for x in np.atleast_1d(q)])

        Q_lo, Q_hi = scan_range(line)
        roots, _, _ = find_roots(downstream, downstream_array, Q_lo, Q_hi)
        if not roots:
            return ValveSetting(i, label, el.setting, el.target, None, K_open, 1.0 if el.valve_type == "control"
                                else None, "no_flow")
        Q = roots[0].Q
        V = Q / A
        H_up = line.start.total_head(Q, rho) - sum(e.head(Q, fluid) for e in line.elements[:i])
        h = H_up - (z + el.target / (rho * G) + V * V / (2 * G))
    V = Q / A
    hv = V * V / (2 * G)
    if h <= K_open * hv:
        return ValveSetting(i, label, el.setting, el.target, Q, K_open, 1.0 if el.valve_type == "control" else None,
                            "fully_open", K_open * hv)
    K = h / hv
    return ValveSetting(i, label, el.setting, el.target, Q, K, _opening(el, K), "set", h)
