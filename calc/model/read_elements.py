"""The elements of a sheet document read into the line model: pipe runs with their fittings, machines, valves."""

from __future__ import annotations

from functools import lru_cache

from calc import tables
from calc.model import valve_law
from calc.model.elements import Curve, Fitting, PipeRun, Pump, Turbine, Valve
from calc.model.fields import (
    ARRANGEMENTS,
    CURVE_POINT_FIELDS,
    ELEMENT_FIELDS,
    ELEMENT_NAMES,
    FITTING_FIELDS,
    MAX_FITTINGS,
    MAX_LABEL,
    MAX_POINTS,
    MAX_UNITS,
    PROFILE_POINT_FIELDS,
    RESTRAINTS,
    SIZE_FIELDS,
    SPEED_CONTROLS,
    TURBINE_MODES,
    VALVE_SETTINGS,
    VALVE_TYPES,
)
from calc.model.reader import Reader
from calc.units import FLOW, LENGTH, POWER, PRESSURE, RATIO, SPEED, Kind


@lru_cache(maxsize=None)
def _elsewhere(kind: str) -> dict[str, str]:
    """For each key of another kind of element, the message saying whose it is (worked out once a kind)."""
    own = ELEMENT_FIELDS[kind]
    names: dict[str, list[str]] = {}
    for other, fields in ELEMENT_FIELDS.items():
        for k in fields:
            if k not in own:
                names.setdefault(k, []).append(ELEMENT_NAMES[other])
    return {k: f"is a field of {' or '.join(n)}, not of {ELEMENT_NAMES[kind]}" for k, n in names.items()}


def known_element_keys(r: Reader, e: dict, path: str, kind):
    """Refuse the keys an element of its kind does not have, naming the kind a key belongs to if another."""
    if not isinstance(kind, str) or kind not in ELEMENT_FIELDS:  # the kind itself is refused; a key of no kind at all is refused too
        every = tuple(dict.fromkeys(k for fields in ELEMENT_FIELDS.values() for k in fields))
        r.known(e, path, every, "any element")
        return
    own = ELEMENT_FIELDS[kind]
    r.known(e, path, own, ELEMENT_NAMES[kind], _elsewhere(kind))
    points = e.get("curve")
    if "curve" in own and isinstance(points, list) and len(points) <= MAX_POINTS:
        # Every mode's curve points, read or not (the points stay when the mode changes).
        for j, pt in enumerate(points):
            if isinstance(pt, dict):
                r.known(pt, f"{path}.curve.{j}", CURVE_POINT_FIELDS, "a curve point")

def pipe(r: Reader, e: dict, path: str):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    L = r.qty(e, "length", f"{path}.length", LENGTH, lo=0.0, lo_open=True, what="the length",
              ask="give the run's length")
    D = r.qty(e, "diameter", f"{path}.diameter", LENGTH, required=False, lo=0.0, lo_open=True,
              what="the diameter", span="bore")
    wall = r.qty(e, "wall_thickness", f"{path}.wall_thickness", LENGTH, required=False, lo=0.0, lo_open=True, span="wall",
                 what="the wall thickness")
    D_source = "typed by the user"
    size_obj = None
    size = e.get("size")
    if isinstance(size, dict):
        r.known(size, f"{path}.size", SIZE_FIELDS, "a pipe size")
    if D is None and r.blank(e.get("diameter")):
        if isinstance(size, dict) and not all(r.blank(size.get(k)) for k in ("standard", "nominal", "class")):
            try:
                size_obj = tables.pipe_size(str(size.get("standard")), str(size.get("nominal")),
                                            str(size.get("class")))
                D = size_obj.ID
                D_source = f"{size_obj.source}: {size_obj.nominal} {size_obj.klass}"
                if wall is None:
                    wall = size_obj.wall
            except LookupError as err:
                r.fail(f"{path}.size", size, str(err).strip("'\""))
        else:
            r.ask(f"{path}.diameter", e.get("diameter"),
                  "give the run's inner diameter, or choose a size from a table")
    if D is not None and L is not None and D > L * 10 and D > 5.0:
        r.fail(f"{path}.diameter", e.get("diameter"), "is larger than a pipe can be; check the unit")
    mat = None
    mkey = e.get("material")
    if not r.blank(mkey):
        try:
            mat = tables.material(str(mkey))
        except LookupError as err:
            r.fail(f"{path}.material", mkey, str(err).strip("'\""))
    eps = r.qty(e, "roughness", f"{path}.roughness", LENGTH, required=False, lo=0.0, what="the roughness")
    eps_source = "typed by the user"
    eps_aged = None
    if eps is None and not r.blank(e.get("roughness")):
        pass  # error already recorded
    elif eps is None:
        condition = r.choice(e, "condition", f"{path}.condition", ("new", "aged"), "new")
        if mat is not None and condition == "aged" and mat.eps_aged is None:
            r.fail(f"{path}.condition", "aged", f"the material table has no aged roughness for {mat.name}: "
                   "type a roughness instead")
        elif mat is not None and condition == "aged":
            eps, eps_source, eps_aged = mat.eps_aged, f"{mat.name}, aged: {mat.source_aged}", mat.eps_aged
        elif mat is not None:
            eps, eps_source, eps_aged = mat.eps_new, f"{mat.name}: {mat.source_roughness}", mat.eps_aged
        elif r.blank(mkey):
            r.ask(f"{path}.roughness", e.get("roughness"), "give the run's roughness, or choose a material")
    if eps is not None and D is not None and eps >= D / 2:
        r.fail(f"{path}.roughness", e.get("roughness"), "must be much smaller than the diameter; check the unit")
    z_end = r.qty(e, "end_elevation", f"{path}.end_elevation", LENGTH, span="elevation",
                  ask="give the elevation at the run's end")
    rating = r.qty(e, "rating", f"{path}.rating", PRESSURE, required=False, lo=0.0, lo_open=True,
                   what="the pressure rating")
    restraint = r.choice(e, "restraint", f"{path}.restraint", RESTRAINTS, "anchored")
    wave_speed = r.qty(e, "wave_speed", f"{path}.wave_speed", SPEED, required=False, lo=0.0, lo_open=True,
                       span="wave_speed", what="the wave speed")
    profile = []
    for j, pt in enumerate(r.lst(e, "profile", f"{path}.profile", MAX_POINTS)):
        pp = f"{path}.profile.{j}"
        if not isinstance(pt, dict):
            r.fail(pp, pt, "must have a chainage and an elevation")
            continue
        r.known(pt, pp, PROFILE_POINT_FIELDS, "a profile point")
        s = r.qty(pt, "chainage", f"{pp}.chainage", LENGTH, lo=0.0, what="the chainage",
                  ask="give the point's chainage")
        zz = r.qty(pt, "elevation", f"{pp}.elevation", LENGTH, span="elevation",
                  ask="give the ground elevation at the point")
        if s is not None and L is not None and s > L * (1 + 1e-9):
            r.fail(f"{pp}.chainage", pt.get("chainage"), "lies beyond the end of the run (chainage is from the run's start)")
        elif s is not None and zz is not None:
            profile.append((s, zz))
    fittings = []
    for j, ft in enumerate(r.lst(e, "fittings", f"{path}.fittings", MAX_FITTINGS)):
        f = fitting(r, ft, f"{path}.fittings.{j}")
        if f is not None:
            fittings.append(f)
    if len(r.errors) > n_err:
        return None
    return PipeRun(label=label, L=L, D=D, eps=eps, end_elevation=z_end, fittings=fittings,
                   profile=profile, wall=wall, material=mat, size=size_obj, rating=rating,
                   restraint=restraint, eps_source=eps_source, D_source=D_source, eps_aged=eps_aged,
                   wave_speed=wave_speed)


def fitting(r: Reader, ft, path: str):
    if not isinstance(ft, dict):
        return r.fail(path, ft, "must be a fitting")
    n_err = len(r.errors)
    r.known(ft, path, FITTING_FIELDS, "a fitting")
    kind = ft.get("type")
    count = r.count(ft, "count", f"{path}.count")
    label = r.text(ft, "label", f"{path}.label", MAX_LABEL) or ""
    if kind == "k":
        K = r.qty(ft, "K", f"{path}.K", RATIO, lo=0.0, what="K", ask="give the fitting's K")
        params, model, name, src = {"K": K}, "k", label or "loss (K typed)", "typed by the user"
    elif kind == "2k":
        K1 = r.qty(ft, "K1", f"{path}.K1", RATIO, lo=0.0, what="K1")
        Kinf = r.qty(ft, "Kinf", f"{path}.Kinf", RATIO, lo=0.0, what="K∞")
        params, model, name, src = {"K1": K1, "Kinf": Kinf}, "2k", label or "2-K fitting", "typed by the user (2-K, Hooper 1981)"
    elif kind == "3k":
        K1 = r.qty(ft, "K1", f"{path}.K1", RATIO, lo=0.0, what="K1")
        Ki = r.qty(ft, "Ki", f"{path}.Ki", RATIO, lo=0.0, what="Ki")
        Kd = r.qty(ft, "Kd", f"{path}.Kd", RATIO, lo=0.0, what="Kd")
        params, model, name, src = {"K1": K1, "Ki": Ki, "Kd": Kd}, "3k", label or "3-K fitting", "typed by the user (3-K, Darby 2001)"
    else:
        try:
            t = tables.fitting(str(kind))
        except LookupError as err:
            return r.fail(f"{path}.type", kind, str(err).strip("'\""))
        params, model, name, src = dict(t.params), t.model, t.name, t.source
    if len(r.errors) > n_err:
        return None
    return Fitting(name=name, model=model, params=params, count=count, source=src, key=str(kind))


def curve_points(r: Reader, e: dict, path: str, y_key: str, y_kind: Kind, min_points=3):
    pts = r.lst(e, "curve", f"{path}.curve", MAX_POINTS)
    if not pts and isinstance(e.get("curve", []), list):
        r.ask(f"{path}.curve", "no points", f"give at least {min_points} points of the curve, each a flow and a head")
        return None
    if len(pts) < min_points:
        r.fail(f"{path}.curve", f"{len(pts)} points", f"needs at least {min_points} points to fit a curve")
        return None
    Q, H, eta, npsh = [], [], [], []
    for j, pt in enumerate(pts):
        pp = f"{path}.curve.{j}"
        if not isinstance(pt, dict):
            r.fail(pp, pt, "must have a flow and a head")
            continue
        q = r.qty(pt, "flow", f"{pp}.flow", FLOW, lo=0.0, what="the flow", ask="give the point's flow")
        h = r.qty(pt, y_key, f"{pp}.{y_key}", y_kind, what="the head", span="head", ask="give the point's head")
        Q.append(q)
        H.append(h)
        # 0 is a maker's usual figure at shut-off, so efficiency may be zero at a point (not negative).
        eta.append(r.qty(pt, "efficiency", f"{pp}.efficiency", RATIO, required=False, lo=0.0,
                         hi=1.0, what="the efficiency"))
        npsh.append(r.qty(pt, "npsh_required", f"{pp}.npsh_required", LENGTH, required=False, lo=0.0, span="head",
                          what="NPSH required"))
    if None in Q or None in H:
        return None
    # The curve runs through each point in order of flow, so two points at one flow are refused
    # (the interpolation would have no slope between them).
    first_at: dict[float, int] = {}
    for j, q in enumerate(Q):
        if q in first_at:
            r.fail(f"{path}.curve.{j}.flow", pts[j].get("flow"),
                   f"repeats the flow of point {first_at[q] + 1}: give each point its own flow")
            return None
        first_at[q] = j
    if len(set(Q)) < 3:
        r.fail(f"{path}.curve", "repeated flows", "needs at least three different flows")
        return None
    return Q, H, eta, npsh


def optional_curve(r: Reader, Q, ys, path, what):
    """A curve through the points where ``what`` is typed; the others are simply left out."""
    pairs = [(q, y) for q, y in zip(Q, ys) if y is not None]
    if not pairs:
        return None
    if len({q for q, _ in pairs}) < 2:
        r.fail(f"{path}.curve", what, f"{what}: give it at two or more points of different flow, or at none")
        return None
    return Curve([p[0] for p in pairs], [p[1] for p in pairs])


def turbine(r: Reader, e: dict, path: str):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    mode = r.choice(e, "mode", f"{path}.mode", TURBINE_MODES, "power")
    power = head = curve = flow = eta_curve = None
    if mode == "curve":
        pts = curve_points(r, e, path, "head", LENGTH)
        if pts:
            curve = Curve(pts[0], pts[1])
            eta_curve = optional_curve(r, pts[0], pts[2], path, "efficiency")
    elif mode is not None:
        eta_curve = efficiency_points(r, e, path)
    need_eta = mode in ("power", "flow") and eta_curve is None
    eta = r.qty(e, "efficiency", f"{path}.efficiency", RATIO, required=need_eta, default=1.0,
                lo=0.0, lo_open=True, hi=1.0, what="the efficiency",
                ask="give the turbine's efficiency (its shaft power over the power it takes from the flow), "
                    "or its efficiency at two or more flows in the table")
    if mode == "power":
        power = r.qty(e, "power", f"{path}.power", POWER, lo=0.0, lo_open=True, what="the shaft power",
                      ask="give the shaft power the turbine is to give")
    elif mode == "flow":
        flow = r.qty(e, "flow", f"{path}.flow", FLOW, lo=0.0, lo_open=True, what="the set flow",
                     ask="give the flow the turbine is set to pass")
    elif mode == "head":
        head = r.qty(e, "head", f"{path}.head", LENGTH, lo=0.0, lo_open=True, what="the head", span="head",
                     ask="give the head the turbine takes from the flow")
    if len(r.errors) > n_err:
        return None
    given = not r.blank(e.get("efficiency")) or eta_curve is not None
    return Turbine(label=label, mode=mode, efficiency=eta if eta is not None else 1.0, power=power, fixed_head=head,
                   curve=curve, efficiency_given=given, efficiency_curve=eta_curve, flow_set=flow)


def efficiency_points(r: Reader, e: dict, path: str):
    """A turbine's efficiency curve eta(Q) from its table's points that carry an efficiency (any mode but a
    head curve, whose points carry their own); None when no point carries one."""
    pts = e.get("curve")
    if not isinstance(pts, list) or len(pts) > MAX_POINTS:
        return None
    Q, eta = [], []
    for j, pt in enumerate(pts):
        pp = f"{path}.curve.{j}"
        if not isinstance(pt, dict) or r.blank(pt.get("efficiency")):
            continue  # a point without an efficiency is no point of this curve (a head curve's, kept on a mode switch)
        q = r.qty(pt, "flow", f"{pp}.flow", FLOW, lo=0.0, what="the flow", ask="give the point's flow")
        y = r.qty(pt, "efficiency", f"{pp}.efficiency", RATIO, lo=0.0, hi=1.0, what="the efficiency",
                  ask="give the efficiency at the point's flow")
        if q is not None and y is not None:
            if q in Q:
                r.fail(f"{pp}.flow", pt.get("flow"), f"repeats the flow of point {Q.index(q) + 1}: give each point "
                                                     "its own flow")
                return None
            Q.append(q)
            eta.append(y)
    if not Q:
        return None
    if len(Q) < 2:
        r.fail(f"{path}.curve", "1 point", "the efficiency curve needs two or more points of different flow")
        return None
    order = sorted(range(len(Q)), key=Q.__getitem__)
    return Curve([Q[k] for k in order], [eta[k] for k in order])


def pump(r: Reader, e: dict, path: str):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    mode = r.choice(e, "mode", f"{path}.mode", ("curve", "head"), "curve")
    n = r.qty(e, "speed_ratio", f"{path}.speed_ratio", RATIO, required=False, default=1.0, lo=0.0,
              lo_open=True, hi=3.0, what="the speed ratio")
    head = curve = eta_c = npsh_c = None
    eta = r.qty(e, "efficiency", f"{path}.efficiency", RATIO, required=False, lo=0.0, lo_open=True, hi=1.0,
                what="the efficiency")
    if mode == "head":
        head = r.qty(e, "head", f"{path}.head", LENGTH, lo=0.0, lo_open=True, what="the head", span="head",
                     ask="give the head the pump adds to the flow")
    else:
        pts = curve_points(r, e, path, "head", LENGTH)
        if pts:
            Q, H, etas, npshs = pts
            curve = Curve(Q, H)
            eta_c = optional_curve(r, Q, etas, path, "efficiency")
            npsh_c = optional_curve(r, Q, npshs, path, "NPSH required")
    group = pump_group(r, e, path)
    speed = pump_speed(r, e, path, mode)
    if len(r.errors) > n_err or group is None or speed is None:
        return None
    return Pump(label=label, mode=mode, fixed_head=head, curve=curve, efficiency_curve=eta_c,
                npshr_curve=npsh_c, speed_ratio=n, efficiency=eta, **group, **speed)


def pump_speed(r: Reader, e: dict, path: str, mode: str) -> dict | None:
    """How a pump's speed is set: typed, or solved for a target flow or head within the limits given."""
    control = r.choice(e, "speed_control", f"{path}.speed_control", SPEED_CONTROLS, "fixed")
    if control is None:
        return None
    lo = r.qty(e, "speed_min", f"{path}.speed_min", RATIO, required=False, lo=0.0, lo_open=True, hi=3.0,
               what="the lowest speed ratio")
    hi = r.qty(e, "speed_max", f"{path}.speed_max", RATIO, required=False, lo=0.0, lo_open=True, hi=3.0,
               what="the highest speed ratio")
    if lo is not None and hi is not None and lo >= hi:
        r.fail(f"{path}.speed_max", e.get("speed_max"), "must be above the lowest speed ratio")
        return None
    target = None
    if control != "fixed" and mode == "head":
        r.fail(f"{path}.speed_control", control, "a pump given as a fixed head has no speed to solve: "
                                                 "give its head-flow curve")
        return None
    if control == "flow":
        target = r.qty(e, "target_flow", f"{path}.target_flow", FLOW, lo=0.0, lo_open=True, what="the target flow",
                       ask="give the flow the pump's speed is to be set for")
    elif control == "head":
        target = r.qty(e, "target_head", f"{path}.target_head", LENGTH, lo=0.0, lo_open=True, span="head",
                       what="the target head", ask="give the head the pump's speed is to be set for")
    if control != "fixed" and target is None:
        return None
    return {"speed_control": control, "target": target, "speed_limits": (lo, hi)}


def whole(r: Reader, e: dict, key: str, path: str, lo: int, hi: int, default: int | None, what: str):
    """A whole number from ``lo`` to ``hi`` (``default`` when empty), or None with the error recorded."""
    v = e.get(key)
    if r.blank(v):
        return default
    try:
        k = int(v) if not isinstance(v, bool) and float(v) == int(float(v)) else None
    except (TypeError, ValueError, OverflowError):
        k = None
    if k is None or not lo <= k <= hi:
        return r.fail(path, v, f"{what} must be a whole number from {lo} to {hi}")
    return k


def pump_group(r: Reader, e: dict, path: str) -> dict | None:
    """A pump's group fields: identical units installed, standby units, the arrangement, the units running
    (by default the duty units: all but the standby ones)."""
    units = whole(r, e, "units", f"{path}.units", 1, MAX_UNITS, 1, "the number of identical units")
    arrangement = r.choice(e, "arrangement", f"{path}.arrangement", ARRANGEMENTS, "parallel")
    if units is None or arrangement is None:
        return None
    standby = whole(r, e, "standby", f"{path}.standby", 0, units - 1, 0, "the number of standby units")
    if standby is None:
        return None
    running = whole(r, e, "running", f"{path}.running", 1, units, units - standby,
                    f"the number of units running (of {units})")
    if running is None:
        return None
    return {"units": units, "standby": standby, "running": running, "arrangement": arrangement}


def valve(r: Reader, e: dict, path: str, last_D, pipe_before: bool = False):
    n_err = len(r.errors)
    label = r.text(e, "label", f"{path}.label", MAX_LABEL) or ""
    vtype = r.choice(e, "valve_type", f"{path}.valve_type", VALVE_TYPES, "fixed")
    D = r.qty(e, "diameter", f"{path}.diameter", LENGTH, required=False, lo=0.0, lo_open=True,
              what="the diameter", span="bore")
    src = "typed by the user"
    if D is None and r.blank(e.get("diameter")):
        if last_D is None and not pipe_before:
            r.ask(f"{path}.diameter", e.get("diameter"),
                  "give the valve's diameter: no pipe run comes before it to take the bore from")
        D, src = last_D, "the pipe run before it"
    extra: dict = {"valve_type": vtype or "fixed"}
    K = None
    if vtype in ("fixed", "check", "prv"):
        K = r.qty(e, "K", f"{path}.K", RATIO, lo=0.0, what="K",
                  ask="give the valve's loss coefficient K" + (" fully open" if vtype == "prv" else ""))
        if vtype == "prv":
            extra.update(setting="pressure", K_open=K,
                         target=r.qty(e, "set_pressure", f"{path}.set_pressure", PRESSURE, lo=-101325.0,
                                      what="the set pressure (gauge)",
                                      ask="give the pressure the valve holds downstream (gauge)"))
    elif vtype == "control":
        control = control_valve(r, e, path)
        if control is not None:
            extra.update(control)
    if len(r.errors) > n_err or vtype is None:
        return None
    if vtype == "control":
        # The loss at the opening typed; a valve on a target gets its K when the line is settled.
        h = extra["opening"] if extra["setting"] == "opening" else 1.0
        K = valve_law.K_from_kv(extra["Kvs"] * valve_law.phi(h, extra["characteristic"], extra["rangeability"]), D)
        extra["K_open"] = valve_law.K_from_kv(extra["Kvs"], D)
    return Valve(label=label, K=K, D=D, D_source=src, **extra)


def control_valve(r: Reader, e: dict, path: str) -> dict | None:
    """A control valve's rated flow coefficient, inherent characteristic and setting."""
    coefficient = r.choice(e, "coefficient", f"{path}.coefficient", ("Kv", "Cv"), "Kv")
    rated = r.qty(e, "rated", f"{path}.rated", RATIO, lo=0.0, lo_open=True, hi=1e6,
                  what="the rated flow coefficient", ask="give the valve's rated Kv or Cv, fully open")
    characteristic = r.choice(e, "characteristic", f"{path}.characteristic", valve_law.CHARACTERISTICS, "linear")
    R = r.qty(e, "rangeability", f"{path}.rangeability", RATIO, lo=1.0, lo_open=True, hi=1000.0,
              what="the rangeability", ask="give the valve's inherent rangeability (its maker's figure, such as 50)")
    setting = r.choice(e, "setting", f"{path}.setting", VALVE_SETTINGS, "opening")
    opening = target = None
    if setting == "opening":
        opening = r.qty(e, "opening", f"{path}.opening", RATIO, lo=0.0, lo_open=True, hi=1.0,
                        what="the opening (relative travel)", ask="give the valve's opening, such as 60 %")
    elif setting == "flow":
        target = r.qty(e, "target_flow", f"{path}.target_flow", FLOW, lo=0.0, lo_open=True, what="the target flow",
                       ask="give the flow the valve is to pass")
    elif setting == "pressure":
        target = r.qty(e, "set_pressure", f"{path}.set_pressure", PRESSURE, lo=-101325.0,
                       what="the set pressure (gauge)", ask="give the pressure the valve holds downstream (gauge)")
    if None in (coefficient, rated, characteristic, R, setting) or (opening is None and target is None):
        return None
    return {"coefficient": coefficient, "Kvs": valve_law.kv_from(rated, coefficient), "characteristic": characteristic,
            "rangeability": R, "setting": setting, "opening": opening, "target": target}
