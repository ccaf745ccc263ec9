"""The `headsheet` command on the demo sheets, and the inverse questions it answers."""

import json
import subprocess
import sys
from pathlib import Path

import pytest

from calc.model.sheet import parse
from calc.steady.inverse import head_needed, smallest_size
from calc.steady.series import solve
from server.cli import main

EXAMPLES = sorted((Path(__file__).resolve().parents[2] / "examples").glob("*.json"))


def load(name):
    return json.loads((Path(__file__).resolve().parents[2] / "examples" / name).read_text())


def test_there_are_at_least_three_demo_sheets():
    names = {p.name for p in EXAMPLES}
    assert {"hydro-penstock.json", "pumped-main.json", "cooling-water.json"} <= names


@pytest.mark.parametrize("path", EXAMPLES, ids=lambda p: p.name)
def test_every_demo_sheet_solves_with_a_design_point(path, capsys):
    assert main(["solve", str(path)]) == 0
    out = capsys.readouterr().out
    assert "design point" in out and "Solve log" in out


def test_json_output_is_si_and_complete(capsys):
    path = Path(__file__).resolve().parents[2] / "examples" / "hydro-penstock.json"
    assert main(["solve", str(path), "--json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["status"] == "solved"
    assert len(data["points"]) == 2  # a turbine at set power: two points
    design = data["points"][data["design_index"]]
    turbine = design["elements"][-1]
    assert turbine["power_shaft"] == pytest.approx(85e3, rel=1e-9)  # W
    assert 0.01 < design["Q"] < 1.0  # m3/s


def test_bad_file_gives_field_errors_not_a_traceback(tmp_path):
    doc = load("pumped-main.json")
    doc["elements"][3]["length"] = "2100"
    doc["elements"][1]["curve"] = doc["elements"][1]["curve"][:2]
    f = tmp_path / "bad.json"
    f.write_text(json.dumps(doc))
    r = subprocess.run([sys.executable, "-m", "server.cli", "solve", str(f)], capture_output=True, text=True)
    assert r.returncode == 2
    assert "elements.3.length: needs a unit" in r.stderr
    assert "elements.1.curve" in r.stderr
    assert "Traceback" not in r.stderr


def test_not_json_is_reported(tmp_path):
    f = tmp_path / "x.json"
    f.write_text("{not json")
    r = subprocess.run([sys.executable, "-m", "server.cli", "solve", str(f)], capture_output=True, text=True)
    assert r.returncode == 1 and "not valid JSON" in r.stderr and "Traceback" not in r.stderr


def test_schema_is_printed(capsys):
    assert main(["schema"]) == 0
    schema = json.loads(capsys.readouterr().out)
    assert schema["properties"]["format"]["const"] == "headsheet-sheet"


def test_head_needed_is_zero_at_the_operating_point():
    line = parse(load("pumped-main.json")).line
    Q = solve(line).design["Q"]
    assert abs(head_needed(line, Q).shortfall) < 1e-9
    # More flow than the line carries needs more head than it has.
    assert head_needed(line, 1.5 * Q).shortfall > 0


def test_smallest_size_is_the_first_that_passes():
    doc = load("cooling-water.json")
    line = parse(doc).line
    Q = 0.018
    choice = smallest_size(line, Q, "asme-b36.10m", "40")
    assert choice.nominal is not None and choice.shortfall <= 0
    # The size just below it does not pass.
    assert len(choice.tried) >= 2 and choice.tried[-2]["shortfall"] > 0


def test_size_command(capsys):
    path = Path(__file__).resolve().parents[2] / "examples" / "cooling-water.json"
    assert main(["size", str(path), "--flow", "285 gpm", "--standard", "asme-b36.10m", "--class", "40"]) == 0
    assert "Smallest" in capsys.readouterr().out


def test_head_command(capsys):
    path = Path(__file__).resolve().parents[2] / "examples" / "pumped-main.json"
    assert main(["head", str(path), "--flow", "40 L/s"]) == 0
    assert "extra head needed" in capsys.readouterr().out


def test_solve_prints_findings_and_json_carries_them(capsys):
    path = Path(__file__).resolve().parents[2] / "examples" / "siphon-check.json"
    main(["solve", str(path), "--all"])
    out = capsys.readouterr().out
    assert "Checks:" in out and "[caution]" in out
    main(["solve", str(path), "--json"])
    data = json.loads(capsys.readouterr().out)
    assert data["findings"] and all("severity" in f for f in data["findings"])
    assert data["band"] is not None


def test_output_cut_short_by_its_reader_is_no_traceback():
    # `headsheet solve FILE | head -1`: the reader goes away. Here it is gone before the first write
    # (the read end closed at once), so every write meets a closed pipe; the command ends quietly.
    path = Path(__file__).resolve().parents[2] / "examples" / "hydro-penstock.json"
    proc = subprocess.Popen([sys.executable, "-m", "server.cli", "solve", str(path), "--all"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    proc.stdout.close()
    err = proc.stderr.read()
    assert proc.wait(timeout=60) == 0
    assert "Traceback" not in err


def _sheet_with_cases(tmp_path) -> Path:
    from calc.model.sheet import ensure_ids

    doc = ensure_ids(load("pumped-main.json"))
    doc["cases"] = [{"name": "Tank full", "end": {"elevation": "124 m"}},
                    {"name": "Aged main", "pipes": {"condition": "aged"}}]
    path = tmp_path / "cases.json"
    path.write_text(json.dumps(doc))
    return path


def test_solve_prints_every_case_and_the_governing_cases(tmp_path, capsys):
    path = _sheet_with_cases(tmp_path)
    assert main(["solve", str(path)]) == 0
    out = capsys.readouterr().out
    assert "3 cases (the base and 2 more)" in out
    assert "Case: Tank full" in out and "Case: Aged main" in out and "end: surface elevation: 124 m" in out
    assert "Governing case of each check:" in out


def test_solve_one_case_by_name_agrees_with_the_whole_run(tmp_path, capsys):
    path = _sheet_with_cases(tmp_path)
    assert main(["solve", str(path), "--json"]) == 0
    every = json.loads(capsys.readouterr().out)
    assert [c["name"] for c in every["cases"]] == ["Base", "Tank full", "Aged main"]
    assert main(["solve", str(path), "--case", "aged main", "--json"]) == 0
    one = json.loads(capsys.readouterr().out)
    assert one["name"] == "Aged main" and one["changes"][0]["value"] == "aged"
    sol = one["solution"]
    whole = every["cases"][2]["solution"]
    assert sol["points"][sol["design_index"]]["Q"] == whole["points"][whole["design_index"]]["Q"]
    # a fuller tank means less flow from the same pump
    q = {c["name"]: c["solution"]["points"][c["solution"]["design_index"]]["Q"] for c in every["cases"]}
    assert q["Tank full"] < q["Base"] and q["Aged main"] < q["Base"]


def test_an_unknown_case_is_refused_with_the_names(tmp_path, capsys):
    path = _sheet_with_cases(tmp_path)
    with pytest.raises(SystemExit) as e:
        main(["solve", str(path), "--case", "Flood"])
    assert "no case 'Flood'" in str(e.value) and "'Tank full'" in str(e.value)


def test_curve_prints_the_system_curve_of_every_case(tmp_path, capsys):
    path = _sheet_with_cases(tmp_path)
    assert main(["curve", str(path)]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert lines[1].split(",")[1:] == ["Base: head needed from the pumps (m)", "Tank full: head needed from the pumps (m)",
                                       "Aged main: head needed from the pumps (m)"]
    # at no flow the head needed is the static lift: 121.5 m less 52.0 m, and 124 m less 52.0 m
    assert lines[2].split(",")[:3] == ["0", "69.5", "72"]
