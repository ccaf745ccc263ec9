"""Checks on valves set for a target (`calc.steady.settle`): the opening a control valve takes, and a valve
that cannot meet its target (fully open) or would be nearly shut."""

from __future__ import annotations

from calc.model.elements import Line
from calc.model.valve_law import kv_from_K
from calc.review.findings import Finding, shown_in
from calc.steady.settle import OPENING_HIGH, OPENING_LOW

SRC_CONTROL = ("IEC 60534-2-4:2009 inherent characteristics; the 10-90 % travel range for control is common "
               "practice")


def valve_findings(line: Line, settings: list) -> list[Finding]:
    u = shown_in(line)
    out = []
    for v in settings:
        el = line.elements[v.index]
        goal = (f"pass {u(v.target, 'flow', '.4g')}" if v.setting == "flow"
                else f"hold {u(v.target, 'pressure', '.4g')} (gauge) downstream")
        if v.state == "no_flow":
            out.append(Finding("error", "valve-target", f"{v.label}: no flow at its set pressure",
                               f"With {u(v.target, 'pressure', '.4g')} (gauge) just after {v.label}, no flow reaches "
                               "the end: the valve would stay shut. The line is shown with the valve fully open; "
                               "raise the set pressure or lower the end.", None, None, None, SRC_CONTROL, v.index))
            continue
        if v.state == "fully_open":
            why = ("the line cannot pass that much even with it fully open" if v.setting == "flow" else
                   "the pressure reaching it is too low to be reduced to the set pressure")
            out.append(Finding("warning", "valve-target", f"{v.label}: cannot {goal.split(' (')[0]}",
                               f"{v.label} cannot {goal}: {why}, so it stands fully open and the line is shown so.",
                               None, None, None, SRC_CONTROL, v.index))
            continue
        where = f"to {goal} at {u(v.Q, 'flow', '.4g')}, taking {u(v.head, 'head', '.3g')} (K = {v.K:.4g})"
        if v.opening is None:
            out.append(Finding("info", "valve-target", f"{v.label}: holds its set pressure",
                               f"{v.label} throttles {where}.", None, None, None, SRC_CONTROL, v.index))
            continue
        Kv = kv_from_K(v.K, el.D)
        text = (f"{v.label} opens to {v.opening * 100:.1f} % of its travel (Kv {Kv:.3g} of {el.Kvs:.3g} m³/h, "
                f"{el.characteristic.replace('_', ' ')}) {where}.")
        if v.nearly_shut:
            out.append(Finding("warning", "valve-opening", f"{v.label}: nearly shut",
                               text + f" Below {OPENING_LOW * 100:.0f} % travel it throttles on its seat, where the "
                               "flow is hard to control and the seat wears; a smaller valve controls better.",
                               v.opening, OPENING_LOW, None, SRC_CONTROL, v.index))
        elif v.nearly_open:
            out.append(Finding("caution", "valve-opening", f"{v.label}: nearly fully open",
                               text + f" Above {OPENING_HIGH * 100:.0f} % travel little control is left for a higher "
                               "demand; a larger valve leaves room.", v.opening, OPENING_HIGH, None, SRC_CONTROL,
                               v.index))
        else:
            out.append(Finding("info", "valve-opening", f"{v.label}: opening for its target", text,
                               v.opening, None, None, SRC_CONTROL, v.index))
    return out
