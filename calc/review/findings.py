"""What a check reports (`Finding`), the severities in order, and the sources and limits the checks share."""

from __future__ import annotations

from dataclasses import asdict, dataclass

from calc.model.elements import Line, PipeRun, Pump, Valve
from calc.transient.sources import WAVE_REF
from calc.units import to_display

#: Severity order, worst first.
SEVERITIES = ("error", "warning", "caution", "info")

# Where each limit comes from, written once so that findings, the record and the docs agree; the
# sources of the limits a user may set live beside those settings (calc.model.settings).
SRC_AIR = ("AWWA Manual M51, Air Valves: Air-Release, Air/Vacuum, and Combination, 2nd edition (2016): "
           "where air collects and which valve lets air out or in")
SRC_VAPOUR = "vapour pressure of the liquid (water: IAPWS-IF97 saturation equation)"
SRC_KORTEWEG = SRC_JOUKOWSKY = WAVE_REF  # Korteweg's wave speed, Joukowsky's rise: one textbook
SRC_PENSTOCK = ("Leon, A. S. and Zhu, L. (2014). A dimensional analysis for determining optimal discharge and "
                "penstock diameter in impulse and reaction water turbines. Renewable Energy 71: 609-615: head loss "
                "at most about 15 % of the gross head")
SRC_MAX_POWER = ("largest power where line losses are about one third of gross head with a near-constant "
                 "friction factor (standard textbook result); found here by search on the solved line")
SRC_LAMINAR = "Hagen-Poiseuille f = 64/Re; laminar K values: Rennels and Hudson, Pipe Flow (2012)"
SRC_TRANSITION = "no reliable correlation for 2000 < Re < 4000 (Moody 1944 'critical zone'), common practice"

#: Loss of gross head in a penstock above which a caution / a warning is raised [-].
PENSTOCK_LOSS_CAUTION = 0.10   # common practice (5-10 %)
PENSTOCK_LOSS_WARNING = 0.15   # Leon and Zhu 2014
#: Fraction of a run's rating at which a pressure is close enough to warn [-] (common practice).
RATING_NEAR = 0.90
#: Pressure heads within this of a limit count as on it [m]: a submerged exit or a free jet sits at
#: exactly zero gauge, which rounding must not turn into a sub-atmospheric stretch.
H_TOL = 1e-6


@dataclass
class Finding:
    """One check's outcome, shaped for the results panel and the record.

    ``value`` and ``limit`` are SI floats of the display ``quantity`` (velocity, head, pressure,
    power, flow, length); ``quantity`` is None for plain numbers (ratios as fractions, times in s),
    whose values the message states.
    """

    severity: str            # error | warning | caution | info
    code: str                # stable short name of the check, e.g. "velocity-high"
    title: str               # a few words
    message: str             # one or two sentences in plain words
    value: float | None = None
    limit: float | None = None
    quantity: str | None = None  # display quantity of value/limit (velocity, head, pressure...)
    source: str = ""         # where the limit comes from, or 'common practice'
    element: int | None = None
    chainage: float | None = None
    case: str | None = None  # on a sheet with cases: the case it comes from (calc.review.governing.merge)
    cases: tuple = ()        # ... and every case where the check spoke

    def to_dict(self) -> dict:
        return asdict(self)


def label(line: Line, index: int | None) -> str:
    if index is None:
        return "a node"
    el = line.elements[index]
    return el.label or f"element {index + 1}"


def suction_runs(line: Line) -> set[int]:
    """Indices of pipe runs (and valves) between the start or the previous machine and a pump."""
    out: set[int] = set()
    for i, el in enumerate(line.elements):
        if isinstance(el, Pump):
            j = i - 1
            while j >= 0 and isinstance(line.elements[j], (PipeRun, Valve)):
                out.add(j)
                j -= 1
    return out


class Shown:
    """A value in the sheet's own units for a finding's words: ``u(0.0432, "flow", ".3g")`` gives '43.2 L/s'
    on an SI sheet and '685 gpm' on a US one (the value and limit fields stay SI)."""

    def __init__(self, system: str = "SI"):
        self.system = system if system in ("SI", "US") else "SI"

    def __call__(self, value: float, quantity: str, spec: str) -> str:
        v, unit = to_display(value, quantity, self.system)
        return f"{v:{spec}} {unit}"


def shown_in(line: Line) -> Shown:
    """The display units of the sheet the line came from."""
    return Shown((line.header or {}).get("units", "SI"))
