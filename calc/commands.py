"""The calculation commands of `headsheet`: solve a sheet file, print its schema or system curve, answer
inverse questions.

The console entry point is `server.cli.main`, which registers these beside the server's own commands;
`calc` itself never imports the server.
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from calc.units import FLOW, InputError, fmt, parse_quantity, to_display


def _load(path: str):
    """Read and parse a sheet file; print the errors and exit 2 when it does not parse."""
    from calc.model.sheet import parse

    try:
        doc = json.loads(Path(path).read_text(encoding="utf-8"))
    except OSError as e:
        sys.exit(f"headsheet: cannot read {path}: {e.strerror}")
    except json.JSONDecodeError as e:
        sys.exit(f"headsheet: {path} is not valid JSON: {e.msg} at line {e.lineno}, column {e.colno}")
    parsed = parse(doc)
    if not parsed.ok:
        lines = [f"headsheet: {path} has {len(parsed.errors)} error(s):"]
        lines += [f"  {e.path or '(sheet)'}: {e.message} (got {e.value!r})" for e in parsed.errors]
        print("\n".join(lines), file=sys.stderr)
        sys.exit(2)
    return doc, parsed.line


def _flow(text: str) -> float:
    try:
        return parse_quantity(text, FLOW, "--flow")
    except InputError as e:
        sys.exit(f"headsheet: --flow {e.message}")


def cmd_solve(args) -> int:
    from calc.analysis import analyse

    doc, line = _load(args.file)
    a = analyse(doc)
    system = a.line.header.get("units", "SI")
    title = doc.get("header", {}).get("title", "")
    if args.case is not None:
        case = a.case(args.case)
        if case is None:
            names = ", ".join(repr(c.name) for c in a.cases)
            sys.exit(f"headsheet: {args.file} has no case {args.case!r} (its cases: {names})")
        if args.json:
            json.dump(case.to_dict(), sys.stdout, indent=2, allow_nan=False)
            print()
            return 0 if case.solution.points else 1
        print(format_solution(case.solution, system, f"{title} ({case.name})" if title else case.name))
        print(format_changes(case))
        print(format_findings(case.findings, args.all))
        return 0 if case.solution.points else 1
    if args.json:
        data = a.solution.to_dict()
        extra = a.to_dict()
        data["findings"], data["band"] = extra["findings"], extra["band"]
        if a.has_cases:
            data["cases"], data["governing"] = extra["cases"], extra["governing"]
        json.dump(data, sys.stdout, indent=2, allow_nan=False)
        print()
        return 0 if all(c.solution.points for c in a.cases) else 1
    if not a.has_cases:
        print(format_solution(a.solution, system, title))
    else:
        print(format_case_table(a, system, title))
        for c in a.cases:
            print()
            print(format_solution(c.solution, system, f"Case: {c.name}"))
            print(format_changes(c))
    if a.energy:
        print(format_energy(a.energy, system))
    print(format_findings(a.findings, args.all))
    return 0 if all(c.solution.points for c in a.cases) else 1


def format_energy(en: dict, system: str = "SI") -> str:
    """Energy over a year, for the terminal."""
    out = ["", "Energy over a year:"]
    for h in en.get("hydro") or []:
        cf = f"{h['capacity_factor'] * 100:.1f} %" if h["capacity_factor"] is not None else "–"
        out.append(f"  {h['case']}: turbine {h['energy_Wh'] / 1000:,.0f} kWh a year, capacity factor {cf} "
                   f"(of {_u(h['P_rated'], 'power', system)} at {_u(h['Q_rated'], 'flow', system)}), "
                   f"running {h['hours_running']:,.0f} h")
    for r in en.get("pumping") or []:
        cost = f", {r['cost']:,.0f} {r['currency']}".rstrip() if r["cost"] is not None else ""
        out.append(f"  {r['case']}: pumping {r['hours']:,.0f} h at {_u(r['power_input'], 'power', system)}: "
                   f"{r['energy_Wh'] / 1000:,.0f} kWh{cost}")
    if en.get("pumping_total"):
        t = en["pumping_total"]
        cost = f", {t['cost']:,.0f} {t['currency']}".rstrip() if t["cost"] is not None else ""
        out.append(f"  Year: {t['hours']:,.0f} h, {t['energy_Wh'] / 1000:,.0f} kWh{cost}")
    return "\n".join(out)


def format_changes(case) -> str:
    """What a case changes from the base sheet, one line each ('' for the base)."""
    if not case.changes:
        return ""
    return "\n".join(["Changed from the base:"] + [f"  {c.what}: {c.value}" for c in case.changes])


def format_case_table(a, system: str = "SI", title: str = "") -> str:
    """The case table: per case its flow, each machine's head and power, the extremes of pressure and velocity;
    then the governing case of each check."""
    out = [title, "=" * len(title)] if title else []
    out.append(f"{len(a.cases)} cases (the base and {len(a.cases) - 1} more):")
    out.append(f"  {'case':<24} {'flow':>12} {'lowest p (abs)':>15} {'highest V':>11}  machines")
    for c in a.cases:
        sol, sm = c.solution, c.summary
        if sol.design is None or not sm:
            out.append(f"  {c.name[:24]:<24} {'no operating point':>12}: {sol.message}")
            continue
        low = sm.get("pressure_low") or {}
        fast = sm.get("velocity_high") or {}
        machines = "; ".join(
            f"{m['label']} {_u(m['head'], 'head', system)}"
            + (f", {_u(m['power_shaft'], 'power', system)}" if m.get("power_shaft") is not None else "")
            for m in sm.get("machines") or [])
        out.append(f"  {c.name[:24]:<24} {_u(sol.design['Q'], 'flow', system):>12} "
                   f"{_u(low['pressure_abs'], 'pressure', system) if low else '–':>15} "
                   f"{_u(fast['V'], 'velocity', system) if fast else '–':>11}  {machines}")
    if a.governing:
        out.append("")
        out.append("Governing case of each check:")
        for r in a.governing:
            shown = _u(r["value"], r["quantity"], system) if r["quantity"] else fmt(r["value"], 3)
            limit = "" if r["limit"] is None else (
                f"; limit {_u(r['limit'], r['quantity'], system) if r['quantity'] else fmt(r['limit'], 3)}")
            state = "" if r["within"] is None else ("; within" if r["within"] else "; NOT within")
            out.append(f"  {r['check']}: {r['case']}, {shown} ({r['where']}){limit}{state}")
    return "\n".join(out)


def format_findings(findings, everything: bool = False) -> str:
    """Findings worst first; the general cautions and plain information only with ``everything``."""
    shown = [f for f in findings if everything or (f.severity in ("error", "warning")
                                                   or (f.severity == "caution" and not f.code.startswith("general")))]
    hidden = len(findings) - len(shown)
    out = ["", "Checks:" if shown else "Checks: nothing above information level."]
    out += [f"  [{f.severity}] {f.title}: {f.message}" + (f" (limit: {f.source})" if f.source else "") for f in shown]
    if hidden:
        out.append(f"  ({hidden} more: general cautions and information; --all shows them)")
    return "\n".join(out)


def _u(value, quantity, system, sig=4):
    v, label = to_display(value, quantity, system)
    return f"{fmt(v, sig)} {label}"


def format_solution(sol, system: str = "SI", title: str = "") -> str:
    """A plain-text table of the solution, for the terminal."""
    out = []
    if title:
        out.append(title)
        out.append("=" * len(title))
    liq = sol.liquid
    out.append(f"Liquid: {liq['name']}, rho {fmt(liq['rho'], 6)} kg/m3, mu {fmt(liq['mu'] * 1e3, 4)} mPa s, "
               f"p_vap {fmt(liq['p_vap'] / 1e3, 4)} kPa abs")
    out.append(f"Friction: {sol.method}; static head start - end: {_u(sol.static_head, 'head', system)}")
    out.append(f"Result: {sol.message}")
    if sol.no_point:
        np_ = sol.no_point
        if np_.get("max_power"):
            out.append(f"  largest shaft power the line can give: {_u(np_['max_power'], 'power', system)} "
                       f"at {_u(np_['Q_at_max'], 'flow', system)}")
    for k, p in enumerate(sol.points):
        mark = "design point" if p["is_design"] else ("cannot occur" if not p.get("attainable", True) else "other point")
        out.append("")
        out.append(f"Operating point {k + 1} ({mark}): Q = {_u(p['Q'], 'flow', system)}; "
                   f"energy residual {p['residual']:.1e} m")
        out.append(f"  {p['why']}")
        hdr = f"  {'element':<22} {'V':>10} {'Re':>10} {'f':>8} {'h friction':>12} {'h fittings':>12} {'head':>12} {'power':>11}"
        out.append(hdr)
        for d in p["elements"]:
            name = (d["label"] or d["kind"])[:22]
            if d["kind"] == "pipe":
                out.append(f"  {name:<22} {_u(d['V'], 'velocity', system):>10} {fmt(d['Re'], 4):>10} "
                           f"{fmt(d['f'], 4):>8} {_u(d['h_friction'], 'head', system):>12} "
                           f"{_u(d['h_fittings'], 'head', system):>12} {'':>12} {'':>11}")
            elif d["kind"] in ("turbine", "pump"):
                power = d.get("power_shaft")
                out.append(f"  {name:<22} {'':>10} {'':>10} {'':>8} {'':>12} {'':>12} "
                           f"{_u(d['head'], 'head', system):>12} "
                           f"{_u(power, 'power', system) if power is not None else '–':>11}")
            else:
                out.append(f"  {name:<22} {_u(d['V'], 'velocity', system):>10} {'':>10} {'':>8} {'':>12} "
                           f"{_u(d['h'], 'head', system):>12} {'':>12} {'':>11}")
    for m in sol.machines:
        if m["kind"] == "turbine" and m.get("Q_at_max"):
            out.append(f"\n{m['label']}: the line's largest shaft power is {_u(m['power_max'], 'power', system)} "
                       f"at {_u(m['Q_at_max'], 'flow', system)}")
    if sol.warnings:
        out.append("\nWarnings:")
        out += [f"  - {w}" for w in sol.warnings]
    log = sol.log
    out.append(f"\nSolve log: scanned {fmt(log['scan']['Q_min'], 3)} to {fmt(log['scan']['Q_max'], 3)} m3/s "
               f"on {log['scan']['grid_points']} points; "
               + "; ".join(f"root at {fmt(r['Q'], 6)} m3/s in {r['iterations']} iterations, residual {r['residual']:.1e} m"
                           for r in log["roots"]))
    return "\n".join(out)


def cmd_schema(args) -> int:
    from calc.model.schema import SCHEMA

    json.dump(SCHEMA, sys.stdout, indent=2)
    print()
    return 0


def cmd_head(args) -> int:
    from calc.steady.inverse import head_needed

    doc, line = _load(args.file)
    Q = _flow(args.flow)
    try:
        r = head_needed(line, Q)
    except ValueError as e:
        sys.exit(f"headsheet: --flow: {e}")
    system = line.header.get("units", "SI")
    if args.json:
        json.dump(r.to_dict(), sys.stdout, indent=2)
        print()
        return 0
    print(f"To pass {_u(Q, 'flow', system)}:")
    print(f"  head given by start minus end: {_u(r.head_available, 'head', system)}")
    print(f"  head taken by the elements:    {_u(r.head_used, 'head', system)}")
    if r.shortfall > 0:
        print(f"  extra head needed:             {_u(r.shortfall, 'head', system)}")
    else:
        print(f"  head to spare:                 {_u(-r.shortfall, 'head', system)}")
    return 0


def _costs(text: str) -> dict[str, float] | None:
    """'160=45,200=62.5' -> {'160': 45.0, '200': 62.5}: the cost of a metre of pipe of each nominal size."""
    if not text:
        return None
    out = {}
    for part in text.split(","):
        nominal, sep, cost = part.partition("=")
        try:
            out[nominal.strip()] = float(cost)
        except ValueError:
            sys.exit(f"headsheet: --cost-per-m wants NOMINAL=COST pairs, such as 160=45,200=62 (got {part!r})")
        if not sep:
            sys.exit(f"headsheet: --cost-per-m wants NOMINAL=COST pairs, such as 160=45,200=62 (got {part!r})")
    return out


def cmd_size(args) -> int:
    from calc.steady.inverse import smallest_size

    if not args.flow:
        return cmd_sizes(args)
    doc, line = _load(args.file)
    Q = _flow(args.flow)
    runs = [int(x) for x in args.runs.split(",")] if args.runs else None
    try:
        r = smallest_size(line, Q, args.standard, args.klass, runs)
    except (LookupError, ValueError, IndexError) as e:
        sys.exit(f"headsheet: {e}")
    if args.json:
        json.dump(r.to_dict(), sys.stdout, indent=2)
        print()
        return 0 if r.nominal else 1
    system = line.header.get("units", "SI")
    if r.nominal is None:
        print(f"No size of {args.standard} {args.klass} passes {_u(Q, 'flow', system)} with the head available.")
        return 1
    print(f"Smallest {args.standard} {args.klass} size passing {_u(Q, 'flow', system)}: {r.nominal} "
          f"(inner diameter {_u(r.ID, 'diameter', system)}), head to spare {_u(-r.shortfall, 'head', system)}")
    if r.note:
        print(f"  ({r.note})")
    return 0


def cmd_sizes(args) -> int:
    """Every size in a range at once, for every case (`calc.sizing.compare`)."""
    from calc.sizing import compare

    doc, line = _load(args.file)
    runs = [int(x) for x in args.runs.split(",")] if args.runs else None
    try:
        out = compare(doc, args.standard, args.klass, runs, args.smallest or None, args.largest or None,
                      _costs(args.cost_per_m), args.life)
    except (LookupError, ValueError) as e:
        sys.exit(f"headsheet: {str(e).strip(chr(39))}")
    if args.json:
        json.dump(out, sys.stdout, indent=2, allow_nan=False)
        print()
        return 0
    system = line.header.get("units", "SI")
    print(format_sizes(out, system))
    return 0


def format_sizes(out: dict, system: str = "SI") -> str:
    rows = out["rows"]
    text = [f"Sizes of {out['standard']} {out['class']} in elements {', '.join(map(str, out['runs']))} "
            f"({_u(out['length'], 'length', system)} of pipe), every case:"]
    for r in rows:
        head = f"  {r['nominal']:>6} (bore {_u(r['ID'], 'diameter', system)})"
        if not r["ok"]:
            text.append(head + ": " + "; ".join(r["errors"]))
            continue
        parts = []
        for c in r["cases"]:
            if c["Q"] is None:
                parts.append(f"{c['case']}: no operating point")
                continue
            bit = (f"{c['case']}: {_u(c['Q'], 'flow', system)}, V {_u(c['V_max'], 'velocity', system)}, "
                   f"losses {_u(c['losses'], 'head', system)}")
            if c["power"]:
                bit += f", {_u(c['power'], 'power', system)}"
            if c["energy_Wh"]:
                bit += f", {c['energy_Wh'] / 1000:,.0f} kWh/yr"
            parts.append(bit)
        money = ""
        if r["capital"] is not None:
            money = f"; capital {r['capital']:,.0f}"
            if r["energy_cost"] is not None:
                money += f" + energy over {out['life']:g} years {r['energy_cost']:,.0f} = {r['total']:,.0f}"
            money += f" {out['currency']}".rstrip()
        text.append(head + ": " + " | ".join(parts) + money + (f"  [{r['worst']}]" if r["worst"] else ""))
    if out["cheapest"]:
        energy = any(r["energy_cost"] is not None for r in rows)
        text.append(f"Least {'capital plus energy' if energy else 'capital'} cost: {out['cheapest']}"
                    + ("" if energy else " (no energy cost: give the sheet hours and a tariff, and --life)"))
    return "\n".join(text)


def cmd_curve(args) -> int:
    from calc.analysis import analyse
    from calc.record.system_curve import csv_text

    doc, line = _load(args.file)
    a = analyse(doc)
    if a.solution is None:
        sys.exit(f"headsheet: {args.file} does not solve: no system curve")
    sys.stdout.write(csv_text(a, line.header.get("units", "SI"), str(doc.get("header", {}).get("title") or "")))
    return 0


def cmd_transient(args) -> int:
    """The transient run of each case with events (or of one case), its envelope table and findings."""
    from calc.analysis import analyse

    doc, line = _load(args.file)
    a = analyse(doc)
    system = a.line.header.get("units", "SI")
    runs = a.transients
    if args.case is not None:
        if a.case(args.case) is None:
            names = ", ".join(repr(c.name) for c in a.cases)
            sys.exit(f"headsheet: {args.file} has no case {args.case!r} (its cases: {names})")
        runs = [t for t in runs if t.name.casefold() == a.case(args.case).name.casefold()]
        if not runs:
            sys.exit(f"headsheet: case {args.case!r} has no events: add them to the sheet's transient events")
    if not runs:
        sys.exit(f"headsheet: {args.file} has no transient events: add them to the sheet's transient events")
    if args.json:
        json.dump([t.to_dict() for t in runs], sys.stdout, indent=2, allow_nan=False)
        print()
    else:
        for t in runs:
            print(format_transient(t, system))
    return 0 if all(t.summary is not None for t in runs) else 1


def format_transient(t, system: str = "SI") -> str:
    """One case's transient run for the terminal: events, grid, each run's extremes, devices, findings."""
    out = [f"Transient: case {t.name}"]
    if t.summary is None:
        out.append(f"  not run: {t.problem[0]}: {t.problem[1]}" if t.problem else f"  not run: {t.deferred}")
        return "\n".join(out)
    s = t.summary
    out += [f"  event: {e}" for e in s["events"]]
    out.append(f"  method of characteristics: {s['reaches']} reaches, time step {s['dt'] * 1000:.4g} ms, "
               f"{s['steps']} steps over {s['duration']:g} s; quasi-steady friction; vapour cavities (DVCM)")
    out += [f"  grid: {n}" for n in s["notes"]]
    out += [f"  {r['run']}: {r['wave_speed_text']}" for r in s["runs"]]
    out.append(f"  {'run':<28} {'highest':>12} {'at':>10} {'lowest':>12} {'at':>10} {'rating':>12}  vapour")
    for r in s["runs"]:
        rating = _u(r["rating"], "pressure", system) if r["rating"] else "-"
        out.append(f"  {r['run'][:28]:<28} {_u(r['p_max'], 'pressure', system):>12} "
                   f"{_u(r['at_max'], 'length', system):>10} {_u(r['p_min'], 'pressure', system):>12} "
                   f"{_u(r['at_min'], 'length', system):>10} {rating:>12}  {'reached' if r['vapour_reached'] else '-'}")
    for d in s["devices"]:
        if d["kind"] == "surge_tank":
            extra = f"level {_u(d['level_min'], 'length', system)} to {_u(d['level_max'], 'length', system)}"
        elif d["kind"] == "air_vessel":
            extra = f"gas {d['gas_min']:.4g} to {d['gas_max']:.4g} m³ of {d['volume']:.4g} m³"
        else:
            extra = f"air in up to {d['air_max'] * 1000:.4g} L" if d["opened_at"] is not None else "stayed shut"
        out.append(f"  device: {d['label']} at chainage {_u(d['chainage'], 'length', system)}: {extra}")
    for name, m in s["machines"].items():
        out.append(f"  {name}: speed {m['speed_end'] * 100:.1f} % of its curves' speed at the end")
    out.append(format_findings(t.findings))
    return "\n".join(out)


def add_commands(sub: argparse._SubParsersAction) -> None:
    """Register solve, schema, head and size on the `headsheet` command's subparsers."""
    s = sub.add_parser("solve", help="solve a sheet file and print the operating points")
    s.add_argument("file")
    s.add_argument("--json", action="store_true", help="the full result in SI base units, as JSON")
    s.add_argument("--all", action="store_true", help="also print the general cautions and information findings")
    s.add_argument("--case", default=None, metavar="NAME",
                   help="solve only this operating case ('Base' for the sheet's own inputs); default every case")
    s.set_defaults(func=cmd_solve)
    s = sub.add_parser("transient", help="run the transient events of each case (method of characteristics)")
    s.add_argument("file")
    s.add_argument("--case", default=None, metavar="NAME", help="only this case's events ('Base' for the sheet's own)")
    s.add_argument("--json", action="store_true", help="the envelopes, histories and findings in SI units, as JSON")
    s.set_defaults(func=cmd_transient)
    s = sub.add_parser("curve", help="print the system curve (head needed against flow, every case) as CSV")
    s.add_argument("file")
    s.set_defaults(func=cmd_curve)
    s = sub.add_parser("schema", help="print the JSON Schema of the sheet document")
    s.set_defaults(func=cmd_schema)
    s = sub.add_parser("head", help="head needed to pass a given flow through the line")
    s.add_argument("file")
    s.add_argument("--flow", required=True, help="flow with its unit, e.g. '40 L/s'")
    s.add_argument("--json", action="store_true")
    s.set_defaults(func=cmd_head)
    s = sub.add_parser("size", help="every standard size in a range for every case (or, with --flow, the smallest "
                                    "that passes that flow)")
    s.add_argument("file")
    s.add_argument("--flow", default="", help="flow with its unit, e.g. '40 L/s': answer the smallest size passing it")
    s.add_argument("--from", dest="smallest", default="", help="the smallest nominal size compared, e.g. 110")
    s.add_argument("--to", dest="largest", default="", help="the largest nominal size compared, e.g. 315")
    s.add_argument("--cost-per-m", default="", help="cost of a metre of pipe by nominal size: 160=45,200=62")
    s.add_argument("--life", type=float, default=None, help="years of energy cost to add to the capital cost")
    s.add_argument("--standard", default="pe-iso4427", help="size table: asme-b36.10m or pe-iso4427")
    s.add_argument("--class", dest="klass", default="SDR11", help="schedule or SDR, e.g. 40 or SDR11")
    s.add_argument("--runs", default="", help="element numbers (from 0) of the runs to resize, e.g. 0,2; default all")
    s.add_argument("--json", action="store_true")
    s.set_defaults(func=cmd_size)
