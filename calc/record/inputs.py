"""The record's inputs: every value as typed, its SI value and its source, one table per element."""

from __future__ import annotations

from calc.model.elements import PipeRun, Pump, Turbine, Valve
from calc.model.settings import CheckSettings
from calc.record.context import Context
from calc.record.parts import Table
from calc.record.sources import looks_published
from calc.record.text import _SI_UNIT, as_text, num, si, sub
from calc.units import DENSITY, FLOW, LENGTH, MODULUS, POWER, PRESSURE, RATIO, TEMPERATURE, VISCOSITY, parse_quantity


def _typed(c: Context, d: dict, key: str, kind, label: str, source: str = "typed") -> list[str] | None:
    """A row for a typed field: label, as typed, SI value, source; None if the field is blank."""
    v = d.get(key) if isinstance(d, dict) else None
    if v is None or (isinstance(v, str) and not v.strip()):
        return None
    try:
        value = parse_quantity(v, kind, key)
        si_text = f"{si(value)} {_SI_UNIT[kind]}" if kind is not RATIO else si(value)
    except ValueError:
        si_text = "–"
    return [label, as_text(v), si_text, source]


def inputs(c: Context) -> list[Table]:
    doc = c.doc
    head = ["Quantity", "As typed", "SI value", "Source"]
    align = ["l", "l", "r", "l"]
    tables_out = []
    # Liquid, site and settings.
    rows = []
    liq = doc.get("liquid") or {}
    lq = c.liquid
    if lq.source == "given by the user":
        rows.append(["Liquid", as_text(liq.get("name")) or lq.name, "", "typed"])
        for key, kind, label in (("density", DENSITY, "Density ρ"), ("viscosity", VISCOSITY, "Viscosity μ"),
                                 ("vapour_pressure", PRESSURE, "Vapour pressure (absolute)"),
                                 ("bulk_modulus", MODULUS, "Bulk modulus")):
            r = _typed(c, liq, key, kind, label)
            if r:
                rows.append(r)
    else:
        r = _typed(c, liq, "temperature", TEMPERATURE, "Water temperature T")
        if r:
            rows.append(r)
        src = c.ref_liquid
        rows += [["Density ρ", "", f"{si(lq.rho)} kg/m³", f"IAPWS {src}"],
                 ["Viscosity μ", "", f"{si(lq.mu)} Pa·s", f"IAPWS {src}"],
                 ["Vapour pressure (absolute)", "", f"{si(lq.p_vap)} Pa", f"IAPWS {src}"]]
        if lq.bulk_modulus:
            rows.append(["Bulk modulus", "", f"{si(lq.bulk_modulus)} Pa", f"IAPWS {src}"])
    site = doc.get("site") or {}
    r = _typed(c, site, "atmospheric_pressure", PRESSURE, "Atmospheric pressure (absolute)")
    rows.append(r or ["Atmospheric pressure (absolute)", "", f"{si(c.line.p_atm)} Pa", "default"])
    rows.append(["Friction method", as_text((doc.get("settings") or {}).get("friction_method")) or "colebrook",
                 c.method.name, f"chosen {c.ref_method}"])
    rows.append(["Gravity g", "", "9.80665 m/s²", f"standard {c.ref_g}"])
    tables_out.append(Table(head, rows, "Liquid, site and method", align, css="inputs"))
    tables_out.append(_check_limits(c, head, align))

    small: list[Table] = []  # the ends, valves and machines, gathered into one table below
    for which in ("start", "end"):
        node_doc = doc.get(which) or {}
        node = getattr(c.line, which)
        rows = []
        for key, kind, label in (("elevation", LENGTH, "Elevation" + (" of the water surface" if node.kind == "reservoir" else "")),
                                 ("pressure", PRESSURE, "Pressure (gauge)"),
                                 ("outlet_elevation", LENGTH, "Elevation of the pipe connection"),
                                 ("nozzle_diameter", LENGTH, "Nozzle diameter"),
                                 ("velocity_coefficient", RATIO, "Nozzle velocity coefficient Cv")):
            r = _typed(c, node_doc, key, kind, label)
            if r:
                rows.append(r)
        if node.kind == "jet" and not _typed(c, node_doc, "velocity_coefficient", RATIO, "x"):
            rows.append(["Nozzle velocity coefficient Cv", "", sub(node.velocity_coefficient),
                         "default: 0.97-0.99 for a well-made nozzle (common practice)" if node.nozzle_diameter
                         else "default: a jet from the open pipe end loses only its velocity head"])
        kind = {"reservoir": "a reservoir", "pressure": "a point of known pressure", "jet": "a free jet"}[node.kind]
        small.append(Table(head, rows, f"{which.capitalize()} of the line: {kind}", align, css="inputs"))

    pairs = list(zip(doc.get("elements") or [], c.line.elements))
    runs = [(i, e, el) for i, (e, el) in enumerate(pairs) if isinstance(el, PipeRun)]
    if runs:
        tables_out += _runs_inputs(c, runs)
    curves = []
    for i, (e, el) in enumerate(pairs):
        if not isinstance(el, PipeRun):
            own, *pts = _element_inputs(c, i, e, el, head, align)
            small.append(own)
            curves += pts
    rows = [[t.caption if k == 0 else ""] + r for t in small for k, r in enumerate(t.rows)]
    tables_out.append(Table(["Item"] + head, rows, "Ends of the line, valves and machines", ["l"] + align,
                            css="inputs items"))
    return tables_out + curves


def _cell(d: dict, key: str, kind) -> str:
    """A typed value for a table cell: as typed, with its SI value after it where the two read differently."""
    v = d.get(key) if isinstance(d, dict) else None
    if v is None or (isinstance(v, str) and not v.strip()):
        return ""
    typed = as_text(v)
    try:
        value = parse_quantity(v, kind, key)
    except ValueError:
        return typed
    si_text = f"{si(value)} {_SI_UNIT[kind]}" if kind is not RATIO else si(value)
    return typed if _same(typed, si_text) else f"{typed} = {si_text}"


def _same(typed: str, si_text: str) -> bool:
    """Whether a typed value reads as its SI value.

    >>> _same("640 m", "640 m"), _same("412.0 m", "412 m"), _same("0.52", "0.52"), _same("16 bar", "1.6×10⁶ Pa")
    (True, True, True, False)
    """
    t = typed.split()
    s = si_text.split()
    if len(t) == 1 and len(s) == 1:  # plain numbers
        t, s = t + ["-"], s + ["-"]
    if len(t) != 2 or len(s) != 2 or t[1] != s[1]:
        return False
    try:
        return float(t[0]) == float(s[0].replace("×10", "e").translate(_SUP_BACK))
    except ValueError:
        return False


_SUP_BACK = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺", "0123456789-+")


def _runs_inputs(c: Context, runs: list) -> list[Table]:
    """The pipe runs' inputs: a run a row (as typed, its SI value where that reads differently, references),
    where each value came from in the note below; their fittings in a table of their own, and the surveyed
    profile points."""
    rows, notes, prows = [], [], []
    for i, e, el in runs:
        where = f"run {i + 1}"
        said = []
        size = e.get("size") if isinstance(e.get("size"), dict) else {}
        bore = _cell(e, "diameter", LENGTH)
        if not bore and el.size is not None:
            refs, _ = c.refs.cite_source(el.size.source, "pipe sizes")
            bore = f"{as_text(size.get('nominal'))} {as_text(size.get('class'))} = {si(el.D)} m {refs}"
            said.append(f"bore from the size table, OD {si(el.size.OD * 1e3)} mm less twice the wall "
                        f"{si(el.size.wall * 1e3)} mm")
        aged = e.get("condition") == "aged"
        rough = _cell(e, "roughness", LENGTH)
        if not rough and el.material is not None:
            source = el.material.source_aged if aged else el.material.source_roughness
            refs, detail = c.refs.cite_source(source or "", "aged roughness" if aged else "pipe roughness")
            rough = f"{as_text(e.get('material'))}{' aged' if aged else ''} = {si(el.eps)} m {refs}"
            note = c.once(f"{el.material.name}" + (f" ({detail})" if detail else ""), where)
            said.append(f"ε{' (aged)' if aged else ''} from the material table: {note}")
        band = ""
        if el.material is not None and el.eps_aged and not aged and not _cell(e, "roughness", LENGTH):
            refs, detail = c.refs.cite_source(el.material.source_aged or "", "aged roughness")
            band = f"{si(el.eps_aged)} m {refs}"
            if detail:
                said.append(f"aged ε: {c.once(detail, where)}")
        wall = _cell(e, "wall_thickness", LENGTH) or (f"{si(el.size.wall * 1e3)} mm" if el.size is not None else "")
        rows.append([f"{i + 1}" + (f" {el.label}" if el.label else ""), _cell(e, "length", LENGTH), bore, rough, band,
                     _cell(e, "end_elevation", LENGTH), wall, _cell(e, "rating", PRESSURE),
                     as_text(e.get("restraint")).replace("_", " ")])
        if said:
            notes.append(f"Run {i + 1}: " + "; ".join(said) + ".")
        points = [p for p in (e.get("profile") or []) if isinstance(p, dict)]
        if points:
            prows.append([str(i + 1), "; ".join(f"{_cell(p, 'chainage', LENGTH)} / {_cell(p, 'elevation', LENGTH)}"
                                                for p in points)])
    head = ["Run", "Length L", "Bore D", "Roughness ε", "Aged ε (band only)", "Elevation at the end", "Wall",
            "Rating (gauge)", "Restraint"]
    keep = [k for k in range(len(head)) if k < 4 or any(r[k] for r in rows)]  # no column of blanks
    out = [Table([head[k] for k in keep], [[r[k] for k in keep] for r in rows], "Pipe runs", ["l"] * len(keep),
                 " ".join(notes), css=f"run-inputs cols-{len(keep)}")]
    if prows:
        out.append(Table(["Run", "Surveyed points: chainage in the run / elevation, as typed"], prows,
                         "Profile points", ["l", "l"], css="profile-inputs"))
    if any(el.fittings for _, _, el in runs):
        out[0].note = (out[0].note + " " if out[0].note else "") + ("The runs' fittings, as typed, with their "
                                                                    "constants, sources and losses: section 5.")
    return out


def fitting_cells(c: Context, ft, where: str) -> tuple[str, str, str]:
    """A fitting's inputs for the record: as typed, its constants, and where they come from."""
    refs, detail = c.fitting_ref(ft)
    consts = ", ".join(f"{k} = {sub(v)}" for k, v in ft.params.items())
    if ft.model == "cone":
        consts = f"cone {sub(ft.params['angle_deg'])}°, K = {sub(ft.derived_K or 0.0)}"
    how = "counted by default" if ft.implied else "typed" if ft.source.startswith("typed") else "fitting table"
    if ft.why:
        detail = ft.why + (f"; {detail}" if detail else "")
    detail = c.once(detail, where)
    model = {"k": "K", "2k": "2-K", "3k": "3-K", "cone": "change of bore"}[ft.model]
    return ("(not typed)" if ft.implied else f"{ft.key} × {ft.count}", f"{model}: {consts}",
            how + (f" ({detail})" if detail else "") + (f" {refs}" if refs else ""))


#: The SI unit each check limit is held in ("" a plain number); its name is CheckSettings.LABELS'.
_LIMIT_UNITS = {"velocity_max": "m/s", "velocity_max_suction": "m/s", "velocity_min": "m/s", "npsh_margin_min": "m",
                "surge_allowance": "Pa", "surge_closure_time": "s"}


def _check_limits(c: Context, head, align) -> Table:
    """Every limit the checks applied, as typed or by default, with where each comes from."""
    s = c.a.check_settings or CheckSettings()
    settings = c.doc.get("settings") if isinstance(c.doc.get("settings"), dict) else {}
    typed = settings.get("checks") if isinstance(settings.get("checks"), dict) else {}
    rows = []
    pumps = any(isinstance(el, Pump) for el in c.line.elements)
    closers = any(isinstance(el, (Valve, Turbine)) for el in c.line.elements) or c.line.end.kind == "jet"
    unrated = any(getattr(f, "code", "") == "surge-wave-speed-missing" for f in c.a.findings)
    applies = {"velocity_max_suction": pumps, "npsh_margin_ratio": pumps, "npsh_margin_min": pumps, "bep_low": pumps,
               "bep_high": pumps, "surge_allowance": unrated, "surge_closure_time": closers}
    for key, label in CheckSettings.LABELS.items():
        if not applies.get(key, True) and key not in s.given:  # a limit no check of this line used
            continue
        unit = _LIMIT_UNITS.get(key, "")
        v = getattr(s, key)
        if isinstance(v, tuple):
            value = f"× {sub(v[1])} each run's" if v[0] == "factor" else f"{si(v[1])} m every run"
        elif v is None:
            value = "each run's own" if key == "roughness_low" else "each run's aged (material table)"
        else:
            value = f"{si(v)} {unit}".strip()
        if key in s.given:
            where = f"set on the sheet: {as_text(typed.get(key))}"
        else:
            # a published source once, in the references; common practice with its reason, briefly
            full = s.source(key)
            ref = c.refs.cite(full, "check limits") if looks_published(full) else ""
            where = f"default: {CheckSettings.SHORT_SOURCES[key].split(',')[0]} {ref}".strip() if ref else f"default: {full}"
        rows.append([label, value, "as above" if rows and where == _last_source(rows) else where])
    return Table(["Limit", "Value", "Source"], rows, "Check limits applied (those this line's checks use)",
                 ["l", "r", "l"], css="limits")


def _last_source(rows: list[list[str]]) -> str:
    """The source last written out in full above (past any 'as above')."""
    for r in reversed(rows):
        if r[2] != "as above":
            return r[2]
    return ""


def _element_inputs(c: Context, i: int, e: dict, el, head, align) -> list[Table]:
    title = f"Element {i + 1}: {el.kind} «{el.label}»" if el.label else f"Element {i + 1}: {el.kind}"
    rows: list[list[str]] = []
    out = []
    if isinstance(el, PipeRun):
        rows.append(_typed(c, e, "length", LENGTH, "Length L"))
        r = _typed(c, e, "diameter", LENGTH, "Inner diameter D")
        if r is None and el.size is not None:
            refs, _ = c.refs.cite_source(el.size.source, "pipe sizes")
            size = e.get("size") or {}
            rows.append(["Inner diameter D", f"size {as_text(size.get('nominal'))} {as_text(size.get('class'))}",
                         f"{si(el.D)} m",
                         f"size table: {el.size.nominal} {el.size.klass}, OD {si(el.size.OD * 1e3)} mm, "
                         f"wall {si(el.size.wall * 1e3)} mm {refs}"])
        else:
            rows.append(r)
        aged = e.get("condition") == "aged"
        r = _typed(c, e, "roughness", LENGTH, "Roughness ε")
        if r is None and el.material is not None:
            source = el.material.source_aged if aged else el.material.source_roughness
            refs, detail = c.refs.cite_source(source or "", "aged roughness" if aged else "pipe roughness")
            note = c.once(f"{el.material.name}" + (f" ({detail})" if detail else ""), f"element {i + 1}")
            rows.append(["Roughness ε" + (" (aged pipe)" if aged else ""),
                         f"material {as_text(e.get('material'))}" + (", condition aged" if aged else ""),
                         f"{si(el.eps)} m", f"material table: {note} {refs}"])
        else:
            rows.append(r)
        if el.material is not None and el.eps_aged and not aged and r is None:
            refs, detail = c.refs.cite_source(el.material.source_aged or "", "aged roughness")
            note = c.once(detail, f"element {i + 1}")
            rows.append(["Roughness of aged pipe (upper end of the uncertainty band; not the solve)", "",
                         f"{si(el.eps_aged)} m",
                         "material table" + (f" ({note})" if note else "") + f" {refs}"])
        rows.append(_typed(c, e, "end_elevation", LENGTH, "Elevation at the end of the run"))
        rows.append(_typed(c, e, "wall_thickness", LENGTH, "Wall thickness"))  # else in the size row
        rows.append(_typed(c, e, "rating", PRESSURE, "Pressure rating (gauge)"))
        if e.get("restraint"):
            rows.append(["Restraint", as_text(e.get("restraint")), "", "typed"])
        # Profile points and fittings go in the same table (one table per element lays out faster).
        points = [p for p in (e.get("profile") or []) if isinstance(p, dict)]
        if points:  # one row: the surveyed points in order, chainage in the run / elevation
            typed_pts = "; ".join(f"{as_text(p.get('chainage'))} / {as_text(p.get('elevation'))}" for p in points)
            si_pts = "; ".join(f"{si(parse_quantity(p.get('chainage'), LENGTH, 'chainage'))} / "
                               f"{si(parse_quantity(p.get('elevation'), LENGTH, 'elevation'))}" for p in points)
            rows.append([f"Profile points ({len(points)}): chainage in the run / elevation", typed_pts,
                         f"{si_pts} m", "typed"])
        for ft in el.fittings:
            refs, detail = c.fitting_ref(ft)
            consts = ", ".join(f"{k} = {sub(v)}" for k, v in ft.params.items())
            if ft.model == "cone":
                consts = f"cone {sub(ft.params['angle_deg'])}°, K = {sub(ft.derived_K or 0.0)}"
            where = ("counted by default" if ft.implied else "typed" if ft.source.startswith("typed")
                     else "fitting table")
            if ft.why:
                detail = ft.why + (f"; {detail}" if detail else "")
            detail = c.once(detail, f"element {i + 1}")
            model = {"k": "K", "2k": "2-K", "3k": "3-K", "cone": "change of bore"}[ft.model]
            rows.append([f"Fitting: {ft.name}" + (f" × {ft.count}" if ft.count > 1 else ""),
                         "(not typed)" if ft.implied else f"{ft.key}, count {ft.count}", f"{model}: {consts}",
                         where + (f" ({detail})" if detail else "") + (f" {refs}" if refs else "")])
        out.append(Table(head, [r for r in rows if r], title, align, css="inputs"))
        return out
    if isinstance(el, (Turbine, Pump)):
        title += f", {el.mode} mode"
    if isinstance(el, Turbine):
        if el.mode == "power":
            rows.append(_typed(c, e, "power", POWER, "Shaft power P"))
        if el.mode == "flow":
            rows.append(_typed(c, e, "flow", FLOW, "Set flow Q"))
        if el.mode == "head":
            rows.append(_typed(c, e, "head", LENGTH, "Head H"))
        if el.efficiency_curve is None:
            rows.append(_typed(c, e, "efficiency", RATIO, "Efficiency η")
                        or ["Efficiency η", "", "1", "default (hydraulic power only)"])
    elif isinstance(el, Pump):
        rows.append(_typed(c, e, "head", LENGTH, "Head H"))
        rows.append(_typed(c, e, "speed_ratio", RATIO, "Speed ratio n"))
        rows.append(_typed(c, e, "efficiency", RATIO, "Efficiency η"))
        if e.get("speed_control") in ("flow", "head"):
            key = "target_flow" if e.get("speed_control") == "flow" else "target_head"
            rows.append(_typed(c, e, key, FLOW if key == "target_flow" else LENGTH,
                               "Target flow Q_t (speed solved for it)" if key == "target_flow"
                               else "Target pump head H_t (speed solved for it)"))
            rows.append(_typed(c, e, "speed_min", RATIO, "Lowest speed ratio allowed"))
            rows.append(_typed(c, e, "speed_max", RATIO, "Highest speed ratio allowed"))
        if el.is_group:
            rows.append(["Identical units: installed, standby, running", f"{el.units}, {el.standby}, {el.running}",
                         f"{el.running} running in {el.arrangement}",
                         "typed" if str(e.get("running", "")).strip() else "typed (running: the duty units)"])
    elif isinstance(el, Valve) and el.valve_type == "control":
        title += ", control valve"
        rows.append(_typed(c, e, "rated", RATIO, f"Rated flow coefficient {el.coefficient}s, fully open"))
        if el.coefficient == "Cv":
            rows.append(["Rated Kvs", "", f"{num(el.Kvs)} m³/h", "Kv = 0.865 Cv (IEC 60534-2-1's N1 constants)"])
        rows.append(["Inherent characteristic, rangeability R", f"{el.characteristic.replace('_', ' ')}, "
                     f"{as_text(e.get('rangeability'))}", f"Φ0 = 1/R = {num(1 / el.rangeability)}", "typed"])
        if el.setting == "opening":
            rows.append(_typed(c, e, "opening", RATIO, "Opening h (relative travel)"))
        else:
            rows.append(_typed(c, e, "target_flow" if el.setting == "flow" else "set_pressure",
                               FLOW if el.setting == "flow" else PRESSURE,
                               "Target flow (opening solved)" if el.setting == "flow"
                               else "Set pressure downstream, gauge (opening solved)"))
        r = _typed(c, e, "diameter", LENGTH, "Diameter D")
        rows.append(r or ["Diameter D", "", f"{si(el.D)} m", el.D_source])
    elif isinstance(el, Valve):
        if el.valve_type in ("check", "prv"):
            title += ", check valve" if el.valve_type == "check" else ", pressure-reducing valve"
        if el.valve_type == "prv":
            rows.append(_typed(c, e, "set_pressure", PRESSURE, "Set pressure downstream (gauge)"))
        rows.append(_typed(c, e, "K", RATIO, "Loss coefficient K" + (", fully open" if el.valve_type == "prv" else "")))
        r = _typed(c, e, "diameter", LENGTH, "Diameter D")
        rows.append(r or ["Diameter D", "", f"{si(el.D)} m", el.D_source])
    curve = [p for p in (e.get("curve") or []) if isinstance(p, dict)] if e.get("mode") == "curve" else []
    if isinstance(el, Turbine) and el.mode != "curve":
        curve = [p for p in (e.get("curve") or []) if isinstance(p, dict) and as_text(p.get("efficiency")).strip()]
    out.append(Table(head, [r for r in rows if r], title, align, css="inputs"))
    if curve:  # the typed points, a point a row, each value as typed (its SI value where that reads differently)
        cols = [("flow", FLOW, "Flow"), ("head", LENGTH, "Head"), ("efficiency", RATIO, "Efficiency"),
                ("npsh_required", LENGTH, "NPSH required")]
        cols = [col for col in cols if any(as_text(p.get(col[0])).strip() for p in curve)]
        out.append(Table(["Point"] + [col[2] for col in cols],
                         [[str(j + 1)] + [_cell(p, key, kind) for key, kind, _ in cols] for j, p in enumerate(curve)],
                         f"Element {i + 1}: typed curve points", ["r"] + ["l"] * len(cols), css="curve-inputs"))
    return out

