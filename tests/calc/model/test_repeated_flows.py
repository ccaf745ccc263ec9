"""A machine curve with two points at one flow: refused beside the point, never a crash in the interpolation."""

from __future__ import annotations

import copy
import json

import numpy as np
import pytest
from scipy.interpolate import PchipInterpolator

from calc.model.sheet import parse
from server.app import EXAMPLES


def _pumped() -> tuple[dict, int]:
    for path in sorted(EXAMPLES.glob("*.json")):
        doc = json.loads(path.read_text())
        for i, e in enumerate(doc["elements"]):
            if e["kind"] == "pump" and e.get("mode", "curve") == "curve":
                return doc, i
    raise AssertionError("no demo sheet has a pump with a curve")


def test_the_interpolation_itself_needs_flows_that_differ():
    # Fritsch and Carlson (1980) build the cubic between successive distinct abscissae; scipy refuses others.
    with pytest.raises(ValueError):
        PchipInterpolator(np.array([0.0, 0.01, 0.01, 0.02]), np.array([40.0, 38.0, 37.0, 30.0]))


@pytest.mark.parametrize("repeat", [0, 2])
def test_a_repeated_flow_is_refused_at_the_later_point(repeat):
    doc, i = _pumped()
    doc = copy.deepcopy(doc)
    curve = doc["elements"][i]["curve"]
    curve.append(dict(curve[repeat], head="1 m"))
    parsed = parse(doc)
    assert not parsed.ok
    errors = parsed.errors_by_path()
    assert list(errors) == [f"elements.{i}.curve.{len(curve) - 1}.flow"]
    assert f"repeats the flow of point {repeat + 1}" in errors[f"elements.{i}.curve.{len(curve) - 1}.flow"]
