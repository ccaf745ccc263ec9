"""Checks of calc.friction against published values, the `fluids` library and an exact Colebrook solution."""

from __future__ import annotations

import math
from decimal import Decimal, localcontext

import fluids.friction as fl
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from calc import friction as fr
from calc.friction import (
    METHODS,
    RE_LAMINAR,
    RE_TURBULENT,
    colebrook,
    colebrook_array,
    friction_detail,
    friction_factor,
    friction_factor_array,
    regime,
)

# Grid over the turbulent range of Moody's (1944) chart, smooth pipe included.
RE_GRID = np.logspace(math.log10(4e3), 8, 41)
ED_GRID = [0.0, 1e-7, 1e-6, 1e-5, 5e-5, 1e-4, 5e-4, 1e-3, 5e-3, 1e-2, 2e-2, 0.05]

EXPLICIT = ["swamee_jain_1976", "haaland_1983", "churchill_1977", "serghides_1984"]
# The same published equations as implemented in the `fluids` library (Bell, C.,
# fluids, friction module), an independent implementation.
FLUIDS_FORM = {
    "swamee_jain_1976": fl.Swamee_Jain_1976,
    "haaland_1983": fl.Haaland,
    "churchill_1977": fl.Churchill_1977,
    "serghides_1984": fl.Serghides_1,
}


def colebrook_exact(Re: float, eD: float) -> float:
    """Colebrook (1939) solved by Newton's method in 40-digit decimal arithmetic.

    The residual g(x) = x + 2 log10(eD/3.7 + 2.51 x / Re), x = 1/sqrt(f), is
    increasing and concave, so Newton's iterates from x = 1 (left of every
    physical root) rise monotonically to the root without overshooting.
    """
    with localcontext() as ctx:
        ctx.prec = 40
        a = Decimal(eD) / Decimal("3.7")
        b = Decimal("2.51") / Decimal(Re)
        ln10 = Decimal(10).ln()
        x = Decimal(1)
        for _ in range(100):
            s = a + b * x
            dx = (x + 2 * s.ln() / ln10) / (1 + 2 * b / (s * ln10))
            x -= dx
            if abs(dx) < Decimal("1e-30"):
                break
        else:
            raise AssertionError("reference Newton iteration did not converge")
        return float(1 / (x * x))


# --- published point values -------------------------------------------------------

@pytest.mark.parametrize(
    "Re, eD, f_ref, tol",
    [
        # Colebrook (1939), value tabulated in the `fluids` documentation (Colebrook example).
        (1e5, 1e-4, 0.0185139, 5e-8),
        # Values computed with a reference library, project guide references.md [computed].
        (1e6, 1e-5, 0.0118695, 5e-8),
        (4000.0, 1e-3, 0.0409104, 5e-8),
        (1e7, 0.0, 0.0081027, 5e-8),
    ],
)
def test_colebrook_published_values(Re, eD, f_ref, tol):
    # Tolerance: half a unit in the last published digit.
    assert abs(colebrook(Re, eD) - f_ref) <= tol


def test_colebrook_exact_to_machine_precision():
    # Exact Colebrook (1939) root by decimal Newton; Clamond (2009) states his two-step
    # iteration reaches machine precision, we require relative error < 1e-12.
    worst = 0.0
    for Re in np.logspace(math.log10(RE_LAMINAR), 8, 25):
        for eD in ED_GRID:
            exact = colebrook_exact(float(Re), eD)
            worst = max(worst, abs(colebrook(float(Re), eD) / exact - 1.0))
    assert worst < 1e-12


def test_colebrook_satisfies_its_equation():
    # Residual of Colebrook's equation in double precision: a root error dx gives
    # a residual of about dx, and dx/x = -(1/2) df/f, so |residual| / x < 1e-13
    # means a relative error in f well under 1e-12.
    for Re in RE_GRID:
        for eD in ED_GRID:
            x = 1.0 / math.sqrt(colebrook(float(Re), eD))
            r = x + 2.0 * math.log10(eD / 3.7 + 2.51 * x / Re)
            assert abs(r) / x < 1e-13, (Re, eD, r)


def test_colebrook_matches_fluids():
    # fluids.friction.Colebrook (Lambert-W closed form) and Clamond (same 2009 paper,
    # their own code): relative difference < 1e-10 over the chart's turbulent range.
    for Re in RE_GRID:
        for eD in ED_GRID:
            f = colebrook(float(Re), eD)
            assert f == pytest.approx(fl.Colebrook(float(Re), eD), rel=1e-10, abs=0)
            assert f == pytest.approx(fl.Clamond(float(Re), eD), rel=1e-10, abs=0)


def test_colebrook_array_matches_scalar():
    for eD in ED_GRID:
        fa = colebrook_array(RE_GRID, eD)
        fs = np.array([colebrook(float(Re), eD) for Re in RE_GRID])
        np.testing.assert_allclose(fa, fs, rtol=1e-14, atol=0)


# --- explicit forms -----------------------------------------------------------------

# fluids writes Swamee and Jain's 5.74/Re^0.9 as (6.97/Re)^0.9, and 6.97^0.9 = 5.73997;
# that rounding moves f by under 2e-6 relative (most at low Re on smooth pipe), so that
# one form is held to 5e-6; the others are the same formula and held to 1e-9.
FLUIDS_RTOL = {"swamee_jain_1976": 5e-6, "haaland_1983": 1e-9, "churchill_1977": 1e-9, "serghides_1984": 1e-9}


@pytest.mark.parametrize("key", EXPLICIT)
def test_explicit_forms_match_fluids(key):
    ours = METHODS[key]
    ref = FLUIDS_FORM[key]
    rtol = FLUIDS_RTOL[key]
    for Re in RE_GRID:
        for eD in ED_GRID:
            f = ours.scalar(float(Re), eD)
            assert f == pytest.approx(ref(float(Re), eD), rel=rtol, abs=0), (key, Re, eD)
        np.testing.assert_allclose(
            ours.array(RE_GRID, eD), [ref(float(Re), eD) for Re in RE_GRID], rtol=rtol, atol=0
        )


# Largest departure from Colebrook over each form's range of METHODS. Upper limit:
# the published figure, read as the largest value that rounds to it. Lower limit
# (half the figure) shows the test sees the form itself, not Colebrook again.
#  - Swamee-Jain: 2.8 % near Re = 5000 (project guide references.md [computed]); the
#    authors' own claim, within 1 % (Swamee and Jain 1976, from memory), does not hold
#    near Re = 5000 on rough pipe, so the computed figure is the one checked.
#  - Haaland: within 1.5 % (Haaland 1983, J. Fluids Eng. 105:89, from memory).
#  - Churchill: about 3 % (references.md [computed]); 3.15 % just above Re = 4000, so
#    "about 3" is read as under 3.5.
#  - Serghides: 0.003 % (references.md [computed]); the author's claim, 0.0023 %
#    (Serghides 1984, Chem. Eng. 91(5):63, from memory), is slightly exceeded on smooth pipe.
DEVIATION_LIMIT = {
    "swamee_jain_1976": 0.0285,
    "haaland_1983": 0.015,
    "churchill_1977": 0.035,
    "serghides_1984": 0.000035,
}


@pytest.mark.parametrize("key", EXPLICIT)
def test_explicit_form_deviation_from_colebrook(key):
    m = METHODS[key]
    Re_lo = max(m.Re_range[0], RE_TURBULENT)
    Re_hi = min(m.Re_range[1], 1e8)
    Re = np.logspace(math.log10(Re_lo), math.log10(Re_hi), 600)
    eD_lo, eD_hi = m.eD_range
    eDs = np.concatenate([[eD_lo], np.logspace(math.log10(max(eD_lo, 1e-7)), math.log10(eD_hi), 200)])
    worst = max(float(np.max(np.abs(m.array(Re, eD) / colebrook_array(Re, eD) - 1.0))) for eD in eDs)
    limit = DEVIATION_LIMIT[key]
    assert 0.5 * limit < worst < limit, f"{key}: worst deviation {worst:.3e}"


# --- regimes, laminar flow and the transition ---------------------------------------

@pytest.mark.parametrize("method", [k for k in METHODS if not METHODS[k].all_regimes])
@pytest.mark.parametrize("Re", [1e-3, 1.0, 64.0, 500.0, 1234.5, 1999.9999])
def test_laminar_is_hagen_poiseuille(method, Re):
    # Hagen-Poiseuille: f = 64/Re exactly for laminar pipe flow.
    assert friction_factor(Re, 1e-3, method) == 64.0 / Re


@pytest.mark.parametrize("Re", [1e-6, 1.0, 10.0, 100.0, 500.0])
def test_churchill_tends_to_64_over_Re(Re):
    # Churchill (1977) built the formula to reduce to 64/Re in laminar flow; at
    # Re <= 500 the turbulent term is below 1e-12 of the laminar one.
    assert friction_factor(Re, 1e-3, "churchill_1977") == pytest.approx(64.0 / Re, rel=1e-12)


@pytest.mark.parametrize("method", list(METHODS))
@pytest.mark.parametrize("eD", [0.0, 1e-4, 0.05])
def test_blend_is_continuous_at_both_limits(method, eD):
    for limit in (RE_LAMINAR, RE_TURBULENT):
        below = friction_factor(math.nextafter(limit, 0.0), eD, method)
        at = friction_factor(limit, eD, method)
        above = friction_factor(math.nextafter(limit, math.inf), eD, method)
        assert below == pytest.approx(at, rel=1e-12)
        assert above == pytest.approx(at, rel=1e-12)


def test_blend_ends_are_the_laminar_and_turbulent_values():
    assert friction_factor(RE_LAMINAR, 1e-4) == 64.0 / RE_LAMINAR
    assert friction_factor(RE_TURBULENT, 1e-4) == colebrook(RE_TURBULENT, 1e-4)
    Re = 3000.0
    w = (Re - RE_LAMINAR) / (RE_TURBULENT - RE_LAMINAR)
    expected = (1 - w) * 64.0 / Re + w * colebrook(Re, 1e-4)
    assert friction_factor(Re, 1e-4) == pytest.approx(expected, rel=1e-15)


@pytest.mark.parametrize("method", list(METHODS))
@pytest.mark.parametrize("eD", [0.0, 1e-5, 1e-3, 0.05])
def test_array_equals_scalar_elementwise(method, eD):
    Re = np.concatenate([np.logspace(-2, 9, 200), [RE_LAMINAR, RE_TURBULENT, 2500.0, 3999.0]])
    fa = friction_factor_array(Re, eD, method)
    fs = np.array([friction_factor(float(r), eD, method) for r in Re])
    np.testing.assert_allclose(fa, fs, rtol=1e-14, atol=0)


@pytest.mark.parametrize("method", list(METHODS))
def test_array_takes_one_roughness_per_element(method):
    # Several pipes scanned at once: a 2-D grid of Re with eps/D varying by row.
    Re = np.array([[500.0, 3000.0, 5e4], [1500.0, 2500.0, 1e7]])
    eD = np.array([[1e-4], [0.02]])
    fa = friction_factor_array(Re, eD, method)
    assert fa.shape == Re.shape
    for i in range(2):
        for j in range(3):
            assert fa[i, j] == pytest.approx(friction_factor(Re[i, j], eD[i, 0], method), rel=1e-14)


def test_regime_limits():
    # Limits 2000 / 4000, common practice.
    assert regime(1999.999) == "laminar"
    assert regime(2000.0) == "transitional"
    assert regime(3999.999) == "transitional"
    assert regime(4000.0) == "turbulent"


# --- impossible input ---------------------------------------------------------------

@pytest.mark.parametrize("Re, eD", [(0.0, 1e-4), (-1e5, 1e-4), (math.nan, 1e-4), (1e5, -1e-4), (1e5, math.nan)])
def test_impossible_input_raises(Re, eD):
    for method in METHODS:
        with pytest.raises(ValueError):
            friction_factor(Re, eD, method)
        with pytest.raises(ValueError):
            friction_factor_array(np.array([1e5, Re]), eD, method)
        with pytest.raises(ValueError):
            METHODS[method].scalar(Re, eD)


def test_unknown_method_raises():
    with pytest.raises(ValueError, match="colebrook"):
        friction_factor(1e5, 1e-4, "moody")


def test_regime_rejects_no_flow():
    with pytest.raises(ValueError):
        regime(0.0)


# --- detail for the record ----------------------------------------------------------

def test_detail_in_transition_bounds_the_value():
    d = friction_detail(3000.0, 1e-4, "colebrook")
    assert d.regime == "transitional"
    assert d.f_laminar_bound == 64.0 / 3000.0
    assert d.f_turbulent_bound == colebrook(3000.0, 1e-4)
    assert d.f_laminar_bound < d.f < d.f_turbulent_bound
    assert d.in_range is False
    assert "transitional" in d.note
    assert f"{d.f_laminar_bound:.4g}" in d.note and f"{d.f_turbulent_bound:.4g}" in d.note


def test_detail_churchill_in_transition_names_a_band_holding_f():
    d = friction_detail(3000.0, 1e-4, "churchill_1977")
    assert d.f == fr.churchill_1977(3000.0, 1e-4)
    assert d.f_laminar_bound == 64.0 / 3000.0
    assert d.in_range is True
    lo = min(d.f_laminar_bound, d.f_turbulent_bound, d.f)
    hi = max(d.f_laminar_bound, d.f_turbulent_bound, d.f)
    assert f"between {lo:.4g} and {hi:.4g}" in d.note


def test_detail_outside_transition():
    d = friction_detail(1e5, 1e-4, "colebrook")
    assert (d.regime, d.in_range, d.note) == ("turbulent", True, "")
    assert d.f == d.f_laminar_bound == d.f_turbulent_bound == friction_factor(1e5, 1e-4)
    lam = friction_detail(800.0, 0.2, "haaland_1983")
    assert (lam.regime, lam.f, lam.in_range) == ("laminar", 0.08, True)
    out = friction_detail(1e5, 0.02, "swamee_jain_1976")  # eps/D above 1e-2
    assert out.in_range is False and "Swamee-Jain" in out.note


def test_methods_table_is_complete():
    assert set(METHODS) == {"colebrook", "swamee_jain_1976", "haaland_1983", "churchill_1977", "serghides_1984"}
    for key, m in METHODS.items():
        assert m.reference and m.name
        assert m.Re_range[0] < m.Re_range[1] and m.eD_range[0] < m.eD_range[1]
        assert m.scalar(1e5, 1e-4) == pytest.approx(float(m.array(np.array([1e5]), 1e-4)[0]), rel=1e-14)
    assert [k for k, m in METHODS.items() if m.all_regimes] == ["churchill_1977"]


# --- monotonic behaviour (property-based) -------------------------------------------

turbulent_Re = st.floats(min_value=RE_TURBULENT, max_value=1e8)
roughness = st.floats(min_value=0.0, max_value=0.05)


@settings(max_examples=300, deadline=None)
@given(Re1=turbulent_Re, Re2=turbulent_Re, eD=roughness, method=st.sampled_from(list(METHODS)))
def test_f_falls_as_Re_rises_in_turbulent_flow(Re1, Re2, eD, method):
    # Moody (1944) chart: at fixed eps/D each curve falls with Re in turbulent flow.
    # Churchill (1977) is one equation across all regimes; for very rough pipe (eps/D above
    # about 0.02) its curve still rises just past Re 4000 (up to Re 4552 at eps/D 0.05,
    # found by a dense scan), so for it the property is checked from Re 5000.
    if method == "churchill_1977":
        Re1, Re2 = max(Re1, 5000.0), max(Re2, 5000.0)
    lo, hi = sorted((Re1, Re2))
    f_lo, f_hi = friction_factor(lo, eD, method), friction_factor(hi, eD, method)
    assert f_hi <= f_lo
    if hi > 1.001 * lo:
        assert f_hi < f_lo


@settings(max_examples=300, deadline=None)
@given(Re=turbulent_Re, eD1=roughness, eD2=roughness, method=st.sampled_from(list(METHODS)))
def test_f_rises_with_roughness(Re, eD1, eD2, method):
    # Moody (1944) chart: at fixed Re the curves of rougher pipe lie higher.
    lo, hi = sorted((eD1, eD2))
    f_lo, f_hi = friction_factor(Re, lo, method), friction_factor(Re, hi, method)
    assert f_hi >= f_lo
    if hi > 1.01 * lo + 1e-6:
        assert f_hi > f_lo
