"""Benchmark: a transient run of a 3 km line of three runs (steel, PE, steel) from a reservoir to a valve
closing over 10 s into a lower reservoir, 60 s of event, at least 200 reaches: the median time of the
run itself (grid, steady state, every step with quasi-steady friction, envelope and histories), beside a
plain-loop reference that steps the same grid by the same equations node by node (friction held at its
steady value in both for the comparison of their answers).

Run by hand: python benchmarks/transient.py [-n 20] [--reaches 240]
Nothing is cached between repeats: each repeat builds its grid from the sheet's line and runs it.
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from calc.analysis import analyse  # noqa: E402
from calc.model.ids import ensure_ids  # noqa: E402
from calc.transient.line import build  # noqa: E402
from calc.transient.line import run as run_transient  # noqa: E402
from calc.water import G  # noqa: E402


def three_run_doc(reaches: int) -> dict:
    """A 3 km gravity main: 1 km of steel NPS 12, 1 km of PE 315 SDR 17, 1 km of steel, a valve at the end."""
    steel = {"standard": "asme-b36.10m", "nominal": "12", "class": "40"}
    pe = {"standard": "pe-iso4427", "nominal": "315", "class": "SDR17"}
    runs = [
        {"kind": "pipe", "label": "Steel, upper", "length": "1000 m", "size": steel, "material": "steel-commercial",
         "end_elevation": "95 m", "rating": "25 bar"},
        {"kind": "pipe", "label": "PE, middle", "length": "1000 m", "size": pe, "material": "pe100",
         "end_elevation": "80 m", "rating": "10 bar"},
        {"kind": "pipe", "label": "Steel, lower", "length": "1000 m", "size": steel, "material": "steel-commercial",
         "end_elevation": "60 m", "rating": "25 bar"},
    ]
    doc = {"format": "headsheet-sheet", "version": 1,
           "header": {"title": "Three-run main", "units": "SI"}, "liquid": {"kind": "water", "temperature": "15 degC"},
           "start": {"kind": "reservoir", "elevation": "120 m", "outlet_elevation": "100 m"},
           "end": {"kind": "reservoir", "elevation": "70 m"},
           "elements": runs + [{"kind": "valve", "label": "Outlet valve", "K": "2"}]}
    doc = ensure_ids(doc)
    doc["transient"] = {"duration": "60 s", "reaches": reaches,
                        "events": [{"kind": "valve", "element": "valve-1", "time": "10 s"}]}
    return doc


def plain_loops(system, H0, Q0s, joints, t_end):
    """The grid of `system` stepped node by node in plain Python: interior nodes, the start reservoir, the
    junctions (total head continuous), the valve into the end reservoir."""
    dt = system.grid.dt
    counts = system.grid.counts
    pipes = system.pipes
    Bs = [float(system.B[system.offsets[k]]) for k in range(len(pipes))]
    Rs = [float(system.R[system.offsets[k]]) for k in range(len(pipes))]
    cs = [1.0 / (2 * G * p.A ** 2) for p in pipes]
    H = [list(h) for h in H0]
    Q = [list(q) for q in Q0s]
    start, end = joints[0].upstream, joints[-1]
    valve = end.elements[0]
    peak = max(max(h) for h in H)
    steps = int(math.ceil(t_end / dt - 1e-9))
    for s in range(1, steps + 1):
        t = s * dt
        nH = [row[:] for row in H]
        nQ = [row[:] for row in Q]
        for k, n in enumerate(counts):
            B, R = Bs[k], Rs[k]
            h, q = H[k], Q[k]
            for j in range(1, n):
                cp = h[j - 1] + B * q[j - 1] - R * q[j - 1] * abs(q[j - 1])
                cm = h[j + 1] - B * q[j + 1] + R * q[j + 1] * abs(q[j + 1])
                nH[k][j] = 0.5 * (cp + cm)
                nQ[k][j] = (cp - cm) / (2 * B)
        ends = []
        for k in range(len(pipes)):
            B, R = Bs[k], Rs[k]
            h, q = H[k], Q[k]
            cm = h[1] - B * q[1] + R * q[1] * abs(q[1])
            cp = h[-2] + B * q[-2] - R * q[-2] * abs(q[-2])
            ends.append((cp, cm))
        # the start: s + c0 Q^2 = CM + B Q + c Q^2
        cm, B, c = ends[0][1], Bs[0], cs[0]
        A, a = start.static - cm, start.c - c
        q = 2 * A / (B + math.sqrt(max(0.0, B * B - 4 * a * A)))
        nQ[0][0], nH[0][0] = q, cm + B * q
        for k in range(len(pipes) - 1):
            cp, cm = ends[k][0], ends[k + 1][1]
            B1, B2 = Bs[k], Bs[k + 1]
            A, a = cp - cm, cs[k] - cs[k + 1]
            q = 2 * A / (B1 + B2 + math.sqrt(max(0.0, (B1 + B2) ** 2 - 4 * a * A)))
            nQ[k][-1] = nQ[k + 1][0] = q
            nH[k][-1], nH[k + 1][0] = cp - B1 * q, cm + B2 * q
        cp, B, c = ends[-1][0], Bs[-1], cs[-1]
        valve.at(t, dt)
        if valve.shut:
            q = 0.0
        else:
            A = cp - end.downstream.static
            k_now = valve.k_now
            a = c - (k_now if A > 0 else -k_now)
            q = 2 * A / (B + math.sqrt(max(0.0, B * B - 4 * a * A)))
        nQ[-1][-1], nH[-1][-1] = q, cp - B * q
        H, Q = nH, nQ
        peak = max(peak, max(max(h) for h in H))
    return peak


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("-n", type=int, default=20, help="repeats of the fast run")
    ap.add_argument("--reaches", type=int, default=240)
    args = ap.parse_args()
    doc = three_run_doc(args.reaches)
    a = analyse(doc, transients="none")
    line, Q0 = a.line, float(a.solution.design["Q"])
    spec = line.settings["transient"]
    events = spec.events_of("Base")
    times = []
    for _ in range(args.n):
        t0 = time.perf_counter()
        ans = run_transient(line, Q0, spec, events, "Base")
        times.append(time.perf_counter() - t0)
    r = ans.result
    # the same grid with each run's friction held (the plain loops hold it too), for the agreement
    system, (H0, Qs, _), frame = build(line, Q0, spec, events, "Base")
    held = system.run(H0, Qs, spec.duration, frame.vapour, [])
    peak_fast = max(float(h.max()) for h in held.H_max)
    system, (H0, Qs, _), _ = build(line, Q0, spec, events, "Base")
    t0 = time.perf_counter()
    peak_plain = plain_loops(system, H0, Qs, system.joints, spec.duration)
    t_plain = time.perf_counter() - t0
    print(f"line: 3 runs, {sum(p.L for p in ans.pipes):.0f} m, wave speeds "
          + ", ".join(f"{p.a:.0f}" for p in ans.pipes) + " m/s")
    print(f"grid: {sum(r.grid.counts)} reaches, dt {r.grid.dt * 1000:.3f} ms, {len(r.t) - 1} steps over "
          f"{spec.duration:g} s")
    print(f"fast run (median of {args.n}): {statistics.median(times) * 1000:.1f} ms "
          f"(min {min(times) * 1000:.1f}, max {max(times) * 1000:.1f})")
    print(f"plain loops (once): {t_plain * 1000:.0f} ms")
    print(f"highest head, friction held: fast {peak_fast:.9f} m, plain {peak_plain:.9f} m, difference "
          f"{abs(peak_fast - peak_plain):.2e} m; with quasi-steady friction {max(float(h.max()) for h in r.H_max):.6f} m")
    return 0


if __name__ == "__main__":
    sys.exit(main())
