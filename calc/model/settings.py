"""The limits a sheet's checks apply (``settings.checks``), with where each default comes from."""

from __future__ import annotations

from dataclasses import dataclass, field, fields

# Where each default limit comes from, written once so that findings, the record and the docs agree.
SRC_PRACTICE = "common practice"
SRC_NPSH = ("ANSI/HI 9.6.1-2012, Rotodynamic Pumps Guideline for NPSH Margin, Hydraulic Institute, Parsippany NJ: "
            "the margin of NPSHA over NPSH3; the figures used, NPSHA/NPSH3 at least 1.1 or NPSH3 + 0.6 m, whichever "
            "is greater, for water services, are as secondary sources summarise it: confirm against the standard")
SRC_BEP = ("common practice: 70-120 % of the best-efficiency flow as the preferred operating region, where "
           "a rotodynamic pump runs with little recirculation, vibration and wear; a pump's own region is its "
           "maker's")
SRC_EN805 = ("common practice: where surge is not calculated, allow at least 200 kPa (29 psi) over the design pressure "
             "(the kind of fixed allowance water-supply codes set; the code where the works are built governs)")


@dataclass
class CheckSettings:
    """Limits the user may set (``settings.checks`` in the sheet); SI units, fractions for percentages.

    ``roughness_low`` / ``roughness_high`` override the roughness range of the uncertainty band:
    ``("factor", x)`` multiplies each run's roughness by x, ``("length", eps)`` sets every run to eps [m].
    None means: each run's own roughness (low) and its material's aged value (high).
    """

    velocity_max: float = 3.0          # [m/s] mains and plant lines
    velocity_max_suction: float = 1.5  # [m/s] pump suction lines
    velocity_min: float = 0.3          # [m/s] below this sediment and air settle
    npsh_margin_ratio: float = 1.1     # [-] NPSHA / NPSHR at least
    npsh_margin_min: float = 0.6       # [m] NPSHA - NPSHR at least
    bep_low: float = 0.70              # [-] of best-efficiency flow
    bep_high: float = 1.20             # [-] of best-efficiency flow
    k_uncertainty: float = 0.20        # [-] fitting and valve K values +/- this fraction
    roughness_low: tuple | None = None
    roughness_high: tuple | None = None
    surge_allowance: float = 200e3     # [Pa] allowed for surge where it is not calculated
    surge_closure_time: float = 0.0    # [s] how fast a valve or turbine can stop the flow; 0 = at once
    given: tuple = field(default=(), compare=False)  # names the user set

    #: Where each default comes from.
    SOURCES = {
        "velocity_max": SRC_PRACTICE + " (mains 0.5-2 m/s or 1.6-6.6 ft/s, plant discharge lines 1.5-3 m/s or "
                                       "4.9-9.8 ft/s)",
        "velocity_max_suction": SRC_PRACTICE + " (pump suction 0.6-1.5 m/s or 2-4.9 ft/s)",
        "velocity_min": SRC_PRACTICE + " (about 0.6 m/s or 2 ft/s keeps a line self-cleansing)",
        "npsh_margin_ratio": SRC_NPSH,
        "npsh_margin_min": SRC_NPSH,
        "bep_low": SRC_BEP,
        "bep_high": SRC_BEP,
        "k_uncertainty": SRC_PRACTICE + " (published K values for one fitting type scatter by tens of per cent)",
        "roughness_low": "each run's roughness as given (new pipe, material table)",
        "roughness_high": "each run's aged roughness from the material table, its source given with the run",
        "surge_allowance": SRC_EN805,
        "surge_closure_time": SRC_PRACTICE + " (screening takes a stop at once, the worst case; give the valve's closure time)",
    }

    #: What each limit is called, on the form and in the record alike.
    LABELS = {
        "velocity_max": "Highest velocity",
        "velocity_max_suction": "Highest velocity in a pump's suction",
        "velocity_min": "Lowest velocity",
        "npsh_margin_ratio": "NPSH margin ratio, NPSHA / NPSHR at least",
        "npsh_margin_min": "NPSH margin, NPSHA − NPSHR at least",
        "bep_low": "Preferred flow, low end (of best-efficiency flow)",
        "bep_high": "Preferred flow, high end (of best-efficiency flow)",
        "k_uncertainty": "Fitting and valve K, ± for the range of the answer",
        "roughness_low": "Roughness, low end of the range",
        "roughness_high": "Roughness, high end of the range",
        "surge_allowance": "Surge allowance where surge is not calculated",
        "surge_closure_time": "Fastest closure of a valve or turbine",
    }

    #: Where each default comes from in a few words, for the hint beside each limit on the form
    #: (``SOURCES`` says it in full).
    SHORT_SOURCES = {
        "velocity_max": "common practice",
        "velocity_max_suction": "common practice",
        "velocity_min": "common practice",
        "npsh_margin_ratio": "ANSI/HI 9.6.1",
        "npsh_margin_min": "ANSI/HI 9.6.1",
        "bep_low": "common practice",
        "bep_high": "common practice",
        "k_uncertainty": "common practice",
        "roughness_low": "the material table",
        "roughness_high": "the material table",
        "surge_allowance": "common practice",
        "surge_closure_time": "common practice: the worst case",
    }

    def source(self, name: str) -> str:
        return "set on the sheet" if name in self.given else self.SOURCES.get(name, "")

    def to_dict(self) -> dict:
        out = {}
        for f in fields(self):
            if f.name == "given":
                continue
            v = getattr(self, f.name)
            out[f.name] = {"value": list(v) if isinstance(v, tuple) else v, "source": self.source(f.name)}
        return out
