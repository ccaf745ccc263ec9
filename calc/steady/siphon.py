"""A siphon broken at its crest: the flow the line carries when air is let in where it runs below atmospheric.

With air at the crest the pressure there is atmospheric, so only the reach upstream of the crest
drives the flow: the line is solved as if it ended in a free discharge at the crest's elevation
(the velocity head is not recovered; downstream the pipe runs part full). This is what an
air-admitting valve at the crest does to a line that works only as a siphon.
"""

from __future__ import annotations

import copy
import dataclasses

from calc.model.elements import Line, Node, PipeRun
from calc.steady.series import find_roots, make_residual, residual_array, scan_range


def truncated_at(line: Line, index: int, chainage_in_run: float) -> Line | None:
    """The line from its start to a point ``chainage_in_run`` [m] along pipe run ``index``, ending there in the air."""
    run = line.elements[index]
    if not isinstance(run, PipeRun) or chainage_in_run <= 0.0:
        return None
    frac = min(chainage_in_run / run.L, 1.0)
    z_prev = line.start.pipe_elevation
    for el in line.elements[:index]:
        if isinstance(el, PipeRun):
            z_prev = el.end_elevation
    pts = {0.0: z_prev, run.L: run.end_elevation, **{s: z for s, z in run.profile}}
    below = sorted(s for s in pts if s <= chainage_in_run)
    above = sorted(s for s in pts if s >= chainage_in_run)
    s0, s1 = below[-1], above[0]
    z = pts[s0] if s1 == s0 else pts[s0] + (pts[s1] - pts[s0]) * (chainage_in_run - s0) / (s1 - s0)
    fittings = []
    for ft in run.fittings:
        if ft.position == "start":
            fittings.append(ft)
        elif ft.position == "spread":
            fittings.append(dataclasses.replace(ft, count=1, params={k: v * ft.count * frac for k, v in ft.params.items()})
                            if ft.model == "k" else ft)
    part = dataclasses.replace(run, L=chainage_in_run, end_elevation=z, fittings=fittings,
                               profile=[(s, zz) for s, zz in run.profile if s < chainage_in_run],
                               _cache_key=None, _cache=None)
    end = Node(kind="jet", elevation=z)
    cut = Line(start=copy.copy(line.start), end=end, elements=list(line.elements[:index]) + [part],
               liquid=line.liquid, method=line.method, p_atm=line.p_atm, header=line.header, settings=line.settings)
    return cut


def broken_siphon_flow(line: Line, index: int, chainage_in_run: float) -> float:
    """Flow [m3/s] with air admitted at the crest (0 if the crest stands above what the start can lift to)."""
    cut = truncated_at(line, index, chainage_in_run)
    if cut is None:
        return 0.0
    Q_lo, Q_hi = scan_range(cut)
    roots, _, _ = find_roots(make_residual(cut), lambda q: residual_array(cut, q), Q_lo, Q_hi)
    stable = [r.Q for r in roots if r.slope < 0.0]
    return max(stable) if stable else (max(r.Q for r in roots) if roots else 0.0)
