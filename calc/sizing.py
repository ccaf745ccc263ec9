"""Choosing a size: every standard size in a range at once, for every case.

Each size is put into the chosen pipe runs of the sheet document (its size table's bore and wall, and
the table's material where the run had another: a size table is one kind of pipe), and the whole sheet
is analysed as it would be with that size typed: every case solved with its checks, its energy over a
year. A row gives, per case, the flow, the fastest velocity, the line's losses and the machines' power
and energy; with unit costs (per metre of pipe, by nominal size) the capital cost, and with a life in
years the energy cost over that life (the year's cost times the years, undiscounted) and their sum.
"""

from __future__ import annotations

import copy
from dataclasses import dataclass, field

from calc import tables
from calc.analysis import analyse

#: The most sizes compared at once (every size of a table is some 30 to 60).
MAX_SIZES = 80


@dataclass
class SizeRow:
    nominal: str
    ID: float
    ok: bool
    cases: list[dict] = field(default_factory=list)
    capital: float | None = None
    energy_cost: float | None = None   # over the life
    total: float | None = None
    errors: list[str] = field(default_factory=list)
    worst: str = ""                    # the worst finding's title, if a warning or an error

    def to_dict(self) -> dict:
        return dict(self.__dict__)


def compare(doc: dict, standard: str, klass: str, runs: list[int] | None = None, smallest: str | None = None,
            largest: str | None = None, costs: dict[str, float] | None = None, life: float | None = None) -> dict:
    """Every size of ``standard`` ``klass`` from ``smallest`` to ``largest`` (nominal sizes; all when None)
    in the runs ``runs`` (element indices; every run when None), each analysed in full."""
    sizes = tables.sizes_in_order(standard, klass)
    if smallest is not None:
        lo = tables.pipe_size(standard, smallest, klass).ID
        sizes = [s for s in sizes if s.ID >= lo - 1e-12]
    if largest is not None:
        hi = tables.pipe_size(standard, largest, klass).ID
        sizes = [s for s in sizes if s.ID <= hi + 1e-12]
    if not sizes:
        raise ValueError("no size of the table lies in that range")
    if len(sizes) > MAX_SIZES:
        raise ValueError(f"{len(sizes)} sizes: narrow the range to at most {MAX_SIZES}")
    elements = doc.get("elements") or []
    pipes = [i for i, e in enumerate(elements) if isinstance(e, dict) and e.get("kind") == "pipe"]
    targets = pipes if runs is None else runs
    for i in targets:
        if i not in pipes:
            raise ValueError(f"element {i} is not a pipe run (the runs are {', '.join(map(str, pipes))})")
    material = tables.size_material(standard)
    length = 0.0
    rows = []
    for size in sizes:
        trial = copy.deepcopy(doc)
        for i in targets:
            e = trial["elements"][i]
            e.update(size={"standard": standard, "nominal": size.nominal, "class": size.klass}, diameter="",
                     wall_thickness="")
            if e.get("material") != material.key:
                e.update(material=material.key, roughness="")
        a = analyse(trial)
        row = SizeRow(size.nominal, size.ID, a.ok)
        if not a.ok:
            row.errors = [f"{e.path}: {e.message}" for e in a.errors[:3]]
            rows.append(row)
            continue
        length = sum(a.line.elements[i].L for i in targets)
        energy = a.energy or {}
        pumping = {r["case"]: r for r in energy.get("pumping") or []}
        hydro = {r["case"]: r for r in energy.get("hydro") or []}
        for c in a.cases:
            p = c.solution.design
            if p is None:
                row.cases.append({"case": c.name, "Q": None, "reason": c.solution.message})
                continue
            pipes_here = [d for d in p["elements"] if d["kind"] in ("pipe", "valve")]
            machines = [d for d in p["elements"] if d["kind"] in ("pump", "turbine")]
            row.cases.append({
                "case": c.name, "Q": p["Q"],
                "V_max": max((d["V"] for d in pipes_here if d["kind"] == "pipe"), default=None),
                "losses": sum(d["head_change"] for d in pipes_here),
                "power": sum((d.get("power_shaft") or 0.0) for d in machines) if machines else None,
                "energy_Wh": (pumping.get(c.name) or hydro.get(c.name) or {}).get("energy_Wh"),
            })
        if costs is not None and size.nominal in costs:
            row.capital = length * costs[size.nominal]
        total = energy.get("pumping_total") or {}
        if life is not None and total.get("cost") is not None:
            row.energy_cost = total["cost"] * life
        if row.capital is not None:
            row.total = row.capital + (row.energy_cost or 0.0)
        bad = [f for f in a.findings if f.severity in ("error", "warning")]
        row.worst = bad[0].title if bad else ""
        rows.append(row)
    priced = [r for r in rows if r.total is not None]
    best = min(priced, key=lambda r: r.total).nominal if priced else None
    energy_doc = doc.get("energy") if isinstance(doc.get("energy"), dict) else {}
    return {"standard": standard, "class": klass, "runs": targets, "material": material.key, "length": length,
            "life": life, "rows": [r.to_dict() for r in rows], "cheapest": best,
            "currency": str(energy_doc.get("currency") or "")}
