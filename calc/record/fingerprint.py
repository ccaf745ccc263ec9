"""The fingerprint of a record: SHA-256 over canonical JSON of the inputs, the key results and the program version."""

from __future__ import annotations

import hashlib
import json
import math
from functools import lru_cache
from importlib import metadata
from pathlib import Path

PROGRAM = "Headsheet"
#: Bumped when what goes into the fingerprint changes shape, so old and new never collide.
SCHEME = 1
#: Significant figures of the results fingerprinted: far beyond what the record prints, yet
#: short of the last bits, which a different CPU or library build may round differently.
RESULT_SIG = 6
#: Heads and flows smaller than this [SI] are round-off (a reservoir's pressure head of 1e-13 m).
ZERO = 1e-9


@lru_cache(maxsize=1)
def program_version() -> str:
    """The program's version: from the installed package, else from pyproject.toml beside the source."""
    try:
        return metadata.version("headsheet")
    except metadata.PackageNotFoundError:
        pass
    pyproject = Path(__file__).resolve().parents[1] / "pyproject.toml"
    try:
        import tomllib

        return str(tomllib.loads(pyproject.read_text(encoding="utf-8"))["project"]["version"])
    except (OSError, KeyError, ValueError):
        return "unknown"


def _num(x) -> str | None:
    """A float as text with RESULT_SIG significant figures; None for a missing or non-finite value."""
    if x is None:
        return None
    x = float(x)
    if not math.isfinite(x):
        return None
    if abs(x) < ZERO:
        return "0"
    return f"{x:.{RESULT_SIG}g}"


def key_results(analysis) -> dict:
    """The results a printed record is judged by, rounded to RESULT_SIG figures, in SI units.

    Every operating point's flow; at each point every element's head change and each machine's
    head and shaft power; the start and end heads; the lowest pressure head along the line; a
    turbine's largest power. Solve-log details (iterations, residuals) are left out: they may
    differ between machines while the answer does not.
    """
    sol = analysis.solution
    if sol is None:
        return {"status": "not solved", "errors": [[e.path, e.message] for e in analysis.errors]}
    points = []
    for p in sol.points:
        lowest = min(p["profile"], key=lambda s: s["pressure_head"]) if p["profile"] else None
        points.append({
            "Q": _num(p["Q"]),
            "design": bool(p.get("is_design")),
            "head_start": _num(p["head_start"]),
            "head_end": _num(p["head_end"]),
            "elements": [
                {"kind": d["kind"], "head_change": _num(d["head_change"]),
                 **({"head": _num(d["head"]), "power_shaft": _num(d.get("power_shaft"))}
                    if d["kind"] in ("pump", "turbine") else {})}
                for d in p["elements"]
            ],
            "lowest_pressure_head": _num(lowest["pressure_head"]) if lowest else None,
        })
    machines = [{"index": m["index"], "power_max": _num(m.get("power_max")), "Q_at_max": _num(m.get("Q_at_max"))}
                for m in sol.machines if m["kind"] == "turbine"]
    out = {"status": sol.status, "design_index": sol.design_index, "points": points, "machines": machines}
    if getattr(analysis, "has_cases", False):
        # Each case's design point (a sheet without cases keeps the fingerprint it always had).
        out["cases"] = [_case_results(c) for c in analysis.cases[1:]]
    if getattr(analysis, "transients", None):
        # Each case's transient extremes (a sheet without events keeps the fingerprint it always had).
        out["transients"] = [_transient_results(t) for t in analysis.transients]
    return out


def _transient_results(t) -> dict:
    if t.summary is None:
        return {"case": t.name, "status": "not run"}
    return {"case": t.name, "reaches": t.summary["reaches"], "steps": t.summary["steps"],
            "runs": [{"p_max": _num(r["p_max"]), "p_min": _num(r["p_min"]), "vapour": r["vapour_reached"]}
                     for r in t.summary["runs"]]}


def _case_results(case) -> dict:
    p = case.solution.design
    if p is None:
        return {"name": case.name, "status": case.solution.status}
    return {"name": case.name, "status": case.solution.status, "Q": _num(p["Q"]),
            "machines": [{"index": d["index"], "head": _num(d["head"]), "power_shaft": _num(d.get("power_shaft"))}
                         for d in p["elements"] if d["kind"] in ("pump", "turbine")]}


def canonical(obj) -> str:
    """The one canonical JSON text: sorted keys, no spaces, UTF-8 kept, no NaN."""
    return json.dumps(obj, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False)


def fingerprint(analysis, version: str | None = None) -> str:
    """SHA-256 (hex) of the sheet document, its key results and the program version.

    The document is taken whole, exactly as stored (titles and labels included), so any change
    to what the record shows changes the fingerprint; key order in the stored JSON does not.

    >>> from calc.analysis import analyse
    >>> from calc.model.sheet import blank_sheet
    >>> a = analyse(blank_sheet())
    >>> fingerprint(a, "1") == fingerprint(analyse(blank_sheet()), "1"), len(fingerprint(a, "1"))
    (True, 64)
    """
    payload = {
        "scheme": SCHEME,
        "program": PROGRAM,
        "version": program_version() if version is None else version,
        "inputs": analysis.doc,
        "results": key_results(analysis),
    }
    return hashlib.sha256(canonical(payload).encode("utf-8")).hexdigest()


def normalise(text: str) -> str:
    """A fingerprint as typed from paper (spaces, dashes, capitals) reduced to lowercase hex.

    >>> normalise("  AB12 cd34-EF ")
    'ab12cd34ef'
    """
    return "".join(ch for ch in str(text).lower() if not ch.isspace() and ch not in "-:.")


def grouped(fp: str, size: int = 4) -> str:
    """The fingerprint in groups of four for reading aloud and typing back.

    >>> grouped("0123456789abcdef")
    '0123 4567 89ab cdef'
    """
    return " ".join(fp[i:i + size] for i in range(0, len(fp), size))
