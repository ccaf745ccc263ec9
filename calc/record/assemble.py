"""The calculation record built from an analysis: the sections a checker reads, top to bottom, as plain data."""

from __future__ import annotations

from calc.record import cases, energy, inputs, method, plots, results, scope, steps, transient
from calc.record import fingerprint as fp
from calc.record.context import Context
from calc.record.parts import ROLE_TITLES, ROLES, Meta, Record, Signature, revision_label
from calc.record.sources import CAUTIONS, DISCLAIMER
from calc.record.text import as_text

#: The record's charts are drawn this many px wide, two to a row of the page: their 12 px lettering prints at
#: about 7.5 pt on A4 or Letter (the sheet page draws them 600 px wide, one to a row).
RECORD_CHART_WIDTH = 400
#: ... and their plot areas this high [px]: a row of two figures takes about a third of a page.
RECORD_PLOT_HEIGHT = 135


def build(analysis, meta: Meta | None = None, version: str | None = None) -> Record:
    """The record of an analysed sheet. ``meta`` carries revision, dates and signatures from the store.

    >>> from calc.analysis import analyse
    >>> from calc.model.sheet import blank_sheet
    >>> doc = blank_sheet(); doc["elements"][0].update(length="500 m", diameter="150 mm", end_elevation="78 m")
    >>> doc["liquid"]["temperature"], doc["start"]["elevation"], doc["end"]["elevation"] = "15 degC", "100 m", "80 m"
    >>> rec = build(analyse(doc))
    >>> rec.header["revision"], rec.signed, [g.kind for g in rec.steps][:2]
    ('A', False, ['liquid', 'start'])
    """
    meta = meta or Meta()
    version = fp.program_version() if version is None else version
    doc = analysis.doc if isinstance(analysis.doc, dict) else {}
    hdr_doc = doc.get("header") if isinstance(doc.get("header"), dict) else {}
    scheme = hdr_doc.get("revision_scheme") if hdr_doc.get("revision_scheme") in ("letters", "numbers") else "letters"
    system = hdr_doc.get("units") if hdr_doc.get("units") in ("SI", "US") else "SI"
    header = {
        "project": as_text(hdr_doc.get("project")),
        "calc_number": as_text(hdr_doc.get("calc_number")),
        "title": as_text(hdr_doc.get("title")),
        "revision": meta.label or revision_label(meta.label_index, scheme),
        "issue": revision_label(meta.label_index, scheme),
        "revision_scheme": scheme,
        "store_revision": meta.store_revision,
        "sheet_id": meta.sheet_id,
        "created": meta.created,
        "printed": meta.printed,
        "units": system,
        "frozen": meta.frozen,
    }
    fprint = fp.fingerprint(analysis, version)
    by_role = {s.get("role"): s for s in meta.signatures}
    signoff = [signature(r, by_role.get(r), analysis, fprint, version) for r in ROLES]
    codes = {str(getattr(f, "code", "")) for f in analysis.findings}
    cautions = [text for covered, text in CAUTIONS if not codes.intersection(covered)]
    common = dict(header=header, purpose=as_text(hdr_doc.get("purpose")), disclaimer=DISCLAIMER,
                  cautions=cautions, signoff=signoff, fingerprint=fprint,
                  fingerprint_grouped=fp.grouped(fprint), verify_url=meta.verify_url, program=fp.PROGRAM,
                  version=version)
    if not analysis.ok:
        return Record(scope=[], references=[], assumptions=[], inputs=[], equations=[], steps=[],
                      steps_point="", solve_log=[], solve_notes=[], results=[], points_table=None, no_point="", plots=[], findings={},
                      solver_notes=[], uncertainty=[],
                      errors=[{"path": e.path, "message": e.message} for e in analysis.errors], **common)
    b = Context(analysis, system)
    shown_results = results.results(b)
    worked = steps.steps(b)
    return Record(
        scope=scope.scope(b),
        assumptions=scope.assumptions(b),
        inputs=inputs.inputs(b),
        equations=method.equations(b),
        steps=worked,
        working=steps.working(b, worked),
        steps_point=steps.steps_point(b),
        solve_log=results.solve_log(b),
        solve_notes=results.solve_notes(b),
        results=shown_results,
        points_table=results.points_table(b, shown_results),
        no_point=results.no_point(b),
        plots=plots.all_plots(analysis, system, width=RECORD_CHART_WIDTH, plot_height=RECORD_PLOT_HEIGHT),
        findings=results.findings(b),
        findings_elsewhere=results.findings_elsewhere(b),
        surge_screen=results.surge_screening(b),
        solver_notes=list(analysis.solution.warnings),
        uncertainty=results.uncertainty(b),
        references=b.refs.items,
        cases=cases.cases(b),
        energy=energy.energy(b),
        transients=transient.transients(b),
        **common,
    )


def signature(role: str, stored: dict | None, analysis, current: str, version: str) -> Signature:
    """A role's line of the sign-off: who signed, how they were identified, and whether it still stands.

    The fingerprint a signature carries is compared with the revision's fingerprint recomputed
    now, under the program version the signature was made with: a signature that does not match
    is broken, whatever else it says. One imported from another server is shown as imported
    unless its export was signed by an installation this server trusts.
    """
    if not stored:
        return Signature(role, ROLE_TITLES[role])
    sig_version = as_text(stored.get("version")) or version
    expected = current if sig_version == version else fp.fingerprint(analysis, sig_version)
    origin = as_text(stored.get("origin"))
    login = as_text(stored.get("login"))
    when = as_text(stored.get("signed"))[:16].replace("T", " ")
    if as_text(stored.get("fingerprint")) != expected:
        status = "broken"
        how = (f"Its fingerprint {as_text(stored.get('fingerprint'))[:16]}… is not this revision's "
               f"({expected[:16]}…, recomputed by version {sig_version}).")
    elif origin:
        trusted = origin.startswith("trusted:")
        status = "trusted" if trusted else "imported"
        source = origin.split(":", 1)[1] if trusted else origin
        how = (f"Made on {source} as account '{login}' and imported in an export signed by that installation, "
               "whose key this server trusts." if trusted else
               f"Imported from {source}; not made on this server, so the signer's identity was not confirmed here.")
    elif as_text(stored.get("identified")):
        status = "valid"
        how = f"Account '{login}' on this server; {as_text(stored.get('identified'))}, {when} UTC."
    else:
        status = "typed"
        how = "Name typed at signing, before this server had accounts: the signer's identity was not confirmed."
    return Signature(role, ROLE_TITLES[role], as_text(stored.get("name")), as_text(stored.get("comment")),
                     as_text(stored.get("signed")), login, as_text(stored.get("initials")), status, how)
