"""Checks of calc.water against IAPWS check values and CoolProp's independent IAPWS-95 implementation."""

from __future__ import annotations

import math

import pytest
from CoolProp.CoolProp import PropsSI

from calc.water import G, Liquid, custom_liquid, water

P_ATM = 101325.0
TEMPS_C = [1.0, 5.0, 20.0, 40.0, 60.0, 80.0, 95.0]


# --- against CoolProp (IAPWS-95 with the IAPWS 2008 viscosity; independent code) ---

@pytest.mark.parametrize("t_c", TEMPS_C)
def test_density_matches_iapws95(t_c):
    # IF97 (IAPWS R7-97) vs IAPWS-95 (IAPWS R6-95) via CoolProp; IF97 reproduces
    # IAPWS-95 density in region 1 far inside 0.02 %.
    T = 273.15 + t_c
    assert water(T).rho == pytest.approx(PropsSI("D", "T", T, "P", P_ATM, "Water"), rel=2e-4)


@pytest.mark.parametrize("t_c", TEMPS_C)
def test_viscosity_matches_coolprop(t_c):
    # IAPWS R12-08 viscosity, evaluated at the IF97 density here and at the
    # IAPWS-95 density in CoolProp; tolerance 0.5 %.
    T = 273.15 + t_c
    assert water(T).mu == pytest.approx(PropsSI("V", "T", T, "P", P_ATM, "Water"), rel=5e-3)


@pytest.mark.parametrize("t_c", TEMPS_C)
def test_vapour_pressure_matches_coolprop(t_c):
    # IF97 saturation equation vs the IAPWS-95 saturation state in CoolProp
    # (Wagner and Pruss 1993); tolerance 0.05 %.
    T = 273.15 + t_c
    assert water(T).p_vap == pytest.approx(PropsSI("P", "T", T, "Q", 0, "Water"), rel=5e-4)


@pytest.mark.parametrize("t_c", TEMPS_C)
def test_bulk_modulus_matches_coolprop(t_c):
    # K = rho w^2 (isentropic). IF97's speed of sound departs from IAPWS-95 by up to
    # about 0.19 % at atmospheric pressure in this range (computed), so K by up to
    # about 0.4 %; tolerance 0.5 %, our choice.
    T = 273.15 + t_c
    rho = PropsSI("D", "T", T, "P", P_ATM, "Water")
    w = PropsSI("A", "T", T, "P", P_ATM, "Water")
    assert water(T).bulk_modulus == pytest.approx(rho * w * w, rel=5e-3)


# --- IAPWS check values -------------------------------------------------------------

@pytest.mark.parametrize(
    "t_c, rho, mu_mPas, p_vap_kPa",
    [
        # Project guide references.md table, computed from IAPWS-95 (IAPWS R6-95),
        # viscosity IAPWS R12-08, saturation Wagner and Pruss (1993), at 0.101325 MPa.
        (5.0, 999.967, 1.5182, 0.8726),
        (20.0, 998.207, 1.0016, 2.3393),
        (40.0, 992.216, 0.6527, 7.3849),
        (60.0, 983.196, 0.4660, 19.946),
    ],
)
def test_iapws_table(t_c, rho, mu_mPas, p_vap_kPa):
    # Tolerances (our choice): the rounding of the tabulated figure plus the small
    # difference between IF97 and IAPWS-95 seen against CoolProp above:
    # density 0.002 %, viscosity 0.02 %, vapour pressure 0.02 %.
    w = water(273.15 + t_c)
    assert w.rho == pytest.approx(rho, rel=2e-5)
    assert w.mu * 1e3 == pytest.approx(mu_mPas, rel=2e-4)
    assert w.p_vap / 1e3 == pytest.approx(p_vap_kPa, rel=2e-4)


def test_if97_verification_values():
    # IAPWS R7-97(2012) computer-program verification values (from memory):
    # region 1, T = 300 K, p = 3 MPa: v = 0.100215168e-2 m3/kg, w = 0.150773921e4 m/s;
    # saturation, T = 300 K: p = 0.353658941e-2 MPa.
    w = water(300.0, 3e6)
    assert 1.0 / w.rho == pytest.approx(0.100215168e-2, rel=1e-8)
    assert math.sqrt(w.bulk_modulus / w.rho) == pytest.approx(0.150773921e4, rel=1e-8)
    assert w.p_vap == pytest.approx(0.353658941e-2 * 1e6, rel=1e-8)


def test_speed_of_sound_at_20C():
    # references.md: 1482.3 m/s at 20 degC from IAPWS-95 [computed]; IF97 gives
    # 1483.4 m/s, within 0.1 % (see the bulk-modulus test for why IF97 differs).
    w = water(293.15)
    assert math.sqrt(w.bulk_modulus / w.rho) == pytest.approx(1482.3, rel=1e-3)
    # references.md: bulk modulus about 2.19 GPa at 20 degC.
    assert w.bulk_modulus == pytest.approx(2.19e9, rel=5e-3)


# --- behaviour ----------------------------------------------------------------------

def test_kinematic_viscosity_and_plain_floats():
    w = water(293.15)
    assert w.nu == w.mu / w.rho
    assert w.name == "water" and w.T == 293.15
    for value in (w.rho, w.mu, w.p_vap, w.bulk_modulus):
        assert type(value) is float
    assert "R7-97" in w.source and "R12-08" in w.source and "iapws" in w.source


def test_water_is_cached():
    assert water(288.15) is water(288.15)


def test_pressure_raises_density():
    # Liquid water is slightly compressible: 10 bar more gives about +0.05 % density
    # (bulk modulus about 2.2 GPa), so the pressure argument must reach IF97.
    lo, hi = water(293.15, P_ATM), water(293.15, P_ATM + 1e6)
    assert hi.rho / lo.rho - 1.0 == pytest.approx(1e6 / lo.bulk_modulus, rel=0.1)


@pytest.mark.parametrize("T", [273.15, 272.0, 372.16, 373.15, 500.0, 20.0, math.nan, math.inf])
def test_out_of_range_temperature_raises(T):
    with pytest.raises(ValueError, match="temperature"):
        water(T)


def test_range_ends_are_accepted():
    # IAPWS-95 via CoolProp at both ends of the range; 0.02 % as above.
    for T in (273.16, 372.15):
        assert water(T).rho == pytest.approx(PropsSI("D", "T", T, "P", P_ATM, "Water"), rel=2e-4)
    assert water(372.15).p_vap < P_ATM


@pytest.mark.parametrize("p", [1000.0, 0.0, -P_ATM, 2e8, math.nan])
def test_pressure_without_liquid_raises(p):
    # 1 kPa is below the vapour pressure at 27 degC (3.54 kPa): the water would boil.
    with pytest.raises(ValueError, match="pressure"):
        water(300.0, p)


def test_standard_gravity():
    # Standard acceleration of gravity, 3rd CGPM (1901), ISO 80000-3: 9.80665 m/s2.
    assert G == 9.80665


def test_custom_liquid():
    oil = custom_liquid("light oil", rho=850.0, mu=0.01, p_vap=100.0, bulk_modulus=1.5e9)
    assert isinstance(oil, Liquid)
    assert (oil.name, oil.T, oil.rho, oil.mu, oil.p_vap, oil.bulk_modulus) == (
        "light oil", None, 850.0, 0.01, 100.0, 1.5e9)
    assert oil.nu == 0.01 / 850.0
    assert custom_liquid("glycol mix", 1050.0, 0.004, 0.0).bulk_modulus is None


@pytest.mark.parametrize(
    "kwargs",
    [
        {"rho": 0.0},
        {"rho": -1000.0},
        {"mu": 0.0},
        {"mu": math.nan},
        {"p_vap": -1.0},
        {"bulk_modulus": 0.0},
        {"bulk_modulus": -2e9},
        {"rho": math.inf},
        {"rho": True},
        {"rho": "1000"},
        {"name": "  "},
    ],
)
def test_custom_liquid_rejects_impossible_values(kwargs):
    args = {"name": "brine", "rho": 1025.0, "mu": 1.1e-3, "p_vap": 2300.0, "bulk_modulus": 2.3e9}
    args.update(kwargs)
    with pytest.raises(ValueError):
        custom_liquid(**args)
