"""A reach below atmospheric pressure works only as a siphon: the wording, and the flow if air is let in at the crest.

Reference for the broken siphon: with air at the crest the pressure there is atmospheric, so the
flow is what the head from the start surface to the crest drives through the pipe up to the crest,
the velocity head not recovered (energy equation, any hydraulics text); solved here with fluids'
Colebrook and scipy's brentq.
"""

from __future__ import annotations

import math

import fluids.friction
import pytest
from linetools import gravity_line
from scipy.optimize import brentq

from calc.analysis import analyse

G = 9.80665


def siphon_doc(z_crest="97 m", x_crest="400 m"):
    """1000 m of 150 mm steel from a tank at 100 m (pipe leaves at 95 m) over a crest to a tank at 82 m."""
    doc = gravity_line()
    doc["start"].update({"elevation": "100 m", "outlet_elevation": "95 m"})
    doc["end"].update({"elevation": "82 m"})
    doc["elements"][0].update({
        "length": "1000 m", "diameter": "150 mm", "roughness": "0.045 mm", "material": "",
        "end_elevation": "80 m", "profile": [{"chainage": x_crest, "elevation": z_crest}],
        "fittings": [{"type": "entrance-sharp", "count": 1}, {"type": "exit", "count": 1}]})
    return doc


def finding(a, code):
    return next(f for f in a.findings if f.code == code)


def test_siphon_wording_and_broken_flow_against_an_independent_solve():
    a = analyse(siphon_doc())
    f = finding(a, "pressure-subatmospheric")
    assert "works only as a siphon" in f.message and "primed" in f.message
    assert "air-admitting" in f.message and "break the siphon" in f.message
    assert "fit air valves" not in f.message.lower()
    rho, mu, D = a.line.liquid.rho, a.line.liquid.mu, 0.15

    def E(Q):
        V = Q / (math.pi * D * D / 4)
        fr = fluids.friction.Colebrook(rho * V * D / mu, 4.5e-5 / D)
        # start surface 100 m to the crest at 97 m: friction over 400 m, sharp entrance 0.5, velocity head lost
        return (100.0 - 97.0) - (fr * 400.0 / D + 0.5 + 1.0) * V * V / (2 * G)

    Q_b = brentq(E, 1e-6, 1.0, xtol=1e-15)
    assert f"{Q_b * 1e3:.4g} L/s" in f.message
    assert Q_b < a.solution.design["Q"]


def test_a_crest_above_the_start_level_carries_nothing_once_broken():
    a = analyse(siphon_doc(z_crest="101 m"))
    f = finding(a, "pressure-subatmospheric")
    assert "fall to nothing" in f.message


def test_an_intake_at_the_surface_is_said_to_draw_air_not_called_a_siphon():
    # The connection at the water surface: the entrance loss and velocity head take the pressure below
    # atmospheric right at the intake (energy equation: p/(rho g) = -(1 + K_entrance) V^2/2g there).
    doc = siphon_doc()
    doc["start"]["outlet_elevation"] = "100 m"
    doc["elements"][0]["profile"] = []
    doc["elements"][0]["end_elevation"] = "90 m"
    doc["end"]["elevation"] = "80 m"
    a = analyse(doc)
    codes = {f.code for f in a.findings}
    assert "pressure-intake" in codes and "pressure-subatmospheric" not in codes
    V = a.solution.design["elements"][0]["V"]
    f = finding(a, "pressure-intake")
    assert f.value == pytest.approx(-a.line.liquid.rho * (1 + 0.5) * V * V / 2, rel=1e-9)

    doc["start"]["outlet_elevation"] = ""
    b = analyse(doc)
    assert {"pressure-intake-depth"} <= {f.code for f in b.findings}
    assert not {"pressure-intake", "pressure-subatmospheric"} & {f.code for f in b.findings}
