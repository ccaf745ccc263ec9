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
        rows.append(["Liquid", "water", "", "typed"])
        r = _typed(c, liq, "temperature", TEMPERATURE, "Temperature T")
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
        tables_out.append(Table(head, rows, f"{which.capitalize()} of the line: {kind}", align, css="inputs"))

    for i, (e, el) in enumerate(zip(doc.get("elements") or [], c.line.elements)):
        tables_out += _element_inputs(c, i, e, el, head, align)
    return tables_out


#: The SI unit each check limit is held in ("" a plain number); its name is CheckSettings.LABELS'.
_LIMIT_UNITS = {"velocity_max": "m/s", "velocity_max_suction": "m/s", "velocity_min": "m/s", "npsh_margin_min": "m",
                "surge_allowance": "Pa", "surge_closure_time": "s"}


def _check_limits(c: Context, head, align) -> Table:
    """Every limit the checks applied, as typed or by default, with where each comes from."""
    s = c.a.check_settings or CheckSettings()
    settings = c.doc.get("settings") if isinstance(c.doc.get("settings"), dict) else {}
    typed = settings.get("checks") if isinstance(settings.get("checks"), dict) else {}
    rows = []
    for key, label in CheckSettings.LABELS.items():
        unit = _LIMIT_UNITS.get(key, "")
        v = getattr(s, key)
        if isinstance(v, tuple):
            value = f"× {sub(v[1])} each run's" if v[0] == "factor" else f"{si(v[1])} m every run"
        elif v is None:
            value = "each run's own" if key == "roughness_low" else "each run's aged (material table)"
        else:
            value = f"{si(v)} {unit}".strip()
        if key in s.given:
            where = "set on the sheet"
        else:
            # a published source once, in the references; common practice with its reason, briefly
            full = s.source(key)
            ref = c.refs.cite(full, "check limits") if looks_published(full) else ""
            where = f"default: {CheckSettings.SHORT_SOURCES[key].split(',')[0]} {ref}".strip() if ref else f"default: {full}"
        rows.append([label, as_text(typed.get(key)) if key in s.given else "", value, where])
    return Table(head, rows, "Check limits applied", align, css="inputs")


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
        for j, p in enumerate(x for x in (e.get("profile") or []) if isinstance(x, dict)):
            ch = parse_quantity(p.get("chainage"), LENGTH, "chainage")
            z = parse_quantity(p.get("elevation"), LENGTH, "elevation")
            rows.append([f"Profile point {j + 1}: chainage in the run, elevation",
                         f"{as_text(p.get('chainage'))}, {as_text(p.get('elevation'))}",
                         f"{si(ch)} m, {si(z)} m", "typed"])
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
        for j, p in enumerate(e.get("curve") or []):
            if isinstance(p, dict) and as_text(p.get("efficiency")).strip():
                q = parse_quantity(p.get("flow"), FLOW, "flow")
                rows.append([f"Efficiency point {j + 1}: flow, efficiency",
                             f"{as_text(p.get('flow'))}, {as_text(p.get('efficiency'))}",
                             f"{si(q)} m³/s, {si(parse_quantity(p.get('efficiency'), RATIO, 'efficiency'))}", "typed"])
    for j, p in enumerate(curve):
        q = parse_quantity(p.get("flow"), FLOW, "flow")
        h = parse_quantity(p.get("head"), LENGTH, "head")
        extra = [as_text(p.get(k)) for k in ("efficiency", "npsh_required") if as_text(p.get(k)).strip()]
        rows.append([f"Curve point {j + 1}: flow, head" + (", efficiency" if as_text(p.get("efficiency")).strip() else "")
                     + (", NPSH required" if as_text(p.get("npsh_required")).strip() else ""),
                     ", ".join([as_text(p.get("flow")), as_text(p.get("head"))] + extra),
                     f"{si(q)} m³/s, {si(h)} m", "typed"])
    out.append(Table(head, [r for r in rows if r], title, align, css="inputs"))
    return out
