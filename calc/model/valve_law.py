"""Control valves by their flow coefficient and inherent characteristic.

Flow coefficients (IEC 60534-1 and 60534-2-1, from memory): Kv is the flow in m³/h of water (density
rho0 = 1000 kg/m³) that passes with a pressure drop of dp0 = 1 bar = 1e5 Pa, so Q = Kv sqrt(dp / dp0 · rho0 / rho);
Cv is the flow in US gal/min of water at 60 °F with 1 psi, and Kv = 0.865 Cv (Cv = 1.156 Kv). A valve's loss
coefficient on the velocity head in its bore, h = K V²/(2 g), follows from dp = rho g h:

    K = (2 dp0 / rho0) (3600 A / Kv)²      [A in m², Kv in m³/h]

which is K = 1.599e-3 d⁴ / Kv² with d in mm (handbooks round it to 1.6e-3).

Inherent characteristics (IEC 60534-2-4:2009): the relative flow coefficient Phi = Kv(h)/Kvs at relative travel
h (0 to 1), Phi0 = 1/R its value at h = 0 by the inherent rangeability R:

    linear:             Phi = Phi0 + (1 - Phi0) h
    equal percentage:   Phi = Phi0 exp(h ln(1/Phi0)) = R^(h - 1)

A valve at h = 0 is shut (no flow): the characteristic holds for 0 < h <= 1.
"""

from __future__ import annotations

import math

#: The reference pressure drop and density of Kv [Pa, kg/m³] (IEC 60534-1, from memory).
DP0 = 1e5
RHO0 = 1000.0
#: Kv of a valve of Cv 1 [m³/h] (IEC 60534-2-1's N1 constants, 1e-1 / 8.65e-2 with dp in kPa; from memory).
KV_PER_CV = 0.865
CHARACTERISTICS = ("linear", "equal_percentage")


def kv_from(value: float, coefficient: str) -> float:
    """A flow coefficient as Kv [m³/h], from Kv or Cv.

    >>> kv_from(100.0, "Cv")
    86.5
    """
    return value * KV_PER_CV if coefficient == "Cv" else value


def K_from_kv(Kv: float, D: float) -> float:
    """Loss coefficient on the velocity head in a bore of diameter D [m] of a valve of Kv [m³/h].

    >>> round(K_from_kv(100.0, 0.1), 4)  # about 1.6e-3 x 100**4 / 100**2 = 16
    15.9888
    """
    A = math.pi * D * D / 4.0
    return 2.0 * DP0 / RHO0 * (3600.0 * A / Kv) ** 2


def kv_from_K(K: float, D: float) -> float:
    """The Kv [m³/h] of a valve whose loss coefficient in a bore of D [m] is K (the inverse of `K_from_kv`)."""
    A = math.pi * D * D / 4.0
    return 3600.0 * A * math.sqrt(2.0 * DP0 / RHO0 / K)


def phi(h: float, characteristic: str, rangeability: float) -> float:
    """Relative flow coefficient Kv/Kvs at relative travel h (0 < h <= 1).

    >>> phi(0.5, "linear", 50.0), round(phi(0.5, "equal_percentage", 50.0), 6), phi(1.0, "equal_percentage", 30.0)
    (0.51, 0.141421, 1.0)
    """
    phi0 = 1.0 / rangeability
    if characteristic == "linear":
        return phi0 + (1.0 - phi0) * h
    return phi0 ** (1.0 - h)


def travel(p: float, characteristic: str, rangeability: float) -> float:
    """Relative travel h at which the relative flow coefficient is ``p`` (the inverse of `phi`), in [0, 1].

    Below Phi0 (the characteristic's value at no travel) it is 0: the valve would be nearly shut, past
    the range the characteristic describes; above 1 it is 1, fully open.

    >>> round(travel(phi(0.37, "equal_percentage", 40.0), "equal_percentage", 40.0), 12)
    0.37
    """
    phi0 = 1.0 / rangeability
    if p <= phi0:
        return 0.0
    if p >= 1.0:
        return 1.0
    if characteristic == "linear":
        return (p - phi0) / (1.0 - phi0)
    return 1.0 - math.log(p) / math.log(phi0)
