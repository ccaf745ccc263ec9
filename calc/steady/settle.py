"""What is set before the line is solved: the settings that make a machine meet a target.

A pump on a target flow or head gets its speed (`calc.steady.speed`); a turbine at a set flow gets the
head the line leaves it there, H_t = E'(Q_set), E' the energy balance of the line without it (the
turbine's gate or nozzle opens to pass that flow with whatever head reaches it). The line is then
solved like any other, so its answer at the set flow is the solver's own.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace

import numpy as np

from calc.model.elements import Line, Pump, Turbine
from calc.steady import speed
from calc.steady.series import residual_array


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
            H = float(residual_array(line, np.array([el.flow_set]), skip=i)[0]) if np.isfinite(el.flow_set) else -1.0
            out.turbines.append(TurbineFlow(i, el.label or f"turbine {i + 1}", el.flow_set, H))
            elements = list(line.elements)
            # A turbine that cannot pass its flow is held at no head, so the line shows what it does carry.
            elements[i] = replace(el, fixed_head=max(H, 0.0))
            line = replace(line, elements=elements)
    return line, out
