"""Variable speed: the speed a pump must run at for a target flow or a target head, by the affinity laws.

At speed ratio n a unit's head is n^2 H1(q/n) (q the unit's flow; Karassik et al., Pump Handbook, 4th
ed. 2008, the affinity laws). For a target flow Q_t the line needs the pump to add H_req = -E'(Q_t), E'
the energy balance of the line without the pump; the speed is the root of N_s n^2 H1(Q_t/(N_p n)) = H_req
(N_p units sharing the flow, N_s adding their heads), which rises with n wherever the curve does not
rise with flow. For a target head H_t the flow is where the line needs H_t of the pump (the line solved
with the pump as a fixed head H_t), and the speed then as for that flow. Brent's method closes both.
The line is then solved at the speed found, like any other (`settle` returns it), so the answer at the
target is the solver's own: the tests hold it to the target within 1e-9.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from scipy.optimize import brentq

from calc.model.elements import Line, Pump
from calc.steady.series import find_roots, make_residual, residual, residual_array, scan_range

#: The speeds searched for a target [-, of the curve's own speed]: the parser's own range for a speed ratio.
N_LOW, N_HIGH = 0.05, 3.0


@dataclass
class SpeedAnswer:
    """The speed found for one pump: its target, the speed ratio (None when no speed meets it), the
    flow and head there, the user's limits and whether the speed lies within them."""

    index: int
    label: str
    target: str          # "flow" or "head"
    value: float         # the target [m3/s or m]
    n: float | None
    Q: float | None = None
    H: float | None = None
    limits: tuple[float | None, float | None] = (None, None)
    within: bool | None = None
    reason: str = ""
    iterations: int = 0

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def _speed_for(pump: Pump, Q: float, H: float) -> tuple[float | None, int, str]:
    """The speed ratio at which the pump gives head H at flow Q, by the affinity laws."""
    def g(n):
        return float(replace(pump, speed_ratio=n).pump_head(Q)) - H

    lo, hi = g(N_LOW), g(N_HIGH)
    if lo > 0:
        return None, 0, (f"even at {N_LOW:g} of the curve's speed the pump gives more than the head needed, "
                         "so the flow would be more than the target: the line needs no pump for it")
    if hi < 0:
        return None, 0, (f"even at {N_HIGH:g} times the curve's speed the pump cannot give the head the target "
                         "needs")
    n, r = brentq(g, N_LOW, N_HIGH, xtol=1e-15, rtol=1e-15, full_output=True)
    return float(n), r.iterations, ""


def answer(line: Line, i: int) -> SpeedAnswer:
    """The speed pump ``i`` of ``line`` must run at for its target (``speed_control`` flow or head)."""
    pump: Pump = line.elements[i]
    out = SpeedAnswer(i, pump.label or f"pump {i + 1}", pump.speed_control, pump.target, None,
                      limits=pump.speed_limits)
    if pump.speed_control == "flow":
        Q = pump.target
        H = -residual(line, Q, skip=i)  # the head the line needs of the pump at Q
        if H <= 0:
            out.reason = "the line passes the target flow without the pump's head: it needs no pump for it"
            return out
    else:
        H = pump.target
        fixed = replace(pump, mode="head", fixed_head=H, speed_control="fixed")
        elements = list(line.elements)
        elements[i] = fixed
        held = replace(line, elements=elements)
        Q_lo, Q_hi = scan_range(held)
        roots, _, _ = find_roots(make_residual(held), lambda q: residual_array(held, q), Q_lo, Q_hi)
        if not roots:
            out.reason = "no flow of the line needs that head of the pump"
            return out
        Q = roots[0].Q
    n, its, why = _speed_for(pump, Q, H)
    out.Q, out.H, out.n, out.iterations, out.reason = Q, H, n, its, why
    if n is not None:
        lo, hi = pump.speed_limits
        out.within = (lo is None or n >= lo) and (hi is None or n <= hi) if (lo or hi) else None
    return out


def settle(line: Line) -> tuple[Line, list[SpeedAnswer]]:
    """``line`` with every pump on a target set to the speed that meets it, and the answers.

    A pump whose target cannot be met keeps the curve's own speed (n = 1) and its answer says why.
    Pumps are settled in line order, each against the others as already set.
    """
    answers = []
    for i, el in enumerate(line.elements):
        if isinstance(el, Pump) and el.speed_control in ("flow", "head"):
            a = answer(line, i)
            answers.append(a)
            elements = list(line.elements)
            elements[i] = replace(el, speed_ratio=a.n if a.n is not None else 1.0, speed_control="fixed",
                                  speed_solved=a.n is not None)
            line = replace(line, elements=elements)
    return line, answers
