"""Every demo sheet re-checked by an independent calculation: its flow and machine heads, solved another way.

Independent of the solver: friction by fluids' Colebrook, fitting K values by fluids' Darby 3-K and
Hooper 2-K tables (Darby 2001; Hooper 1981) or the plain K, changes of bore by fluids' Crane and
Borda-Carnot forms, pump curves through scipy's PchipInterpolator, and the energy balance closed
with scipy's brentq. The geometry and water properties are the parsed ones (their tables and the
water formulation have their own checks against references in test_tables and test_water).
"""

from __future__ import annotations

import json
import math
from pathlib import Path

import fluids.fittings as ff
import fluids.friction
import pytest
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq
from test_tables import FLUIDS_NAME

from calc.analysis import analyse
from calc.model.elements import PipeRun, Pump, Turbine, Valve

G = 9.80665
INCH = 0.0254
EXAMPLES = sorted((Path(__file__).resolve().parents[2] / "examples").glob("*.json"))


def fitting_K(ft, Re, D, neighbours):
    """K of one fitting on its run's velocity head, from fluids (tests only)."""
    if ft.model == "3k":
        if ft.key in FLUIDS_NAME:
            return ff.Darby3K(Di=D, Re=Re, name=FLUIDS_NAME[ft.key])
        return ff.Darby3K(Di=D, Re=Re, K1=ft.params["K1"], Ki=ft.params["Ki"], Kd=ft.params["Kd"])
    if ft.model == "2k":
        if ft.key in FLUIDS_NAME:
            return ff.Hooper2K(Di=D / INCH, Re=Re, name=FLUIDS_NAME[ft.key])
        return ff.Hooper2K(Di=D / INCH, Re=Re, K1=ft.params["K1"], Kinfty=ft.params["Kinf"])
    if ft.key in ("expansion-sudden", "contraction-sudden"):
        d_other = neighbours[ft.key]
        if ft.key == "expansion-sudden":
            return ff.diffuser_sharp(Di1=D, Di2=d_other)
        return ff.contraction_sharp(Di1=d_other, Di2=D, method="Crane")
    return ft.params["K"]


def independent_residual(line):
    rho, mu = line.liquid.rho, line.liquid.mu
    els = line.elements
    neighbours = {}
    for i, el in enumerate(els):
        if isinstance(el, PipeRun):
            nb = {}
            if i + 1 < len(els) and isinstance(els[i + 1], PipeRun):
                nb["expansion-sudden"] = els[i + 1].D
            if i > 0 and isinstance(els[i - 1], PipeRun):
                nb["contraction-sudden"] = els[i - 1].D
            neighbours[i] = nb
    pumps = {i: PchipInterpolator(el.curve.Q, el.curve.y) for i, el in enumerate(els)
             if isinstance(el, Pump) and el.mode == "curve"}

    def node_head(node, Q, D_adj):
        H = node.elevation if node.free_outlet is None else node.free_outlet
        H += node.pressure / (rho * G)
        if node.kind != "reservoir":
            D = node.nozzle_diameter if node.kind == "jet" and node.nozzle_diameter else D_adj
            V = Q / (math.pi * D * D / 4)
            H += V * V / (2 * G * node.velocity_coefficient ** 2)
        return H

    bores = [el.D for el in els if isinstance(el, (PipeRun, Valve))]

    def E(Q):
        h = node_head(line.start, Q, bores[0]) - node_head(line.end, Q, bores[-1])
        for i, el in enumerate(els):
            if isinstance(el, PipeRun):
                V = Q / (math.pi * el.D ** 2 / 4)
                Re = rho * V * el.D / mu
                f = fluids.friction.Colebrook(Re, el.eps / el.D)
                K = sum(ft.count * fitting_K(ft, Re, el.D, neighbours[i]) for ft in el.fittings)
                h -= (f * el.L / el.D + K) * V * V / (2 * G)
            elif isinstance(el, Valve):
                V = Q / (math.pi * el.D ** 2 / 4)
                h -= el.K * V * V / (2 * G)
            elif isinstance(el, Turbine) and el.mode == "power":
                h -= el.power / (el.efficiency * rho * G * Q)
            elif isinstance(el, Pump):
                n = el.speed_ratio
                h += n * n * float(pumps[i](Q / n))
        return h

    return E


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_demo_flow_against_an_independent_solve(path):
    a = analyse(json.loads(path.read_text()))
    assert a.ok and a.solution.design is not None
    E = independent_residual(a.line)
    for p in a.solution.points:
        Q = p["Q"]
        Q_ref = brentq(E, 0.9 * Q, 1.1 * Q, xtol=1e-16, rtol=1e-14)
        assert Q == pytest.approx(Q_ref, rel=1e-9), path.stem
