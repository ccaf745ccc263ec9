"""Properties of the liquid in the line: water from the IAPWS formulations, or a liquid the user describes."""

from __future__ import annotations

import math
import numbers
from dataclasses import dataclass
from functools import lru_cache

import iapws
from iapws import IAPWS97

__all__ = ["G", "Liquid", "water", "custom_liquid", "T_MIN", "T_MAX", "P_MAX"]

# Standard acceleration of gravity [m/s2], conventional value adopted by the 3rd CGPM
# (1901) and ISO 80000-3.
G = 9.80665

# Liquid-water range served here: from the triple point (273.16 K, IAPWS R7-97 and the
# ITS-90 fixed point) to 99 degC, just below boiling at atmospheric pressure; the upper
# pressure limit is that of IF97 region 1 (100 MPa, IAPWS R7-97).
T_MIN = 273.16
T_MAX = 372.15
P_MAX = 100e6

_SOURCE = (
    "IAPWS R7-97(2012), IAPWS-IF97 industrial formulation (density, speed of sound, "
    "saturation pressure); IAPWS R12-08 (viscosity of ordinary water, 2008); "
    f"both as implemented in the iapws Python package {iapws.__version__}"
)


@dataclass(frozen=True)
class Liquid:
    """The liquid in the line, in SI units.

    T [K] (None when the user gave the properties directly), rho [kg/m3],
    mu [Pa s], p_vap absolute vapour pressure [Pa], bulk_modulus [Pa] (None if
    unknown), source: where the values come from.
    """

    name: str
    T: float | None
    rho: float
    mu: float
    p_vap: float
    bulk_modulus: float | None
    source: str

    @property
    def nu(self) -> float:
        """Kinematic viscosity mu/rho [m2/s]."""
        return self.mu / self.rho


@lru_cache(maxsize=512)
def water(T: float, p: float = 101325.0) -> Liquid:
    """Liquid water at temperature T [K] and absolute pressure p [Pa].

    Density rho and speed of sound w from IAPWS-IF97 region 1, the isentropic
    bulk modulus as K = rho w^2 [Pa], vapour pressure from the IF97 saturation
    equation, and viscosity mu from the IAPWS 2008 viscosity formulation
    evaluated at the IF97 density. Cached: the same temperature recurs at
    every re-solve of a sheet.

    Parameters
    ----------
    T : float
        Temperature, 273.16 K (0.01 degC) to 372.15 K (99 degC), [K]
    p : float
        Absolute pressure, above the vapour pressure and at most 100 MPa, [Pa]

    Returns
    -------
    Liquid

    Raises
    ------
    ValueError
        When T or p lies outside the range above, where the water would be ice
        or steam or the formulation does not hold.

    Examples
    --------
    At 20 degC and 101.325 kPa, IAPWS gives rho = 998.207 kg/m3 (IAPWS-95),
    mu = 1.0016 mPa s (R12-08) and p_vap = 2.3393 kPa (Wagner and Pruss 1993);
    IF97 agrees to the digits shown here:

    >>> w = water(293.15)
    >>> round(w.rho, 2), round(w.mu * 1e3, 4), round(w.p_vap / 1e3, 3)
    (998.21, 1.0016, 2.339)

    References
    ----------
    IAPWS R7-97(2012), Revised release on the IAPWS industrial formulation 1997
    for the thermodynamic properties of water and steam.
    IAPWS R12-08, Release on the IAPWS formulation 2008 for the viscosity of
    ordinary water substance.
    """
    T = float(T)
    p = float(p)
    if not T_MIN <= T <= T_MAX:
        raise ValueError(
            f"water temperature must be between {T_MIN - 273.15:.2f} and "
            f"{T_MAX - 273.15:.0f} degC for liquid water here (got {T - 273.15:.6g} degC)"
        )
    # Saturation pressure at T from the IF97 saturation equation (region 4).
    p_vap = float(IAPWS97(T=T, x=0.0).P) * 1e6
    if not p_vap < p <= P_MAX:
        raise ValueError(
            f"pressure must lie above the vapour pressure {p_vap:.6g} Pa and at most "
            f"{P_MAX:.6g} Pa for liquid water at {T - 273.15:.6g} degC (got {p!r} Pa)"
        )
    state = IAPWS97(T=T, P=p / 1e6)
    if state.region != 1:
        raise ValueError(f"no liquid water at T = {T!r} K, p = {p!r} Pa")
    # Plain floats: the package returns numpy scalars, which would leak into records.
    rho = float(state.rho)
    # IAPWS97 evaluates the R12-08 viscosity at its own density.
    mu = float(state.mu)
    return Liquid(
        name="water",
        T=T,
        rho=rho,
        mu=mu,
        p_vap=p_vap,
        bulk_modulus=rho * float(state.w) ** 2,
        source=_SOURCE,
    )


def _number(value: object) -> float:
    """value as a finite float, or NaN (which fails every comparison) if it is not one."""
    # Text and booleans are refused: calc takes numbers already parsed at the edge.
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        return math.nan
    v = float(value)
    return v if math.isfinite(v) else math.nan


def custom_liquid(
    name: str,
    rho: float,
    mu: float,
    p_vap: float,
    bulk_modulus: float | None = None,
) -> Liquid:
    """A liquid described by its properties: rho [kg/m3], mu [Pa s], p_vap [Pa abs], K [Pa].

    rho, mu and bulk_modulus (when given) must be positive; p_vap must not be
    negative (zero suits a liquid whose vapour pressure is negligible).

    >>> oil = custom_liquid("light oil", rho=850.0, mu=0.01, p_vap=100.0)
    >>> round(oil.nu, 9)
    1.1765e-05
    """
    for field, value in (("rho", rho), ("mu", mu), ("bulk_modulus", bulk_modulus)):
        if (field != "bulk_modulus" or value is not None) and not _number(value) > 0.0:
            raise ValueError(f"{field} must be a positive number (got {value!r})")
    if not _number(p_vap) >= 0.0:
        raise ValueError(f"p_vap must be zero or a positive absolute pressure (got {p_vap!r})")
    if not isinstance(name, str) or not name.strip():
        raise ValueError(f"a liquid needs a name (got {name!r})")
    return Liquid(
        name=name.strip(),
        T=None,
        rho=float(rho),
        mu=float(mu),
        p_vap=float(p_vap),
        bulk_modulus=None if bulk_modulus is None else float(bulk_modulus),
        source="given by the user",
    )
