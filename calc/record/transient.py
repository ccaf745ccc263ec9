"""The record's transient analysis: the method with its references, and for each case with events its
events, grid, devices and each run's highest and lowest pressure against its rating; for the cases
without events, that the surge findings are the screening estimate's. Empty when no case has events."""

from __future__ import annotations

from calc.record.context import Context
from calc.record.parts import Table
from calc.record.text import shown
from calc.transient.sources import DVCM_REF, MOC_REF  # noqa: F401 (the record's transient section cites them)


def _as_worked(c: Context, r: dict) -> bool:
    """Whether a run's wave speed in this case is the one the working (the base case) shows, to 0.05 %."""
    from calc.transient.wave import wave_speed_detail

    i = r.get("element")
    if i is None or not 0 <= i < len(c.line.elements):
        return False
    a = wave_speed_detail(c.line, c.line.elements[i]).get("a")
    return bool(a) and abs(r["wave_speed"] - a) <= 5e-4 * a


def transients(c: Context) -> list[dict]:
    runs = getattr(c.a, "transients", []) or []
    if not runs:
        return []
    s = c.system
    r_moc = c.refs.cite(MOC_REF, "transient analysis")
    r_dvcm = c.refs.cite(DVCM_REF, "vapour cavities")
    method = (f"Method of characteristics {r_moc}: H_P = C_P - B Q_P along C+ and H_P = C_M + B Q_P along C-, "
              "B = a/(gA), C_P = H_A + B Q_A - R Q_A|Q_A|, R = f dx/(2 g D A²), with quasi-steady friction (each "
              "run's losses, fittings included, lumped into f at its steady flow, so that t = 0 is the steady "
              "answer, and worked again at its mean flow as that moves); one time step, each run's reaches "
              "dx = a dt (Courant number 1), its wave speed adjusted to fit as listed. Joints in total head: "
              "valves by their relative flow coefficient in time, turbines as the steady orifice scaled by the "
              "gate, pumps on their curves (after a trip by the homologous laws and I ω dα/dt = -T, an ideal check "
              "valve shutting on reverse flow). Vapour cavities where the head falls to the vapour head (discrete "
              f"vapour cavity model {r_dvcm}); surge tanks by their level, air vessels by p V^n = constant, air "
              "valves by isentropic orifice flow of air.")
    out = []
    names = {t.name.casefold() for t in runs}
    screening = [cr.name for cr in c.a.cases if cr.name.casefold() not in names]
    for t in runs:
        sec = {"case": t.name, "method": method, "problem": "", "tables": [], "events": [], "notes": []}
        if t.summary is None:
            sec["problem"] = (t.problem[1] if t.problem else t.deferred) or "not run"
            out.append(sec)
            continue
        sm = t.summary
        sec["events"] = sm["events"]
        sec["notes"] = [f"Grid: {sm['reaches']} reaches, time step {sm['dt'] * 1000:.4g} ms, {sm['steps']} steps over "
                        f"{sm['duration']:.4g} s."] + list(sm["notes"]) + [
                        f"{r['run']}: {r['wave_speed_text']}." for r in sm["runs"] if not _as_worked(c, r)]
        if any(_as_worked(c, r) for r in sm["runs"]):
            sec["notes"].append("Wave speeds before adjustment as worked in section 5, where not given here.")
        rows = []
        for r in sm["runs"]:
            rating = shown(r["rating"], "pressure", s) if r["rating"] else "none given"
            verdict = ("over its rating" if r["rating"] and r["p_max"] > r["rating"] else
                       "within its rating" if r["rating"] else "no rating")
            rows.append([r["run"], f"{r['wave_speed']:.0f} → {r['wave_speed_used']:.0f} m/s",
                         f"{shown(r['p_max'], 'pressure', s)} at {shown(r['at_max'], 'length', s)}",
                         f"{shown(r['p_min'], 'pressure', s)} at {shown(r['at_min'], 'length', s)}", rating,
                         verdict + ("; vapour line reached" if r["vapour_reached"] else "")])
        sec["tables"].append(Table(["Run", "Wave speed (adjusted)", "Highest pressure", "Lowest pressure", "Rating",
                                    "Against them"], rows, f"Transient pressures, case {t.name}",
                                   ["l", "r", "r", "r", "r", "l"], css="transient"))
        if sm["devices"]:
            drows = []
            for d in sm["devices"]:
                if d["kind"] == "surge_tank":
                    what = (f"level {shown(d['level_min'], 'length', s)} to {shown(d['level_max'], 'length', s)} "
                            f"(floor {shown(d['bottom'], 'length', s)}, rim {shown(d['top'], 'length', s)})")
                elif d["kind"] == "air_vessel":
                    what = f"gas {d['gas_min']:.4g} to {d['gas_max']:.4g} m³ of {d['volume']:.4g} m³"
                else:
                    what = (f"air in up to {d['air_max'] * 1000:.3g} L" if d["opened_at"] is not None else "stayed shut")
                drows.append([d["label"], d["kind"].replace("_", " "), shown(d["chainage"], "length", s), what])
            sec["tables"].append(Table(["Device", "Kind", "At chainage", "In the run"], drows,
                                       f"Protection devices, case {t.name}", ["l", "l", "r", "l"], css="transient"))
        out.append(sec)
    if screening:
        out[-1]["notes"].append("Cases without events (" + ", ".join(screening) + "): the surge findings are the "
                                "screening estimate's (Joukowsky's rise for a sudden stop), not a transient run.")
    return out
