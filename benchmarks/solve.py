"""Benchmark: median time to solve a 12-element line with a turbine, against a plain reference script.

Run by hand: python benchmarks/solve.py
The plain script uses the `fluids` friction library (a test dependency) and scipy brentq, and
finds the same two operating points the way a careful spreadsheet user would script it.
"""

from __future__ import annotations

import math
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
sys.path.insert(0, str(Path(__file__).resolve().parent))

from calc.analysis import analyse  # noqa: E402
from calc.model.sheet import parse  # noqa: E402
from calc.review import (
    checks,  # noqa: E402
    uncertainty,  # noqa: E402
)
from calc.steady.series import solve  # noqa: E402
from calc.water import G  # noqa: E402


def twelve_element_doc() -> dict:
    """A penstock in nine runs with a valve, an isolating valve and a turbine (12 elements)."""
    runs = []
    z = 409.0
    for i in range(9):
        z -= 9.0
        runs.append({"kind": "pipe", "label": f"Run {i + 1}", "length": f"{120 + 10 * i} m",
                     "diameter": "300 mm" if i < 5 else "280 mm", "roughness": "0.05 mm", "material": "",
                     "end_elevation": f"{z} m",
                     "fittings": [{"type": "k", "K": "0.25", "count": 2}]})
    elements = runs[:4] + [{"kind": "valve", "label": "Butterfly", "K": "0.3", "diameter": ""}] + runs[4:]
    elements += [{"kind": "valve", "label": "Inlet valve", "K": "0.2", "diameter": ""},
                 {"kind": "turbine", "label": "T1", "mode": "power", "power": "70 kW", "efficiency": "0.86"}]
    return {"format": "headsheet-sheet", "version": 1,
            "header": {"title": "benchmark"}, "liquid": {"kind": "water", "temperature": "10 degC"},
            "start": {"kind": "reservoir", "elevation": "412 m", "outlet_elevation": "409 m"},
            "end": {"kind": "reservoir", "elevation": "320 m"},
            "elements": elements}


def plain_reference(line):
    """The plain script: a residual with fluids' friction factor, brentq on both sides of the power peak."""
    import fluids.friction
    from scipy.optimize import brentq, minimize_scalar

    rho, mu = line.liquid.rho, line.liquid.mu
    pipes = []
    for el in line.elements:
        if el.kind == "pipe":
            pipes.append((el.L, el.D, el.eps, sum(f.count * f.params["K"] for f in el.fittings)))
        elif el.kind == "valve":
            pipes.append((0.0, el.D, 0.0, el.K))
    turbine = line.elements[-1]
    gross = line.start.elevation - line.end.elevation

    def losses(Q):
        h = 0.0
        for L, D, eps, K in pipes:
            V = Q / (math.pi * D * D / 4)
            f = fluids.friction.friction_factor(rho * V * D / mu, eps / D) if L else 0.0
            h += (f * L / D + K) * V * V / (2 * G)
        return h

    def E(Q):
        return gross - losses(Q) - turbine.power / (turbine.efficiency * rho * G * Q)

    peak = minimize_scalar(lambda Q: -(Q * (gross - losses(Q))), bounds=(1e-4, 5.0), method="bounded").x
    return brentq(E, 1e-4, peak, xtol=1e-15), brentq(E, peak, 5.0, xtol=1e-15)


def median_time(fn, repeat=300) -> float:
    for _ in range(10):
        fn()
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main() -> None:
    line = parse(twelve_element_doc()).line
    sol = solve(line)
    ref = plain_reference(line)
    ours = [p["Q"] for p in sol.points]
    print(f"operating points: headsheet {[f'{q:.6f}' for q in ours]} m3/s; plain script {[f'{q:.6f}' for q in ref]} m3/s")
    t_ours = median_time(lambda: solve(line))
    t_ref = median_time(lambda: plain_reference(line))
    t_parse = median_time(lambda: parse(twelve_element_doc()))
    print(f"headsheet solve (12 elements, all points, full detail): median {t_ours * 1e3:.3f} ms")
    print(f"plain script (fluids + brentq, two points, no detail):  median {t_ref * 1e3:.3f} ms")
    print(f"parse of the sheet document:                            median {t_parse * 1e3:.3f} ms")
    print(f"ratio headsheet / plain: {t_ours / t_ref:.2f}")

    settings = line.settings["checks"]

    def solve_checks_band():
        sol = solve(line)
        band = uncertainty.band(line, sol, settings)
        return checks.review(line, sol, settings, band)

    band = uncertainty.band(line, sol, settings)
    t_band = median_time(lambda: uncertainty.band(line, sol, settings), 100)
    t_checks = median_time(lambda: checks.review(line, sol, settings, band), 100)
    t_all = median_time(solve_checks_band, 100)
    t_analyse = median_time(lambda: analyse(twelve_element_doc()), 100)
    print(f"uncertainty band alone ({band['solves']} re-solves, {band['full_scans']} full scans):    "
          f"median {t_band * 1e3:.3f} ms")
    print(f"checks alone (findings from the solution and band):    median {t_checks * 1e3:.3f} ms")
    print(f"solve + checks + band:                                 median {t_all * 1e3:.3f} ms")
    print(f"analyse(doc): parse + solve + band + checks:           median {t_analyse * 1e3:.3f} ms")
    examples = Path(__file__).resolve().parents[1] / "examples"
    for path in sorted(examples.glob("*.json")):
        import json
        doc = json.loads(path.read_text())
        print(f"analyse({path.name}): median {median_time(lambda: analyse(doc), 50) * 1e3:.3f} ms")
    cases_figures(examples)


def cases_figures(examples: Path) -> None:
    """A sheet with 8 operating cases against the same sheet alone: every case solved with its checks and
    band. The memos of the unit parser (text to value, unit to factor) and of the machine curves (points
    to coefficients) are emptied before each timed call, so every call parses as the first edit of a fresh process does
    (within one sheet the same strings and curves still parse once, which is the memos' point)."""
    import json

    from sheet_cases import with_cases

    from calc import units
    from calc.model import elements

    def cold(doc):
        def run():
            units._PARSED.clear()
            units._factor.cache_clear()
            elements._pchip.cache_clear()
            return analyse(doc)
        return run

    print("operating cases (target: 8 cases with every case's checks and band in at most 10 ms):")
    for path in sorted(examples.glob("*.json")):
        doc = json.loads(path.read_text())
        eight = with_cases(doc, 8)
        assert analyse(eight).ok, analyse(eight).errors
        one = median_time(cold(doc), 30)
        many = median_time(cold(eight), 30)
        warm = median_time(lambda: analyse(eight), 30)
        print(f"  {path.name}: one case {one * 1e3:.2f} ms; 8 cases + base {many * 1e3:.2f} ms "
              f"({many / one:.1f} x); 8 cases with the parse memo warm {warm * 1e3:.2f} ms")


if __name__ == "__main__":
    main()
