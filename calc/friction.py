"""Darcy friction factor of full pipe flow: Colebrook solved exactly, explicit forms, laminar flow and the transition."""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Callable

import numpy as np

__all__ = [
    "RE_LAMINAR",
    "RE_TURBULENT",
    "FrictionMethod",
    "METHODS",
    "FrictionResult",
    "colebrook",
    "colebrook_array",
    "swamee_jain_1976",
    "swamee_jain_1976_array",
    "haaland_1983",
    "haaland_1983_array",
    "churchill_1977",
    "churchill_1977_array",
    "serghides_1984",
    "serghides_1984_array",
    "friction_factor",
    "friction_factor_array",
    "regime",
    "friction_detail",
]

# Regime limits: common practice. Below about 2000 pipe flow stays laminar even when
# disturbed; above about 4000 it is fully turbulent; in between it is intermittent and
# no correlation is reliable (the Moody chart leaves this band as a "critical zone").
RE_LAMINAR = 2000.0
RE_TURBULENT = 4000.0

_LN10 = math.log(10.0)
_INV_LN10 = 1.0 / _LN10

# Colebrook, 1/sqrt(f) = -2 log10(eD/3.7 + 2.51/(Re sqrt(f))), rewritten as Clamond (2009)
# does: with F = (ln10 / 2) / sqrt(f) it becomes F + ln(X1 + F) = X2, where
# X1 = eD Re ln10 / (3.7 * 5.02) and X2 = ln(Re ln10 / 5.02), 5.02 = 2 * 2.51.
_X1_PER_EDRE = _LN10 / (3.7 * 5.02)
_X2_SHIFT = math.log(_LN10 / 5.02)
_F_TO_FD = (0.5 * _LN10) ** 2


def _check(Re: float, eD: float) -> None:
    # Written so that NaN fails too.
    if not Re > 0.0:
        raise ValueError(f"Reynolds number must be positive (got {Re!r})")
    if not eD >= 0.0:
        raise ValueError(f"relative roughness eps/D must be zero or positive (got {eD!r})")


def _check_array(Re: np.ndarray, eD) -> None:
    if not np.all(Re > 0.0):
        raise ValueError("Reynolds numbers must all be positive")
    if not np.all(np.asarray(eD) >= 0.0):
        raise ValueError("relative roughness eps/D must be zero or positive")


def colebrook(Re: float, eD: float) -> float:
    r"""Darcy friction factor from the Colebrook equation, solved to machine precision.

    .. math:: \frac{1}{\sqrt{f}} = -2\log_{10}\left(\frac{\epsilon/D}{3.7}
              + \frac{2.51}{Re\sqrt{f}}\right)

    Solved with Clamond's (2009) third-order iteration started from his
    explicit guess; two steps reach a relative error near 1e-15 for every
    Re > 10 and eD >= 0, so no loop or tolerance is needed.

    Parameters
    ----------
    Re : float
        Reynolds number, [-]
    eD : float
        Relative roughness eps/D, 0 for a smooth pipe, [-]

    Returns
    -------
    f : float
        Darcy friction factor, [-]

    Notes
    -----
    Colebrook's equation describes turbulent flow, Re > 4000; the range used on
    the sheet is that of the Moody chart, 4000 <= Re <= 1e8, 0 <= eD <= 0.05.

    Examples
    --------
    Colebrook at Re = 1e5, eD = 1e-4 is 0.0185139 (value tabulated in the
    documentation of the `fluids` library, which solves the same equation):

    >>> round(colebrook(1e5, 1e-4), 7)
    0.0185139

    References
    ----------
    Colebrook, C. F. (1939). Turbulent flow in pipes, with particular reference
    to the transition region between the smooth and rough pipe laws. J. Inst.
    Civil Eng. 11(4), 133-156.
    Clamond, D. (2009). Efficient resolution of the Colebrook equation. Ind.
    Eng. Chem. Res. 48(7), 3665-3671.
    """
    if not (Re > 0.0 and eD >= 0.0):
        _check(Re, eD)
    X1 = _X1_PER_EDRE * eD * Re
    X2 = math.log(Re) + _X2_SHIFT
    # Clamond's starting value F0 = X2 - 0.2, so the first residual is ln(X1 + F0) - 0.2.
    F = X2 - 0.2
    X1F = X1 + F
    X1F1 = 1.0 + X1F
    E = (math.log(X1F) - 0.2) / X1F1
    F -= (X1F1 + 0.5 * E) * E * X1F / (X1F1 + E * (1.0 + E / 3.0))
    X1F = X1 + F
    X1F1 = 1.0 + X1F
    E = (math.log(X1F) + F - X2) / X1F1
    F -= (X1F1 + 0.5 * E) * E * X1F / (X1F1 + E * (1.0 + E / 3.0))
    return _F_TO_FD / (F * F)


def colebrook_array(Re: np.ndarray, eD: float) -> np.ndarray:
    """Colebrook friction factor for an array of Reynolds numbers (see `colebrook`).

    >>> np.round(colebrook_array(np.array([1e5, 1e6]), 1e-4), 7).tolist()
    [0.0185139, 0.0134414]
    """
    Re = np.asarray(Re, dtype=float)
    _check_array(Re, eD)
    X1 = _X1_PER_EDRE * eD * Re
    X2 = np.log(Re) + _X2_SHIFT
    F = X2 - 0.2
    for first in (True, False):
        X1F = X1 + F
        X1F1 = 1.0 + X1F
        E = (np.log(X1F) - 0.2) / X1F1 if first else (np.log(X1F) + F - X2) / X1F1
        F = F - (X1F1 + 0.5 * E) * E * X1F / (X1F1 + E * (1.0 + E / 3.0))
    return _F_TO_FD / (F * F)


def swamee_jain_1976(Re: float, eD: float) -> float:
    r"""Darcy friction factor, explicit form of Swamee and Jain (1976).

    .. math:: f = \frac{0.25}{\left[\log_{10}\left(\frac{\epsilon/D}{3.7}
              + \frac{5.74}{Re^{0.9}}\right)\right]^2}

    Parameters
    ----------
    Re : float
        Reynolds number, [-]
    eD : float
        Relative roughness eps/D, [-]

    Returns
    -------
    f : float
        Darcy friction factor, [-]

    Notes
    -----
    Range 5000 <= Re <= 1e8, 1e-6 <= eD <= 1e-2 (stated by the authors, from
    memory). Within it the form departs from Colebrook by up to about 2.8 %,
    the worst near Re = 5000 on rough pipe (computed for this project).

    Examples
    --------
    >>> round(swamee_jain_1976(1e5, 1e-4), 6)
    0.018452

    References
    ----------
    Swamee, P. K. and Jain, A. K. (1976). Explicit equations for pipe-flow
    problems. J. Hydraul. Div. ASCE 102(5), 657-664.
    """
    if not (Re > 0.0 and eD >= 0.0):
        _check(Re, eD)
    x = math.log10(eD / 3.7 + 5.74 * Re**-0.9)
    return 0.25 / (x * x)


def swamee_jain_1976_array(Re: np.ndarray, eD: float) -> np.ndarray:
    """Swamee–Jain (1976) for an array of Reynolds numbers (see `swamee_jain_1976`)."""
    Re = np.asarray(Re, dtype=float)
    _check_array(Re, eD)
    x = np.log10(eD / 3.7 + 5.74 * Re**-0.9)
    return 0.25 / (x * x)


def haaland_1983(Re: float, eD: float) -> float:
    r"""Darcy friction factor, explicit form of Haaland (1983).

    .. math:: \frac{1}{\sqrt{f}} = -1.8\log_{10}\left[\left(\frac{\epsilon/D}{3.7}
              \right)^{1.11} + \frac{6.9}{Re}\right]

    Parameters
    ----------
    Re : float
        Reynolds number, [-]
    eD : float
        Relative roughness eps/D, [-]

    Returns
    -------
    f : float
        Darcy friction factor, [-]

    Notes
    -----
    Range 4000 <= Re <= 1e8, 1e-6 <= eD <= 0.05 (as tabulated by Winning and
    Coole, 2013). Haaland gives its departure from Colebrook as within about
    1.5 % (from memory); computed for this project: 1.4 %.

    Examples
    --------
    >>> round(haaland_1983(1e5, 1e-4), 6)
    0.018265

    References
    ----------
    Haaland, S. E. (1983). Simple and explicit formulas for the friction factor
    in turbulent pipe flow. J. Fluids Eng. 105(1), 89-90.
    Winning, H. K. and Coole, T. (2013). Explicit friction factor accuracy and
    computational efficiency for turbulent flow in pipes. Flow Turbul. Combust.
    90(1), 1-27.
    """
    if not (Re > 0.0 and eD >= 0.0):
        _check(Re, eD)
    x = -1.8 * math.log10((eD / 3.7) ** 1.11 + 6.9 / Re)
    return 1.0 / (x * x)


def haaland_1983_array(Re: np.ndarray, eD: float) -> np.ndarray:
    """Haaland (1983) for an array of Reynolds numbers (see `haaland_1983`)."""
    Re = np.asarray(Re, dtype=float)
    _check_array(Re, eD)
    x = -1.8 * np.log10((eD / 3.7) ** 1.11 + 6.9 / Re)
    return 1.0 / (x * x)


# Below this Reynolds number Churchill's turbulent term is smaller than the laminar
# one by more than 100 orders of magnitude, so the formula equals 64/Re to the last
# bit; short-circuiting avoids overflow of (37530/Re)**16 at tiny Re.
_CHURCHILL_LAMINAR_ONLY = 1.0


def _churchill_turbulent(Re: float, eD: float) -> float:
    A = (-2.457 * math.log((7.0 / Re) ** 0.9 + 0.27 * eD)) ** 16
    B = (37530.0 / Re) ** 16
    return 8.0 * (A + B) ** -0.125


def churchill_1977(Re: float, eD: float) -> float:
    r"""Darcy friction factor of Churchill (1977), one formula for every regime.

    .. math:: f = 8\left[\left(\frac{8}{Re}\right)^{12} + (A + B)^{-3/2}\right]^{1/12}

    .. math:: A = \left[2.457\ln\frac{1}{(7/Re)^{0.9} + 0.27\,\epsilon/D}\right]^{16},
              \qquad B = \left(\frac{37530}{Re}\right)^{16}

    Parameters
    ----------
    Re : float
        Reynolds number, [-]
    eD : float
        Relative roughness eps/D, [-]

    Returns
    -------
    f : float
        Darcy friction factor, [-]

    Notes
    -----
    Tends to 64/Re in laminar flow and to a Colebrook-like law in turbulent
    flow, interpolating smoothly across the transition; no range is stated by
    the author. For 4000 <= Re <= 1e8, 0 <= eD <= 0.05 it departs from
    Colebrook by up to about 3.2 %, the worst just above Re = 4000 (computed
    for this project).

    Examples
    --------
    >>> round(churchill_1977(1e5, 1e-4), 6)
    0.018463
    >>> round(churchill_1977(100.0, 0.0), 12)  # laminar: 64/Re
    0.64

    References
    ----------
    Churchill, S. W. (1977). Friction-factor equation spans all fluid-flow
    regimes. Chem. Eng. 84(24), 91-92 (from memory).
    """
    if not (Re > 0.0 and eD >= 0.0):
        _check(Re, eD)
    if Re < _CHURCHILL_LAMINAR_ONLY:
        return 64.0 / Re
    A = (-2.457 * math.log((7.0 / Re) ** 0.9 + 0.27 * eD)) ** 16
    B = (37530.0 / Re) ** 16
    return 8.0 * ((8.0 / Re) ** 12 + (A + B) ** -1.5) ** (1.0 / 12.0)


def churchill_1977_array(Re: np.ndarray, eD: float) -> np.ndarray:
    """Churchill (1977) for an array of Reynolds numbers (see `churchill_1977`)."""
    Re = np.asarray(Re, dtype=float)
    _check_array(Re, eD)
    Rc = np.maximum(Re, _CHURCHILL_LAMINAR_ONLY)
    A = (-2.457 * np.log((7.0 / Rc) ** 0.9 + 0.27 * eD)) ** 16
    B = (37530.0 / Rc) ** 16
    f = 8.0 * ((8.0 / Rc) ** 12 + (A + B) ** -1.5) ** (1.0 / 12.0)
    return np.where(Re < _CHURCHILL_LAMINAR_ONLY, 64.0 / Re, f)


def serghides_1984(Re: float, eD: float) -> float:
    r"""Darcy friction factor, explicit form of Serghides (1984).

    Three fixed-point steps of Colebrook's equation, accelerated with
    Steffensen's (Aitken's) formula:

    .. math:: A = -2\log_{10}\left(\frac{\epsilon/D}{3.7} + \frac{12}{Re}\right),\quad
              B = -2\log_{10}\left(\frac{\epsilon/D}{3.7} + \frac{2.51A}{Re}\right),\quad
              C = -2\log_{10}\left(\frac{\epsilon/D}{3.7} + \frac{2.51B}{Re}\right)

    .. math:: f = \left[A - \frac{(B - A)^2}{C - 2B + A}\right]^{-2}

    Parameters
    ----------
    Re : float
        Reynolds number, [-]
    eD : float
        Relative roughness eps/D, [-]

    Returns
    -------
    f : float
        Darcy friction factor, [-]

    Notes
    -----
    No range is stated by the author; the sheet uses the Colebrook range,
    4000 <= Re <= 1e8, 0 <= eD <= 0.05, over which it departs from Colebrook by
    at most about 0.003 % (computed for this project).

    Examples
    --------
    >>> round(serghides_1984(1e5, 1e-4), 7)
    0.0185136

    References
    ----------
    Serghides, T. K. (1984). Estimate friction factor accurately. Chem. Eng.
    91(5), 63-64.
    """
    if not (Re > 0.0 and eD >= 0.0):
        _check(Re, eD)
    r = eD / 3.7
    k = 2.51 / Re
    A = -2.0 * math.log10(r + 12.0 / Re)
    B = -2.0 * math.log10(r + k * A)
    C = -2.0 * math.log10(r + k * B)
    x = A - (B - A) ** 2 / (C - 2.0 * B + A)
    return 1.0 / (x * x)


def serghides_1984_array(Re: np.ndarray, eD: float) -> np.ndarray:
    """Serghides (1984) for an array of Reynolds numbers (see `serghides_1984`)."""
    Re = np.asarray(Re, dtype=float)
    _check_array(Re, eD)
    r = eD / 3.7
    k = 2.51 / Re
    A = -2.0 * np.log10(r + 12.0 / Re)
    B = -2.0 * np.log10(r + k * A)
    C = -2.0 * np.log10(r + k * B)
    x = A - (B - A) ** 2 / (C - 2.0 * B + A)
    return 1.0 / (x * x)


@dataclass(frozen=True)
class FrictionMethod:
    """One friction correlation: how to compute it, where it holds and where it comes from.

    ``Re_range`` and ``eD_range`` are closed intervals. ``all_regimes`` is true
    for a formula that covers laminar and transitional flow itself, so
    `friction_factor` uses it as it stands instead of 64/Re and the blend.
    """

    scalar: Callable[[float, float], float]
    array: Callable[[np.ndarray, float], np.ndarray]
    Re_range: tuple[float, float]
    eD_range: tuple[float, float]
    reference: str
    name: str
    all_regimes: bool = False


_COLEBROOK_REF = (
    "Colebrook, C. F. (1939), J. Inst. Civil Eng. 11(4), 133-156; solved with "
    "Clamond, D. (2009), Ind. Eng. Chem. Res. 48(7), 3665-3671"
)

# Ranges: Colebrook and Serghides use the extent of Moody's (1944) chart for turbulent
# flow (common practice); Swamee-Jain as stated by its authors (from memory); Haaland as
# tabulated by Winning and Coole (2013); Churchill states none, and the roughness limit
# is again the chart's.
METHODS: dict[str, FrictionMethod] = {
    "colebrook": FrictionMethod(
        colebrook, colebrook_array, (RE_TURBULENT, 1e8), (0.0, 0.05),
        _COLEBROOK_REF, "Colebrook"),
    "swamee_jain_1976": FrictionMethod(
        swamee_jain_1976, swamee_jain_1976_array, (5e3, 1e8), (1e-6, 1e-2),
        "Swamee, P. K. and Jain, A. K. (1976), J. Hydraul. Div. ASCE 102(5), 657-664",
        "Swamee-Jain"),
    "haaland_1983": FrictionMethod(
        haaland_1983, haaland_1983_array, (RE_TURBULENT, 1e8), (1e-6, 0.05),
        "Haaland, S. E. (1983), J. Fluids Eng. 105(1), 89-90", "Haaland"),
    "churchill_1977": FrictionMethod(
        churchill_1977, churchill_1977_array, (0.0, math.inf), (0.0, 0.05),
        "Churchill, S. W. (1977), Chem. Eng. 84(24), 91-92", "Churchill",
        all_regimes=True),
    "serghides_1984": FrictionMethod(
        serghides_1984, serghides_1984_array, (RE_TURBULENT, 1e8), (0.0, 0.05),
        "Serghides, T. K. (1984), Chem. Eng. 91(5), 63-64", "Serghides"),
}


#: A method name may end in '@laminar' or '@turbulent': in transitional flow (Re 2000-4000) the
#: friction factor is then held at that bound (64/Re, or the turbulent formula) instead of the blend,
#: which is how the range of the answer bounds a flow whose friction factor nobody can predict.
TRANSITION_BOUNDS = {"laminar": 0.0, "turbulent": 1.0}


def _bound(method: str) -> tuple[str, str]:
    """(method, transition bound or '') from a method name such as 'colebrook@laminar'."""
    if isinstance(method, str) and "@" in method:
        base, _, bound = method.partition("@")
        if bound not in TRANSITION_BOUNDS:
            raise ValueError(f"unknown transition bound {bound!r}; choose laminar or turbulent")
        return base, bound
    return method, ""


def _method(method: str) -> FrictionMethod:
    try:
        return METHODS[method]
    except (KeyError, TypeError):
        raise ValueError(
            f"unknown friction method {method!r}; choose one of {', '.join(METHODS)}"
        ) from None


def friction_factor(Re: float, eD: float, method: str = "colebrook") -> float:
    r"""Darcy friction factor in any regime, with the chosen turbulent correlation.

    .. math:: f = \begin{cases}
              64/Re & Re < 2000 \\
              (1 - w)\,64/Re + w\,f_t(Re) & 2000 \le Re < 4000,\ w = (Re - 2000)/2000 \\
              f_t(Re) & Re \ge 4000
              \end{cases}

    Laminar flow follows Hagen-Poiseuille. The linear blend across the
    transition is this program's own choice, not a published correlation: it is
    continuous at both ends and stays between the laminar and turbulent values,
    which bound the true (intermittent, unpredictable) friction factor there;
    `friction_detail` reports the bounds so the sheet can flag the result.
    Churchill (1977) covers every regime itself and is returned as it stands.

    Parameters
    ----------
    Re : float
        Reynolds number, [-]
    eD : float
        Relative roughness eps/D, [-]
    method : str
        A key of `METHODS` naming the turbulent correlation f_t.

    Returns
    -------
    f : float
        Darcy friction factor, [-]

    Examples
    --------
    >>> friction_factor(1000.0, 1e-4)  # Hagen-Poiseuille, 64/Re
    0.064
    >>> round(friction_factor(1e5, 1e-4), 7)  # Colebrook (1939)
    0.0185139

    References
    ----------
    Hagen-Poiseuille laminar law, f = 64/Re, e.g. White, F. M., Fluid Mechanics.
    Turbulent correlations: see `METHODS`.
    """
    bound = ""
    if "@" in method:  # a transition bound: rare, so the common call pays only this test
        method, bound = _bound(method)
    m = _method(method)
    if not (Re > 0.0 and eD >= 0.0):
        _check(Re, eD)
    if m.all_regimes:
        return m.scalar(Re, eD)
    if Re < RE_LAMINAR:
        return 64.0 / Re
    ft = m.scalar(Re, eD)
    if Re >= RE_TURBULENT:
        return ft
    w = (Re - RE_LAMINAR) / (RE_TURBULENT - RE_LAMINAR) if not bound else TRANSITION_BOUNDS[bound]
    return (1.0 - w) * (64.0 / Re) + w * ft


def friction_factor_array(Re: np.ndarray, eD: float, method: str = "colebrook") -> np.ndarray:
    """`friction_factor` for an array of Reynolds numbers, elementwise identical.

    eD is one relative roughness [-] or an array broadcastable to Re's shape;
    the result has Re's shape.

    >>> np.round(friction_factor_array(np.array([1000.0, 1e5]), 1e-4), 7).tolist()
    [0.064, 0.0185139]
    """
    method, bound = _bound(method)
    m = _method(method)
    Re = np.asarray(Re, dtype=float)
    shape = Re.shape
    Re = Re.ravel()
    # eD may be one value or one per Reynolds number (several pipes scanned at once).
    eD = np.broadcast_to(np.asarray(eD, dtype=float), shape).ravel()
    _check_array(Re, eD)
    if m.all_regimes:
        return m.array(Re, eD).reshape(shape)
    f = 64.0 / Re
    turb = Re >= RE_LAMINAR
    if np.any(turb):
        Rt = Re[turb]
        ft = m.array(Rt, eD[turb])
        w = np.minimum((Rt - RE_LAMINAR) / (RE_TURBULENT - RE_LAMINAR), 1.0)
        if bound:
            w = np.full_like(w, TRANSITION_BOUNDS[bound])
        # Same arithmetic as the scalar path, so the two agree to the last rounding.
        f[turb] = np.where(Rt >= RE_TURBULENT, ft, (1.0 - w) * (64.0 / Rt) + w * ft)
    return f.reshape(shape)


def regime(Re: float) -> str:
    """Flow regime by Reynolds number: "laminar", "transitional" or "turbulent".

    Limits `RE_LAMINAR` and `RE_TURBULENT` (common practice).

    >>> regime(1500.0), regime(3000.0), regime(4000.0)
    ('laminar', 'transitional', 'turbulent')
    """
    if not Re > 0.0:
        raise ValueError(f"Reynolds number must be positive (got {Re!r})")
    if Re < RE_LAMINAR:
        return "laminar"
    if Re < RE_TURBULENT:
        return "transitional"
    return "turbulent"


@dataclass(frozen=True)
class FrictionResult:
    """A friction factor with what a checker needs to judge it.

    f_laminar_bound and f_turbulent_bound are the laminar (64/Re) and turbulent
    (method) values at this Re; they differ from f only in transitional flow.
    in_range tells whether the formula that gave f holds here: 64/Re does in
    laminar flow; otherwise Re and eD must lie in the method's ranges.
    """

    f: float
    regime: str
    method: str
    f_laminar_bound: float
    f_turbulent_bound: float
    in_range: bool
    note: str


def friction_detail(Re: float, eD: float, method: str = "colebrook") -> FrictionResult:
    """Friction factor with its regime, bounds in the transition, range check and a note.

    >>> d = friction_detail(3000.0, 1e-4)
    >>> d.regime, d.in_range, d.f_laminar_bound < d.f < d.f_turbulent_bound
    ('transitional', False, True)
    >>> friction_detail(1e5, 1e-4).note
    ''
    """
    m = _method(method)
    f = friction_factor(Re, eD, method)
    reg = regime(Re)
    lo_Re, hi_Re = m.Re_range
    lo_eD, hi_eD = m.eD_range
    in_range = lo_Re <= Re <= hi_Re and lo_eD <= eD <= hi_eD
    if reg == "transitional":
        f_lam = 64.0 / Re
        f_turb = _churchill_turbulent(Re, eD) if m.all_regimes else m.scalar(Re, eD)
        lo, hi = min(f_lam, f_turb, f), max(f_lam, f_turb, f)
        note = (
            f"transitional flow (Re = {Re:.4g}): f is uncertain between "
            f"{lo:.4g} and {hi:.4g}"
        )
        return FrictionResult(f, reg, method, f_lam, f_turb, in_range, note)
    if reg == "laminar" and not m.all_regimes:
        return FrictionResult(f, reg, method, f, f, True, "")
    note = ""
    if not in_range:
        note = (
            f"{m.name} is outside its range here (Re {lo_Re:.4g} to {hi_Re:.4g}, "
            f"eps/D {lo_eD:.4g} to {hi_eD:.4g}; got Re = {Re:.4g}, eps/D = {eD:.4g})"
        )
    return FrictionResult(f, reg, method, f, f, in_range, note)
