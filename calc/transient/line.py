"""From a sheet's line and its steady answer to a run of the method of characteristics (`calc.transient.moc`)
and back to what a designer reads: the envelope of heads along the chainage, the histories, the devices'
states.

The line's pipe runs become the grid's pipes, each run's losses (friction and fittings, at the steady
flow) lumped into its friction factor so that the steady heads at the run's ends are reproduced; the
valves, machines, start and end become joints (`calc.transient.joints`, `calc.transient.machines`), written
in total heads as the steady solve is, so that the state at t = 0 is the steady answer itself (to the
steady solve's own residual). Devices go to the interior node nearest their chainage.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from calc.model.elements import Curve, Line, PipeRun, Pump, Turbine, Valve
from calc.model.transient_spec import Event, TransientInputs
from calc.model.valve_law import phi as valve_phi
from calc.steady.series import run_stations
from calc.transient import devices as dev_mod
from calc.transient.joints import CurvePump, Fixed, Joint, Loss, velocity_head_coefficient
from calc.transient.machines import Homologous, PumpMachine, Suter, torque_curve_points
from calc.transient.moc import Grid, Pipe, System, Watch
from calc.transient.wave import wave_speed_detail
from calc.water import G

#: The smallest time step a short run may force, as a share of the step the line's reaches ask for: a
#: run shorter than that takes one reach with its wave speed lowered to fit (said in the notes; a short
#: stiff run then behaves nearer a rigid column, which changes little on the line; common practice).
SHORT_RUN_STEP = 0.25
#: A Courant adjustment of a wave speed beyond this share is said in the notes (common practice: a few %).
ADJUST_NOTED = 0.05
#: A run holding less than this share of the line's travel time (a pump's suction, a short riser) may have
#: its wave speed adjusted by up to ADJUST_SHORT: it behaves nearly as a rigid column whatever its wave
#: speed, and holding it exactly would multiply the steps of the whole line (common practice).
SHORT_SHARE = 0.05
ADJUST_SHORT = 0.35


#: The most work (steps times nodes) a run may take: about some seconds on a small machine; and the
#: most the page redoes on every edit (about a tenth of a second), past which it runs on request.
MAX_WORK = 4e7
QUICK_WORK = 1.5e6
#: The fewest reaches a run is given when the sheet names none (common practice: a few per run).
REACHES_LEAST = 20


class TransientProblem(Exception):
    """A transient run that cannot be made, with the field that would make it possible."""

    def __init__(self, path: str, message: str):
        super().__init__(message)
        self.path, self.message = path, message


@dataclass
class Placed:
    """A device at the node nearest its chainage: where it went, and its state in time."""

    device: object
    model: object
    chainage: float
    pipe: int
    node: int


@dataclass
class Answer:
    """One case's transient run: the events, the grid, each pipe's envelope (chainage, elevation, steady,
    highest and lowest head, vapour head, rating head), the histories, the devices placed."""

    case: str
    events: list[Event]
    pipes: list[Pipe]
    result: object
    vapour: list[np.ndarray]
    rating_head: list[np.ndarray | None]
    placed: list[Placed]
    machines: dict
    points: list[tuple[str, float]]
    notes: list[str] = field(default_factory=list)
    runs: list[int] = field(default_factory=list)  # the sheet element index of each pipe
    start_at_rest: bool = False
    rho: float = 1000.0


def _speed_ramp(t0: float, T: float, alpha: float):
    return lambda t: alpha * min(1.0, max(0.0, (t - t0) / T)) if T > 0 else (alpha if t >= t0 else 0.0)


def _phi_of_valve(el: Valve, ev: Event):
    """The valve's relative flow coefficient (over its steady one) in time: a control valve's by its
    characteristic at the travel the law gives, any other's the travel itself (its effective area over
    the fully open one)."""
    law = ev.law
    if el.valve_type == "control" and el.opening is not None:
        s0 = el.opening
        p0 = valve_phi(s0, el.characteristic, el.rangeability or 50.0)

        def phi(t):
            s = law.travel(t, s0)
            return 0.0 if s <= 0.0 else valve_phi(s, el.characteristic, el.rangeability or 50.0) / p0
        return phi
    return lambda t: law.travel(t, 1.0)


def _pump_model(el: Pump, ev: Event, rho: float, Q0: float):
    """A tripping pump's one-unit model: its own curves by the homologous laws, or its four-quadrant table
    scaled (once for head, once for torque) onto the steady point those curves give."""
    if el.mode != "curve" or el.curve is None:
        raise TransientProblem(f"{ev.path}.element", "a pump that trips or starts needs its head curve (curve mode)")
    omega_R = ev.rated_speed
    eff = el.efficiency_curve
    if eff is not None:
        pts = torque_curve_points(eff.Q, [float(el.curve(q)) for q in eff.Q], eff.y, rho, omega_R)
    elif el.efficiency:
        pts = torque_curve_points(el.curve.Q, el.curve.y, [el.efficiency] * len(el.curve.Q), rho, omega_R)
    else:
        pts = []
    if len(pts) < 2:
        raise TransientProblem(f"{ev.path}.element", "a pump that trips needs its efficiency at two or more points of "
                                                    "its curve (for the torque it takes as it runs down)")
    torque = Curve([q for q, _ in pts], [T for _, T in pts])
    homologous = Homologous(el.curve, el.curve.slope, torque)
    if not ev.four_quadrant:
        return homologous
    Q_bep = eff.peak()[0] if eff is not None else el.curve.Q[len(el.curve.Q) // 2]
    unit = Suter(ev.four_quadrant, Q_bep, float(el.curve(Q_bep)), float(torque(Q_bep)))
    if Q0 > 0:
        q, alpha = Q0 / el.in_parallel, el.speed_ratio
        unit.kh = homologous.h(q, alpha)[0] / unit.h(q, alpha)[0]
        unit.kb = homologous.T(q, alpha) / unit.T(q, alpha)
    return unit


def build(line: Line, Q0: float, spec: TransientInputs, events: list[Event], case: str) -> tuple[System, tuple, Answer]:
    """The grid, its steady state (heads and flows at every node) and the answer's frame, for one case."""
    rho = line.liquid.rho
    fluid = line.fluid
    by_el = {ev.element: ev for ev in events}
    start_ev = next((ev for ev in events if ev.kind == "pump_start"), None)
    at_rest = start_ev is not None
    notes = []
    pipes, run_index, c_pipe, h_run = [], [], [], []
    x = 0.0
    z = line.start.pipe_elevation
    for i, el in enumerate(line.elements):
        if isinstance(el, PipeRun):
            profile = run_stations(el, z)
            h = el.head(Q0, fluid) if Q0 > 0 else 0.0
            pipes.append(Pipe(L=el.L, D=el.D, a=_wave_speed(line, i, el), f=_RunFriction(el, line)(Q0), label=el.label or f"run {len(pipes) + 1}", x0=x,
                              profile=profile, rating=el.rating))
            run_index.append(i)
            c_pipe.append(velocity_head_coefficient(el.D))
            h_run.append(h)
            x += el.L
            z = el.end_elevation
    if not pipes:
        raise TransientProblem("elements", "the transient needs at least one pipe run")
    reaches = reaches_for(spec, [p.L / p.a for p in pipes])
    if reaches < spec.reaches:
        notes.append(f"{reaches} reaches in all rather than {spec.reaches}: the line's travel time is short for a run of "
                     f"{spec.duration:g} s; type the reaches for a finer grid")
    dt = choose_step([p.L / p.a for p in pipes], reaches)
    system = System(pipes, [None] * (len(pipes) + 1), reaches_min=1, gridded=Grid.at_step(pipes, dt))
    for k, (p, a) in enumerate(zip(pipes, system.grid.a_used)):
        if abs(a / p.a - 1.0) > ADJUST_NOTED:
            notes.append(f"{p.label}: too short for the grid to hold its wave speed; {p.a:.4g} m/s taken as "
                         f"{a:.4g} m/s ({(a / p.a - 1) * 100:+.0f} %), which changes little on a run this short")
    # Joints: the elements between runs, the start and end.
    joints, groups = [], [[]]
    for i, el in enumerate(line.elements):
        if isinstance(el, PipeRun):
            groups.append([])
        else:
            groups[-1].append(i)
    machines = {}
    watches = []
    for j, group in enumerate(groups):
        items = []
        for i in group:
            el = line.elements[i]
            ev = by_el.get(i)
            items.extend(_element(line, i, el, ev, Q0, rho, machines, start_ev))
        up = None
        down = None
        if j == 0:
            up = Fixed(line.start.static_head(rho), line.start.velocity_head_coefficient())
        if j == len(groups) - 1:
            end = line.end
            opening = None
            ev = by_el.get("end")
            if ev is not None:
                opening = (lambda law: (lambda t: law.travel(t, 1.0)))(ev.law)
            forward = end.kind == "jet" or end.free_outlet is not None
            down = Fixed(end.static_head(rho), end.velocity_head_coefficient(), forward_only=forward, opening=opening)
        joints.append(Joint(items, upstream=up, downstream=down, c_up=c_pipe[j - 1] if j > 0 else 0.0,
                            c_down=c_pipe[j] if j < len(pipes) else 0.0,
                            name=", ".join(line.elements[i].label or f"element {i + 1}" for i in group)))
        if group and j > 0:
            watches.append(Watch(f"before {joints[-1].name}", j - 1, -1))
        if group and j < len(pipes):
            watches.append(Watch(f"after {joints[-1].name}", j, 0))
    system.joints = joints
    # The steady state: total head walked down the line as the steady solve does.
    H0, Qs = [], []
    E = line.start.total_head(Q0, rho) if not at_rest else line.start.static_head(rho)
    k = 0
    for i, el in enumerate(line.elements):
        if isinstance(el, PipeRun):
            n = system.grid.counts[k]
            if at_rest:
                H0.append(np.full(n + 1, E))
                Qs.append(np.zeros(n + 1))
            else:
                Hs = E - c_pipe[k] * Q0 * Q0
                H0.append(Hs - h_run[k] * np.arange(n + 1) / n)
                Qs.append(np.full(n + 1, Q0))
                E -= h_run[k]
            k += 1
        elif at_rest:
            if start_ev is not None and start_ev.element == i:
                E = line.end.static_head(rho)  # held by the check valve, the line beyond at the end's level
        else:
            E -= el.head(Q0, fluid)
    vapour = [system.elevation[k] + (line.liquid.p_vap - line.p_atm) / (rho * G) for k in range(len(pipes))]
    rating = [system.elevation[k] + p.rating / (rho * G) if p.rating else None for k, p in enumerate(pipes)]
    placed = []
    for dv in spec.devices:
        k, node = _nearest(system, dv.chainage, interior=True)
        if k is None:
            raise TransientProblem(f"{dv.path}.chainage", "lies beyond the line's runs, or on a run too short for a node "
                                                          "of its own: give a chainage along a pipe run")
        model = _device_model(line, dv, system, k, node, rho)
        system.devices[(k, node)] = model
        placed.append(Placed(dv, model, float(system.chainage[k][node]), k, node))
        watches.append(Watch(model.name, k, node))
    points = []
    for xp, label in spec.points:
        k, node = _nearest(system, xp)
        if k is not None:
            name = label or f"chainage {xp:.0f} m"
            watches.append(Watch(name, k, node))
            points.append((name, float(system.chainage[k][node])))
    answer = Answer(case, events, pipes, None, vapour, rating, placed, machines, points, notes, run_index, at_rest, rho)
    return system, (H0, Qs, watches), answer


def _wave_speed(line: Line, i: int, run: PipeRun) -> float:
    """A run's wave speed, or the problem naming what the run lacks for it."""
    w = wave_speed_detail(line, run)
    if w["a"] is None:
        raise TransientProblem(f"elements.{i}.wave_speed", f"the transient needs this run's wave speed: give "
                               f"{w['missing']} (Korteweg's wave speed), or type the wave speed")
    return w["a"]


def estimate(line: Line, spec: TransientInputs) -> tuple[int, int]:
    """The steps and nodes a run of the sheet would take (before building it), to refuse or defer a long one."""
    travels = [el.L / _wave_speed(line, i, el) for i, el in enumerate(line.elements) if isinstance(el, PipeRun)]
    if not travels:
        raise TransientProblem("elements", "the transient needs at least one pipe run")
    dt = choose_step(travels, reaches_for(spec, travels))
    nodes = sum(max(1, round(T / dt)) + 1 for T in travels)
    return int(math.ceil(spec.duration / dt)), nodes


def reaches_for(spec: TransientInputs, travels: list[float]) -> int:
    """The reaches a run takes: as typed, else the default unless a line of short travel time over a long
    run would make that more work than the page redoes on every edit (steps x nodes = duration n² / T for
    n reaches and travel time T): then as many as keep within it, and never fewer than REACHES_LEAST."""
    if spec.reaches_typed:
        return spec.reaches
    T = sum(travels)
    fit = int(math.sqrt(QUICK_WORK * T / spec.duration))
    return max(min(spec.reaches, fit), min(REACHES_LEAST, spec.reaches))


def choose_step(travels: list[float], reaches: int) -> float:
    """The time step: at most the line's travel time over ``reaches``, at least SHORT_RUN_STEP of it, and
    among those the longest whose Courant adjustment of the wave speeds (a run of travel time T_k takes
    round(T_k / dt) reaches) is within ADJUST_NOTED in every run (ADJUST_SHORT in a run holding less than
    SHORT_SHARE of the line's travel time), or else the one whose worst adjustment is least; a run too short
    for one reach takes one."""
    dt_hi = sum(travels) / reaches
    dt_lo = SHORT_RUN_STEP * dt_hi
    T = np.asarray(travels)
    cands = [dt_hi]
    for Tk in travels:
        n_lo, n_hi = max(1, math.ceil(Tk / dt_hi)), max(1, math.floor(Tk / dt_lo))
        cands += [Tk / n for n in range(n_lo, min(n_hi, n_lo + 400) + 1)]
    cands = np.array([c for c in cands if dt_lo * (1 - 1e-12) <= c <= dt_hi * (1 + 1e-12)])
    n = np.maximum(1.0, np.round(T[None, :] / cands[:, None]))
    err = np.abs(n * cands[:, None] / T[None, :] - 1.0)
    err = np.where(T[None, :] < cands[:, None], 0.0, err)  # a run shorter than a step takes one reach anyway
    share = T / T.sum()
    allowed = np.where(share < SHORT_SHARE, ADJUST_SHORT, ADJUST_NOTED)
    worst = err.max(axis=1)
    fine = np.all(err <= allowed[None, :] + 1e-12, axis=1)
    if fine.any():
        return float(cands[fine].max())
    return float(cands[worst <= worst.min() + 1e-9].max())


def too_long(steps: int, nodes: int) -> str:
    return (f"a run of {steps} time steps over {nodes} nodes is more than this program takes on ({MAX_WORK:.0e} "
            "node-steps): shorten the time it covers or ask for fewer reaches")


def _friction_laws(line: Line) -> list:
    """Each run's friction factor at a flow, lumping its fittings as the steady solve counts them (so a run
    settling at a new flow loses what the steady answer at that flow would)."""
    return [_RunFriction(run, line) for run in line.runs]


class _RunFriction:
    """A run's friction factor at a flow (its last one kept for a run at rest)."""

    def __init__(self, run: PipeRun, line: Line):
        self.run, self.line, self.last = run, line, None

    def __call__(self, Q: float) -> float:
        run = self.run
        if Q <= 1e-12:
            return self.last if self.last is not None else _friction_at_rest(run, self.line)
        self.last = run.head(Q, self.line.fluid) * 2 * G * run.D * run.A * run.A / (run.L * Q * Q)
        return self.last


def _friction_at_rest(run: PipeRun, line: Line) -> float:
    """The friction factor of a run in a line at rest (a pump start): the fully rough Colebrook value's
    order, from a flow of 1 m/s (the run's losses then grow with the flow as the flow builds up)."""
    Q = run.A * 1.0
    h = run.head(Q, line.fluid)
    return h * 2 * G * run.D * run.A * run.A / (run.L * Q * Q)


def _element(line, i, el, ev, Q0, rho, machines, start_ev):
    fluid = line.fluid
    name = el.label or f"element {i + 1}"
    if isinstance(el, Valve):
        A = math.pi * el.D * el.D / 4.0
        k = el.K / (2 * G * A * A)
        return [Loss(k, phi=_phi_of_valve(el, ev) if ev is not None else None, check=el.valve_type == "check",
                     name=name)]
    if isinstance(el, Turbine):
        H = el.head(Q0, fluid) if Q0 > 0 else 0.0
        k = H / (Q0 * Q0) if Q0 > 0 else 0.0
        phi = (lambda law: (lambda t: law.travel(t, 1.0)))(ev.law) if ev is not None else None
        return [Loss(k, phi=phi, name=name)]
    if isinstance(el, Pump):
        if ev is None:
            if start_ev is not None:
                raise TransientProblem(f"{start_ev.path}.element", "a line with two pumps starting at once is not "
                                       "modelled: start one pump a case")
            return [CurvePump(lambda Q, p=el: float(p.pump_head(Q)), name=name)]
        if ev.kind == "pump_start":
            omega = ev.rated_speed or 1.0
            m = PumpMachine(_pump_model_start(el, ev), 0.0, omega, 1.0, el.in_parallel, el.in_series,
                            speed=_speed_ramp(ev.start, ev.time, el.speed_ratio), name=name)
        else:
            m = PumpMachine(_pump_model(el, ev, rho, Q0), el.speed_ratio, ev.rated_speed, ev.inertia, el.in_parallel,
                            el.in_series, trip_at=ev.start, name=name)
        machines[i] = m
        out = [m]
        if ev.check_valve:
            out.append(Loss(0.0, check=True, name=f"{name} check valve"))
        return out
    raise TypeError(type(el).__name__)


def _pump_model_start(el: Pump, ev: Event):
    """A pump brought to speed by its motor: its head by the homologous laws (the motor holds the speed,
    so the torque is not needed)."""
    if el.mode != "curve" or el.curve is None:
        raise TransientProblem(f"{ev.path}.element", "a pump that starts needs its head curve (curve mode)")
    return Homologous(el.curve, el.curve.slope, lambda x: 0.0)


def _nearest(system: System, x: float, interior: bool = False):
    """(pipe, node) of the grid node nearest chainage x, among interior nodes only when ``interior`` (a
    device needs a node of its own); (None, None) past the line's end or with no such node."""
    best = None
    for k, ch in enumerate(system.chainage):
        n = len(ch) - 1
        if interior and n < 2:
            continue
        j = int(np.argmin(np.abs(ch - x)))
        if interior:
            j = min(max(j, 1), n - 1)
        d = abs(ch[j] - x)
        if best is None or d < best[0]:
            best = (d, k, j)
    if best is None or x > system.chainage[-1][-1] + 1e-9:
        return None, None
    return best[1], best[2]


def _device_model(line: Line, dv, system: System, k: int, node: int, rho: float):
    z = float(system.elevation[k][node])
    name = dv.label or dv.kind.replace("_", " ")
    if dv.kind == "surge_tank":
        kk = 0.0
        if dv.throat_K and dv.throat_diameter:
            kk = dv.throat_K * velocity_head_coefficient(dv.throat_diameter)
        return dev_mod.SurgeTank(dv.area, dv.bottom, dv.top, kk, name=name)
    if dv.kind == "air_vessel":
        c = velocity_head_coefficient(dv.connection_diameter)
        return dev_mod.AirVessel(dv.volume, dv.gas_volume, dv.surface if dv.surface is not None else z,
                                 line.p_atm / (rho * G), dv.exponent, dv.K_in * c, dv.K_out * c, name=name)
    T = line.liquid.T or 288.15
    return dev_mod.AirValve(z, dv.inflow_diameter, dv.outflow_diameter, line.p_atm, rho, T, name=name)


def run(line: Line, Q0: float, spec: TransientInputs, events: list[Event], case: str) -> Answer:
    """Build and run one case's transient from its steady flow ``Q0``."""
    system, (H0, Qs, watches), answer = build(line, Q0, spec, events, case)
    for p in answer.placed:
        if isinstance(p.model, dev_mod.SurgeTank):
            level = float(H0[p.pipe][p.node])
            if not p.model.bottom < level < p.model.top:
                raise TransientProblem(f"{p.device.path}.top" if level >= p.model.top else f"{p.device.path}.bottom",
                                       f"the steady head there ({level:.2f} m) must lie between the tank's floor and rim")
    answer.result = system.run(H0, Qs, spec.duration, answer.vapour, watches, friction=_friction_laws(line))
    answer.notes = answer.result.notes + answer.notes
    return answer
