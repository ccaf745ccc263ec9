"""The record's results: the solve log, operating points, findings by severity and the range of the answer."""

from __future__ import annotations

from calc.record.context import Context
from calc.record.parts import Table
from calc.record.sources import WAVE_REF, looks_published
from calc.record.text import DISPLAY_KINDS, as_text, num, shown
from calc.water import G


def solve_log(c: Context) -> list[Table]:
    log = c.sol.log
    s = c.system
    rows = []
    for k, r in enumerate(log.get("roots", [])):
        a, b = r["bracket"]
        rows.append([str(k + 1), f"{shown(a, 'flow', s, 6)} to {shown(b, 'flow', s, 6)}",
                     str(r["iterations"]), str(r["function_calls"]), shown(r["Q"], "flow", s, 6),
                     f"{num(r['residual'], 3)} m"])
    return [Table(["Root", "Bracket", "Iterations", "Function calls", "Flow", "Final residual E"], rows,
                  "Roots closed with Brent's method", ["r", "l", "r", "r", "r", "r"], css="roots")]


def _count(n, one: str, many: str = "") -> str:
    """'1 bracket', '2 brackets'; a dash for an unknown count."""
    if not isinstance(n, int):
        return f"– {many or one + 's'}"
    return f"{n} {one if n == 1 else many or one + 's'}"


def solve_notes(c: Context) -> list[str]:
    sol = c.sol
    out = [f"Status: {sol.status.replace('_', ' ')}; {sol.message}."]
    scan = sol.log.get("scan", {})
    if scan:
        s = c.system
        out.append(f"E(Q) scanned from {shown(scan.get('Q_min'), 'flow', s)} to {shown(scan.get('Q_max'), 'flow', s)} "
                   f"on {scan.get('grid_points', '–')} logarithmic grid points: {_count(scan.get('brackets'), 'bracket')} "
                   f"with a sign change, {_count(scan.get('extrema_refined'), 'extremum', 'extrema')} refined "
                   "(close pairs of roots).")
    if sol.design is not None:  # why it is the design point: with the operating points in the results
        out.append(f"Design point: operating point {sol.design_index + 1} (see the results).")
    return out


def results(c: Context) -> list[dict]:
    s = c.system
    out = []
    for k, p in enumerate(c.sol.points):
        rows = []
        for el, d in zip(c.line.elements, p["elements"]):
            name = f"{d['index'] + 1}. {el.label or el.kind}"
            if d["kind"] == "pipe":
                rows.append([name, shown(d["V"], "velocity", s), num(d["Re"]), num(d["f"]),
                             shown(d["h_friction"], "head", s), shown(d["h_fittings"], "head", s),
                             shown(d["head_change"], "head", s), "–"])
            elif d["kind"] == "valve":
                rows.append([name, shown(d["V"], "velocity", s), "–", "–", "–", shown(d["h"], "head", s),
                             shown(d["head_change"], "head", s), "–"])
            else:
                rows.append([name, "–", "–", "–", "–", "–", shown(d["head_change"], "head", s),
                             shown(d.get("power_shaft"), "power", s)])
        design = bool(p.get("is_design"))
        elements = grade = None
        if design:  # the other points are summed up in the table of points
            elements = Table(["Element", "V", "Re", "f", "Friction loss", "Fitting loss", "Head taken",
                              "Shaft power"], rows, "", ["l"] + ["r"] * 7, css="elements")
            stations = []
            prof = p["profile"]
            low_j = min(range(len(prof)), key=lambda j: prof[j]["pressure_head"]) if prof else -1
            high_j = max(range(len(prof)), key=lambda j: prof[j]["pressure_head"]) if prof else -1
            for j, st in enumerate(prof):
                # each run's ends and each machine's or valve's sides, and the lowest and highest pressure: the
                # surveyed points between are in the grade-line figure
                ends = (j == 0 or j == len(prof) - 1 or prof[j - 1]["element"] != st["element"]
                        or prof[j + 1]["element"] != st["element"])
                if not ends and j not in (low_j, high_j):
                    continue
                row = [shown(st["chainage"], "length", s), shown(st["elevation"], "length", s),
                       shown(st["hgl"], "head", s), shown(st["egl"], "head", s),
                       shown(st["pressure_head"], "head", s),
                       shown(st["pressure_head"] * c.liquid.rho * G, "pressure", s)]
                if not stations or row != stations[-1]:  # a station repeated at the printed precision says nothing new
                    stations.append(row)
            grade = Table(["Chainage", "Elevation", "HGL", "EGL", "Pressure head", "Pressure (gauge)"], stations,
                          "", ["r"] * 6, css="compact grade",
                          note="Each run's ends, each machine's and valve's sides, and the lowest and highest pressure; "
                               "the grade lines through every surveyed point are drawn in the grade-line figure.")
        low = min(p["profile"], key=lambda st: st["pressure_head"]) if p["profile"] else None
        summary = [["Flow Q", shown(p["Q"], "flow", s)],
                   ["Total head at the start", shown(p["head_start"], "head", s)],
                   ["Total head at the end", shown(p["head_end"], "head", s)]]
        losses = sum(d["head_change"] for d in p["elements"] if d["kind"] in ("pipe", "valve"))
        summary.append(["Line losses (pipe runs and valves)", shown(losses, "head", s)])
        for el, d in zip(c.line.elements, p["elements"]):
            name = f"{d['index'] + 1}. {el.label or el.kind}"
            if d["kind"] == "pipe" and len(c.sol.points) > 1:  # else in the table of elements
                summary.append([f"{name}: velocity", shown(d["V"], "velocity", s)])
            elif d["kind"] == "turbine":
                summary.append([f"{name}: head taken", shown(d["head"], "head", s)])
                summary.append([f"{name}: shaft power", shown(d["power_shaft"], "power", s)])
            elif d["kind"] == "pump":
                summary.append([f"{name}: head added", shown(d["head"], "head", s)])
                if d.get("power_shaft") is not None:
                    summary.append([f"{name}: shaft power", shown(d["power_shaft"], "power", s)])
        if low is not None:
            summary.append(["Lowest pressure head", shown(low["pressure_head"], "head", s)])
            summary.append(["… at chainage", shown(low["chainage"], "length", s)])
        out.append({
            "number": k + 1,
            "design": design,
            "attainable": p.get("attainable", True),
            "why": p.get("why", ""),
            "Q": shown(p["Q"], "flow", s),
            "summary": summary,
            "elements": elements,
            "grade": grade,
        })
    return out


def points_table(c: Context, results: list[dict]) -> Table | None:
    """Every operating point side by side: one column each, the design point marked."""
    if not results:
        return None
    labels: list[str] = []
    for r in results:
        for label, _ in r["summary"]:
            if label not in labels:
                labels.append(label)
    values = [dict((label, v) for label, v in r["summary"]) for r in results]
    head = ["Quantity"] + [f"Point {r['number']}" + (" (design)" if r["design"] else
                                                      " (cannot occur)" if not r["attainable"] else "") for r in results]
    rows = [[label] + [v.get(label, "–") for v in values] for label in labels]
    return Table(head, rows, "", ["l"] + ["r"] * len(results), css=f"points points-{len(results)}")


def no_point(c: Context) -> str:
    return c.sol.no_point["reason"] if c.sol.no_point else ""


#: Information the record prints in its working or results, so not again among the findings: a machine's
#: duty point (section 5), the pipeline period (the wave-speed table), a transient peak within its rating
#: (the transient table). A finding of these codes that is a caution, warning or error is always listed.
WORKED_ELSEWHERE = {"turbine-duty": "each machine's duty point (section 5)", "pump-duty": "each machine's duty point (section 5)",
                    "surge-period": "the pipeline period 2L/a (section 5)",
                    "surge-screen": "each run's surge screening (the screening table, section 7)",
                    "surge-rating": "each run's surge screening (the screening table, section 7)",
                    "transient-rating": "transient peaks within rating (the transient tables, section 7)"}
#: Of those, the ones the record prints for the base case only: a case's own screening is listed.
WORKED_ELSEWHERE_CASE_FREE = {"surge-screen", "surge-rating"}


def surge_screening(c: Context) -> Table | None:
    """Each run's surge screening at the design point as one table (Joukowsky's rise reaching it and where
    from, its highest steady pressure, the two together against its rating), for a sheet whose base case is
    screened rather than run in time."""
    from calc.review.findings import RATING_NEAR

    if not _screened(c):
        return None
    s = c.system
    rows = []
    for r in c.screening:
        if r["w"]["a"] is None:
            rise, frm = f"allowance {shown(r['surge'], 'pressure', s)}", "wave speed unknown"
        else:
            rise = (f"{shown(r['up'], 'head', s)} = {shown(r['surge'], 'pressure', s)}" if r["up"] > 0 else "none")
            frm = r["up_from"] or "downstream of every stop"
        rating = r["rating"]
        verdict = ("no rating given" if not rating else "steady pressure over rating" if r["p_steady"] > rating else
                   "over rating" if r["peak"] > rating else "within 10 % of rating" if r["peak"] > RATING_NEAR * rating
                   else "within rating")
        rows.append([r["name"], rise, frm, shown(r["p_steady"], "pressure", s), shown(r["peak"], "pressure", s),
                     shown(rating, "pressure", s) if rating else "–", verdict])
    return Table(["Run", "Rise reaching it", "From", "Highest steady pressure", "Steady + rise", "Rating",
                  "Against it"], rows, "Surge screening at the design point (Joukowsky; not a transient analysis)",
                 ["l", "r", "l", "r", "r", "r", "l"], css="surge-screen",
                 note="A run's own velocity stopped at once would give a V/g, in the wave-speed table of section 5; "
                      "the findings list any run over or near its rating, or whose column may part.")



def findings_elsewhere(c: Context) -> list[str]:
    """What the findings do not repeat, because the working or results print it, or a more specific finding
    says it."""
    codes = {f.code for f in c.a.findings if f.severity == "info" and not (f.code in WORKED_ELSEWHERE_CASE_FREE and f.case)}
    out = list(dict.fromkeys(text for code, text in WORKED_ELSEWHERE.items() if code in codes))
    if _said_per_run(c) and any(f.code == "surge-pump-trip" for f in c.a.findings):
        out.append("the general caution on a pump trip's down-surge (the column-separation warnings say it run by run)")
    return out


def _screened(c: Context) -> bool:
    """Whether the base case is screened for surge (not run in time), so that the record has a screening table."""
    return c.design is not None and any(f.code == "surge-screen" and not f.case for f in c.a.findings)


def _said_per_run(c: Context) -> bool:
    """Whether a pump trip's down-surge is a warning for some run (column separation), which says what the
    general pump-trip caution says, for that run."""
    parted = {f.element for f in c.a.findings if f.code == "surge-column-separation" and not f.case}
    return bool(parted) and any(r["index"] in parted and r["down_from"].startswith("a trip of") for r in c.screening)


def findings(c: Context) -> dict[str, list[dict]]:
    from calc.review.findings import SEVERITIES

    groups: dict[str, list[dict]] = {}
    published = " ".join(str(getattr(f, "source", "")) for f in c.a.findings
                         if looks_published(str(getattr(f, "source", "")))).lower()
    for f in c.a.findings:
        d = f.to_dict() if hasattr(f, "to_dict") else dict(f)
        if d.get("code") == "general-codes":  # the record's disclaimer says it, once
            continue
        if d.get("code") == "surge-pump-trip" and _said_per_run(c):  # each run's warning says it, specifically
            continue
        if d.get("severity") == "info" and d.get("code") in WORKED_ELSEWHERE and not (
                d.get("code") in WORKED_ELSEWHERE_CASE_FREE and d.get("case")):  # its figures are printed already
            continue
        q = d.get("quantity")
        value = limit = ""
        if d.get("value") is not None:
            value = shown(d["value"], q, c.system) if q in DISPLAY_KINDS else num(d["value"])
        if d.get("limit") is not None:
            limit = shown(d["limit"], q, c.system) if q in DISPLAY_KINDS else num(d["limit"])
        source = d.get("source") or ""
        ref = c.refs.cite(source, "checks") if looks_published(source) else ""
        if str(d.get("code", "")).startswith("surge"):
            if "joukowsky" not in published and "korteweg" not in published:
                ref += c.refs.cite(WAVE_REF, "surge check")
        where = ""
        if d.get("element") is not None and 0 <= d["element"] < len(c.line.elements):
            el = c.line.elements[d["element"]]
            # the element by its number; by its label too unless the title already names it
            named = bool(el.label) and as_text(d.get("title")).startswith(el.label)
            where = f"element {d['element'] + 1}" + (f" «{el.label}»" if el.label and not named else "")
        if d.get("chainage") is not None:
            where += (", " if where else "") + f"chainage {shown(d['chainage'], 'length', c.system)}"
        sev = d.get("severity") if d.get("severity") in SEVERITIES else "info"
        groups.setdefault(sev, []).append({
            "title": as_text(d.get("title")), "message": as_text(d.get("message")), "value": value,
            "limit": limit, "source": source, "ref": ref, "where": where, "code": as_text(d.get("code")),
            "case": as_text(d.get("case")),
        })
    _merge_unrated(c, groups)
    _merge_general(groups)
    return {sev: groups[sev] for sev in SEVERITIES if sev in groups}


def _merge_general(groups: dict[str, list[dict]]) -> None:
    """The cautions every line carries (ratings, anchorage, air valves, confined spaces, electrical safety) as one
    paragraph at the end of the cautions, each with its source in place: read once, not as a list of their own."""
    cautions = groups.get("caution", [])
    general = [f for f in cautions if f["code"].startswith("general-") and f["code"] != "general-surge"]
    if len(general) < 2:
        return
    words = " ".join(f"{f['title']}: {f['message']}" + (f" {f['ref']}" if f["ref"] else
                                                         f" ({f['source']})" if f["source"] else "")
                     for f in general)
    groups["caution"] = [f for f in cautions if f not in general] + [
        {**general[0], "title": "General cautions", "message": words, "ref": "", "source": "", "where": "",
         "code": "general"}]


def _merge_unrated(c: Context, groups: dict[str, list[dict]]) -> None:
    """The base case's runs with no pressure rating, as one caution naming them: their pressures, steady and
    with the surge, are in the screening table."""
    cautions = groups.get("caution", [])
    unrated = [f for f in cautions if f["code"] == "surge-no-rating" and not f.get("case")]
    if len(unrated) < 2 or not _screened(c):
        return
    first = cautions.index(unrated[0])
    names = [f["title"].removesuffix(": no pressure rating given") for f in unrated]
    merged = {**unrated[0], "title": "No pressure rating given", "where": "", "value": "",
              "message": f"{', '.join(names)}: give the rating of each run's pipe and joints to check it against its "
                         "highest pressure, steady and with the surge (the surge screening table, section 7)."}
    groups["caution"] = [f for f in cautions if f not in unrated]
    groups["caution"].insert(first, merged)


def uncertainty(c: Context) -> list[Table]:
    """The uncertainty band of the checks (``analysis.band``): flow range by factor and by case."""
    band = getattr(c.a, "band", None)
    if not isinstance(band, dict) or band.get("Q_nominal") is None:
        return []
    s = c.system
    rows = [["All factors together", shown(band.get("Q_low"), "flow", s), shown(band.get("Q_nominal"), "flow", s),
             shown(band.get("Q_high"), "flow", s)]]
    for name, f in (band.get("factors") or {}).items():
        if isinstance(f, dict):
            rows.append([str(name).replace("_", " ").capitalize(), shown(f.get("Q_low"), "flow", s),
                         shown(band.get("Q_nominal"), "flow", s), shown(f.get("Q_high"), "flow", s)])
    out = [Table(["Factor", "Lowest flow", "Nominal flow", "Highest flow"], rows,
                 "Uncertainty band: the design flow over the range of the uncertain inputs (the range of the answer, above)",
                 ["l", "r", "r", "r"], css="band-factors")]
    notes = [n for n in band.get("notes") or [] if isinstance(n, str)]
    if notes:
        out[0].note = "; ".join(notes)
    return out
