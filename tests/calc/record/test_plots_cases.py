"""The plots of a sheet with cases: each case's system curve and design point, and each case's machine
curve where its machines run otherwise than the base's, so every case's point lies on a curve drawn."""

from __future__ import annotations

import numpy as np
import pytest
from linetools import pumped_line

from calc.analysis import analyse
from calc.model.sheet import ensure_ids
from calc.record.plots import figures as F
from calc.record.plots import series as S


def _analysis():
    doc = pumped_line()
    doc["elements"][0].update(units=3, standby=1)
    ensure_ids(doc)
    doc["cases"] = [{"name": "All three", "elements": [{"id": "pump-1", "running": 3}]},
                    {"name": "Tank high", "end": {"elevation": "98 m"}}]
    return analyse(doc)


def test_every_case_point_lies_on_its_system_curve_and_on_a_machine_curve_drawn():
    a = _analysis()
    Q = S.flows(S.flow_top(a))
    systems = S.system_curves(a, Q)
    assert [s.name for s in systems] == ["Base", "All three", "Tank high"]
    machines = F.case_machine_curves(a, Q)
    names = [m.name for m in machines]
    assert "P, 3 in parallel (All three)" in names and not any("Tank high" in n for n in names)
    for s, case in zip(systems, a.cases):
        (mark,) = s.points
        assert mark.label == case.name and mark.Q == case.solution.design["Q"]
        # on the case's system curve
        assert np.interp(mark.Q, s.Q, s.H) == pytest.approx(mark.y, rel=2e-3)
        # and on one of the machine curves drawn, at the pump's head there
        pump = next(d for d in case.solution.design["elements"] if d["kind"] == "pump")
        assert mark.y == pytest.approx(pump["head"], rel=1e-9)
        assert any(abs(np.interp(mark.Q, m.Q, m.y) - mark.y) < 2e-3 * mark.y for m in machines)


def test_the_efficiency_plot_marks_the_cases_that_run_as_the_base():
    a = _analysis()
    points = F._points(a, 0, "efficiency")
    assert [name for name, _, _ in points] == ["Base", "Tank high"]  # 'All three' runs on another curve
    svg = F.efficiency_plot(a).svg
    assert "Tank high" in svg
