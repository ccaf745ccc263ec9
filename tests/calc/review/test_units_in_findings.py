"""A US-units sheet says every finding in US units; an SI sheet in SI (the value fields stay SI).

Reference for the conversions: 1 ft = 0.3048 m, 1 US gallon = 3.785411784 L, 1 psi = 6894.757 Pa
(NIST SP 811, 2008, appendix B); checked through pint's registry.
"""

from __future__ import annotations

import copy
import json
import re
from pathlib import Path

import pytest

from calc.analysis import analyse

EXAMPLES = sorted((Path(__file__).resolve().parents[3] / "examples").glob("*.json"))
SI_TOKENS = re.compile(r"\d (L/s|kPa|m/s|mm|kW|m)(?![\w/³²])")
US_TOKENS = re.compile(r"\d (gpm|psi|ft/s|in|hp|ft)\b")


def with_units(path: Path, units: str) -> dict:
    doc = json.loads(path.read_text())
    doc = copy.deepcopy(doc)
    doc.setdefault("header", {})["units"] = units
    return doc


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_every_finding_of_a_us_sheet_is_in_us_units(path):
    a = analyse(with_units(path, "US"))
    assert a.ok
    checked = 0
    for f in a.findings:
        assert not SI_TOKENS.search(f.message), (f.code, f.message)
        checked += bool(US_TOKENS.search(f.message))
    assert checked >= 3


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.stem)
def test_an_si_sheet_speaks_si(path):
    a = analyse(with_units(path, "SI"))
    for f in a.findings:
        assert not US_TOKENS.search(f.message), (f.code, f.message)


def test_a_velocity_limit_is_converted_exactly():
    from calc.review.findings import Shown

    assert Shown("US")(3.0, "velocity", ".4g") == "9.843 ft/s"  # 3 / 0.3048
    assert Shown("US")(0.0630901964, "flow", ".4g") == "1000 gpm"
    assert Shown("US")(6894.757, "pressure", ".4g") == "1 psi"
