"""Uncertainty band on the answer: the design flow (and machine duty) re-solved for low and high roughness, fitting K values and each friction formula.

Each case is the nominal line with one thing changed; two more cases stack, factor by factor, the
changes that gave the least and the most flow. A case is re-solved near the nominal design point
(Brent's method from a bracket grown out of a Newton step, on the same branch: same sign of
dE/dQ), and only when that fails by the full scan of `calc.steady.series`, keeping the root of the same
branch nearest the nominal flow. So a band costs about as much as one or two full solves.
"""

from __future__ import annotations

import math

from scipy.optimize import brentq

from calc import friction
from calc.model.elements import Line, PipeRun, Pump, Turbine, Valve
from calc.model.settings import CheckSettings
from calc.steady.series import Solution, find_roots, make_residual, residual_array, scan_range

#: Parameters of a fitting's loss model that scale its K value (K is linear in each set).

SOURCE = ("re-solves of this line: roughness new to aged (material table) or as set, fitting and valve K "
          "values +/- the percentage set (default 20 %, common practice; an exit's K = 1 is held), and each "
          "friction formula")


# ----------------------------------------------------------------------------- variants of the line

def roughness_range(run: PipeRun, s: CheckSettings) -> tuple[float, float, str]:
    """(low, high) roughness of a run for the band [m], and a note when there is no aged value.

    Default: from the material's new roughness (or the run's own, if lower) to its aged roughness
    (or the run's own, if higher); a setting replaces either end.
    """
    def bound(setting, default):
        if setting is None:
            return default
        kind, x = setting
        return run.eps * x if kind == "factor" else x

    mat = run.material
    aged = run.eps_aged
    if aged is None and mat is not None:
        aged = mat.eps_aged
    note = ""
    if s.roughness_high is None and aged is None:
        note = f"{run.label or 'a run'}: no aged roughness known; held at {run.eps * 1e3:.3g} mm"
    # A run declared aged still spans new to aged: the issue is how far the wall has gone.
    lo = bound(s.roughness_low, min(run.eps, mat.eps_new) if mat is not None else run.eps)
    hi = bound(s.roughness_high, max(run.eps, aged) if aged is not None else run.eps)
    # Keep eps/D where the friction formulas are meant to work.
    cap = 0.05 * run.D
    return min(lo, cap), min(hi, cap), note


def _copy(obj):
    """A shallow copy of a plain dataclass instance, a third of what copy.copy costs (the band makes thousands)."""
    new = object.__new__(type(obj))
    new.__dict__.update(obj.__dict__)
    return new


def variant(line: Line, eps: list[float] | None = None, k_factor: float = 1.0,
            method: str | None = None) -> Line:
    """A copy of the line with each run's roughness, every K scaled, or another friction method."""
    elements = []
    runs = iter(eps) if eps is not None else None
    for el in line.elements:
        if isinstance(el, PipeRun):
            new_eps = next(runs) if runs is not None else el.eps
            el = _copy(el)  # the fittings stay: the run scales their K (but an exit's) by its k_factor
            el.eps, el.k_factor, el._cache_key, el._cache = new_eps, el.k_factor * k_factor, None, None
        elif isinstance(el, Valve) and k_factor != 1.0:
            el = _copy(el)
            el.K = el.K * k_factor
        elements.append(el)
    out = _copy(line)
    out.elements, out.method = elements, method or line.method
    return out


# ----------------------------------------------------------------------------- re-solve near the design point

def _secant(E, Q0: float, e0: float, slope0: float, sign: float) -> float | None:
    """The root near Q0 by the secant method from a Newton step on the nominal slope, to 1e-12 of the flow;
    None unless it converges within a few steps, on the same branch (dE/dQ of the same sign) and within
    half the flow of Q0 (a variant moves the answer a little; anything else is left to the bracket)."""
    if slope0 == 0.0 or not math.isfinite(slope0):
        return None
    a, fa = Q0, e0
    b = Q0 - e0 / slope0
    if not b > 0.0:
        return None
    fb = E(b)
    for _ in range(10):
        if not math.isfinite(fb):
            return None
        if fb == 0.0 or abs(b - a) <= 1e-12 * abs(b):
            slope = (fb - fa) / (b - a) if b != a else slope0
            if slope * sign > 0.0 and abs(b - Q0) <= 0.5 * Q0:
                return b
            return None
        if fb == fa:
            return None
        c = b - fb * (b - a) / (fb - fa)
        if not c > 0.0:
            return None
        a, fa, b, fb = b, fb, c, E(c)
    return None


def root_near(line: Line, Q0: float, slope0: float) -> tuple[float | None, int]:
    """The operating point of ``line`` on the branch of the nominal design point (Q0, slope0 = dE/dQ there).

    Returns (Q or None, 1 if the full scan was needed else 0).
    """
    E = make_residual(line)
    e0 = E(Q0)
    if e0 == 0.0:
        return Q0, 0
    sign = 1.0 if slope0 > 0 else -1.0
    Q = _secant(E, Q0, e0, slope0, sign)
    if Q is not None:
        return Q, 0
    Q_lo, Q_hi = scan_range(line)
    if slope0 != 0.0 and math.isfinite(slope0):
        step = -1.5 * e0 / slope0
        # Never smaller than rounding can resolve, never past zero flow in one go.
        step = math.copysign(max(abs(step), 1e-9 * Q0), step)
        a, fa = Q0, e0
        for _ in range(12):
            b = a + step
            if b <= 0.0:
                b = a / 4.0
            if not Q_lo <= b <= Q_hi:
                break
            fb = E(b)
            if not math.isfinite(fb):
                break
            if fa * fb < 0.0 or fb == 0.0:
                lo, hi, flo, fhi = (a, b, fa, fb) if a < b else (b, a, fb, fa)
                if (fhi - flo) * sign > 0.0:
                    Q = b if fb == 0.0 else brentq(E, lo, hi, xtol=1e-15, rtol=1e-12, maxiter=200)
                    return Q, 0
                break
            a, fa = b, fb
            step *= 2.0
    roots, _, _ = find_roots(E, lambda q: residual_array(line, q), Q_lo, Q_hi)
    same = [r for r in roots if r.slope * sign > 0.0]
    if not same:
        return None, 1
    return min(same, key=lambda r: abs(math.log(r.Q / Q0))).Q, 1


# ----------------------------------------------------------------------------- the band

def _machine_values(line: Line, Q: float | None) -> list[dict]:
    fluid = line.fluid
    out = []
    for i, el in enumerate(line.elements):
        if isinstance(el, (Turbine, Pump)):
            if Q is None:
                out.append({"index": i, "head": None, "power_shaft": None})
                continue
            d = el.detail(Q, fluid)
            out.append({"index": i, "head": d["head"], "power_shaft": d["power_shaft"]})
    return out


def band(line: Line, solution: Solution, settings: CheckSettings | None = None) -> dict | None:
    """The uncertainty band of the design point, JSON-ready; None when there is no design point.

    Keys: Q_nominal, Q_low, Q_high [m3/s]; ``factors``: per factor the low and high flow;
    ``cases``: every re-solve with its flow and machine values; ``machines``: per machine the
    quantity that varies (turbine shaft power, pump head) with nominal, low and high; ``notes``;
    ``solves`` (local re-solves) and ``full_scans`` (cases that needed the full scan).
    """
    s = settings or CheckSettings()
    point = solution.design
    if point is None:
        return None
    Q0, slope0 = point["Q"], point["slope"]
    runs = line.runs
    notes: list[str] = []
    lows, highs = [], []
    for run in runs:
        lo, hi, note = roughness_range(run, s)
        lows.append(lo)
        highs.append(hi)
        if note:
            notes.append(note)
    nominal_eps = [r.eps for r in runs]
    has_K = any(r.fittings for r in runs) or any(isinstance(el, Valve) for el in line.elements)
    k = s.k_uncertainty if has_K else 0.0

    # factor -> list of (case key, label, variant arguments); a case equal to the nominal is not solved.
    plan = {"roughness": [], "fittings": [], "friction": []}
    if lows != nominal_eps:
        plan["roughness"].append(("roughness-low", "low roughness", {"eps": lows}))
    if highs != nominal_eps:
        plan["roughness"].append(("roughness-high", "aged (high) roughness" if s.roughness_high is None
                                  else "high roughness", {"eps": highs}))
    if k > 0.0:
        plan["fittings"].append(("fittings-low", f"K values -{k * 100:g} %", {"k_factor": 1.0 - k}))
        plan["fittings"].append(("fittings-high", f"K values +{k * 100:g} %", {"k_factor": 1.0 + k}))
    for m in friction.METHODS:
        if m != line.method:
            plan["friction"].append((f"friction-{m}", f"the {m.replace('_', ' ')} formula", {"method": m}))
    # In transitional flow the friction factor may lie anywhere from the laminar to the turbulent value.
    transitional = [d["label"] or "a run" for d in point["elements"] if d["kind"] == "pipe"
                    and d["regime"] == "transitional"]
    if transitional and not friction.METHODS[line.method].all_regimes:
        plan["transition"] = [
            ("transition-laminar", "laminar friction (64/Re) in the transitional runs",
             {"method": f"{line.method}@laminar"}),
            ("transition-turbulent", "turbulent friction in the transitional runs",
             {"method": f"{line.method}@turbulent"})]

    cases = []
    solves = scans = 0

    def run_case(key, label, factor, args):
        nonlocal solves, scans
        Q, scanned = root_near(variant(line, **args), Q0, slope0)
        solves += 1
        scans += scanned
        case = {"key": key, "label": label, "factor": factor, "Q": Q, "args": args}
        cases.append(case)
        return case

    factors = {}
    for factor, items in plan.items():
        got = [run_case(key, label, factor, args) for key, label, args in items]
        flows = [c["Q"] for c in got if c["Q"] is not None]
        factors[factor] = {"Q_low": min(flows + [Q0]) if got else None,
                           "Q_high": max(flows + [Q0]) if got else None,
                           "cases": [c["key"] for c in got]}

    # Stack the changes that moved the flow down (and up) into one case each.
    for key, label, pick in (("combined-low", "every change that lowers the flow", min),
                             ("combined-high", "every change that raises the flow", max)):
        args = {}
        moved = 0
        for factor in plan:
            options = [c for c in cases if c["factor"] == factor and c["Q"] is not None]
            if not options:
                continue
            best = pick(options, key=lambda c: c["Q"])
            if (best["Q"] < Q0) if pick is min else (best["Q"] > Q0):
                args.update(best["args"])
                moved += 1
        if moved >= 2:
            run_case(key, label, "combined", args)

    flows = [c["Q"] for c in cases if c["Q"] is not None] + [Q0]
    nominal_machines = _machine_values(line, Q0)
    for c in cases:
        # A machine's head and power depend on the flow and the liquid only, not on the pipe data.
        c["machines"] = _machine_values(line, c["Q"])
        c["method"] = c["args"].get("method", line.method).partition("@")[0]
        del c["args"]

    machines = []
    for j, m in enumerate(nominal_machines):
        el = line.elements[m["index"]]
        if isinstance(el, Turbine) and el.mode == "power":
            # At a set power the shaft power is fixed; what the uncertain line changes is the flow and net head.
            what, q, key = "net head", "head", "head"
        elif isinstance(el, Turbine):
            what, q, key = "shaft power", "power", "power_shaft"
        else:
            what, q, key = "pump head", "head", "head"
        vals = [c["machines"][j][key] for c in cases if c["machines"][j][key] is not None]
        vals.append(m[key])
        vals = [v for v in vals if v is not None]
        machines.append({"index": m["index"], "label": el.label, "kind": el.kind, "what": what, "quantity": q,
                         "nominal": m[key], "low": min(vals) if vals else None,
                         "high": max(vals) if vals else None})

    parts = []
    if plan["roughness"]:
        parts.append("roughness new to aged" if s.roughness_high is None and s.roughness_low is None
                     else "the roughness range set")
    if k > 0.0:
        parts.append(f"fitting K values +/-{k * 100:g} %")
    if plan["friction"]:
        names = [friction.METHODS[m].name + (f" {m.rsplit('_', 1)[-1]}" if m.rsplit("_", 1)[-1].isdigit() else "")
                 for m in friction.METHODS if m != line.method]
        parts.append("each other friction formula (" + ", ".join(names) + ")")
    if plan.get("transition"):
        parts.append("the friction factor from laminar to turbulent in the transitional runs")
    return {
        "Q_nominal": Q0, "Q_low": min(flows), "Q_high": max(flows),
        "describe": (" and ".join(parts) if len(parts) < 3 else ", ".join(parts[:-1]) + " and " + parts[-1])
                    or "no changes",
        "factors": factors, "cases": cases, "machines": machines, "notes": notes,
        "complete": all(c["Q"] is not None for c in cases),
        "transitional": transitional if plan.get("transition") else [],
        "solves": solves, "full_scans": scans, "source": SOURCE,
    }
