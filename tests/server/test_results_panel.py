"""The results panel leads with what an engineer looks for: each machine's duty, the extremes of pressure and
velocity and where they are, then the checks by severity; round-off shows as zero, one precision per kind.

The headline figures are checked against a hand computation that shares nothing with the solver: the
Darcy-Weisbach equation with Colebrook's friction factor from the ``fluids`` library, water from CoolProp
(IAPWS-95), the pump curve through scipy's PCHIP, and the textbook formulae named at each check.
"""

from __future__ import annotations

import copy
import doctest
import html
import math
import re

import pytest
from CoolProp.CoolProp import PropsSI
from fluids.friction import Colebrook
from scipy.interpolate import PchipInterpolator
from scipy.optimize import brentq
from servertools import HX, form_fields

from calc import tables
from server import results
from server.results import quantity

G = 9.80665  # standard gravity [m/s2] (CGPM 1901)
T = 293.15  # 20 degC [K]
P_ATM = 101325.0  # [Pa]
K_ENTRANCE = 0.5  # sharp-edged flush entrance (Idelchik 2007; Crane TP-410)
K_EXIT = 1.0  # exit into a reservoir: the whole velocity head (Rennels and Hudson 2012)
EPS = 0.045e-3  # roughness typed on both runs [m]


def _water():
    rho = PropsSI("D", "T", T, "P", P_ATM, "Water")
    mu = PropsSI("V", "T", T, "P", P_ATM, "Water")
    p_vap = PropsSI("P", "T", T, "Q", 0, "Water")
    return rho, mu, p_vap


def _run_loss_coefficient(Q: float, L: float, D: float, mu_over_rho: float) -> tuple[float, float]:
    """(f L/D, V) of a run: Darcy-Weisbach with Colebrook's f (fluids.friction.Colebrook)."""
    V = Q / (math.pi * D * D / 4)
    f = Colebrook(V * D / mu_over_rho, EPS / D)
    return f * L / D, V


def _sheet(elements: list, start: dict, end: dict, title: str) -> dict:
    return {"format": "headsheet-sheet", "version": 1,
            "header": {"title": title, "project": "", "calc_number": "", "purpose": "",
                       "revision_scheme": "letters", "units": "SI"},
            "liquid": {"kind": "water", "temperature": "20 degC"}, "site": {"atmospheric_pressure": "101.325 kPa"},
            "settings": {"friction_method": "colebrook"}, "start": start, "end": end, "elements": elements}


def _pipe(label: str, length: str, diameter: str, end_elevation: str) -> dict:
    return {"kind": "pipe", "label": label, "length": length, "diameter": diameter, "size": None,
            "material": "", "roughness": "0.045 mm", "end_elevation": end_elevation, "profile": [], "fittings": []}


# A pump lifting 30 m from a sump through 12 m of 200 mm suction and 800 m of 150 mm rising main. The
# curve's heads and NPSH required lie on straight lines, which PCHIP reproduces exactly.
PUMP_SHEET = _sheet(
    [_pipe("Suction", "12 m", "200 mm", "103 m"),
     {"kind": "pump", "label": "Lift pump", "mode": "curve", "speed_ratio": "1", "head": "",
      "curve": [{"flow": "0 L/s", "head": "60 m", "efficiency": "0.30", "npsh_required": "2 m"},
                {"flow": "40 L/s", "head": "50 m", "efficiency": "0.75", "npsh_required": "3 m"},
                {"flow": "80 L/s", "head": "40 m", "efficiency": "0.70", "npsh_required": "4 m"}]},
     _pipe("Rising main", "800 m", "150 mm", "128 m")],
    {"kind": "reservoir", "elevation": "100 m", "pressure": "0 kPa", "outlet_elevation": "98 m"},
    {"kind": "reservoir", "elevation": "130 m", "pressure": "0 kPa"}, "Pump headline test")
PUMP_CURVE = ([0.0, 0.04, 0.08], [60.0, 50.0, 40.0], [0.30, 0.75, 0.70], [2.0, 3.0, 4.0])

# A turbine taking a fixed 80 m of a 100 m gross head, through 500 m of 300 mm penstock.
TURBINE_SHEET = _sheet(
    [_pipe("Penstock", "500 m", "300 mm", "99 m"),
     {"kind": "turbine", "label": "Runner", "mode": "head", "head": "80 m", "efficiency": "0.85", "power": "",
      "curve": []}],
    {"kind": "reservoir", "elevation": "200 m", "pressure": "0 kPa", "outlet_elevation": "198 m"},
    {"kind": "reservoir", "elevation": "100 m", "pressure": "0 kPa"}, "Turbine headline test")


def _create(client, doc: dict) -> int:
    response = client.post("/api/sheets", json={"document": doc})
    assert response.status_code == 201, response.text
    return response.json()["id"]


def _text(fragment: str) -> str:
    return " ".join(html.unescape(re.sub(r"<[^>]+>", "", fragment)).split())


def _dd(page: str, cls: str) -> str:
    m = re.search(rf'<dd[^>]*class="{cls}"[^>]*>(.*?)</dd>', page, re.S)
    assert m, cls
    return _text(m.group(1))


def _by_id(page: str, element_id: str) -> str:
    m = re.search(rf'id="{element_id}"[^>]*>(.*?)</(?:dd|div|section|output|span)>', page, re.S)
    assert m, element_id
    return _text(m.group(1))


def _value(shown: str) -> float:
    """The number at the start of a shown figure, e.g. '33.4 kW' -> 33.4 (a minus sign of either kind)."""
    m = re.match(r"\s*([-−]?\d+(?:\.\d+)?)", shown)
    assert m, shown
    return float(m.group(1).replace("−", "-"))


def _close(shown: str, expected: float, half_step: float) -> None:
    """The shown figure equals the hand value to its last displayed digit (plus a hair for the property data)."""
    assert abs(_value(shown) - expected) <= half_step * 1.2, (shown, expected)


def test_the_helpers_doctests_pass():
    assert doctest.testmod(results).failed == 0


def test_pump_line_headline_against_a_hand_computation(client):
    sid = _create(client, PUMP_SHEET)
    page = client.get(f"/sheets/{sid}").text
    rho, mu, p_vap = _water()
    nu = mu / rho
    Qs, Hs, etas, npshrs = PUMP_CURVE
    head = PchipInterpolator(Qs, Hs)
    eta = PchipInterpolator(Qs, etas)
    npshr = PchipInterpolator(Qs, npshrs)

    def losses(Q):
        fl_s, V_s = _run_loss_coefficient(Q, 12.0, 0.200, nu)
        fl_d, V_d = _run_loss_coefficient(Q, 800.0, 0.150, nu)
        return (K_ENTRANCE + fl_s) * V_s ** 2 / (2 * G), (fl_d + K_EXIT) * V_d ** 2 / (2 * G), V_s, V_d

    def residual(Q):  # energy equation, surface to surface: pump head = static lift + losses
        h_s, h_d, _, _ = losses(Q)
        return float(head(Q)) - 30.0 - h_s - h_d

    Q = brentq(residual, 1e-6, 0.08, xtol=1e-12)
    H = float(head(Q))
    h_suction, _, V_s, V_d = losses(Q)
    # Shaft power P = rho g Q H / eta (Karassik et al., Pump Handbook, 4th ed. 2008, ch. 2; any pump text).
    P = rho * G * Q * H / float(eta(Q))
    # NPSH available = (p_atm - p_vap)/(rho g) + z_s - h_loss, z_s the sump surface above the pump datum
    # (ANSI/HI 9.6.1; Karassik, Pump Handbook): 100 m surface, pump at the suction run's end, 103 m.
    npsha = (P_ATM - p_vap) / (rho * G) + (100.0 - 103.0) - h_suction
    # Pressure head at the pump inlet and outlet (Bernoulli from the sump surface).
    h_inlet = 100.0 - h_suction - V_s ** 2 / (2 * G) - 103.0
    h_outlet = h_inlet + H

    assert _by_id(page, "result-flow") == quantity(Q, "flow")
    _close(_by_id(page, "result-flow"), Q * 1e3, 0.005)
    assert "Static lift (end above start)" in page and _by_id(page, "result-static") == "30.00 m"
    assert "Static head" not in page

    duty = _text(re.search(r'<section class="duty duty-pump".*?</section>', page, re.S).group(0))
    assert duty.startswith("Lift pump at the design point"), duty
    _close(_dd(page, "duty-head"), H, 0.005)
    _close(_dd(page, "duty-power"), P / 1e3, 0.005)
    assert _dd(page, "duty-power").endswith("kW")
    _close(_dd(page, "duty-efficiency"), 100 * float(eta(Q)), 0.05)
    # The best-efficiency flow: the highest typed efficiency, where PCHIP's slope is zero (Fritsch and Carlson 1980).
    _close(_dd(page, "duty-bep"), 100 * Q / 0.04, 0.5)
    _close(_dd(page, "duty-npsha"), npsha, 0.005)
    _close(_dd(page, "duty-npshr"), float(npshr(Q)), 0.005)
    _close(_dd(page, "duty-margin"), npsha - float(npshr(Q)), 0.005)

    # Highest pressure at the pump outlet, lowest at its inlet (the suction run's end), fastest in the 150 mm main.
    high, low, fast = (_text(re.search(rf'<div class="key-{k}[^"]*">(.*?)</div>', page, re.S).group(1))
                       for k in ("pressure-high", "pressure-low", "velocity"))
    _close(_by_id(page, "result-pressure-high"), rho * G * h_outlet / 1e3, 0.05)
    assert "at chainage 12.0 m, Lift pump outlet" in high, high
    _close(_by_id(page, "result-pressure-low"), rho * G * h_inlet / 1e3, 0.05)
    assert "at chainage 12.0 m, Suction" in low and "absolute" in low, low
    _close(_by_id(page, "result-velocity"), V_d, 0.005)
    assert "in Rising main, chainage 12.0 m to 812.0 m" in fast and V_d > V_s, fast


def test_turbine_line_headline_against_a_hand_computation(client):
    sid = _create(client, TURBINE_SHEET)
    page = client.get(f"/sheets/{sid}").text
    rho, mu, _ = _water()

    def residual(Q):  # gross head = net head + penstock losses (no exit loss: the turbine discharges)
        fl, V = _run_loss_coefficient(Q, 500.0, 0.300, mu / rho)
        return 100.0 - 80.0 - (K_ENTRANCE + fl) * V ** 2 / (2 * G)

    Q = brentq(residual, 1e-6, 2.0, xtol=1e-12)
    # Turbine shaft power P = eta rho g Q H_net (standard); the share of the gross head lost in the
    # line (H_gross - H_net) / H_gross, commonly held to 5-10 % (common practice).
    P = 0.85 * rho * G * Q * 80.0
    _close(_by_id(page, "result-flow"), Q * 1e3, 0.005)
    assert "Gross head (start above end)" in page and _by_id(page, "result-static") == "100.00 m"
    duty = _text(re.search(r'<section class="duty duty-turbine".*?</section>', page, re.S).group(0))
    assert duty.startswith("Runner turbine at the design point"), duty
    assert _dd(page, "duty-head") == "80.00 m"
    _close(_dd(page, "duty-power"), P / 1e3, 0.005)
    assert _dd(page, "duty-efficiency") == "85.0 %"
    assert _dd(page, "duty-loss") == "20.0 %"
    assert "20.00 m of 100.00 m gross" in duty
    # The same power, to the same precision, in the element table below.
    table = re.search(r'<table class="data elements-table">.*?</table>', page, re.S).group(0)
    assert _dd(page, "duty-power") in _text(table)
    # ... and in the words of the checks (calc.review.machines writes powers to two decimals too).
    findings = _text(re.search(r'<section id="findings".*?</section>', page, re.S).group(0))
    assert f"shaft power {_dd(page, 'duty-power')}" in findings


def test_headline_comes_before_the_checks_and_the_element_table(client):
    page = client.get("/sheets/3").text  # the pumped main demo
    order = [page.index(mark) for mark in ('id="headline"', 'class="duty duty-pump"', 'id="findings"',
                                           'class="data elements-table"', 'class="solve-note"')]
    assert order == sorted(order)
    for old in ("Static head", "Lowest pressure head"):
        assert old not in page


def test_general_cautions_are_one_line_that_opens_the_list(client):
    page = client.get("/sheets/3").text
    findings = re.search(r'<section id="findings".*?</section>', page, re.S).group(0)
    items = re.findall(r'<ul class="check-groups">\s*<li class="([^"]+)"', findings)
    assert items == ["general-cautions"]  # the first line of the list
    general = re.search(r'<details id="general-cautions">(.*?)</details>', findings, re.S).group(1)
    summary = _text(re.search(r"<summary[^>]*>(.*?)</summary>", general, re.S).group(1))
    assert summary == "7 general cautions that apply to every line"
    assert "Confined spaces" in general and "Electrical safety" in general  # inside, folded
    outside = findings.replace(general, "")
    assert "Confined spaces" not in outside and "Electrical safety" not in outside


def test_findings_are_grouped_by_severity_worst_first_with_counts(client):
    # Lift the pump 4 m higher above the sump: NPSH available falls below NPSH required (an error).
    doc = copy.deepcopy(PUMP_SHEET)
    doc["elements"][0]["end_elevation"] = "111 m"
    doc["elements"][0]["fittings"] = []
    sid = _create(client, doc)
    page = client.get(f"/sheets/{sid}").text
    findings = re.search(r'<section id="findings".*?</section>', page, re.S).group(0)
    groups = re.findall(r'<li class="check-group group-(\w+)" id="checks-\1">', findings)
    assert groups[0] == "error" and groups == [s for s in ("error", "warning", "caution", "info") if s in groups]
    outcome = client.app.state.solver.solve(doc)
    counts = {}
    for f in outcome.findings:
        if not f["code"].startswith("general-"):
            counts[f["severity"]] = counts.get(f["severity"], 0) + 1
    for sev, n in counts.items():
        block = re.search(rf'id="checks-{sev}">(.*?)</li>\s*(?=<li class="check-group|</ul>\s*</section>|$)',
                          findings, re.S)
        assert len(re.findall(r'<li class="finding severity-', block.group(1))) == n, sev
    heading = _text(re.search(r"<h3>Checks.*?</h3>", findings, re.S).group(0))
    one = {"error": "error", "warning": "warning", "caution": "caution", "info": "note"}
    assert heading == "Checks " + ", ".join(f"{counts[s]} {one[s]}{'' if counts[s] == 1 else 's'}"
                                            for s in ("error", "warning", "caution", "info") if s in counts)
    assert "cavitates" in _text(re.search(r'id="checks-error">.*?</ul>', findings, re.S).group(0))
    npsh = re.search(r'<div class="npsh-cavitation">', page)
    assert npsh, "the margin is marked as cavitating in the headline"


def test_round_off_shows_as_zero():
    assert quantity(-7.105427357601002e-15, "head") == "0.00 m"
    assert quantity(-7.105427357601002e-15 * 998.2 * G, "pressure") == "0.0 kPa"
    assert quantity(3e-16, "velocity", "US") == "0.00 ft/s"
    assert results.static_figure(-7.105427357601002e-15)["label"] == "Start and end level"
    # A real value never rounds to zero on screen: it keeps two significant figures.
    assert quantity(0.0031, "head") == "0.0031 m" and quantity(-40.0, "pressure") == "-0.040 kPa"
    # One precision per kind across the panel: 85.00 kW and 100.00 kW, never 85.00 kW beside 100.0 kW.
    assert [quantity(p, "power") for p in (85e3, 100e3, 1234.5e3)] == ["85.00 kW", "100.00 kW", "1234.50 kW"]


def test_round_off_at_a_free_jet_shows_as_zero(client):
    # A jet to atmosphere: its pressure head is zero by definition, computed as the difference of two
    # heads of some 57 m (hgl - elevation), which leaves round-off of 1e-14 m behind.
    doc = copy.deepcopy(TURBINE_SHEET)
    doc["elements"] = [_pipe("Main", "300 m", "150 mm", "57.3 m")]
    doc["start"] = {"kind": "reservoir", "elevation": "93.1 m", "pressure": "0 kPa", "outlet_elevation": ""}
    doc["end"] = {"kind": "jet", "elevation": "57.3 m", "nozzle_diameter": "", "velocity_coefficient": ""}
    sid = _create(client, doc)
    outcome = client.app.state.solver.solve(doc)
    heads = [st["pressure_head"] for st in outcome.solution["points"][0]["profile"]]
    assert max(heads) != 0.0 and abs(max(heads)) < 1e-9  # the highest pressure is round-off
    page = client.get(f"/sheets/{sid}").text
    headline = _text(re.search(r'id="headline".*?</dl>', page, re.S).group(0))
    assert not re.search(r"\d[eE][-+]?\d", headline), headline  # no exponent anywhere
    assert _by_id(page, "result-pressure-high") == "0.0 kPa"
    high = _text(re.search(r'<div class="key-pressure-high[^"]*">(.*?)</div>', page, re.S).group(1))
    assert "0.00 m of head" in high, high


def test_no_operating_point_reads_as_sentences(client):
    doc = copy.deepcopy(TURBINE_SHEET)
    doc["elements"] = [_pipe("Main", "300 m", "150 mm", "99 m")]
    doc["end"] = {"kind": "reservoir", "elevation": "250 m", "pressure": "0 kPa"}
    sid = _create(client, doc)
    page = client.get(f"/sheets/{sid}").text
    banner = _text(re.search(r'<div class="banner no-point".*?</div>', page, re.S).group(0))
    assert banner.startswith("No operating point. The head at the start does not exceed"), banner
    assert banner.endswith(".") and ".." not in banner and ". the" not in banner
    assert "Static lift (end above start) 50.00 m." in _text(page)


def test_the_friction_method_has_its_proper_name(client):
    page = client.get("/sheets/3").text
    note = _text(re.search(r'<p class="solve-note">.*?</p>', page, re.S).group(0))
    assert "Friction factor: Colebrook." in note and "colebrook" not in note
    assert note.startswith("Water: ")
    doc = copy.deepcopy(PUMP_SHEET)
    doc["settings"]["friction_method"] = "swamee_jain_1976"
    page = client.get(f"/sheets/{_create(client, doc)}").text
    assert "Friction factor: Swamee-Jain." in _text(re.search(r'<p class="solve-note">.*?</p>', page, re.S).group(0))


def test_the_bore_a_size_table_gives_is_shown_beside_the_size(client):
    page = client.get("/sheets/3").text  # suction: ASME B36.10M 8 in Schedule 40
    cell = re.search(r'<div class="field kind-bore"><label for="bore-elements-0">Bore from the size</label>'
                     r'\s*<output id="bore-elements-0"[^>]*>(.*?)</output>', page, re.S)
    assert cell, "the bore sits in the grid beside the size fields"
    # ASME B36.10M, NPS 8 Schedule 40: OD 219.1 mm (8.625 in), wall 8.18 mm (0.322 in): bore 202.7 mm.
    assert _text(cell.group(1)) == "202.7 mm outside 219.1 mm, wall 8.18 mm"
    grid = re.search(r'<fieldset class="element kind-pipe" id="f-elements-0".*?</div>\s*<p class="field-msg group-msg"',
                     page, re.S).group(0)
    assert grid.index('id="f-elements-0-size-class"') < grid.index('id="bore-elements-0"')
    # A run with a typed bore and no size table shows none.
    assert 'id="bore-elements-' not in client.get(f"/sheets/{_create(client, PUMP_SHEET)}").text

    # Another nominal: the answer to the edit refreshes the bore in place (NPS 10 Sch 40: 273.1 mm x 9.27 mm).
    fields = form_fields(page)
    fields["elements.0.size.nominal"] = "10"
    response = client.post("/sheets/3", data=fields, headers=HX)
    assert response.status_code == 200
    oob = re.search(r'<output id="bore-elements-0"[^>]*hx-swap-oob="innerHTML"[^>]*>(.*?)</output>', response.text,
                    re.S)
    assert oob and _text(oob.group(1)).startswith("254.5 mm")
    size = tables.pipe_size("asme-b36.10m", "10", "40")
    assert quantity(size.ID, "diameter") == "254.5 mm"
    # A nominal the table does not have: no bore, and the message says where to look.
    fields["elements.0.size.nominal"] = "11"
    response = client.post("/sheets/3", data=fields, headers=HX)
    oob = re.search(r'<output id="bore-elements-0"[^>]*>(.*?)</output>', response.text, re.S)
    assert _text(oob.group(1)) == "not in the table: see the message below"


@pytest.mark.parametrize("path", ["/", "/sheets/1/history"])
def test_dates_in_lists_are_compact_and_do_not_break(client, path):
    page = client.get(path).text
    stamps = re.findall(r'<time class="stamp" datetime="[^"]+"><span class="stamp-date">(\d{4}-\d\d-\d\d)</span> '
                        r'<span class="stamp-time">(\d\d:\d\d)</span></time>', page)
    assert stamps


def test_home_says_how_to_begin(client):
    lead = _text(re.search(r'<div class="lead home-lead" id="how-to-begin">.*?</div>', client.get("/").text,
                           re.S).group(0))
    assert "Start a sheet" in lead and "from a demo" in lead and "new blank sheet" in lead
    assert "Type the line in flow order" in lead
