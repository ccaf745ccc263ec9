"""Whatever is typed into the transient inputs, the analysis answers: a run, a message beside a field, or a
problem that names its field; never an exception, never a non-finite number in the JSON (common practice:
random inputs drawn from values that sit at and past every limit)."""

from __future__ import annotations

import copy
import json
import random
from pathlib import Path

from calc.analysis import analyse
from calc.model.ids import ensure_ids

EXAMPLES = Path(__file__).resolve().parents[3] / "examples"
VALUES = ["", "0 s", "0.001 s", "5 s", "1e3 s", "-1 s", "abc", "0", "1", "50 %", "200 %", "1e-9 m^3", "1e6 m^3",
          "2 m^3", "0.1 kg m^2", "1e7 kg m^2", "1 rpm", "1e4 rpm", "10 m", "5000 m", "-50 m", "400 m", "1 mm", "3 m",
          "0.5 m^2", "1e4 m^2", "linear", "exponent", "table"]
#: Values that each field takes when typed sensibly, mostly drawn, so that most trials reach the run.
GOOD = {"start": ["0 s", "0.5 s", ""], "time": ["0 s", "2 s", "6 s"], "to": ["", "0", "30 %"],
        "inertia": ["0.5 kg m^2", "3 kg m^2"], "rated_speed": ["1450 rpm", "2900 rpm"], "law": ["linear", "exponent"],
        "exponent": ["1.5", "0.5"], "check_valve": ["yes"], "chainage": ["30 m", "600 m", "1500 m"],
        "area": ["3 m^2", "20 m^2"], "bottom": ["40 m", "300 m"], "top": ["200 m", "480 m"], "volume": ["2 m^3"],
        "gas_volume": ["1 m^3"], "connection_diameter": ["150 mm"], "inflow_diameter": ["50 mm"],
        "outflow_diameter": ["5 mm"], "surface": [""], "exponent_device": ["1.2"], "K_in": ["1"], "throat_K": [""],
        "throat_diameter": [""]}
EVENT_KEYS = ("start", "time", "to", "inertia", "rated_speed", "law", "exponent", "check_valve")
DEVICE_KEYS = ("chainage", "area", "bottom", "top", "volume", "gas_volume", "connection_diameter", "inflow_diameter",
               "outflow_diameter", "surface", "exponent", "K_in", "throat_K", "throat_diameter")


def test_random_transient_inputs_never_break_the_analysis():
    rnd = random.Random(14)
    bases = [ensure_ids(json.loads((EXAMPLES / f"{n}.json").read_text())) for n in ("pumped-main", "hydro-penstock")]
    answered = {"run": 0, "refused": 0, "problem": 0}
    for _ in range(80):
        doc = copy.deepcopy(rnd.choice(bases))
        ids = [e["id"] for e in doc["elements"]] + ["end", "nope", ""]
        kind = rnd.choice(["valve", "turbine", "pump_trip", "pump_start"] * 4 + ["bogus"])
        fits = [e["id"] for e in doc["elements"] if e["kind"] == {"valve": "valve", "turbine": "turbine"}.get(kind, "pump")]
        ev = {"kind": kind, "element": rnd.choice(fits) if fits and rnd.random() < 0.9 else rnd.choice(ids)}
        ev.update({k: rnd.choice(GOOD[k] if rnd.random() < 0.97 else VALUES) for k in EVENT_KEYS})
        if rnd.random() < 0.3:
            ev["law"] = "table"
            ev["table"] = [{"time": rnd.choice(VALUES), "opening": rnd.choice(VALUES)} for _ in range(rnd.randint(0, 4))]
        dev = {"kind": rnd.choice(["surge_tank", "air_vessel", "air_valve"])}
        dev.update({k: rnd.choice(GOOD.get(k if k != "exponent" else "exponent_device") if rnd.random() < 0.97
                                  else VALUES) for k in DEVICE_KEYS})
        doc["transient"] = {"duration": rnd.choice(["5 s", "20 s", "0.5 s"]), "events": [ev],
                            "devices": [dev] if rnd.random() < 0.6 else [],
                            "points": [{"chainage": rnd.choice(GOOD["chainage"] + VALUES[:3])}]}
        a = analyse(doc, transients="quick")
        json.dumps(a.to_dict(), allow_nan=False)
        if a.errors:
            answered["refused"] += 1
            assert all(e.path for e in a.errors)
        elif a.transients and a.transients[0].summary is not None:
            answered["run"] += 1
        else:
            answered["problem"] += 1
            t = a.transients[0]
            assert (t.problem and t.problem[0]) or t.deferred
    assert answered["refused"] >= 5 and answered["run"] >= 10, answered
