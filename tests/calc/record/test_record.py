"""The calculation record as data: worked steps a checker can repeat, references actually used, inputs with SI
values, the fingerprint, the plots and the comparison of two revisions."""

from __future__ import annotations

import ast
import copy
import json
import math
import operator
import re
import xml.etree.ElementTree as ET
from pathlib import Path

import fluids
import pytest
from linetools import gravity_line

from calc import record
from calc.analysis import analyse
from calc.model import sheet as sheet_model
from calc.record import fingerprint as fp
from calc.record import plots

EXAMPLES = Path(__file__).resolve().parents[3] / "examples"


# Scenarios of our own for the checks that depend on exact inputs (the demo sheets may be retuned).
HYDRO = {'format': 'headsheet-sheet',
 'version': 1,
 'header': {'project': 'Test beck hydro (test scenario)',
            'calc_number': 'CB-HY-003',
            'title': 'Penstock and turbine operating point',
            'purpose': "Find the flow and shaft power of the intake-to-powerhouse line at the turbine's "
                       'rated output, and the most the line could deliver.',
            'revision_scheme': 'letters',
            'units': 'SI'},
 'liquid': {'kind': 'water', 'temperature': '6 degC'},
 'site': {'atmospheric_pressure': '96.5 kPa'},
 'settings': {'friction_method': 'colebrook'},
 'start': {'kind': 'reservoir', 'elevation': '412.0 m', 'pressure': '0 kPa', 'outlet_elevation': '410.6 m'},
 'end': {'kind': 'reservoir', 'elevation': '317.2 m', 'pressure': '0 kPa'},
 'elements': [{'kind': 'pipe',
               'label': 'Upper penstock (PE)',
               'length': '640 m',
               'diameter': '',
               'size': {'standard': 'pe-iso4427', 'nominal': '315', 'class': 'SDR17'},
               'material': 'pe100',
               'roughness': '',
               'end_elevation': '352.0 m',
               'profile': [{'chainage': '120 m', 'elevation': '404.5 m'},
                           {'chainage': '260 m', 'elevation': '399.0 m'},
                           {'chainage': '330 m', 'elevation': '400.2 m'},
                           {'chainage': '480 m', 'elevation': '377.0 m'}],
               'fittings': [{'type': 'k', 'count': 1, 'K': '0.3', 'label': 'intake screen'},
                            {'type': 'entrance-sharp', 'count': 1},
                            {'type': 'elbow-45-long-radius', 'count': 4}],
               'rating': '10 bar',
               'restraint': 'anchored'},
              {'kind': 'pipe',
               'label': 'Lower penstock (steel)',
               'length': '185 m',
               'diameter': '',
               'size': {'standard': 'asme-b36.10m', 'nominal': '12', 'class': 'STD'},
               'material': 'steel-commercial',
               'roughness': '',
               'end_elevation': '319.0 m',
               'profile': [{'chainage': '90 m', 'elevation': '334.0 m'}],
               'fittings': [{'type': 'elbow-90-long-radius', 'count': 2},
                            {'type': 'bend-90-rd4', 'count': 1}],
               'rating': '25 bar'},
              {'kind': 'valve', 'label': 'Turbine inlet butterfly valve', 'K': '0.25', 'diameter': ''},
              {'kind': 'turbine',
               'label': 'Turbine-generator',
               'mode': 'power',
               'power': '85 kW',
               'efficiency': '0.84',
               'head': '',
               'curve': []}]}
PUMPED = {'format': 'headsheet-sheet',
 'version': 1,
 'header': {'project': 'Test rising main (test scenario)',
            'calc_number': 'RW-PM-011',
            'title': 'Sump-to-tank rising main duty point',
            'purpose': 'Confirm the duty point of the borehole sump pump against the rising main to Ridgeway '
                       'tank, and its suction conditions.',
            'revision_scheme': 'numbers',
            'units': 'SI'},
 'liquid': {'kind': 'water', 'temperature': '12 degC'},
 'site': {'atmospheric_pressure': '100.1 kPa'},
 'settings': {'friction_method': 'colebrook'},
 'start': {'kind': 'reservoir', 'elevation': '52.0 m', 'pressure': '0 kPa', 'outlet_elevation': '50.6 m'},
 'end': {'kind': 'reservoir', 'elevation': '121.5 m', 'pressure': '0 kPa'},
 'elements': [{'kind': 'pipe',
               'label': 'Suction',
               'length': '9 m',
               'diameter': '',
               'size': {'standard': 'asme-b36.10m', 'nominal': '6', 'class': '40'},
               'material': 'steel-commercial',
               'roughness': '',
               'end_elevation': '53.4 m',
               'profile': [],
               'fittings': [{'type': 'entrance-rounded', 'count': 1},
                            {'type': 'elbow-90-long-radius', 'count': 2},
                            {'type': 'valve-gate-open', 'count': 1}]},
              {'kind': 'pump',
               'label': 'Duty pump',
               'mode': 'curve',
               'speed_ratio': '1',
               'head': '',
               'curve': [{'flow': '0 L/s', 'head': '96 m', 'efficiency': '', 'npsh_required': ''},
                         {'flow': '10 L/s', 'head': '94 m', 'efficiency': '0.52', 'npsh_required': '1.8 m'},
                         {'flow': '20 L/s', 'head': '89 m', 'efficiency': '0.68', 'npsh_required': '2.2 m'},
                         {'flow': '30 L/s', 'head': '81 m', 'efficiency': '0.74', 'npsh_required': '2.9 m'},
                         {'flow': '40 L/s', 'head': '70 m', 'efficiency': '0.72', 'npsh_required': '3.9 m'},
                         {'flow': '50 L/s', 'head': '55 m', 'efficiency': '0.62', 'npsh_required': '5.2 m'}]},
              {'kind': 'pipe',
               'label': 'Pump discharge',
               'length': '12 m',
               'diameter': '',
               'size': {'standard': 'asme-b36.10m', 'nominal': '6', 'class': '40'},
               'material': 'steel-commercial',
               'roughness': '',
               'end_elevation': '54.0 m',
               'profile': [],
               'fittings': [{'type': 'valve-check-swing', 'count': 1},
                            {'type': 'valve-gate-open', 'count': 1},
                            {'type': 'elbow-90-standard-flanged', 'count': 2}],
               'rating': '16 bar'},
              {'kind': 'pipe',
               'label': 'Rising main',
               'length': '2100 m',
               'diameter': '155 mm',
               'size': None,
               'material': 'ductile-iron-cement-lined',
               'roughness': '',
               'end_elevation': '120.0 m',
               'profile': [{'chainage': '400 m', 'elevation': '66 m'},
                           {'chainage': '900 m', 'elevation': '95 m'},
                           {'chainage': '1250 m', 'elevation': '88 m'},
                           {'chainage': '1700 m', 'elevation': '112 m'}],
               'fittings': [{'type': 'elbow-45-long-radius', 'count': 6},
                            {'type': 'valve-gate-open', 'count': 2},
                            {'type': 'exit', 'count': 1}],
               'wall_thickness': '6 mm',
               'rating': '25 bar'}]}


def demo(name: str) -> dict:
    if name == "hydro-penstock":
        return copy.deepcopy(HYDRO)
    if name == "pumped-main":
        return copy.deepcopy(PUMPED)
    return json.loads((EXAMPLES / f"{name}.json").read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def hydro():
    return analyse(demo("hydro-penstock"))


@pytest.fixture(scope="module")
def pumped():
    return analyse(demo("pumped-main"))


@pytest.fixture(scope="module")
def cooling():
    return analyse(demo("cooling-water"))


# ----------------------------------------------------------------------------- evaluating a substituted line

_SUP = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻", "0123456789-")
_OPS = {ast.Add: operator.add, ast.Sub: operator.sub, ast.Mult: operator.mul, ast.Div: operator.truediv,
        ast.Pow: operator.pow, ast.USub: operator.neg}


def _eval(node):
    if isinstance(node, ast.Expression):
        return _eval(node.body)
    if isinstance(node, ast.Constant) and isinstance(node.value, (int, float)):
        return float(node.value)
    if isinstance(node, ast.Name) and node.id == "pi":
        return math.pi
    if isinstance(node, ast.BinOp) and type(node.op) in _OPS:
        return _OPS[type(node.op)](_eval(node.left), _eval(node.right))
    if isinstance(node, ast.UnaryOp) and type(node.op) in _OPS:
        return _OPS[type(node.op)](_eval(node.operand))
    if isinstance(node, ast.Call) and isinstance(node.func, ast.Name) and node.func.id == "sqrt" and len(node.args) == 1:
        return math.sqrt(_eval(node.args[0]))  # the calculator's square-root key
    raise ValueError(f"not plain arithmetic: {ast.dump(node)}")


def calculator(text: str) -> float:
    """What a checker's calculator gives for a substituted line such as '= π × 0.2776² / 4'."""
    expr = text.strip().removeprefix("=").strip()
    expr = re.sub(r"×10([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)", lambda m: "e" + m.group(1).translate(_SUP), expr)
    expr = expr.replace("×", "*").replace("²", "**2").replace("³", "**3").replace("^", "**").replace("π", "pi")
    expr = expr.replace("√(", "sqrt(").replace("−", "-")  # the printed minus sign is the calculator's minus key
    return _eval(ast.parse(expr, mode="eval"))


def printed(result: str) -> float:
    return float(result.replace("×10", "e").translate(_SUP))


def _arithmetic_steps(rec):
    for g in rec.steps:
        for s in g.steps:
            if s.substituted.startswith("= ") and s.value is not None:
                yield g, s


# ----------------------------------------------------------------------------- worked steps

@pytest.mark.parametrize("name", ["hydro-penstock", "pumped-main", "cooling-water"])
def test_every_substituted_line_gives_the_printed_result_on_a_calculator(name):
    # The record's promise to a checker: the numbers substituted (5 figures) reproduce the printed
    # result (4 figures). Tolerance: half a unit in the 4th figure plus the rounding of the inputs.
    rec = record.build(analyse(demo(name)))
    checked = 0
    for g, s in _arithmetic_steps(rec):
        if s.symbol == "E":  # the balance residual is round-off, checked below
            continue
        value = calculator(s.substituted)
        assert value == pytest.approx(s.value, rel=1e-3, abs=1e-9), (g.title, s.symbol, s.substituted)
        assert value == pytest.approx(printed(s.result), rel=1e-3, abs=1e-9), (g.title, s.symbol, s.result)
        checked += 1
    assert checked >= 20


@pytest.mark.parametrize("name", ["hydro-penstock", "pumped-main", "cooling-water"])
def test_each_runs_wave_speed_and_surge_are_worked_as_korteweg_and_joukowsky_give_them(name):
    # Korteweg's wave speed with Wylie and Streeter's restraint factors (thin wall c1 = 1 - nu^2 anchored,
    # 1 with expansion joints, 1 - nu/2 anchored upstream; thick wall 2 (e/D)(1 + nu) + that / (1 + e/D), for
    # D/e under 25; from memory), written again here
    # from the run's inputs; Joukowsky's rise a V / g; the period 2 sum L/a.
    a_ = analyse(demo(name))
    rec = record.build(a_)
    group = next(g for g in rec.steps if g.kind == "surge")
    speeds = [s for s in group.steps if s.symbol == "a"]
    rises = [s for s in group.steps if s.symbol == "ΔH"]
    runs = [(el, d) for el, d in zip(a_.line.elements, a_.solution.design["elements"]) if el.kind == "pipe"]
    assert len(speeds) == len(rises) == len(runs)
    K, rho = a_.line.liquid.bulk_modulus, a_.line.liquid.rho
    travel = 0.0
    for (el, d), s_a, s_h in zip(runs, speeds, rises):
        if el.wave_speed is not None:
            a = el.wave_speed
        else:
            nu, E, e, D = el.material.nu_poisson, el.material.E, el.wall, el.D
            ring = {"anchored": 1 - nu ** 2, "expansion_joints": 1.0, "anchored_upstream": 1 - nu / 2}[el.restraint]
            c1 = 2 * e / D * (1 + nu) + ring / (1 + e / D) if D / e < 25 else ring
            a = math.sqrt(K / rho) / math.sqrt(1 + c1 * K * D / (E * e))
        assert s_a.value == pytest.approx(a, rel=1e-12)
        assert s_h.value == pytest.approx(a * abs(d["V"]) / 9.80665, rel=1e-12)
        travel += el.L / a
    T = next(s for s in group.steps if s.symbol == "T")
    assert T.value == pytest.approx(2 * travel, rel=1e-12)


def test_results_are_printed_at_four_significant_figures(hydro):
    rec = record.build(hydro)
    for _, s in _arithmetic_steps(rec):
        if s.symbol in ("E",) or abs(s.value) < 1e-9:
            continue
        digits = re.sub(r"×10.*$", "", s.result).replace("-", "").replace(".", "").lstrip("0")
        assert len(digits) >= 4 or abs(s.value) >= 1e4, (s.symbol, s.result)
        assert printed(s.result) == pytest.approx(s.value, rel=5e-4), (s.symbol, s.result)


def test_pipe_steps_agree_with_an_independent_calculation(hydro):
    # Reference: fluids (Colebrook solved by its own method; Darcy-Weisbach as in Moody 1944),
    # tolerance 1e-9 relative: both solve the same equation to machine precision.
    rec = record.build(hydro)
    point = hydro.solution.design
    liquid = hydro.line.liquid
    run = hydro.line.elements[0]
    d = point["elements"][0]
    group = next(g for g in rec.steps if g.kind == "pipe")
    steps = {s.symbol: s for s in group.steps}
    Q = point["Q"]
    V = Q / (math.pi * run.D ** 2 / 4)
    Re = V * run.D * liquid.rho / liquid.mu
    f = fluids.friction.Colebrook(Re, run.eps / run.D)
    assert steps["V"].value == pytest.approx(V, rel=1e-12)
    assert steps["Re"].value == pytest.approx(Re, rel=1e-12)
    assert steps["f"].value == pytest.approx(f, rel=1e-9)
    assert steps["h_f"].value == pytest.approx(f * run.L / run.D * V ** 2 / (2 * 9.80665), rel=1e-9)
    assert steps["h"].value == pytest.approx(d["head_change"], rel=1e-12)
    # The check line shows both sides of Colebrook's equation equal at the printed f.
    lhs, rhs = re.findall(r"= ([0-9.]+); right side = ([0-9.]+)", steps["f"].also)[0]
    assert lhs == rhs


def test_turbine_steps_follow_p_equals_eta_rho_g_q_h(hydro):
    # P = eta rho g Q H (standard turbine power relation); the set power is 85 kW at efficiency 0.84.
    rec = record.build(hydro)
    g = next(g for g in rec.steps if g.kind == "turbine")
    steps = {s.symbol: s for s in g.steps}
    Q = hydro.solution.design["Q"]
    rho = hydro.line.liquid.rho
    H = 85e3 / (0.84 * rho * 9.80665 * Q)
    assert steps["H_t"].value == pytest.approx(H, rel=1e-12)
    assert steps["P"].value == pytest.approx(85e3, rel=1e-12)
    # The largest power, worked at the flow found: P_max = eta rho g Q* H_a, and Q* is where scipy's bounded
    # scalar search (an independent optimiser) puts the top of eta rho g Q H_a(Q), H_a being the head the
    # line leaves the turbine (its losses are checked against fluids elsewhere in this file).
    from scipy.optimize import minimize_scalar

    from calc.steady.series import make_residual
    left = make_residual(hydro.line, skip=3)
    best = minimize_scalar(lambda q: -0.84 * rho * 9.80665 * q * left(q), bounds=(0.05, 0.6), method="bounded",
                           options={"xatol": 1e-9})
    assert steps["Q*"].value == pytest.approx(best.x, rel=1e-4)
    assert steps["P_max"].value == pytest.approx(-best.fun, rel=1e-9)
    assert steps["P_max"].value == pytest.approx(0.84 * rho * 9.80665 * steps["Q*"].value * steps["H_a"].value,
                                                 rel=1e-12)


def test_energy_balance_closes(hydro, pumped, cooling):
    for a in (hydro, pumped, cooling):
        rec = record.build(a)
        balance = next(g for g in rec.steps if g.kind == "balance")
        E = next(s for s in balance.steps if s.symbol == "E")
        assert abs(E.value) < 1e-9


# ----------------------------------------------------------------------------- references and inputs

def _citations(rec) -> str:
    return "\n".join(r.citation for r in rec.references)


def test_references_are_the_sources_used_and_only_those(hydro, pumped, cooling):
    h = _citations(record.build(hydro))
    for needle in ("Colebrook", "IAPWS", "ISO 4427", "ASME B36.10M", "Moody", "Darby", "Idelchik", "9.80665",
                   "Korteweg", "Joukowsky"):
        assert needle in h, needle
    c = _citations(record.build(cooling))
    assert "ISO 4427" not in c  # no PE pipe on the cooling-water sheet
    assert "ASME B36.10M" in c
    p = _citations(record.build(pumped))
    assert "Rennels" in p  # the pipe exit's K comes from Rennels and Hudson (fitting table)
    assert "ISO 4427" not in p


def test_reference_numbers_are_unique_and_every_cited_number_exists(hydro):
    rec = record.build(hydro)
    numbers = [r.number for r in rec.references]
    assert numbers == list(range(1, len(numbers) + 1))
    citations = [r.citation for r in rec.references]
    assert len(set(citations)) == len(citations)
    cited = set()
    for g in rec.steps:
        for s in g.steps:
            cited |= {int(n) for n in re.findall(r"\[(\d+)\]", s.ref)}
    for t in rec.inputs:
        for row in t.rows:
            cited |= {int(n) for n in re.findall(r"\[(\d+)\]", row[-1])}
    assert cited and cited <= set(numbers)


def test_another_friction_method_cites_its_own_author():
    doc = demo("pumped-main")
    doc["settings"]["friction_method"] = "haaland_1983"
    rec = record.build(analyse(doc))
    assert rec.references[0].citation.startswith("Haaland")
    assert "Colebrook, C. F. (1939)" not in _citations(rec)


def test_inputs_show_the_text_as_typed_its_si_value_and_its_source(hydro, cooling):
    tables = record.build(hydro).inputs
    runs = next(t for t in tables if t.caption == "Pipe runs")
    first = runs.rows[0]
    assert first[1] == "640 m"  # as typed, which reads as its SI value
    # ISO 4427-2: PE 315 SDR 17, e_min 18.7 mm, e_max 20.7 mm (ISO 11922-1 grade V), mean wall 19.7 mm,
    # bore 315 - 2 x 19.7 = 275.6 mm; the size table's standards cited by number.
    assert re.fullmatch(r"315 SDR17 = 0\.2756 m (\[\d+\])+", first[2]), first[2]
    assert first[3].startswith("pe100 = ") and re.search(r"\[\d+\]$", first[3])
    assert "bore from the size table" in runs.note and "material table" in runs.note
    # US customary as typed: 38 psi = 38 x 6894.757 Pa (psi by definition, NIST SP 811) = 262001 Pa.
    us_rows = [row for t in record.build(cooling).inputs for row in t.rows]
    assert any(r[1:] == ["Pressure (gauge)", "38 psi", "262001 Pa", "typed"] for r in us_rows)
    us_runs = next(t for t in record.build(cooling).inputs if t.caption == "Pipe runs")
    assert any(" ft = " in r[1] and r[1].endswith(" m") for r in us_runs.rows)  # feet typed, metres used


# ----------------------------------------------------------------------------- fingerprint

def test_fingerprint_is_reproducible_and_ignores_key_order(hydro):
    doc = demo("hydro-penstock")
    reordered = json.loads(json.dumps(doc, sort_keys=True))
    assert fp.fingerprint(hydro, "1") == fp.fingerprint(analyse(copy.deepcopy(doc)), "1")
    assert fp.fingerprint(hydro, "1") == fp.fingerprint(analyse(reordered), "1")
    assert fp.fingerprint(hydro, "1") != fp.fingerprint(hydro, "2")
    assert re.fullmatch(r"[0-9a-f]{64}", fp.fingerprint(hydro))


def _changed(value):
    if isinstance(value, bool):
        return not value
    if isinstance(value, (int, float)):
        return value + 1
    if isinstance(value, str):
        return value + " " if not value.strip() else value.replace(value.strip(), value.strip() + "0", 1)
    return "x"


def _set(doc, path, value):
    keys = [int(k) if k.isdigit() else k for k in path.split(".")]
    node = doc
    for k in keys[:-1]:
        node = node[k]
    node[keys[-1]] = value


@pytest.mark.parametrize("name", ["hydro-penstock", "pumped-main"])
def test_fingerprint_changes_when_any_input_changes(name):
    doc = demo(name)
    base = fp.fingerprint(analyse(doc), "1")
    seen = {base}
    for path, value in record.flatten(doc).items():
        if isinstance(value, list):
            continue
        other = copy.deepcopy(doc)
        _set(other, path, _changed(value))
        f = fp.fingerprint(analyse(other), "1")
        assert f != base, path
        seen.add(f)
    assert len(seen) > 50


def test_normalise_and_group_round_trip():
    f = "ab" * 32
    assert fp.normalise(fp.grouped(f).upper()) == f


# ----------------------------------------------------------------------------- record shape

def test_revision_labels_letters_and_numbers():
    assert [record.revision_label(i) for i in (0, 1, 25, 26, 27, 701, 702)] == ["A", "B", "Z", "AA", "AB", "ZZ", "AAA"]
    assert [record.revision_label(i, "numbers") for i in (0, 1, 10)] == ["0", "1", "10"]


def test_header_signoff_and_draft(hydro):
    fprint = record.build(hydro).fingerprint
    made_here = {"fingerprint": fprint, "login": "ap", "identified": "password confirmed at signing"}
    meta = record.Meta(sheet_id=4, store_revision=7, label_index=1, signatures=[
        {"role": "preparer", "name": "A. Preparer", "comment": "", "signed": "2026-01-02T03:04:05", **made_here}])
    rec = record.build(hydro, meta)
    assert rec.header["revision"] == "B" and rec.header["calc_number"] == "CB-HY-003"
    assert [s.done for s in rec.signoff] == [True, False, False] and not rec.signed
    assert rec.signoff[0].status == "valid" and "Account 'ap' on this server" in rec.signoff[0].how
    meta.signatures += [{"role": "checker", "name": "B", "signed": "x", **made_here},
                        {"role": "approver", "name": "C", "signed": "y", **made_here}]
    assert record.build(hydro, meta).signed


@pytest.mark.parametrize("change,status", [
    ({"fingerprint": "0" * 64}, "broken"),  # not this revision's: never valid, whatever else it says
    ({"identified": ""}, "typed"),  # a name typed before accounts existed
    ({"origin": "an export of sheet 3"}, "imported"),
])
def test_a_signature_that_does_not_stand_keeps_the_draft_stamp(hydro, change, status):
    fprint = record.build(hydro).fingerprint
    good = {"fingerprint": fprint, "login": "x", "identified": "password confirmed at signing", "signed": "t"}
    sigs = [{"role": r, "name": r.title(), **good} for r in ("preparer", "checker", "approver")]
    sigs[1].update(change)
    rec = record.build(hydro, record.Meta(signatures=sigs))
    assert [s.status for s in rec.signoff] == ["valid", status, "valid"] and not rec.signed
    # A signature made under another program version is checked against that version's fingerprint.
    from calc.record import fingerprint as fp

    old = {**good, "version": "0.0.1", "fingerprint": fp.fingerprint(hydro, "0.0.1")}
    rec = record.build(hydro, record.Meta(signatures=[{"role": "preparer", "name": "P", **old}]))
    assert rec.signoff[0].status == "valid"


def test_findings_are_grouped_worst_first(hydro):
    from calc.review.findings import SEVERITIES

    rec = record.build(hydro)
    order = [SEVERITIES.index(s) for s in rec.findings]
    # every finding of the checks, but the general caution that local codes govern (the disclaimer says it)
    # and information the working or results print already (a duty point, the pipeline period, a transient
    # peak within rating), which the record names instead
    from calc.record.results import WORKED_ELSEWHERE
    shown = [f for f in hydro.findings if f.code != "general-codes"
             and not (f.severity == "info" and f.code in WORKED_ELSEWHERE)]
    # the cautions every line carries are one paragraph, each named in it with its source
    general = [f for f in shown if f.code.startswith("general-") and f.code != "general-surge"]
    assert len(general) >= 2
    merged = next(x for x in rec.findings["caution"] if x["title"] == "General cautions")
    assert all(f"{f.title}: {f.message}" in merged["message"] for f in general)
    assert order == sorted(order)
    assert sum(len(v) for v in rec.findings.values()) == len(shown) - len(general) + 1 < len(hydro.findings)
    assert any("duty point" in t for t in rec.findings_elsewhere)
    printed = {x["title"] for xs in rec.findings.values() for x in xs}
    assert not any(f.severity == "info" and f.code in WORKED_ELSEWHERE and f.title in printed for f in hydro.findings)
    assert DISCLAIMER_WORDS <= set(rec.disclaimer.lower().split())
    assert {"codes", "standards"} <= set(rec.disclaimer.lower().replace(",", "").split())


DISCLAIMER_WORDS = {"does", "not", "replace", "licensed", "engineer"}


def test_uncertainty_band_is_shown(pumped):
    rec = record.build(pumped)
    assert rec.uncertainty and rec.uncertainty[0].rows[0][0] == "All factors together"
    lo, nominal, hi = (printed(c.split()[0]) for c in rec.uncertainty[0].rows[0][1:])
    assert lo <= nominal <= hi


def test_a_sheet_with_errors_has_a_record_of_its_errors_only():
    doc = demo("pumped-main")
    doc["elements"][0]["length"] = "-3 m"
    rec = record.build(analyse(doc))
    assert rec.errors and rec.errors[0]["path"] == "elements.0.length"
    assert rec.steps == [] and rec.plots == [] and len(rec.fingerprint) == 64


def test_a_turbine_asked_for_too_much_power_records_why_there_is_no_point():
    doc = demo("hydro-penstock")
    doc["elements"][-1]["power"] = "400 kW"
    a = analyse(doc)
    rec = record.build(a)
    assert a.solution.points == [] and "cannot deliver" in rec.no_point
    assert [p.key for p in rec.plots] == ["curves", "power"]


# ----------------------------------------------------------------------------- plots

def _svg(plot) -> ET.Element:
    return ET.fromstring(plot.svg)


def test_plots_are_plain_well_formed_svg_with_text_as_text(hydro, pumped):
    for a in (hydro, pumped):
        for plot in record.build(a).plots:
            root = _svg(plot)
            tags = {el.tag.split("}")[1] for el in root.iter()}
            assert tags <= {"svg", "title", "line", "polyline", "rect", "circle", "text"}, tags
            assert "foreignObject" not in plot.svg and "<image" not in plot.svg and "href" not in plot.svg
            assert len([el for el in root.iter() if el.tag.endswith("text")]) > 10


def test_curves_plot_marks_every_operating_point_and_the_power_maximum(hydro):
    kinds = {p.key: p for p in plots.all_plots(hydro)}
    assert set(kinds) == {"profile", "curves", "power"}
    labels = [el.text for el in _svg(kinds["curves"]).iter() if el.tag.endswith("text")]
    second = "2" if hydro.solution.points[1]["attainable"] else "2 (cannot occur)"
    assert "1 (design)" in labels and second in labels
    power_labels = [el.text for el in _svg(kinds["power"]).iter() if el.tag.endswith("text")]
    assert "max" in power_labels


def test_profile_plot_spans_the_chainage_and_marks_machines(hydro):
    svg = _svg(plots.profile_plot(hydro))
    texts = [el.text for el in svg.iter() if el.tag.endswith("text")]
    assert "T1" in texts and "V1" in texts
    assert "Chainage along the line [m]" in texts
    ticks = [float(t) for t in texts if t and re.fullmatch(r"-?\d+(\.\d+)?", t)]
    assert max(ticks) >= 825.0  # the line is 640 + 185 m long


def test_user_labels_are_escaped_and_cut_in_plots():
    doc = demo("hydro-penstock")
    doc["elements"][-1]["label"] = '<script>alert("x")</script> & ' + "Ω" * 80
    for plot in plots.all_plots(analyse(doc)):
        assert "<script>" not in plot.svg
        root = _svg(plot)  # still well formed
        for el in root.iter():
            if el.tag.endswith("text") and el.text and "script" in el.text:
                assert el.text.startswith('<script>alert("x")') and len(el.text) <= 60


def test_nice_ticks_cover_the_range():
    for lo, hi in ((0, 1), (317.2, 412.0), (-5.5, 3.2), (1e-4, 3e-4), (0, 118.9)):
        ticks = plots.nice_ticks(lo, hi)
        assert ticks[0] <= lo and ticks[-1] >= hi and 3 <= len(ticks) <= 12


def test_us_sheet_plots_in_us_units(cooling):
    texts = [el.text for p in record.build(cooling).plots for el in _svg(p).iter() if el.tag.endswith("text")]
    assert "Flow [gpm]" in texts and "Chainage along the line [ft]" in texts


# ----------------------------------------------------------------------------- comparing revisions

def test_input_changes_name_each_field_and_compare_gives_before_and_after():
    a = demo("pumped-main")
    b = copy.deepcopy(a)
    b["elements"][3]["length"] = "2400 m"
    b["header"]["title"] = "Longer main"
    changes = record.input_changes(a, b)
    assert {c["path"] for c in changes} == {"elements.pipe-3.length", "header.title"}  # ids given by order
    length = next(c for c in changes if c["path"] == "elements.pipe-3.length")
    assert length["before"] == "2100 m" and length["after"] == "2400 m"
    assert length["where"] == "element 4 (pipe «Rising main») › length"
    table = record.compare(analyse(a), analyse(b), "SI")
    flow = next(r for r in table.rows if r[0] == "Flow at the design point")
    # A longer main needs more head, so the pump delivers less.
    assert printed(flow[2].split()[0]) < printed(flow[1].split()[0]) and flow[3].startswith("-")


def test_input_changes_match_elements_by_id_so_a_move_is_one_change():
    a = sheet_model.ensure_ids(demo("pumped-main"))
    b = copy.deepcopy(a)
    at = next(i for i, e in enumerate(b["elements"]) if e["kind"] == "pump")
    assert at > 0
    pump = b["elements"].pop(at)
    b["elements"].insert(at - 1, pump)  # the pump moves up one place, nothing else changes
    moved = record.input_changes(a, b)
    assert len(moved) == 1 and moved[0]["path"] == f"elements.{pump['id']}"
    assert moved[0]["after"] == f"moved to position {at}" and moved[0]["where"].startswith(f"element {at} (pump")
    # Moved and changed: the change is reported against the element's own fields, not its new neighbour's.
    b["elements"][at - 1]["label"] += " (renamed)"
    paths = {c["path"] for c in record.input_changes(a, b)}
    assert paths == {f"elements.{pump['id']}", f"elements.{pump['id']}.label"}
    # An element removed and one added are one change each, named in words.
    c = copy.deepcopy(a)
    gone = c["elements"].pop(0)
    c["elements"].append({"kind": "valve", "label": "Isolating", "K": "0.2", "diameter": ""})
    words = {(x["where"], x["before"], x["after"]) for x in record.input_changes(a, c)}
    assert any(w[0].startswith("element 1 (") and w[2] is None for w in words)  # removed
    assert (f"element {len(c['elements'])} (valve «Isolating»)", None, f"added at position {len(c['elements'])}") in words
    assert gone["id"] not in {e.get("id") for e in c["elements"]}


def test_curves_plot_dashes_a_machine_curve_past_its_typed_points(hydro):
    from calc.analysis import analyse
    
    doc = gravity_line()
    doc["start"].update({"elevation": "100 m", "outlet_elevation": "98 m"})
    doc["end"].update({"elevation": "110 m"})
    doc["elements"] = [
        {"kind": "pump", "label": "P", "mode": "curve", "curve": [
            {"flow": "0 L/s", "head": "30 m"}, {"flow": "20 L/s", "head": "27 m"}, {"flow": "30 L/s", "head": "20 m"}]},
        {"kind": "pipe", "label": "M", "length": "300 m", "diameter": "150 mm", "material": "steel-commercial",
         "roughness": "", "end_elevation": "108 m", "fittings": []}]
    svg = _svg([p for p in plots.all_plots(analyse(doc)) if p.key == "curves"][0])
    dashed = [el for el in svg.iter() if el.tag.endswith("polyline") and el.get("stroke-dasharray") == "5 4"]
    assert dashed  # the pump curve beyond 30 L/s
    texts = [el.text for el in svg.iter() if el.tag.endswith("text")]
    assert any("extrapolated" in (t or "") for t in texts) and "Typed curve points" in texts


def test_npsh_available_is_worked_from_the_sump_by_the_energy_equation(pumped):
    # NPSHA = (p_atm - p_v)/(rho g) + H_inlet - z_inlet (ANSI/HI 9.6.1's definition; the energy equation from
    # the sump surface to the pump inlet: H_inlet = the sump's total head less the suction run's head taken).
    # Vapour pressure from the iapws package's IAPWS-97 saturation line at the sump's 12 degC.
    from iapws import IAPWS97
    rec = record.build(pumped)
    g = next(g for g in rec.steps if g.kind == "pump")
    steps = {s.symbol: s for s in g.steps}
    p = pumped.solution.design
    rho = pumped.line.liquid.rho
    p_v = IAPWS97(T=285.15, x=0).P * 1e6
    inlet = next(s for s in p["profile"] if s["element"] == 1)
    H_inlet = p["head_start"] - p["elements"][0]["head_change"]
    expected = (pumped.line.p_atm - p_v) / (rho * 9.80665) + H_inlet - inlet["elevation"]
    assert steps["NPSH_a"].value == pytest.approx(expected, rel=1e-6)
    assert calculator(steps["NPSH_a"].substituted) == pytest.approx(steps["NPSH_a"].value, rel=1e-3)
    # NPSH required is read off the typed points with the same working as the head: its curve position and
    # its Hermite cubic, not a bare number.
    assert steps["NPSH_r"].substituted.startswith("= (2 × ")
    assert sum(1 for s in g.steps if s.symbol == "t") == 1  # the curve position worked once, used thrice


def test_three_k_nominal_size_is_worked_from_the_schedule_40_bores(hydro):
    # Darby's D_n for the 3-K constants: the NPS of Schedule 40 steel of the same bore, linear in the bore
    # between the two bracketing sizes. Bores from ASME B36.10M's inch columns (from memory): NPS 10 OD 10.750
    # in, wall 0.365 in; NPS 12 OD 12.750 in, wall 0.406 in; NPS 14 OD 14.000 in, wall 0.438 in. The program
    # stores the metric columns, so the two agree to the rounding of those (0.1 %).
    bores = [(10.0, (10.750 - 2 * 0.365) * 0.0254), (12.0, (12.750 - 2 * 0.406) * 0.0254),
             (14.0, (14.000 - 2 * 0.438) * 0.0254)]
    rec = record.build(hydro)
    rows = [s for g in rec.steps if g.kind == "pipe" for s in g.steps if s.symbol == "D_n"]
    assert len(rows) == 2
    for s, D in zip(rows, (hydro.line.elements[0].D, hydro.line.elements[1].D)):
        (n0, d0), (n1, d1) = next((a, b) for a, b in zip(bores, bores[1:]) if a[1] <= D <= b[1])
        assert s.value == pytest.approx(n0 + (n1 - n0) * (D - d0) / (d1 - d0), rel=1e-3)
        assert calculator(s.substituted) == pytest.approx(s.value, rel=1e-3)
        assert f"NPS {n0:g}" in s.also and f"NPS {n1:g}" in s.also


def test_what_the_record_says_once_is_named_where_it_is_not_repeated(pumped):
    # The pumped main's trip parts the column in two runs: their warnings say what the general pump-trip
    # caution says, run by run, so the record lists the warnings and names the caution it leaves out; its
    # surge screening is one table, each run's screening and rating information not repeated as paragraphs.
    rec = record.build(pumped)
    listed = {x["title"] for xs in rec.findings.values() for x in xs}
    codes = {f.code for f in pumped.findings}
    assert {"surge-pump-trip", "surge-column-separation", "surge-screen"} <= codes
    assert "Pump trip: down-surge" not in listed
    assert sum("column separation likely" in t for t in listed) == 2
    assert not any(t.endswith("surge screening") for t in listed)
    assert any("pump trip" in t for t in rec.findings_elsewhere)
    table = rec.surge_screen
    assert [row[0] for row in table.rows] == ["Suction", "Pump discharge", "Rising main"]
    from calc.record.text import shown
    rows = {row[0]: row for row in table.rows}
    rated = [f for f in pumped.findings if f.code in ("surge-rating", "surge-no-rating")]
    assert len(rated) == 3
    for f in rated:  # steady + rise, as the rating finding has it
        assert rows[pumped.line.elements[f.element].label][4] == shown(f.value, "pressure", "SI")
