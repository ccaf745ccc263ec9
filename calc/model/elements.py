"""The line model: start and end nodes, pipe runs, machines and valves, each with its head function.

Every element exposes ``head(Q)`` (head taken from the flow [m] at flow ``Q`` [m3/s];
negative for a pump, which gives head), ``head_array(Q)`` for the scan, and ``detail(Q)``
with the intermediate values a checker needs. Elements know nothing of the series line
they sit in, so that a network solver can reuse them.
"""

from __future__ import annotations

import bisect
import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from calc import friction, tables
from calc.model.valve_law import kv_from_K
from calc.water import G, Liquid

_INV_2G = 1.0 / (2.0 * G)


@dataclass
class Fluid:
    """What every head function needs besides the flow: the liquid and the friction method."""

    liquid: Liquid
    method: str = "colebrook"

    @property
    def nu(self) -> float:
        return self.liquid.mu / self.liquid.rho


@dataclass
class Fitting:
    """A loss item on a pipe run: ``model`` is 'k' (plain K), '2k' (Hooper 1981) or '3k' (Darby 2001)."""

    name: str
    model: str
    params: dict
    count: int = 1
    source: str = "typed by the user"
    key: str = "k"
    #: Counted by default (an entrance, exit or change of bore the user did not type), not typed.
    implied: bool = False
    #: K of a change of bore, worked out from the bores on either side (model 'cone').
    derived_K: float | None = None
    #: How an implied or derived K came about, for the record.
    why: str = ""

    def K(self, Re: float, D: float) -> float:
        """Loss coefficient on the run's velocity head, for one item."""
        a, b = self.coefficients(D)
        return a / Re + b

    def coefficients(self, D: float) -> tuple[float, float]:
        """(a, b) with K = a / Re + b in a bore D [m] (see tables.k_coefficients)."""
        if self.model == "cone":
            return 0.0, self.derived_K or 0.0
        return tables.k_coefficients(self.model, self.params, D)

    @property
    def position(self) -> str:
        """Where along the run the loss is placed on the grade lines."""
        if self.key.startswith("entrance"):
            return "start"
        if self.key.startswith("exit") or self.key == "expansion-sudden":
            return "end"
        if self.key == "contraction-sudden":
            return "start"
        return "spread"


#: How far past its typed flows a machine curve may be carried before an operating point there is
#: refused as not known [-, of the largest typed flow]; the curve goes on straight for the solver.
EXTRAPOLATION_LIMIT = 0.20


@lru_cache(maxsize=512)
def _pchip(pairs: tuple) -> tuple:
    """The shape-preserving cubic through ``pairs`` (flow, value), as scipy builds it: the points, the
    coefficients per interval and the end slopes. Kept by points: every case of a sheet parses the same
    machine curves again, and scipy takes some 0.3 ms a curve (the arrays are never written to)."""
    from scipy.interpolate import PchipInterpolator  # imported here: the parser loads this module

    x = np.asarray([q for q, _ in pairs])
    pp = PchipInterpolator(x, np.asarray([v for _, v in pairs]), extrapolate=False)
    c = np.ascontiguousarray(pp.c.T)  # one row (c3, c2, c1, c0) per interval
    x.flags.writeable = False
    c.flags.writeable = False
    d = pp.derivative()
    return x, c, tuple(tuple(float(v) for v in row) for row in c), float(d(x[0])), float(d(x[-1]))


@dataclass
class Curve:
    """A machine curve y(Q) through the typed points: a shape-preserving cubic between them, straight beyond.

    Between typed points the curve is the piecewise cubic Hermite interpolant of Fritsch and Carlson
    (1980), as scipy's PchipInterpolator builds it: it passes through every point, never overshoots
    them (a falling curve stays falling, a peak stays at the typed point), and has a continuous slope.
    Below the first and above the last typed flow it goes on as a straight line with the end slope,
    which the checks and plots mark as extrapolated.

    >>> c = Curve([0.0, 0.02, 0.04, 0.06], [50.0, 47.0, 40.0, 28.0])
    >>> [round(float(c(q)), 12) for q in (0.0, 0.02, 0.04, 0.06)]
    [50.0, 47.0, 40.0, 28.0]
    >>> c.Q_range, c.monotone_falling()
    ((0.0, 0.06), True)
    """

    Q: list[float]
    y: list[float]

    def __post_init__(self):
        pairs = tuple(sorted(zip((float(q) for q in self.Q), (float(v) for v in self.y))))
        self.Q = [q for q, _ in pairs]
        self.y = [v for _, v in pairs]
        self._x, self._c, self._rows, self.slope_start, self.slope_end = _pchip(pairs)

    def __call__(self, Q):
        x = self._x
        if isinstance(Q, float) or np.ndim(Q) == 0:  # a float first: Brent's method calls this per flow
            q = float(Q)
            if q <= x[0]:
                return self.y[0] + self.slope_start * (q - x[0])
            if q >= x[-1]:
                return self.y[-1] + self.slope_end * (q - x[-1])
            i = bisect.bisect_right(self.Q, q) - 1
            a, b, c, e = self._rows[i]
            t = q - self.Q[i]
            return ((a * t + b) * t + c) * t + e
        Qa = np.asarray(Q, dtype=float)
        i = np.clip(np.searchsorted(x, Qa, side="right") - 1, 0, len(x) - 2)
        t = Qa - x[i]
        co = self._c[i]
        inner = ((co[:, 0] * t + co[:, 1]) * t + co[:, 2]) * t + co[:, 3]
        out = np.where(Qa <= x[0], self.y[0] + self.slope_start * (Qa - x[0]), inner)
        return np.where(Qa >= x[-1], self.y[-1] + self.slope_end * (Qa - x[-1]), out)

    @property
    def Q_range(self) -> tuple[float, float]:
        return self.Q[0], self.Q[-1]

    def slope(self, Q: float) -> float:
        """dy/dQ at Q (the end slopes outside the typed flows)."""
        x = self._x
        q = float(Q)
        if q <= x[0]:
            return self.slope_start
        if q >= x[-1]:
            return self.slope_end
        i = bisect.bisect_right(self.Q, q) - 1
        a, b, c, _ = self._rows[i]
        t = q - self.Q[i]
        return (3 * a * t + 2 * b) * t + c

    def hermite(self, Q: float) -> dict:
        """The interval holding Q and the cubic Hermite form a checker can repeat on a calculator.

        y = h00 y_i + h10 Δ d_i + h01 y_i1 + h11 Δ d_i1, with t = (Q - Q_i)/Δ, h00 = 2t³ - 3t² + 1,
        h10 = t³ - 2t² + t, h01 = -2t³ + 3t², h11 = t³ - t²; d_i the slopes at the typed points.
        """
        q = min(max(float(Q), self.Q[0]), self.Q[-1])
        i = min(max(bisect.bisect_right(self.Q, q) - 1, 0), len(self.Q) - 2)
        Qi, Qj = self.Q[i], self.Q[i + 1]
        # slope() gives the end slopes at the first and last points, the cubic's own slope between.
        return {"Q_i": Qi, "Q_j": Qj, "y_i": self.y[i], "y_j": self.y[i + 1], "d_i": self.slope(Qi),
                "d_j": self.slope(Qj), "t": (q - Qi) / (Qj - Qi)}

    def extrapolated(self, Q: float) -> bool:
        return not self.Q[0] <= Q <= self.Q[-1]

    def beyond_limit(self, Q: float) -> bool:
        """Further past the typed flows than a curve may be carried (EXTRAPOLATION_LIMIT)."""
        lo, hi = self.Q_range
        return Q > hi * (1.0 + EXTRAPOLATION_LIMIT) or (lo > 0.0 and Q < lo * (1.0 - EXTRAPOLATION_LIMIT))

    def monotone_falling(self) -> bool:
        return all(b < a for a, b in zip(self.y, self.y[1:]))

    def rising_stretches(self) -> list[tuple[float, float]]:
        """(Q_a, Q_b) between consecutive typed points where y does not fall."""
        return [(self.Q[k], self.Q[k + 1]) for k in range(len(self.Q) - 1) if self.y[k + 1] >= self.y[k]]

    def peak(self) -> tuple[float, float, str]:
        """The highest typed value (Q, y) and where it lies: 'inside', 'first' or 'last' typed point.

        A shape-preserving curve peaks at a typed point, so no peak is ever invented between or beyond them.
        """
        k = max(range(len(self.y)), key=lambda j: self.y[j])
        where = "first" if k == 0 else "last" if k == len(self.y) - 1 else "inside"
        return self.Q[k], self.y[k], where


@dataclass
class Node:
    """A start or end: 'reservoir' (free surface), 'pressure' (known gauge pressure) or 'jet' (free discharge)."""

    kind: str
    elevation: float
    pressure: float = 0.0
    outlet_elevation: float | None = None
    nozzle_diameter: float | None = None
    # Set by the line: the diameter whose velocity head counts at a pressure node or jet.
    D_adjacent: float | None = None
    #: Set for an end reservoir whose pipe ends above the water surface: the outlet's elevation [m].
    #: It discharges freely there, so the surface below it does nothing for the line.
    free_outlet: float | None = None
    #: The fitting (table key) of the entrance from a start reservoir, counted unless one is typed.
    entrance: str = "entrance-sharp"
    #: A jet's velocity coefficient Cv = V_jet / sqrt(2 g H) at the nozzle [-]: the nozzle loses
    #: (1/Cv² - 1) V²/2g. 1 for a jet from the open pipe end.
    velocity_coefficient: float = 1.0
    #: A jet that drives an impulse turbine: the turbine's efficiency on the net head at the nozzle [-].
    impulse_efficiency: float | None = None

    @property
    def pipe_elevation(self) -> float:
        return self.elevation if self.outlet_elevation is None else self.outlet_elevation

    def static_head(self, rho: float) -> float:
        z = self.elevation if self.free_outlet is None else self.free_outlet
        return z + self.pressure / (rho * G)

    def velocity_head(self, Q: float) -> float:
        return self.velocity_head_coefficient() * Q * Q

    def velocity_head_coefficient(self) -> float:
        """c in velocity head = c Q^2, so that arrays need no loop."""
        D = self.nozzle_diameter if (self.kind == "jet" and self.nozzle_diameter) else self.D_adjacent
        if self.kind == "reservoir" or not D:
            return 0.0
        A = math.pi * D * D / 4.0
        cv = self.velocity_coefficient if self.kind == "jet" else 1.0
        return 1.0 / (2 * G * A * A * cv * cv)

    def total_head(self, Q: float, rho: float) -> float:
        return self.static_head(rho) + self.velocity_head(Q)


@dataclass
class PipeRun:
    """A run of pipe of one inner diameter, with its fittings. Losses by Darcy–Weisbach."""

    label: str
    L: float
    D: float
    eps: float
    end_elevation: float
    fittings: list[Fitting] = field(default_factory=list)
    profile: list[tuple[float, float]] = field(default_factory=list)
    wall: float | None = None
    material: object | None = None
    size: object | None = None
    rating: float | None = None
    restraint: str = "anchored"
    eps_source: str = "typed by the user"
    D_source: str = "typed by the user"
    eps_aged: float | None = None
    #: A wave speed typed for the run [m/s] (a measured or maker's figure), used in place of Korteweg's.
    wave_speed: float | None = None
    kind: str = "pipe"
    _cache_key: tuple | None = field(default=None, repr=False, compare=False)
    _cache: tuple | None = field(default=None, repr=False, compare=False)
    _k_key: tuple | None = field(default=None, repr=False, compare=False)
    _k: tuple | None = field(default=None, repr=False, compare=False)
    #: Every fitting's K times this but an exit's (whose K = 1 is physics): the range of the answer's K +/-.
    k_factor: float = field(default=1.0, repr=False)

    @property
    def A(self) -> float:
        return math.pi * self.D * self.D / 4.0

    def K_coefficients(self) -> tuple[float, float]:
        """(A, B) with the run's total fitting K = A / Re + B: each fitting's K has that form (``k_factor``
        applied to all but the exits)."""
        A, B, A_exit, B_exit = self._K_parts()
        return A * self.k_factor + A_exit, B * self.k_factor + B_exit

    def _K_parts(self) -> tuple[float, float, float, float]:
        """(A, B) of the fittings but the exits, and (A, B) of the exits."""
        A = B = A_exit = B_exit = 0.0
        for ft in self.fittings:
            a, b = ft.coefficients(self.D)
            if ft.key.startswith("exit"):
                A_exit += ft.count * a
                B_exit += ft.count * b
            else:
                A += ft.count * a
                B += ft.count * b
        return A, B, A_exit, B_exit

    def constants(self) -> tuple:
        """(1/A, D, eps/D, L/D, K_A, K_B): what the head needs besides the flow, worked out once."""
        D = self.D
        # The fittings by identity and a cone's K (the implied losses work it out in place from the bores on
        # either side, which another run's resizing changes): a tuple of ids and K, not every parameter.
        k_key = (D, tuple((id(ft), ft.derived_K) for ft in self.fittings))
        kf = self.k_factor
        key = (self.L, self.eps, kf, k_key)
        if self._cache_key != key:
            if self._k_key != k_key:  # kept apart: a copy with another roughness or K factor keeps them
                self._k_key, self._k = k_key, self._K_parts()
            A, B, A_exit, B_exit = self._k
            self._cache_key = key
            self._cache = (4.0 / (math.pi * D * D), D, self.eps / D, self.L / D, A * kf + A_exit, B * kf + B_exit)
        return self._cache

    def head(self, Q: float, fluid: Fluid) -> float:
        """h = (f L / D + sum K) V^2 / 2g  [m]."""
        if Q <= 0.0:
            return 0.0
        inv_A, D, eD, L_D, KA, KB = self.constants()
        V = Q * inv_A
        Re = V * D / fluid.nu
        f = friction.friction_factor(Re, eD, fluid.method)
        return (f * L_D + KA / Re + KB) * V * V * _INV_2G

    def head_array(self, Q: np.ndarray, fluid: Fluid) -> np.ndarray:
        inv_A, D, eD, L_D, KA, KB = self.constants()
        V = Q * inv_A
        Re = V * D / fluid.nu
        f = friction.friction_factor_array(Re, eD, fluid.method)
        return (f * L_D + KA / Re + KB) * V * V * _INV_2G

    def detail(self, Q: float, fluid: Fluid) -> dict:
        D = self.D
        A = self.A
        V = Q / A
        hv = V * V / (2 * G)
        Re = V * D / fluid.nu
        eD = self.eps / D
        fr = friction.friction_detail(Re, eD, fluid.method)
        fits = []
        for ft in self.fittings:
            K = ft.K(Re, D)
            fits.append({"name": ft.name, "model": ft.model, "K": K, "count": ft.count,
                         "h": ft.count * K * hv, "source": ft.source, "position": ft.position})
        h_fric = fr.f * self.L / D * hv
        h_fit = sum(x["h"] for x in fits)
        return {
            "kind": "pipe", "label": self.label, "L": self.L, "D": D, "A": A, "V": V,
            "velocity_head": hv, "Re": Re, "eD": eD, "eps": self.eps, "f": fr.f,
            "regime": fr.regime, "friction_note": fr.note, "friction_in_range": fr.in_range,
            "f_bounds": [fr.f_laminar_bound, fr.f_turbulent_bound],
            "h_friction": h_fric, "h_fittings": h_fit,
            "K_total": sum(x["K"] * x["count"] for x in fits), "fittings": fits,
            "head_change": h_fric + h_fit, "D_source": self.D_source, "eps_source": self.eps_source,
        }


@dataclass
class Turbine:
    """A turbine: takes head P/(eta rho g Q) at a set shaft power, the head the line leaves it at a set
    flow, a fixed head, or head from a curve; its efficiency a typed value or a curve eta(Q)."""

    label: str
    mode: str  # power | flow | head | curve
    efficiency: float = 1.0
    power: float | None = None
    fixed_head: float | None = None
    curve: Curve | None = None
    kind: str = "turbine"
    #: False when no efficiency was typed and 1 is assumed (head or curve mode): a finding says so.
    efficiency_given: bool = True
    #: eta(Q) through typed points (any mode); when given it replaces ``efficiency``.
    efficiency_curve: Curve | None = None
    #: The set flow (mode "flow"); `calc.steady.settle` gives ``fixed_head`` the head the line leaves there.
    flow_set: float | None = None

    def eta(self, Q):
        """Efficiency at Q: the typed curve (held within 0 to 1 where it is carried on), else the typed value."""
        if self.efficiency_curve is None:
            return self.efficiency if isinstance(Q, float) or np.isscalar(Q) else np.full_like(Q, self.efficiency)
        return np.clip(self.efficiency_curve(Q), 0.0, 1.0) if not (isinstance(Q, float) or np.isscalar(Q)) else \
            min(max(float(self.efficiency_curve(Q)), 0.0), 1.0)

    def head(self, Q: float, fluid: Fluid) -> float:
        if self.mode == "power":
            if Q <= 0.0:
                return math.inf
            eta = self.eta(Q)
            return self.power / (eta * fluid.liquid.rho * G * Q) if eta > 0 else math.inf
        if self.mode in ("head", "flow"):
            return self.fixed_head
        return float(self.curve(Q))

    def head_array(self, Q: np.ndarray, fluid: Fluid) -> np.ndarray:
        if self.mode == "power":
            with np.errstate(divide="ignore"):
                return self.power / (self.eta(Q) * fluid.liquid.rho * G * Q)
        if self.mode in ("head", "flow"):
            return np.full_like(Q, self.fixed_head)
        return self.curve(Q)

    def detail(self, Q: float, fluid: Fluid) -> dict:
        H = self.head(Q, fluid)
        P_h = fluid.liquid.rho * G * Q * H
        eta = float(self.eta(Q))
        out = {"kind": "turbine", "label": self.label, "mode": self.mode, "head": H,
               "head_change": H, "power_hydraulic": P_h, "efficiency": eta,
               "power_shaft": eta * P_h}
        for name, c in (("curve", self.curve), ("efficiency_curve", self.efficiency_curve)):
            if c is not None:
                lo, hi = c.Q_range
                out["in_curve_range" if name == "curve" else "in_efficiency_range"] = lo <= Q <= hi
                out["curve_range" if name == "curve" else "efficiency_range"] = [lo, hi]
                if name == "curve":
                    out["beyond_curve_limit"] = c.beyond_limit(Q)
                else:
                    out["beyond_efficiency_limit"] = c.beyond_limit(Q)
        return out


@dataclass
class Pump:
    """A pump, or a group of identical pumps: head from a curve fitted through one unit's points (affinity
    laws for speed), or a fixed head.

    A group of ``units`` identical units (``standby`` of them kept in reserve) has ``running`` of them in
    service, in ``parallel`` (each carries Q / running at the group's head) or in ``series`` (each adds
    its head at the whole flow). The typed curves are one unit's; every method here gives the group's.
    """

    label: str
    mode: str
    fixed_head: float | None = None
    curve: Curve | None = None
    efficiency_curve: Curve | None = None
    npshr_curve: Curve | None = None
    speed_ratio: float = 1.0
    efficiency: float | None = None
    kind: str = "pump"
    units: int = 1
    standby: int = 0
    running: int = 1
    arrangement: str = "parallel"
    #: "fixed" (run at ``speed_ratio``), or "flow" / "head": the speed is solved for ``target`` (m3/s or m)
    #: by `calc.steady.speed.settle`, which sets ``speed_ratio`` and ``speed_solved``.
    speed_control: str = "fixed"
    target: float | None = None
    speed_limits: tuple = (None, None)  # the lowest and highest speed ratio the user allows
    speed_solved: bool = False

    @property
    def is_group(self) -> bool:
        return self.units > 1

    @property
    def in_parallel(self) -> int:
        """How many running units share the flow (1 for a series group)."""
        return self.running if self.arrangement == "parallel" else 1

    @property
    def in_series(self) -> int:
        """How many running units add their head in turn (1 for a parallel group)."""
        return self.running if self.arrangement == "series" else 1

    def unit_flow(self, Q):
        """The flow through each running unit."""
        return Q / self.in_parallel

    def unit_head(self, Q):
        """One unit's head at the group's flow Q: n^2 H1(q/n), q the unit's flow (affinity laws)."""
        if self.mode == "head":
            return self.fixed_head if isinstance(Q, float) or np.isscalar(Q) else np.full_like(Q, self.fixed_head)
        n = self.speed_ratio
        return n * n * self.curve(self.unit_flow(Q) / n)

    def pump_head(self, Q):
        """Head the pump (group) adds at Q: a unit's head, times the units in series."""
        return self.in_series * self.unit_head(Q)

    def head(self, Q: float, fluid: Fluid) -> float:
        return -float(self.pump_head(Q))

    def head_array(self, Q: np.ndarray, fluid: Fluid) -> np.ndarray:
        return -self.pump_head(Q)

    def eta(self, Q: float) -> float | None:
        """Efficiency at the group's flow Q (each unit at its own flow; affinity: eta(q) = eta1(q/n)); held
        within 0 to 1 where the curve is carried on."""
        if self.efficiency_curve is not None:
            return min(max(float(self.efficiency_curve(self.unit_flow(Q) / self.speed_ratio)), 0.0), 1.0)
        return self.efficiency

    def npsh_required(self, Q: float) -> float | None:
        """NPSH the group's inlet needs at Q: a parallel unit's at its share of the flow, or the first unit's
        of a series group (the later units take their suction from the one before)."""
        if self.npshr_curve is None:
            return None
        n = self.speed_ratio
        return float(n * n * self.npshr_curve(self.unit_flow(Q) / n))

    def best_efficiency_flow(self) -> float | None:
        """The group's flow with each unit at its highest typed efficiency, scaled by speed (Q ~ n); None
        unless it lies inside the data.

        At the first or last typed point the efficiency is still rising past the data, so the
        best-efficiency flow is not known: `best_efficiency_note` says which.
        """
        if self.efficiency_curve is None:
            return None
        Q, _, where = self.efficiency_curve.peak()
        return Q * self.speed_ratio * self.in_parallel if where == "inside" else None

    def best_efficiency_note(self) -> str:
        if self.efficiency_curve is None:
            return "no efficiency curve typed"
        _, _, where = self.efficiency_curve.peak()
        if where == "last":
            return "the efficiency is still rising at the last typed point, so the best-efficiency flow lies beyond the data"
        if where == "first":
            return "the efficiency is highest at the first typed point, so the best-efficiency flow lies below the data"
        return ""

    def detail(self, Q: float, fluid: Fluid) -> dict:
        H = float(self.pump_head(Q))
        P_h = fluid.liquid.rho * G * Q * H
        eta = self.eta(Q)
        out = {"kind": "pump", "label": self.label, "mode": self.mode, "head": H, "head_change": -H,
               "power_hydraulic": P_h, "efficiency": eta,
               "power_shaft": P_h / eta if eta and eta > 0 else None,
               "npsh_required": self.npsh_required(Q), "speed_ratio": self.speed_ratio}
        if self.is_group:
            out.update(units=self.units, standby=self.standby, running=self.running,
                       arrangement=self.arrangement, unit_flow=float(self.unit_flow(Q)),
                       unit_head=float(self.unit_head(Q)))
        if self.curve is not None:
            lo, hi = self.curve.Q_range
            n, k = self.speed_ratio, self.in_parallel
            out["in_curve_range"] = lo * n * k <= Q <= hi * n * k
            out["curve_range"] = [lo * n * k, hi * n * k]
            out["beyond_curve_limit"] = self.curve.beyond_limit(self.unit_flow(Q) / n)
        return out


@dataclass
class Valve:
    """A valve or other local loss with its own K on the velocity of diameter D.

    ``valve_type``: "fixed" (K typed), "check" (K typed; shuts against reverse flow), "control" (K from its
    rated Kvs and inherent characteristic at an opening, `calc.model.valve_law`; or the opening solved for
    a target flow or downstream pressure), "prv" (a pressure-reducing valve: K typed fully open, holding
    ``target`` downstream). Valves on a target get their K from `calc.steady.settle` before the solve.
    """

    label: str
    K: float
    D: float
    D_source: str = "typed by the user"
    kind: str = "valve"
    valve_type: str = "fixed"
    Kvs: float | None = None            # rated flow coefficient as Kv [m3/h], at full travel
    coefficient: str = "Kv"             # as typed: Kv or Cv
    characteristic: str = "linear"
    rangeability: float | None = None
    setting: str = "opening"            # opening | flow | pressure
    opening: float | None = None        # relative travel, 0 to 1 (typed, or solved)
    target: float | None = None         # a target flow [m3/s] or downstream gauge pressure [Pa]
    K_open: float | None = None         # K fully open (control: from Kvs; prv: typed)

    @property
    def on_target(self) -> bool:
        return self.valve_type == "prv" or (self.valve_type == "control" and self.setting != "opening")

    def head(self, Q: float, fluid: Fluid) -> float:
        V = Q / (math.pi * self.D * self.D / 4.0)
        return self.K * V * V / (2 * G)

    def head_array(self, Q: np.ndarray, fluid: Fluid) -> np.ndarray:
        V = Q / (math.pi * self.D * self.D / 4.0)
        return self.K * V * V / (2 * G)

    def detail(self, Q: float, fluid: Fluid) -> dict:
        V = Q / (math.pi * self.D * self.D / 4.0)
        h = self.K * V * V / (2 * G)
        out = {"kind": "valve", "label": self.label, "K": self.K, "D": self.D, "V": V,
               "velocity_head": V * V / (2 * G), "h": h, "head_change": h, "valve_type": self.valve_type}
        if self.valve_type == "control":
            out.update(opening=self.opening, Kv=kv_from_K(self.K, self.D) if self.K > 0 else None, Kvs=self.Kvs)
        return out


Element = PipeRun | Turbine | Pump | Valve


@dataclass
class Line:
    """A series line: start, elements in flow order, end; the liquid and site; the header for the record."""

    start: Node
    end: Node
    elements: list
    liquid: Liquid
    method: str = "colebrook"
    p_atm: float = 101325.0
    header: dict = field(default_factory=dict)
    settings: dict = field(default_factory=dict)

    def __post_init__(self):
        runs = self.runs
        if runs:
            if self.start.kind != "reservoir":
                self.start.D_adjacent = self._adjacent_D(self.elements)
            if self.end.kind != "reservoir":
                self.end.D_adjacent = self._adjacent_D(list(reversed(self.elements)))

    @staticmethod
    def _adjacent_D(elements) -> float | None:
        for el in elements:
            if isinstance(el, (PipeRun, Valve)):
                return el.D
        return None

    @property
    def runs(self) -> list[PipeRun]:
        return [el for el in self.elements if isinstance(el, PipeRun)]

    @property
    def fluid(self) -> Fluid:
        return Fluid(self.liquid, self.method)
