"""The designer's inverse questions of a line: the head needed to pass a flow, and the smallest standard size that passes it."""

from __future__ import annotations

import copy
from dataclasses import dataclass

from calc import tables
from calc.model import implied
from calc.model.elements import Line, PipeRun
from calc.steady.series import residual


@dataclass
class HeadNeeded:
    """What it takes to pass flow Q [m3/s] through the line, all heads in [m]."""

    Q: float
    head_available: float  # total head at start minus total head at end at Q
    head_used: float       # sum of element heads at Q (losses, turbines; minus pumps)
    shortfall: float       # head_used - head_available: extra head needed (<= 0: the line passes Q with head to spare)

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def head_needed(line: Line, Q: float) -> HeadNeeded:
    """Head needed to pass Q: the line's element heads, against the head the start and end give.

    A positive shortfall is the head a pump (or a higher start) must add at that flow. The flow
    must be positive: the line's elements are modelled for flow from start to end.
    """
    if not Q > 0:
        raise ValueError(f"the flow to pass must be positive (got {Q!r} m3/s)")
    E = residual(line, Q)
    fluid = line.fluid
    used = sum(el.head(Q, fluid) for el in line.elements)
    return HeadNeeded(Q=Q, head_available=E + used, head_used=used, shortfall=-E)


@dataclass
class SizeChoice:
    standard: str
    klass: str
    nominal: str | None
    ID: float | None
    shortfall: float | None  # at the chosen size [m]; None when no size passes the flow
    tried: list[dict]
    material: str = ""       # the table's material, given to every resized run
    note: str = ""           # what changed besides the bore (material and roughness), in words

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def smallest_size(line: Line, Q: float, standard: str, klass: str, runs: list[int] | None = None) -> SizeChoice:
    """Smallest size of a standard table that passes Q with the head available.

    ``runs`` lists the element indices of the pipe runs to resize (default: every run);
    all of them take the same size. Sizes are tried in order of inner diameter. A size table is a
    pipe of one material (steel for ASME B36.10M, PE for ISO 4427): a resized run of another
    material takes the table's material and its roughness (aged if the run was aged), since the
    roughness of the old pipe says nothing of the new one.
    """
    if not Q > 0:
        raise ValueError(f"the flow to pass must be positive (got {Q!r} m3/s)")
    sizes = tables.sizes_in_order(standard, klass)
    mat = tables.size_material(standard)
    targets = runs if runs is not None else [i for i, el in enumerate(line.elements) if isinstance(el, PipeRun)]
    for i in targets:
        if not isinstance(line.elements[i], PipeRun):
            raise ValueError(f"element {i} is not a pipe run")
    resized = {}
    changed = []
    for i in targets:
        run = copy.copy(line.elements[i])
        if run.material is None or run.material.key != mat.key:
            aged = run.eps_aged is not None and run.eps == run.eps_aged and mat.eps_aged is not None
            run.eps = mat.eps_aged if aged else mat.eps_new
            run.eps_aged = mat.eps_aged
            run.eps_source = f"{mat.name}{', aged' if aged else ''}: {mat.source_aged if aged else mat.source_roughness}"
            run.material = mat
            changed.append(f"{run.label or f'element {i}'}: roughness {run.eps * 1e3:.4g} mm{' (aged)' if aged else ''}")
        resized[i] = run
    note = (f"resized runs become {mat.name} pipe, as the table is: " + "; ".join(changed)) if changed else ""
    tried = []
    for size in sizes:
        trial = copy.copy(line)
        trial.end = copy.copy(line.end)
        # Every run copied: the losses at a change of bore are worked out again for the new bores,
        # and must not reach back into the line asked about.
        trial.elements = [copy.copy(el) if isinstance(el, PipeRun) else el for el in line.elements]
        for i in targets:
            run = copy.copy(resized[i])
            run.D = size.ID
            run.wall = size.wall
            trial.elements[i] = run
        trial.__post_init__()
        implied.complete(trial)
        E = residual(trial, Q)
        tried.append({"nominal": size.nominal, "ID": size.ID, "shortfall": -E})
        if E >= 0.0:
            return SizeChoice(standard, klass, size.nominal, size.ID, -E, tried, mat.key, note)
    return SizeChoice(standard, klass, None, None, None, tried, mat.key, note)
