"""Settings that were in the file format only are on the form: the check limits, the friction method by its
name, and each pipe run's condition (new or aged) (issue 12)."""

from __future__ import annotations

import html
import re

import pytest
from linetools import gravity_line
from servertools import HX, form_fields

from calc.model import sheet as calc_sheet
from calc.model.settings import CheckSettings
from server.form import CHECKS


def _doc(client, sheet_id: int) -> dict:
    return client.get(f"/api/sheets/{sheet_id}").json()["document"]


def _sheet_of(client, doc: dict) -> int:
    response = client.post("/api/sheets", json={"document": doc})
    assert response.status_code == 201, response.text
    return response.json()["id"]


def _input(page: str, name: str) -> str:
    found = re.search(rf'<(?:input|select)[^>]*name="{re.escape(name)}"[^>]*>', page)
    assert found, name
    return found.group(0)


def _slot(page: str, path: str) -> str:
    """The text of a field's message slot, in a page or in an htmx answer."""
    found = re.search(rf'<p[^>]*id="m-{re.escape(path.replace(".", "-"))}"[^>]*>(.*?)</p>', page, re.S)
    assert found, path
    return html.unescape(re.sub(r"<[^>]+>", "", found.group(1)))


def _post(client, sheet_id: int, **changes) -> object:
    fields = form_fields(client.get(f"/sheets/{sheet_id}").text)
    fields.update(changes)
    return client.post(f"/sheets/{sheet_id}", data=fields, headers=HX)


# -- the check limits --------------------------------------------------------------------------

#: Each limit's default as its placeholder shows it on an SI sheet.
DEFAULTS_SI = {"velocity_max": "3 m/s", "velocity_max_suction": "1.5 m/s", "velocity_min": "0.3 m/s",
               "npsh_margin_ratio": "1.1", "npsh_margin_min": "0.6 m", "bep_low": "70 %", "bep_high": "120 %",
               "k_uncertainty": "20 %", "roughness_low": "each run's roughness",
               "roughness_high": "each run's aged roughness", "surge_allowance": "200 kPa",
               "surge_closure_time": "0 s"}


def test_every_check_limit_of_the_file_format_is_on_the_form():
    assert [s.key for s in CHECKS] == list(calc_sheet.CHECK_FIELDS)


def test_each_limit_shows_its_default_with_its_unit_and_where_the_default_comes_from(client):
    page = client.get(f"/sheets/{_sheet_of(client, gravity_line())}").text
    assert "<legend>Check limits</legend>" in page
    for key, default in DEFAULTS_SI.items():
        control = html.unescape(_input(page, f"settings.checks.{key}"))
        assert f'placeholder="default: {default}"' in control, control
        hint = re.search(rf'<small id="f-settings-checks-{key}-help" class="help" title="([^"]*)">([^<]*)</small>',
                         page)
        assert hint, key
        assert html.unescape(hint.group(1)) == CheckSettings.SOURCES[key]  # the whole source on pointing at it
        assert html.unescape(hint.group(2)).startswith(f"default from {CheckSettings.SHORT_SOURCES[key]}")
        assert f'aria-describedby="m-settings-checks-{key} f-settings-checks-{key}-help"' in control


def test_the_defaults_agree_with_the_check_settings():
    d = CheckSettings()
    assert DEFAULTS_SI["velocity_max"] == f"{d.velocity_max:g} m/s"
    assert DEFAULTS_SI["surge_allowance"] == f"{d.surge_allowance / 1e3:g} kPa"
    assert DEFAULTS_SI["bep_high"] == f"{d.bep_high * 100:g} %"


def test_a_limit_typed_is_stored_and_applied_and_the_record_states_it(client):
    sheet_id = _sheet_of(client, gravity_line())
    response = _post(client, sheet_id, **{"settings.checks.velocity_max": "2"})  # the placeholder's unit
    assert response.status_code == 200
    assert _doc(client, sheet_id)["settings"]["checks"] == {"velocity_max": "2 m/s"}
    # The line's 2.6 m/s now exceeds the limit typed, and the panel names where the limit came from.
    assert "velocity high" in response.text and "set on the sheet" in response.text
    record = html.unescape(client.get(f"/sheets/{sheet_id}/record").text)
    assert "Check limits applied" in record
    row = re.search(r"<tr>\s*<td>Highest velocity</td>(.*?)</tr>", record, re.S).group(1)
    assert "2 m/s" in row and "set on the sheet" in row
    row = re.search(r"<tr>\s*<td>Lowest velocity</td>(.*?)</tr>", record, re.S).group(1)
    assert "0.3 m/s" in row and "default: common practice" in row


def test_a_limit_left_blank_is_the_default(client):
    doc = gravity_line()
    doc["settings"]["checks"] = {"velocity_max": "2 m/s"}
    sheet_id = _sheet_of(client, doc)
    response = _post(client, sheet_id, **{"settings.checks.velocity_max": ""})
    assert response.status_code == 200
    assert _doc(client, sheet_id)["settings"]["checks"]["velocity_max"] == ""
    assert calc_sheet.parse(_doc(client, sheet_id)).line.settings["checks"] == CheckSettings()
    assert "velocity high" not in response.text


@pytest.mark.parametrize("key,typed,words", [
    ("velocity_max", "-1 m/s", "must be positive"),
    ("velocity_max", "3 kg", "must be a velocity"),
    ("bep_low", "150 %", "must be above 0 % and at most 100 %"),
    ("npsh_margin_ratio", "0.5", "at least 1"),
    ("roughness_high", "2 kg", "must be a percentage of each run's roughness"),
    ("surge_closure_time", "2 h", "at most 3600"),
])
def test_an_invalid_limit_gets_its_message_beside_the_field_and_other_changes_are_kept(client, key, typed, words):
    sheet_id = _sheet_of(client, gravity_line())
    response = _post(client, sheet_id, **{f"settings.checks.{key}": typed, "header.project": "Kept"})
    assert response.status_code == 422
    assert words in _slot(response.text, f"settings.checks.{key}")
    stored = _doc(client, sheet_id)
    assert stored["header"]["project"] == "Kept"
    assert not (stored["settings"].get("checks") or {}).get(key)


def test_two_limits_that_contradict_each_other_are_told_beside_the_one_that_must_change(client):
    sheet_id = _sheet_of(client, gravity_line())
    response = _post(client, sheet_id, **{"settings.checks.velocity_max": "1 m/s",
                                          "settings.checks.velocity_min": "1.5 m/s"})
    assert response.status_code == 422
    assert "must be below velocity_max" in _slot(response.text, "settings.checks.velocity_min")


def test_a_sheet_without_settings_takes_a_limit_all_the_same(client):
    doc = gravity_line()
    del doc["settings"]
    sheet_id = _sheet_of(client, doc)
    _post(client, sheet_id, **{"settings.checks.k_uncertainty": "30 %", "settings.friction_method": "haaland_1983"})
    stored = _doc(client, sheet_id)["settings"]
    assert stored == {"checks": {"k_uncertainty": "30 %"}, "friction_method": "haaland_1983"}


def test_a_us_sheet_shows_its_defaults_in_us_units_and_takes_bare_numbers_in_them(client):
    doc = gravity_line()
    doc["header"]["units"] = "US"
    sheet_id = _sheet_of(client, doc)
    page = client.get(f"/sheets/{sheet_id}").text
    assert 'placeholder="default: 9.84 ft/s"' in _input(page, "settings.checks.velocity_max")
    assert 'placeholder="default: 29 psi"' in _input(page, "settings.checks.surge_allowance")
    assert 'placeholder="default: 1.97 ft"' in _input(page, "settings.checks.npsh_margin_min")
    _post(client, sheet_id, **{"settings.checks.velocity_max": "7"})
    assert _doc(client, sheet_id)["settings"]["checks"]["velocity_max"] == "7 ft/s"


# -- the friction method -------------------------------------------------------------------------

def test_the_friction_method_is_a_choice_by_name_and_the_panel_names_it(client):
    sheet_id = _sheet_of(client, gravity_line())
    page = client.get(f"/sheets/{sheet_id}").text
    select = re.search(r'<select[^>]*name="settings.friction_method".*?</select>', page, re.S).group(0)
    options = dict(re.findall(r'<option value="([^"]*)"[^>]*>([^<]*)</option>', select))
    assert options["colebrook"].startswith("Colebrook (") and options["swamee_jain_1976"].startswith("Swamee-Jain")
    assert all(key not in text for key, text in options.items())  # no raw code shown as a name
    assert re.search(r'Friction factor: <span class="method"[^>]*>Colebrook</span>', page)
    response = _post(client, sheet_id, **{"settings.friction_method": "swamee_jain_1976"})
    assert _doc(client, sheet_id)["settings"]["friction_method"] == "swamee_jain_1976"
    assert re.search(r'Friction factor: <span class="method"[^>]*>Swamee-Jain</span>', response.text)
    assert "swamee_jain_1976" not in re.sub(r'(value|name)="[^"]*"', "", response.text.split('id="results"')[1])


# -- each pipe run's condition ----------------------------------------------------------------------

def test_each_pipe_run_has_its_condition_and_aged_uses_the_aged_roughness(client):
    doc = gravity_line()
    doc["elements"].append({**calc_sheet.ELEMENT_TEMPLATES["pipe"], "label": "Second", "length": "100 m",
                            "diameter": "150 mm", "end_elevation": "78 m"})
    sheet_id = _sheet_of(client, doc)
    page = client.get(f"/sheets/{sheet_id}").text
    for i in (0, 1):
        select = re.search(rf'<select[^>]*name="elements.{i}.condition".*?</select>', page, re.S).group(0)
        assert "new: the material" in select and "aged: the material" in select
    # The first run's document has no condition: the form shows what empty means.
    assert re.search(r'name="elements.0.condition".*?<option value="" selected>default \(new\)', page, re.S)
    before = client.get(f"/api/sheets/{sheet_id}/revisions/1/record").json()
    response = _post(client, sheet_id, **{"elements.0.condition": "aged"})
    assert response.status_code == 200
    assert _doc(client, sheet_id)["elements"][0]["condition"] == "aged"
    record = html.unescape(client.get(f"/sheets/{sheet_id}/record").text)
    assert re.search(r"<td>\S+ aged = [0-9.×⁻⁰-⁹]+ m", record) and "ε (aged) from the material table" in record
    assert client.get(f"/api/sheets/{sheet_id}/revisions/2/record").json() != before


def test_aged_for_a_material_without_an_aged_roughness_is_told_beside_the_choice(client):
    doc = gravity_line()
    doc["elements"][0]["material"] = "steel-galvanised"
    sheet_id = _sheet_of(client, doc)
    response = _post(client, sheet_id, **{"elements.0.condition": "aged"})
    assert response.status_code == 422
    assert "no aged roughness" in _slot(response.text, "elements.0.condition")
    assert _doc(client, sheet_id)["elements"][0].get("condition", "") != "aged"


def test_a_refused_limit_leaves_no_empty_group_behind(client):
    sheet_id = _sheet_of(client, gravity_line())
    before = client.get(f"/api/sheets/{sheet_id}").json()
    response = _post(client, sheet_id, **{"settings.checks.bep_high": "1 000 m"})
    assert response.status_code == 422
    after = client.get(f"/api/sheets/{sheet_id}").json()
    assert after["revision"] == before["revision"] and "checks" not in after["document"]["settings"]
