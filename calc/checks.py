"""Engineering checks on a solved line: each finding carries the value, the limit and where the limit comes from."""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass, field, fields

from calc.elements import Line, PipeRun, Pump, Turbine, Valve
from calc.solve import Solution
from calc.water import G

#: Severity order, worst first.
SEVERITIES = ("error", "warning", "caution", "info")

# Where each limit comes from, written once so that findings, the record and the docs agree.
SRC_PRACTICE = "common practice"
SRC_NPSH = ("ANSI/HI 9.6.1-2012 (NPSH margin), as summarised in secondary sources: NPSHA/NPSH3 at least "
            "1.1 or NPSH3 + 0.6 m, whichever is greater, for water services; confirm against the standard")
SRC_BEP = ("ANSI/HI 9.6.3 (allowable and preferred operating regions), from memory; 70-120 % of "
           "best-efficiency flow is common practice")
SRC_AIR = "AWWA M51, Air-Valve Design Manual (air valves at high points), from memory"
SRC_VAPOUR = "vapour pressure of the liquid (water: IAPWS-IF97 saturation equation)"
SRC_KORTEWEG = ("Korteweg wave speed with restraint factor c1, as in Wylie and Streeter, Fluid Transients "
                "in Systems (1993)")
SRC_JOUKOWSKY = "Joukowsky, dH = a dV / g, for a stop faster than the pipeline period 2L/a (standard texts)"
SRC_EN805 = ("EN 805 (water supply outside buildings): where surge is not calculated, allow at least "
             "200 kPa over the design pressure, from memory")
SRC_PENSTOCK = ("penstock losses commonly held to 5-10 % of gross head (common practice); Leon and Zhu "
                "(2014, Renewable Energy 71:609) suggest at most about 15 %")
SRC_MAX_POWER = ("largest power where line losses are about one third of gross head with a near-constant "
                 "friction factor (standard textbook result); found here by search on the solved line")
SRC_LAMINAR = "Hagen-Poiseuille f = 64/Re; laminar K values: Rennels and Hudson, Pipe Flow (2012)"
SRC_TRANSITION = "no reliable correlation for 2000 < Re < 4000 (Moody 1944 'critical zone'), common practice"

#: Loss of gross head in a penstock above which a caution / a warning is raised [-].
PENSTOCK_LOSS_CAUTION = 0.10   # common practice (5-10 %)
PENSTOCK_LOSS_WARNING = 0.15   # Leon and Zhu 2014
#: Fraction of a run's rating at which a pressure is close enough to warn [-] (common practice).
RATING_NEAR = 0.90
#: Pressure heads within this of a limit count as on it [m]: a submerged exit or a free jet sits at
#: exactly zero gauge, which rounding must not turn into a sub-atmospheric stretch.
H_TOL = 1e-6


@dataclass
class Finding:
    """One check's outcome, shaped for the results panel and the record.

    ``value`` and ``limit`` are SI floats of the display ``quantity`` (velocity, head, pressure,
    power, flow, length); ``quantity`` is None for plain numbers (ratios as fractions, times in s),
    whose values the message states.
    """

    severity: str            # error | warning | caution | info
    code: str                # stable short name of the check, e.g. "velocity-high"
    title: str               # a few words
    message: str             # one or two sentences in plain words
    value: float | None = None
    limit: float | None = None
    quantity: str | None = None  # display quantity of value/limit (velocity, head, pressure...)
    source: str = ""         # where the limit comes from, or 'common practice'
    element: int | None = None
    chainage: float | None = None

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass
class CheckSettings:
    """Limits the user may set (``settings.checks`` in the sheet); SI units, fractions for percentages.

    ``roughness_low`` / ``roughness_high`` override the roughness range of the uncertainty band:
    ``("factor", x)`` multiplies each run's roughness by x, ``("length", eps)`` sets every run to eps [m].
    None means: each run's own roughness (low) and its material's aged value (high).
    """

    velocity_max: float = 3.0          # [m/s] mains and plant lines
    velocity_max_suction: float = 1.5  # [m/s] pump suction lines
    velocity_min: float = 0.3          # [m/s] below this sediment and air settle
    npsh_margin_ratio: float = 1.1     # [-] NPSHA / NPSHR at least
    npsh_margin_min: float = 0.6       # [m] NPSHA - NPSHR at least
    bep_low: float = 0.70              # [-] of best-efficiency flow
    bep_high: float = 1.20             # [-] of best-efficiency flow
    k_uncertainty: float = 0.20        # [-] fitting and valve K values +/- this fraction
    roughness_low: tuple | None = None
    roughness_high: tuple | None = None
    surge_allowance: float = 200e3     # [Pa] allowed for surge where it is not calculated
    given: tuple = field(default=(), compare=False)  # names the user set

    #: Where each default comes from.
    SOURCES = {
        "velocity_max": SRC_PRACTICE + " (mains 0.5-2 m/s, plant discharge lines 1.5-3 m/s)",
        "velocity_max_suction": SRC_PRACTICE + " (pump suction 0.6-1.5 m/s)",
        "velocity_min": SRC_PRACTICE + " (about 0.6 m/s keeps a line self-cleansing)",
        "npsh_margin_ratio": SRC_NPSH,
        "npsh_margin_min": SRC_NPSH,
        "bep_low": SRC_BEP,
        "bep_high": SRC_BEP,
        "k_uncertainty": SRC_PRACTICE + " (published K values for one fitting type scatter by tens of per cent)",
        "roughness_low": "each run's roughness as given (new pipe, material table)",
        "roughness_high": "each run's aged roughness from the material table (Idelchik 2007 and others)",
        "surge_allowance": SRC_EN805,
    }

    def source(self, name: str) -> str:
        return "set on the sheet" if name in self.given else self.SOURCES.get(name, "")

    def to_dict(self) -> dict:
        out = {}
        for f in fields(self):
            if f.name == "given":
                continue
            v = getattr(self, f.name)
            out[f.name] = {"value": list(v) if isinstance(v, tuple) else v, "source": self.source(f.name)}
        return out


# ----------------------------------------------------------------------------- formulas

def restraint_factor(restraint: str, nu: float) -> float:
    """Pipe restraint factor c1 of the Korteweg wave speed [-].

    c1 = 1 with expansion joints throughout, 1 - nu^2 anchored against axial movement throughout,
    1 - nu/2 anchored at the upstream end only; nu is Poisson's ratio of the wall [-].
    Reference: Wylie, E. B. and Streeter, V. L., Fluid Transients in Systems (1993), thin-walled pipes.

    >>> restraint_factor("expansion_joints", 0.3), restraint_factor("anchored", 0.3)
    (1.0, 0.91)
    >>> restraint_factor("anchored_upstream", 0.3)
    0.85
    """
    if restraint == "expansion_joints":
        return 1.0
    if restraint == "anchored_upstream":
        return 1.0 - nu / 2.0
    return 1.0 - nu * nu


def korteweg_wave_speed(K: float, rho: float, D: float, e: float, E: float, c1: float = 1.0) -> float:
    """Pressure wave speed in a liquid-filled elastic pipe, a = sqrt(K/rho) / sqrt(1 + c1 K D / (E e)) [m/s].

    Parameters: K bulk modulus of the liquid [Pa], rho density [kg/m3], D inner diameter [m],
    e wall thickness [m], E Young's modulus of the wall [Pa], c1 restraint factor [-]
    (`restraint_factor`). Valid for thin walls (D/e above about 25); thick walls need another c1.
    Reference: Korteweg (1878); form with c1 as in Wylie and Streeter, Fluid Transients in Systems (1993).

    Steel D 500 mm, e 8 mm, E 207 GPa, water K 2.19 GPa, c1 = 1: about 1150 m/s.

    >>> round(korteweg_wave_speed(2.19e9, 998.2, 0.5, 0.008, 207e9, 1.0))
    1149
    """
    return math.sqrt(K / rho) / math.sqrt(1.0 + c1 * K * D / (E * e))


def joukowsky_head(a: float, dV: float) -> float:
    """Head rise for a sudden change of velocity, dH = a dV / g [m].

    Parameters: a wave speed [m/s], dV change of velocity [m/s]. Holds for a change faster than
    the pipeline period 2L/a, before reflections return. Reference: Joukowsky (1898), standard texts.

    >>> round(joukowsky_head(1000.0, 1.0), 1)
    102.0
    """
    return a * dV / G


def pipeline_period(lengths_and_speeds) -> float:
    """Pipeline period T = 2 sum(L_i / a_i) [s] for runs of length L_i [m] and wave speed a_i [m/s].

    >>> pipeline_period([(1000.0, 1000.0), (500.0, 1250.0)])
    2.8
    """
    return 2.0 * sum(L / a for L, a in lengths_and_speeds)


def npsh_available(p_inlet_abs: float, V_inlet: float, p_vap: float, rho: float) -> float:
    """NPSH available at a pump inlet, NPSHa = (p_abs - p_vap) / (rho g) + V^2 / 2g [m].

    Parameters: p_inlet_abs absolute pressure at the inlet on the pump's datum [Pa], V_inlet mean
    velocity there [m/s], p_vap vapour pressure [Pa abs], rho density [kg/m3].
    Reference: ANSI/HI 9.6.1 definition; any pump text.

    >>> round(npsh_available(101325.0, 0.0, 2339.0, 998.2), 2)
    10.11
    """
    return (p_inlet_abs - p_vap) / (rho * G) + V_inlet * V_inlet / (2 * G)


def npsh_available_suction(p_surface_abs: float, p_vap: float, rho: float, z_static: float,
                           h_loss: float) -> float:
    """NPSHa from the suction side, (p_surface - p_vap)/(rho g) + z_static - h_loss [m].

    z_static is the height of the liquid surface above the pump datum [m] (negative for a lift),
    h_loss the suction line's losses at the operating flow [m]. Same as `npsh_available` taken
    through the energy equation. Open sump at sea level, 20 degC, 3 m lift, 0.5 m loss: 6.61 m.

    >>> round(npsh_available_suction(101325.0, 2339.3, 998.207, -3.0, 0.5), 2)
    6.61
    """
    return (p_surface_abs - p_vap) / (rho * G) + z_static - h_loss


def npsh_margin_needed(npshr: float, ratio: float, extra: float) -> float:
    """NPSH available needed for a margin: max(ratio * NPSHR, NPSHR + extra) [m].

    >>> npsh_margin_needed(4.0, 1.1, 0.6), npsh_margin_needed(8.0, 1.1, 0.6)
    (4.6, 8.8)
    """
    return max(ratio * npshr, npshr + extra)


# ----------------------------------------------------------------------------- review

def review(line: Line, solution: Solution, settings: CheckSettings | None = None,
           band: dict | None = None) -> list[Finding]:
    """All findings for the design point of a solved line, worst first; the general cautions always."""
    settings = settings or CheckSettings()
    point = solution.design
    findings: list[Finding] = []
    if point is not None:
        findings += velocity_findings(line, point, settings)
        findings += regime_findings(line, point)
        findings += pressure_findings(line, point)
        findings += pump_findings(line, point, settings)
        findings += turbine_findings(line, solution, point)
        findings += surge_findings(line, point, settings)
    if band is not None:
        findings += band_findings(band)
    findings += general_cautions(line)
    findings.sort(key=lambda f: SEVERITIES.index(f.severity))
    return findings


def _suction_runs(line: Line) -> set[int]:
    """Indices of pipe runs (and valves) between the start or the previous machine and a pump."""
    out: set[int] = set()
    for i, el in enumerate(line.elements):
        if isinstance(el, Pump):
            j = i - 1
            while j >= 0 and isinstance(line.elements[j], (PipeRun, Valve)):
                out.add(j)
                j -= 1
    return out


def velocity_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    out = []
    suction = _suction_runs(line)
    for d in point["elements"]:
        if d["kind"] != "pipe":
            continue
        i = d["index"]
        is_suction = i in suction
        vmax = s.velocity_max_suction if is_suction else s.velocity_max
        name = "velocity_max_suction" if is_suction else "velocity_max"
        where = "pump suction" if is_suction else "pipe run"
        if d["V"] > vmax:
            out.append(Finding("warning", "velocity-high", f"{d['label']}: velocity high",
                               f"Velocity {d['V']:.2f} m/s exceeds the {where} limit of {vmax:g} m/s: "
                               "expect high losses, erosion, noise and larger surge on closure.",
                               d["V"], vmax, "velocity", s.source(name), i))
        elif d["V"] < s.velocity_min:
            out.append(Finding("info", "velocity-low", f"{d['label']}: velocity low",
                               f"Velocity {d['V']:.2f} m/s is below {s.velocity_min:g} m/s: sediment may "
                               "settle and air may collect at high points.",
                               d["V"], s.velocity_min, "velocity", s.source("velocity_min"), i))
    return out


def regime_findings(line: Line, point: dict) -> list[Finding]:
    """Laminar and transitional runs, and friction formulas used outside their stated range."""
    out = []
    for d in point["elements"]:
        if d["kind"] != "pipe":
            continue
        i, Re = d["index"], d["Re"]
        if d["regime"] == "laminar":
            out.append(Finding(
                "caution", "regime-laminar", f"{d['label']}: laminar flow",
                f"Re = {Re:.4g}: laminar, so f = 64/Re = {d['f']:.4g} whatever the roughness. Fitting K values "
                "from turbulent-flow tables understate laminar losses (an exit is about 2 rather than 1); use "
                "2-K or 3-K data for the fittings.", Re, 2000.0, None, SRC_LAMINAR, i))
        elif d["regime"] == "transitional":
            lo, hi = sorted(d["f_bounds"])
            out.append(Finding(
                "warning", "regime-transitional", f"{d['label']}: transitional flow",
                f"Re = {Re:.4g} lies between 2000 and 4000, where flow switches between laminar and turbulent: "
                f"f = {d['f']:.4g} is a blend and could be anywhere from {lo:.4g} to {hi:.4g}. Treat the flow "
                "as uncertain, or change the bore to move out of the band.", Re, 4000.0, None, SRC_TRANSITION, i))
        elif not d["friction_in_range"]:
            out.append(Finding("caution", "friction-range", f"{d['label']}: friction formula out of range",
                               d["friction_note"] or "Re or eps/D lies outside the friction formula's stated range.",
                               None, None, None, "friction method's published range", i))
    return out


# ----------------------------------------------------------------------------- pressures

def stretches_below(stations: list[dict], h_limit: float, inclusive: bool = False) -> list[dict]:
    """Stretches of the line where the pressure head is below h_limit [m] (at or below if inclusive).

    Each stretch is ``{"from": chainage, "to": chainage, "min": station}``. Between stations the HGL and the pipe centre are straight, so the pressure head is linear in
    chainage: stretch ends are interpolated and each stretch's minimum lies at a station.
    """
    def below(h):
        return h <= h_limit + H_TOL if inclusive else h < h_limit - H_TOL

    def cross(a, b):
        ha, hb = a["pressure_head"], b["pressure_head"]
        if hb == ha or b["chainage"] == a["chainage"]:
            return b["chainage"]
        return a["chainage"] + (h_limit - ha) / (hb - ha) * (b["chainage"] - a["chainage"])

    out: list[dict] = []
    cur = None
    prev = None
    for s in stations:
        if below(s["pressure_head"]):
            if cur is None:
                cur = {"from": cross(prev, s) if prev is not None else s["chainage"], "min": s, "to": None}
            elif s["pressure_head"] < cur["min"]["pressure_head"]:
                cur["min"] = s
        elif cur is not None:
            cur["to"] = cross(prev, s)
            out.append(cur)
            cur = None
        prev = s
    if cur is not None:
        cur["to"] = prev["chainage"]
        out.append(cur)
    return out


def _label(line: Line, index: int | None) -> str:
    if index is None:
        return "a node"
    el = line.elements[index]
    return el.label or f"element {index + 1}"


def pressure_findings(line: Line, point: dict) -> list[Finding]:
    """Sub-atmospheric stretches, column separation and the lowest pressure along the line."""
    stations = point["profile"]
    if not stations:
        return []
    rho, p_atm, p_vap = line.liquid.rho, line.p_atm, line.liquid.p_vap
    rg = rho * G
    out = []
    suction = _suction_runs(line)
    machine_out = set()  # ids of stations just downstream of a turbine: the draft tube's domain
    for k in range(1, len(stations)):
        e = stations[k]["element"]
        if e is not None and isinstance(line.elements[e], Turbine) and stations[k - 1]["element"] == e:
            machine_out.add(id(stations[k]))

    def where(s):
        e = s["element"]
        return f"at chainage {s['chainage']:.1f} m" + (f" ({_label(line, e)})" if e is not None else "")

    # Column separation first: the steady answer does not hold there.
    h_vap = (p_vap - p_atm) / rg
    for st in stretches_below(stations, h_vap, inclusive=True):
        m = st["min"]
        p_abs = p_atm + rg * m["pressure_head"]
        out.append(Finding(
            "error", "pressure-vapour", "Pressure falls to vapour pressure",
            f"From chainage {st['from']:.1f} m to {st['to']:.1f} m the computed absolute pressure is at or below "
            f"the vapour pressure ({p_vap / 1e3:.2f} kPa); lowest {p_abs / 1e3:.1f} kPa absolute {where(m)}. "
            "The water column separates there, so the flow and pressures computed are not valid: lower the "
            "line, raise the hydraulic grade line (less loss upstream, higher start) or add a break tank.",
            rg * m["pressure_head"], p_vap - p_atm, "pressure", SRC_VAPOUR, m["element"], m["chainage"]))
    for st in stretches_below(stations, 0.0):
        m = st["min"]
        e = m["element"]
        p_g = rg * m["pressure_head"]
        if id(m) in machine_out:
            out.append(Finding(
                "caution", "pressure-turbine-outlet", f"{_label(line, e)}: outlet below atmospheric",
                f"The pressure head at the turbine outlet is {m['pressure_head']:.2f} m ({p_g / 1e3:.1f} kPa gauge): "
                "a draft tube under suction. Check the turbine setting against the maker's cavitation limit.",
                p_g, 0.0, "pressure", "turbine maker's setting (cavitation coefficient)", e, m["chainage"]))
            continue
        in_suction = e is not None and (e in suction or isinstance(line.elements[e], Pump))
        if in_suction:
            out.append(Finding(
                "caution", "pressure-suction-vacuum", f"{_label(line, e)}: suction under vacuum",
                f"Pressure below atmospheric from chainage {st['from']:.1f} m to {st['to']:.1f} m on the suction "
                f"side, lowest {m['pressure_head']:.2f} m ({p_g / 1e3:.1f} kPa gauge) {where(m)}: joints and "
                "glands must be tight or air is drawn in; see the NPSH check.",
                p_g, 0.0, "pressure", SRC_PRACTICE, e, m["chainage"]))
            continue
        out.append(Finding(
            "warning", "pressure-subatmospheric", "Pressure below atmospheric",
            f"From chainage {st['from']:.1f} m to {st['to']:.1f} m the pipe lies above its hydraulic grade line; "
            f"lowest {m['pressure_head']:.2f} m ({p_g / 1e3:.1f} kPa gauge) {where(m)}. Air comes out of solution "
            "and is drawn in at joints and air valves there: fit air valves at the high points, keep the grade "
            "line some metres above the crown, or lower the pipe.",
            p_g, 0.0, "pressure", SRC_AIR, e, m["chainage"]))
    low = min(stations, key=lambda s: s["pressure_head"])
    h = low["pressure_head"]
    out.append(Finding(
        "info", "pressure-lowest", "Lowest pressure",
        f"Lowest pressure {rg * h / 1e3:.1f} kPa gauge ({(p_atm + rg * h) / 1e3:.1f} kPa absolute, "
        f"{h:.2f} m of head) {where(low)}. Pressures are computed at the run ends and profile points; between "
        "them they vary linearly, so add profile points at every high point of the route.",
        rg * h, None, "pressure", "steady grade line", low["element"], low["chainage"]))
    return out


# ----------------------------------------------------------------------------- machines

def _machine_stations(point: dict, i: int) -> tuple[dict, dict] | None:
    st = [s for s in point["profile"] if s["element"] == i]
    return (st[0], st[-1]) if len(st) >= 2 else None


def pump_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    out = []
    rho, p_atm, p_vap = line.liquid.rho, line.p_atm, line.liquid.p_vap
    rg = rho * G
    Q = point["Q"]
    for d in point["elements"]:
        if d["kind"] != "pump":
            continue
        i = d["index"]
        pump: Pump = line.elements[i]
        name = _label(line, i)
        stations = _machine_stations(point, i)
        eta = d["efficiency"]
        P = d["power_shaft"]
        msg = (f"At {Q * 1e3:.2f} L/s the pump adds {d['head']:.2f} m; hydraulic power "
               f"{d['power_hydraulic'] / 1e3:.2f} kW")
        msg += (f", efficiency {eta:.3f}, shaft power {P / 1e3:.2f} kW." if eta and P else
                "; no efficiency given, so no shaft power.")
        out.append(Finding("info", "pump-duty", f"{name}: duty point", msg, P if P else d["power_hydraulic"],
                           None, "power", "pump curve as typed, fitted by least squares", i))
        if d.get("in_curve_range") is False:
            lo, hi = d["curve_range"]
            out.append(Finding(
                "warning", "pump-outside-curve", f"{name}: outside the typed curve",
                f"The duty flow {Q * 1e3:.2f} L/s lies outside the typed curve points ({lo * 1e3:.2f} to "
                f"{hi * 1e3:.2f} L/s): head, efficiency and NPSH required are extrapolated.",
                Q, hi if Q > hi else lo, "flow", "pump curve as typed", i))
        if stations is not None:
            inlet = stations[0]
            V2g = inlet["egl"] - inlet["hgl"]
            p_abs = p_atm + rg * inlet["pressure_head"]
            npsha = npsh_available(p_abs, math.sqrt(max(2 * G * V2g, 0.0)), p_vap, rho)
            npshr = d.get("npsh_required")
            basis = (f"NPSH available {npsha:.2f} m at the pump inlet (elevation {inlet['elevation']:.2f} m, "
                     f"absolute pressure {p_abs / 1e3:.1f} kPa, vapour pressure {p_vap / 1e3:.2f} kPa)")
            if npshr is None:
                out.append(Finding("caution", "pump-npsh-unknown", f"{name}: NPSH required not given",
                                   basis + ": give the maker's NPSH required (NPSH3) on the curve points to "
                                   "check it.", npsha, None, "head", SRC_NPSH, i, inlet["chainage"]))
            else:
                need = npsh_margin_needed(npshr, s.npsh_margin_ratio, s.npsh_margin_min)
                margin = (f"the margin asked for is NPSHA at least {s.npsh_margin_ratio:g} x NPSHR or NPSHR + "
                          f"{s.npsh_margin_min:g} m, whichever is greater: {need:.2f} m")
                src = ("set on the sheet" if {"npsh_margin_ratio", "npsh_margin_min"} & set(s.given)
                       else SRC_NPSH)
                if npsha < npshr:
                    out.append(Finding("error", "pump-npsh", f"{name}: cavitation",
                                       f"{basis} is less than the NPSH required {npshr:.2f} m: the pump cavitates "
                                       "and its head falls off. Lower the pump, shorten or enlarge the suction line, "
                                       "or choose a pump with less NPSH required.", npsha, npshr, "head", src, i,
                                       inlet["chainage"]))
                elif npsha < need:
                    out.append(Finding("warning", "pump-npsh", f"{name}: NPSH margin small",
                                       f"{basis} against NPSH required {npshr:.2f} m; {margin}.", npsha, need,
                                       "head", src, i, inlet["chainage"]))
                else:
                    out.append(Finding("info", "pump-npsh", f"{name}: NPSH margin",
                                       f"{basis} against NPSH required {npshr:.2f} m; {margin}.", npsha, need,
                                       "head", src, i, inlet["chainage"]))
        Q_bep = pump.best_efficiency_flow() if pump.mode == "curve" else None
        if Q_bep is None or Q_bep <= 0:
            out.append(Finding("info", "pump-bep-unknown", f"{name}: best-efficiency flow unknown",
                               "Give efficiencies at three or more curve points (rising then falling) to check "
                               "the duty against the best-efficiency flow.", None, None, None, SRC_BEP, i))
        else:
            r = Q / Q_bep
            lo, hi = s.bep_low, s.bep_high
            src = s.source("bep_low")
            text = (f"The duty flow is {r * 100:.0f} % of the best-efficiency flow {Q_bep * 1e3:.2f} L/s "
                    f"(preferred range {lo * 100:.0f}-{hi * 100:.0f} %)")
            if r < lo or r > hi:
                out.append(Finding("warning", "pump-bep", f"{name}: away from best efficiency",
                                   text + ": expect more vibration, recirculation and wear, and less efficiency.",
                                   Q, Q_bep * (lo if r < lo else hi), "flow", src, i))
            else:
                out.append(Finding("info", "pump-bep", f"{name}: near best efficiency", text + ".",
                                   Q, Q_bep, "flow", src, i))
    return out


def turbine_findings(line: Line, solution: Solution, point: dict) -> list[Finding]:
    out = []
    gross = solution.static_head
    machine_heads = sum(d["head_change"] for d in point["elements"] if d["kind"] in ("pump", "turbine"))
    Q = point["Q"]
    for d in point["elements"]:
        if d["kind"] != "turbine":
            continue
        i = d["index"]
        name = _label(line, i)
        H = d["head"]
        out.append(Finding(
            "info", "turbine-duty", f"{name}: design point",
            f"At {Q * 1e3:.2f} L/s: net head {H:.2f} m of {gross:.2f} m gross, hydraulic power "
            f"{d['power_hydraulic'] / 1e3:.2f} kW, shaft power {d['power_shaft'] / 1e3:.2f} kW "
            f"(efficiency {d['efficiency']:.3f}).", d["power_shaft"], None, "power",
            "P = eta rho g Q H (standard)", i))
        if gross > 0:
            loss = (gross - machine_heads) / gross
            text = (f"The line loses {loss * 100:.1f} % of the gross head ({gross - machine_heads:.2f} m of "
                    f"{gross:.2f} m) at the design point")
            if loss > PENSTOCK_LOSS_WARNING:
                sev, tail = "warning", ": more than about 15 %, which wastes water; a larger bore pays back."
            elif loss > PENSTOCK_LOSS_CAUTION:
                sev, tail = "caution", ": above the 5-10 % commonly aimed for."
            else:
                sev, tail = "info", ", within the 5-10 % commonly aimed for." if loss >= 0.05 else "."
            out.append(Finding(sev, "turbine-head-loss", f"{name}: head lost in the line", text + tail,
                               None, None, None, SRC_PENSTOCK, i))
        m = next((m for m in solution.machines if m["index"] == i), None)
        if m and m.get("Q_at_max"):
            Pm, Qm = m["power_max"], m["Q_at_max"]
            Hm = m["head_available_at_max"]
            out.append(Finding(
                "info", "turbine-max-power", f"{name}: most power the line can give",
                f"The most shaft power this line can give the turbine is {Pm / 1e3:.2f} kW at {Qm * 1e3:.2f} L/s "
                f"(net head {Hm:.2f} m, {100 * (1 - Hm / gross) if gross > 0 else float('nan'):.0f} % of gross "
                f"head lost); the design point gives {100 * d['power_shaft'] / Pm:.0f} % of it with "
                f"{100 * Q / Qm:.0f} % of the flow.", Pm, None, "power", SRC_MAX_POWER, i))
        out.append(Finding(
            "caution", "turbine-runaway", f"{name}: load rejection and runaway",
            "If the generator loses its load the runner speeds toward runaway speed unless the governor or "
            "deflector acts; closing the flow to stop it sends a surge up the penstock. Check the runaway speed "
            "against the turbine's and generator's rating, the closure time against the pipeline period 2L/a, "
            "and the overspeed protection.", None, None, None, SRC_PRACTICE, i))
    return out


# ----------------------------------------------------------------------------- surge

def wave_speed(line: Line, run: PipeRun) -> tuple[float | None, str]:
    """Korteweg wave speed of one run [m/s], or None with what is missing."""
    missing = []
    K = line.liquid.bulk_modulus
    if not K:
        missing.append("the liquid's bulk modulus")
    if run.material is None:
        missing.append("the wall material (for its modulus and Poisson ratio)")
    if not run.wall:
        missing.append("the wall thickness")
    if missing:
        return None, " and ".join(missing)
    mat = run.material
    c1 = restraint_factor(run.restraint, mat.nu_poisson)
    return korteweg_wave_speed(K, line.liquid.rho, run.D, run.wall, mat.E, c1), ""


def surge_findings(line: Line, point: dict, s: CheckSettings) -> list[Finding]:
    """Screening only: Korteweg wave speed, Joukowsky rise for a sudden stop, and the run's rating."""
    out = []
    rho = line.liquid.rho
    rg = rho * G
    period_parts = []
    complete = True
    by_index = {d["index"]: d for d in point["elements"]}
    for i, el in enumerate(line.elements):
        if not isinstance(el, PipeRun):
            continue
        d = by_index[i]
        name = _label(line, i)
        heads = [st["pressure_head"] for st in point["profile"] if st["element"] == i]
        h_max = max(heads) if heads else 0.0
        p_steady = rg * h_max
        a, missing = wave_speed(line, el)
        if a is None:
            complete = False
            out.append(Finding("info", "surge-wave-speed-missing", f"{name}: wave speed not computed",
                               f"Give {missing} to screen this run for surge; meanwhile an allowance of "
                               f"{s.surge_allowance / 1e3:.0f} kPa is used against its rating.",
                               None, None, None, s.source("surge_allowance"), i))
            surge, how, src = s.surge_allowance, "the surge allowance", s.source("surge_allowance")
        else:
            period_parts.append((el.L, a))
            dH = joukowsky_head(a, d["V"])
            surge, src = rg * dH, SRC_JOUKOWSKY
            how = f"a Joukowsky rise of {dH:.1f} m ({rg * dH / 1e3:.0f} kPa) for a sudden stop"
            out.append(Finding(
                "info", "surge-screen", f"{name}: surge screening",
                f"Wave speed {a:.0f} m/s (Korteweg, {el.restraint.replace('_', ' ')}); stopping "
                f"{d['V']:.2f} m/s faster than the pipeline period gives a head rise of {dH:.1f} m "
                f"({rg * dH / 1e3:.0f} kPa). Screening estimate, not a transient analysis.",
                rg * dH, None, "pressure", SRC_KORTEWEG + "; " + SRC_JOUKOWSKY, i))
        peak = p_steady + surge
        if el.rating:
            text = (f"Highest steady pressure {p_steady / 1e3:.0f} kPa plus {how} gives {peak / 1e3:.0f} kPa "
                    f"against the rating {el.rating / 1e3:.0f} kPa")
            if p_steady > el.rating:
                out.append(Finding("error", "rating-steady", f"{name}: steady pressure above rating",
                                   f"Highest steady pressure {p_steady / 1e3:.0f} kPa exceeds the rating "
                                   f"{el.rating / 1e3:.0f} kPa even without surge.", p_steady, el.rating,
                                   "pressure", "the run's rating as typed", i))
            elif peak > el.rating:
                out.append(Finding("error", "surge-rating", f"{name}: surge may exceed rating",
                                   text + ": slow the closure (well beyond 2L/a), add surge protection, or use a "
                                   "higher class of pipe; confirm with a transient analysis.", peak, el.rating,
                                   "pressure", src, i))
            elif peak > RATING_NEAR * el.rating:
                out.append(Finding("warning", "surge-rating", f"{name}: surge close to rating",
                                   text + ": within 10 % of it.", peak, el.rating, "pressure", src, i))
            else:
                out.append(Finding("info", "surge-rating", f"{name}: surge within rating", text + ".",
                                   peak, el.rating, "pressure", src, i))
        else:
            out.append(Finding("caution", "surge-no-rating", f"{name}: no pressure rating given",
                               f"Highest steady pressure {p_steady / 1e3:.0f} kPa; with {how}, "
                               f"{peak / 1e3:.0f} kPa. Give the rating of the pipe and joints to check it.",
                               peak, None, "pressure", src, i))
    if period_parts:
        T = pipeline_period(period_parts)
        scope = "whole line" if complete else "runs with a wave speed"
        out.append(Finding(
            "info", "surge-period", "Pipeline period 2L/a",
            f"Pipeline period {T:.2f} s ({scope}): a valve closure or machine stop faster than this gives the "
            "full Joukowsky rise; the slower the closure beyond it, the smaller the surge. Screening estimate, "
            "not a transient analysis.", T, None, None, SRC_JOUKOWSKY))
    if any(isinstance(el, Pump) for el in line.elements) and period_parts:
        out.append(Finding(
            "caution", "surge-pump-trip", "Pump trip: down-surge",
            "When the pump stops suddenly the pressure first falls by about the Joukowsky head; at high points "
            "it can reach vapour pressure and the column separates, and the rejoining column causes the worst "
            "surge. A transient analysis should look at pump trip.", None, None, None, SRC_JOUKOWSKY))
    return out


# ----------------------------------------------------------------------------- band and cautions

def band_findings(band: dict) -> list[Finding]:
    """The uncertainty band as findings: the flow range, and any case without an operating point."""
    out = []
    if band.get("Q_low") is None:
        return out
    Qn, lo, hi = band["Q_nominal"], band["Q_low"], band["Q_high"]
    out.append(Finding(
        "info", "band-flow", "Range of the answer",
        f"Flow {Qn * 1e3:.3g} L/s; with {band['describe']}, it lies between {lo * 1e3:.3g} and {hi * 1e3:.3g} L/s "
        f"({100 * (lo / Qn - 1):+.1f} % / {100 * (hi / Qn - 1):+.1f} %). Quote the answer to that precision.",
        Qn, None, "flow", band["source"]))
    for m in band.get("machines", []):
        if m["low"] is None or m["nominal"] is None or m["low"] == m["high"]:
            continue
        q = m["quantity"]
        unit, scale = ("kW", 1e-3) if q == "power" else ("m", 1.0)
        out.append(Finding(
            "info", f"band-{m['kind']}", f"{m['label']}: range",
            f"{m['what'].capitalize()} {m['nominal'] * scale:.3g} {unit}, between {m['low'] * scale:.3g} and "
            f"{m['high'] * scale:.3g} {unit} over the same cases.", m["nominal"], None, q, band["source"],
            m["index"]))
    lost = [c for c in band["cases"] if c["Q"] is None]
    if lost:
        names = ", ".join(c["label"] for c in lost)
        out.append(Finding(
            "warning", "band-no-point", "No operating point in part of the range",
            f"The line has no operating point on the design branch with {names}: the design has no margin "
            "against that case.", None, None, None, band["source"]))
    return out


def general_cautions(line: Line) -> list[Finding]:
    """Cautions every record carries for a pressurised water line."""
    out = [
        Finding("caution", "general-surge", "Surge and transients",
                "Surge and transients are not analysed here beyond the screening estimate stated: valve closure, "
                "pump trip, start-up and load rejection need a transient analysis before the design is final.",
                source="Chaudhry, Applied Hydraulic Transients (2014), from memory"),
        Finding("caution", "general-ratings", "Pipe and joint ratings",
                "Check the rating of every pipe, joint, fitting and valve against the highest pressure including "
                "surge and test pressure, and its derating with temperature.", source=SRC_EN805),
        Finding("caution", "general-anchorage", "Anchorage and thrust",
                "Bends, tees, reducers, valves and dead ends need thrust blocks or restrained joints sized for "
                "the test pressure; above-ground runs need anchors and supports.", source=SRC_PRACTICE),
        Finding("caution", "general-air-valves", "Air valves and drains",
                "Fit air valves at high points and at changes of grade, and drains (washouts) at low points, so "
                "the line can be filled, emptied and kept free of air.", source=SRC_AIR),
        Finding("caution", "general-confined-space", "Confined spaces and water",
                "Chambers, tanks and intakes are confined spaces; intakes and open channels are work near "
                "water. Plan entry, isolation and rescue before work starts.", source=SRC_PRACTICE),
    ]
    if any(isinstance(el, (Pump, Turbine)) for el in line.elements):
        out.append(Finding("caution", "general-electrical", "Electrical safety",
                           "Generating sets and pump drives carry dangerous voltages and can start or be "
                           "back-fed unexpectedly: isolate and lock off before work, and follow the electrical "
                           "code for the installation.", source=SRC_PRACTICE))
    out.append(Finding("caution", "general-codes", "Local codes and engineering judgement",
                       "This sheet is a calculation aid. Local codes and regulations govern, and the design must "
                       "be checked and approved under licensed engineering practice.", source=SRC_PRACTICE))
    return out
