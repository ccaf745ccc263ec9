"""The calculation record built from an analysis: the sections a checker reads, top to bottom, as plain data."""

from __future__ import annotations

from calc.record import fingerprint as fp
from calc.record import inputs, method, plots, results, scope, steps
from calc.record.context import Context
from calc.record.parts import ROLE_TITLES, ROLES, Meta, Record, Signature, revision_label
from calc.record.sources import CAUTIONS, DISCLAIMER
from calc.record.text import as_text


def build(analysis, meta: Meta | None = None, version: str | None = None) -> Record:
    """The record of an analysed sheet. ``meta`` carries revision, dates and signatures from the store.

    >>> from calc.analysis import analyse
    >>> from calc.model.sheet import blank_sheet
    >>> rec = build(analyse(blank_sheet()))
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
        "revision": revision_label(meta.label_index, scheme),
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
    signoff = [Signature(r, ROLE_TITLES[r], as_text(by_role.get(r, {}).get("name")),
                         as_text(by_role.get(r, {}).get("comment")), as_text(by_role.get(r, {}).get("signed")))
               for r in ROLES]
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
    return Record(
        scope=scope.scope(b),
        assumptions=scope.assumptions(b),
        inputs=inputs.inputs(b),
        equations=method.equations(b),
        steps=steps.steps(b),
        steps_point=steps.steps_point(b),
        solve_log=results.solve_log(b),
        solve_notes=results.solve_notes(b),
        results=shown_results,
        points_table=results.points_table(b, shown_results),
        no_point=results.no_point(b),
        plots=plots.all_plots(analysis, system),
        findings=results.findings(b),
        solver_notes=list(analysis.solution.warnings),
        uncertainty=results.uncertainty(b),
        references=b.refs.items,
        **common,
    )
