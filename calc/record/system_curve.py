"""The system curve as a table to send a pump or turbine supplier: the head the line needs from its machines
(or leaves for its turbine) against flow, one column per operating case, in the sheet's units, as CSV.

The heads are the plots' own system curves (`calc.record.plots.series.system_curve`), so the table and the
head-flow plot never disagree; the flows run from zero to past every operating point in even steps, with
each case's design flow among them.
"""

from __future__ import annotations

import csv
import io

import numpy as np

from calc.record.plots import series as S
from calc.units import to_display

#: Even steps of flow in the table (plus each case's design flow).
STEPS = 20


def table(analysis, system: str = "SI", steps: int = STEPS) -> tuple[list[str], list[list[float]]]:
    """(column titles, rows of numbers in the sheet's units): flow, then each case's head."""
    top = S.flow_top(analysis)
    Q = np.linspace(0.0, top, steps + 1)[1:]
    cases = getattr(analysis, "cases", None) or []
    lines = [(c.name, c.line, c.solution) for c in cases] or [("System", analysis.line, analysis.solution)]
    design = [s.design["Q"] for _, _, s in lines if s is not None and s.design is not None]
    Q = np.unique(np.concatenate([Q, [q for q in design if 0 < q <= top]]))
    sign = S.sign_of(analysis.line)
    what = ("head needed from the pumps" if sign < 0 else "head left for the turbine" if sign > 0
            else "line losses")
    kq, q_unit = to_display(1.0, "flow", system)
    kh, h_unit = to_display(1.0, "head", system)
    titles = [f"Flow ({q_unit})"] + [f"{name}: {what} ({h_unit})" for name, _, _ in lines]
    columns = [S.system_curve(line, sol, Q, name).H for name, line, sol in lines]
    rows = [[float(q) * kq] + [float(c[k]) * kh for c in columns] for k, q in enumerate(Q)]
    # At no flow nothing is lost: the head needed is the static lift (left for a turbine: the gross head).
    statics = []
    for _, line, _ in lines:
        rho = line.liquid.rho
        static = line.start.static_head(rho) - line.end.static_head(rho)
        statics.append(-static if sign < 0 else static if sign > 0 else 0.0)
    return titles, [[0.0] + [h * kh for h in statics]] + rows


def csv_text(analysis, system: str = "SI", title: str = "") -> str:
    """The table as CSV, numbers to 5 significant figures; a first line naming the sheet when ``title``."""
    titles, rows = table(analysis, system)
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    if title:
        w.writerow([f"System curve: {title}"])
    w.writerow(titles)
    for row in rows:
        w.writerow([f"{v:.5g}" if np.isfinite(v) else "" for v in row])
    return out.getvalue()
