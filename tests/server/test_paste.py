"""Rows pasted from a spreadsheet or a maker's data sheet: reading the table (separators, header, units) and
filling a curve, a ground profile or a list of fittings, through `server.editing` and the sheet route."""

from __future__ import annotations

import copy
import json

import pytest
from servertools import HX, demo_files

from calc.model.sheet import parse
from calc.units import Q_
from server import editing
from server import paste as paste_module
from server.edits import edit
from server.pages import placeholder_units
from server.paste import PASTE_COLUMNS, PasteRefused, fitting_key, paste, read_table

PUMP = PASTE_COLUMNS["pump.curve"]
PROFILE = PASTE_COLUMNS["pipe.profile"]
# A maker's curve as a data sheet prints it, header units in brackets (values of our own invention).
MAKER = [("0", "100", "0"), ("10", "98", "50"), ("20", "93", "66"), ("30", "85", "73"),
         ("40", "74", "72"), ("50", "60", "64"), ("60", "42", "50")]


def _demo_with(kind: str) -> tuple[int, dict, int]:
    """(sheet id, document, element index) of the first demo sheet with an element of ``kind``."""
    for sheet_id, path in enumerate(demo_files(), start=1):
        doc = json.loads(path.read_text())
        for i, e in enumerate(doc["elements"]):
            if e["kind"] == kind:
                return sheet_id, doc, i
    raise AssertionError(f"no demo sheet has a {kind}")


def _litres(text: str) -> float:
    # 1 L = 1e-3 m^3 exactly (SI Brochure, 9th ed. 2019, Table 8), through pint rather than our parser.
    number, unit = text.split()
    return Q_(float(number), unit).to("m^3/s").magnitude


# -- reading the table ------------------------------------------------------------------------------

@pytest.mark.parametrize("sep", ["\t", ";", ","])
def test_header_units_go_to_the_bare_numbers_of_their_column(sep):
    # Spreadsheets put copied cells on the clipboard separated by tabs (common practice); a CSV file
    # separates them with commas, or semicolons where the comma is the decimal mark (RFC 4180, s. 2).
    lines = [sep.join(("Flow (L/s)", "Head (m)", "Efficiency (%)"))] + [sep.join(r) for r in MAKER]
    table = read_table("\r\n".join(lines) + "\r\n", PUMP)
    assert table.header and table.columns == ["flow", "head", "efficiency"]
    assert [r["flow"] for r in table.rows] == [f"{q} L/s" for q, _, _ in MAKER]
    assert [r["head"] for r in table.rows] == [f"{h} m" for _, h, _ in MAKER]
    assert [r["efficiency"] for r in table.rows] == [f"{e} %" for _, _, e in MAKER]


def test_a_header_copied_from_a_data_sheet_with_spaces_between_columns():
    # Text copied from a PDF data sheet keeps the columns apart by spaces only (common practice).
    text = "Flow (L/s)  Head (m)  Efficiency (%)\n" + "\n".join("  ".join(r) for r in MAKER[:3])
    table = read_table(text, PUMP)
    assert table.rows[2] == {"flow": "20 L/s", "head": "93 m", "efficiency": "66 %"}
    single = read_table("Flow (L/s) Total head (m)\n0 100\n10 98", PUMP)
    assert single.rows == [{"flow": "0 L/s", "head": "100 m"}, {"flow": "10 L/s", "head": "98 m"}]


def test_each_cell_may_carry_its_own_unit_and_keeps_it():
    table = read_table("Flow (L/s)\tHead (m)\n20 gpm\t36 ft\n1.2 m3/min\t30", PUMP)
    assert table.rows == [{"flow": "20 gpm", "head": "36 ft"}, {"flow": "1.2 m3/min", "head": "30 m"}]
    spaced = read_table("20 L/s 36 m 0.7\n30 L/s 30 m 0.75", PUMP)
    assert spaced.rows[1] == {"flow": "30 L/s", "head": "30 m", "efficiency": "0.75"}


def test_units_on_a_row_of_their_own_under_the_names():
    table = read_table("Q\tH\tNPSHr\nm3/h\tm\tm\n36\t50\t2.1", PUMP)
    assert table.rows == [{"flow": "36 m3/h", "head": "50 m", "npsh_required": "2.1 m"}]
    # 36 m3/h = 0.01 m^3/s (1 h = 3600 s, SI Brochure Table 8).
    doc = {"q": table.rows[0]["flow"]}
    assert Q_(doc["q"].replace("m3", "m**3")).to("m^3/s").magnitude == pytest.approx(0.01, rel=1e-12)


def test_columns_go_where_the_header_names_them_and_others_are_left_out():
    table = read_table("NPSH required (m)\tPower (kW)\tHead (m)\tFlow (L/s)\n2\t20\t96\t0", PUMP)
    assert table.rows == [{"npsh_required": "2 m", "head": "96 m", "flow": "0 L/s"}]
    assert any("Power (kW)" in n for n in table.notes)


def test_without_a_header_cells_fill_the_columns_from_the_one_pasted_into():
    assert read_table("0\t96\n10\t94", PUMP).rows == [{"flow": "0", "head": "96"}, {"flow": "10", "head": "94"}]
    from_head = read_table("96\t0.5\n94\t0.6", PUMP, start="head")
    assert from_head.rows == [{"head": "96", "efficiency": "0.5"}, {"head": "94", "efficiency": "0.6"}]
    assert not from_head.header


def test_a_decimal_comma_in_a_cell_is_kept_for_its_message():
    # ISO 80000-1:2009, 7.3.2: the decimal sign may be a comma or a point, so 0,2 is refused with why
    # rather than guessed; in a semicolon CSV the comma stays inside the cell.
    table = read_table("Chainage (m);Elevation (m)\n0;412,5\n120;398,25", PROFILE)
    assert table.rows == [{"chainage": "0 m", "elevation": "412,5 m"}, {"chainage": "120 m", "elevation": "398,25 m"}]
    assert any("comma" in n for n in table.notes)
    doc = {"x": table.rows[0]["elevation"]}
    from calc.units import LENGTH, InputError, parse_quantity

    with pytest.raises(InputError) as e:
        parse_quantity(doc["x"], LENGTH, "x")
    assert "decimal comma" in e.value.message and "write 412.5 m" in e.value.message


def test_decimal_commas_in_a_comma_separated_paste_are_refused_with_a_message():
    with pytest.raises(PasteRefused) as e:
        read_table("0,412,5\n120,398", PROFILE)
    assert "decimal commas" in str(e.value) and "0.2" in str(e.value)


@pytest.mark.parametrize("text,words", [
    ("Head (L/s)\tFlow (L/s)\n1\t2", "not a unit of a length"),
    ("Flow (furlongs)\tHead (m)\n1\t2", "not a unit of a flow rate"),
    ("Efficiency (m)\tFlow (L/s)\n1\t2", "write % or no unit"),
    ("Colour\tTaste\n1\t2", "looks like a header"),
    ("", "no rows"),
    ("Flow (L/s)\tHead (m)\n", "no rows under it"),
    ("1\t" * 60 + "1\n2\t2", "cells"),
])
def test_a_table_that_cannot_be_read_is_refused_with_why(text, words):
    with pytest.raises(PasteRefused) as e:
        read_table(text, PUMP)
    assert words in str(e.value), str(e.value)


def test_a_huge_paste_is_refused_before_it_is_read():
    text = "1\t2\n" * (paste_module.MAX_PASTE_CHARS // 4 + 1)
    with pytest.raises(PasteRefused) as e:
        read_table(text, PUMP)
    assert "too long" in str(e.value)


def test_fitting_names_are_matched_to_the_fittings_table():
    # Names as a bill of materials gives them; the table rows are calc/data/fittings.json.
    assert fitting_key("Gate valve") == ("valve-gate-open", 1)
    assert fitting_key("check valve swing") == ("valve-check-swing", 1)
    assert fitting_key("Elbow 90")[0] is None and fitting_key("Elbow 90")[1] > 1  # which elbow is not said
    assert fitting_key("Flux capacitor") == (None, 0)


# -- filling the sheet --------------------------------------------------------------------------------

def _maker_text() -> str:
    return "Flow (L/s)\tHead (m)\tEfficiency (%)\n" + "\n".join("\t".join(r) for r in MAKER)


def test_pasting_a_pump_curve_adds_rows_as_needed_and_stores_them():
    _, doc, i = _demo_with("pump")
    before = len(doc["elements"][i]["curve"])
    assert before < len(MAKER)
    result = edit(doc, doc, {}, f"paste:elements.{i}.curve.0.flow", paste_text=_maker_text(), units=placeholder_units)
    assert result.message is None and result.switched
    curve = result.keep["elements"][i]["curve"]
    assert len(curve) == len(MAKER) and result.keep == result.display
    assert curve[6] == {"flow": "60 L/s", "head": "42 m", "efficiency": "50 %", "npsh_required": ""}
    pump = next(e for e in parse(result.keep).line.elements if type(e).__name__ == "Pump")
    assert pump.curve.Q == pytest.approx([_litres(f"{q} L/s") for q, _, _ in MAKER], rel=1e-12)
    assert "Pasted 7 rows" in result.note


def test_a_paste_without_units_takes_the_units_the_fields_show():
    _, doc, i = _demo_with("pump")
    text = "\n".join(f"{q}\t{h}" for q, h, _ in MAKER)
    result = edit(doc, doc, {}, f"paste:elements.{i}.curve.0.flow", paste_text=text, units=placeholder_units)
    # The curve table's placeholders are 'e.g. 20 L/s' and 'e.g. 36 m' (server/form.py PUMP_POINT).
    assert [p["flow"] for p in result.keep["elements"][i]["curve"]] == [f"{q} L/s" for q, _, _ in MAKER]
    assert "L/s for flow" in result.note and "m for head" in result.note


def test_a_pasted_table_with_a_bad_cell_is_kept_on_screen_and_not_stored_in_part():
    _, doc, i = _demo_with("pump")
    rows = [list(r) for r in MAKER]
    rows[3][1] = "85,5"
    text = "Flow (L/s)\tHead (m)\tEfficiency (%)\n" + "\n".join("\t".join(r) for r in rows)
    result = edit(doc, doc, {"header.project": "Pasted beside"}, f"paste:elements.{i}.curve.0", paste_text=text,
                  units=placeholder_units)
    assert result.keep["elements"][i]["curve"] == doc["elements"][i]["curve"]  # the stored curve, whole
    assert result.keep["header"]["project"] == "Pasted beside"  # the other change is saved
    assert len(result.display["elements"][i]["curve"]) == len(MAKER)
    assert [e.path for e in result.errors] == [f"elements.{i}.curve.3.head"]
    assert "write 85.5 m" in result.errors[0].message
    assert f"elements.{i}.curve.3.head" in result.pending


def test_rows_below_a_paste_without_header_stay():
    _, doc, i = _demo_with("pump")
    curve = doc["elements"][i]["curve"]
    result = paste(doc, f"elements.{i}.curve.1.head", "91\n88")
    after = result.doc["elements"][i]["curve"]
    assert [p["head"] for p in after[1:3]] == ["91", "88"]
    assert after[0] == curve[0] and after[3:] == curve[3:] and after[1]["flow"] == curve[1]["flow"]


def test_a_ground_profile_imports_from_a_csv_file():
    _, doc, i = _demo_with("pipe")
    csv_text = "chainage,elevation\n0,4\n15.5,5.25\n30,3\n"  # within the first run of the demo
    result = edit(doc, doc, {}, f"import:elements.{i}.profile", paste_text=csv_text, units=placeholder_units)
    assert not result.errors, result.errors
    # Bare numbers take the unit the profile's fields show: feet on a sheet in US customary units.
    u = "ft" if doc["header"]["units"] == "US" else "m"
    assert result.keep["elements"][i]["profile"] == [
        {"chainage": f"0 {u}", "elevation": f"4 {u}"}, {"chainage": f"15.5 {u}", "elevation": f"5.25 {u}"},
        {"chainage": f"30 {u}", "elevation": f"3 {u}"}]
    assert "Imported 3 rows" in result.note


def test_a_list_of_fittings_from_a_bill_of_materials():
    _, doc, i = _demo_with("pipe")
    text = "Fitting\tQty\tK\nGate valve\t2\t\nTee branch\t1\t\nStrainer\t1\t1.8\nElbow 90\t4\t\n"
    result = paste(doc, f"elements.{i}.fittings", text)
    fittings = result.doc["elements"][i]["fittings"]
    assert fittings[0]["type"] == "valve-gate-open" and fittings[0]["count"] == 2
    assert fittings[1]["type"] == "tee-branch"
    assert fittings[2]["type"] == "k" and fittings[2]["K"] == "1.8" and fittings[2]["label"] == "Strainer"
    assert fittings[3]["type"] == "k" and fittings[3]["K"] == "" and "choose it or give its K" in result.note


@pytest.mark.parametrize("target,words", [
    ("elements.0.length", "Rows can be pasted into"),
    ("header.title", "Rows can be pasted into"),
    ("elements.99.curve", "not on this sheet"),
])
def test_a_paste_somewhere_else_is_refused(target, words):
    doc = json.loads(demo_files()[0].read_text())
    result = paste(copy.deepcopy(doc), target, "1\t2\n3\t4")
    assert words in result.message and result.doc == doc


def test_a_paste_past_the_list_limit_is_refused_whole():
    _, doc, i = _demo_with("pump")
    text = "\n".join(f"{q}\t{100 - q / 10}" for q in range(150))
    result = paste(doc, f"elements.{i}.curve", text)
    assert "at most 100" in result.message and result.doc == doc
    # Rows past the end count too: 60 rows pasted from row 50 would make 110.
    text = "\n".join(f"{q}\t{100 - q / 10}" for q in range(60))
    result = paste(doc, f"elements.{i}.curve.{len(doc['elements'][i]['curve'])}", text)
    assert result.message is None
    again = paste(result.doc, f"elements.{i}.curve.{len(result.doc['elements'][i]['curve'])}", text)
    assert "at most 100" in again.message and again.doc == result.doc


# -- through the route ----------------------------------------------------------------------------------

def test_paste_through_the_sheet_form(client, sheet_form):
    sheet_id, _, i = _demo_with("pump")
    fields = sheet_form(sheet_id)
    response = client.post(f"/sheets/{sheet_id}", headers=HX, data={
        **fields, "action": f"paste:elements.{i}.curve.0.flow", "paste": _maker_text()})
    assert response.status_code == 200
    stored = client.get(f"/api/sheets/{sheet_id}").json()["document"]
    assert [p["head"] for p in stored["elements"][i]["curve"]] == [f"{h} m" for _, h, _ in MAKER]
    # The whole form comes back with the new rows, and the note says what was done.
    assert f'name="elements.{i}.curve.6.flow" value="60 L/s"' in response.text
    assert "Pasted 7 rows" in response.text
    notes = [r["note"] for r in client.get(f"/api/sheets/{sheet_id}/revisions").json()["revisions"]]
    assert notes[0].startswith("pasted rows into Element")


def test_a_long_paste_is_not_cut_short_by_the_field_length_limit(client, sheet_form):
    sheet_id, _, i = _demo_with("pump")
    rows = "\n".join(f"{q:.8f} L/s\t{100 - q * 0.01:.8f} m\t{0.5:.8f}\t{2 + q * 0.01:.8f} m" for q in range(100))
    assert len(rows) > editing.MAX_FIELD_LENGTH
    response = client.post(f"/sheets/{sheet_id}", headers=HX, data={
        **sheet_form(sheet_id), "action": f"paste:elements.{i}.curve", "paste": rows})
    assert response.status_code == 200
    stored = client.get(f"/api/sheets/{sheet_id}").json()["document"]
    assert len(stored["elements"][i]["curve"]) == 100


def test_any_pasted_text_is_read_or_refused_and_the_stored_sheet_stays_valid():
    from hypothesis import HealthCheck, given, settings
    from hypothesis import strategies as st
    from servertools import FIGURES

    _, doc, i = _demo_with("pump")
    cell = st.one_of(st.sampled_from(["", "0", "12.5", "0,2", "1,200", "20 L/s", "36 m", "85 %", "Flow (L/s)",
                                      "Head [m]", "NPSH", "x", "1e309", "-5", "\"q\"", "m3/h", "💧", "\x00"]),
                     st.text(max_size=12))
    row = st.lists(cell, max_size=6).map(lambda cells: st.sampled_from(["\t", ",", ";", "  ", " "]).map(
        lambda sep: sep.join(cells)))
    text = st.lists(row.flatmap(lambda r: r), max_size=12).map("\n".join)
    targets = [f"elements.{i}.curve", f"elements.{i}.curve.2.head", f"elements.{i}.curve.40", "elements.0.profile",
               "elements.0.fittings.1.count", "elements.0.curve", "elements.9.profile", "header.title", ""]

    @settings(max_examples=150, deadline=None, database=None, suppress_health_check=list(HealthCheck))
    @given(text=text, target=st.sampled_from(targets), whole=st.booleans())
    def check(text, target, whole):
        FIGURES["fuzz: pasted tables tried"] += 1
        result = edit(doc, doc, {}, f"{'import' if whole else 'paste'}:{target}", paste_text=text,
                      units=placeholder_units)
        assert parse(result.keep).ok
        assert result.message or result.note  # a paste says what it did, or why it did nothing
        if result.message:
            assert result.keep == doc and result.display == doc

    check()


@pytest.mark.parametrize("text,words", [
    ("1" * 25000 + "x", "longer than any row"),  # one line, no separator: read by spaces
    ("(" * 25000, "longer than any row"),
    ("1\t2\n" * 5000, "lines"),
    ("1\t" * 100 + "1", "cells"),
    ("Flow (L/s)\t" + "9" * 600, "longer than"),
])
def test_hostile_pastes_are_refused_with_why(text, words):
    # Each is refused from a count or a single pass over the text, before any row is built.
    with pytest.raises(PasteRefused) as e:
        read_table(text, PUMP)
    assert words in str(e.value), str(e.value)
