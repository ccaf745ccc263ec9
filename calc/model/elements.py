"""The line model: start and end nodes, pipe runs, machines and valves, each with its head function.

Every element exposes ``head(Q)`` (head taken from the flow [m] at flow ``Q`` [m3/s];
negative for a pump, which gives head), ``head_array(Q)`` for the scan, and ``detail(Q)``
with the intermediate values a checker needs. Elements know nothing of the series line
they sit in, so that a network solver can reuse them.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from calc import friction, tables
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


@dataclass
class Curve:
    """A machine curve y(Q) fitted through typed points: a quadratic by least squares (exact through three)."""

    Q: list[float]
    y: list[float]
    coeffs: tuple[float, float, float] = (0.0, 0.0, 0.0)

    def __post_init__(self):
        Qa = np.asarray(self.Q, dtype=float)
        ya = np.asarray(self.y, dtype=float)
        degree = min(2, len(Qa) - 1)
        c = np.polyfit(Qa, ya, degree)
        c = np.concatenate([np.zeros(3 - len(c)), c])
        self.coeffs = (float(c[0]), float(c[1]), float(c[2]))

    def __call__(self, Q):
        a, b, c = self.coeffs
        return (a * Q + b) * Q + c

    @property
    def Q_range(self) -> tuple[float, float]:
        return min(self.Q), max(self.Q)

    def fit_residual(self) -> float:
        """Largest gap between the typed points and the fitted curve (same unit as y)."""
        return max(abs(self(q) - y) for q, y in zip(self.Q, self.y))


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
    kind: str = "pipe"
    _cache_key: tuple | None = field(default=None, repr=False, compare=False)
    _cache: tuple | None = field(default=None, repr=False, compare=False)

    @property
    def A(self) -> float:
        return math.pi * self.D * self.D / 4.0

    def K_coefficients(self) -> tuple[float, float]:
        """(A, B) with the run's total fitting K = A / Re + B: each fitting's K has that form."""
        A = B = 0.0
        for ft in self.fittings:
            a, b = ft.coefficients(self.D)
            A += ft.count * a
            B += ft.count * b
        return A, B

    def constants(self) -> tuple:
        """(1/A, D, eps/D, L/D, K_A, K_B): what the head needs besides the flow, worked out once."""
        D = self.D
        key = (D, self.L, self.eps,
               tuple((ft.model, ft.count, *sorted(ft.params.items())) for ft in self.fittings))
        if self._cache_key != key:
            self._cache_key = key
            self._cache = (4.0 / (math.pi * D * D), D, self.eps / D, self.L / D, *self.K_coefficients())
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
    """A turbine: takes head P/(eta rho g Q) at a set shaft power, a fixed head, or head from a curve."""

    label: str
    mode: str
    efficiency: float = 1.0
    power: float | None = None
    fixed_head: float | None = None
    curve: Curve | None = None
    kind: str = "turbine"

    def head(self, Q: float, fluid: Fluid) -> float:
        if self.mode == "power":
            if Q <= 0.0:
                return math.inf
            return self.power / (self.efficiency * fluid.liquid.rho * G * Q)
        if self.mode == "head":
            return self.fixed_head
        return float(self.curve(Q))

    def head_array(self, Q: np.ndarray, fluid: Fluid) -> np.ndarray:
        if self.mode == "power":
            return self.power / (self.efficiency * fluid.liquid.rho * G * Q)
        if self.mode == "head":
            return np.full_like(Q, self.fixed_head)
        return self.curve(Q)

    def detail(self, Q: float, fluid: Fluid) -> dict:
        H = self.head(Q, fluid)
        P_h = fluid.liquid.rho * G * Q * H
        out = {"kind": "turbine", "label": self.label, "mode": self.mode, "head": H,
               "head_change": H, "power_hydraulic": P_h, "efficiency": self.efficiency,
               "power_shaft": self.efficiency * P_h}
        if self.curve is not None:
            lo, hi = self.curve.Q_range
            out["in_curve_range"] = lo <= Q <= hi
        return out


@dataclass
class Pump:
    """A pump: head from a curve fitted through its points (affinity laws for speed), or a fixed head."""

    label: str
    mode: str
    fixed_head: float | None = None
    curve: Curve | None = None
    efficiency_curve: Curve | None = None
    npshr_curve: Curve | None = None
    speed_ratio: float = 1.0
    efficiency: float | None = None
    kind: str = "pump"

    def pump_head(self, Q):
        """Head the pump adds at Q: H(Q) = n^2 H1(Q/n) by the affinity laws."""
        if self.mode == "head":
            return self.fixed_head if np.isscalar(Q) else np.full_like(Q, self.fixed_head)
        n = self.speed_ratio
        return n * n * self.curve(Q / n)

    def head(self, Q: float, fluid: Fluid) -> float:
        return -float(self.pump_head(Q))

    def head_array(self, Q: np.ndarray, fluid: Fluid) -> np.ndarray:
        return -self.pump_head(Q)

    def eta(self, Q: float) -> float | None:
        if self.efficiency_curve is not None:
            return float(self.efficiency_curve(Q / self.speed_ratio))
        return self.efficiency

    def npsh_required(self, Q: float) -> float | None:
        if self.npshr_curve is None:
            return None
        n = self.speed_ratio
        return float(n * n * self.npshr_curve(Q / n))

    def best_efficiency_flow(self) -> float | None:
        """Flow at the top of the fitted efficiency curve, scaled by speed (Q ~ n)."""
        if self.efficiency_curve is None:
            return None
        a, b, _ = self.efficiency_curve.coeffs
        if a >= 0:
            return None
        return -b / (2 * a) * self.speed_ratio

    def detail(self, Q: float, fluid: Fluid) -> dict:
        H = float(self.pump_head(Q))
        P_h = fluid.liquid.rho * G * Q * H
        eta = self.eta(Q)
        out = {"kind": "pump", "label": self.label, "mode": self.mode, "head": H, "head_change": -H,
               "power_hydraulic": P_h, "efficiency": eta,
               "power_shaft": P_h / eta if eta and eta > 0 else None,
               "npsh_required": self.npsh_required(Q), "speed_ratio": self.speed_ratio}
        if self.curve is not None:
            lo, hi = self.curve.Q_range
            n = self.speed_ratio
            out["in_curve_range"] = lo * n <= Q <= hi * n
            out["curve_range"] = [lo * n, hi * n]
        return out


@dataclass
class Valve:
    """A valve or other local loss with its own K on the velocity of diameter D."""

    label: str
    K: float
    D: float
    D_source: str = "typed by the user"
    kind: str = "valve"

    def head(self, Q: float, fluid: Fluid) -> float:
        V = Q / (math.pi * self.D * self.D / 4.0)
        return self.K * V * V / (2 * G)

    def head_array(self, Q: np.ndarray, fluid: Fluid) -> np.ndarray:
        V = Q / (math.pi * self.D * self.D / 4.0)
        return self.K * V * V / (2 * G)

    def detail(self, Q: float, fluid: Fluid) -> dict:
        V = Q / (math.pi * self.D * self.D / 4.0)
        h = self.K * V * V / (2 * G)
        return {"kind": "valve", "label": self.label, "K": self.K, "D": self.D, "V": V,
                "velocity_head": V * V / (2 * G), "h": h, "head_change": h}


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
