"""Choosing a size: every size in a range, every case, against independent solves and the cost arithmetic."""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from linetools import gravity_line, pumped_line
from scipy.optimize import brentq

from calc import tables
from calc.model.sheet import ensure_ids
from calc.sizing import compare
from server.cli import main

G = 9.80665


def test_each_size_gives_the_flow_of_an_independent_solve():
    doc = gravity_line()
    out = compare(doc, "pe-iso4427", "SDR11", smallest="110", largest="200")
    rho = PropsSI("D", "T", 288.15, "P", 101325.0, "Water")
    nu = PropsSI("V", "T", 288.15, "P", 101325.0, "Water") / rho
    eps = tables.size_material("pe-iso4427").eps_new  # the table's pipe: PE, its new roughness
    flows = []
    for row in out["rows"]:
        D = tables.pipe_size("pe-iso4427", row["nominal"], "SDR11").ID
        A = math.pi * D * D / 4

        def residual(Q, D=D, A=A):
            V = Q / A
            return 20.0 - (Colebrook(V * D / nu, eps / D) * 500 / D + 1.5) * V * V / (2 * G)

        Q = brentq(residual, 1e-6, 1.0, xtol=1e-14)
        assert row["cases"][0]["Q"] == pytest.approx(Q, rel=1e-5)  # IF97 against IAPWS-95 water
        flows.append(Q)
    assert [r["nominal"] for r in out["rows"]] == ["110", "125", "140", "160", "180", "200"]
    assert flows == sorted(flows)  # a larger bore never carries less


def _pumped() -> dict:
    doc = pumped_line()
    doc["energy"] = {"hours": "4000", "tariff": "0.2", "currency": "EUR", "motor_efficiency": "0.9"}
    ensure_ids(doc)
    doc["cases"] = [{"name": "Summer", "hours": "1000", "end": {"elevation": "97 m"}}]
    return doc


def test_capital_and_energy_cost_over_a_life_and_the_cheapest_size():
    costs = {"140": 30.0, "160": 38.0, "180": 47.0, "200": 58.0}
    out = compare(_pumped(), "pe-iso4427", "SDR11", smallest="140", largest="200", costs=costs, life=25)
    assert out["length"] == pytest.approx(500.0)
    for row in out["rows"]:
        assert row["capital"] == pytest.approx(500.0 * costs[row["nominal"]])
        yearly = 0.0
        for c in row["cases"]:
            hours = 4000 if c["case"] == "Base" else 1000
            assert c["energy_Wh"] == pytest.approx(c["power"] / 0.9 * hours, rel=1e-12)
            yearly += c["energy_Wh"] / 1000 * 0.2
        assert row["energy_cost"] == pytest.approx(25 * yearly, rel=1e-12)
        assert row["total"] == pytest.approx(row["capital"] + row["energy_cost"])
    assert out["cheapest"] == min(out["rows"], key=lambda r: r["total"])["nominal"]


def test_the_size_command_prints_the_table(tmp_path, capsys):
    import json

    path = tmp_path / "p.json"
    path.write_text(json.dumps(_pumped()))
    assert main(["size", str(path), "--standard", "pe-iso4427", "--class", "SDR11", "--from", "140", "--to", "160",
                 "--cost-per-m", "140=30,160=38", "--life", "25"]) == 0
    out = capsys.readouterr().out
    assert "Sizes of pe-iso4427 SDR11" in out and "Base:" in out and "Summer:" in out
    assert "Least capital plus energy cost:" in out


def test_a_range_with_no_size_is_refused():
    with pytest.raises(ValueError, match="no size"):
        compare(gravity_line(), "pe-iso4427", "SDR11", smallest="200", largest="110")
