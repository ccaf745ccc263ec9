"""Losses the physics always has: entrance from a reservoir, exit into one, a change of bore; and a free outlet.

A sheet need not type them: `complete` adds each as an implied fitting on the run it belongs to,
unless the user typed one that takes its place (an entrance or exit fitting on that run, a
conical reducer at that change of bore). The record lists what was counted by default. Call it
again after changing bores (the inverse questions do): it first takes off what it added before.

- Entrance (start reservoir into the first run): the start's entrance kind, K from the fitting table.
- Exit (last run into the end reservoir, or a free discharge above it): K = 1 on the run's velocity
  head, the whole velocity head leaving the pipe (Rennels and Hudson 2012, pipe exits).
- Change of bore between consecutive runs: sudden expansion (Borda–Carnot, (1 - β²)² on the small
  upstream velocity) or sudden contraction (0.5 (1 - β²) on the small downstream velocity), both in
  Crane TP-410M's form (`tables.transition_K`); a typed conical reducer takes the cone's K instead.
- An end reservoir whose pipe ends above its water surface: the outlet discharges freely at its own
  elevation (`Node.free_outlet`), so the fall from the outlet to the surface does no work.
"""

from __future__ import annotations

import re

from calc import tables
from calc.model.elements import Fitting, Line, PipeRun

#: Bores within this fraction of each other are one bore [-] (typed sizes differ by far more).
SAME_BORE = 1e-9
#: The fitting-table rows the defaults come from.
EXIT_KEY = "exit"
ENTRANCE_KEYS = ("entrance-sharp", "entrance-rounded", "entrance-inward-projecting")
#: Exit K for a free discharge or a submerged exit [-]; physics, not a choice, so the range of the
#: answer never varies it.
EXIT_K = 1.0
SUDDEN = 180.0
TRANSITION_SOURCE_KEY = "reducer-conical-15"


def _table_fitting(key: str, why: str) -> Fitting:
    t = tables.fitting(key)
    return Fitting(name=t.name, model=t.model, params=dict(t.params), count=1, source=t.source, key=t.key,
                   implied=True, why=why)


def _crane_source() -> str:
    """Crane TP-410M as the fitting table cites it (the cone rows, without a row's detail), so one source
    keeps one reference number."""
    return re.sub(r"\s*\[[^\[\]]*\]\s*$", "", tables.fitting(TRANSITION_SOURCE_KEY).source)


def _label(run: PipeRun, i: int) -> str:
    return run.label or f"element {i + 1}"


def complete(line: Line) -> Line:
    """Add the losses physics always has to ``line`` (in place) and mark a free outlet; returns the line.

    Runs get new fitting lists, never edited ones, so a run shared with another line is not
    changed through it. Idempotent: what an earlier call added is taken off first.
    """
    els = line.elements
    for el in els:
        if isinstance(el, PipeRun):
            el.fittings = [f for f in el.fittings if not f.implied]  # constants() re-keys on the fittings
    line.end.free_outlet = None
    runs = [(i, el) for i, el in enumerate(els) if isinstance(el, PipeRun)]
    if not runs:
        return line

    first = els[0]
    if line.start.kind == "reservoir" and isinstance(first, PipeRun):
        if not any(f.key.startswith("entrance") for f in first.fittings):
            key = line.start.entrance if line.start.entrance in ENTRANCE_KEYS else ENTRANCE_KEYS[0]
            first.fittings = [_table_fitting(key, "entrance from the start reservoir, counted by default")] + first.fittings

    last = els[-1]
    if line.end.kind == "reservoir" and isinstance(last, PipeRun):
        outlet = last.end_elevation
        free = outlet > line.end.elevation
        if free:
            line.end.free_outlet = outlet
        if not any(f.key.startswith("exit") for f in last.fittings):
            why = ("free discharge above the receiving water surface: the velocity head leaves with the jet, "
                   "counted by default" if free else "exit into the end reservoir, counted by default")
            ft = _table_fitting(EXIT_KEY, why)
            if free:
                ft.name = "Free discharge at the outlet (velocity head lost)"
            last.fittings = last.fittings + [ft]

    for (i, a), (j, b) in zip(runs, runs[1:]):
        if j != i + 1:
            continue  # a machine or valve between them takes the change of bore
        _bore_change(a, b, i, j)
    return line


def _bore_change(a: PipeRun, b: PipeRun, i: int, j: int) -> None:
    """The loss where run ``a`` hands over to run ``b``: a typed cone, or the sudden change by default."""
    if abs(a.D - b.D) <= SAME_BORE * max(a.D, b.D):
        for ft in a.fittings + b.fittings:
            if ft.model == "cone":
                ft.derived_K, ft.why = 0.0, "no change of bore here: K = 0"
        return
    expanding = b.D > a.D
    small, large = (a, b) if expanding else (b, a)
    beta = small.D / large.D
    words = (f"{'expansion' if expanding else 'contraction'} from {a.D * 1e3:.4g} mm ({_label(a, i)}) to "
             f"{b.D * 1e3:.4g} mm ({_label(b, j)}), β = {beta:.4g}")
    cones = [(run, ft) for run in (a, b) for ft in run.fittings if ft.model == "cone"]
    if cones:
        for run, ft in cones:
            K_small = tables.transition_K(beta, ft.params["angle_deg"], expanding)
            # On this run's own velocity head: K scales with (D_run / d_small)^4.
            ft.derived_K = K_small * (run.D / small.D) ** 4
            ft.why = (f"{words}: K = {K_small:.4g} on the small bore's velocity"
                      + ("" if run is small else f", {ft.derived_K:.4g} on this run's velocity"))
        return
    K = tables.transition_K(beta, SUDDEN, expanding)
    ft = Fitting(name="Sudden expansion (Borda–Carnot)" if expanding else "Sudden contraction",
                 model="k", params={"K": K}, count=1, source=_crane_source(),
                 key="expansion-sudden" if expanding else "contraction-sudden", implied=True,
                 why=f"{words}: sudden change counted by default (type a conical reducer to replace it)")
    if expanding:
        a.fittings = a.fittings + [ft]      # on the small upstream run, at its end
    else:
        b.fittings = [ft] + b.fittings      # on the small downstream run, at its start
